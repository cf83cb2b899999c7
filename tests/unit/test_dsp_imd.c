/* Unit tests for dsp/imd: SMPTE/DIN and difference-frequency IMD on constructed spectra.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * docs/references.md 5 and 12: IEC 60268-3 14.12.7 worked example U(fh) = 0.25, sidebands 0.02, 0.02,
 *     0.01, 0.01 -> d2 = 0.16, d3 = 0.08, r.s.s. (SMPTE RP120 analyser convention) 0.12649 = 12.65 %;
 *     IEC 60268-3 14.12.8.1 worked example: tones 0.5 each, U(1 kHz) = 0.03, U(12 kHz) = U(15 kHz) =
 *     0.02 -> d2 = 0.03, d3 = 0.04 (tones at 13 and 14 kHz give those products).
 * Trigonometric identities (analytic): (1 + m sin a) sin b = sin b + (m/2) [cos(b - a) - cos(b + a)];
 *     for x = A (cos a + cos b): x^2 holds A^2 cos(a - b), x^3 holds (3/4) A^3 [cos(2a - b) +
 *     cos(2b - a)] and (9/4) A^3 cos b.
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/imd.h"
#include "dsp/spectrum.h"
#include "testsig.h"

#define RATE 48000.0
#define SECONDS 4

typedef struct {
    double hz, amp;
} comp;

/* Spectrum of a sum of sines (amplitude, Hz) plus Gaussian noise of r.m.s. sigma, pushed in blk. */
static ml_spectrum *spectrum_of(const comp *c, size_t nc, double sigma, size_t blk)
{
    const size_t n = (size_t)(SECONDS * RATE);
    double *x = calloc(n, sizeof *x);
    for (size_t i = 0; i < nc; i++)
        ts_add_sine(x, n, c[i].amp, c[i].hz, RATE, 0.3 * (double)i);
    ts_rng r = {42};
    for (size_t i = 0; i < n && sigma > 0; i++)
        x[i] += sigma * ts_gauss(&r);
    ml_spectrum_config sc = ml_spectrum_config_default(RATE);
    ml_spectrum *sp = NULL;
    ck_assert_int_eq(ml_spectrum_create(&sc, &sp), ML_OK);
    for (size_t i = 0; i < n; i += blk)
        ck_assert_int_eq(ml_spectrum_push_double(sp, x + i, i + blk <= n ? blk : n - i), ML_OK);
    free(x);
    return sp;
}

static ml_imd_result analyse(ml_spectrum *sp, const ml_imd_config *c, ml_status want)
{
    ml_imd_result r;
    memset(&r, 0, sizeof r);
    ck_assert_int_eq(ml_imd_analyze(sp, c, &r), want);
    return r;
}

/* 2 % of the value: the brief's tolerance for constructed sidebands */
#define REL2(got, want) ck_assert_double_eq_tol((got), (want), 0.02 * (want))

START_TEST(smpte_worked_example)
{
    /* docs/references.md 5/12 worked example scaled by 0.8 (the figures are ratios): LF 60 Hz at 0.8
     * (4:1 with U(fh) = 0.2 at 7 kHz), sidebands 0.016 at 7000 +- 60, 0.008 at 7000 +- 120. Expected
     * smpte 12.65 %, d2 16 %, d3 8 %. Noise -120 dBFS: every product far above it. */
    const comp c[] = {{60, 0.8}, {7000, 0.2}, {6940, 0.016}, {7060, 0.016}, {6880, 0.008}, {7120, 0.008}};
    ml_spectrum *sp = spectrum_of(c, 6, 1e-6, 4096);
    ml_imd_config cfg = ml_imd_config_default();
    ml_imd_result r = analyse(sp, &cfg, ML_OK);
    ck_assert_int_eq(r.method, ML_IMD_SMPTE);
    ck_assert(r.detected);
    ck_assert_double_eq_tol(r.f1_hz, 60.0, 0.01);
    ck_assert_double_eq_tol(r.f2_hz, 7000.0, 0.01);
    ck_assert_double_eq_tol(r.ratio_db, 12.04, 0.01); /* 20 lg 4 */
    REL2(r.smpte_pct, 12.649);
    REL2(r.smpte_d2_pct, 16.0);
    REL2(r.smpte_d3_pct, 8.0);
    ck_assert(!r.smpte_upper_bound && !r.smpte_d2_upper_bound && !r.smpte_d3_upper_bound);
    ck_assert_uint_eq(r.nproducts, 6); /* orders n = 1..3, both sides */
    ck_assert(isnan(r.dfd2_pct) && isnan(r.dfd3_pct));
    ml_spectrum_destroy(sp);
}
END_TEST

