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
    "\"frames\": 48000}, \"hum\": {\"mains_hz\": 50}"

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
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"thd_pct\": 1}, \"live\": {\"lost_frames\": 1e15}}", err,
                                sizeof err),
                     ML_OK);
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

/* Values no figure can take (analyzer/values.h: the reportable range, |dB| <= ML_FIGURE_DB_LIMIT
 * and ENOB 0..ML_ENOB_MAX_BITS; the definitions of README "Metrics": THD and THD+N are r.m.s.
 * ratios, a share of time lies in 0..100 %, a frequency is not negative and a sampled one not
 * above the rate) and reports without the sections their kind always has. */
START_TEST(impossible_values_and_missing_sections)
{
    static const struct {
        const char *group, *value, *key;
    } bad[] = {
        {"audio", "\"thd_pct\": -5", "audio.thd_pct"},
        {"audio", "\"thdn_pct\": -0.001", "audio.thdn_pct"},
        {"audio", "\"enob_bits\": 33", "audio.enob_bits"},
        {"audio", "\"enob_bits\": -1", "audio.enob_bits"},
        {"audio", "\"thd_db\": -299", "audio.thd_db"},
        {"audio", "\"noise_dbfs\": 300", "audio.noise_dbfs"},
        {"audio", "\"fundamental_hz\": -1000", "audio.fundamental_hz"},
        {"audio", "\"fundamental_hz\": 96001", "audio.fundamental_hz"},
        {"audio", "\"fundamental_vrms\": -1", "audio.fundamental_vrms"},
        {"modulation", "\"overmodulation_pct\": 101", "modulation.overmodulation_pct"},
        {"modulation", "\"index\": -0.5", "modulation.index"},
    };
    char text[512], err[256];
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        if (strcmp(bad[i].group, "audio") == 0)
            snprintf(text, sizeof text, "{" INPUT ", \"audio\": {%s}}", bad[i].value);
        else
            snprintf(text, sizeof text, "{" INPUT ", \"audio\": {\"thd_db\": -60}, \"%s\": {%s}}", bad[i].group,
                     bad[i].value);
        ck_assert_msg(check_text(text, err, sizeof err) == ML_EFORMAT, "case %zu accepted", i);
        ck_assert_msg(strstr(err, bad[i].key) && strstr(err, "impossible"), "case %zu: %s", i, err);
    }
    /* at the edges, and the signed figures */
    ck_assert_int_eq(check_text("{" INPUT ", \"audio\": {\"thd_pct\": 0, \"enob_bits\": 32, \"thd_db\": -290, "
                                "\"dc_offset_pct\": -3, \"fundamental_hz\": 24000}}",
                                err, sizeof err),
                     ML_OK);
    /* an audio report without its audio figures; an if report without the carrier */
    ck_assert_int_eq(check_text("{" INPUT ", \"imd\": {\"smpte_pct\": 1}}", err, sizeof err), ML_EFORMAT);
    ck_assert_str_eq(err, "no \"audio\" section: a saved audio report always has audio, hum");
    ck_assert_int_eq(check_text("{\"input\": {\"path\": \"x.wav\", \"kind\": \"if\", \"sample_rate_hz\": 48000, "
                                "\"channels\": 1, \"frames\": 9}, \"audio\": {\"thd_pct\": 1}, \"hum\": {\"mains_hz\": 50}, "
                                "\"modulation\": {\"index\": 0.5}}",
                                err, sizeof err),
                     ML_EFORMAT);
    ck_assert_ptr_nonnull(strstr(err, "\"carrier\""));
    /* a sweep report holds its own section only */
    ck_assert_int_eq(check_text("{\"input\": {\"path\": \"x.wav\", \"kind\": \"audio\", \"sample_rate_hz\": 48000, "
                                "\"channels\": 1, \"frames\": 9}, \"sweep\": {\"steps\": 3}}",
                                err, sizeof err),
                     ML_OK);
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
    tcase_add_test(tc, impossible_values_and_missing_sections);
    tcase_add_test(tc, read_gives_registry_units);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
