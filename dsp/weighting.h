/* Frequency weightings (A, C of IEC 61672-1; ITU-R BS.468-4) and weighted noise from a Welch spectrum.
 * SPDX-License-Identifier: MIT
 *
 * Curves (analytic, evaluated at any frequency; no digital filter is involved):
 *  - A and C: IEC 61672-1:2013 Annex E eqs. E.1 and E.6 with the pole frequencies f1..f4 of E.4
 *    (docs/references.md 1.1), normalised exactly to 0 dB at 1 kHz (A1000 = -1.99966 dB, C1000 =
 *    -0.06190 dB, the exact values of the rounded -2.000 / -0.062; docs/references.md 1.2 "test rule").
 *  - 468: the analogue prototype of ITU-R BS.468-4 (one zero at 0 Hz, six poles; docs/references.md
 *    2.2), which is identical to the closed form 18.2 + 20 lg R(f) of that section up to its offset,
 *    normalised exactly to 0 dB at 1 kHz as BS.468-4 Table 1 prints it (the closed form with +18.2 dB
 *    reads -0.039 dB there: docs/references.md 10 item 3). Its maximum, +12.217 dB, lies at 6247 Hz.
 *
 * Weighted noise (ml_weighted_noise): the residual noise of a real Welch spectrum after the tone,
 * its harmonics and the mains hum are taken out, unweighted and weighted. Definition:
 *  - band bins: k = max(ceil(band_lo / bin), lobe) .. min(floor(band_hi / bin), nbins - 1), as in
 *    dsp/metrics.h (DC and its lobe never count);
 *  - excluded bins: +-(lobe + 1) around the bin nearest to the fundamental, to each harmonic and (when
 *    exclude_hum) to each hum component listed in the ml_audio_result given (lobe = the window's
 *    main-lobe half-width + 1, ml_spectrum_lobe_bins); one bin more than the metrics' own lobe, as
 *    the fundamental's bin may be the neighbour of the nearest one;
 *  - every run of excluded bins is filled in at the mean power of up to `lobe` remaining bins on
 *    each side of it (one side at a band edge), so locally coloured noise is filled at its own level;
 *  - noise power N_w = sum over band bins of psd_filled[k] * 10^(W(f_k)/10) / ENBW, with W the
 *    weighting in dB (0 for unweighted). Powers are mean squares in full-scale units (full-scale
 *    sine = 0.5 = 0 dBFS), like every power in dsp/metrics.h.
 * References: [iec61672:2013] IEC 61672-1:2013 Annex E; [bs468:1986] ITU-R BS.468-4 (1986) Table 1.
 */
#ifndef ML_DSP_WEIGHTING_H
#define ML_DSP_WEIGHTING_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/status.h"

typedef enum {
    ML_WEIGHTING_NONE = 0, /* flat, 0 dB                                              */
    ML_WEIGHTING_A,        /* IEC 61672-1 A                                            */
    ML_WEIGHTING_C,        /* IEC 61672-1 C                                            */
    ML_WEIGHTING_468,      /* ITU-R BS.468-4, 0 dB at 1 kHz                            */
    ML_WEIGHTING_COUNT
} ml_weighting;

/* Response of weighting w in dB at f_hz (> 0, finite); NAN for a bad w or f_hz. Pure. */
double ml_weighting_db(ml_weighting w, double f_hz);
/* Short lower-case name ("a", "c", "468", "none"); "unknown" for a bad w. */
const char *ml_weighting_name(ml_weighting w);

typedef struct {
    double band_lo_hz; /* >= 0 (default 20)                                          */
    double band_hi_hz; /* > band_lo_hz; clipped to Nyquist (default 20000)           */
    bool exclude_hum;  /* take the result's hum components out too (default true)    */
} ml_wnoise_config;

typedef struct {
    double band_lo_hz, band_hi_hz; /* band used (after clipping)                            */
    double noise_power;            /* unweighted residual, filled in (see above)            */
    double noise_a_power;          /* A-weighted                                            */
    double noise_c_power;          /* C-weighted                                            */
    double noise_468_power;        /* 468-weighted (r.m.s. reading, not the quasi-peak one) */
    double noise_dbfs, noise_a_dbfs, noise_c_dbfs, noise_468_dbfs; /* 10 lg(P/0.5); NAN if P = 0 */
    double hum_removed_power;      /* sum of the hum components excluded (0 if none)        */
    size_t nbins_band;             /* bins in the band                                      */
    size_t nbins_excluded;         /* of those, taken out and filled in                     */
} ml_wnoise_result;

ml_wnoise_config ml_wnoise_config_default(void);

/* Weighted residual noise of the real spectrum spec. tone: the result of ml_audio_analyze on the
 * same spectrum (its fundamental, harmonics and hum are excluded), or of ml_hum_analyze_psd (hum
 * only, no tone: fundamental_power 0), or NULL (nothing but DC excluded). ML_EINVAL for a NULL
 * spec/cfg/out, a complex spectrum, a bad or empty band, or a tone result whose bin_hz differs from
 * the spectrum's; ML_ENOSIGNAL when no segment is complete or no bin of the band is left to
 * estimate the noise from; ML_ENOMEM when the temporary per-bin buffer (9 bytes per bin, freed before
 * return) cannot be allocated. */
ml_status ml_weighted_noise(const ml_spectrum *spec, const ml_audio_result *tone, const ml_wnoise_config *cfg,
                            ml_wnoise_result *out);

#endif