START_TEST(din_am_of_the_high_tone)
{
    /* DIN 45403 / IEC 60268-3: 250 Hz + 8 kHz at 4:1. The high tone amplitude-modulated by m = 5 %
     * at 250 Hz: (1 + m sin a) sin b = sin b + (m/2)[cos(b-a) - cos(b+a)] (analytic), so each first
     * sideband is m U/2: d2 = m = 5 %, d3 = 0, r.s.s. = m / sqrt 2 = 3.536 %. Built sample by sample. */
    const size_t n = (size_t)(SECONDS * RATE);
    double *x = calloc(n, sizeof *x);
    const double m = 0.05, wl = 2 * TS_PI * 250 / RATE, wh = 2 * TS_PI * 8000 / RATE;
    for (size_t i = 0; i < n; i++)
        x[i] = 0.6 * sin(wl * (double)i) + 0.15 * (1 + m * sin(wl * (double)i)) * sin(wh * (double)i);
    ml_spectrum_config sc = ml_spectrum_config_default(RATE);
    ml_spectrum *sp = NULL;
    ck_assert_int_eq(ml_spectrum_create(&sc, &sp), ML_OK);
    ck_assert_int_eq(ml_spectrum_push_double(sp, x, n), ML_OK);
    ml_imd_config cfg = ml_imd_config_default();
    ml_imd_result r = analyse(sp, &cfg, ML_OK);
    ck_assert_int_eq(r.method, ML_IMD_SMPTE);
    REL2(r.smpte_d2_pct, 5.0);
    REL2(r.smpte_pct, 5.0 / sqrt(2.0));
    /* no noise was added: the missing 2nd-order sidebands read the window's floor, far below 0.01 % */
    ck_assert(r.smpte_d3_pct < 1e-6);
    ck_assert(r.smpte_d3_upper_bound); /* nothing but rounding noise there */
    ml_spectrum_destroy(sp);
    free(x);
}
END_TEST

START_TEST(dfd_worked_example)
{
    /* docs/references.md 5/12: tones 0.5 each (13 and 14 kHz), U(1 kHz) 0.03, U(12 kHz) = U(15 kHz)
     * 0.02 -> dfd2 3 %, dfd3 4 %. */
    const comp c[] = {{13000, 0.5}, {14000, 0.5}, {1000, 0.03}, {12000, 0.02}, {15000, 0.02}};
    ml_spectrum *sp = spectrum_of(c, 5, 1e-6, 4096);
    ml_imd_config cfg = ml_imd_config_default();
    ml_imd_result r = analyse(sp, &cfg, ML_OK);
    ck_assert_int_eq(r.method, ML_IMD_DFD);
    REL2(r.dfd2_pct, 3.0);
    REL2(r.dfd3_pct, 4.0);
    ck_assert(!r.dfd2_upper_bound && !r.dfd3_upper_bound);
    ck_assert(isnan(r.smpte_pct));
    ml_spectrum_destroy(sp);
}
END_TEST

