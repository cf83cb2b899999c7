/* Unit tests for the report model and its writers (io/report.h, io/compare.h): unmeasured figures
 * with reasons, qualifiers and bounds in JSON, text and CSV; the CSV shape (no header, fixed
 * columns, RFC 4180 quoting); no negative zeros; the JSON read back. Reports are built by hand.
 * SPDX-License-Identifier: MIT
 *
 * References: [rfc4180] RFC 4180 section 2: fields holding a comma, a double quote or a line break
 * are enclosed in double quotes, and a double quote inside is written twice. Every other expected
 * value is the literal this file puts in, or the rule of io/report.h written out.
 */
#define _POSIX_C_SOURCE 200809L
#include <check.h>

#include "tests/unit/ml_check.h"
#include <jansson.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "io/compare.h"
#include "io/plot.h"
#include "io/report.h"

/* ---- helpers ---- */

/* The whole output of a writer as a string (free it). */
static char *capture(ml_report_format fmt, const ml_report *r)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    ck_assert_ptr_nonnull(f);
    ck_assert_int_eq(ml_report_write(f, r, fmt), ML_OK);
    fclose(f);
    return buf;
}

#define MAX_ROWS 256
#define MAX_FIELDS 32

typedef struct {
    size_t nrows;
    size_t nfields[MAX_ROWS];
    char *field[MAX_ROWS][MAX_FIELDS];
} table;

/* [rfc4180] parser: records end in LF (CRLF accepted), quoted fields may hold anything. Returns
 * false on a malformed quote. */
static bool parse_csv(const char *s, table *t)
{
    memset(t, 0, sizeof *t);
    char cur[4096];
    size_t n = 0;
    bool quoted = false, in_record = false;
    for (const char *p = s;; p++) {
        if (quoted) {
            if (*p == '\0')
                return false;
            if (*p == '"' && p[1] == '"') {
                cur[n++] = '"';
                p++;
            } else if (*p == '"') {
                quoted = false;
                if (p[1] != ',' && p[1] != '\n' && p[1] != '\r' && p[1] != '\0')
                    return false; /* text after a closing quote */
            } else {
                cur[n++] = *p;
            }
            continue;
        }
        if (*p == '"' && n == 0) {
            quoted = true;
            in_record = true;
            continue;
        }
        if (*p == ',' || *p == '\n' || *p == '\0') {
            if (*p == '\0' && !in_record && n == 0)
                return true;
            cur[n] = '\0';
            ck_assert_uint_lt(t->nrows, MAX_ROWS);
            ck_assert_uint_lt(t->nfields[t->nrows], MAX_FIELDS);
            t->field[t->nrows][t->nfields[t->nrows]++] = strdup(cur);
            n = 0;
            in_record = *p == ',';
            if (*p != ',')
                t->nrows++;
            if (*p == '\0')
                return true;
            continue;
        }
        if (*p == '"')
            return false; /* a quote inside an unquoted field */
        if (*p != '\r')
            cur[n++] = *p;
        in_record = true;
    }
}

static void free_table(table *t)
{
    for (size_t i = 0; i < t->nrows; i++)
        for (size_t k = 0; k < t->nfields[i]; k++)
            free(t->field[i][k]);
}

static size_t count_fields(const char *header)
{
    size_t n = 1;
    for (const char *p = header; *p; p++)
        n += *p == ',';
    return n;
}

/* Index of a column in a header line, or -1. */
static int column(const char *header, const char *name)
{
    int i = 0;
    const size_t len = strlen(name);
    for (const char *p = header; *p; i++) {
        const char *e = strchr(p, ',');
        const size_t n = e ? (size_t)(e - p) : strlen(p);
        if (n == len && strncmp(p, name, n) == 0)
            return i;
        if (e == NULL)
            break;
        p = e + 1;
    }
    return -1;
}

/* The CSV row of this row_kind and name, or -1. */
static int row_of(const table *t, const char *kind, const char *name)
{
    const int ck = column(ML_REPORT_CSV_COLUMNS, "row_kind"), cn = column(ML_REPORT_CSV_COLUMNS, "name");
    for (size_t i = 0; i < t->nrows; i++)
        if (strcmp(t->field[i][ck], kind) == 0 && strcmp(t->field[i][cn], name) == 0)
            return (int)i;
    return -1;
}

static const char *cell(const table *t, int row, const char *col)
{
    const int c = column(ML_REPORT_CSV_COLUMNS, col);
    ck_assert_int_ge(row, 0);
    ck_assert_int_ge(c, 0);
    return t->field[row][c];
}

