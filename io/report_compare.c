/* Comparison writers: text table, JSON (one entry per metric), CSV.
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
        snprintf(buf, len, "%.*f", decimals, v);
    else
        snprintf(buf, len, "n/a");
}

static json_t *jnum(bool valid, double v, int decimals)
{
    if (!valid || !isfinite(v))
        return json_null();
    if (decimals == 0 && fabs(v) < 9e15)
        return json_integer((json_int_t)llround(v));
    const double scale = pow(10.0, decimals + 3); /* as the measure report: no false digits */
    return json_real(round(v * scale) / scale);
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
        char a[32], b[32], d[32], u[32];
        num(a, sizeof a, r->a_valid, r->a, r->decimals);
        num(b, sizeof b, r->b_valid, r->b, r->decimals);
        const bool both = r->a_valid && r->b_valid;
        if (both)
            snprintf(d, sizeof d, "%+.*f", r->decimals, r->difference);
        else
            snprintf(d, sizeof d, "n/a");
        num(u, sizeof u, both, r->uncertainty, r->decimals + 1);
        fprintf(f, "%-*s %13s %13s %12s %11s  %-5s %-8s", w, r->metric, a, b, d, u, r->unit, r->verdict);
        if (lim && r->has_limit)
            fprintf(f, " %-16s %-4s %-4s", r->limit, r->a_pass ? "PASS" : "FAIL", r->b_pass ? "PASS" : "FAIL");
        fputc('\n', f);
    }
    if (c->nnotes) {
        fprintf(f, "\nnotes\n");
        for (size_t i = 0; i < c->nnotes; i++)
            fprintf(f, "  - %s\n", c->notes[i]);
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
        const bool both = r->a_valid && r->b_valid;
        json_t *o = json_object();
        json_object_set_new(o, "metric", json_string(r->metric));
        json_object_set_new(o, "a", jnum(r->a_valid, r->a, r->decimals));
        json_object_set_new(o, "b", jnum(r->b_valid, r->b, r->decimals));
        json_object_set_new(o, "difference", jnum(both, r->difference, r->decimals));
        json_object_set_new(o, "uncertainty", jnum(both, r->uncertainty, r->decimals + 1));
        json_object_set_new(o, "verdict", json_string(r->verdict));
        json_object_set_new(o, "unit", json_string(r->unit));
        json_object_set_new(o, "counted", json_boolean(r->counted));
        if (r->has_limit) {
            json_object_set_new(o, "limit", json_string(r->limit));
            json_object_set_new(o, "a_pass", json_boolean(r->a_pass));
            json_object_set_new(o, "b_pass", json_boolean(r->b_pass));
        }
        json_array_append_new(arr, o);
    }
    json_object_set_new(root, "metrics", arr);
    json_object_set_new(root, "verdict", json_string(overall(c)));
    return ml_report_json_finish(f, root, c->notes, c->nnotes);
}

static ml_status write_csv(FILE *f, const ml_comparison *c)
{
    fprintf(f, "metric,a,b,difference,uncertainty,verdict,unit\n");
    for (size_t i = 0; i < c->nrows; i++) {
        const ml_compare_row *r = &c->rows[i];
        const bool both = r->a_valid && r->b_valid;
        char a[32] = "", b[32] = "", d[32] = "", u[32] = "";
        if (r->a_valid)
            snprintf(a, sizeof a, "%.*f", r->decimals, r->a);
        if (r->b_valid)
            snprintf(b, sizeof b, "%.*f", r->decimals, r->b);
        if (both) {
            snprintf(d, sizeof d, "%.*f", r->decimals, r->difference);
            snprintf(u, sizeof u, "%.*f", r->decimals + 1, r->uncertainty);
        }
        fprintf(f, "%s,%s,%s,%s,%s,%s,%s\n", r->metric, a, b, d, u, r->verdict, r->unit);
    }
    return ferror(f) ? ML_EIO : ML_OK;
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
