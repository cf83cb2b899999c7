/* Unit tests for dsp/figures: the reported figures derived from analysis results.
 * SPDX-License-Identifier: MIT
 *
 * The inputs are ml_audio_result powers and figures chosen so that each figure has a textbook
 * value, a synthesised capture measured by ml_audio_analyze, and sample statistics of signals
 * with analytic levels.
 *
 * References:
 * [ieee1241:2000] IEEE Std 1241-2000 eq. 94 and 102: ENOB = (SINAD - 1.76) / 6.02 for a
 *     full-scale sine; an ideal N-bit quantiser's noise power is q^2 / 12 (q = 2 / 2^N of a
 *     +-1 range), so SINAD = 6.02 N + 1.76 dB and ENOB = N. docs/references.md 4.
 * [aes17:2015] AES17-2015: 0 dBFS is the RMS of a full-scale sine. docs/references.md 5.
 */
#include <check.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/figures.h"
#include "ml_check.h"
#include "testsig.h"

/* A result with the given powers (mean squares, full-scale sine = 0.5). */
static ml_audio_result result(double p1, double dist, double band, double noise, double hum)
{
    ml_audio_result a = {0};
    a.fundamental_hz = 997.0;
    a.fundamental_power = p1;
    a.distortion_power = dist;
    a.band_power = band;
    a.noise_power = noise;
    a.hum_power = hum;
    a.mains_hz = 50.0;
    return a;
}

START_TEST(ideal_quantiser_enob)
{
    /* [ieee1241:2000]: a full-scale sine (P1 = 0.5) with the noise of an ideal N-bit quantiser,
     * q^2/12, reads SINAD = 6.02 N + 1.76 dB and ENOB = N. The formula is exact; the tolerance
     * 1e-6 bits covers the rounding of B - P1 (one ulp of 0.5, 1.1e-16, against q^2/12 = 1.3e-10
     * at 16 bits: 4e-7 relative, 3e-7 bits). */
    for (int bits = 8; bits <= 16; bits += 4) {
        const double q = 2.0 / pow(2.0, bits), nq = q * q / 12.0;
        const ml_audio_result a = result(0.5, 0.0, 0.5 + nq, nq, 0.0);
        ml_audio_plain_figures f;
        ml_figures_audio_raw(&a, true, &f);
        ck_assert_double_eq_tol(f.enob_bits, bits, 1e-6);
        /* 10 lg(1.5) + 20 lg(2) N = 1.7609 + 6.0206 N exactly (6e-6 dB: the rounding above) */
        ck_assert_double_eq_tol(f.sinad_db, 10 * log10(1.5) + 20 * log10(2.0) * bits, 6e-6);
        ck_assert_double_eq_tol(f.thdn_db, -f.sinad_db, 1e-12);
        ck_assert_double_eq_tol(f.snr_db, f.sinad_db, 6e-6); /* no distortion: N = B - P1 */
        ck_assert_double_eq_tol(f.fundamental_dbfs, 0.0, 1e-12); /* [aes17:2015] */
    }
}
END_TEST

START_TEST(one_percent_distortion)
{
    /* analytic: a harmonic of 1 % amplitude has 1e-4 of the fundamental's power: THD 1 %, -40 dB;
     * with noise of 1e-6 of P1 added, THD+N = 100 sqrt(1.01e-4) % = 1.00499 % and SINAD =
     * 10 lg(1 / 1.01e-4) = 39.957 dB. Hum at 1e-8 of P1: -80 dBc; P1 = 0.05 is -10 dBFS, so the
     * hum is -90 dBFS and the noise -70 dBFS. */
    const double p1 = 0.05, d = 1e-4 * p1, n = 1e-6 * p1;
    const ml_audio_result a = result(p1, d, p1 + d + n, n, 1e-8 * p1);
    ml_audio_plain_figures f;
    ml_figures_audio_raw(&a, true, &f);
    ck_assert_double_eq_tol(f.thd_pct, 1.0, 1e-12);
    ck_assert_double_eq_tol(f.thd_db, -40.0, 1e-9);
    ck_assert_double_eq_tol(f.thdn_pct, 100 * sqrt(1.01e-4), 1e-9);
    ck_assert_double_eq_tol(f.sinad_db, -10 * log10(1.01e-4), 1e-9);
    ck_assert_double_eq_tol(f.snr_db, 60.0, 1e-9);
    ck_assert_double_eq_tol(f.fundamental_dbfs, -10.0, 1e-9);
    ck_assert_double_eq_tol(f.noise_dbfs, -70.0, 1e-9);
    ck_assert_double_eq_tol(f.hum_dbc, -80.0, 1e-9);
    ck_assert_double_eq_tol(f.hum_dbfs, -90.0, 1e-9);
    ck_assert_double_eq(f.mains_hz, 50.0);
    ck_assert_double_eq(f.fundamental_hz, 997.0);
}
END_TEST