/* A report as measure builds one: a path with a comma and a quote in it, every kind of figure. */
static void sample(ml_report *r)
{
    memset(r, 0, sizeof *r);
    snprintf(r->path, sizeof r->path, "dir, \"one\"/take-0.wav");
    snprintf(r->kind, sizeof r->kind, "audio");
    snprintf(r->kind_reason, sizeof r->kind_reason, "one channel");
    snprintf(r->format, sizeof r->format, "WAV 16-bit PCM");
    r->sample_rate_hz = 48000;
    r->channels = 1;
    r->channel = 1;
    r->frames = 480000;
    r->duration_s = 10;
    r->start_s = 0;
    r->analysed_s = 10;
    snprintf(r->analysis, sizeof r->analysis, "hft248d window, offset -0.000 Hz");
    r->u_blocks = 6;
    r->u_block_s = 1.365;
    ml_metric *m = ml_report_add(r, "audio.thd_pct", "%", 4, 0.3);
    m->has_u = true;
    m->u = 0.00021;
    ck_assert_ptr_nonnull(ml_report_bound(r, "audio.thd_pct", ML_BOUND_UPPER, "noise-limited: the harmonics are "
                                                                               "not above the noise"));
    ck_assert_ptr_nonnull(ml_report_add_missing_why(r, "hum.level_dbc", "dBc", 2, "capture shorter than 0.4 s"));
    m = ml_report_add(r, "modulation.sideband_asymmetry_db", "dB", 2, -0.004); /* rounds to -0.00 */
    m = ml_report_add(r, "capture.dc_offset_pct", "%", 4, -1e-9);               /* rounds to -0 in JSON too */
    m = ml_report_add(r, "modulation.index", "", 4, 0.786);
    m->has_u = true;
    m->u = 0.0021;
    ck_assert_ptr_nonnull(ml_report_qualify(r, "modulation.index", "resolution-limited, \"envelope\""));
    m = ml_report_add(r, "audio.snr_db", "dB", 2, 46.47);
    m->has_u = true;
    m->u = 0.003;
    ck_assert_ptr_nonnull(ml_report_unmeasured(r, "audio.snr_db", "no tone above the noise (%d dB short)", 3));
    ml_report_add_text(r, "modulation.carrier_reference", "mean envelope, x");
    ml_table *tb = &r->tables[r->ntables++];
    snprintf(tb->path, sizeof tb->path, "audio.harmonics");
    snprintf(tb->title, sizeof tb->title, "harmonics");
    tb->ncols = 2;
    tb->cols[0] = "order";
    tb->cols[1] = "level_dbc";
    tb->decimals[0] = 0;
    tb->decimals[1] = 2;
    tb->nrows = 1;
    tb->cell[0][0] = 2;
    tb->cell[0][1] = -0.001; /* rounds to -0.00 */
    ml_check *c = &r->checks[r->nchecks++];
    snprintf(c->metric, sizeof c->metric, "audio.thd_pct");
    c->unit = "%";
    c->decimals = 4;
    c->valid = true;
    c->value = 0.3;
    c->has_max = true;
    c->max = 0.25;
    c->pass = false;
    c->margin = -0.05;
    c = &r->checks[r->nchecks++];
    snprintf(c->metric, sizeof c->metric, "modulation.index");
    c->decimals = 4;
    c->valid = true;
    c->value = 0.786;
    c->has_min = true;
    c->min = -0.0;
    c->has_max = true;
    c->max = 1.0;
    c->pass = true;
    c->margin = 0.214;
    ml_report_note(r, "a note, with \"quotes\" and a comma");
    ml_report_settings(r, "calibration 0 dBFS = +18.0 dBu (EBU R68)");
}

/* No "-0", "-0.0", "-0.00" ... standing as a number anywhere in s. */
static void no_negative_zero(const char *s)
{
    for (const char *p = strstr(s, "-0"); p; p = strstr(p + 1, "-0")) {
        const char *q = p + 2;
        if (*q == '.')
            for (q++; *q == '0'; q++)
                ;
        const bool digit_before = p > s && (p[-1] >= '0' && p[-1] <= '9');
        const bool more = (*q >= '1' && *q <= '9') || (p[2] == '.' && q == p + 3 && *q == '\0');
        ck_assert_msg(digit_before || more || (*q >= 'a' && *q <= 'z') || *q == '_' || p[-1] == 'e'
                          || strncmp(p - 4, "take", 4) == 0,
                      "negative zero at \"%.20s\"", p - (p - s > 6 ? 6 : p - s));
    }
}

/* ---- tests ---- */

