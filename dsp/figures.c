/* The reported figures derived from the analyses' results (see dsp/figures.h).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [ieee1241:2000] IEEE Std 1241-2000: SINAD eq. 94, ENOB eq. 102 (via ml_enob_bits).
 * [aes17:2015] AES17-2015: 0 dBFS is the RMS of a full-scale sine.
 */
#include "dsp/figures.h"

#include <math.h>

static void all_none(ml_audio_plain_figures *out, ml_audio_why why)
{
    const double n = NAN;
    const ml_fig_mark m = {ML_FIG_NONE, why};
    *out = (ml_audio_plain_figures){n, n, n, n, n, n, n, n, n, n, n, n, n, n,
                                    .mark = {m, m, m, m, m, m, m, m, m, m, m, m, m, m}};
}

void ml_figures_audio_none(ml_audio_plain_figures *out)
{
    all_none(out, ML_WHY_NO_SIGNAL);
}

/* 10 lg of a power ratio, 100 sqrt of it, and a power re full scale; NAN for what has no
 * logarithm (a bound of 0 has already been judged by the analysis, dsp/metrics.h). */
static double db(double ratio)
{
    return ratio > 0 ? 10.0 * log10(ratio) : NAN;
}

static double pct(double ratio)
{
    return ratio >= 0 ? 100.0 * sqrt(ratio) : NAN;
}

static double dbfs(double power)
{
    return db(power / 0.5);
}

/* One figure converted by conv (NULL: as it is) into *v and its mark. */
static void put(const ml_figure *f, double (*conv)(double), double *v, ml_fig_mark *m)
{
    *m = (ml_fig_mark){f->state, f->why};
    *v = f->state == ML_FIG_NONE ? NAN : conv ? conv(f->value) : f->value;
    if (f->state != ML_FIG_NONE && !isfinite(*v)) /* no logarithm: say so, never a floor value */
        *m = (ml_fig_mark){ML_FIG_NONE, ML_WHY_OUT_OF_RANGE};
}

void ml_figures_audio(const ml_audio_result *a, bool valid, ml_audio_plain_figures *out)
{
    if (!valid || a == NULL) {
        all_none(out, ML_WHY_NO_SIGNAL);
        return;
    }
    const ml_audio_figures *F = &a->figures;
    put(&F->fundamental_hz, NULL, &out->fundamental_hz, &out->mark.fundamental_hz);
    put(&F->fundamental, dbfs, &out->fundamental_dbfs, &out->mark.fundamental_dbfs);
    put(&F->thd, pct, &out->thd_pct, &out->mark.thd_pct);
    put(&F->thd, db, &out->thd_db, &out->mark.thd_db);
    put(&F->thdn, pct, &out->thdn_pct, &out->mark.thdn_pct);
    put(&F->thdn, db, &out->thdn_db, &out->mark.thdn_db);
    put(&F->sinad, db, &out->sinad_db, &out->mark.sinad_db);
    put(&F->snr, db, &out->snr_db, &out->mark.snr_db);
    put(&F->enob, NULL, &out->enob_bits, &out->mark.enob_bits);
    put(&F->noise, dbfs, &out->noise_dbfs, &out->mark.noise_dbfs);
    put(&F->noise_nohum, dbfs, &out->noise_nohum_dbfs, &out->mark.noise_nohum_dbfs);
    put(&F->mains_hz, NULL, &out->mains_hz, &out->mark.mains_hz);
    put(&F->hum, dbfs, &out->hum_dbfs, &out->mark.hum_dbfs);
    put(&F->hum_rel, db, &out->hum_dbc, &out->mark.hum_dbc);
}

