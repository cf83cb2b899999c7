/* Running robust floor: ring buffer plus histogram quantile.
 * SPDX-License-Identifier: MIT
 */
#include "dsp/floor.h"

#include <assert.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

struct ml_floor {
    ml_floor_config cfg;
    uint32_t *ring; /* bin index of each held value */
    uint32_t *hist;
    size_t nbins, head, count;
    size_t qb;    /* the quantile's bin, kept up to date by push: a cursor, so a query is O(1) and */
    size_t below; /* a push moves it only as far as the values moved it; below = values in bins < qb */
};

ml_floor_config ml_floor_config_default(size_t window)
{
    return (ml_floor_config){
        .window = window, .quantile = 0.5, .lo_db = -200.0, .hi_db = 20.0, .step_db = 0.1};
}

ml_status ml_floor_create(const ml_floor_config *cfg, ml_floor **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || cfg->window < 1 || cfg->window > ((size_t)1 << 24) || !(cfg->quantile > 0)
        || !(cfg->quantile < 1) || !(cfg->step_db > 0) || !(cfg->hi_db > cfg->lo_db)
        || !((cfg->hi_db - cfg->lo_db) / cfg->step_db <= 1e6))
        return ML_EINVAL;
    ml_floor *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->nbins = (size_t)ceil((cfg->hi_db - cfg->lo_db) / cfg->step_db) + 1;
    q->ring = calloc(cfg->window, sizeof *q->ring);
    q->hist = calloc(q->nbins, sizeof *q->hist);
    if (q->ring == NULL || q->hist == NULL) {
        ml_floor_destroy(q);
        return ML_ENOMEM;
    }
    *out = q;
    return ML_OK;
}

void ml_floor_destroy(ml_floor *q)
{
    if (q == NULL)
        return;
    free(q->ring);
    free(q->hist);
    free(q);
}

void ml_floor_reset(ml_floor *q)
{
    if (q == NULL)
        return;
    memset(q->hist, 0, q->nbins * sizeof *q->hist);
    q->head = q->count = 0;
    q->qb = q->below = 0;
}

/* Moves the cursor to the smallest bin b with (values in bins <= b) >= quantile * count. */
static void seek_quantile(ml_floor *q)
{
    const double need = q->cfg.quantile * (double)q->count;
    while (q->qb > 0 && (double)q->below >= need) {
        q->qb--;
        q->below -= q->hist[q->qb];
    }
    while (q->qb + 1 < q->nbins && (double)(q->below + q->hist[q->qb]) < need) {
        q->below += q->hist[q->qb];
        q->qb++;
    }
}

ml_status ml_floor_push(ml_floor *q, const double *v, size_t n)
{
    if (q == NULL || (n > 0 && v == NULL))
        return ML_EINVAL;
    for (size_t i = 0; i < n; i++) {
        if (isnan(v[i]))
            continue;
        double b = floor((v[i] - q->cfg.lo_db) / q->cfg.step_db);
        if (!(b > 0))
            b = 0;
        if (b > (double)(q->nbins - 1))
            b = (double)(q->nbins - 1);
        if (q->count == q->cfg.window) {
            const size_t old = q->ring[q->head];
            q->hist[old]--;
            if (old < q->qb)
                q->below--;
        } else {
            q->count++;
        }
        q->ring[q->head] = (uint32_t)b;
        q->hist[(size_t)b]++;
        if ((size_t)b < q->qb)
            q->below++;
        q->head = (q->head + 1) % q->cfg.window;
    }
    seek_quantile(q);
    return ML_OK;
}

double ml_floor_get_level(const ml_floor *q)
{
    if (q == NULL || q->count == 0)
        return NAN;
    return q->cfg.lo_db + ((double)q->qb + 0.5) * q->cfg.step_db;
}

size_t ml_floor_get_count(const ml_floor *q)
{
    return q ? q->count : 0;
}

size_t ml_floor_get_values(const ml_floor *q, double *v, size_t cap)
{
    if (q == NULL)
        return 0;
    const size_t first = (q->head + q->cfg.window - q->count) % q->cfg.window;
    for (size_t i = 0; i < q->count && i < cap && v != NULL; i++)
        v[i] = q->cfg.lo_db + ((double)q->ring[(first + i) % q->cfg.window] + 0.5) * q->cfg.step_db;
    return q->count;
}
