/* CSV report: one row per metric (metric,value,unit,limit,result), then table cells.
 * SPDX-License-Identifier: MIT
 */
#include "io/report_internal.h"

static void row(FILE *f, const char *name, bool valid, double v, int decimals, const char *unit,
                const ml_check *c)
{
    char lim[48] = "";
    if (c)
        ml_report_limit_text(c, lim, sizeof lim);
    fprintf(f, "%s,", name);
    if (valid)
        fprintf(f, "%.*f", decimals, v);
    fprintf(f, ",%s,%s,%s\n", unit, lim, c ? (c->pass ? "PASS" : "FAIL") : "");
}

ml_status ml_report_write_csv(FILE *f, const ml_report *r)
{
    fprintf(f, "metric,value,unit,limit,result\n");
    for (size_t i = 0; i < r->nmetrics; i++) {
        const ml_metric *m = &r->metrics[i];
        row(f, m->name, m->valid, m->value, m->decimals, m->unit, ml_report_check_for(r, m->name));
    }
    for (size_t i = 0; i < r->ntexts; i++)
        fprintf(f, "%s,%s,,,\n", r->texts[i].name, r->texts[i].value);
    for (size_t t = 0; t < r->ntables; t++) {
        const ml_table *tb = &r->tables[t];
        for (size_t i = 0; i < tb->nrows; i++)
            for (size_t c = 0; c < tb->ncols; c++) {
                char name[160];
                snprintf(name, sizeof name, "%s[%zu].%s", tb->path, i, tb->cols[c]);
                row(f, name, true, tb->cell[i][c], tb->decimals[c], "", NULL);
            }
    }
    return ferror(f) ? ML_EIO : ML_OK;
}
