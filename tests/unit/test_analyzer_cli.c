/* Unit tests for analyzer/cli: the UTC date reader and the one-line, printable error line.
 * SPDX-License-Identifier: MIT
 *
 * Calendar rules: the Gregorian calendar of ISO 8601 (a leap year is divisible by 4, except
 * centuries not divisible by 400). Expected epoch seconds are an independent computation with
 * Python's calendar.timegm(datetime.fromisoformat(...).timetuple()):
 *   2024-03-01T00:00:00 -> 1709251200, 2000-02-29T12:34:56 -> 951827696,
 *   2100-03-01T00:00:00 -> 4107542400, 9999-12-31T23:59:59 -> 253402300799.
 */
#define _GNU_SOURCE
#include <check.h>
#include <stdio.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

#include "analyzer/cli.h"
#include "tests/unit/ml_check.h"

START_TEST(utc_real_dates)
{
    double t = -1;
    ck_assert(ml_cli_utc("1970-01-01T00:00:00Z", &t));
    ck_assert_double_eq(t, 0.0);
    ck_assert(ml_cli_utc("2024-03-01T00:00:00Z", &t));
    ck_assert_double_eq(t, 1709251200.0);
    ck_assert(ml_cli_utc("2000-02-29T12:34:56Z", &t)); /* 2000 is divisible by 400: a leap year */
    ck_assert_double_eq(t, 951827696.0);
    ck_assert(ml_cli_utc("2100-03-01T00:00:00Z", &t));
    ck_assert_double_eq(t, 4107542400.0);
    ck_assert(ml_cli_utc("9999-12-31T23:59:59Z", &t));
    ck_assert_double_eq(t, 253402300799.0);
    ck_assert(ml_cli_utc("2024-02-29T00:00:00.25Z", &t));
    ck_assert_double_eq_tol(t, 1709251200.0 - 86400.0 + 0.25, 1e-6);
}
END_TEST

START_TEST(utc_refuses_what_is_not_a_date)
{
    static const char *bad[] = {
        "2024-02-30T00:00:00Z", /* no such day */
        "2023-02-29T00:00:00Z", /* 2023 is not a leap year */
        "2100-02-29T00:00:00Z", /* a century not divisible by 400 */
        "2024-04-31T00:00:00Z", "2024-00-10T00:00:00Z", "2024-13-01T00:00:00Z", "2024-01-00T00:00:00Z",
        "2024-01-01T24:00:00Z", "2024-01-01T23:60:00Z",
        "2024-06-30T23:59:60Z", /* POSIX time has no leap second */
        "1969-12-31T23:59:59Z", "2024-01-01T00:00:00", "2024-01-01T00:00:00Zx", "2024-01-01 00:00:00Z",
        "+024-01-01T00:00:00Z", " 2024-01-01T00:00:00Z", "2024-1-01T00:00:00Z", "2024-01-01T00:00:00.Z",
        "2024-01-01T00:00:00.1234567890Z", "",
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double t = 0;
        ck_assert_msg(!ml_cli_utc(bad[i], &t), "'%s' accepted", bad[i]);
    }
}
END_TEST

/* stderr of one ml_cli_error call */
static void error_line(char *buf, size_t len, const char *name)
{
    fflush(stderr);
    int fd = memfd_create("stderr", 0), saved = dup(STDERR_FILENO);
    ck_assert(fd >= 0 && saved >= 0);
    ck_assert_int_eq(dup2(fd, STDERR_FILENO), STDERR_FILENO);
    ck_assert_int_eq(ml_cli_error("%s: not a readable audio file", name), ML_EXIT_USAGE);
    fflush(stderr);
    dup2(saved, STDERR_FILENO);
    close(saved);
    const ssize_t n = pread(fd, buf, len - 1, 0);
    buf[n > 0 ? n : 0] = '\0';
    close(fd);
}

START_TEST(error_lines_are_printable)
{
    char buf[4096];
    /* a file name carrying a terminal-title escape and a newline */
    error_line(buf, sizeof buf, "x\x1b]0;pwned\x07\nmodlens: fake.wav");
    ck_assert_str_eq(buf, "modlens: x\\x1b]0;pwned\\x07\\nmodlens: fake.wav: not a readable audio file\n");
    /* a message longer than the first buffer is neither cut nor lost */
    char name[1500];
    memset(name, 'n', sizeof name - 1);
    name[sizeof name - 1] = '\0';
    error_line(buf, sizeof buf, name);
    ck_assert_uint_eq(strlen(buf), strlen("modlens: ") + 1499 + strlen(": not a readable audio file\n"));
}
END_TEST

int main(void)
{
    Suite *s = suite_create("analyzer_cli");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, utc_real_dates);
    tcase_add_test(tc, utc_refuses_what_is_not_a_date);
    tcase_add_test(tc, error_lines_are_printable);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
