/* Human-readable report: input summary, metric table with limits, tables, notes, verdict.
 * SPDX-License-Identifier: MIT
 */
#include <string.h>

#include "io/report_internal.h"

static void value_text(char *buf, size_t len, bool valid, double v, int decimals)
{
    if (valid)
        snprintf(buf, len, "%.*f", decimals, v);
    else
        snprintf(buf, len, "n/a");
}

ml_status ml_report_write_text(FILE *f, const ml_report *r)
{
    fprintf(f, "modlens measurement of %s\n", r->path);
    fprintf(f, "  input     %s, %.0f Hz, %d channel%s (analysed: %d), %.3f s (%lld frames)\n", r->format,
            r->sample_rate_hz, r->channels, r->channels == 1 ? "" : "s", r->channel, r->duration_s,
            (long long)r->frames);
    fprintf(f, "  segment   %.3f s from %.3f s\n", r->analysed_s, r->start_s);
    fprintf(f, "  kind      %s (%s)\n", r->kind, r->kind_reason);
    if (r->analysis[0])
        fprintf(f, "  analysis  %s\n", r->analysis);
    if (r->limits_path[0])
        fprintf(f, "  limits    %s\n", r->limits_path);
    for (size_t i = 0; i < r->ntexts; i++)
        fprintf(f, "  %-32s %s\n", r->texts[i].name, r->texts[i].value);
    int w = 32; /* name column: as wide as the longest name */
    for (size_t i = 0; i < r->nmetrics; i++)
        if ((int)strlen(r->metrics[i].name) > w)
            w = (int)strlen(r->metrics[i].name);
    fprintf(f, "\n%-*s %14s  %-5s %-16s %-6s %s\n", w, "metric", "value", "unit", "limit", "result", "margin");
    for (size_t i = 0; i < r->nmetrics; i++) {
        const ml_metric *m = &r->metrics[i];
        char val[48], lim[48] = "", margin[48] = "";
        const char *res = "";
        value_text(val, sizeof val, m->valid, m->value, m->decimals);
        const ml_check *c = ml_report_check_for(r, m->name);
        if (c) {
            ml_report_limit_text(c, lim, sizeof lim);
            res = c->pass ? "PASS" : "FAIL";
            if (c->valid)
                snprintf(margin, sizeof margin, "%+.*f", c->decimals, c->margin);
        }
        fprintf(f, "%-*s %14s  %-5s %-16s %-6s %s\n", w, m->name, val, m->unit, lim, res, margin);
    }
    for (size_t t = 0; t < r->ntables; t++) {
        const ml_table *tb = &r->tables[t];
        fprintf(f, "\n%s (%s)\n ", tb->title, tb->path);
        for (size_t c = 0; c < tb->ncols; c++)
            fprintf(f, " %14s", tb->cols[c]);
        fputc('\n', f);
        if (tb->nrows == 0)
            fprintf(f, "  (none within the band)\n");
        for (size_t i = 0; i < tb->nrows; i++) {
            fputc(' ', f);
            for (size_t c = 0; c < tb->ncols; c++)
                fprintf(f, " %14.*f", tb->decimals[c], tb->cell[i][c]);
            fputc('\n', f);
        }
    }
    if (r->nnotes) {
        fprintf(f, "\nnotes\n");
        for (size_t i = 0; i < r->nnotes; i++)
            fprintf(f, "  - %s\n", r->notes[i]);
    }
    size_t failed = 0;
    for (size_t i = 0; i < r->nchecks; i++)
        failed += !r->checks[i].pass;
    const char *v = ml_report_verdict(r);
    if (strcmp(v, "unchecked") == 0)
        fprintf(f, "\nverdict: UNCHECKED (no limits given)\n");
    else
        fprintf(f, "\nverdict: %s (%zu of %zu checks passed)\n", strcmp(v, "pass") == 0 ? "PASS" : "FAIL",
                r->nchecks - failed, r->nchecks);
    return ferror(f) ? ML_EIO : ML_OK;
}
