/* CSV report: one row per figure, table cell, text field, input line and note, and one verdict
 * row, each carrying the file, its kind and the segment; no header row (io/report.h).
 * SPDX-License-Identifier: MIT
 */
#include <math.h>
#include <string.h>

#include "io/report_internal.h"

/* One row in the column order of ML_REPORT_CSV_COLUMNS; NULL fields are empty. */
typedef struct {
    const char *row_kind, *name, *value, *unit, *uncertainty, *bound, *lower, *upper, *margin, *verdict,
        *qualifier, *reason, *text;
} row;

static void put(FILE *f, const ml_report *r, const char *start, const char *dur, const row *w)
{
    const char *field[] = {r->path,        r->kind,  start,    dur,       w->row_kind,  w->name,
                           w->value,       w->unit,  w->uncertainty,      w->bound,     w->lower,
                           w->upper,       w->margin, w->verdict,         w->qualifier, w->reason,
                           w->text};
    const size_t n = sizeof field / sizeof field[0];
    for (size_t i = 0; i < n; i++)
        ml_csv_field(f, field[i] ? field[i] : "", i + 1 < n ? ',' : '\n');
}

/* A limit as the user gave it: enough digits to be that number again, no negative zero. */
static void limit_number(char *buf, size_t len, double v)
{
    snprintf(buf, len, "%.15g", v == 0 ? 0.0 : v);
}

/* One figure's row: named name, checked by c (or NULL). */
static void figure_row(FILE *f, const ml_report *r, const char *start, const char *dur, const ml_metric *m,
                       const char *name, const ml_check *c);

static void metric_row(FILE *f, const ml_report *r, const char *start, const char *dur, const ml_metric *m)
{
    figure_row(f, r, start, dur, m, m->name, ml_report_check_for(r, m->name));
}

static void figure_row(FILE *f, const ml_report *r, const char *start, const char *dur, const ml_metric *m,
                       const char *name, const ml_check *c)
{
    char val[48] = "", u[48] = "", lo[40] = "", hi[40] = "", margin[48] = "", q[ML_REPORT_WHY_LEN],
         why[ML_REPORT_WHY_LEN];
    if (m->valid)
        ml_report_bound_number(val, sizeof val, m->value, m->decimals, m->bound);
    if (m->valid && m->has_u) {
        ml_report_number(u, sizeof u, m->u, m->decimals + 1, false);
        if (strspn(u, "0.") == strlen(u) && m->u > 0) /* below that precision: two digits, not "0.000" */
            snprintf(u, sizeof u, "%.2g", m->u);
    }
    ml_report_unsign_zeros(q, sizeof q, m->valid ? m->qualifier : "");
    ml_report_unsign_zeros(why, sizeof why, m->valid ? "" : m->reason);
    const char *verdict = NULL;
    if (c) {
        if (c->has_min)
            limit_number(lo, sizeof lo, c->min);
        if (c->has_max)
            limit_number(hi, sizeof hi, c->max);
        if (c->valid)
            ml_report_number(margin, sizeof margin, c->margin, c->decimals, false);
        verdict = c->pass ? "pass" : c->undecided ? "undecided" : "fail";
    }
    put(f, r, start, dur,
        &(row){.row_kind = "metric", .name = name, .value = val, .unit = m->unit, .uncertainty = u,
               .bound = m->valid ? ml_report_bound_name(m->bound) : "", .lower = lo, .upper = hi,
               .margin = margin, .verdict = verdict, .qualifier = q, .reason = why});
}

