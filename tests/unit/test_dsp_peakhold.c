/* Unit tests for dsp/peakhold: peak hold with a timed linear release.
 * SPDX-License-Identifier: MIT
 *
 * Every expected value follows from the definition in dsp/peakhold.h,
 *     h(t) = max(x(t), peak - decay * max(0, t - tp - hold)),
 * with the numbers worked out beside each check. Tolerances of 1e-9 cover the rounding of sums
 * of decimal time steps (0.1 is not exact in binary; 100 additions err by far less than 1e-12 s,
 * times a decay of 20 per second).
 */
#include <check.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/peakhold.h"

#define TOL 1e-9

static ml_peakhold *make(double hold_s, double decay)
{
    ml_peakhold_config c = {.hold_s = hold_s, .decay_per_s = decay};
    ml_peakhold *q = NULL;
    ck_assert_int_eq(ml_peakhold_create(&c, &q), ML_OK);
    ck_assert_ptr_nonnull(q);
    return q;
}

/* n steps of dt with the constant reading x */
static void steps(ml_peakhold *q, size_t n, double dt, double x)
{
    for (size_t i = 0; i < n; i++)
        ck_assert_int_eq(ml_peakhold_push(q, dt, x), ML_OK);
}

START_TEST(config_rejection)
{
    ml_peakhold *q = (ml_peakhold *)1;
    ml_peakhold_config bad[] = {{-1, 20}, {2, 0}, {2, -5}, {NAN, 20}, {2, NAN}, {INFINITY, 20}, {2, INFINITY}};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        ck_assert_int_eq(ml_peakhold_create(&bad[i], &q), ML_EINVAL);
        ck_assert_ptr_null(q);
    }
    ck_assert_int_eq(ml_peakhold_create(NULL, &q), ML_EINVAL);
    ml_peakhold_config d = ml_peakhold_config_default();
    ck_assert_double_eq(d.hold_s, 2.0);       /* README: hold 2 s ...          */
    ck_assert_double_eq(d.decay_per_s, 20.0); /* ... then 20 units per second  */
    q = make(0, 1); /* a zero hold is allowed: the release starts at once */
    ck_assert_int_eq(ml_peakhold_push(q, -0.1, 1), ML_EINVAL);
    ck_assert_int_eq(ml_peakhold_push(q, NAN, 1), ML_EINVAL);
    ck_assert_int_eq(ml_peakhold_push(q, INFINITY, 1), ML_EINVAL);
    ck_assert_int_eq(ml_peakhold_push(NULL, 0.1, 1), ML_EINVAL);
    ck_assert(isnan(ml_peakhold_get_value(NULL)));
    ml_peakhold_destroy(q);
    ml_peakhold_destroy(NULL);
}
END_TEST

START_TEST(follows_rising_readings)
{
    ml_peakhold *q = make(2, 20);
    ck_assert(isnan(ml_peakhold_get_value(q))); /* nothing read yet */
    ck_assert_int_eq(ml_peakhold_push(q, 0.1, NAN), ML_OK);
    ck_assert(isnan(ml_peakhold_get_value(q))); /* a NaN reading is no reading */
    const double x[] = {10, 50, 50, 79.5, 80};
    for (size_t i = 0; i < 5; i++) {
        ck_assert_int_eq(ml_peakhold_push(q, 0.1, x[i]), ML_OK);
        ck_assert_double_eq(ml_peakhold_get_value(q), x[i]); /* x >= h: h = x at once */
        ck_assert(ml_peakhold_holding(q));
    }
    ml_peakhold_destroy(q);
}
END_TEST

START_TEST(holds_then_decays_linearly)
{
    /* peak 80 at t = 0, then readings of 10 every 0.1 s; hold 2 s, decay 20 per second */
    ml_peakhold *q = make(2, 20);
    ck_assert_int_eq(ml_peakhold_push(q, 0, 80), ML_OK);
    steps(q, 20, 0.1, 10); /* t = 2.0 s: the end of the hold, h = 80 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 80, TOL);
    steps(q, 5, 0.1, 10); /* t = 2.5 s: 80 - 20 * 0.5 = 70 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 70, TOL);
    ck_assert(!ml_peakhold_holding(q));
    steps(q, 10, 0.1, 10); /* t = 3.5 s: 80 - 20 * 1.5 = 50 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 50, TOL);
    /* the release reaches the reading 10 at t = 2 + 70 / 20 = 5.5 s; then h = x */
    steps(q, 25, 0.1, 10); /* t = 6.0 s */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 10, TOL);
    ml_peakhold_destroy(q);
}
END_TEST

