/* Unit tests for io/ticks: exact tick lists and labels for a set of ranges.
 * SPDX-License-Identifier: MIT
 *
 * The expected lists follow from the rules in io/ticks.h (worked out by hand beside each case);
 * the ranges include those of the level-history plot that showed ticks at 374, 449, 524 s and
 * 24, 129, 730 Hz. Pure functions: no object, so no block-invariance or reset test applies.
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdarg.h>
#include <string.h>

#include "io/ticks.h"

/* out must hold exactly the n (value, label) pairs that follow. */
static void expect(const ml_ticks *t, size_t n, ...)
{
    va_list ap;
    va_start(ap, n);
    ck_assert_uint_eq(t->n, n);
    for (size_t i = 0; i < n; i++) {
        const double v = va_arg(ap, double);
        const char *l = va_arg(ap, const char *);
        ck_assert_double_eq_tol(t->tick[i].value, v, 1e-12 * fmax(1.0, fabs(v)));
        ck_assert_str_eq(t->tick[i].label, l);
    }
    va_end(ap);
}

START_TEST(linear_ticks)
{
    ml_ticks t;
    /* 600 / 8 = 75: steps 10, 20, 50 give 61, 31, 13 ticks; 100 gives 7 */
    ck_assert_int_eq(ml_ticks_linear(0, 600, 8, &t), ML_OK);
    expect(&t, 7, 0.0, "0", 100.0, "100", 200.0, "200", 300.0, "300", 400.0, "400", 500.0, "500", 600.0, "600");
    ck_assert_double_eq(t.step, 100.0);
    /* -3.7 .. 12.2, at most 6: step 2 gives -2 .. 12 (8 ticks), step 5 gives 0, 5, 10 */
    ck_assert_int_eq(ml_ticks_linear(-3.7, 12.2, 6, &t), ML_OK);
    expect(&t, 3, 0.0, "0", 5.0, "5", 10.0, "10");
    /* -3.7 .. 12.2, at most 9: step 2 -> -2, 0, ..., 12 */
    ck_assert_int_eq(ml_ticks_linear(-3.7, 12.2, 9, &t), ML_OK);
    expect(&t, 8, -2.0, "-2", 0.0, "0", 2.0, "2", 4.0, "4", 6.0, "6", 8.0, "8", 10.0, "10", 12.0, "12");
    /* 0.0012 .. 0.0093, at most 5: step 0.001 gives 8, 0.002 gives 0.002 .. 0.008 */
    ck_assert_int_eq(ml_ticks_linear(0.0012, 0.0093, 5, &t), ML_OK);
    expect(&t, 4, 0.002, "0.002", 0.004, "0.004", 0.006, "0.006", 0.008, "0.008");
    /* dB axis -97.3 .. -12.1, at most 6: step 20 -> -80, -60, -40, -20 */
    ck_assert_int_eq(ml_ticks_linear(-97.3, -12.1, 6, &t), ML_OK);
    expect(&t, 4, -80.0, "-80", -60.0, "-60", -40.0, "-40", -20.0, "-20");
    /* 0.1 steps come out exact: -0.3 .. 0.3 at most 7 */
    ck_assert_int_eq(ml_ticks_linear(-0.3, 0.3, 7, &t), ML_OK);
    expect(&t, 7, -0.3, "-0.3", -0.2, "-0.2", -0.1, "-0.1", 0.0, "0.0", 0.1, "0.1", 0.2, "0.2", 0.3, "0.3");
}
END_TEST

START_TEST(time_ticks)
{
    ml_ticks t;
    /* 0 .. 600 s, at most 8: 60 s gives 11, 120 s gives 6: m:ss */
    ck_assert_int_eq(ml_ticks_time(0, 600, 8, &t), ML_OK);
    expect(&t, 6, 0.0, "0:00", 120.0, "2:00", 240.0, "4:00", 360.0, "6:00", 480.0, "8:00", 600.0, "10:00");
    ck_assert_str_eq(t.unit, "m:ss");
    /* the span 374 .. 524 s, at most 8: 15 s gives 10 (375 .. 510), 20 s gives 380 .. 520: 8 */
    ck_assert_int_eq(ml_ticks_time(374, 524, 8, &t), ML_OK);
    expect(&t, 8, 380.0, "6:20", 400.0, "6:40", 420.0, "7:00", 440.0, "7:20", 460.0, "7:40", 480.0, "8:00",
           500.0, "8:20", 520.0, "8:40");
    /* 0 .. 2 h, at most 6: 20 min gives 7, 30 min gives 5: h:mm */
    ck_assert_int_eq(ml_ticks_time(0, 7200, 6, &t), ML_OK);
    expect(&t, 5, 0.0, "0:00", 1800.0, "0:30", 3600.0, "1:00", 5400.0, "1:30", 7200.0, "2:00");
    ck_assert_str_eq(t.unit, "h:mm");
    /* 0 .. 24 h, at most 8: 3 h gives 9, 6 h gives 5: whole hours */
    ck_assert_int_eq(ml_ticks_time(0, 86400, 8, &t), ML_OK);
    expect(&t, 5, 0.0, "0 h", 21600.0, "6 h", 43200.0, "12 h", 64800.0, "18 h", 86400.0, "24 h");
    ck_assert_str_eq(t.unit, "h");
    /* 0 .. 45 s, at most 5: whole seconds fit, linear 10 s: 0 .. 40 */
    ck_assert_int_eq(ml_ticks_time(0, 45, 5, &t), ML_OK);
    expect(&t, 5, 0.0, "0 s", 10.0, "10 s", 20.0, "20 s", 30.0, "30 s", 40.0, "40 s");
    /* 0 .. 2.5 s, at most 6: 0.5 s steps */
    ck_assert_int_eq(ml_ticks_time(0, 2.5, 6, &t), ML_OK);
    expect(&t, 6, 0.0, "0.0 s", 0.5, "0.5 s", 1.0, "1.0 s", 1.5, "1.5 s", 2.0, "2.0 s", 2.5, "2.5 s");
    /* 3590 .. 3720 s, at most 6: 20 s gives 3600 .. 3720 (7), 30 s gives 3600, 3630, ... 3720 (5):
     * from 1 h with sub-minute steps, h:mm:ss */
    ck_assert_int_eq(ml_ticks_time(3590, 3720, 6, &t), ML_OK);
    expect(&t, 5, 3600.0, "1:00:00", 3630.0, "1:00:30", 3660.0, "1:01:00", 3690.0, "1:01:30", 3720.0, "1:02:00");
    /* 0 .. 10 d, at most 6: 2 d gives 6 */
    ck_assert_int_eq(ml_ticks_time(0, 864000, 6, &t), ML_OK);
    expect(&t, 6, 0.0, "0 d", 172800.0, "2 d", 345600.0, "4 d", 518400.0, "6 d", 691200.0, "8 d", 864000.0, "10 d");
}
END_TEST

