/* The reported figures derived from the analyses' results: the one place that turns an
 * ml_audio_result or ml_stats into THD, SINAD, levels in dBFS, ... (pure functions).
 * SPDX-License-Identifier: MIT
 *
 * Every command (measure, live, compare, watch, log) and the uncertainty blocks call these, so
 * a figure has one definition whatever shows it. Powers are mean squares in full-scale units
 * (a full-scale sine has power 0.5 = 0 dBFS, AES17); dsp/metrics.h says how the powers are
 * measured. A figure that cannot be measured is NAN (null in JSON, empty in CSV, n/a in text).
 *
 * Audio figures from an ml_audio_result a, with P1 = a->fundamental_power, D =
 * a->distortion_power, B = a->band_power, N = a->noise_power, H = a->hum_power:
 *   fundamental_hz   = a->fundamental_hz
 *   fundamental_dbfs = 10 lg(P1 / 0.5)
 *   thd_pct = 100 sqrt(D / P1),   thd_db  = 10 lg(D / P1)
 *   thdn_pct = 100 sqrt((B - P1) / P1),   thdn_db = -sinad_db
 *   sinad_db = 10 lg(P1 / (B - P1))
 *   snr_db   = 10 lg(P1 / N)
 *   enob_bits = (sinad_db - 10 lg 1.5) / (20 lg 2)   (IEEE Std 1241-2000 eq. 94 and 102)
 *   noise_dbfs = 10 lg(N / 0.5)
 *   mains_hz = a->mains_hz,  hum_dbfs = 10 lg(H / 0.5),  hum_dbc = 10 lg(H / P1)
 * The dB and % helpers are those of dsp/metrics.h (ml_ratio_db, ml_ratio_pct, ml_power_dbfs,
 * ml_enob_bits).
 *
 * Level figures from running statistics (dsp/stats.h) of one or more channels together:
 *   rms_dbfs = 10 lg(mean square / 0.5) (AES17: a full-scale sine reads 0 dBFS; DC included),
 *   peak_dbfs = 20 lg(largest |x|), dc_offset_pct = 100 x (mean of the first channel),
 *   clipped = samples at or within 1 LSB of full scale (dsp/stats.h), summed over the channels.
 * rms_dbfs and peak_dbfs are NAN for silence (every sample zero) or no samples.
 */
#ifndef ML_DSP_FIGURES_H
#define ML_DSP_FIGURES_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/metrics.h"
#include "dsp/stats.h"

/* The audio figures as plain numbers, NAN when not measured (see above). The analysis result also
 * carries its own figures with their state and reason (ml_audio_result.figures, dsp/metrics.h);
 * these are the reports' figures until the reports take those. */
typedef struct {
    double fundamental_hz, fundamental_dbfs;
    double thd_pct, thd_db, thdn_pct, thdn_db, sinad_db, snr_db, enob_bits, noise_dbfs;
    double mains_hz, hum_dbfs, hum_dbc;
} ml_audio_plain_figures;

typedef struct {
    double rms_dbfs, peak_dbfs, dc_offset_pct;
    uint64_t clipped;
} ml_level_figures;

/* The audio figures of a (see above). valid false (the analysis failed or found no signal):
 * every figure NAN. a may be NULL when valid is false. Never allocates. */
void ml_figures_audio(const ml_audio_result *a, bool valid, ml_audio_plain_figures *out);

/* Every audio figure NAN. */
void ml_figures_audio_none(ml_audio_plain_figures *out);

/* The level figures of n >= 1 channels' statistics s[n] taken together (see above). */
void ml_figures_level(const ml_stats *s, size_t n, ml_level_figures *out);

/* NULL when the analysed band of a holds a measurable signal; otherwise why not, as a short
 * phrase for a note (a static string): the band's power B is more than 200 dB below total_power
 * (mean square of the whole input), so it holds only rounding residue and window leakage, or
 * P1 lies below the reports' -300 dBFS floor (ml_power_dbfs). */
const char *ml_figures_no_signal(const ml_audio_result *a, double total_power);

#endif
