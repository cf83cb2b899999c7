/* Comparison writers: text table, JSON (one entry per metric), CSV (no header row, as the
 * measurement's: io/compare.h).
 * SPDX-License-Identifier: MIT
 */
#include <jansson.h>
#include <math.h>
#include <string.h>

#include "io/compare.h"
#include "io/report_internal.h"

static void num(char *buf, size_t len, bool valid, double v, int decimals)
{
    if (valid)
        ml_report_number(buf, len, v, decimals, false);
    else
        snprintf(buf, len, "n/a");
}

/* A side's value with its bound ("< 0.3000"), "n/a" when not measured. */
static void side_num(char *buf, size_t len, bool valid, double v, ml_bound b, int decimals)
{
    char n[40];
    if (valid)
        ml_report_bound_number(n, sizeof n, v, decimals, b);
    else
        num(n, sizeof n, valid, v, decimals);
    snprintf(buf, len, "%s%s", valid && b == ML_BOUND_UPPER ? "< " : valid && b == ML_BOUND_LOWER ? "> " : "",
             n);
}

static json_t *jnum(bool valid, double v, int decimals)
{
    return valid ? ml_report_json_number(v, decimals) : json_null(); /* as the measure report */
}

/* The limit check on this row's metric: A's, else B's (both sides get the same limits). */
static const ml_check *check_of(const ml_comparison *c, const ml_compare_row *r)
{
    const ml_check *k = c->a ? ml_report_check_for(c->a, r->metric) : NULL;
    return k ? k : c->b ? ml_report_check_for(c->b, r->metric) : NULL;
}

/* The row's limit as text ("<= 1.0000"), from the check where there is one. */
static void limit_text(const ml_comparison *c, const ml_compare_row *r, char *buf, size_t len)
{
    const ml_check *k = check_of(c, r);
    if (k)
        ml_report_limit_text(k, buf, len);
    else
        snprintf(buf, len, "%s", r->limit);
}

static const char *overall(const ml_comparison *c)
{
    return c->nworse > 0 ? "worse" : "not worse";
}

static ml_status write_text(FILE *f, const ml_comparison *c)
{
    fprintf(f, "modlens comparison\n");
    fprintf(f, "  A  %s (%s, %.3f s)\n", c->a->path, c->a->kind, c->a->analysed_s);
    fprintf(f, "  B  %s (%s, %.3f s)\n", c->b->path, c->b->kind, c->b->analysed_s);
    if (c->limits_path[0])
        fprintf(f, "  limits  %s (only the limited metrics decide the exit status)\n", c->limits_path);
    int w = 24;
    for (size_t i = 0; i < c->nrows; i++)
        if ((int)strlen(c->rows[i].metric) > w)
            w = (int)strlen(c->rows[i].metric);
    const bool lim = c->limits_path[0] != '\0';
    fprintf(f, "\n%-*s %13s %13s %12s %11s  %-5s %-8s", w, "metric", "A", "B", "B - A", "+-", "unit", "verdict");
    if (lim)
        fprintf(f, " %-16s %-4s %-4s", "limit", "A", "B");
    fputc('\n', f);
    for (size_t i = 0; i < c->nrows; i++) {
        const ml_compare_row *r = &c->rows[i];
        char a[48], b[48], d[32], u[32];
        side_num(a, sizeof a, r->a_valid, r->a, r->a_bound, r->decimals);
        side_num(b, sizeof b, r->b_valid, r->b, r->b_bound, r->decimals);
        const bool both =
            r->a_valid && r->b_valid && r->a_bound == ML_BOUND_NONE && r->b_bound == ML_BOUND_NONE;
        if (both)
            ml_report_number(d, sizeof d, r->difference, r->decimals, true);
        else
            snprintf(d, sizeof d, "n/a");
        num(u, sizeof u, both, r->uncertainty, r->decimals + 1);
        fprintf(f, "%-*s %13s %13s %12s %11s  %-5s %-8s", w, r->metric, a, b, d, u, r->unit, r->verdict);
        if (lim && r->has_limit) {
            char lt[96];
            limit_text(c, r, lt, sizeof lt);
            fprintf(f, " %-16s %-4s %-4s", lt, r->a_pass ? "PASS" : "FAIL", r->b_pass ? "PASS" : "FAIL");
        }
        fputc('\n', f);
    }
    if (c->nnotes) {
        fprintf(f, "\nnotes\n");
        for (size_t i = 0; i < c->nnotes; i++) {
            char t[ML_REPORT_NOTE_LEN];
            ml_report_unsign_zeros(t, sizeof t, c->notes[i]);
            fprintf(f, "  - %s\n", t);
        }
    }
    size_t counted = 0;
    for (size_t i = 0; i < c->nrows; i++)
        counted += c->rows[i].counted;
    if (c->nworse)
        fprintf(f, "\nverdict: B is WORSE than A on %zu of %zu compared metrics\n", c->nworse, counted);
    else
        fprintf(f, "\nverdict: B is not worse than A on any of %zu compared metrics\n", counted);
    return ferror(f) ? ML_EIO : ML_OK;
}