/* A figure of dsp/metrics.h. */
static ml_figure fig(ml_fig_state st, double v, ml_audio_why why)
{
    return (ml_figure){.state = st, .value = v, .why = why};
}

START_TEST(figures_keep_state_and_reason)
{
    /* The reported figures are the analysis' own (dsp/metrics.h figures), converted by the
     * textbook formulas of the one percent case above (THD 1e-4 of P1 = 1 %, -40 dB; P1 = 0.05:
     * -10 dBFS; noise 1e-6 P1 = -70 dBFS; SINAD 10 lg(1/1.01e-4) = 39.957 dB), with their state:
     * a bound stays a bound of the same direction (every conversion increases), a figure not
     * measurable is NAN with its reason, a plain reading has no mark. */
    ml_audio_result a = result(0.05, 0, 0, 0, 0);
    ml_audio_figures *F = &a.figures;
    F->fundamental_hz = fig(ML_FIG_MEASURED, 997.0, ML_WHY_OK);
    F->fundamental = fig(ML_FIG_MEASURED, 0.05, ML_WHY_TONE_WEAK);
    F->thd = fig(ML_FIG_UPPER, 1e-4, ML_WHY_HARMONICS_IN_NOISE);
    F->thdn = fig(ML_FIG_MEASURED, 1.01e-4, ML_WHY_OK);
    F->sinad = fig(ML_FIG_MEASURED, 1.0 / 1.01e-4, ML_WHY_OK);
    F->snr = fig(ML_FIG_LOWER, 1e6, ML_WHY_AT_FLOOR);
    F->enob = fig(ML_FIG_MEASURED, (10 * log10(1.0 / 1.01e-4) - 10 * log10(1.5)) / (20 * log10(2.0)),
                  ML_WHY_OK);
    F->noise = fig(ML_FIG_UPPER, 1e-6 * 0.05, ML_WHY_AT_FLOOR);
    F->noise_nohum = fig(ML_FIG_UPPER, 1e-6 * 0.05, ML_WHY_AT_FLOOR);
    F->hum = fig(ML_FIG_NONE, NAN, ML_WHY_HUM_UNRESOLVED);
    F->hum_rel = fig(ML_FIG_NONE, NAN, ML_WHY_HUM_UNRESOLVED);
    F->mains_hz = fig(ML_FIG_NONE, NAN, ML_WHY_MAINS_NONE);
    ml_audio_plain_figures f;
    ml_figures_audio(&a, true, &f);
    ck_assert_double_eq(f.fundamental_hz, 997.0);
    ck_assert_int_eq(f.mark.fundamental_hz.state, ML_FIG_MEASURED);
    ck_assert_int_eq(f.mark.fundamental_hz.why, ML_WHY_OK);
    ck_assert_double_eq_tol(f.fundamental_dbfs, -10.0, 1e-9);
    ck_assert_int_eq(f.mark.fundamental_dbfs.why, ML_WHY_TONE_WEAK);
    ck_assert_double_eq_tol(f.thd_pct, 1.0, 1e-12);
    ck_assert_double_eq_tol(f.thd_db, -40.0, 1e-9);
    ck_assert_int_eq(f.mark.thd_pct.state, ML_FIG_UPPER);
    ck_assert_int_eq(f.mark.thd_db.state, ML_FIG_UPPER);
    ck_assert_int_eq(f.mark.thd_pct.why, ML_WHY_HARMONICS_IN_NOISE);
    ck_assert_double_eq_tol(f.thdn_pct, 100 * sqrt(1.01e-4), 1e-9);
    ck_assert_double_eq_tol(f.thdn_db, 10 * log10(1.01e-4), 1e-9);
    ck_assert_double_eq_tol(f.sinad_db, -10 * log10(1.01e-4), 1e-9);
    ck_assert_double_eq_tol(f.enob_bits, (f.sinad_db - 1.7609) / 6.0206, 1e-4); /* [ieee1241:2000] */
    ck_assert_double_eq_tol(f.snr_db, 60.0, 1e-9);
    ck_assert_int_eq(f.mark.snr_db.state, ML_FIG_LOWER);
    ck_assert_double_eq_tol(f.noise_dbfs, -70.0, 1e-9);
    ck_assert_int_eq(f.mark.noise_dbfs.state, ML_FIG_UPPER);
    ck_assert_double_eq_tol(f.noise_nohum_dbfs, -70.0, 1e-9);
    ck_assert(isnan(f.hum_dbfs) && isnan(f.hum_dbc) && isnan(f.mains_hz));
    ck_assert_int_eq(f.mark.hum_dbfs.state, ML_FIG_NONE);
    ck_assert_int_eq(f.mark.hum_dbfs.why, ML_WHY_HUM_UNRESOLVED);
    ck_assert_int_eq(f.mark.mains_hz.why, ML_WHY_MAINS_NONE);
    /* a bound at 0 has no logarithm: not measurable (never -300 or -inf) */
    F->thd = fig(ML_FIG_UPPER, 0.0, ML_WHY_HARMONICS_IN_NOISE);
    ml_figures_audio(&a, true, &f);
    ck_assert(isnan(f.thd_db));
    ck_assert_int_eq(f.mark.thd_db.state, ML_FIG_NONE);
    ck_assert_int_eq(f.mark.thd_db.why, ML_WHY_OUT_OF_RANGE);
}
END_TEST

