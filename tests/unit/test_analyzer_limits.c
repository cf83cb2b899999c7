/* Unit tests for the [response] section of limits profiles (analyzer/limits.h): reading it with the
 * profile's strictness and checking a sweep's points against it.
 * SPDX-License-Identifier: MIT
 *
 * The expected verdicts follow from the section's definition (analyzer/limits.h) applied by hand to
 * the points below; the profile text is the only input.
 */
#define _POSIX_C_SOURCE 200809L
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/limits.h"

/* Loads text as a profile; returns the status, the error in err. */
static ml_status load(const char *text, ml_limits *l, char *err, size_t len)
{
    char path[] = "/tmp/ml-limits-XXXXXX";
    const int fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    ck_assert_int_eq(write(fd, text, strlen(text)), (ssize_t)strlen(text));
    close(fd);
    const ml_status st = ml_limits_load(path, l, err, len);
    unlink(path);
    return st;
}

/* Points at f[n] with levels re the reference rel[n] and THD thd[n] (NAN: not measured). */
static void points(ml_report *r, ml_report_series *s, const double *f, const double *rel, const double *thd,
                   size_t n)
{
    memset(r, 0, sizeof *r);
    ck_assert_int_eq(ml_report_series_alloc(s, "sweep.points", "sweep points", n), ML_OK);
    r->series = s;
    for (size_t i = 0; i < n; i++) {
        ml_report_point *p = ml_report_series_add(s, (double)i, 1);
        ml_report_point_add(p, "frequency_hz", "Hz", 3, f[i]);
        ml_report_point_add(p, "relative_db", "dB", 3, rel[i]);
        ml_report_point_add(p, "thd_pct", "%", 4, thd[i]);
    }
}

START_TEST(response_checks_per_point)
{
    static ml_limits l;
    char err[256] = "";
    ck_assert_int_eq(load("[response]\nrange_hz = 100 : 5000\nwindow_db = 2 ; +-2 dB\n"
                          "thd_max_pct = 50:100:7.5, 100:5000:5\n",
                          &l, err, sizeof err),
                     ML_OK);
    ck_assert(l.has_response && l.response.has_range && l.response.has_window);
    ck_assert_double_eq(l.response.window_min_db, -2);
    ck_assert_double_eq(l.response.window_max_db, 2);
    ck_assert_uint_eq(l.response.nbands, 2);
    /* the ceiling of a shared edge is the lower one; outside every band none */
    ck_assert_double_eq(ml_limits_response_thd_max(&l.response, 100), 5);
    ck_assert_double_eq(ml_limits_response_thd_max(&l.response, 60), 7.5);
    ck_assert(isnan(ml_limits_response_thd_max(&l.response, 7500)));
    /* an edge takes in points within 0.1 % of it, not further */
    ck_assert_double_eq(ml_limits_response_thd_max(&l.response, 49.96), 7.5);
    ck_assert(isnan(ml_limits_response_thd_max(&l.response, 49.9)));
    ck_assert_double_eq(ml_limits_response_thd_max(&l.response, 5004), 5);
    ck_assert(isnan(ml_limits_response_thd_max(&l.response, 5006)));
    static ml_report r;
    ml_report_series s;
    const double f[] = {50, 100, 1000, 5000, 7500}, rel[] = {-6, -1.5, 0, -2.5, -10};
    const double thd[] = {6, 5.5, 1, NAN, 9};
    points(&r, &s, f, rel, thd, 5);
    ml_limits_apply(&l, &r);
    /* 50 Hz: outside range_hz, THD 6 <= 7.5: pass (one check) */
    ck_assert_uint_eq(s.points[0].nchecks, 1);
    ck_assert_str_eq(ml_report_point_verdict(&s.points[0]), "pass");
    /* 100 Hz: window ok, THD 5.5 > 5 (the lower ceiling of the shared edge): fail */
    ck_assert_uint_eq(s.points[1].nchecks, 2);
    ck_assert(s.points[1].checks[0].pass);
    ck_assert(!s.points[1].checks[1].pass);
    ck_assert_double_eq_tol(s.points[1].checks[1].margin, -0.5, 1e-12);
    /* 1 kHz: pass both */
    ck_assert_str_eq(ml_report_point_verdict(&s.points[2]), "pass");
    /* 5 kHz: -2.5 dB outside the window, THD not measured: both fail, the second invalid */
    ck_assert_uint_eq(s.points[3].nchecks, 2);
    ck_assert(!s.points[3].checks[0].pass && s.points[3].checks[0].valid);
    ck_assert(!s.points[3].checks[1].pass && !s.points[3].checks[1].valid);
    /* 7.5 kHz: outside the range and every band: no check */
    ck_assert_uint_eq(s.points[4].nchecks, 0);
    ck_assert_ptr_null(ml_report_point_verdict(&s.points[4]));
    ck_assert_str_eq(ml_report_verdict(&r), "fail");
    /* applying again replaces the point checks */
    ml_limits_apply(&l, &r);
    ck_assert_uint_eq(s.points[1].nchecks, 2);
    ml_report_series_free(&s);
}
END_TEST

