/* Unit tests for dsp/weighting: A/C and 468 curves against the published tables, weighted noise.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [iec61672:2013] IEC 61672-1:2013 Table 3 (A and C at the exact base-10 frequencies), transcribed in
 *     docs/references.md 1.2; the 0.05 dB test rule and the exact-frequency pitfall are in 1.2 and
 *     10 items 1 and 11.
 * [bs468:1986] ITU-R BS.468-4 Table 1 (response and tolerance), docs/references.md 2.1; the 1 kHz
 *     normalisation pitfall, docs/references.md 10 item 3.
 * White-noise figures (flat 20 Hz - 20 kHz, weighted minus unweighted): A -2.048 dB, C -3.450 dB,
 * 468 +7.263 dB with the closed form's +18.2 dB offset (docs/references.md 1.3, computed).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/synth.h"
#include "dsp/weighting.h"

/* nominal Hz, A, C (dB) from [iec61672:2013] Table 3 */
static const struct {
    double nominal, a_db, c_db;
} table3[] = {
    {10, -70.4, -14.3},   {12.5, -63.4, -11.2}, {16, -56.7, -8.5},   {20, -50.5, -6.2},   {25, -44.7, -4.4},
    {31.5, -39.4, -3.0},  {40, -34.6, -2.0},    {50, -30.2, -1.3},   {63, -26.2, -0.8},   {80, -22.5, -0.5},
    {100, -19.1, -0.3},   {125, -16.1, -0.2},   {160, -13.4, -0.1},  {200, -10.9, 0.0},   {250, -8.6, 0.0},
    {315, -6.6, 0.0},     {400, -4.8, 0.0},     {500, -3.2, 0.0},    {630, -1.9, 0.0},    {800, -0.8, 0.0},
    {1000, 0.0, 0.0},     {1250, 0.6, 0.0},     {1600, 1.0, -0.1},   {2000, 1.2, -0.2},   {2500, 1.3, -0.3},
    {3150, 1.2, -0.5},    {4000, 1.0, -0.8},    {5000, 0.5, -1.3},   {6300, -0.1, -2.0},  {8000, -1.1, -3.0},
    {10000, -2.5, -4.4},  {12500, -4.3, -6.2},  {16000, -6.6, -8.5}, {20000, -9.3, -11.2},
};

/* Hz, response, tolerance (dB; 0 = the printed 0.1 dB digit only) from [bs468:1986] Table 1;
 * 31.5 kHz has +2.8 / -infinity. */
static const struct {
    double hz, db, tol;
} table1[] = {
    {31.5, -29.9, 2.0},  {63, -23.9, 1.4},    {100, -19.8, 1.0},   {200, -13.8, 0.85},  {400, -7.8, 0.7},
    {800, -1.9, 0.55},   {1000, 0.0, 0.5},    {2000, 5.6, 0.5},    {3150, 9.0, 0.5},    {4000, 10.5, 0.5},
    {5000, 11.7, 0.5},   {6300, 12.2, 0.0},   {7100, 12.0, 0.2},   {8000, 11.4, 0.4},   {9000, 10.1, 0.6},
    {10000, 8.1, 0.8},   {12500, 0.0, 1.2},   {14000, -5.3, 1.4},  {16000, -11.7, 1.6}, {20000, -22.2, 2.0},
};

static double exact_hz(double nominal) /* docs/references.md 1.1: 1000 * 10^(n/10) */
{
    return 1000.0 * pow(10.0, round(10.0 * log10(nominal / 1000.0)) / 10.0);
}

