/* Unit tests for io/cardfile: the card profile and calibration files written and read back, and the
 * strict readers' refusals.
 * SPDX-License-Identifier: MIT
 *
 * Expected values are the ones written (a round trip keeps every figure to the decimals written:
 * 2 for levels, 4 for the response) and the documented ranges of io/cardfile.h; the calibration's
 * consistency rule is dsp/levels.h's (full scale = 20 lg(V / 0.774597 V) - L; docs/references.md 14).
 */
#define _GNU_SOURCE
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/cardfile.h"

static ml_card_profile sample(void)
{
    ml_card_profile p;
    memset(&p, 0, sizeof p);
    p.rate_hz = 44100;
    p.channels = 2;
    p.test_hz = 997;
    p.test_level_dbfs = -1;
    p.response_level_dbfs = -20;
    p.band_lo_hz = 20;
    p.band_hi_hz = 20000;
    p.rate_error_ppm = -12.5;
    p.gain_difference_db = 0.125;
    p.npoints = 3;
    p.response_hz[0] = 20, p.response_hz[1] = 1000, p.response_hz[2] = 16000;
    for (int c = 0; c < 2; c++) {
        p.ch[c] = (ml_card_channel){.level_dbfs = -1.25, .thd_db = -101.5, .thdn_db = -95.25,
                                    .thd_state = ML_FIG_UPPER, .thdn_state = ML_FIG_MEASURED,
                                    .noise_dbfs = -110.5, .noise_a_dbfs = -112.5, .noise_468_dbfs = NAN,
                                    .hum_dbfs = NAN, .crosstalk_db = -90, .crosstalk_state = ML_FIG_MEASURED};
        p.ch[c].response_db[0] = -0.5, p.ch[c].response_db[1] = 0, p.ch[c].response_db[2] = NAN;
    }
    return p;
}

/* Writes p into a memory buffer (caller frees). */
static char *to_text(const ml_card_profile *p, size_t *len)
{
    char *buf = NULL;
    FILE *f = open_memstream(&buf, len);
    ck_assert_ptr_nonnull(f);
    ck_assert_int_eq(ml_card_profile_write(f, p, "loop.wav"), ML_OK);
    fclose(f);
    return buf;
}

START_TEST(profile_round_trip)
{
    const ml_card_profile p = sample();
    size_t len = 0;
    char *text = to_text(&p, &len);
    ml_card_profile q;
    char rec[64], err[256];
    ck_assert_int_eq(ml_card_profile_parse(text, len, &q, rec, sizeof rec, err, sizeof err), ML_OK);
    ck_assert_str_eq(rec, "loop.wav");
    ck_assert(q.rate_hz == 44100 && q.channels == 2 && q.npoints == 3 && q.response_hz[2] == 16000);
    ck_assert(q.rate_error_ppm == -12.5 && q.gain_difference_db == 0.125);
    for (int c = 0; c < 2; c++) {
        ck_assert(q.ch[c].thd_db == -101.5 && q.ch[c].thd_state == ML_FIG_UPPER);
        ck_assert(q.ch[c].thdn_db == -95.25 && q.ch[c].thdn_state == ML_FIG_MEASURED);
        ck_assert(isnan(q.ch[c].noise_468_dbfs) && isnan(q.ch[c].hum_dbfs) && isnan(q.ch[c].response_db[2]));
        ck_assert(q.ch[c].response_db[0] == -0.5);
    }
    free(text);
}
END_TEST

/* The sample with one member's text replaced; the reader's status and message. */
static ml_status edited(const char *from, const char *to, char *err, size_t errlen)
{
    const ml_card_profile p = sample();
    size_t len = 0;
    char *text = to_text(&p, &len);
    char *at = strstr(text, from);
    ck_assert_msg(at != NULL, "no '%s' in the profile", from);
    char *out = malloc(len + strlen(to) + 1);
    snprintf(out, len + strlen(to) + 1, "%.*s%s%s", (int)(at - text), text, to, at + strlen(from));
    ml_card_profile q;
    const ml_status st = ml_card_profile_parse(out, strlen(out), &q, NULL, 0, err, errlen);
    free(out);
    free(text);
    return st;
}

