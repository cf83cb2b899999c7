/* JSON report through jansson: dotted metric names become nested objects.
 * SPDX-License-Identifier: MIT
 */
#include <jansson.h>
#include <math.h>
#include <string.h>

#include "io/report_internal.h"

/* The object at dotted path's parent, created as needed; *leaf gets the last component. */
static json_t *parent_of(json_t *root, const char *path, char *leaf, size_t leaf_len)
{
    char buf[160];
    snprintf(buf, sizeof buf, "%s", path);
    json_t *obj = root;
    char *start = buf;
    for (char *dot = strchr(start, '.'); dot; dot = strchr(start, '.')) {
        *dot = '\0';
        json_t *child = json_object_get(obj, start);
        if (!json_is_object(child)) {
            child = json_object();
            json_object_set_new(obj, start, child);
        }
        obj = child;
        start = dot + 1;
    }
    size_t n = strlen(start);
    if (n >= leaf_len)
        n = leaf_len - 1;
    memcpy(leaf, start, n);
    leaf[n] = '\0';
    return obj;
}

/* Rounds to the displayed precision plus three digits, so JSON carries no false digits; a value
 * that rounds to zero is 0, never -0. */
json_t *ml_report_json_number(double v, int decimals)
{
    if (!isfinite(v))
        return json_null();
    if (decimals <= 0 && fabs(v) < 9e15)
        return json_integer((json_int_t)llround(v));
    double scale = pow(10.0, decimals + 3);
    double r = round(v * scale) / scale;
    if (!isfinite(r))
        r = v;
    return json_real(r == 0 ? 0.0 : r);
}

#define number ml_report_json_number

/* A JSON string of free text, its negative zeros unsigned. */
static json_t *text(const char *s)
{
    char t[ML_REPORT_SETTINGS_LEN + 320];
    ml_report_unsign_zeros(t, sizeof t, s);
    return json_string(t);
}

/* The reason (which 0), qualifier (1) or bound (2) of m; "" when it has none. */
static const char *why_of(const ml_metric *m, int which)
{
    return which == 0   ? (m->valid ? "" : m->reason)
           : which == 1 ? (m->valid ? m->qualifier : "")
                        : (m->valid ? ml_report_bound_name(m->bound) : "");
}

/* The "reasons", "qualifiers" or "bounds" object: one string per metric that has one, nested
 * like the metrics; a series gets an array of one object per point at its path. */
static json_t *whys(const ml_report *r, int which)
{
    json_t *root = json_object();
    for (size_t i = 0; i < r->nmetrics; i++) {
        const ml_metric *m = &r->metrics[i];
        const char *s = why_of(m, which);
        if (s[0] == '\0')
            continue;
        char leaf[64];
        json_t *p = parent_of(root, m->name, leaf, sizeof leaf);
        json_object_set_new(p, leaf, text(s));
    }
    const ml_report_series *sr = r->series;
    if (sr != NULL) {
        json_t *arr = json_array();
        for (size_t k = 0; k < sr->npoints; k++) {
            json_t *o = json_object();
            for (size_t i = 0; i < sr->points[k].nfigures; i++) {
                const ml_metric *m = &sr->points[k].figures[i];
                if (why_of(m, which)[0])
                    json_object_set_new(o, m->name, text(why_of(m, which)));
            }
            json_array_append_new(arr, o);
        }
        char leaf[64];
        json_object_set_new(parent_of(root, sr->path, leaf, sizeof leaf), leaf, arr);
    }
    return root;
}

/* The series' points: one object per point at the series' path. */
static void series(json_t *root, const ml_report_series *sr)
{
    json_t *arr = json_array();
    for (size_t k = 0; k < sr->npoints; k++) {
        const ml_report_point *pt = &sr->points[k];
        json_t *o = json_object();
        for (size_t i = 0; i < pt->nfigures; i++) {
            const ml_metric *m = &pt->figures[i];
            json_object_set_new(o, m->name, m->valid ? number(m->value, m->decimals) : json_null());
        }
        json_object_set_new(o, "start_s", number(pt->start_s, 6));
        json_object_set_new(o, "duration_s", number(pt->duration_s, 6));
        const char *v = ml_report_point_verdict(pt);
        json_object_set_new(o, "verdict", v ? json_string(v) : json_null());
        json_array_append_new(arr, o);
    }
    char leaf[64];
    json_object_set_new(parent_of(root, sr->path, leaf, sizeof leaf), leaf, arr);
}

static json_t *check_json(const ml_check *c, const char *metric)
{
    json_t *o = json_object();
    json_object_set_new(o, "metric", json_string(metric));
    json_object_set_new(o, "value", c->valid ? number(c->value, c->decimals) : json_null());
    json_object_set_new(o, "min", c->has_min ? json_real(c->min == 0 ? 0.0 : c->min) : json_null());
    json_object_set_new(o, "max", c->has_max ? json_real(c->max == 0 ? 0.0 : c->max) : json_null());
    json_object_set_new(o, "pass", json_boolean(c->pass));
    json_object_set_new(o, "undecided", json_boolean(c->undecided));
    json_object_set_new(o, "margin", c->valid ? number(c->margin, c->decimals) : json_null());
    return o;
}