START_TEST(log_frequency_ticks)
{
    ml_ticks t;
    /* 24 .. 730 Hz: 50, 100, 200, 500 (4 <= 8) */
    ck_assert_int_eq(ml_ticks_log_hz(24, 730, 8, &t), ML_OK);
    expect(&t, 4, 50.0, "50", 100.0, "100", 200.0, "200", 500.0, "500");
    /* 20 Hz .. 20 kHz: 1, 2, 5 x 10^n give 10 > 8, so the decades */
    ck_assert_int_eq(ml_ticks_log_hz(20, 20000, 8, &t), ML_OK);
    expect(&t, 3, 100.0, "100", 1000.0, "1k", 10000.0, "10k");
    /* the same at most 10: all ten */
    ck_assert_int_eq(ml_ticks_log_hz(20, 20000, 10, &t), ML_OK);
    expect(&t, 10, 20.0, "20", 50.0, "50", 100.0, "100", 200.0, "200", 500.0, "500", 1000.0, "1k", 2000.0, "2k",
           5000.0, "5k", 10000.0, "10k", 20000.0, "20k");
    /* 10 Hz .. 1 MHz, at most 4: 6 decades, every 2nd (exponent even): 100, 10k, 1M */
    ck_assert_int_eq(ml_ticks_log_hz(10, 1e6, 4, &t), ML_OK);
    expect(&t, 3, 100.0, "100", 10000.0, "10k", 1e6, "1M");
    /* 120 .. 180 Hz: no 1, 2, 5 x 10^n inside: linear 10 Hz */
    ck_assert_int_eq(ml_ticks_log_hz(120, 180, 8, &t), ML_OK);
    expect(&t, 7, 120.0, "120", 130.0, "130", 140.0, "140", 150.0, "150", 160.0, "160", 170.0, "170", 180.0, "180");
    /* 1.1 .. 3.1 kHz: only 2k inside: linear 500 Hz: 1.5k, 2k, 2.5k, 3k */
    ck_assert_int_eq(ml_ticks_log_hz(1100, 3100, 5, &t), ML_OK);
    expect(&t, 4, 1500.0, "1.5k", 2000.0, "2k", 2500.0, "2.5k", 3000.0, "3k");
    /* 0.5 .. 5 Hz: 0.5, 1, 2, 5 */
    ck_assert_int_eq(ml_ticks_log_hz(0.5, 5, 8, &t), ML_OK);
    expect(&t, 4, 0.5, "0.5", 1.0, "1", 2.0, "2", 5.0, "5");
}
END_TEST

START_TEST(bad_ranges_rejected)
{
    ml_ticks t;
    ck_assert_int_eq(ml_ticks_linear(5, 5, 8, &t), ML_EINVAL);
    ck_assert_uint_eq(t.n, 0);
    ck_assert_int_eq(ml_ticks_linear(6, 5, 8, &t), ML_EINVAL);
    ck_assert_int_eq(ml_ticks_linear(0, NAN, 8, &t), ML_EINVAL);
    ck_assert_int_eq(ml_ticks_linear(0, 1, 1, &t), ML_EINVAL);
    ck_assert_int_eq(ml_ticks_linear(0, 1, ML_TICKS_MAX + 1, &t), ML_EINVAL);
    ck_assert_int_eq(ml_ticks_linear(0, 1, 8, NULL), ML_EINVAL);
    ck_assert_int_eq(ml_ticks_time(-1, 10, 8, &t), ML_EINVAL);
    ck_assert_int_eq(ml_ticks_log_hz(0, 10, 8, &t), ML_EINVAL);
    ck_assert_int_eq(ml_ticks_log_hz(1e9, 1e9 * (1 + 1e-15), 8, &t), ML_EINVAL);
}
END_TEST

static Suite *ticks_suite(void)
{
    Suite *s = suite_create("io_ticks");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, linear_ticks);
    tcase_add_test(tc, time_ticks);
    tcase_add_test(tc, log_frequency_ticks);
    tcase_add_test(tc, bad_ranges_rejected);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(ticks_suite());
}