START_TEST(figures_of_a_measured_tone)
{
    /* A -6.02 dBFS 1 kHz sine (amplitude 0.5, P1 = 0.125) with a 2nd harmonic of 1 % amplitude
     * (THD 1 %, analytic) in white noise of rms 1e-4 (band 20..20000 Hz at 48 kHz: the noise
     * power in the band is 1e-8 x 19980/24000, -77.8 dBFS), 4 s through ml_audio_analyze: the
     * reported THD within 0.5 % of 1 % (the harmonic is 34 dB above the noise in its lobe), the
     * fundamental within 0.01 dB, noise within 0.2 dB (its estimate over ~26000 bins), all
     * plain readings; hum not measurable or a bound, never a value. */
    const size_t n = 4 * 48000;
    float *x = malloc(n * sizeof *x);
    ts_rng g = {17};
    for (size_t i = 0; i < n; i++) {
        const double t = (double)i / 48000.0;
        x[i] = (float)(0.5 * sin(2 * TS_PI * 1000.0 * t) + 0.005 * sin(2 * TS_PI * 2000.0 * t + 0.3)
                       + 1e-4 * ts_gauss(&g));
    }
    ml_spectrum_config sc = ml_spectrum_config_default(48000.0);
    ml_spectrum *sp = NULL;
    ck_assert_int_eq(ml_spectrum_create(&sc, &sp), ML_OK);
    ml_spectrum_push(sp, x, n);
    const ml_audio_config cfg = ml_audio_config_default();
    ml_audio_result r;
    ck_assert_int_eq(ml_audio_analyze(sp, &cfg, &r), ML_OK);
    ml_audio_plain_figures f;
    ml_figures_audio(&r, true, &f);
    ck_assert_int_eq(f.mark.thd_pct.state, ML_FIG_MEASURED);
    ck_assert_double_eq_tol(f.thd_pct, 1.0, 0.005);
    ck_assert_double_eq_tol(f.fundamental_dbfs, 20 * log10(0.5 / sqrt(2.0) / sqrt(0.5)), 0.01);
    ck_assert_int_eq(f.mark.noise_dbfs.state, ML_FIG_MEASURED);
    ck_assert_double_eq_tol(f.noise_dbfs, 10 * log10(1e-8 * 19980.0 / 24000.0 / 0.5), 0.2);
    ck_assert(f.mark.hum_dbfs.state != ML_FIG_MEASURED);
    ck_assert(isnan(f.mains_hz));
    ml_spectrum_destroy(sp);
    free(x);
}
END_TEST

START_TEST(invalid_is_all_nan)
{
    const ml_audio_result a = result(0.5, 0, 0.5, 0, 0);
    ml_audio_plain_figures f;
    ml_figures_audio(&a, false, &f);
    const double *v[] = {&f.fundamental_hz, &f.fundamental_dbfs, &f.thd_pct, &f.thd_db,    &f.thdn_pct,
                         &f.thdn_db,        &f.sinad_db,         &f.snr_db,  &f.enob_bits, &f.noise_dbfs,
                         &f.mains_hz,       &f.hum_dbfs,         &f.hum_dbc, &f.noise_nohum_dbfs};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++)
        ck_assert(isnan(*v[i]));
    ck_assert_int_eq(f.mark.thd_pct.state, ML_FIG_NONE);
    ck_assert_int_eq(f.mark.thd_pct.why, ML_WHY_NO_SIGNAL);
    ml_figures_audio(NULL, true, &f); /* no result: nothing measured */
    ck_assert(isnan(f.thd_pct));
    ml_figures_audio_raw(NULL, true, &f);
    ck_assert(isnan(f.thd_pct));
}
END_TEST