ml_status ml_report_write_json(FILE *f, const ml_report *r)
{
    json_t *root = json_object();
    if (root == NULL)
        return ML_ENOMEM;
    json_t *in = json_object();
    json_object_set_new(root, "input", in);
    json_object_set_new(in, "path", json_string(r->path));
    json_object_set_new(in, "kind", json_string(r->kind));
    json_object_set_new(in, "kind_reason", text(r->kind_reason));
    json_object_set_new(in, "format", json_string(r->format));
    json_object_set_new(in, "sample_rate_hz", json_real(r->sample_rate_hz));
    json_object_set_new(in, "channels", json_integer(r->channels));
    json_object_set_new(in, "channel", json_integer(r->channel));
    json_object_set_new(in, "frames", json_integer(r->frames));
    json_object_set_new(in, "duration_s", number(r->duration_s, 6));
    json_object_set_new(in, "start_s", number(r->start_s, 6));
    json_object_set_new(in, "analysed_s", number(r->analysed_s, 6));
    if (r->analysis[0])
        json_object_set_new(root, "analysis", text(r->analysis));
    if (r->settings[0]) { /* an object, so that a saved report's reader sees a group of text */
        json_t *set = json_object();
        json_object_set_new(set, "in_force", text(r->settings));
        json_object_set_new(root, "settings", set);
    }
    for (size_t i = 0; i < r->nmetrics; i++) {
        const ml_metric *m = &r->metrics[i];
        char leaf[64];
        json_t *p = parent_of(root, m->name, leaf, sizeof leaf);
        json_object_set_new(p, leaf, m->valid ? number(m->value, m->decimals) : json_null());
    }
    for (size_t i = 0; i < r->ntexts; i++) {
        char leaf[64];
        json_t *p = parent_of(root, r->texts[i].name, leaf, sizeof leaf);
        json_object_set_new(p, leaf, text(r->texts[i].value));
    }
    for (size_t t = 0; t < r->ntables; t++) {
        const ml_table *tb = &r->tables[t];
        char leaf[64];
        json_t *p = parent_of(root, tb->path, leaf, sizeof leaf);
        json_t *arr = json_array();
        for (size_t i = 0; i < tb->nrows; i++) {
            json_t *row = json_object();
            for (size_t c = 0; c < tb->ncols; c++)
                json_object_set_new(row, tb->cols[c], number(tb->cell[i][c], tb->decimals[c]));
            json_array_append_new(arr, row);
        }
        json_object_set_new(p, leaf, arr);
    }
    if (r->series)
        series(root, r->series);
    if (r->u_blocks > 0) {
        /* the 95 % half-widths, nested like the metrics themselves */
        json_t *uroot = json_object();
        for (size_t i = 0; i < r->nmetrics; i++) {
            const ml_metric *m = &r->metrics[i];
            if (!m->valid || !m->has_u)
                continue;
            char leaf[64];
            json_t *p = parent_of(uroot, m->name, leaf, sizeof leaf);
            json_object_set_new(p, leaf, number(m->u, m->decimals + 1));
        }
        json_object_set_new(root, "uncertainty", uroot);
        json_t *um = json_object();
        json_object_set_new(um, "blocks", json_integer((json_int_t)r->u_blocks));
        json_object_set_new(um, "block_s", number(r->u_block_s, 3));
        json_object_set_new(um, "coverage", json_real(0.95));
        json_object_set_new(root, "uncertainty_method", um);
    }
    if (r->card_checked) { /* the figures within reach of the sound card's own floor */
        json_t *cl = json_array();
        for (size_t i = 0; i < r->ncard_limited; i++)
            json_array_append_new(cl, json_string(r->card_limited[i]));
        json_object_set_new(root, "card_limited", cl);
    }
    json_object_set_new(root, "reasons", whys(r, 0));
    json_object_set_new(root, "qualifiers", whys(r, 1));
    json_object_set_new(root, "bounds", whys(r, 2));
    json_t *checks = json_array();
    for (size_t i = 0; i < r->nchecks; i++)
        json_array_append_new(checks, check_json(&r->checks[i], r->checks[i].metric));
    for (size_t k = 0; r->series && k < r->series->npoints; k++)
        for (size_t i = 0; i < r->series->points[k].nchecks; i++) {
            const ml_check *c = &r->series->points[k].checks[i];
            char name[160];
            ml_report_point_name(r, k, c->metric, name, sizeof name);
            json_array_append_new(checks, check_json(c, name));
        }
    json_object_set_new(root, "checks", checks);
    json_object_set_new(root, "verdict", json_string(ml_report_verdict(r)));
    if (r->limits_path[0])
        json_object_set_new(root, "limits", json_string(r->limits_path));
    return ml_report_json_finish(f, root, r->notes, r->nnotes);
}

ml_status ml_report_json_finish(FILE *f, json_t *root, const char (*notes)[ML_REPORT_NOTE_LEN], size_t nnotes)
{
    json_t *arr = json_array();
    for (size_t i = 0; i < nnotes; i++)
        json_array_append_new(arr, text(notes[i]));
    json_object_set_new(root, "notes", arr);
    int rc = json_dumpf(root, f, JSON_INDENT(2) | JSON_PRESERVE_ORDER | JSON_REAL_PRECISION(12));
    fputc('\n', f);
    json_decref(root);
    return rc == 0 && !ferror(f) ? ML_OK : ML_EIO;
}