START_TEST(dfd_polynomial_nonlinearity)
{
    /* 19 + 20 kHz, A = 0.4 each, through y = x + a2 x^2 + a3 x^3 (a2 = 0.05, a3 = 0.1). Identities in the
     * header: U(1 kHz) = a2 A^2, U(18 k) = U(21 k) = (3/4) a3 A^3, U(20 k) = A + (9/4) a3 A^3. At
     * 48 kHz the other products alias to 8, 9, 10 kHz and 27..30 kHz images fold to 18..21 kHz only
     * for 3 f = 57/60 kHz -> 9/12 kHz: none lands on 1, 18 or 21 kHz. */
    const size_t n = (size_t)(SECONDS * RATE);
    double *x = calloc(n, sizeof *x);
    const double A = 0.4, a2 = 0.05, a3 = 0.1;
    for (size_t i = 0; i < n; i++) {
        const double t = (double)i / RATE, v = A * (cos(2 * TS_PI * 19000 * t) + cos(2 * TS_PI * 20000 * t));
        x[i] = v + a2 * v * v + a3 * v * v * v;
    }
    ml_spectrum_config sc = ml_spectrum_config_default(RATE);
    ml_spectrum *sp = NULL;
    ck_assert_int_eq(ml_spectrum_create(&sc, &sp), ML_OK);
    ck_assert_int_eq(ml_spectrum_push_double(sp, x, n), ML_OK);
    ml_imd_config cfg = ml_imd_config_default();
    ml_imd_result r = analyse(sp, &cfg, ML_OK);
    ck_assert_int_eq(r.method, ML_IMD_DFD);
    const double u2 = A + 2.25 * a3 * A * A * A;
    REL2(r.dfd2_pct, 100 * a2 * A * A / (2 * u2));
    REL2(r.dfd3_pct, 100 * 2 * 0.75 * a3 * A * A * A / (2 * u2));
    ml_spectrum_destroy(sp);
    free(x);
}
END_TEST

START_TEST(noise_limits_flagged)
{
    /* SMPTE tones without any sideband, white noise sigma 1e-3 (-57 dBFS): every product lobe holds
     * only noise, so each is an upper bound and so are the figures; the readings stay near the noise
     * amplitude. Then sidebands at 1 % of U(fh) = 0.2 (0.002, 45 dB above the lobe noise ~1.1e-5):
     * values, not bounds. */
    const comp c[] = {{60, 0.8}, {7000, 0.2}, {6940, 0.002}, {7060, 0.002}};
    ml_spectrum *sp = spectrum_of(c, 2, 1e-3, 4096);
    ml_imd_config cfg = ml_imd_config_default();
    ml_imd_result r = analyse(sp, &cfg, ML_OK);
    ck_assert(r.smpte_upper_bound && r.smpte_d2_upper_bound && r.smpte_d3_upper_bound);
    for (size_t i = 0; i < r.nproducts; i++) {
        ck_assert(r.products[i].upper_bound);
        ck_assert_double_lt(r.products[i].amplitude, 2.0 * r.products[i].noise_amplitude);
    }
    ml_spectrum_destroy(sp);
    sp = spectrum_of(c, 4, 1e-3, 4096);
    r = analyse(sp, &cfg, ML_OK);
    ck_assert(!r.smpte_d2_upper_bound);
    REL2(r.smpte_d2_pct, 2.0);
    ck_assert(r.smpte_d3_upper_bound); /* 2nd-order sidebands still absent */
    ml_spectrum_destroy(sp);
}
END_TEST

