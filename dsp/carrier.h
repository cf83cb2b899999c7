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
 *    band in amplitude: a nominal carrier that is not there is not replaced by noise.
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
    double lo_hz, hi_hz; /* search band (defaults above): lo_hz <= hi_hz                         */
} ml_carrier_config;

typedef struct {
    double frequency_hz;        /* the carrier (0 when none was found)                          */
    double amplitude;           /* its amplitude, full-scale units (0 when none)                 */
    double strongest_hz;        /* the strongest component of the search band                    */
    double strongest_amplitude; /* and its amplitude (0: the band holds no power)                */
    double range_hz;            /* the capture range used (nominal mode; 0 otherwise)            */
} ml_carrier;

/* Defaults for a spectrum at rate_hz, real or complex (see above). */
ml_carrier_config ml_carrier_config_default(double rate_hz, bool complex_input, double nominal_hz);

/* Finds the carrier in s by cfg. ML_OK with *out filled; ML_ENOSIGNAL when the band holds no
 * power (strongest_amplitude 0: a silent input) or, in nominal mode, nothing within the capture
 * range comes within min_rel of the strongest component (strongest_* say what is there instead);
 * ML_EINVAL for a bad cfg. Never allocates. */
ml_status ml_carrier_find(const ml_spectrum *s, const ml_carrier_config *cfg, ml_carrier *out);

#endif