START_TEST(numbers_without_negative_zero)
{
    /* io/report.h: "%.*f", except that a value that rounds to zero prints unsigned */
    char b[64];
    ml_report_number(b, sizeof b, -0.004, 2, false);
    ck_assert_str_eq(b, "0.00");
    ml_report_number(b, sizeof b, -0.0, 1, false);
    ck_assert_str_eq(b, "0.0");
    ml_report_number(b, sizeof b, -0.4, 0, false);
    ck_assert_str_eq(b, "0");
    ml_report_number(b, sizeof b, -0.006, 2, false);
    ck_assert_str_eq(b, "-0.01");
    ml_report_number(b, sizeof b, 0.0, 2, true);
    ck_assert_str_eq(b, "0.00");
    ml_report_number(b, sizeof b, -0.0001, 3, true);
    ck_assert_str_eq(b, "0.000");
    ml_report_number(b, sizeof b, 1.25, 1, true);
    ck_assert_str_eq(b, "+1.2"); /* 1.25 is exact in binary: printf rounds half to even */
    ml_report_number(b, sizeof b, -12.5, 1, true);
    ck_assert_str_eq(b, "-12.5");
    ml_report_number(b, sizeof b, NAN, 2, false);
    ck_assert_str_eq(b, "");
    ml_report_number(b, sizeof b, INFINITY, 2, false);
    ck_assert_str_eq(b, "");
}
END_TEST

START_TEST(bounds_rounded_outward)
{
    /* io/report.h: a printed bound still holds -- an upper bound rounds up, a lower bound down */
    char b[64];
    ml_report_bound_number(b, sizeof b, 2e-7, 4, ML_BOUND_UPPER);
    ck_assert_str_eq(b, "0.0001");
    ml_report_bound_number(b, sizeof b, 0.27196, 4, ML_BOUND_UPPER);
    ck_assert_str_eq(b, "0.2720");
    ml_report_bound_number(b, sizeof b, -29.5649, 2, ML_BOUND_LOWER);
    ck_assert_str_eq(b, "-29.57");
    ml_report_bound_number(b, sizeof b, -29.5649, 2, ML_BOUND_UPPER);
    ck_assert_str_eq(b, "-29.56");
    ml_report_bound_number(b, sizeof b, 0.25, 2, ML_BOUND_UPPER); /* exact at the resolution: kept */
    ck_assert_str_eq(b, "0.25");
    ml_report_bound_number(b, sizeof b, 2e-7, 4, ML_BOUND_NONE); /* no bound: plain rounding */
    ck_assert_str_eq(b, "0.0000");
}
END_TEST

START_TEST(model_reasons_qualifiers_bounds)
{
    static ml_report r;
    sample(&r);
    const ml_metric *thd = ml_report_find(&r, "audio.thd_pct");
    ck_assert(thd->valid && thd->bound == ML_BOUND_UPPER);
    ck_assert_str_eq(thd->qualifier, "noise-limited: the harmonics are not above the noise");
    const ml_metric *hum = ml_report_find(&r, "hum.level_dbc");
    ck_assert(!hum->valid);
    ck_assert_str_eq(hum->reason, "capture shorter than 0.4 s");
    const ml_metric *snr = ml_report_find(&r, "audio.snr_db");
    ck_assert(!snr->valid && !snr->has_u && snr->bound == ML_BOUND_NONE);
    ck_assert_str_eq(snr->reason, "no tone above the noise (3 dB short)");
    /* a qualifier or a bound needs a measured metric of that exact name */
    ck_assert_ptr_null(ml_report_qualify(&r, "audio.snr_db", "x"));
    ck_assert_ptr_null(ml_report_bound(&r, "hum.level_dbc", ML_BOUND_LOWER, NULL));
    ck_assert_ptr_null(ml_report_qualify(&r, "thd_pct", "x")); /* short names are not enough */
    ck_assert_ptr_null(ml_report_unmeasured(&r, "no.such_metric", "x"));
    ck_assert_ptr_null(ml_report_bound(&r, "audio.thd_pct", (ml_bound)7, NULL));
    /* a reason longer than the field is cut, not overflowed */
    char longer[300];
    memset(longer, 'x', sizeof longer - 1);
    longer[sizeof longer - 1] = '\0';
    ml_metric *m = ml_report_add_missing_why(&r, "x.long_db", "dB", 1, longer);
    ck_assert_uint_eq(strlen(m->reason), ML_REPORT_WHY_LEN - 1);
    ck_assert_str_eq(ml_report_bound_name(ML_BOUND_UPPER), "upper");
    ck_assert_str_eq(ml_report_bound_name(ML_BOUND_LOWER), "lower");
    ck_assert_str_eq(ml_report_bound_name(ML_BOUND_NONE), "");
}
END_TEST