START_TEST(detection_and_forcing)
{
    ml_imd_config cfg = ml_imd_config_default();
    /* one tone: nothing to measure */
    const comp one[] = {{1000, 0.5}};
    ml_spectrum *sp = spectrum_of(one, 1, 1e-5, 4096);
    analyse(sp, &cfg, ML_ENOSIGNAL);
    ml_spectrum_destroy(sp);
    /* 1 kHz + 3 kHz at equal level: neither SMPTE (low tone too high) nor DFD (too far apart) */
    const comp two[] = {{1000, 0.4}, {3000, 0.4}, {2000, 0.004}};
    sp = spectrum_of(two, 3, 1e-5, 4096);
    analyse(sp, &cfg, ML_ENOSIGNAL);
    /* forced DFD on them with their frequencies: d2 = 0.004 / 0.8 = 0.5 % */
    cfg.method = ML_IMD_DFD;
    cfg.f1_hz = 1000;
    cfg.f2_hz = 3000;
    ml_imd_result r = analyse(sp, &cfg, ML_OK);
    ck_assert(!r.detected);
    ck_assert_int_eq(r.method, ML_IMD_DFD);
    REL2(r.dfd2_pct, 0.5);
    ml_spectrum_destroy(sp);
    /* SMPTE 60 Hz + 7 kHz detected even with a strong 2nd harmonic of the low tone */
    const comp smp[] = {{60, 0.8}, {7000, 0.2}, {120, 0.05}, {6940, 0.002}, {7060, 0.002}};
    sp = spectrum_of(smp, 5, 1e-5, 4096);
    cfg = ml_imd_config_default();
    r = analyse(sp, &cfg, ML_OK);
    ck_assert_int_eq(r.method, ML_IMD_SMPTE);
    REL2(r.smpte_d2_pct, 2.0);
    /* forcing SMPTE with orders 1: only the first pair */
    cfg.method = ML_IMD_SMPTE;
    cfg.smpte_orders = 1;
    r = analyse(sp, &cfg, ML_OK);
    ck_assert_uint_eq(r.nproducts, 2);
    REL2(r.smpte_pct, 100 * sqrt(2 * 0.002 * 0.002) / 0.2);
    ml_spectrum_destroy(sp);
}
END_TEST

START_TEST(detection_needs_clear_tones)
{
    /* White noise of variance sigma^2 puts sigma^2 (2 lobe + 1) / (nfft / 2) into a lobe (its power
     * spread evenly over nfft/2 bins, Parseval); the median density of a Welch average lies within
     * a factor 2 of the mean. Tones ML_IMD_CLEAR_DB (30 dB) above that are a test signal; noise
     * alone, or tones 10 dB short of the threshold, are not (a factor 10 either side of it). */
    const double sigma = 0.01;
    ml_spectrum *sp = spectrum_of(NULL, 0, sigma, 4096);
    const double lobe = (double)ml_spectrum_lobe_bins(sp), nfft = (double)ml_spectrum_nfft(sp);
    const double nl = sigma * sigma * (2 * lobe + 1) / (nfft / 2), clear = pow(10.0, ML_IMD_CLEAR_DB / 10.0);
    ml_imd_config c = ml_imd_config_default();
    analyse(sp, &c, ML_ENOSIGNAL); /* noise alone: its two highest peaks are no twin tone */
    ml_spectrum_destroy(sp);
    const double weak = sqrt(2 * 0.1 * clear * nl), strong = sqrt(2 * 10 * clear * nl);
    const comp w[] = {{13000, weak}, {14000, weak}}, t[] = {{13000, strong}, {14000, strong}};
    sp = spectrum_of(w, 2, sigma, 4096);
    analyse(sp, &c, ML_ENOSIGNAL);
    ml_spectrum_destroy(sp);
    sp = spectrum_of(t, 2, sigma, 4096);
    const ml_imd_result r = analyse(sp, &c, ML_OK);
    ck_assert_int_eq(r.method, ML_IMD_DFD);
    ml_spectrum_destroy(sp);
    /* forced, the weak tones are measured all the same */
    c.method = ML_IMD_DFD;
    sp = spectrum_of(w, 2, sigma, 4096);
    analyse(sp, &c, ML_OK);
    ml_spectrum_destroy(sp);
}
END_TEST

