/* The carrier search: the one rule by which every command finds the carrier of an IF or I/Q
 * capture in a spectrum (a pure function over an ml_spectrum, dsp/spectrum.h).
 * SPDX-License-Identifier: MIT
 *
 * Two modes:
 *  - strongest (nominal_hz NAN): the carrier is the strongest component in lo_hz .. hi_hz
 *    (default: 20 Hz .. Nyquist for a real spectrum, -Nyquist .. Nyquist for a complex one);
 *  - nominal: the carrier is the strongest component within +-R of nominal_hz, where the capture
 *    range R is the larger of capture_hz (default 200 Hz) and the window's main lobe, and it must
 *    come within min_rel (default 1e-3, 60 dB) of the strongest component of the whole search
 *    band in amplitude: a nominal carrier that is not there is not replaced by noise. It must also
 *    be a line: stand at least min_prominence_db (default 10 dB) out of the spectrum around it
 *    (ml_rf_line_prominence_db, dsp/rf.h), so that the skirt of a component beyond the capture
 *    range or a noise bin is no carrier; and it must not be a sideband: when the strongest
 *    component within +-channel_hz (default 10 kHz, the widest channel) is more than 3 dB
 *    stronger and the found one's mirror image about it is there too (within 3 dB of it), the
 *    nominal frequency caught a side frequency of that carrier (tone AM puts m/2 of the carrier
 *    at each side, docs/references.md 6, so up to m = 2 a side frequency is the weaker). A
 *    stronger neighbour without a mirror (another station) does not disqualify it.
 * min_prominence_db applies in the strongest mode too when set (its default there is -inf: off).
 * Frequencies are refined from the phase advance of the peak bin (ml_rf_find_peak), amplitudes
 * are component amplitudes in full-scale units (dsp/rf.h).
 */
#ifndef ML_DSP_CARRIER_H
#define ML_DSP_CARRIER_H

#include <stdbool.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"

typedef struct {
    double nominal_hz;  /* NAN: the strongest component; else the nominal carrier frequency    */
    double capture_hz;  /* capture range around nominal_hz: > 0 (default 200)                   */
    double min_rel;     /* the carrier's least amplitude re the strongest: 0 .. 1 (1e-3)       */
    double min_prominence_db; /* least prominence of the line (10 nominal, -inf strongest)     */
    double channel_hz;  /* nominal: the sideband check looks +- this far (10000; 0: off)       */
    double lo_hz, hi_hz; /* search band (defaults above): lo_hz <= hi_hz                         */
} ml_carrier_config;

typedef struct {
    double frequency_hz;        /* the carrier (0 when none was found)                          */
    double amplitude;           /* its amplitude, full-scale units (0 when none)                 */
    double strongest_hz;        /* the strongest component of the search band                    */
    double strongest_amplitude; /* and its amplitude (0: the band holds no power)                */
    double range_hz;            /* the capture range used (nominal mode; 0 otherwise)            */
    double prominence_db;       /* the found line's prominence (NAN when none was judged)         */
    double stronger_hz;         /* nominal: the carrier whose sideband was found (0: none)        */
} ml_carrier;

/* Defaults for a spectrum at rate_hz, real or complex (see above). */
ml_carrier_config ml_carrier_config_default(double rate_hz, bool complex_input, double nominal_hz);

/* Finds the carrier in s by cfg. ML_OK with *out filled; ML_ENOSIGNAL when the band holds no
 * power (strongest_amplitude 0: a silent input), when the line found is not prominent enough
 * (prominence_db says how far it stands out) or, in nominal mode, nothing within the capture
 * range comes within min_rel of the strongest component, or it is a sideband of a stronger one
 * (stronger_hz; strongest_* say what is there instead); frequency_hz and amplitude then
 * stay 0. ML_EINVAL for a bad cfg. Never allocates. */
ml_status ml_carrier_find(const ml_spectrum *s, const ml_carrier_config *cfg, ml_carrier *out);

#endif