START_TEST(a_and_c_against_table3)
{
    /* docs/references.md 1.2 test rule: exactly normalised at 1 kHz, the formula at the exact base-10
     * frequency is within 0.0497 dB of every printed Table 3 value: 0.05 dB. */
    for (size_t i = 0; i < sizeof table3 / sizeof table3[0]; i++) {
        const double f = exact_hz(table3[i].nominal);
        ck_assert_msg(fabs(ml_weighting_db(ML_WEIGHTING_A, f) - table3[i].a_db) <= 0.05, "A at %g Hz: %.4f",
                      table3[i].nominal, ml_weighting_db(ML_WEIGHTING_A, f));
        ck_assert_msg(fabs(ml_weighting_db(ML_WEIGHTING_C, f) - table3[i].c_db) <= 0.05, "C at %g Hz: %.4f",
                      table3[i].nominal, ml_weighting_db(ML_WEIGHTING_C, f));
    }
    /* docs/references.md 10 item 1: at the nominal 16 Hz the formula reads -56.42, 0.28 dB off the
     * table's -56.7 (which holds at 15.85 Hz): the pitfall is real, the exact frequency matters. */
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_A, 16.0), -56.422, 0.002);
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_A, 1000.0), 0.0, 1e-12);
    /* docs/references.md 1.3 (computed): A(50 Hz) -30.271, A(997 Hz) -0.009 */
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_A, 50.0), -30.271, 0.001);
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_A, 997.0), -0.009, 0.001);
}
END_TEST

START_TEST(w468_against_table1)
{
    /* [bs468:1986] Table 1 with its tolerances; the zero-tolerance 6.3 kHz point is met within the
     * printed digit (+-0.05 dB). All points also lie within 0.051 dB of the printed values
     * (docs/references.md 2.1, computed: largest 0.0502 dB at 100 Hz once normalised at 1 kHz). */
    for (size_t i = 0; i < sizeof table1 / sizeof table1[0]; i++) {
        const double r = ml_weighting_db(ML_WEIGHTING_468, table1[i].hz), d = r - table1[i].db;
        ck_assert_msg(fabs(d) <= table1[i].tol + 0.05 && fabs(d) <= 0.051, "468 at %g Hz: %.4f dB",
                      table1[i].hz, r);
    }
    /* 31.5 kHz: -42.7 dB, +2.8 / -infinity */
    ck_assert(ml_weighting_db(ML_WEIGHTING_468, 31500.0) <= -42.7 + 2.8);
    /* docs/references.md 10 item 3: the closed form with +18.2 dB reads -0.039 dB at 1 kHz; this curve
     * is normalised to exactly 0 there, so it lies 0.039 dB above the closed form everywhere: at the
     * maximum (6247 Hz, closed form +12.179 dB, docs/references.md 2.2) it reads +12.217 dB. */
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_468, 1000.0), 0.0, 1e-12);
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_468, 6247.0), 12.179 + 0.039, 0.002);
    /* docs/references.md 1.3 (computed with the closed form): 468(50 Hz) = -25.908, (100 Hz) = -19.889,
     * each +0.039 dB for the 1 kHz normalisation */
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_468, 50.0), -25.908 + 0.039, 0.002);
    ck_assert_double_eq_tol(ml_weighting_db(ML_WEIGHTING_468, 100.0), -19.889 + 0.039, 0.002);
}
END_TEST

/* A spectrum of the signal described by sc, n frames pushed in blocks of blk. */
static ml_spectrum *spectrum_of(const ml_synth_config *sc, size_t n, size_t blk)
{
    ml_synth *syn = NULL;
    ck_assert_int_eq(ml_synth_create(sc, &syn), ML_OK);
    float *x = malloc(n * sizeof *x);
    ck_assert_int_eq(ml_synth_generate(syn, x, n), ML_OK);
    ml_spectrum_config c = ml_spectrum_config_default(sc->rate_hz);
    ml_spectrum *sp = NULL;
    ck_assert_int_eq(ml_spectrum_create(&c, &sp), ML_OK);
    for (size_t i = 0; i < n; i += blk)
        ck_assert_int_eq(ml_spectrum_push(sp, x + i, i + blk <= n ? blk : n - i), ML_OK);
    free(x);
    ml_synth_destroy(syn);
    return sp;
}

