/* Unit tests for io/logfile (head, last complete line, partial-line cut, files that are not this
 * log, the lock) and io/csv (RFC 4180 fields).
 * SPDX-License-Identifier: MIT
 *
 * Outside reference: RFC 4180 section 2 (fields with commas, quotes or line breaks are enclosed
 * in double quotes; a quote inside is doubled).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/csv.h"
#include "io/logfile.h"

#define HEAD "# kind 1; x\na,b\n"

static char dir[64], path[128];

static void setup(void)
{
    snprintf(dir, sizeof dir, "/tmp/modlens-logfile-XXXXXX");
    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(path, sizeof path, "%s/x.csv", dir);
}

static void teardown(void)
{
    char p[160];
    unlink(path);
    snprintf(p, sizeof p, "%s/fifo", dir);
    unlink(p);
    snprintf(p, sizeof p, "%s/dangling", dir);
    unlink(p);
    rmdir(dir);
}

static const char *contents(void)
{
    static char b[200000];
    FILE *f = fopen(path, "rb");
    ck_assert_ptr_nonnull(f);
    size_t n = fread(b, 1, sizeof b - 1, f);
    b[n] = '\0';
    fclose(f);
    return b;
}

static void put(const char *s)
{
    FILE *f = fopen(path, "wb");
    ck_assert_ptr_nonnull(f);
    fputs(s, f);
    fclose(f);
}

static ml_logfile *attach_ok(ml_logfile_match want)
{
    ml_logfile *f = NULL;
    char err[256];
    ck_assert_int_eq(ml_logfile_attach(path, HEAD, "# kind", &f, err, sizeof err), ML_OK);
    ck_assert_int_eq(ml_logfile_get_match(f), want);
    return f;
}

static void begin_ok(ml_logfile *f)
{
    char err[256];
    ck_assert_int_eq(ml_logfile_begin(f, err, sizeof err), ML_OK);
}

START_TEST(new_file_created_only_at_begin)
{
    ml_logfile *f = attach_ok(ML_LOGFILE_ABSENT);
    ck_assert_int_ne(access(path, F_OK), 0); /* attach writes nothing */
    ck_assert_int_eq(ml_logfile_write_line(f, "1,2"), ML_EINVAL); /* not begun */
    begin_ok(f);
    ck_assert_int_eq(ml_logfile_write_line(f, "1,2"), ML_OK);
    ck_assert_int_eq(ml_logfile_write_line(f, "3,4"), ML_OK);
    ck_assert_uint_eq(ml_logfile_size(f), strlen(HEAD) + 8);
    ck_assert_str_eq(ml_logfile_path(f), path);
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), HEAD "1,2\n3,4\n");
}
END_TEST

START_TEST(reopen_returns_last_line_and_cuts_partial)
{
    ml_logfile *f = attach_ok(ML_LOGFILE_ABSENT);
    begin_ok(f);
    ml_logfile_write_line(f, "1,2");
    ml_logfile_write_line(f, "3,4");
    ml_logfile_close(f);
    FILE *raw = fopen(path, "ab");
    fputs("5,", raw); /* a line cut short by a kill */
    fclose(raw);
    f = attach_ok(ML_LOGFILE_SAME);
    ck_assert_str_eq(ml_logfile_last(f), "3,4");
    ck_assert_str_eq(ml_logfile_line(f, 0), "# kind 1; x");
    ck_assert_str_eq(ml_logfile_line(f, 1), "a,b");
    ck_assert_str_eq(contents(), HEAD "1,2\n3,4\n5,"); /* attach changes nothing */
    begin_ok(f);
    ck_assert_str_eq(contents(), HEAD "1,2\n3,4\n");
    ml_logfile_write_line(f, "5,6");
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), HEAD "1,2\n3,4\n5,6\n"); /* one head, nothing repeated */
    /* the largest number of a column over every complete line after the head, quoted or not */
    raw = fopen(path, "ab");
    fputs("\"9\",\"x,\"\"y\"\"\"\n", raw);
    fclose(raw);
    double mx = 0;
    ck_assert_int_eq(ml_logfile_max_field(path, 2, 0, &mx), ML_OK);
    ck_assert_double_eq(mx, 9.0);
    ck_assert_int_eq(ml_logfile_max_field(path, 2, 1, &mx), ML_OK);
    ck_assert_double_eq(mx, 6.0);
    ck_assert_int_eq(ml_logfile_max_field(path, 2, 7, &mx), ML_ENOSIGNAL);
}
END_TEST

START_TEST(cut_head_is_started_afresh)
{
    put("# kind 1; x\na,"); /* killed while writing the head: the file starts afresh */
    ml_logfile *f = attach_ok(ML_LOGFILE_EMPTY);
    begin_ok(f);
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), HEAD);
    f = attach_ok(ML_LOGFILE_SAME);
    ck_assert_str_eq(ml_logfile_last(f), "");
    ml_logfile_close(f);
    put("");
    f = attach_ok(ML_LOGFILE_EMPTY);
    ml_logfile_close(f);
}
END_TEST

