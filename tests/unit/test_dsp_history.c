/* Unit tests for dsp/history: bounded column history with pairwise merging.
 * SPDX-License-Identifier: MIT
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <stdlib.h>

#include "dsp/history.h"

static ml_history *make(size_t rows, size_t cols)
{
    ml_history_config c = {.nrows = rows, .max_cols = cols};
    ml_history *q = NULL;
    ck_assert_int_eq(ml_history_create(&c, &q), ML_OK);
    return q;
}

START_TEST(keeps_everything_under_capacity)
{
    /* Analytic: 3 columns into room for 4 come back unchanged with their spans. */
    ml_history *q = make(2, 4);
    for (int i = 0; i < 3; i++) {
        const double col[2] = {i, 10.0 * i};
        ml_history_push(q, i, i + 1, col);
    }
    ck_assert_uint_eq(ml_history_get_count(q), 3);
    double t0, t1;
    const double *c = ml_history_get_column(q, 2, &t0, &t1);
    ck_assert_double_eq(c[0], 2.0);
    ck_assert_double_eq(c[1], 20.0);
    ck_assert_double_eq(t0, 2.0);
    ck_assert_double_eq(t1, 3.0);
    ck_assert_ptr_null(ml_history_get_column(q, 3, NULL, NULL));
    ml_history_destroy(q);
}
END_TEST

START_TEST(merges_pairs_when_full)
{
    /* Analytic: values 0..9 (one per column) into 4 slots. After 4 pushes the 5th merges to
     * {0.5, 2.5} and slots gather 2 each: {0,1} {2,3} {4,5} {6,7}; the 9th merges again to
     * {0..3} {4..7} with slots of 4, then 8, 9 gather: means 1.5, 5.5, 8.5. Spans follow. */
    ml_history *q = make(1, 4);
    for (int i = 0; i < 10; i++) {
        const double v = i;
        ml_history_push(q, i, i + 1, &v);
    }
    ck_assert_uint_eq(ml_history_get_count(q), 3);
    const double want[3] = {1.5, 5.5, 8.5}, w0[3] = {0, 4, 8}, w1[3] = {4, 8, 10};
    for (size_t i = 0; i < 3; i++) {
        double t0, t1;
        const double *c = ml_history_get_column(q, i, &t0, &t1);
        ck_assert_double_eq_tol(c[0], want[i], 1e-12);
        ck_assert_double_eq(t0, w0[i]);
        ck_assert_double_eq(t1, w1[i]);
    }
    ml_history_reset(q);
    ck_assert_uint_eq(ml_history_get_count(q), 0);
    const double v = 7;
    ml_history_push(q, 0, 1, &v);
    ck_assert_double_eq(ml_history_get_column(q, 0, NULL, NULL)[0], 7.0); /* span restarts at 1 */
    ml_history_destroy(q);
}
END_TEST

START_TEST(config_rejected)
{
    ml_history *q = (ml_history *)1;
    const ml_history_config bad[] = {{0, 4}, {5000, 4}, {2, 3}, {2, 0}, {2, 131072}};
    for (size_t i = 0; i < 5; i++) {
        ck_assert_int_eq(ml_history_create(&bad[i], &q), ML_EINVAL);
        ck_assert_ptr_null(q);
    }
    ck_assert_int_eq(ml_history_push(NULL, 0, 1, NULL), ML_EINVAL);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_history");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, keeps_everything_under_capacity);
    tcase_add_test(tc, merges_pairs_when_full);
    tcase_add_test(tc, config_rejected);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