START_TEST(white_noise_figures)
{
    /* White Gaussian noise at -40 dBFS (sigma^2 = 10^-4 / 2 over 0..24 kHz, dsp/synth.h level rule).
     * Unweighted band power: sigma^2 * (band bins * bin width) / 24 kHz (analytic: flat density).
     * Weighted minus unweighted, docs/references.md 1.3: A -2.048, C -3.450, 468 +7.263 + 0.039 (this
     * curve's 1 kHz normalisation, see w468_against_table1). 20 s give ~28 segments of 2^16 points and
     * ~27 000 bins in the band: the estimate's random error is far below 0.01 dB; 0.03 dB covers it and
     * the per-bin sampling of the curves (the brief allows 0.3 dB). */
    ml_synth_config sc = ml_synth_config_default(48000);
    sc.kind = ML_SYNTH_SILENCE;
    sc.noise_dbfs = -40.0;
    sc.seed = 7;
    ml_spectrum *sp = spectrum_of(&sc, 20 * 48000, 4096);
    ml_wnoise_config c = ml_wnoise_config_default();
    ml_wnoise_result r;
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, &c, &r), ML_OK);
    const double bin = 48000.0 / (double)ml_spectrum_nfft(sp);
    const double expect = 0.5e-4 * (double)r.nbins_band * bin / 24000.0;
    ck_assert_double_eq_tol(10 * log10(r.noise_power / expect), 0.0, 0.03);
    ck_assert_double_eq_tol(r.noise_a_dbfs - r.noise_dbfs, -2.048, 0.03);
    ck_assert_double_eq_tol(r.noise_c_dbfs - r.noise_dbfs, -3.450, 0.03);
    ck_assert_double_eq_tol(r.noise_468_dbfs - r.noise_dbfs, 7.263 + 0.039, 0.03);
    ck_assert_uint_eq(r.nbins_excluded, 0);
    ml_spectrum_destroy(sp);
}
END_TEST

START_TEST(tone_harmonics_and_hum_taken_out)
{
    /* The same noise under a -6 dBFS 1 kHz tone with harmonics at -60/-70 dBc and 50 Hz hum at -50 dBFS
     * (+ 3rd at -10 dB re the hum) must give the noise-only figures (white_noise_figures) within
     * 0.05 dB: the filled-in bins carry the same density. With the hum left in, the A-weighted noise
     * rises by the A-weighted hum power: hum powers x 10^(A(f)/10) (A(50) = -30.271, A(150) = -13.981,
     * docs/references.md 1.3), within 10 %: the flat-top window spreads each hum component over
     * +-12 bins (+-9 Hz), across which A rises by about 0.7 dB/Hz at 50 Hz, so the weighted lobe reads
     * some 6 % more than the centre weighting (measured 5.9 %; the filled-in noise is the same). */
    ml_synth_config sc = ml_synth_config_default(48000);
    sc.kind = ML_SYNTH_SINE;
    sc.freq_hz = 1000.0;
    sc.level_dbfs = -6.0;
    sc.nharmonics = 2;
    sc.harmonics[0] = (ml_synth_harmonic){2, -60.0};
    sc.harmonics[1] = (ml_synth_harmonic){3, -70.0};
    sc.noise_dbfs = -40.0;
    sc.seed = 7;
    sc.hum_hz = 50.0;
    sc.hum_level_dbfs = -50.0;
    sc.nhum_harmonics = 1;
    sc.hum_harmonics[0] = (ml_synth_harmonic){3, -10.0};
    ml_spectrum *sp = spectrum_of(&sc, 20 * 48000, 4096);
    ml_audio_config ac = ml_audio_config_default();
    ac.mains_hz = 50.0;
    ml_audio_result ar;
    ck_assert_int_eq(ml_audio_analyze(sp, &ac, &ar), ML_OK);
    ml_wnoise_config c = ml_wnoise_config_default();
    ml_wnoise_result r, rh;
    ck_assert_int_eq(ml_weighted_noise(sp, &ar, &c, &r), ML_OK);
    ck_assert_uint_gt(r.nbins_excluded, 0);
    const double bin = 48000.0 / (double)ml_spectrum_nfft(sp);
    const double expect = 0.5e-4 * (double)r.nbins_band * bin / 24000.0;
    ck_assert_double_eq_tol(10 * log10(r.noise_power / expect), 0.0, 0.05);
    ck_assert_double_eq_tol(r.noise_a_dbfs - r.noise_dbfs, -2.048, 0.05);
    ck_assert_double_eq_tol(r.noise_468_dbfs - r.noise_dbfs, 7.263 + 0.039, 0.05);
    /* hum 50 Hz: amplitude 10^(-50/20) -> power 0.5e-5; 150 Hz: 10 dB lower */
    const double h50 = 0.5e-5, h150 = 0.5e-6;
    ck_assert_double_eq_tol(r.hum_removed_power, h50 + h150, 0.05 * (h50 + h150));
    c.exclude_hum = false;
    ck_assert_int_eq(ml_weighted_noise(sp, &ar, &c, &rh), ML_OK);
    const double hum_a = h50 * pow(10, -30.271 / 10) + h150 * pow(10, -13.981 / 10);
    ck_assert_double_eq_tol(rh.noise_a_power - r.noise_a_power, hum_a, 0.10 * hum_a);
    ck_assert(rh.hum_removed_power == 0.0);
    ml_spectrum_destroy(sp);
}
END_TEST

