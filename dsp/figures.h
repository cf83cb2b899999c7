/* The reported figures derived from the analyses' results: the one place that turns an
 * ml_audio_result or ml_stats into THD, SINAD, levels in dBFS, ... (pure functions).
 * SPDX-License-Identifier: MIT
 *
 * Every command (measure, live, compare, watch, log) and the uncertainty blocks call these, so
 * a figure has one definition whatever shows it. Powers are mean squares in full-scale units
 * (a full-scale sine has power 0.5 = 0 dBFS, AES17); dsp/metrics.h says how the powers are
 * measured. A figure that cannot be measured is NAN (null in JSON, empty in CSV, n/a in text)
 * and says why; a figure that is only a bound says so (its mark, below): analyzer/values.h names
 * both for the reports.
 *
 * Level figures from running statistics (dsp/stats.h) of one or more channels together:
 *   rms_dbfs = 10 lg(mean square / 0.5) (AES17: a full-scale sine reads 0 dBFS; DC included),
 *   peak_dbfs = 20 lg(largest |x|), dc_offset_pct = 100 x (mean of the first channel),
 *   clipped = samples at or within 1 LSB of full scale (dsp/stats.h), summed over the channels.
 * rms_dbfs and peak_dbfs are NAN for silence (every sample zero) or no samples, and an upper bound
 * at -ML_FIGURE_DB_LIMIT dBFS when they lie below it.
 */
#ifndef ML_DSP_FIGURES_H
#define ML_DSP_FIGURES_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/metrics.h"
#include "dsp/stats.h"

/* How a figure is to be read: its state and the reason (dsp/metrics.h). The zero value is a
 * plain reading (ML_FIG_MEASURED, ML_WHY_OK). */
typedef struct {
    ml_fig_state state;
    ml_audio_why why;
} ml_fig_mark;

/* The audio figures in their reported units. Each number is the reading, or for a bound the
 * bound's value, or NAN when not measurable; mark.<same name> says which (state) and why. They
 * come from the analysis' own figures (ml_audio_result.figures, dsp/metrics.h: the tone decision,
 * lines against the noise, the analysis floor, the reportable range), converted:
 *   fundamental_hz   = figures.fundamental_hz
 *   fundamental_dbfs = 10 lg(P1 / 0.5)                      (P1 = figures.fundamental)
 *   thd_pct  = 100 sqrt(thd),   thd_db  = 10 lg(thd)        (thd = figures.thd, a power ratio)
 *   thdn_pct = 100 sqrt(thdn),  thdn_db = 10 lg(thdn)
 *   sinad_db = 10 lg(sinad),    snr_db  = 10 lg(snr)
 *   enob_bits = figures.enob    ((SINAD - 10 lg 1.5) / (20 lg 2), IEEE Std 1241-2000 eq. 94, 102)
 *   noise_dbfs = 10 lg(N / 0.5),  noise_nohum_dbfs = 10 lg(N_nohum / 0.5)
 *   mains_hz = figures.mains_hz (NAN with ML_WHY_MAINS_NONE: no mains line above the noise)
 *   hum_dbfs = 10 lg(H / 0.5),  hum_dbc = 10 lg(figures.hum_rel)
 * Every conversion is increasing, so a bound keeps its direction. Without a test tone
 * (tone_present false) the tone figures are NAN with the tone decision's reason; noise, hum and
 * mains remain (a hum-and-noise measurement). */
typedef struct {
    double fundamental_hz, fundamental_dbfs;
    double thd_pct, thd_db, thdn_pct, thdn_db, sinad_db, snr_db, enob_bits, noise_dbfs;
    double mains_hz, hum_dbfs, hum_dbc;
    double noise_nohum_dbfs;
    struct {
        ml_fig_mark fundamental_hz, fundamental_dbfs;
        ml_fig_mark thd_pct, thd_db, thdn_pct, thdn_db, sinad_db, snr_db, enob_bits, noise_dbfs;
        ml_fig_mark mains_hz, hum_dbfs, hum_dbc;
        ml_fig_mark noise_nohum_dbfs;
    } mark;
} ml_audio_plain_figures;

/* Level figures (see above); rms_dbfs and peak_dbfs carry a mark: not measurable for silence
 * (ML_WHY_SILENT), an upper bound at -ML_FIGURE_DB_LIMIT dBFS below it (ML_WHY_OUT_OF_RANGE: e.g.
 * denormal samples, far below any converter's resolution). */
typedef struct {
    double rms_dbfs, peak_dbfs, dc_offset_pct;
    uint64_t clipped;
    ml_fig_mark rms_mark, peak_mark;
} ml_level_figures;

/* The audio figures of a (see above). valid false (the analysis failed or found no signal):
 * every figure NAN, not measurable with ML_WHY_NO_SIGNAL. a may be NULL when valid is false.
 * Never allocates. */
void ml_figures_audio(const ml_audio_result *a, bool valid, ml_audio_plain_figures *out);

/* Every audio figure NAN, not measurable (ML_WHY_NO_SIGNAL). */
void ml_figures_audio_none(ml_audio_plain_figures *out);

/* The plain estimates behind the figures, straight from a's powers and not judged against the
 * noise (no states, no bounds, no range): thd = D / P1, thdn = (B - P1) / P1, snr = P1 / N,
 * hum = H, H / P1, with P1 = a->fundamental_power, D = a->distortion_power, B = a->band_power,
 * N = a->noise_power, H = a->hum_power (the dB and % helpers of dsp/metrics.h). Only for the
 * spread of many estimates (the uncertainty blocks, dsp/blocks.h), never for a report: a
 * component buried in the noise reads as the noise here. valid false: every figure NAN. */
void ml_figures_audio_raw(const ml_audio_result *a, bool valid, ml_audio_plain_figures *out);

/* The level figures of n >= 1 channels' statistics s[n] taken together (see above). */
void ml_figures_level(const ml_stats *s, size_t n, ml_level_figures *out);

/* NULL when the analysed band of a holds a measurable signal; otherwise why not, as a short
 * phrase for a note (a static string): the band's power B is more than 200 dB below total_power
 * (mean square of the whole input), so it holds only rounding residue and window leakage, or
 * P1 lies below -ML_FIGURE_DB_LIMIT dBFS (the reportable range, dsp/metrics.h). */
const char *ml_figures_no_signal(const ml_audio_result *a, double total_power);

#endif
