/* Unit tests for dsp/sweep: groups, reference, band edges, a step's transform.
 * SPDX-License-Identifier: MIT
 *
 * References: the band edges are checked on responses whose -3 dB points are known in closed
 * form: a straight line in dB against lg f (where the definition's interpolation is exact) and
 * the Butterworth magnitude |H(f)|^2 = 1 / (1 + (f / fc)^(2N)) (Butterworth 1930; any filter
 * textbook, e.g. Oppenheim & Schafer 3rd ed. 7.3.1), whose level falls to -3 dB at
 * f = fc (10^0.3 - 1)^(1 / 2N). The windows' terms are those of dsp/window.c ([harris:1978],
 * [heinzel:2002]).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdint.h>

#include "dsp/sweep.h"

START_TEST(groups_follow_the_plan)
{
    /* a plan of 3 frequencies x 2 levels, levels outer: the run starts again at 100 Hz */
    const double f[] = {100, 1000, 10000, 100, 1000, 10000};
    size_t g[6];
    ck_assert_uint_eq(ml_sweep_group(f, 6, 2, 2, g), 2);
    for (size_t i = 0; i < 6; i++)
        ck_assert_uint_eq(g[i], i / 3);
    /* any order within a run (descending here); the measured frequencies scatter within 2 % */
    const double d[] = {8000, 4000, 1000, 8050, 3990, 1003, 1000.5};
    size_t h[7];
    ck_assert_uint_eq(ml_sweep_group(d, 7, 2, 2, h), 3);
    ck_assert_uint_eq(h[2], 0);
    ck_assert_uint_eq(h[3], 1);
    ck_assert_uint_eq(h[5], 1);
    ck_assert_uint_eq(h[6], 2); /* 1000.5 Hz repeats 1003 Hz (within 2 %) */
    /* a level change at the same frequency without a pause is a new group */
    const double l[] = {40, 1000, 16000, 1000};
    size_t k[4];
    ck_assert_uint_eq(ml_sweep_group(l, 4, 2, 2, k), 2);
    ck_assert_uint_eq(k[3], 1);
    ck_assert_uint_eq(ml_sweep_group(l, 0, 2, 2, k), 0);
}
END_TEST

START_TEST(reference_nearest_on_a_log_scale)
{
    const double f[] = {50, 400, 997, 5000}, lv[] = {-1, 0, 0.2, -3};
    ck_assert_uint_eq(ml_sweep_reference(f, lv, 4, 1000), 2); /* 997 Hz counts as 1 kHz */
    /* 500 and 2000 Hz lie one octave from 1 kHz each: the lower wins the tie */
    const double t[] = {2000, 500}, tl[] = {0, 0};
    ck_assert_uint_eq(ml_sweep_reference(t, tl, 2, 1000), 1);
    /* an unmeasured point is never the reference */
    const double u[] = {1000, 1200}, ul[] = {NAN, -2};
    ck_assert_uint_eq(ml_sweep_reference(u, ul, 2, 1000), 1);
    const double none[] = {NAN, NAN};
    ck_assert_uint_eq(ml_sweep_reference(u, none, 2, 1000), SIZE_MAX);
    /* nearest on a log scale, not in Hz: 400 Hz is nearer 600 Hz than 1000 Hz is (lg 1.5 < lg 1.67) */
    const double q[] = {400, 1000}, ql[] = {0, 0};
    ck_assert_uint_eq(ml_sweep_reference(q, ql, 2, 600), 0);
}
END_TEST