START_TEST(json_reasons_qualifiers_bounds)
{
    static ml_report r;
    sample(&r);
    char *text = capture(ML_FORMAT_JSON, &r);
    json_error_t je;
    json_t *root = json_loads(text, 0, &je);
    ck_assert_msg(root != NULL, "not JSON: %s", je.text);
    /* the values stay where they were: a number, or null when not measured */
    ck_assert_double_eq_tol(json_number_value(json_object_get(json_object_get(root, "audio"), "thd_pct")), 0.3, 1e-12);
    ck_assert(json_is_null(json_object_get(json_object_get(root, "hum"), "level_dbc")));
    ck_assert(json_is_null(json_object_get(json_object_get(root, "audio"), "snr_db")));
    /* reasons, qualifiers and bounds nest like the metrics */
    json_t *why = json_object_get(root, "reasons");
    ck_assert_str_eq(json_string_value(json_object_get(json_object_get(why, "hum"), "level_dbc")),
                     "capture shorter than 0.4 s");
    ck_assert_str_eq(json_string_value(json_object_get(json_object_get(why, "audio"), "snr_db")),
                     "no tone above the noise (3 dB short)");
    ck_assert_ptr_null(json_object_get(json_object_get(why, "audio"), "thd_pct"));
    json_t *q = json_object_get(root, "qualifiers");
    ck_assert_str_eq(json_string_value(json_object_get(json_object_get(q, "audio"), "thd_pct")),
                     "noise-limited: the harmonics are not above the noise");
    ck_assert_str_eq(json_string_value(json_object_get(json_object_get(q, "modulation"), "index")),
                     "resolution-limited, \"envelope\"");
    json_t *b = json_object_get(root, "bounds");
    ck_assert_str_eq(json_string_value(json_object_get(json_object_get(b, "audio"), "thd_pct")), "upper");
    ck_assert_uint_eq(json_object_size(b), 1);
    ck_assert_str_eq(json_string_value(json_object_get(json_object_get(root, "settings"), "in_force")),
                     "calibration 0 dBFS = +18.0 dBu (EBU R68)");
    /* the uncertainty of a withdrawn figure is gone with it */
    ck_assert_ptr_null(json_object_get(json_object_get(json_object_get(root, "uncertainty"), "audio"), "snr_db"));
    /* no negative zero: a value that rounds to 0 is 0 (its sign bit clear), the check's -0 min too */
    json_t *dc = json_object_get(json_object_get(root, "capture"), "dc_offset_pct");
    ck_assert(json_is_number(dc) && json_number_value(dc) == 0 && !signbit(json_number_value(dc)));
    json_t *ck1 = json_array_get(json_object_get(root, "checks"), 1);
    ck_assert(!signbit(json_number_value(json_object_get(ck1, "min"))));
    ck_assert_ptr_null(strstr(text, "-0.0,"));
    ck_assert_ptr_null(strstr(text, "-0.0\n"));
    ck_assert_ptr_null(strstr(text, "offset -0.000")); /* free text: the analysis line */
    /* an empty report still has the three objects, empty */
    static ml_report e;
    memset(&e, 0, sizeof e);
    snprintf(e.kind, sizeof e.kind, "audio");
    ml_report_add(&e, "audio.thd_pct", "%", 4, 0.1);
    char *t2 = capture(ML_FORMAT_JSON, &e);
    json_t *r2 = json_loads(t2, 0, &je);
    ck_assert(json_is_object(json_object_get(r2, "reasons")) && json_object_size(json_object_get(r2, "reasons")) == 0);
    ck_assert(json_is_object(json_object_get(r2, "qualifiers")));
    ck_assert(json_is_object(json_object_get(r2, "bounds")));
    ck_assert_ptr_null(json_object_get(r2, "settings"));
    json_decref(r2);
    free(t2);
    json_decref(root);
    free(text);
}
END_TEST

START_TEST(json_read_back)
{
    /* a saved report with reasons, qualifiers, bounds and settings passes the strict reader and
     * comes back with them (compare reads saved reports this way) */
    static ml_report r, back;
    sample(&r);
    char path[] = "/tmp/ml-report-XXXXXX";
    const int fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    FILE *f = fdopen(fd, "w");
    ck_assert_int_eq(ml_report_write(f, &r, ML_FORMAT_JSON), ML_OK);
    fclose(f);
    char err[256] = "";
    const ml_status st = ml_report_read_json(path, &back, err, sizeof err);
    unlink(path);
    ck_assert_msg(st == ML_OK, "refused: %s", err);
    const ml_metric *thd = ml_report_find(&back, "audio.thd_pct");
    ck_assert(thd && thd->valid && thd->bound == ML_BOUND_UPPER);
    ck_assert_str_eq(thd->qualifier, "noise-limited: the harmonics are not above the noise");
    const ml_metric *hum = ml_report_find(&back, "hum.level_dbc");
    ck_assert(hum && !hum->valid);
    ck_assert_str_eq(hum->reason, "capture shorter than 0.4 s");
    ck_assert_str_eq(back.settings, "calibration 0 dBFS = +18.0 dBu (EBU R68)");
    ck_assert(ml_report_find(&back, "reasons.hum.level_dbc") == NULL);
    for (size_t i = 0; i < back.ntexts; i++) /* none of them became a text field */
        ck_assert_msg(strncmp(back.texts[i].name, "qualifiers.", 11) != 0 && strncmp(back.texts[i].name, "bounds.", 7) != 0
                          && strncmp(back.texts[i].name, "reasons.", 8) != 0,
                      "%s", back.texts[i].name);
}
END_TEST