START_TEST(response_windows_and_strictness)
{
    static ml_limits l;
    char err[256];
    ck_assert_int_eq(load("[response]\nwindow_db = -3:1\n", &l, err, sizeof err), ML_OK);
    ck_assert_double_eq(l.response.window_min_db, -3);
    ck_assert_double_eq(l.response.window_max_db, 1);
    ck_assert(!l.response.has_range);
    /* a profile of [response] alone has limits; other reports (no series) get no checks from it */
    static ml_report r;
    memset(&r, 0, sizeof r);
    ml_limits_apply(&l, &r);
    ck_assert_uint_eq(r.nchecks, 0);
    static const struct {
        const char *text, *word;
    } bad[] = {
        {"[response]\nwindow_db = 1\nwindow_db = 2\n", "twice"},
        {"[response]\nthd_max_pct = 20:200:1\nthd_max_pct = 20:200:2\n", "twice"},
        {"[response]\nrange_hz = 10:20\nrange_hz = 10:30\nwindow_db = 1\n", "twice"},
        {"[response]\nwindow_db = 0\n", "window"},
        {"[response]\nwindow_db = 1001\n", "window"},
        {"[response]\nwindow_db = 1:2\n", "MIN:MAX"},
        {"[response]\nwindow_db = -2:-1\n", "MIN:MAX"},
        {"[response]\nwindow_db = nan\n", "window"},
        {"[response]\nrange_hz = 200:100\nwindow_db = 1\n", "LO:HI"},
        {"[response]\nrange_hz = 0:100\nwindow_db = 1\n", "LO:HI"},
        {"[response]\nrange_hz = 1:2e9\nwindow_db = 1\n", "LO:HI"},
        {"[response]\nthd_max_pct = 20:200\n", "LO:HI:PCT"},
        {"[response]\nthd_max_pct = 20:200:0\n", "LO:HI:PCT"},
        {"[response]\nthd_max_pct = 20:200:1001\n", "LO:HI:PCT"},
        {"[response]\nthd_max_pct = 100:200:1, 150:300:1\n", "overlaps"},
        {"[response]\nthd_max_pct = 100:200:1, 50:80:1\n", "overlaps"},
        {"[response]\nrange_hz = 100:200\n", "needs window_db"},
        {"[response]\nflat_db = 1\n", "unknown key"},
    };
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        err[0] = '\0';
        ck_assert_msg(load(bad[i].text, &l, err, sizeof err) == ML_EFORMAT, "accepted: %s", bad[i].text);
        ck_assert_msg(strstr(err, bad[i].word) != NULL, "%s -> '%s'", bad[i].text, err);
    }
    /* 16 bands, not 17 */
    char text[1024] = "[response]\nthd_max_pct = ";
    for (int i = 0; i < 17; i++)
        snprintf(text + strlen(text), sizeof text - strlen(text), "%s%d:%d:1", i ? ", " : "", 10 * (i + 1),
                 10 * (i + 1) + 5);
    strcat(text, "\n");
    ck_assert_int_eq(load(text, &l, err, sizeof err), ML_EFORMAT);
    ck_assert_ptr_nonnull(strstr(err, "16 bands"));
}
END_TEST

int main(void)
{
    Suite *s = suite_create("analyzer_limits");
    TCase *tc = tcase_create("response");
    tcase_add_test(tc, response_checks_per_point);
    tcase_add_test(tc, response_windows_and_strictness);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
