/* Unit tests for dsp/mmnoise: Fa from a calibrated noise density and the ITU-R P.372 man-made
 * noise environments.
 * SPDX-License-Identifier: MIT
 *
 * Outside references: docs/references.md 15 (P.372: Fam = c - d lg f_MHz with the
 * Recommendation's constants, and its check values at 0.5, 1, 1.8, 3.6 and 7.1 MHz computed from
 * them; k T0 = -173.975 dBm/Hz, k T0 b = -134.43 dBm for 9 kHz). Pure functions: no object, so no
 * block-invariance or reset test applies.
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>

#include "dsp/mmnoise.h"

START_TEST(check_values)
{
    /* docs/references.md 15 check values (dB re k T0 b; city/residential/rural/quiet
     * rural/galactic), given to 0.01 dB (1 MHz to 0.1 dB, exact there: lg 1 = 0): 0.006 dB. */
    const struct {
        double mhz, v[5];
    } rows[] = {
        {1.0, {76.8, 72.5, 67.2, 53.6, 52.0}},
        {0.5, {85.14, 80.84, 75.54, 62.21, 58.92}},
        {1.8, {69.73, 65.43, 60.13, 46.30, 46.13}},
        {3.6, {61.39, 57.09, 51.79, 37.69, 39.21}},
        {7.1, {53.22, 48.92, 43.62, 29.25, 32.42}},
    };
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++)
        for (int e = 0; e < ML_MMNOISE_COUNT; e++)
            ck_assert_double_eq_tol(ml_mmnoise_fam_db((ml_mmnoise_env)e, rows[i].mhz * 1e6), rows[i].v[e], 0.006);
}
END_TEST

START_TEST(kt0_and_fa)
{
    /* docs/references.md 15: k T0 = -173.975 dBm/Hz; k T0 b for b = 9 kHz: -134.43 dBm. */
    ck_assert_double_eq_tol(ml_mmnoise_kt0_dbm_hz(), -173.975, 0.0005);
    ck_assert_double_eq_tol(ml_mmnoise_kt0_dbm_hz() + 10 * log10(9000.0), -134.43, 0.005);
    /* A capture calibrated at -10 dBm full scale with a density of -110 dBFS/Hz: -120 dBm/Hz,
     * Fa = -120 + 173.975 = 53.975 dB. At 1 MHz the nearest median is quiet rural (53.6,
     * +0.375 dB) rather than galactic (52.0). At 1.8 MHz a density 10 dB higher (Fa 63.975) lies
     * between rural (60.13: +3.845) and residential (65.43: -1.455): residential is nearer. */
    ml_mmnoise_result r;
    ck_assert_int_eq(ml_mmnoise_assess(-110.0, -10.0, 1e6, &r), ML_OK);
    ck_assert_double_eq_tol(r.noise_dbm_hz, -120.0, 1e-12);
    ck_assert_double_eq_tol(r.fa_db, 53.975, 0.0005);
    ck_assert_int_eq(r.nearest, ML_MMNOISE_QUIET_RURAL);
    ck_assert_double_eq_tol(r.distance_db, 0.375, 0.0005);
    ck_assert_str_eq(ml_mmnoise_env_name(r.nearest), "quiet-rural");
    ck_assert_int_eq(ml_mmnoise_assess(-100.0, -10.0, 1.8e6, &r), ML_OK);
    ck_assert_int_eq(r.nearest, ML_MMNOISE_RESIDENTIAL);
    ck_assert_double_eq_tol(r.distance_db, 63.975 - 65.43, 0.006);
    ck_assert_double_eq_tol(r.fam_db[ML_MMNOISE_RURAL], 60.13, 0.006);
    /* noisier than a city: nearest city, positive distance */
    ck_assert_int_eq(ml_mmnoise_assess(-60.0, -10.0, 3.6e6, &r), ML_OK);
    ck_assert_int_eq(r.nearest, ML_MMNOISE_CITY);
    ck_assert_double_eq_tol(r.distance_db, 103.975 - 61.39, 0.006);
}
END_TEST

START_TEST(bad_input_rejected)
{
    ml_mmnoise_result r = {.fa_db = 1.5};
    ck_assert_int_eq(ml_mmnoise_assess(-110.0, -10.0, 0.2e6, &r), ML_EINVAL); /* below 0.3 MHz */
    ck_assert_int_eq(ml_mmnoise_assess(-110.0, -10.0, 31e6, &r), ML_EINVAL);
    ck_assert_int_eq(ml_mmnoise_assess(NAN, -10.0, 1e6, &r), ML_EINVAL);
    ck_assert_int_eq(ml_mmnoise_assess(-110.0, INFINITY, 1e6, &r), ML_EINVAL);
    ck_assert_int_eq(ml_mmnoise_assess(-110.0, -10.0, NAN, &r), ML_EINVAL);
    ck_assert_int_eq(ml_mmnoise_assess(-110.0, -10.0, 1e6, NULL), ML_EINVAL);
    ck_assert_double_eq(r.fa_db, 1.5); /* left alone */
    ck_assert(isnan(ml_mmnoise_fam_db(ML_MMNOISE_COUNT, 1e6)));
    ck_assert(isnan(ml_mmnoise_fam_db(ML_MMNOISE_CITY, 100e6)));
    ck_assert_str_eq(ml_mmnoise_env_name(ML_MMNOISE_COUNT), "unknown");
}
END_TEST

static Suite *mmnoise_suite(void)
{
    Suite *s = suite_create("dsp_mmnoise");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, check_values);
    tcase_add_test(tc, kt0_and_fa);
    tcase_add_test(tc, bad_input_rejected);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(mmnoise_suite());
}