START_TEST(csv_rows_columns_quoting)
{
    static ml_report r;
    sample(&r);
    char *text = capture(ML_FORMAT_CSV, &r);
    static table t;
    ck_assert_msg(parse_csv(text, &t), "not RFC 4180: %s", text);
    const size_t ncols = count_fields(ML_REPORT_CSV_COLUMNS);
    ck_assert_uint_eq(ncols, 17);
    ck_assert_uint_gt(t.nrows, 10);
    /* no header row: every row is data, each with every column, and carries file, kind, segment */
    for (size_t i = 0; i < t.nrows; i++) {
        ck_assert_uint_eq(t.nfields[i], ncols);
        ck_assert_str_eq(t.field[i][0], "dir, \"one\"/take-0.wav");
        ck_assert_str_eq(t.field[i][1], "audio");
        ck_assert_str_eq(t.field[i][2], "0.000000");
        ck_assert_str_eq(t.field[i][3], "10.000000");
        ck_assert_str_ne(t.field[i][4], "row_kind");
    }
    /* [rfc4180] the path is quoted, its quotes doubled */
    ck_assert_ptr_eq(strstr(text, "\"dir, \"\"one\"\"/take-0.wav\","), text);
    int k = row_of(&t, "metric", "audio.thd_pct");
    ck_assert_str_eq(cell(&t, k, "value"), "0.3000");
    ck_assert_str_eq(cell(&t, k, "unit"), "%");
    ck_assert_str_eq(cell(&t, k, "uncertainty"), "0.00021");
    ck_assert_str_eq(cell(&t, k, "bound"), "upper");
    ck_assert_str_eq(cell(&t, k, "lower_limit"), "");
    ck_assert_str_eq(cell(&t, k, "upper_limit"), "0.25");
    ck_assert_str_eq(cell(&t, k, "margin"), "-0.0500");
    ck_assert_str_eq(cell(&t, k, "verdict"), "fail");
    ck_assert_str_eq(cell(&t, k, "qualifier"), "noise-limited: the harmonics are not above the noise");
    ck_assert_str_eq(cell(&t, k, "reason"), "");
    k = row_of(&t, "metric", "hum.level_dbc");
    ck_assert_str_eq(cell(&t, k, "value"), "");
    ck_assert_str_eq(cell(&t, k, "reason"), "capture shorter than 0.4 s");
    ck_assert_str_eq(cell(&t, k, "bound"), "");
    k = row_of(&t, "metric", "modulation.index");
    ck_assert_str_eq(cell(&t, k, "lower_limit"), "0");
    ck_assert_str_eq(cell(&t, k, "upper_limit"), "1");
    ck_assert_str_eq(cell(&t, k, "margin"), "0.2140");
    ck_assert_str_eq(cell(&t, k, "verdict"), "pass");
    ck_assert_str_eq(cell(&t, k, "qualifier"), "resolution-limited, \"envelope\"");
    ck_assert_str_eq(cell(&t, row_of(&t, "metric", "modulation.sideband_asymmetry_db"), "value"), "0.00");
    ck_assert_str_eq(cell(&t, row_of(&t, "metric", "capture.dc_offset_pct"), "value"), "0.0000");
    ck_assert_str_eq(cell(&t, row_of(&t, "cell", "audio.harmonics[0].level_dbc"), "value"), "0.00");
    ck_assert_str_eq(cell(&t, row_of(&t, "text", "modulation.carrier_reference"), "text"), "mean envelope, x");
    ck_assert_str_eq(cell(&t, row_of(&t, "input", "settings"), "text"), "calibration 0 dBFS = +18.0 dBu (EBU R68)");
    ck_assert_str_eq(cell(&t, row_of(&t, "input", "sample_rate_hz"), "value"), "48000");
    ck_assert_str_eq(cell(&t, row_of(&t, "note", ""), "text"), "a note, with \"quotes\" and a comma");
    k = row_of(&t, "verdict", "");
    ck_assert_int_eq(k, (int)t.nrows - 1);
    ck_assert_str_eq(cell(&t, k, "text"), "fail");
    /* the header line: the columns, once, on demand */
    char *h = NULL;
    size_t hl = 0;
    FILE *f = open_memstream(&h, &hl);
    ck_assert_int_eq(ml_report_write_csv_header(f), ML_OK);
    fclose(f);
    ck_assert_str_eq(h, ML_REPORT_CSV_COLUMNS "\n");
    free(h);
    free_table(&t);
    free(text);
}
END_TEST

