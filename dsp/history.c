/* Bounded history of columns with pairwise merging (see dsp/history.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/history.h"

#include <assert.h>
#include <stdlib.h>
#include <string.h>

struct ml_history {
    ml_history_config cfg;
    double *val;      /* max_cols * nrows: sums of the pushed columns in each kept column */
    double *t0, *t1;  /* span of each kept column                                         */
    size_t *n;        /* pushed columns in each kept column                               */
    double *mean;     /* scratch for get_column                                           */
    size_t count;     /* kept columns, the last possibly gathering                        */
    size_t span;      /* pushed columns per kept column                                   */
};

ml_history_config ml_history_config_default(void)
{
    return (ml_history_config){.nrows = 128, .max_cols = 1024};
}

ml_status ml_history_create(const ml_history_config *cfg, ml_history **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || cfg->nrows < 1 || cfg->nrows > 4096 || cfg->max_cols < 2 || cfg->max_cols > 65536
        || cfg->max_cols % 2 != 0)
        return ML_EINVAL;
    ml_history *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->val = calloc(cfg->max_cols * cfg->nrows, sizeof *q->val);
    q->t0 = calloc(cfg->max_cols, sizeof *q->t0);
    q->t1 = calloc(cfg->max_cols, sizeof *q->t1);
    q->n = calloc(cfg->max_cols, sizeof *q->n);
    q->mean = calloc(cfg->nrows, sizeof *q->mean);
    if (!q->val || !q->t0 || !q->t1 || !q->n || !q->mean) {
        ml_history_destroy(q);
        return ML_ENOMEM;
    }
    ml_history_reset(q);
    *out = q;
    return ML_OK;
}

void ml_history_destroy(ml_history *q)
{
    if (q == NULL)
        return;
    free(q->val);
    free(q->t0);
    free(q->t1);
    free(q->n);
    free(q->mean);
    free(q);
}

void ml_history_reset(ml_history *q)
{
    if (q == NULL)
        return;
    q->count = 0;
    q->span = 1;
}

/* Halves the kept columns: column i becomes the sum of columns 2i and 2i+1. */
static void merge(ml_history *q)
{
    const size_t r = q->cfg.nrows, half = q->count / 2;
    for (size_t i = 0; i < half; i++) {
        double *d = q->val + i * r;
        const double *a = q->val + 2 * i * r, *b = a + r;
        for (size_t k = 0; k < r; k++)
            d[k] = a[k] + b[k];
        q->t0[i] = q->t0[2 * i];
        q->t1[i] = q->t1[2 * i + 1];
        q->n[i] = q->n[2 * i] + q->n[2 * i + 1];
    }
    q->count = half;
    q->span *= 2;
}

ml_status ml_history_push(ml_history *q, double t0_s, double t1_s, const double *col)
{
    if (q == NULL || col == NULL)
        return ML_EINVAL;
    const size_t r = q->cfg.nrows;
    if (q->count == 0 || q->n[q->count - 1] >= q->span) {
        if (q->count == q->cfg.max_cols)
            merge(q);
        const size_t c = q->count++;
        memset(q->val + c * r, 0, r * sizeof *q->val);
        q->t0[c] = t0_s;
        q->n[c] = 0;
    }
    const size_t c = q->count - 1;
    double *d = q->val + c * r;
    for (size_t k = 0; k < r; k++)
        d[k] += col[k];
    q->t1[c] = t1_s;
    q->n[c]++;
    return ML_OK;
}

size_t ml_history_get_count(const ml_history *q)
{
    return q ? q->count : 0;
}

size_t ml_history_get_rows(const ml_history *q)
{
    return q ? q->cfg.nrows : 0;
}

const double *ml_history_get_column(const ml_history *q, size_t i, double *t0_s, double *t1_s)
{
    if (q == NULL || i >= q->count)
        return NULL;
    const size_t r = q->cfg.nrows;
    for (size_t k = 0; k < r; k++)
        q->mean[k] = q->val[i * r + k] / (double)q->n[i];
    if (t0_s)
        *t0_s = q->t0[i];
    if (t1_s)
        *t1_s = q->t1[i];
    return q->mean;
}
