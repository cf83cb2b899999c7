/* Unit tests for io/logfile: header, last complete line, partial-line cut, foreign files.
 * SPDX-License-Identifier: MIT
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "io/logfile.h"

static char dir[64], path[128];

static void setup(void)
{
    snprintf(dir, sizeof dir, "/tmp/modlens-logfile-XXXXXX");
    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(path, sizeof path, "%s/x.csv", dir);
}

static void teardown(void)
{
    unlink(path);
    rmdir(dir);
}

static const char *contents(void)
{
    static char b[4096];
    FILE *f = fopen(path, "rb");
    ck_assert_ptr_nonnull(f);
    size_t n = fread(b, 1, sizeof b - 1, f);
    b[n] = '\0';
    fclose(f);
    return b;
}

static ml_logfile *open_ok(char *last, size_t n)
{
    ml_logfile *f = NULL;
    char err[256];
    ck_assert_int_eq(ml_logfile_open(path, "a,b", &f, last, n, err, sizeof err), ML_OK);
    return f;
}

START_TEST(new_file_gets_header_and_lines)
{
    char last[64];
    ml_logfile *f = open_ok(last, sizeof last);
    ck_assert_str_eq(last, "");
    ck_assert_int_eq(ml_logfile_write_line(f, "1,2"), ML_OK);
    ck_assert_int_eq(ml_logfile_write_line(f, "3,4"), ML_OK);
    ck_assert_str_eq(ml_logfile_path(f), path);
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), "a,b\n1,2\n3,4\n");
    ck_assert(ml_logfile_has_rows(path));
}
END_TEST

START_TEST(reopen_returns_last_line_and_cuts_partial)
{
    char last[64];
    ml_logfile *f = open_ok(last, sizeof last);
    ml_logfile_write_line(f, "1,2");
    ml_logfile_write_line(f, "3,4");
    ml_logfile_close(f);
    FILE *raw = fopen(path, "ab");
    fputs("5,", raw); /* a line cut short by a kill */
    fclose(raw);
    f = open_ok(last, sizeof last);
    ck_assert_str_eq(last, "3,4");
    ck_assert_str_eq(contents(), "a,b\n1,2\n3,4\n");
    ml_logfile_write_line(f, "5,6");
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), "a,b\n1,2\n3,4\n5,6\n"); /* one header, nothing repeated */
    /* a short buffer gets the line's start */
    f = open_ok(last, 2);
    ck_assert_str_eq(last, "5");
    ml_logfile_close(f);
    /* the largest number of a column over every complete line, whatever their order */
    double mx = 0;
    ck_assert_int_eq(ml_logfile_max_field(path, 0, &mx), ML_OK);
    ck_assert_double_eq(mx, 5.0);
    ck_assert_int_eq(ml_logfile_max_field(path, 1, &mx), ML_OK);
    ck_assert_double_eq(mx, 6.0);
    ck_assert_int_eq(ml_logfile_max_field(path, 7, &mx), ML_ENOSIGNAL);
}
END_TEST

START_TEST(header_only_and_partial_header)
{
    char last[64];
    FILE *raw = fopen(path, "wb");
    fputs("a,", raw); /* killed while writing the header: the file starts afresh */
    fclose(raw);
    ml_logfile *f = open_ok(last, sizeof last);
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), "a,b\n");
    ck_assert(!ml_logfile_has_rows(path));
    f = open_ok(last, sizeof last);
    ck_assert_str_eq(last, "");
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), "a,b\n");
}
END_TEST

START_TEST(foreign_file_refused_untouched)
{
    FILE *raw = fopen(path, "wb");
    fputs("x,y\n1,2\n9", raw);
    fclose(raw);
    ml_logfile *f = (ml_logfile *)1;
    char last[64], err[256];
    ck_assert_int_eq(ml_logfile_open(path, "a,b", &f, last, sizeof last, err, sizeof err), ML_EFORMAT);
    ck_assert_ptr_null(f);
    ck_assert_ptr_nonnull(strstr(err, "different columns"));
    ck_assert_str_eq(contents(), "x,y\n1,2\n9");
    ck_assert_int_eq(ml_logfile_open(dir, "a,b", &f, last, sizeof last, err, sizeof err), ML_EIO);
    ck_assert_int_eq(ml_logfile_write_line(NULL, "1"), ML_EINVAL);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("io_logfile");
    TCase *tc = tcase_create("core");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, new_file_gets_header_and_lines);
    tcase_add_test(tc, reopen_returns_last_line_and_cuts_partial);
    tcase_add_test(tc, header_only_and_partial_header);
    tcase_add_test(tc, foreign_file_refused_untouched);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