START_TEST(text_marks_uncertainty_settings)
{
    static ml_report r;
    sample(&r);
    char *text = capture(ML_FORMAT_TEXT, &r);
    /* marks beside the values, in metric order, explained under the table */
    ck_assert_ptr_nonnull(strstr(text, "< 0.3000 [1]  +- 0.00021"));
    ck_assert_ptr_nonnull(strstr(text, "n/a [2]"));
    ck_assert_ptr_nonnull(strstr(text, "0.7860 [3]  +- 0.00210"));
    ck_assert_ptr_nonnull(strstr(text, "n/a [4]"));
    ck_assert_ptr_nonnull(strstr(text, "  [1] audio.thd_pct: noise-limited: the harmonics are not above the noise "
                                       "(upper bound)\n"));
    ck_assert_ptr_nonnull(strstr(text, "  [2] hum.level_dbc: not measured: capture shorter than 0.4 s\n"));
    ck_assert_ptr_nonnull(strstr(text, "  [3] modulation.index: resolution-limited, \"envelope\"\n"));
    ck_assert_ptr_nonnull(strstr(text, "  [4] audio.snr_db: not measured: no tone above the noise (3 dB short)\n"));
    ck_assert_ptr_nonnull(strstr(text, "  settings  calibration 0 dBFS = +18.0 dBu (EBU R68)\n"));
    ck_assert_ptr_nonnull(strstr(text, "  analysis  hft248d window, offset 0.000 Hz\n"));
    ck_assert_ptr_nonnull(strstr(text, "<= 0.2500"));
    ck_assert_ptr_nonnull(strstr(text, "0.0000..1.0000")); /* the -0 minimum prints as 0 */
    no_negative_zero(text);
    free(text);
}
END_TEST

START_TEST(compare_csv_rows)
{
    static ml_report a, b;
    static ml_comparison c;
    sample(&a);
    sample(&b);
    snprintf(b.path, sizeof b.path, "b.wav");
    memset(&c, 0, sizeof c);
    c.a = &a;
    c.b = &b;
    ml_compare_row *row = &c.rows[c.nrows++];
    snprintf(row->metric, sizeof row->metric, "audio.thd_pct");
    row->unit = "%";
    row->decimals = 4;
    row->a_valid = row->b_valid = true;
    row->a = 0.3;
    row->b = 0.29999;
    row->difference = -0.00001; /* rounds to -0.0000 */
    row->uncertainty = 0.0003;
    row->verdict = "same";
    row->counted = true;
    row->has_limit = true;
    snprintf(row->limit, sizeof row->limit, "<= 0.2500");
    row = &c.rows[c.nrows++];
    snprintf(row->metric, sizeof row->metric, "hum.level_dbc");
    row->unit = "dBc";
    row->decimals = 2;
    row->verdict = "n/a";
    snprintf(c.notes[c.nnotes++], sizeof c.notes[0], "A is audio, B is \"iq\"");
    char *text = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&text, &len);
    ck_assert_int_eq(ml_compare_write(f, &c, ML_FORMAT_CSV), ML_OK);
    fclose(f);
    static table t;
    ck_assert(parse_csv(text, &t));
    ck_assert_uint_eq(t.nrows, 4); /* two metrics, a note, the verdict; no header */
    const size_t ncols = count_fields(ML_COMPARE_CSV_COLUMNS);
    for (size_t i = 0; i < t.nrows; i++) {
        ck_assert_uint_eq(t.nfields[i], ncols);
        ck_assert_str_eq(t.field[i][0], "dir, \"one\"/take-0.wav");
        ck_assert_str_eq(t.field[i][1], "b.wav");
    }
    const int kind = column(ML_COMPARE_CSV_COLUMNS, "row_kind");
    ck_assert_str_eq(t.field[0][kind], "metric");
    ck_assert_str_eq(t.field[0][column(ML_COMPARE_CSV_COLUMNS, "difference")], "0.0000");
    ck_assert_str_eq(t.field[0][column(ML_COMPARE_CSV_COLUMNS, "upper_limit")], "0.25");
    ck_assert_str_eq(t.field[0][column(ML_COMPARE_CSV_COLUMNS, "margin_a")], "-0.0500");
    ck_assert_str_eq(t.field[0][column(ML_COMPARE_CSV_COLUMNS, "counted")], "yes");
    ck_assert_str_eq(t.field[1][column(ML_COMPARE_CSV_COLUMNS, "a")], "");
    ck_assert_str_eq(t.field[2][kind], "note");
    ck_assert_str_eq(t.field[2][column(ML_COMPARE_CSV_COLUMNS, "text")], "A is audio, B is \"iq\"");
    ck_assert_str_eq(t.field[3][kind], "verdict");
    ck_assert_str_eq(t.field[3][column(ML_COMPARE_CSV_COLUMNS, "text")], "not worse");
    free_table(&t);
    free(text);
    /* the text comparison: no negative zero in the difference */
    f = open_memstream(&text, &len);
    ck_assert_int_eq(ml_compare_write(f, &c, ML_FORMAT_TEXT), ML_OK);
    fclose(f);
    no_negative_zero(text);
    free(text);
}
END_TEST