START_TEST(block_invariance)
{
    /* Figures depend on the spectrum only: blocks of 1, 7 and 4096 frames give identical results. */
    const comp c[] = {{60, 0.8}, {7000, 0.2}, {6940, 0.016}, {7060, 0.016}};
    const size_t blocks[] = {4096, 7, 1};
    ml_imd_result r0;
    for (size_t b = 0; b < 3; b++) {
        ml_spectrum *sp = spectrum_of(c, 4, 1e-4, blocks[b]);
        ml_imd_config cfg = ml_imd_config_default();
        ml_imd_result r = analyse(sp, &cfg, ML_OK);
        if (b == 0)
            r0 = r;
        else
            ck_assert(r.smpte_pct == r0.smpte_pct && r.smpte_d2_pct == r0.smpte_d2_pct && r.u2 == r0.u2
                      && r.f1_hz == r0.f1_hz);
        ml_spectrum_reset(sp); /* reset spectrum: no segment, no signal */
        analyse(sp, &cfg, ML_ENOSIGNAL);
        ml_spectrum_destroy(sp);
    }
}
END_TEST

START_TEST(config_rejected)
{
    const comp c[] = {{60, 0.8}, {7000, 0.2}};
    ml_spectrum *sp = spectrum_of(c, 2, 1e-5, 4096);
    ml_imd_result r;
    ml_imd_config cfg = ml_imd_config_default();
    ck_assert_int_eq(ml_imd_analyze(NULL, &cfg, &r), ML_EINVAL);
    ck_assert_int_eq(ml_imd_analyze(sp, NULL, &r), ML_EINVAL);
    ck_assert_int_eq(ml_imd_analyze(sp, &cfg, NULL), ML_EINVAL);
    const struct {
        int method, orders;
        double margin, f1, f2;
    } bad[] = {{ML_IMD_METHOD_COUNT, 3, 6, 0, 0}, {-1, 3, 6, 0, 0},     {0, 0, 6, 0, 0},
               {0, ML_IMD_MAX_ORDER + 1, 6, 0, 0}, {0, 3, -1, 0, 0},     {0, 3, 41, 0, 0},
               {0, 3, NAN, 0, 0},                 {1, 3, 6, 7000, 60},  {1, 3, 6, 60, 24000},
               {1, 3, 6, -60, 7000},              {1, 3, 6, 60, 0}};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        cfg = ml_imd_config_default();
        cfg.method = (ml_imd_method)bad[i].method;
        cfg.smpte_orders = bad[i].orders;
        cfg.noise_margin_db = bad[i].margin;
        cfg.f1_hz = bad[i].f1;
        cfg.f2_hz = bad[i].f2;
        ck_assert_msg(ml_imd_analyze(sp, &cfg, &r) == ML_EINVAL, "case %zu", i);
    }
    ml_spectrum_destroy(sp);
    ml_spectrum_config cc = ml_spectrum_config_default(RATE);
    cc.complex_input = 1;
    ck_assert_int_eq(ml_spectrum_create(&cc, &sp), ML_OK);
    cfg = ml_imd_config_default();
    ck_assert_int_eq(ml_imd_analyze(sp, &cfg, &r), ML_EINVAL);
    ml_spectrum_destroy(sp);
    ck_assert_str_eq(ml_imd_method_name(ML_IMD_DFD), "dfd");
    ck_assert_str_eq(ml_imd_method_name(ML_IMD_METHOD_COUNT), "unknown");
}
END_TEST

static Suite *imd_suite(void)
{
    Suite *s = suite_create("dsp_imd");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, smpte_worked_example);
    tcase_add_test(tc, din_am_of_the_high_tone);
    tcase_add_test(tc, dfd_worked_example);
    tcase_add_test(tc, dfd_polynomial_nonlinearity);
    tcase_add_test(tc, noise_limits_flagged);
    tcase_add_test(tc, detection_and_forcing);
    tcase_add_test(tc, detection_needs_clear_tones);
    tcase_add_test(tc, block_invariance);
    tcase_add_test(tc, config_rejected);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(imd_suite());
}