START_TEST(edges_of_a_straight_line_are_exact)
{
    /* 12 dB per octave above 2 kHz (flat below): rel = -40 lg(f / 2000) reaches -3 dB at
     * 2000 x 10^(3/40) = 2377.8 Hz; the interpolation is exact on a straight line in lg f */
    const double f[] = {100, 500, 1000, 2000, 2200, 3000, 5000};
    double r[7];
    for (int i = 0; i < 7; i++)
        r[i] = f[i] <= 2000 ? 0 : -40 * log10(f[i] / 2000);
    double e = 0;
    ck_assert_int_eq(ml_sweep_edge(f, r, 7, 2, +1, 3.0, &e), ML_OK);
    ck_assert_double_eq_tol(e, 2000 * pow(10, 3.0 / 40), 1e-9);
    /* below: flat to the last point: the edge lies beyond 100 Hz */
    ck_assert_int_eq(ml_sweep_edge(f, r, 7, 2, -1, 3.0, &e), ML_ENOSIGNAL);
    ck_assert_double_eq(e, 100);
    /* an unmeasured point is skipped; the crossing is found between its neighbours */
    r[4] = NAN;
    ck_assert_int_eq(ml_sweep_edge(f, r, 7, 2, +1, 3.0, &e), ML_OK);
    const double want = pow(10, log10(2000) + (3.0 / (40 * log10(1.5))) * log10(1.5));
    ck_assert_double_eq_tol(e, want, 1e-9); /* the same line: still exact */
    /* nothing beyond the reference */
    ck_assert_int_eq(ml_sweep_edge(f, r, 7, 6, +1, 3.0, &e), ML_ENOSIGNAL);
    ck_assert(isnan(e));
    /* bad arguments */
    ck_assert_int_eq(ml_sweep_edge(f, r, 7, 4, +1, 3.0, &e), ML_EINVAL); /* the reference unmeasured */
    ck_assert_int_eq(ml_sweep_edge(f, r, 7, 2, 0, 3.0, &e), ML_EINVAL);
    const double unsorted[] = {100, 50};
    const double z[] = {0, 0};
    ck_assert_int_eq(ml_sweep_edge(unsorted, z, 2, 0, +1, 3.0, &e), ML_EINVAL);
}
END_TEST

START_TEST(edges_of_butterworth_responses)
{
    /* Butterworth high-pass (N = 2, 60 Hz) and low-pass (N = 4, 10 kHz) in cascade, sampled at
     * 1/12-octave points from 20 Hz to 20 kHz; reference the point nearest 1 kHz. Each -3 dB point
     * lies at fc (10^0.3 - 1)^(-+1/2N) (the other filter and the reference point's own level move
     * it by less than 0.002 dB). The definition's chord between points 1/12 octave apart misses
     * the curve's crossing by 0.013 % (low) and 0.17 % (high) here (computed with numpy); 0.5 %
     * leaves room and still fails a chord taken on the wrong pair of points (6 % apart). */
    double f[128], r[128];
    size_t n = 0, ref = 0;
    for (double x = 20; x <= 20001; x *= pow(2, 1.0 / 12)) {
        const double hp = 1 / (1 + pow(60 / x, 4)), lp = 1 / (1 + pow(x / 10000, 8));
        f[n] = x;
        r[n] = 10 * log10(hp * lp);
        if (fabs(log10(x / 1000)) < fabs(log10(f[ref] / 1000)))
            ref = n;
        n++;
    }
    const double r_ref = r[ref];
    for (size_t i = 0; i < n; i++)
        r[i] -= r_ref;
    double lo = 0, hi = 0;
    ck_assert_int_eq(ml_sweep_edge(f, r, n, ref, -1, 3.0, &lo), ML_OK);
    ck_assert_int_eq(ml_sweep_edge(f, r, n, ref, +1, 3.0, &hi), ML_OK);
    const double want_lo = 60 / pow(pow(10, 0.3) - 1, 1.0 / 4);
    const double want_hi = 10000 * pow(pow(10, 0.3) - 1, 1.0 / 8);
    ck_assert_msg(fabs(lo / want_lo - 1) < 0.005, "lower edge %.3f Hz, want %.3f", lo, want_lo);
    ck_assert_msg(fabs(hi / want_hi - 1) < 0.005, "upper edge %.3f Hz, want %.3f", hi, want_hi);
}
END_TEST