START_TEST(floor_at_reading_and_new_hold)
{
    /* peak 80 at 0; reading 40 from then on. Release from t = 2 s reaches 40 at 2 + 40 / 20 = 4 s.
     * From there the reading 40 is itself the held peak (x >= h), so when the reading drops to 0
     * at t = 5 s, h stays 40 until the reading's last peak + hold: it was renewed every step up to
     * t = 5.0 - 0.1 = 4.9 s (the last reading of 40), so h = 40 until 6.9 s, then falls. */
    ml_peakhold *q = make(2, 20);
    ck_assert_int_eq(ml_peakhold_push(q, 0, 80), ML_OK);
    steps(q, 30, 0.1, 40); /* t = 3.0 s: 80 - 20 = 60 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 60, TOL);
    steps(q, 19, 0.1, 40); /* t = 4.9 s: the release went below 40 at 4 s: h = 40 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 40, TOL);
    steps(q, 20, 0.1, 0); /* t = 6.9 s: 2.0 s after the last reading of 40 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 40, TOL);
    steps(q, 10, 0.1, 0); /* t = 7.9 s: 40 - 20 * 1.0 = 20 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 20, TOL);
    ml_peakhold_destroy(q);
}
END_TEST

START_TEST(step_invariance)
{
    /* The same constant reading over the same time gives the same h however time is split. */
    const double dt[] = {0.001, 0.1, 0.4, 1.6, 3.2}; /* each divides 3.2 s */
    double want = NAN;
    for (size_t k = 0; k < 5; k++) {
        ml_peakhold *q = make(2, 20);
        ck_assert_int_eq(ml_peakhold_push(q, 0, 90), ML_OK);
        const size_t n = (size_t)llround(3.2 / dt[k]);
        steps(q, n, dt[k], 5); /* t = 3.2 s: 90 - 20 * 1.2 = 66 */
        ck_assert_double_eq_tol(ml_peakhold_get_value(q), 66, 1e-6); /* 3200 steps of 0.001 */
        if (k == 0)
            want = ml_peakhold_get_value(q);
        ck_assert_double_eq_tol(ml_peakhold_get_value(q), want, 1e-6);
        ml_peakhold_destroy(q);
    }
}
END_TEST

START_TEST(nan_readings_advance_time)
{
    ml_peakhold *q = make(1, 10);
    ck_assert_int_eq(ml_peakhold_push(q, 0, 50), ML_OK);
    steps(q, 15, 0.1, NAN); /* t = 1.5 s, no readings (none holds it up): 50 - 10 * 0.5 = 45 */
    ck_assert_double_eq_tol(ml_peakhold_get_value(q), 45, TOL);
    ml_peakhold_destroy(q);
}
END_TEST

START_TEST(reset_forgets)
{
    ml_peakhold *q = make(2, 20);
    ck_assert_int_eq(ml_peakhold_push(q, 0, 120), ML_OK);
    ml_peakhold_reset(q);
    ck_assert(isnan(ml_peakhold_get_value(q)));
    ck_assert(!ml_peakhold_holding(q));
    ck_assert_int_eq(ml_peakhold_push(q, 0.1, 30), ML_OK); /* held as a first reading */
    ck_assert_double_eq(ml_peakhold_get_value(q), 30);
    ml_peakhold_reset(NULL);
    ml_peakhold_destroy(q);
}
END_TEST

static Suite *peakhold_suite(void)
{
    Suite *s = suite_create("dsp_peakhold");
    TCase *tc = tcase_create("peakhold");
    tcase_add_test(tc, config_rejection);
    tcase_add_test(tc, follows_rising_readings);
    tcase_add_test(tc, holds_then_decays_linearly);
    tcase_add_test(tc, floor_at_reading_and_new_hold);
    tcase_add_test(tc, step_invariance);
    tcase_add_test(tc, nan_readings_advance_time);
    tcase_add_test(tc, reset_forgets);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(peakhold_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