START_TEST(block_invariance)
{
    /* A pure function of the spectrum: spectra fed in blocks of 1, 7 and 4096 frames (the same
     * segments) give identical figures. */
    ml_synth_config sc = ml_synth_config_default(48000);
    sc.freq_hz = 997.0;
    sc.noise_dbfs = -60.0;
    double ref[4] = {0};
    const size_t blocks[] = {4096, 7, 1};
    for (size_t b = 0; b < 3; b++) {
        ml_spectrum *sp = spectrum_of(&sc, 3 * 48000, blocks[b]);
        ml_audio_config ac = ml_audio_config_default();
        ml_audio_result ar;
        ck_assert_int_eq(ml_audio_analyze(sp, &ac, &ar), ML_OK);
        ml_wnoise_config c = ml_wnoise_config_default();
        ml_wnoise_result r;
        ck_assert_int_eq(ml_weighted_noise(sp, &ar, &c, &r), ML_OK);
        const double v[4] = {r.noise_power, r.noise_a_power, r.noise_c_power, r.noise_468_power};
        if (b == 0)
            memcpy(ref, v, sizeof ref);
        else
            ck_assert(memcmp(ref, v, sizeof ref) == 0);
        ml_spectrum_destroy(sp);
    }
}
END_TEST

START_TEST(rejections)
{
    ml_synth_config sc = ml_synth_config_default(48000);
    ml_spectrum *sp = spectrum_of(&sc, 48000, 4096);
    ml_wnoise_config c = ml_wnoise_config_default();
    ml_wnoise_result r;
    ck_assert_int_eq(ml_weighted_noise(NULL, NULL, &c, &r), ML_EINVAL);
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, NULL, &r), ML_EINVAL);
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, &c, NULL), ML_EINVAL);
    c.band_lo_hz = 30000; /* above Nyquist: empty band */
    c.band_hi_hz = 40000;
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, &c, &r), ML_EINVAL);
    c = ml_wnoise_config_default();
    c.band_hi_hz = c.band_lo_hz;
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, &c, &r), ML_EINVAL);
    c = ml_wnoise_config_default();
    c.band_lo_hz = NAN;
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, &c, &r), ML_EINVAL);
    c = ml_wnoise_config_default();
    ml_audio_result other = {0};
    other.bin_hz = 1.0; /* from another spectrum */
    ck_assert_int_eq(ml_weighted_noise(sp, &other, &c, &r), ML_EINVAL);
    ml_spectrum_reset(sp);
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, &c, &r), ML_ENOSIGNAL);
    ml_spectrum_destroy(sp);
    ml_spectrum_config cc = ml_spectrum_config_default(48000);
    cc.complex_input = 1;
    ck_assert_int_eq(ml_spectrum_create(&cc, &sp), ML_OK);
    ck_assert_int_eq(ml_weighted_noise(sp, NULL, &c, &r), ML_EINVAL);
    ml_spectrum_destroy(sp);
    ck_assert(isnan(ml_weighting_db(ML_WEIGHTING_A, 0.0)) && isnan(ml_weighting_db(ML_WEIGHTING_COUNT, 1e3)));
    ck_assert_str_eq(ml_weighting_name(ML_WEIGHTING_468), "468");
    ck_assert_str_eq(ml_weighting_name(ML_WEIGHTING_COUNT), "unknown");
}
END_TEST

static Suite *weighting_suite(void)
{
    Suite *s = suite_create("dsp_weighting");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, a_and_c_against_table3);
    tcase_add_test(tc, w468_against_table1);
    tcase_add_test(tc, white_noise_figures);
    tcase_add_test(tc, tone_harmonics_and_hum_taken_out);
    tcase_add_test(tc, block_invariance);
    tcase_add_test(tc, rejections);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(weighting_suite());
}