START_TEST(step_transform_resolves_low_tones)
{
    ml_spectrum_config c;
    /* 0.8 s at 48 kHz: nfft 32768 (32768 + 4096 <= 38400), hop 38400 - 32768 = 5632 (< 8192) */
    ck_assert_int_eq(ml_sweep_step_transform(48000, 38400, 1000, ML_WINDOW_HFT248D, &c), ML_OK);
    ck_assert_uint_eq(c.nfft, 32768);
    ck_assert_uint_eq(c.hop, 5632);
    ck_assert_int_eq(c.window, ML_WINDOW_HFT248D); /* 683 bins >= 2 x 12 + 1 */
    ck_assert_int_eq(c.remove_dc, 1);
    /* 1 s: hop nfft/4 */
    ck_assert_int_eq(ml_sweep_step_transform(48000, 48000, 1000, ML_WINDOW_HFT248D, &c), ML_OK);
    ck_assert_uint_eq(c.nfft, 32768);
    ck_assert_uint_eq(c.hop, 8192);
    /* 0.4 s: nfft 16384 (2.93 Hz bins); 40 Hz = 13.65 bins: HFT248D needs 25, HFT144D 17,
     * Blackman-Harris 11 (the windows' terms + 1 = lobe, 2 lobe + 1 bins) */
    ck_assert_int_eq(ml_sweep_step_transform(48000, 19200, 40, ML_WINDOW_HFT248D, &c), ML_OK);
    ck_assert_uint_eq(c.nfft, 16384);
    ck_assert_int_eq(c.window, ML_WINDOW_BLACKMAN_HARRIS);
    /* 60 Hz = 20.5 bins: HFT144D */
    ck_assert_int_eq(ml_sweep_step_transform(48000, 19200, 60, ML_WINDOW_HFT248D, &c), ML_OK);
    ck_assert_int_eq(c.window, ML_WINDOW_HFT144D);
    /* the preferred window is never exceeded */
    ck_assert_int_eq(ml_sweep_step_transform(48000, 19200, 1000, ML_WINDOW_HANN, &c), ML_OK);
    ck_assert_int_eq(c.window, ML_WINDOW_HANN);
    /* too low for any: Hann */
    ck_assert_int_eq(ml_sweep_step_transform(48000, 19200, 10, ML_WINDOW_HFT248D, &c), ML_OK);
    ck_assert_int_eq(c.window, ML_WINDOW_HANN);
    /* the window rule alone: 25 bins is HFT248D's least, 17 HFT144D's, 11 Blackman-Harris's */
    ck_assert_int_eq(ml_sweep_window(25, ML_WINDOW_HFT248D), ML_WINDOW_HFT248D);
    ck_assert_int_eq(ml_sweep_window(24.9, ML_WINDOW_HFT248D), ML_WINDOW_HFT144D);
    ck_assert_int_eq(ml_sweep_window(16.9, ML_WINDOW_HFT248D), ML_WINDOW_BLACKMAN_HARRIS);
    ck_assert_int_eq(ml_sweep_window(10.9, ML_WINDOW_HFT248D), ML_WINDOW_HANN);
    ck_assert_int_eq(ml_sweep_window(100, ML_WINDOW_HFT144D), ML_WINDOW_HFT144D);
    ck_assert_int_eq(ml_sweep_window(100, ML_WINDOW_RECT), ML_WINDOW_HFT248D);
    /* long steps: at most the default resolution (2^16 at 48 kHz) */
    ck_assert_int_eq(ml_sweep_step_transform(48000, 48000 * 60, 1000, ML_WINDOW_HFT248D, &c), ML_OK);
    ck_assert_uint_eq(c.nfft, ml_spectrum_config_default(48000).nfft);
    ck_assert_int_eq(ml_sweep_step_transform(48000, 287, 1000, ML_WINDOW_HFT248D, &c), ML_ENOSIGNAL);
    ck_assert_int_eq(ml_sweep_step_transform(48000, 38400, 24000, ML_WINDOW_HFT248D, &c), ML_EINVAL);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_sweep");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, groups_follow_the_plan);
    tcase_add_test(tc, reference_nearest_on_a_log_scale);
    tcase_add_test(tc, edges_of_a_straight_line_are_exact);
    tcase_add_test(tc, edges_of_butterworth_responses);
    tcase_add_test(tc, step_transform_resolves_low_tones);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