void ml_figures_audio_raw(const ml_audio_result *a, bool valid, ml_audio_plain_figures *out)
{
    all_none(out, ML_WHY_NO_SIGNAL);
    if (!valid || a == NULL)
        return;
    const double p1 = a->fundamental_power, rest = a->band_power - p1;
    const double sinad = ml_ratio_db(p1, rest);
    out->fundamental_hz = a->fundamental_hz;
    out->fundamental_dbfs = ml_power_dbfs(p1);
    out->thd_pct = ml_ratio_pct(a->distortion_power, p1);
    out->thd_db = ml_ratio_db(a->distortion_power, p1);
    out->thdn_pct = ml_ratio_pct(rest, p1);
    out->thdn_db = -sinad;
    out->sinad_db = sinad;
    out->snr_db = ml_ratio_db(p1, a->noise_power);
    out->enob_bits = ml_enob_bits(sinad);
    out->noise_dbfs = ml_power_dbfs(a->noise_power);
    out->noise_nohum_dbfs = ml_power_dbfs(a->noise_nohum_power);
    out->mains_hz = a->mains_hz;
    out->hum_dbfs = ml_power_dbfs(a->hum_power);
    out->hum_dbc = ml_ratio_db(a->hum_power, p1);
    const ml_fig_mark plain = {ML_FIG_MEASURED, ML_WHY_OK};
    out->mark.fundamental_hz = out->mark.fundamental_dbfs = out->mark.thd_pct = out->mark.thd_db = plain;
    out->mark.thdn_pct = out->mark.thdn_db = out->mark.sinad_db = out->mark.snr_db = plain;
    out->mark.enob_bits = out->mark.noise_dbfs = out->mark.noise_nohum_dbfs = plain;
    out->mark.mains_hz = out->mark.hum_dbfs = out->mark.hum_dbc = plain;
}

/* A level in dBFS with its mark: silence is not measurable, a level below the reportable range
 * is an upper bound at its edge (dsp/metrics.h ML_FIGURE_DB_LIMIT). */
static double level(double db_value, bool silent, ml_fig_mark *m)
{
    *m = (ml_fig_mark){ML_FIG_MEASURED, ML_WHY_OK};
    if (silent || isnan(db_value)) {
        *m = (ml_fig_mark){ML_FIG_NONE, ML_WHY_SILENT};
        return NAN;
    }
    if (db_value < -ML_FIGURE_DB_LIMIT) {
        *m = (ml_fig_mark){ML_FIG_UPPER, ML_WHY_OUT_OF_RANGE};
        return -ML_FIGURE_DB_LIMIT;
    }
    return db_value;
}

void ml_figures_level(const ml_stats *s, size_t n, ml_level_figures *out)
{
    double sumsq = 0, peak = 0;
    uint64_t count = 0, clipped = 0;
    for (size_t i = 0; i < n; i++) {
        sumsq += s[i].sumsq;
        count += s[i].count;
        clipped += s[i].clipped;
        peak = fmax(peak, fmax(fabs(s[i].min), fabs(s[i].max)));
    }
    /* [aes17:2015]: 10 lg(mean square / 0.5); the squares of denormal samples may round to 0
     * while the peak does not: the level then lies below any we report (-INFINITY, a bound) */
    const bool silent = !(peak > 0) || count == 0;
    const double ms = count > 0 ? sumsq / (double)count : 0.0;
    out->rms_dbfs = level(ms > 0 ? 10.0 * log10(ms / 0.5) : -INFINITY, silent, &out->rms_mark);
    out->peak_dbfs = level(peak > 0 ? 20.0 * log10(peak) : NAN, silent, &out->peak_mark);
    out->dc_offset_pct = n > 0 ? 100.0 * ml_stats_mean(&s[0]) : NAN;
    out->clipped = clipped;
}

const char *ml_figures_no_signal(const ml_audio_result *a, double total_power)
{
    /* Float samples carry a 24-bit mantissa (rounding about 150 dB below the signal) and the
     * flat-top window leaks 248 dB down: a band more than 200 dB below the whole input's power
     * holds only rounding residue and leakage (DC alone, or an unmodulated carrier). */
    if (!(a->band_power > 1e-20 * total_power))
        return "nothing but rounding residue, more than 200 dB below the input's power";
    /* the reportable range ends at -ML_FIGURE_DB_LIMIT dBFS, far below any converter (a 32-bit
     * integer's step is -186 dBFS): below it there is no signal to measure */
    if (!(a->fundamental_power > 0.5 * pow(10.0, -ML_FIGURE_DB_LIMIT / 10.0)))
        return "the strongest component lies below -290 dBFS, under any converter's resolution";
    return NULL;
}
