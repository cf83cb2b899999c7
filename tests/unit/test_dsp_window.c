/* Unit tests for dsp/window: shapes, figures of merit and sidelobe levels of every window.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [harris:1978] F. J. Harris, "On the use of windows for harmonic analysis with the discrete
 *     Fourier transform", Proc. IEEE 66(1):51-83, Jan. 1978, Table 1 (values as listed in
 *     docs/references.md 3.1, where the Harris column is marked "from memory", partly confirmed).
 * [heinzel:2002] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density estimation
 *     by the Discrete Fourier transform (DFT), including a comprehensive list of window functions
 *     and some new flat-top windows", MPI fuer Gravitationsphysik, 2002 (values as listed in
 *     docs/references.md 3.2, "confirmed" rows).
 * docs/references.md 3.1 / 3.2 "computed" columns: periodic windows, 64x zero-padded FFT (numpy).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <complex.h> /* before fftw3.h: fftw_complex is then double complex */
#include <fftw3.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/window.h"

#define N_FOM 4096 /* the length docs/references.md 3.1 used for its computed columns */

/* Coefficients c_k of w = sum (-1)^k c_k cos(2 pi k n / N), copied from the sources named in
 * dsp/window.h ([harris:1978] Table 1; [heinzel:2002] HFT144D, HFT248D; identical to the
 * docs/references.md 3.2 rows). Used for the analytic figures of merit below. */
typedef struct {
    ml_window_type type;
    size_t nterms;
    double c[11];
} coeffs;

static const coeffs all[] = {
    {ML_WINDOW_RECT, 1, {1.0}},
    {ML_WINDOW_HANN, 2, {0.5, 0.5}},
    {ML_WINDOW_BLACKMAN_HARRIS, 4, {0.35875, 0.48829, 0.14128, 0.01168}},
    {ML_WINDOW_HFT144D, 7, {1.0, 1.96760033, 1.57983607, 0.81123644, 0.22583558, 0.02773848, 0.00090360}},
    {ML_WINDOW_HFT248D,
     11,
     {1.0, 1.985844164102, 1.791176438506, 1.282075284005, 0.667777530266, 0.240160796576, 0.056656381764,
      0.008134974479, 0.000624544650, 0.000019808998, 0.000000132974}},
};
#define NWIN (sizeof all / sizeof all[0])

static double *make(ml_window_type type, size_t n)
{
    double *w = malloc(n * sizeof *w);
    ck_assert_ptr_nonnull(w);
    ck_assert_int_eq(ml_window_fill(type, w, n), ML_OK);
    return w;
}

/* ---- shape ---------------------------------------------------------------------------------- */

START_TEST(shape_matches_cosine_sum)
{
    /* Direct evaluation of the definition in dsp/window.h at every n. 1e-13: both sides sum at
     * most 11 terms of size <= 2 (rounding ~11 * 2 * 2^-53 = 2.4e-15), far below 1e-13. */
    const coeffs *cw = &all[_i];
    const size_t n = 1000;
    double *w = make(cw->type, n);
    for (size_t i = 0; i < n; i++) {
        double z = 2.0 * 3.14159265358979323846 * (double)i / (double)n, ref = 0.0;
        for (size_t k = 0; k < cw->nterms; k++)
            ref += (k % 2 ? -1.0 : 1.0) * cw->c[k] * cos((double)k * z);
        ck_assert_double_eq_tol(w[i], ref, 1e-13);
    }
    free(w);
}
END_TEST

START_TEST(periodic_symmetry_and_peak)
{
    /* DFT-even (periodic) window: w[n] = w[N - n] for 0 < n < N, and the peak w[N/2] = sum c_k
     * (cos(k pi) = (-1)^k cancels the sign). A symmetric ("DFT-odd") window would fail the first. */
    const coeffs *cw = &all[_i];
    const size_t n = 512;
    double *w = make(cw->type, n);
    double peak = 0.0;
    for (size_t k = 0; k < cw->nterms; k++)
        peak += cw->c[k];
    ck_assert_double_eq_tol(w[n / 2], peak, 1e-13);
    for (size_t i = 1; i < n; i++)
        ck_assert_double_eq_tol(w[i], w[n - i], 1e-13);
    free(w);
}
END_TEST