START_TEST(levels_of_a_sine)
{
    /* [aes17:2015]: a full-scale sine reads 0 dBFS RMS and 0 dBFS peak; at amplitude 0.1,
     * -20 dBFS both; a DC offset of 0.01 reads 1 %. 48 kHz, 997 Hz, 1 s: whole periods are not
     * exact (997 cycles of 48000 samples are), so 1e-6 dB covers the sampled peak and rounding. */
    const size_t n = 48000;
    float *x = malloc(n * sizeof *x);
    for (size_t i = 0; i < n; i++)
        x[i] = (float)(0.1 * sin(2 * TS_PI * 997.0 * (double)i / 48000.0 + 0.5));
    ml_stats s[2];
    ml_stats_init(&s[0], 24);
    ml_stats_init(&s[1], 24);
    ml_stats_push(&s[0], x, n);
    ml_level_figures lv;
    ml_figures_level(s, 1, &lv);
    ck_assert_double_eq_tol(lv.rms_dbfs, -20.0, 1e-5);
    ck_assert_double_eq_tol(lv.peak_dbfs, -20.0, 1e-3); /* the sampled crest: within 0.01 % */
    ck_assert_double_le(lv.peak_dbfs, -20.0 + 1e-6);
    ck_assert_double_eq_tol(lv.dc_offset_pct, 0.0, 1e-5);
    ck_assert_uint_eq(lv.clipped, 0);
    /* a second, silent channel halves the mean square: -3.01 dB (10 lg 2), the peak stays */
    for (size_t i = 0; i < n; i++)
        x[i] = 0.0f;
    ml_stats_push(&s[1], x, n);
    ml_level_figures two;
    ml_figures_level(s, 2, &two);
    ck_assert_double_eq_tol(two.rms_dbfs, lv.rms_dbfs - 10 * log10(2.0), 1e-9);
    ck_assert_double_eq_tol(two.peak_dbfs, lv.peak_dbfs, 1e-12);
    /* silence alone: nothing to measure, never a floor value */
    ml_figures_level(&s[1], 1, &lv);
    ck_assert(isnan(lv.rms_dbfs));
    ck_assert(isnan(lv.peak_dbfs));
    ck_assert_int_eq(lv.peak_mark.state, ML_FIG_NONE);
    ck_assert_int_eq(lv.peak_mark.why, ML_WHY_SILENT);
    /* denormal samples (1e-40: 20 lg = -800 dBFS, below any converter): an upper bound at the
     * reportable range's edge, -290 dBFS, never -800 */
    ml_stats_reset(&s[1]);
    for (size_t i = 0; i < n; i++)
        x[i] = (i % 2 ? 1e-40f : -1e-40f);
    ml_stats_push(&s[1], x, n);
    ml_figures_level(&s[1], 1, &lv);
    ck_assert_double_eq(lv.peak_dbfs, -ML_FIGURE_DB_LIMIT);
    ck_assert_int_eq(lv.peak_mark.state, ML_FIG_UPPER);
    ck_assert_int_eq(lv.peak_mark.why, ML_WHY_OUT_OF_RANGE);
    ck_assert_double_eq(lv.rms_dbfs, -ML_FIGURE_DB_LIMIT);
    ck_assert_int_eq(lv.rms_mark.state, ML_FIG_UPPER);
    /* DC of 0.01 */
    ml_stats_reset(&s[0]);
    for (size_t i = 0; i < n; i++)
        x[i] = 0.01f;
    ml_stats_push(&s[0], x, n);
    ml_figures_level(s, 1, &lv);
    ck_assert_double_eq_tol(lv.dc_offset_pct, 1.0, 1e-6);
    free(x);
}
END_TEST

START_TEST(no_signal_reasons)
{
    /* analytic thresholds of the definition: band power 200 dB below the input, P1 below -290 dBFS
     * (1e-32 is -317 dBFS) */
    ml_audio_result a = result(0.5, 0, 0.5, 1e-6, 0);
    ck_assert_ptr_null(ml_figures_no_signal(&a, 0.5));
    a.band_power = 1e-21;
    ck_assert_ptr_nonnull(ml_figures_no_signal(&a, 0.5));
    a = result(1e-32, 0, 1e-32, 0, 0);
    ck_assert_ptr_nonnull(ml_figures_no_signal(&a, 1e-32));
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_figures");
    TCase *tc = tcase_create("figures");
    tcase_add_test(tc, ideal_quantiser_enob);
    tcase_add_test(tc, one_percent_distortion);
    tcase_add_test(tc, figures_keep_state_and_reason);
    tcase_add_test(tc, figures_of_a_measured_tone);
    tcase_add_test(tc, invalid_is_all_nan);
    tcase_add_test(tc, levels_of_a_sine);
    tcase_add_test(tc, no_signal_reasons);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
