/* Unit tests for io/result_read: a saved JSON report flattened back, and strict rejection of
 * malformed ones. Expected values are the literals of the JSON text given here.
 * SPDX-License-Identifier: MIT
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <stdlib.h>
#include <string.h>

#include "io/result_read.h"

#define INPUT \
    "\"input\": {\"path\": \"x.wav\", \"kind\": \"iq\", \"sample_rate_hz\": 48000.0, \"channels\": 2, " \
    "\"frames\": 240000, \"duration_s\": 5.0}"

static const char good[] =
    "{" INPUT ", \"analysis\": \"hft248d\", "
    "\"carrier\": {\"frequency_hz\": 3000.0, \"offset_hz\": null}, "
    "\"modulation\": {\"index\": 0.786, \"overmodulation_kind\": \"none\"}, "
    "\"audio\": {\"thd_pct\": 1.09, \"clipped_samples\": 0, "
    "\"harmonics\": [{\"order\": 2, \"frequency_hz\": 2000.0, \"level_dbc\": -40.1}]}, "
    "\"checks\": [{\"metric\": \"audio.thd_pct\", \"value\": 1.09, \"min\": null, \"max\": 2, \"pass\": true, "
    "\"margin\": 0.91}], \"verdict\": \"pass\", \"notes\": [\"a note\"]}";

static ml_result *parse_ok(const char *text)
{
    ml_result *r = NULL;
    char err[256];
    ml_status st = ml_result_parse(text, strlen(text), &r, err, sizeof err);
    ck_assert_msg(st == ML_OK, "rejected: %s", err);
    return r;
}

START_TEST(flattens_metrics_texts_and_input)
{
    ml_result *r = parse_ok(good);
    const ml_result_item *it = ml_result_find(r, "carrier.frequency_hz");
    ck_assert_ptr_nonnull(it);
    ck_assert_int_eq(it->type, ML_RESULT_NUMBER);
    ck_assert_double_eq(it->value, 3000.0);
    it = ml_result_find(r, "carrier.offset_hz");
    ck_assert_ptr_nonnull(it);
    ck_assert_int_eq(it->type, ML_RESULT_NULL);
    it = ml_result_find(r, "modulation.overmodulation_kind");
    ck_assert_int_eq(it->type, ML_RESULT_TEXT);
    ck_assert_str_eq(it->text, "none");
    ck_assert_double_eq(ml_result_find(r, "audio.clipped_samples")->value, 0.0);
    ck_assert_str_eq(ml_result_find(r, "input.kind")->text, "iq");
    ck_assert_double_eq(ml_result_find(r, "input.frames")->value, 240000.0);
    ck_assert_ptr_null(ml_result_find(r, "audio.harmonics")); /* tables are not listed */
    ck_assert_ptr_null(ml_result_find(r, "checks"));
    ck_assert_str_eq(ml_result_verdict(r), "pass");
    /* document order: input first (6 scalars), then the groups */
    ck_assert_uint_eq(ml_result_count(r), 6 + 2 + 2 + 2);
    ck_assert_str_eq(ml_result_item_at(r, 0)->name, "input.path");
    ck_assert_ptr_null(ml_result_item_at(r, ml_result_count(r)));
    ml_result_destroy(r);
}
END_TEST

START_TEST(rejects_malformed_reports)
{
    static const char *bad[] = {
        "",
        "[]",
        "{}",
        "{\"input\": 3, \"audio\": {\"thd_pct\": 1}}",
        "{\"input\": {\"path\": \"x\", \"kind\": \"radio\", \"sample_rate_hz\": 48000, \"channels\": 1, "
        "\"frames\": 1}, \"audio\": {\"thd_pct\": 1}}",
        "{\"input\": {\"path\": \"x\", \"kind\": \"audio\", \"sample_rate_hz\": 0, \"channels\": 1, \"frames\": 1}, "
        "\"audio\": {\"thd_pct\": 1}}",
        "{\"input\": {\"path\": \"x\", \"kind\": \"audio\", \"sample_rate_hz\": 8000, \"channels\": 1.5, "
        "\"frames\": 1}, \"audio\": {\"thd_pct\": 1}}",
        "{" INPUT "}",                                             /* no metrics */
        "{" INPUT ", \"audio\": {\"thd_pct\": 1, \"thd_pct\": 2}}", /* duplicate key */
        "{" INPUT ", \"audio\": {\"thd_pct\": NaN}}",
        "{" INPUT ", \"audio\": {\"thd_pct\": 1e999}}",
        "{" INPUT ", \"audio\": {\"thd_pct\": true}}",
        "{" INPUT ", \"audio\": 5}",
        "{" INPUT ", \"audio\": {\"thd_pct\": 1}, \"verdict\": \"maybe\"}",
        "{" INPUT ", \"audio\": {\"harmonics\": [1, 2]}}",
        "{" INPUT ", \"audio\": {\"a\": {\"b\": {\"c\": 1}}}}",       /* nested too deep */
        "{" INPUT ", \"audio\": {\"a.b\": 1}}",                      /* a dot inside a name */
        "{" INPUT ", \"audio\": {\"thd_pct\": 1}, \"notes\": [1]}",
        "{" INPUT ", \"audio\": {\"thd_pct\": 1}, \"checks\": [{\"metric\": 1}]}",
        "{" INPUT ", \"audio\": {\"thd_pct\": 1}} trailing",
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        ml_result *r = (ml_result *)1;
        char err[256] = "";
        ml_status st = ml_result_parse(bad[i], strlen(bad[i]), &r, err, sizeof err);
        ck_assert_msg(st == ML_EFORMAT, "case %zu accepted: %s", i, bad[i]);
        ck_assert_ptr_null(r);
        ck_assert_msg(strlen(err) > 0 && strchr(err, '\n') == NULL, "case %zu: no one-line reason", i);
    }
}
END_TEST