START_TEST(terms_and_names)
{
    /* ml_window_terms is the K of the definition: the main lobe spans +-K bins. */
    for (size_t i = 0; i < NWIN; i++)
        ck_assert_uint_eq(ml_window_terms(all[i].type), all[i].nterms);
    ck_assert_str_eq(ml_window_name(ML_WINDOW_RECT), "rectangular");
    ck_assert_str_eq(ml_window_name(ML_WINDOW_HANN), "hann");
    ck_assert_str_eq(ml_window_name(ML_WINDOW_BLACKMAN_HARRIS), "blackman-harris");
    ck_assert_str_eq(ml_window_name(ML_WINDOW_HFT144D), "hft144d");
    ck_assert_str_eq(ml_window_name(ML_WINDOW_HFT248D), "hft248d");
}
END_TEST

/* ---- figures of merit --------------------------------------------------------------------- */

START_TEST(figures_of_merit_analytic)
{
    /* For a periodic K-term cosine window with N > 2(K-1): sum_n cos(2 pi k n/N) = 0 for
     * 0 < k < N, so CG = c0 exactly, and by orthogonality sum w^2 = N (c0^2 + 1/2 sum_{k>=1} c_k^2),
     * hence ENBW = (c0^2 + 1/2 sum_{k>=1} c_k^2) / c0^2 bins, independent of N.
     * 1e-12: sums of N = 4096 terms of size <= 10 carry ~N * eps relative rounding (9e-13). */
    const coeffs *cw = &all[_i];
    double *w = make(cw->type, N_FOM);
    double s2 = cw->c[0] * cw->c[0];
    for (size_t k = 1; k < cw->nterms; k++)
        s2 += 0.5 * cw->c[k] * cw->c[k];
    ck_assert_double_eq_tol(ml_window_coherent_gain(w, N_FOM), cw->c[0], 1e-12);
    ck_assert_double_eq_tol(ml_window_enbw_bins(w, N_FOM), s2 / (cw->c[0] * cw->c[0]), 1e-12);
    free(w);
}
END_TEST

START_TEST(figures_of_merit_published)
{
    /* Each tolerance is half a unit of the last digit printed in the source. */
    struct {
        ml_window_type type;
        double cg, cg_tol, enbw, enbw_tol;
        const char *src;
    } pub[] = {
        /* [harris:1978] Table 1 rectangular: CG 1.00, ENBW 1.00 (docs/references.md 3.1) */
        {ML_WINDOW_RECT, 1.00, 0.005, 1.00, 0.005, "harris rect"},
        /* [harris:1978] Table 1 Hanning: CG 0.50, ENBW 1.50; [heinzel:2002] NENBW 1.5 (3.2) */
        {ML_WINDOW_HANN, 0.50, 0.005, 1.50, 0.005, "harris hann"},
        /* [harris:1978] Table 1 4-term -92 dB Blackman-Harris: CG 0.36, ENBW 2.00 (3.1) */
        {ML_WINDOW_BLACKMAN_HARRIS, 0.36, 0.005, 2.00, 0.005, "harris bh4"},
        /* [heinzel:2002] Blackman-Harris 92 dB: NENBW 2.0044 (3.2); CG = c0 = 0.35875 (coefficient) */
        {ML_WINDOW_BLACKMAN_HARRIS, 0.35875, 5e-6, 2.0044, 5e-5, "heinzel bh92"},
        /* [heinzel:2002] HFT144D: NENBW 4.5386; unnormalised, CG = c0 = 1 (docs/references.md 3.2 note) */
        {ML_WINDOW_HFT144D, 1.0, 5e-5, 4.5386, 5e-5, "heinzel hft144d"},
        /* [heinzel:2002] HFT248D: NENBW 5.6512; CG = c0 = 1 */
        {ML_WINDOW_HFT248D, 1.0, 5e-5, 5.6512, 5e-5, "heinzel hft248d"},
    };
    for (size_t i = 0; i < sizeof pub / sizeof pub[0]; i++) {
        double *w = make(pub[i].type, N_FOM);
        double cg = ml_window_coherent_gain(w, N_FOM), enbw = ml_window_enbw_bins(w, N_FOM);
        ck_assert_msg(fabs(cg - pub[i].cg) <= pub[i].cg_tol, "%s: CG %.6f vs %.6f", pub[i].src, cg,
                      pub[i].cg);
        ck_assert_msg(fabs(enbw - pub[i].enbw) <= pub[i].enbw_tol, "%s: ENBW %.6f vs %.6f", pub[i].src, enbw,
                      pub[i].enbw);
        free(w);
    }
}
END_TEST

