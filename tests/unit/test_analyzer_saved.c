/* Unit tests for analyzer/saved: a saved report typed against the metric registry before a
 * comparison uses it. Expected outcomes follow the registry (analyzer/registry.c): audio.thd_pct
 * is a number in %, audio.clipped_samples a count (unit "", no decimals), and
 * modulation.overmodulation_kind is not a registered metric (a text field).
 * SPDX-License-Identifier: MIT
 */
#define _GNU_SOURCE
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

#include "analyzer/saved.h"
#include "tests/unit/ml_check.h"

#define INPUT \
    "\"input\": {\"path\": \"x.wav\", \"kind\": \"audio\", \"sample_rate_hz\": 48000.0, \"channels\": 1, " \
    "\"frames\": 48000}"

static ml_status check_text(const char *text, char *err, size_t errlen)
{
    ml_result *r = NULL;
    ck_assert_msg(ml_result_parse(text, strlen(text), &r, err, errlen) == ML_OK, "%s: %s", text, err);
    ml_status st = ml_saved_check(r, err, errlen);
    ml_result_destroy(r);
    return st;
}

START_TEST(registered_metrics_are_numbers)
{
    char err[256];
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"thd_pct\": 0.01, \"clipped_samples\": 3}, "
                                "\"modulation\": {\"overmodulation_kind\": \"none\"}}",
                                err, sizeof err),
                     ML_OK);
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"thd_pct\": null}}", err, sizeof err), ML_OK);
    /* text where the registry has a number: a regression would hide behind "n/a" */
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"thd_db\": -80, \"thd_pct\": \"0.01\"}}", err, sizeof err), ML_EFORMAT);
    ck_assert_str_eq(err, "key 'audio.thd_pct': text where the metric is a number (or null)");
    /* counts: whole and not negative */
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"clipped_samples\": 2.5}}", err, sizeof err), ML_EFORMAT);
    ck_assert_ptr_nonnull(strstr(err, "audio.clipped_samples"));
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"clipped_samples\": -1}}", err, sizeof err), ML_EFORMAT);
    ck_assert_int_eq(check_text("{" INPUT ", \"live\": {\"lost_frames\": 1e15}}", err, sizeof err), ML_OK);
    /* uncertainties */
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"thd_pct\": 1}, \"uncertainty\": {\"audio\": {\"thd_pct\": -0.1}}}",
                                err, sizeof err),
                     ML_EFORMAT);
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"thd_pct\": 1}, \"uncertainty\": {\"audio\": {\"thd_pct\": \"x\"}}}",
                                err, sizeof err),
                     ML_EFORMAT);
    /* a name with control bytes is printed escaped */
    ck_assert_int_eq(check_text("{" INPUT ", \"uncertainty\": {\"a\\u001bb\": \"x\"}, \"audio\": {\"thd_pct\": 1}}", err,
                                sizeof err),
                     ML_EFORMAT);
    ck_assert_ptr_nonnull(strstr(err, "a\\x1bb"));
}
END_TEST

START_TEST(read_gives_registry_units)
{
    static const char text[] = "{" INPUT ", \"audio\": {\"thd_pct\": 0.5, \"clipped_samples\": 7}}";
    int fd = memfd_create("report", 0);
    ck_assert_int_ge(fd, 0);
    ck_assert_int_eq(write(fd, text, sizeof text - 1), (ssize_t)(sizeof text - 1));
    char path[64], err[256];
    snprintf(path, sizeof path, "/proc/self/fd/%d", fd);
    static ml_report rep;
    ck_assert_int_eq(ml_saved_read(path, &rep, err, sizeof err), ML_OK);
    const ml_metric *m = ml_report_find(&rep, "audio.thd_pct");
    ck_assert_ptr_nonnull(m);
    ck_assert_str_eq(m->unit, "%");
    ck_assert_int_eq(m->decimals, 4);
    ck_assert_double_eq(ml_report_find(&rep, "audio.clipped_samples")->value, 7.0);
    close(fd);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("analyzer_saved");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, registered_metrics_are_numbers);
    tcase_add_test(tc, read_gives_registry_units);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
