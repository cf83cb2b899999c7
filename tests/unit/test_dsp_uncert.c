/* Unit tests for dsp/uncert: running mean and variance, Student's t quantile, the 95 % interval.
 * SPDX-License-Identifier: MIT
 *
 * References: t quantiles computed independently with scipy.stats.t.ppf(0.975, df) (scipy 1.10,
 * Debian 12), printed to 10 digits; [gum:2008] table G.2 lists the same values to two decimals.
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>

#include "dsp/uncert.h"

START_TEST(t975_table_and_expansion)
{
    /* scipy.stats.t.ppf(0.975, df); 1e-4: the table has four decimals */
    ck_assert_double_eq_tol(ml_t975(1), 12.7062047364, 1e-4);
    ck_assert_double_eq_tol(ml_t975(2), 4.3026527299, 1e-4);
    ck_assert_double_eq_tol(ml_t975(5), 2.5705818366, 1e-4);
    ck_assert_double_eq_tol(ml_t975(10), 2.2281388520, 1e-4);
    ck_assert_double_eq_tol(ml_t975(30), 2.0422724563, 1e-4);
    /* beyond the table: the expansion in 1/df (dsp/uncert.c) is within 1e-4 */
    ck_assert_double_eq_tol(ml_t975(31), 2.0395134464, 1e-4);
    ck_assert_double_eq_tol(ml_t975(40), 2.0210753830, 1e-4);
    ck_assert_double_eq_tol(ml_t975(100), 1.9839715184, 1e-4);
    ck_assert_double_eq_tol(ml_t975(1000), 1.9623390808, 1e-4);
    ck_assert(isnan(ml_t975(0)));
}
END_TEST

START_TEST(running_matches_two_pass)
{
    /* analytic: mean and sample variance of 1e9 + {4, 7, 13, 16} (a large offset tests the
     * cancellation [welford:1962] avoids): mean 1e9 + 10, deviations -6 -3 3 6, m2 = 90,
     * variance 90 / 3 = 30 */
    ml_running r;
    ml_running_reset(&r);
    const double x[] = {4, 7, 13, 16};
    for (int i = 0; i < 4; i++)
        ml_running_push(&r, 1e9 + x[i]);
    ml_running_push(&r, NAN); /* ignored */
    ml_running_push(&r, INFINITY);
    ck_assert_uint_eq(r.n, 4);
    ck_assert_double_eq_tol(r.mean, 1e9 + 10, 1e-6);
    ck_assert_double_eq_tol(ml_running_std(&r), sqrt(30.0), 1e-9);
    /* u = t(0.975, 3) s / sqrt(4) = 3.1824 * sqrt(30) / 2 = 8.7152 (scipy t.ppf(0.975, 3) = 3.18245) */
    ck_assert_double_eq_tol(ml_running_u95(&r), 3.1824463053 * sqrt(30.0) / 2, 1e-3);
}
END_TEST

START_TEST(too_few_estimates)
{
    ml_running r;
    ml_running_reset(&r);
    ck_assert(isnan(ml_running_std(&r)));
    ml_running_push(&r, 1.0);
    ml_running_push(&r, 2.0);
    ck_assert_double_eq_tol(ml_running_std(&r), sqrt(0.5), 1e-12);
    ck_assert(isnan(ml_running_u95(&r))); /* dsp/uncert.h: at least three estimates */
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_uncert");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, t975_table_and_expansion);
    tcase_add_test(tc, running_matches_two_pass);
    tcase_add_test(tc, too_few_estimates);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