START_TEST(pdf_record_written)
{
    /* the record of a report with every kind of figure and a command line far longer than a line */
    static ml_report r;
    sample(&r);
    char cmd[3000] = "modlens measure";
    while (strlen(cmd) < sizeof cmd - 80)
        strcat(cmd, " --limits /a/very/long/folder/name/of/a/limits/profile.ini");
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    ml_plot_data p;
    ml_plot_data_init(&p);
    ck_assert_int_eq(ml_report_write_pdf(f, &r, &p, cmd, "now", "0.0.0"), ML_OK);
    fclose(f);
    ck_assert_uint_gt(len, 1000);
    ck_assert_int_eq(memcmp(buf, "%PDF-", 5), 0);
    free(buf);
}
END_TEST

/* A report with a series of three points: measured, a bound, not measured; two of them checked. */
static void series_sample(ml_report *r, ml_report_series *sr)
{
    memset(r, 0, sizeof *r);
    snprintf(r->path, sizeof r->path, "sweep.wav");
    snprintf(r->kind, sizeof r->kind, "audio");
    r->analysed_s = 12.0;
    ck_assert_int_eq(ml_report_series_alloc(sr, "sweep.points", "sweep points", 3), ML_OK);
    r->series = sr;
    ml_report_add(r, "sweep.steps", "", 0, 3);
    const double f[3] = {100, 1000, 10000}, rel[3] = {-0.5, 0.0, -3.25}, thd[3] = {1.25, 0.0042, NAN};
    for (int k = 0; k < 3; k++) {
        ml_report_point *p = ml_report_series_add(sr, 1.5 * k, 1.25);
        ck_assert_ptr_nonnull(p);
        ml_report_point_add(p, "frequency_hz", "Hz", 3, f[k]);
        ml_report_point_add(p, "relative_db", "dB", 3, rel[k]);
        ml_metric *t = ml_report_point_add(p, "thd_pct", "%", 4, thd[k]);
        if (k == 1)
            ck_assert_ptr_nonnull(ml_metric_bound(t, ML_BOUND_UPPER, "noise-limited"));
        if (k == 2)
            ck_assert_ptr_nonnull(ml_metric_missing(t, "no harmonic in the band"));
    }
    /* checks: point 0 passes its window, point 2 fails it */
    ml_check *c = &sr->points[0].checks[sr->points[0].nchecks++];
    *c = (ml_check){.metric = "relative_db", .unit = "dB", .decimals = 3, .valid = true, .value = -0.5,
                    .has_min = true, .has_max = true, .min = -1, .max = 1, .pass = true, .margin = 0.5};
    c = &sr->points[2].checks[sr->points[2].nchecks++];
    *c = (ml_check){.metric = "relative_db", .unit = "dB", .decimals = 3, .valid = true, .value = -3.25,
                    .has_min = true, .has_max = true, .min = -1, .max = 1, .pass = false, .margin = -2.25};
}