START_TEST(other_files_refused_untouched)
{
    /* 100 kB of someone's data without a single line break: never cut, never replaced */
    char *big = malloc(100001);
    memset(big, 'q', 100000);
    big[100000] = '\0';
    put(big);
    ml_logfile *f = attach_ok(ML_LOGFILE_FOREIGN);
    char err[256];
    ck_assert_int_eq(ml_logfile_begin(f, err, sizeof err), ML_EFORMAT);
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), big);
    free(big);
    put("x,y\n1,2\n9");
    f = attach_ok(ML_LOGFILE_FOREIGN);
    ck_assert_int_eq(ml_logfile_begin(f, err, sizeof err), ML_EFORMAT);
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), "x,y\n1,2\n9");
    /* a log of the same kind with another head: its first lines are there to say why */
    put("# kind 1; y\na,b\n1,2\n");
    f = attach_ok(ML_LOGFILE_KIN);
    ck_assert_str_eq(ml_logfile_line(f, 0), "# kind 1; y");
    ck_assert_int_eq(ml_logfile_begin(f, err, sizeof err), ML_EFORMAT);
    ml_logfile_close(f);
    ck_assert_str_eq(contents(), "# kind 1; y\na,b\n1,2\n");
    /* not a regular file; a FIFO is refused without waiting for a writer; a dangling link */
    ck_assert_int_eq(ml_logfile_attach(dir, HEAD, "#", &f, err, sizeof err), ML_EIO);
    ck_assert_ptr_null(f);
    char p[160];
    snprintf(p, sizeof p, "%s/fifo", dir);
    ck_assert_int_eq(mkfifo(p, 0600), 0);
    ck_assert_int_eq(ml_logfile_attach(p, HEAD, "#", &f, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "regular"));
    snprintf(p, sizeof p, "%s/dangling", dir);
    ck_assert_int_eq(symlink("nowhere", p), 0);
    ck_assert_int_eq(ml_logfile_attach(p, HEAD, "#", &f, err, sizeof err), ML_EIO);
    ck_assert_int_eq(ml_logfile_write_line(NULL, "1"), ML_EINVAL);
    ck_assert_int_eq(ml_logfile_attach(path, "no newline", "#", &f, err, sizeof err), ML_EINVAL);
}
END_TEST

START_TEST(second_writer_is_locked_out)
{
    ml_logfile *a = attach_ok(ML_LOGFILE_ABSENT);
    begin_ok(a);
    ml_logfile *b = NULL;
    char err[256];
    /* flock locks belong to the open file description: a second open, even in this process, is
     * refused while the first holds the file */
    ck_assert_int_eq(ml_logfile_attach(path, HEAD, "# kind", &b, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "another process"));
    ml_logfile_close(a);
    b = attach_ok(ML_LOGFILE_SAME); /* free again once the first closed */
    ml_logfile_close(b);
}
END_TEST

START_TEST(csv_fields)
{
    char b[64], f[32];
    size_t k = 0;
    /* RFC 4180 2.6/2.7: commas and quotes enclosed, quotes doubled; line breaks become spaces
     * (the files are read line by line); spaces at an end are kept by quoting */
    ck_assert(ml_csv_append(b, sizeof b, &k, "plain"));
    ck_assert(ml_csv_append(b, sizeof b, &k, "a,b"));
    ck_assert(ml_csv_append(b, sizeof b, &k, "say \"hi\""));
    ck_assert(ml_csv_append(b, sizeof b, &k, "two\nlines"));
    ck_assert(ml_csv_append(b, sizeof b, &k, ""));
    ck_assert(ml_csv_append(b, sizeof b, &k, " x"));
    ck_assert_str_eq(b, "plain,\"a,b\",\"say \"\"hi\"\"\",\"two lines\",,\" x\"");
    ck_assert_int_eq(ml_csv_count(b), 6);
    ck_assert(ml_csv_get_field(b, 1, f, sizeof f));
    ck_assert_str_eq(f, "a,b");
    ck_assert(ml_csv_get_field(b, 2, f, sizeof f));
    ck_assert_str_eq(f, "say \"hi\"");
    ck_assert(ml_csv_get_field(b, 4, f, sizeof f));
    ck_assert_str_eq(f, "");
    ck_assert(!ml_csv_get_field(b, 6, f, sizeof f));
    ck_assert_int_eq(ml_csv_column("x,\"y\",z\r\n", "z"), 2);
    ck_assert_int_eq(ml_csv_column("x,\"y\",z\r\n", "y"), 1);
    ck_assert_int_eq(ml_csv_column("x,y", "w"), -1);
    ck_assert_int_eq(ml_csv_count("\"open,field"), -1);
    ck_assert_int_eq(ml_csv_count("\"a\"b,c"), -1);
    ck_assert_int_eq(ml_csv_count("a\"b,c"), -1);
    /* too small a buffer: nothing half-written */
    char s[8];
    k = 0;
    ck_assert(ml_csv_append(s, sizeof s, &k, "abc"));
    ck_assert(!ml_csv_append(s, sizeof s, &k, "d,e,f"));
    ck_assert_str_eq(s, "abc");
    ck_assert_uint_eq(k, 3);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("io_logfile");
    TCase *tc = tcase_create("core");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, new_file_created_only_at_begin);
    tcase_add_test(tc, reopen_returns_last_line_and_cuts_partial);
    tcase_add_test(tc, cut_head_is_started_afresh);
    tcase_add_test(tc, other_files_refused_untouched);
    tcase_add_test(tc, second_writer_is_locked_out);
    tcase_add_test(tc, csv_fields);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