static void input_rows(FILE *f, const ml_report *r, const char *start, const char *dur)
{
    char n[64], t[ML_REPORT_SETTINGS_LEN + 320];
    put(f, r, start, dur, &(row){.row_kind = "input", .name = "format", .text = r->format});
    ml_report_number(n, sizeof n, r->sample_rate_hz, 0, false);
    put(f, r, start, dur, &(row){.row_kind = "input", .name = "sample_rate_hz", .value = n, .unit = "Hz"});
    snprintf(n, sizeof n, "%d", r->channels);
    put(f, r, start, dur, &(row){.row_kind = "input", .name = "channels", .value = n});
    snprintf(n, sizeof n, "%d", r->channel);
    put(f, r, start, dur, &(row){.row_kind = "input", .name = "channel", .value = n});
    snprintf(n, sizeof n, "%lld", (long long)r->frames);
    put(f, r, start, dur, &(row){.row_kind = "input", .name = "frames", .value = n});
    ml_report_number(n, sizeof n, r->duration_s, 6, false);
    put(f, r, start, dur, &(row){.row_kind = "input", .name = "duration_s", .value = n, .unit = "s"});
    ml_report_unsign_zeros(t, sizeof t, r->kind_reason);
    put(f, r, start, dur, &(row){.row_kind = "input", .name = "kind_reason", .text = t});
    if (r->analysis[0]) {
        ml_report_unsign_zeros(t, sizeof t, r->analysis);
        put(f, r, start, dur, &(row){.row_kind = "input", .name = "analysis", .text = t});
    }
    if (r->settings[0]) {
        ml_report_unsign_zeros(t, sizeof t, r->settings);
        put(f, r, start, dur, &(row){.row_kind = "input", .name = "settings", .text = t});
    }
    if (r->limits_path[0])
        put(f, r, start, dur, &(row){.row_kind = "input", .name = "limits", .text = r->limits_path});
    if (r->u_blocks > 0) {
        snprintf(n, sizeof n, "%zu", r->u_blocks);
        put(f, r, start, dur, &(row){.row_kind = "input", .name = "uncertainty_blocks", .value = n});
        ml_report_number(n, sizeof n, r->u_block_s, 6, false);
        put(f, r, start, dur, &(row){.row_kind = "input", .name = "uncertainty_block_s", .value = n, .unit = "s"});
    }
}

ml_status ml_report_write_csv(FILE *f, const ml_report *r)
{
    char start[48], dur[48];
    ml_report_number(start, sizeof start, r->start_s, 6, false);
    ml_report_number(dur, sizeof dur, r->analysed_s, 6, false);
    input_rows(f, r, start, dur);
    for (size_t i = 0; i < r->nmetrics; i++)
        metric_row(f, r, start, dur, &r->metrics[i]);
    for (size_t i = 0; i < r->ntexts; i++) {
        char t[sizeof r->texts[0].value];
        ml_report_unsign_zeros(t, sizeof t, r->texts[i].value);
        put(f, r, start, dur, &(row){.row_kind = "text", .name = r->texts[i].name, .text = t});
    }
    for (size_t t = 0; t < r->ntables; t++) {
        const ml_table *tb = &r->tables[t];
        for (size_t i = 0; i < tb->nrows; i++)
            for (size_t c = 0; c < tb->ncols; c++) {
                char name[160], val[48];
                snprintf(name, sizeof name, "%s[%zu].%s", tb->path, i, tb->cols[c]);
                ml_report_number(val, sizeof val, tb->cell[i][c], tb->decimals[c], false);
                put(f, r, start, dur, &(row){.row_kind = "cell", .name = name, .value = val});
            }
    }
    const ml_report_series *sr = r->series;
    for (size_t k = 0; sr && k < sr->npoints; k++) {
        const ml_report_point *pt = &sr->points[k];
        char ps[48], pd[48];
        ml_report_number(ps, sizeof ps, pt->start_s, 6, false);
        ml_report_number(pd, sizeof pd, pt->duration_s, 6, false);
        for (size_t i = 0; i < pt->nfigures; i++) {
            const ml_metric *m = &pt->figures[i];
            const ml_check *c = NULL;
            for (size_t j = 0; j < pt->nchecks; j++)
                if (strcmp(pt->checks[j].metric, m->name) == 0)
                    c = &pt->checks[j];
            char name[160];
            ml_report_point_name(r, k, m->name, name, sizeof name);
            figure_row(f, r, ps, pd, m, name, c);
        }
    }
    for (size_t i = 0; i < r->nnotes; i++) {
        char t[ML_REPORT_NOTE_LEN];
        ml_report_unsign_zeros(t, sizeof t, r->notes[i]);
        put(f, r, start, dur, &(row){.row_kind = "note", .text = t});
    }
    put(f, r, start, dur, &(row){.row_kind = "verdict", .text = ml_report_verdict(r)});
    return ferror(f) ? ML_EIO : ML_OK;
}