START_TEST(figure_of_merit_helpers_on_plain_arrays)
{
    /* Definitions in dsp/window.h, worked by hand: w = {1, 2, 3, 2}: sum 8, sum w^2 18, n 4;
     * CG = 8/4 = 2; ENBW = 4 * 18 / 64 = 1.125. All exact in binary floating point. */
    const double w[] = {1.0, 2.0, 3.0, 2.0};
    ck_assert_double_eq(ml_window_coherent_gain(w, 4), 2.0);
    ck_assert_double_eq(ml_window_enbw_bins(w, 4), 1.125);
}
END_TEST

/* ---- sidelobes ------------------------------------------------------------------------------ */

#define N_SL 1024u
#define PAD_SL 64u

/* Highest sidelobe in dB re the main-lobe peak, from |W(f)| of the periodic window, zero-padded
 * PAD_SL times so f is sampled every 1/PAD_SL bin. The DTFT of a K-term cosine window is
 * W(f) = sum_k +-c_k/2 (D(f - k) + D(f + k)) with D the Dirichlet kernel, zero at every nonzero
 * integer bin, so W vanishes at every integer |f| >= K: the sidelobe region starts at K bins.
 * (docs/references.md computed PSLL the same way; the values below confirm it.) */
static double psll_db(ml_window_type type)
{
    const size_t m = N_SL * PAD_SL, nb = m / 2 + 1;
    double *in = fftw_alloc_real(m);
    fftw_complex *out = fftw_alloc_complex(nb);
    ck_assert_ptr_nonnull(in);
    ck_assert_ptr_nonnull(out);
    fftw_plan p = fftw_plan_dft_r2c_1d((int)m, in, out, FFTW_ESTIMATE);
    ck_assert_ptr_nonnull(p);
    for (size_t i = 0; i < m; i++)
        in[i] = 0.0;
    ck_assert_int_eq(ml_window_fill(type, in, N_SL), ML_OK);
    fftw_execute(p);
    double peak = cabs(out[0]), side = 0.0;
    for (size_t i = ml_window_terms(type) * PAD_SL; i < nb; i++)
        if (cabs(out[i]) > side)
            side = cabs(out[i]);
    fftw_destroy_plan(p);
    fftw_free(in);
    fftw_free(out);
    return 20.0 * log10(side / peak);
}

START_TEST(highest_sidelobe_levels)
{
    /* Oracle: docs/references.md 3.1/3.2 "computed PSLL" column (periodic, 64x zero-padded):
     * Hann -31.47 (published: [harris:1978] -32, [heinzel:2002] 31.5), Blackman-Harris -92.01
     * (published -92 / 92.0), HFT144D -144.05 ([heinzel:2002] 144.1), HFT248D -248.39
     * ([heinzel:2002] 248.4). Tolerance 0.01 dB = rounding of the table (0.005) + the 1/64-bin
     * grid missing the sidelobe peak (|W| ~ cos(pi d) near a peak: 20 lg cos(pi/128) = -0.003 dB)
     * + the change from N = 4096 (table) to N = 1024 here (numpy: < 0.003 dB).
     * HFT248D: -248 dB is an amplitude 3.8e-13 of the peak; FFTW's rounding error is about
     * eps * sqrt(sum w^2 * log2 M) ~ 1e-14 absolute against a sidelobe of 3.9e-10 (= 3.8e-13 * N),
     * so double precision resolves it (to ~0.001 dB) at this size. What limits it is the
     * 12-decimal coefficients: a 5e-13 change in one c_k shifts this sidelobe by up to ~0.3 dB;
     * the published and our coefficients are the same digits, hence the same 0.01 dB test. */
    const struct {
        ml_window_type type;
        double psll_db;
    } ref[] = {
        {ML_WINDOW_RECT, -13.26}, /* docs/references.md 3.1 computed; [harris:1978] -13 */
        {ML_WINDOW_HANN, -31.47},
        {ML_WINDOW_BLACKMAN_HARRIS, -92.01},
        {ML_WINDOW_HFT144D, -144.05},
        {ML_WINDOW_HFT248D, -248.39},
    };
    for (size_t i = 0; i < sizeof ref / sizeof ref[0]; i++) {
        double got = psll_db(ref[i].type);
        ck_assert_msg(fabs(got - ref[i].psll_db) <= 0.01, "%s: PSLL %.4f dB vs %.2f dB",
                      ml_window_name(ref[i].type), got, ref[i].psll_db);
    }
}
END_TEST

