/* Unit tests for dsp/floor: running quantile over a sliding window.
 * SPDX-License-Identifier: MIT
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>

#include "dsp/floor.h"

static ml_floor *make(size_t window, double quantile)
{
    ml_floor_config c = ml_floor_config_default(window);
    c.quantile = quantile;
    ml_floor *q = NULL;
    ck_assert_int_eq(ml_floor_create(&c, &q), ML_OK);
    return q;
}

static void push_const(ml_floor *q, double v, size_t n)
{
    for (size_t i = 0; i < n; i++)
        ml_floor_push(q, &v, 1);
}

START_TEST(median_of_a_ramp)
{
    /* Analytic: values -99..0 dB; the median (50 of 100 values at or below) is the 50th smallest,
     * -50 dB. Tolerance 0.1 dB: the histogram's resolution step_db. */
    ml_floor *q = make(100, 0.5);
    ck_assert(isnan(ml_floor_get_level(q)));
    double v[100];
    for (int i = 0; i < 100; i++)
        v[i] = -99.0 + i;
    ml_floor_push(q, v, 100);
    ck_assert_uint_eq(ml_floor_get_count(q), 100);
    ck_assert_double_eq_tol(ml_floor_get_level(q), -50.0, 0.1);
    ml_floor_destroy(q);
}
END_TEST

START_TEST(window_slides_and_bursts_are_ignored)
{
    /* Analytic: window 1000. 1000 x -50 then 600 x -20: the window holds 400 x -50 and 600 x -20,
     * so the median is -20; after 400 more x -50 it holds 600 x -50 again: -50. A burst of 10 % of
     * the window at 0 dB leaves the median at the majority value. Tolerance: step_db. */
    ml_floor *q = make(1000, 0.5);
    push_const(q, -50, 1000);
    push_const(q, 0, 100);
    ck_assert_double_eq_tol(ml_floor_get_level(q), -50.0, 0.1);
    push_const(q, -20, 600);
    ck_assert_double_eq_tol(ml_floor_get_level(q), -20.0, 0.1);
    push_const(q, -50, 600);
    ck_assert_double_eq_tol(ml_floor_get_level(q), -50.0, 0.1);
    ck_assert_uint_eq(ml_floor_get_count(q), 1000);
    /* NaN is skipped; values beyond the range are clamped to its edges */
    const double odd[] = {NAN, -1000.0};
    ml_floor_reset(q);
    ml_floor_push(q, odd, 2);
    ck_assert_uint_eq(ml_floor_get_count(q), 1);
    ck_assert_double_eq_tol(ml_floor_get_level(q), -200.0, 0.1);
    ml_floor_destroy(q);
}
END_TEST

START_TEST(low_quantile_and_block_invariance)
{
    /* Analytic: values 1..100 with q = 0.1: the 10th smallest, 10. Pushing in blocks of 1, 7 and
     * all at once holds the same values, so the same level (exact). */
    double v[100];
    for (int i = 0; i < 100; i++)
        v[i] = 1.0 + i;
    const size_t blocks[] = {1, 7, 100};
    for (size_t b = 0; b < 3; b++) {
        ml_floor *q = make(100, 0.1);
        for (size_t i = 0; i < 100; i += blocks[b])
            ml_floor_push(q, v + i, i + blocks[b] <= 100 ? blocks[b] : 100 - i);
        ck_assert_double_eq_tol(ml_floor_get_level(q), 10.0, 0.1);
        ml_floor_reset(q);
        ck_assert_uint_eq(ml_floor_get_count(q), 0);
        ck_assert(isnan(ml_floor_get_level(q)));
        ml_floor_destroy(q);
    }
}
END_TEST

START_TEST(config_rejected)
{
    ml_floor *q = (ml_floor *)1;
    ml_floor_config c = ml_floor_config_default(0);
    ck_assert_int_eq(ml_floor_create(&c, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    c = ml_floor_config_default(10);
    c.quantile = 1.0;
    ck_assert_int_eq(ml_floor_create(&c, &q), ML_EINVAL);
    c = ml_floor_config_default(10);
    c.step_db = 0;
    ck_assert_int_eq(ml_floor_create(&c, &q), ML_EINVAL);
    c = ml_floor_config_default(10);
    c.hi_db = c.lo_db;
    ck_assert_int_eq(ml_floor_create(&c, &q), ML_EINVAL);
    c = ml_floor_config_default(10);
    c.step_db = 1e-6;
    ck_assert_int_eq(ml_floor_create(&c, &q), ML_EINVAL);
    ck_assert_int_eq(ml_floor_push(NULL, NULL, 0), ML_EINVAL);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_floor");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, median_of_a_ramp);
    tcase_add_test(tc, window_slides_and_bursts_are_ignored);
    tcase_add_test(tc, low_quantile_and_block_invariance);
    tcase_add_test(tc, config_rejected);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