START_TEST(profile_refusals)
{
    char err[256];
    /* io/cardfile.h: channels 1 or 2 */
    ck_assert_int_eq(edited("\"channels\": 2", "\"channels\": 3", err, sizeof err), ML_EFORMAT);
    ck_assert_str_eq(err, "key 'channels': not an integer 1..2");
    /* levels -400..20 dBFS */
    ck_assert_int_eq(edited("\"noise_dbfs\": -110.5", "\"noise_dbfs\": 21", err, sizeof err), ML_EFORMAT);
    ck_assert_msg(strstr(err, "key 'channel[1].noise_dbfs': 21 is out of range -400..20") != NULL, "%s", err);
    /* a bound only beside a value */
    ck_assert_int_eq(edited("\"noise_468_dbfs\": null", "\"noise_468_dbfs\": null, \"x\": 1", err, sizeof err),
                     ML_EFORMAT);
    ck_assert_msg(strstr(err, "key 'channel[1].x'") != NULL, "%s", err);
    ck_assert_int_eq(edited("\"thdn_bound\": \"\"", "\"thdn_bound\": 1", err, sizeof err), ML_EFORMAT);
    /* the format's version */
    ck_assert_int_eq(edited("\"modlens_card_profile\": 1", "\"modlens_card_profile\": 2", err, sizeof err),
                     ML_EFORMAT);
    ck_assert_str_eq(err, "key 'modlens_card_profile': not an integer 1..1");
    /* frequencies below Nyquist (22050 Hz) */
    ck_assert_int_eq(edited("16000.0", "23000.0", err, sizeof err), ML_EFORMAT);
    ck_assert_msg(strstr(err, "key 'response_hz[3]'") != NULL, "%s", err);
    ml_card_profile q;
    ck_assert_int_eq(ml_card_profile_parse("[1]", 3, &q, NULL, 0, err, sizeof err), ML_EFORMAT);
    ck_assert_int_eq(ml_card_profile_parse("{\"a\":\x01}", 7, &q, NULL, 0, err, sizeof err), ML_EFORMAT);
    ck_assert(strchr(err, '\x01') == NULL && strchr(err, '\n') == NULL);
}
END_TEST

START_TEST(calibration)
{
    ml_calibration c = {.cal = {.full_scale_dbu = 20 * log10(1.228 / 0.7745966692414834) + 20},
                        .tone_vrms = 1.228, .tone_dbfs = -20, .tone_hz = 1000, .channel = 1};
    snprintf(c.recording, sizeof c.recording, "cal.wav");
    char *buf = NULL, err[256];
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    ck_assert_int_eq(ml_calibration_write(f, &c), ML_OK);
    fclose(f);
    ml_calibration d;
    ck_assert_int_eq(ml_calibration_parse(buf, len, &d, err, sizeof err), ML_OK);
    /* SMPTE RP155 (docs/references.md 14): +4 dBu at -20 dBFS is +24 dBu full scale; +4 dBu = 1.228 V
     * is printed to 4 digits (+-0.0005 V: +-0.0035 dB) */
    ck_assert_double_eq_tol(d.cal.full_scale_dbu, 24.0, 0.004);
    ck_assert(d.tone_vrms == 1.228 && d.channel == 1 && strcmp(d.recording, "cal.wav") == 0);
    free(buf);
    const char *bad = "{\"modlens_calibration\": 1, \"full_scale_dbu\": 18, \"tone_vrms\": 1.228, "
                      "\"tone_dbfs\": -20, \"tone_hz\": 1000, \"channel\": 1, \"recording\": \"\"}";
    ck_assert_int_eq(ml_calibration_parse(bad, strlen(bad), &d, err, sizeof err), ML_EFORMAT);
    ck_assert_msg(strstr(err, "key 'full_scale_dbu': 18.0000 does not follow") != NULL, "%s", err);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("io_cardfile");
    TCase *t = tcase_create("core");
    tcase_add_test(t, profile_round_trip);
    tcase_add_test(t, profile_refusals);
    tcase_add_test(t, calibration);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    return ml_check_run(suite());
}