/* ---- leakage ---------------------------------------------------------------------------------- */

START_TEST(leakage_matches_extended_precision_sum)
{
    /* 10 lg |W(nu)|^2 / |W(0)|^2 at fractional offsets for N = 4096, from the direct sum
     * sum_j w[j] exp(-2 pi i nu j / N) evaluated by numpy in extended (80-bit) precision, an
     * independent computation (/usr/bin/python3, np.longdouble, the coefficients of dsp/window.h):
     * its own rounding lies near -340 dB. Tolerance 0.01 dB down to -200 dB; 0.05 dB below, where
     * the closed form's rounding (about 1e-16 of its largest term, dsp/window.h) enters. */
    const struct {
        ml_window_type type;
        double nu, db;
    } ref[] = {
        {ML_WINDOW_HFT248D, 0.3, 0.000887},     {ML_WINDOW_HFT248D, 2.5, -2.101151},
        {ML_WINDOW_HFT248D, 5.5, -24.191875},   {ML_WINDOW_HFT248D, 11.2, -280.335990},
        {ML_WINDOW_HFT248D, 12.5, -264.814814}, {ML_WINDOW_HFT248D, 20.25, -267.784834},
        {ML_WINDOW_HFT248D, 100.5, -264.960321},
        {ML_WINDOW_HANN, 0.3, -0.507098},       {ML_WINDOW_HANN, 2.5, -32.304984},
        {ML_WINDOW_HANN, 5.5, -54.072769},      {ML_WINDOW_HANN, 11.2, -77.442184},
        {ML_WINDOW_HANN, 100.5, -130.072122},   {ML_WINDOW_HANN, 1000.25, -193.206498},
        {ML_WINDOW_BLACKMAN_HARRIS, 0.3, -0.296450},   {ML_WINDOW_BLACKMAN_HARRIS, 2.5, -23.132937},
        {ML_WINDOW_BLACKMAN_HARRIS, 5.5, -101.506208}, {ML_WINDOW_BLACKMAN_HARRIS, 20.25, -137.738841},
        {ML_WINDOW_BLACKMAN_HARRIS, 1000.25, -147.621463},
    };
    for (size_t i = 0; i < sizeof ref / sizeof ref[0]; i++) {
        const double tol = ref[i].db > -200.0 ? 0.01 : 0.05;
        for (int sgn = -1; sgn <= 1; sgn += 2) { /* |W(-nu)| = |W(nu)| for a real symmetric window */
            const double got = 10.0 * log10(ml_window_leakage(ref[i].type, 4096, sgn * ref[i].nu));
            ck_assert_msg(fabs(got - ref[i].db) <= tol, "%s at %+.2f bins: %.6f dB vs %.6f",
                          ml_window_name(ref[i].type), sgn * ref[i].nu, got, ref[i].db);
        }
    }
}
END_TEST