static json_t *side(const ml_report *r)
{
    json_t *o = json_object();
    json_object_set_new(o, "path", json_string(r->path));
    json_object_set_new(o, "kind", json_string(r->kind));
    json_object_set_new(o, "sample_rate_hz", json_real(r->sample_rate_hz));
    json_object_set_new(o, "analysed_s", jnum(true, r->analysed_s, 6));
    json_object_set_new(o, "uncertainty_blocks", json_integer((json_int_t)r->u_blocks));
    return o;
}

static ml_status write_json(FILE *f, const ml_comparison *c)
{
    json_t *root = json_object();
    if (root == NULL)
        return ML_ENOMEM;
    json_object_set_new(root, "a", side(c->a));
    json_object_set_new(root, "b", side(c->b));
    if (c->limits_path[0])
        json_object_set_new(root, "limits", json_string(c->limits_path));
    json_t *arr = json_array();
    for (size_t i = 0; i < c->nrows; i++) {
        const ml_compare_row *r = &c->rows[i];
        const bool both =
            r->a_valid && r->b_valid && r->a_bound == ML_BOUND_NONE && r->b_bound == ML_BOUND_NONE;
        json_t *o = json_object();
        json_object_set_new(o, "metric", json_string(r->metric));
        json_object_set_new(o, "a", jnum(r->a_valid, r->a, r->decimals));
        json_object_set_new(o, "b", jnum(r->b_valid, r->b, r->decimals));
        json_object_set_new(o, "difference", jnum(both, r->difference, r->decimals));
        json_object_set_new(o, "uncertainty", jnum(both, r->uncertainty, r->decimals + 1));
        json_object_set_new(o, "verdict", json_string(r->verdict));
        if (r->a_valid && r->a_bound != ML_BOUND_NONE)
            json_object_set_new(o, "a_bound", json_string(ml_report_bound_name(r->a_bound)));
        if (r->b_valid && r->b_bound != ML_BOUND_NONE)
            json_object_set_new(o, "b_bound", json_string(ml_report_bound_name(r->b_bound)));
        json_object_set_new(o, "unit", json_string(r->unit));
        json_object_set_new(o, "counted", json_boolean(r->counted));
        if (r->has_limit) {
            char lt[96];
            limit_text(c, r, lt, sizeof lt);
            json_object_set_new(o, "limit", json_string(lt));
            json_object_set_new(o, "a_pass", json_boolean(r->a_pass));
            json_object_set_new(o, "b_pass", json_boolean(r->b_pass));
        }
        json_array_append_new(arr, o);
    }
    json_object_set_new(root, "metrics", arr);
    json_object_set_new(root, "verdict", json_string(overall(c)));
    return ml_report_json_finish(f, root, c->notes, c->nnotes);
}

/* A limit as the user gave it: enough digits to be that number again, no negative zero. */
static void limit_number(char *buf, size_t len, bool has, double v)
{
    if (has)
        snprintf(buf, len, "%.15g", v == 0 ? 0.0 : v);
    else
        buf[0] = '\0';
}

