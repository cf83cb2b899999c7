/* Unit tests for dsp/order: selection, median and quantiles.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [hyndman:1996] R. J. Hyndman, Y. Fan, "Sample quantiles in statistical packages", The American
 *     Statistician 50(4), 1996, definition 7 = numpy.quantile's default "linear" method
 *     (docs/references.md 9). Worked by hand: for 1, 2, ..., 10, p = 0.25 gives h = 9 x 0.25 =
 *     2.25, so x(2) + 0.25 (x(3) - x(2)) = 3 + 0.25 = 3.25 (numpy.quantile(range(1, 11), 0.25)
 *     prints 3.25); p = 0.9 gives h = 8.1: 9.1.
 */
#include <check.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/order.h"
#include "ml_check.h"
#include "testsig.h"

/* 1..n shuffled by a fixed seed */
static void shuffled(double *x, size_t n, unsigned seed)
{
    ts_rng r = {seed};
    for (size_t i = 0; i < n; i++)
        x[i] = (double)(i + 1);
    for (size_t i = n - 1; i > 0; i--) {
        const size_t j = (size_t)(ts_next(&r) % (i + 1));
        const double t = x[i];
        x[i] = x[j];
        x[j] = t;
    }
}

START_TEST(select_every_rank)
{
    double x[101];
    for (size_t k = 0; k < 101; k++) {
        shuffled(x, 101, 3 + (unsigned)k);
        ck_assert_double_eq(ml_order_select(x, 101, k), (double)(k + 1));
        for (size_t i = 0; i < 101; i++) /* partitioned around rank k */
            ck_assert(i < k ? x[i] <= x[k] : i > k ? x[i] >= x[k] : 1);
    }
}
END_TEST

START_TEST(median_odd_even_and_ties)
{
    double x[10];
    shuffled(x, 9, 1);
    ck_assert_double_eq(ml_order_median(x, 9), 5.0);   /* the middle of 1..9 */
    shuffled(x, 10, 2);
    ck_assert_double_eq(ml_order_median(x, 10), 5.5);  /* (5 + 6) / 2 */
    double t[6] = {2, 2, 2, 7, 7, 7};
    ck_assert_double_eq(ml_order_median(t, 6), 4.5);
    double one = 3;
    ck_assert_double_eq(ml_order_median(&one, 1), 3.0);
    ck_assert(isnan(ml_order_median(x, 0)));
}
END_TEST

START_TEST(quantiles_definition_7)
{
    double x[10];
    shuffled(x, 10, 4);
    ck_assert_double_eq_tol(ml_order_quantile(x, 10, 0.25), 3.25, 1e-12); /* [hyndman:1996] */
    shuffled(x, 10, 5);
    ck_assert_double_eq_tol(ml_order_quantile(x, 10, 0.9), 9.1, 1e-12);
    shuffled(x, 10, 6);
    ck_assert_double_eq(ml_order_quantile(x, 10, 0.0), 1.0);
    shuffled(x, 10, 7);
    ck_assert_double_eq(ml_order_quantile(x, 10, 1.0), 10.0);
    shuffled(x, 10, 8);
    ck_assert_double_eq_tol(ml_order_quantile(x, 10, 0.5), 5.5, 1e-12); /* the median */
    ck_assert(isnan(ml_order_quantile(x, 10, 1.5)));
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_order");
    TCase *tc = tcase_create("order");
    tcase_add_test(tc, select_every_rank);
    tcase_add_test(tc, median_odd_even_and_ties);
    tcase_add_test(tc, quantiles_definition_7);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
