/* Human-readable report: input summary, metric table with uncertainties and limits, the marks'
 * explanations, tables, notes, verdict.
 * SPDX-License-Identifier: MIT
 */
#include <string.h>

#include "io/report_internal.h"

static void header(FILE *f, const ml_report *r)
{
    char t[ML_REPORT_SETTINGS_LEN + 320];
    fprintf(f, "modlens measurement of %s\n", r->path);
    fprintf(f, "  input     %s, %.0f Hz, %d channel%s (analysed: %d), %.3f s (%lld frames)\n", r->format,
            r->sample_rate_hz, r->channels, r->channels == 1 ? "" : "s", r->channel, r->duration_s,
            (long long)r->frames);
    fprintf(f, "  segment   %.3f s from %.3f s\n", r->analysed_s, r->start_s);
    ml_report_unsign_zeros(t, sizeof t, r->kind_reason);
    fprintf(f, "  kind      %s (%s)\n", r->kind, t);
    if (r->analysis[0]) {
        ml_report_unsign_zeros(t, sizeof t, r->analysis);
        fprintf(f, "  analysis  %s\n", t);
    }
    if (r->settings[0]) {
        ml_report_unsign_zeros(t, sizeof t, r->settings);
        fprintf(f, "  settings  %s\n", t);
    }
    if (r->limits_path[0])
        fprintf(f, "  limits    %s\n", r->limits_path);
    bool with_u = false;
    for (size_t i = 0; i < r->nmetrics; i++)
        with_u |= r->metrics[i].valid && r->metrics[i].has_u;
    if (with_u)
        fprintf(f, "  +-        the 95 %% interval from the spread over %zu blocks of %.2f s\n", r->u_blocks,
                r->u_block_s);
    for (size_t i = 0; i < r->ntexts; i++) {
        ml_report_unsign_zeros(t, sizeof t, r->texts[i].value);
        fprintf(f, "  %-32s %s\n", r->texts[i].name, t);
    }
}

static void metrics(FILE *f, const ml_report *r)
{
    int w = 32; /* name column: as wide as the longest name */
    bool with_u = false, with_mark = false;
    for (size_t i = 0; i < r->nmetrics; i++) {
        const ml_metric *m = &r->metrics[i];
        if ((int)strlen(m->name) > w)
            w = (int)strlen(m->name);
        with_u |= m->valid && m->has_u;
        with_mark |= ml_report_mark(r, i) > 0;
    }
    /* the uncertainty and mark columns only when some metric has one */
    const int uw = with_u ? 12 : 0, mw = with_mark ? 5 : 0;
    fprintf(f, "\n%-*s %14s%-*s%-*s  %-5s %-16s %-6s %s\n", w, "metric", "value", mw, "", uw, with_u ? " +-" : "",
            "unit", "limit", "result", "margin");
    for (size_t i = 0; i < r->nmetrics; i++) {
        const ml_metric *m = &r->metrics[i];
        char val[64], u[48] = "", mark[16] = "", lim[96] = "", margin[48] = "";
        const char *res = "";
        ml_report_value_text(m, val, sizeof val);
        if (m->valid && m->has_u) {
            u[0] = ' ';
            ml_report_u_text(m, u + 1, sizeof u - 1);
        }
        const int k = ml_report_mark(r, i);
        if (k > 0)
            snprintf(mark, sizeof mark, " [%d]", k);
        const ml_check *c = ml_report_check_for(r, m->name);
        if (c) {
            ml_report_limit_text(c, lim, sizeof lim);
            res = c->pass ? "PASS" : c->undecided ? "UNDECIDED" : "FAIL";
            if (c->valid)
                ml_report_number(margin, sizeof margin, c->margin, c->decimals, true);
        }
        fprintf(f, "%-*s %14s%-*s%-*s  %-5s %-16s %-6s %s\n", w, m->name, val, mw, mark, uw, u, m->unit, lim, res,
                margin);
    }
    bool any = false;
    for (size_t i = 0; i < r->nmetrics; i++) {
        const int k = ml_report_mark(r, i);
        if (k == 0)
            continue;
        if (!any)
            fputc('\n', f);
        any = true;
        char line[ML_REPORT_WHY_LEN + 256];
        ml_report_mark_line(k, r->metrics[i].name, &r->metrics[i], line, sizeof line);
        fprintf(f, "  %s\n", line);
    }
}