/* Numbers that would overflow a conversion later (frame counts and positions are int64_t,
 * channels int, block counts size_t): refused with a reason naming the key. 2^63 - 1 is the
 * largest JSON integer jansson accepts; as a double it rounds to 2^63, which no int64_t holds. */
START_TEST(rejects_numbers_out_of_range)
{
#define IN(ch, fr) "\"input\": {\"path\": \"x\", \"kind\": \"audio\", \"sample_rate_hz\": 48000, " \
                   "\"channels\": " ch ", \"frames\": " fr
    static const struct {
        const char *text, *key;
    } bad[] = {
        {"{" IN("1", "9223372036854775807") "}, \"audio\": {\"thd_pct\": 1}}", "input.frames"},
        {"{" IN("4611686018427387904", "1") "}, \"audio\": {\"thd_pct\": 1}}", "input.channels"},
        {"{" IN("2", "1") ", \"channel\": 3}, \"audio\": {\"thd_pct\": 1}}", "input.channel"},
        {"{" IN("2", "1") ", \"channel\": 1.5}, \"audio\": {\"thd_pct\": 1}}", "input.channel"},
        {"{" IN("1", "1") ", \"duration_s\": 1e300}, \"audio\": {\"thd_pct\": 1}}", "input.duration_s"},
        {"{" IN("1", "1") "}, \"audio\": {\"clipped_samples\": 1e300}}", "audio.clipped_samples"},
        {"{" IN("1", "1") "}, \"audio\": {\"thd_pct\": -2e15}}", "audio.thd_pct"},
        {"{" IN("1", "1") "}, \"audio\": {\"thd_pct\": 1}, \"uncertainty_method\": {\"blocks\": -1}}",
         "uncertainty_method.blocks"},
        {"{" IN("1", "1") "}, \"audio\": {\"thd_pct\": 1}, \"uncertainty_method\": {\"blocks\": 2.5}}",
         "uncertainty_method.blocks"},
        {"{" IN("1", "1") "}, \"audio\": {\"harmonics\": [{\"order\": 1e300}]}}", "audio.harmonics"},
    };
#undef IN
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        ml_result *r = NULL;
        char err[256] = "";
        ml_status st = ml_result_parse(bad[i].text, strlen(bad[i].text), &r, err, sizeof err);
        ck_assert_msg(st == ML_EFORMAT, "case %zu accepted: %s", i, bad[i].text);
        ck_assert_msg(strstr(err, bad[i].key) != NULL, "case %zu: '%s' does not name %s", i, err, bad[i].key);
    }
    /* the bounds themselves are accepted */
    static const char edge[] = "{" INPUT ", \"audio\": {\"clipped_samples\": 1e15, \"thd_pct\": -1e15}, "
                               "\"uncertainty_method\": {\"blocks\": 3}}";
    ml_result *r = parse_ok(edge);
    ck_assert_double_eq(ml_result_find(r, "audio.clipped_samples")->value, 1e15);
    ml_result_destroy(r);
}
END_TEST

START_TEST(file_errors)
{
    ml_result *r = NULL;
    char err[256];
    ck_assert_int_eq(ml_result_read_file("/nonexistent/report.json", &r, err, sizeof err), ML_EIO);
    ck_assert_int_eq(ml_result_read_file("/", &r, err, sizeof err), ML_EIO);
    ck_assert_str_eq(err, "is a directory");
    ck_assert_int_eq(ml_result_read_file("/dev/null", &r, err, sizeof err), ML_EIO);
    ck_assert_ptr_null(r);
    ck_assert_int_eq(ml_result_parse(NULL, 0, NULL, err, sizeof err), ML_EINVAL);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("io_result_read");
    TCase *tc = tcase_create("parse");
    tcase_add_test(tc, flattens_metrics_texts_and_input);
    tcase_add_test(tc, rejects_malformed_reports);
    tcase_add_test(tc, rejects_numbers_out_of_range);
    tcase_add_test(tc, file_errors);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