/* One row in the column order of ML_COMPARE_CSV_COLUMNS (fields: the columns after row_kind). */
static void csv_row(FILE *f, const ml_comparison *c, const char *row_kind, const char *const *fields, size_t n)
{
    ml_csv_field(f, c->a->path, ',');
    ml_csv_field(f, c->b->path, ',');
    ml_csv_field(f, c->a->kind, ',');
    ml_csv_field(f, c->b->kind, ',');
    ml_csv_field(f, row_kind, ',');
    for (size_t i = 0; i < n; i++)
        ml_csv_field(f, fields[i] ? fields[i] : "", i + 1 < n ? ',' : '\n');
}

enum { COLS_AFTER_KIND = 17 }; /* metric .. text, bound_a, bound_b */
#define TEXT_COL 14                  /* the text column among them                           */

static ml_status write_csv(FILE *f, const ml_comparison *c)
{
    for (size_t i = 0; i < c->nrows; i++) {
        const ml_compare_row *r = &c->rows[i];
        const bool both =
            r->a_valid && r->b_valid && r->a_bound == ML_BOUND_NONE && r->b_bound == ML_BOUND_NONE;
        char a[48] = "", b[48] = "", d[48] = "", u[48] = "", lo[40] = "", hi[40] = "", ma[48] = "", mb[48] = "";
        if (r->a_valid)
            ml_report_number(a, sizeof a, r->a, r->decimals, false);
        if (r->b_valid)
            ml_report_number(b, sizeof b, r->b, r->decimals, false);
        if (both) {
            ml_report_number(d, sizeof d, r->difference, r->decimals, false);
            ml_report_number(u, sizeof u, r->uncertainty, r->decimals + 1, false);
        }
        const ml_check *k = check_of(c, r);
        const ml_check *ka = ml_report_check_for(c->a, r->metric), *kb = ml_report_check_for(c->b, r->metric);
        if (k) {
            limit_number(lo, sizeof lo, k->has_min, k->min);
            limit_number(hi, sizeof hi, k->has_max, k->max);
        }
        if (ka && ka->valid)
            ml_report_number(ma, sizeof ma, ka->margin, ka->decimals, false);
        if (kb && kb->valid)
            ml_report_number(mb, sizeof mb, kb->margin, kb->decimals, false);
        const char *pa = r->has_limit ? (r->a_pass ? "pass" : "fail") : "";
        const char *pb = r->has_limit ? (r->b_pass ? "pass" : "fail") : "";
        const char *fields[COLS_AFTER_KIND] = {r->metric, r->unit, a, b, d, u, r->verdict,
                                               r->counted ? "yes" : "no", lo, hi, ma, mb, pa, pb, "",
                                               r->a_valid ? ml_report_bound_name(r->a_bound) : "",
                                               r->b_valid ? ml_report_bound_name(r->b_bound) : ""};
        csv_row(f, c, "metric", fields, COLS_AFTER_KIND);
    }
    for (size_t i = 0; i < c->nnotes; i++) {
        char t[ML_REPORT_NOTE_LEN];
        ml_report_unsign_zeros(t, sizeof t, c->notes[i]);
        const char *fields[COLS_AFTER_KIND] = {[TEXT_COL] = t};
        csv_row(f, c, "note", fields, COLS_AFTER_KIND);
    }
    const char *fields[COLS_AFTER_KIND] = {[TEXT_COL] = overall(c)};
    csv_row(f, c, "verdict", fields, COLS_AFTER_KIND);
    return ferror(f) ? ML_EIO : ML_OK;
}

ml_status ml_compare_write_csv_header(FILE *f)
{
    if (f == NULL)
        return ML_EINVAL;
    fputs(ML_COMPARE_CSV_COLUMNS "\n", f);
    return fflush(f) == 0 && !ferror(f) ? ML_OK : ML_EIO;
}

ml_status ml_compare_write(FILE *f, const ml_comparison *c, ml_report_format fmt)
{
    if (f == NULL || c == NULL)
        return ML_EINVAL;
    ml_status st;
    switch (fmt) {
    case ML_FORMAT_TEXT: st = write_text(f, c); break;
    case ML_FORMAT_JSON: st = write_json(f, c); break;
    case ML_FORMAT_CSV: st = write_csv(f, c); break;
    default: return ML_EINVAL;
    }
    if (st == ML_OK && (fflush(f) != 0 || ferror(f)))
        st = ML_EIO;
    return st;
}