/* A mark explained, on its own indented line of the file ctx. */
static void mark_line(void *ctx, const char *line)
{
    fprintf((FILE *)ctx, "  %s\n", line);
}

/* The series: one line per point (its figures, marks beside them, the result of its checks), the
 * marks' explanations, and the failed checks with their limits. */
static void series(FILE *f, const ml_report *r)
{
    const ml_report_series *sr = r->series;
    if (sr == NULL)
        return;
    fprintf(f, "\n%s (%s)\n  %5s", sr->title, sr->path, "point");
    const ml_report_point *p0 = sr->npoints ? &sr->points[0] : NULL;
    for (size_t i = 0; p0 && i < p0->nfigures; i++)
        fprintf(f, " %16s", p0->figures[i].name);
    fprintf(f, "  %s\n", "result");
    if (sr->npoints == 0)
        fprintf(f, "  (no points)\n");
    int mark = ml_report_metric_marks(r);
    const int first_mark = mark;
    for (size_t k = 0; k < sr->npoints; k++) {
        const ml_report_point *pt = &sr->points[k];
        fprintf(f, "  %5zu", k);
        for (size_t i = 0; i < pt->nfigures; i++) {
            char cell[96];
            ml_report_cell_text(&pt->figures[i], &mark, cell, sizeof cell);
            fprintf(f, " %16s", cell);
        }
        const char *v = ml_report_point_verdict(pt);
        fprintf(f, "  %s\n", v ? (strcmp(v, "pass") == 0 ? "PASS" : "FAIL") : "");
    }
    ml_report_series_marks(r, first_mark, mark_line, f);
    for (size_t k = 0; k < sr->npoints; k++)
        for (size_t i = 0; i < sr->points[k].nchecks; i++) {
            const ml_check *c = &sr->points[k].checks[i];
            if (c->pass)
                continue;
            char lim[96], val[48], name[160];
            ml_report_limit_text(c, lim, sizeof lim);
            ml_report_number(val, sizeof val, c->value, c->decimals, false);
            ml_report_point_name(r, k, c->metric, name, sizeof name);
            fprintf(f, "  FAIL %s = %s %s, limit %s\n", name, c->valid ? val : "n/a", c->unit ? c->unit : "",
                    lim);
        }
}

static void tables(FILE *f, const ml_report *r)
{
    for (size_t t = 0; t < r->ntables; t++) {
        const ml_table *tb = &r->tables[t];
        fprintf(f, "\n%s (%s)\n ", tb->title, tb->path);
        for (size_t c = 0; c < tb->ncols; c++)
            fprintf(f, " %14s", tb->cols[c]);
        fputc('\n', f);
        if (tb->nrows == 0)
            fprintf(f, "  (none above the noise within the band)\n");
        for (size_t i = 0; i < tb->nrows; i++) {
            fputc(' ', f);
            for (size_t c = 0; c < tb->ncols; c++) {
                char n[48];
                ml_report_number(n, sizeof n, tb->cell[i][c], tb->decimals[c], false);
                fprintf(f, " %14s", n[0] ? n : "n/a");
            }
            fputc('\n', f);
        }
    }
}

ml_status ml_report_write_text(FILE *f, const ml_report *r)
{
    header(f, r);
    metrics(f, r);
    series(f, r);
    tables(f, r);
    if (r->nnotes) {
        fprintf(f, "\nnotes\n");
        for (size_t i = 0; i < r->nnotes; i++) {
            char t[ML_REPORT_NOTE_LEN];
            ml_report_unsign_zeros(t, sizeof t, r->notes[i]);
            fprintf(f, "  - %s\n", t);
        }
    }
    size_t total = 0, failed = 0, undecided = 0;
    ml_report_check_counts(r, &total, &failed, &undecided);
    const char *v = ml_report_verdict(r);
    if (strcmp(v, "unchecked") == 0)
        fprintf(f, "\nverdict: UNCHECKED (no limits given)\n");
    else if (undecided > 0)
        fprintf(f,
                "\nverdict: %s (%zu of %zu checks passed, %zu undecided: a bound reaches beyond its limit)\n",
                strcmp(v, "fail") == 0 ? "FAIL" : "UNDECIDED", total - failed - undecided, total, undecided);
    else
        fprintf(f, "\nverdict: %s (%zu of %zu checks passed)\n", strcmp(v, "pass") == 0 ? "PASS" : "FAIL",
                total - failed, total);
    return ferror(f) ? ML_EIO : ML_OK;
}