START_TEST(leakage_at_whole_bins_and_edges)
{
    /* At a whole offset d the periodic window's DFT is n a_d (a_d = (-1)^d c_d / 2 for d >= 1,
     * orthogonality of the exponentials), so the leakage is (c_d / (2 c_0))^2 for 1 <= d < K and
     * exactly 0 beyond: analytic. The transform of the filled window (FFTW, any length) agrees. */
    const coeffs *cw = &all[_i];
    const size_t n = 256;
    for (size_t d = 0; d < 40; d++) {
        const double want = d == 0 ? 1.0 : d < cw->nterms ? pow(cw->c[d] / (2.0 * cw->c[0]), 2.0) : 0.0;
        ck_assert_double_eq_tol(ml_window_leakage(cw->type, n, (double)d), want, 1e-15);
        ck_assert_double_eq_tol(ml_window_leakage(cw->type, n, (double)d + (double)n), want, 1e-15);
    }
    /* off the grid, against a direct double-precision sum at n = 256 (rounding ~1e-13 relative) */
    double *w = make(cw->type, n), w0 = 0.0;
    for (size_t j = 0; j < n; j++)
        w0 += w[j];
    const double nus[] = {0.5, 1.25, 3.75, 7.5, 33.3, 127.5};
    for (size_t i = 0; i < sizeof nus / sizeof nus[0]; i++) {
        double complex acc = 0.0;
        for (size_t j = 0; j < n; j++)
            acc += w[j] * cexp(-2.0 * I * 3.14159265358979323846 * nus[i] * (double)j / (double)n);
        const double want = pow(cabs(acc) / w0, 2.0), got = ml_window_leakage(cw->type, n, nus[i]);
        ck_assert_msg(fabs(got - want) <= 1e-12 * (want > 1e-4 ? want : 1e-4), "%s at %.2f: %.6g vs %.6g",
                      ml_window_name(cw->type), nus[i], got, want);
    }
    free(w);
    ck_assert_double_eq(ml_window_leakage(ML_WINDOW_COUNT, n, 0.5), 0.0);
    ck_assert_double_eq(ml_window_leakage(cw->type, 1, 0.5), 0.0);
    ck_assert_double_eq(ml_window_leakage(cw->type, n, NAN), 0.0);
    double c[ML_MAX_WINDOW_TERMS] = {0};
    ck_assert_uint_eq(ml_window_coefficients(cw->type, c, ML_MAX_WINDOW_TERMS), cw->nterms);
    for (size_t k = 0; k < cw->nterms; k++)
        ck_assert_double_eq(c[k], cw->c[k]);
    ck_assert_uint_eq(ml_window_coefficients(cw->type, NULL, 4), 0);
    ck_assert_uint_eq(ml_window_coefficients(ML_WINDOW_COUNT, c, 4), 0);
}
END_TEST

/* ---- rejection ------------------------------------------------------------------------------ */

START_TEST(fill_rejects_bad_arguments)
{
    double w[8];
    ck_assert_int_eq(ml_window_fill(ML_WINDOW_COUNT, w, 8), ML_EINVAL);
    ck_assert_int_eq(ml_window_fill((ml_window_type)-1, w, 8), ML_EINVAL);
    ck_assert_int_eq(ml_window_fill((ml_window_type)1000, w, 8), ML_EINVAL);
    ck_assert_int_eq(ml_window_fill(ML_WINDOW_HANN, w, 1), ML_EINVAL);
    ck_assert_int_eq(ml_window_fill(ML_WINDOW_HANN, w, 0), ML_EINVAL);
    ck_assert_int_eq(ml_window_fill(ML_WINDOW_HANN, NULL, 8), ML_EINVAL);
    ck_assert_int_eq(ml_window_fill(ML_WINDOW_HANN, w, 2), ML_OK); /* smallest valid n */
    /* n = 2, Hann: w[0] = 0.5 - 0.5 = 0, w[1] = 0.5 + 0.5 = 1 */
    ck_assert_double_eq_tol(w[0], 0.0, 1e-15);
    ck_assert_double_eq_tol(w[1], 1.0, 1e-15);
    ck_assert_uint_eq(ml_window_terms(ML_WINDOW_COUNT), 0);
    ck_assert_uint_eq(ml_window_terms((ml_window_type)-1), 0);
    ck_assert_str_eq(ml_window_name(ML_WINDOW_COUNT), "unknown");
    ck_assert_str_eq(ml_window_name((ml_window_type)-1), "unknown");
}
END_TEST

static Suite *window_suite(void)
{
    Suite *s = suite_create("dsp_window");
    TCase *tc = tcase_create("window");
    tcase_add_loop_test(tc, shape_matches_cosine_sum, 0, NWIN);
    tcase_add_loop_test(tc, periodic_symmetry_and_peak, 0, NWIN);
    tcase_add_test(tc, terms_and_names);
    tcase_add_loop_test(tc, figures_of_merit_analytic, 0, NWIN);
    tcase_add_test(tc, figures_of_merit_published);
    tcase_add_test(tc, figure_of_merit_helpers_on_plain_arrays);
    tcase_add_test(tc, highest_sidelobe_levels);
    tcase_add_test(tc, fill_rejects_bad_arguments);
    tcase_add_test(tc, leakage_matches_extended_precision_sum);
    tcase_add_loop_test(tc, leakage_at_whole_bins_and_edges, 0, NWIN);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(window_suite());
}