START_TEST(series_in_every_format)
{
    static ml_report r;
    ml_report_series sr;
    series_sample(&r, &sr);
    size_t total = 0, failed = 0, undecided = 0;
    ml_report_check_counts(&r, &total, &failed, &undecided);
    ck_assert_uint_eq(total, 2);
    ck_assert_uint_eq(failed, 1);
    ck_assert_uint_eq(undecided, 0);
    ck_assert_str_eq(ml_report_verdict(&r), "fail");
    ck_assert_str_eq(ml_report_point_verdict(&sr.points[0]), "pass");
    ck_assert_ptr_null(ml_report_point_verdict(&sr.points[1]));
    /* JSON: one object per point, null with its reason, the bound, the point checks */
    char *text = capture(ML_FORMAT_JSON, &r);
    json_error_t e;
    json_t *root = json_loads(text, 0, &e);
    ck_assert_msg(root != NULL, "not JSON: %s", e.text);
    json_t *pts = json_object_get(json_object_get(root, "sweep"), "points");
    ck_assert_uint_eq(json_array_size(pts), 3);
    ck_assert_double_eq_tol(json_real_value(json_object_get(json_array_get(pts, 2), "relative_db")), -3.25,
                            1e-12);
    ck_assert(json_is_null(json_object_get(json_array_get(pts, 2), "thd_pct")));
    ck_assert_double_eq_tol(json_real_value(json_object_get(json_array_get(pts, 1), "start_s")), 1.5, 1e-12);
    ck_assert_str_eq(json_string_value(json_object_get(json_array_get(pts, 0), "verdict")), "pass");
    ck_assert(json_is_null(json_object_get(json_array_get(pts, 1), "verdict")));
    json_t *why = json_object_get(json_object_get(json_object_get(root, "reasons"), "sweep"), "points");
    ck_assert_uint_eq(json_array_size(why), 3);
    ck_assert_str_eq(json_string_value(json_object_get(json_array_get(why, 2), "thd_pct")),
                     "no harmonic in the band");
    ck_assert_uint_eq(json_object_size(json_array_get(why, 0)), 0);
    json_t *b = json_object_get(json_object_get(json_object_get(root, "bounds"), "sweep"), "points");
    ck_assert_str_eq(json_string_value(json_object_get(json_array_get(b, 1), "thd_pct")), "upper");
    json_t *checks = json_object_get(root, "checks");
    ck_assert_uint_eq(json_array_size(checks), 2);
    ck_assert_str_eq(json_string_value(json_object_get(json_array_get(checks, 1), "metric")),
                     "sweep.points[2].relative_db");
    ck_assert_str_eq(json_string_value(json_object_get(root, "verdict")), "fail");
    json_decref(root);
    free(text);
    /* CSV: a metric row per point figure, with the point's span and its check */
    text = capture(ML_FORMAT_CSV, &r);
    static table t;
    ck_assert_msg(parse_csv(text, &t), "not RFC 4180: %s", text);
    int k = row_of(&t, "metric", "sweep.points[2].relative_db");
    ck_assert_int_ge(k, 0);
    ck_assert_str_eq(cell(&t, k, "start_s"), "3.000000");
    ck_assert_str_eq(cell(&t, k, "duration_s"), "1.250000");
    ck_assert_str_eq(cell(&t, k, "value"), "-3.250");
    ck_assert_str_eq(cell(&t, k, "lower_limit"), "-1");
    ck_assert_str_eq(cell(&t, k, "verdict"), "fail");
    k = row_of(&t, "metric", "sweep.points[2].thd_pct");
    ck_assert_str_eq(cell(&t, k, "value"), "");
    ck_assert_str_eq(cell(&t, k, "reason"), "no harmonic in the band");
    ck_assert_str_eq(cell(&t, row_of(&t, "metric", "sweep.points[1].thd_pct"), "bound"), "upper");
    ck_assert_str_eq(cell(&t, row_of(&t, "metric", "sweep.steps"), "start_s"), "0.000000");
    free_table(&t);
    free(text);
    /* text: the table, the marks explained, the failed check, the verdict counting point checks */
    text = capture(ML_FORMAT_TEXT, &r);
    ck_assert_ptr_nonnull(strstr(text, "sweep points (sweep.points)"));
    ck_assert_ptr_nonnull(strstr(text, "< 0.0042 [1]"));
    ck_assert_ptr_nonnull(strstr(text, "n/a [2]"));
    ck_assert_ptr_nonnull(strstr(text, "[2] sweep.points[2].thd_pct: not measured: no harmonic in the band"));
    ck_assert_ptr_nonnull(strstr(text, "FAIL sweep.points[2].relative_db = -3.250 dB, limit -1.000..1.000"));
    ck_assert_ptr_nonnull(strstr(text, "verdict: FAIL (1 of 2 checks passed)"));
    free(text);
    ml_report_series_free(&sr);
    ck_assert_ptr_null(sr.points);
}
END_TEST

START_TEST(series_bounds)
{
    ml_report_series sr;
    ck_assert_int_eq(ml_report_series_alloc(&sr, "p", "t", 0), ML_EINVAL);
    ck_assert_int_eq(ml_report_series_alloc(&sr, "p", "t", 1), ML_OK);
    ml_report_point *p = ml_report_series_add(&sr, 0, 1);
    ck_assert_ptr_nonnull(p);
    ck_assert_ptr_null(ml_report_series_add(&sr, 0, 1)); /* full */
    for (int i = 0; i < ML_REPORT_POINT_FIGURES; i++)
        ck_assert_ptr_nonnull(ml_report_point_add(p, "x", "", 0, i));
    ck_assert_ptr_null(ml_report_point_add(p, "y", "", 0, 1));
    ck_assert_ptr_null(ml_report_point_find(p, "y"));
    ck_assert_ptr_null(ml_metric_bound(NULL, ML_BOUND_UPPER, "x"));
    ml_report_series_free(&sr);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("io_report");
    TCase *tc = tcase_create("report");
    tcase_add_test(tc, numbers_without_negative_zero);
    tcase_add_test(tc, bounds_rounded_outward);
    tcase_add_test(tc, model_reasons_qualifiers_bounds);
    tcase_add_test(tc, json_reasons_qualifiers_bounds);
    tcase_add_test(tc, json_read_back);
    tcase_add_test(tc, csv_rows_columns_quoting);
    tcase_add_test(tc, text_marks_uncertainty_settings);
    tcase_add_test(tc, compare_csv_rows);
    tcase_add_test(tc, pdf_record_written);
    tcase_add_test(tc, series_in_every_format);
    tcase_add_test(tc, series_bounds);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(suite());
}
