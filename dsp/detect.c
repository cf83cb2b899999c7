/* Impulse and level-change detectors (definitions in dsp/detect.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/detect.h"

#include <assert.h>
#include <math.h>
#include <stdbool.h>
#include <stdlib.h>

#include "dsp/floor.h"
#include "dsp/internal.h"

struct ml_impulse {
    ml_impulse_config cfg;
    ml_floor *floor;
    size_t frame_n, gap_n, max_n, judge_n;
    double acc, frame_peak; /* sum of squares (differenced) and largest |x| of the current frame */
    double x1, x2;          /* the two previous input samples                                   */
    size_t acc_n;
    int64_t frame;          /* index of the current frame */
    bool active;
    ml_event burst;
    int64_t last_hot;
    int prime;              /* input samples that only fill x1, x2 (after a restore)           */
};

ml_impulse_config ml_impulse_config_default(double rate_hz)
{
    return (ml_impulse_config){.rate_hz = rate_hz, .frame_s = 0.001, .floor_s = 1.0, .threshold_db = 20.0,
                               .min_level_dbfs = -100.0, .gap_s = 0.005, .max_s = 0.2, .order = 2};
}

ml_status ml_impulse_create(const ml_impulse_config *cfg, ml_impulse **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz > 0) || !(cfg->frame_s * cfg->rate_hz >= 1) || !(cfg->frame_s <= 0.1)
        || !(cfg->floor_s >= 10 * cfg->frame_s) || !(cfg->floor_s / cfg->frame_s <= (double)(1 << 24))
        || !(cfg->threshold_db > 0) || !isfinite(cfg->min_level_dbfs) || !(cfg->gap_s >= 0)
        || !(cfg->gap_s < 1e6) || !(cfg->max_s >= cfg->frame_s) || !(cfg->max_s < 1e6) || cfg->order < 0
        || cfg->order > 2)
        return ML_EINVAL;
    ml_impulse *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->frame_n = (size_t)llround(cfg->frame_s * cfg->rate_hz);
    const double frame_s = (double)q->frame_n / cfg->rate_hz;
    const size_t window = (size_t)llround(cfg->floor_s / frame_s);
    q->judge_n = window / 2;
    q->gap_n = (size_t)ceil(cfg->gap_s / frame_s - 1e-9);
    if (q->gap_n < 1)
        q->gap_n = 1;
    q->max_n = (size_t)floor(cfg->max_s / frame_s + 1e-9);
    ml_floor_config fc = ml_floor_config_default(window);
    ml_status st = ml_floor_create(&fc, &q->floor);
    if (st != ML_OK) {
        free(q);
        return st;
    }
    ml_impulse_reset(q);
    *out = q;
    return ML_OK;
}

void ml_impulse_destroy(ml_impulse *q)
{
    if (q == NULL)
        return;
    ml_floor_destroy(q->floor);
    free(q);
}

void ml_impulse_reset(ml_impulse *q)
{
    if (q == NULL)
        return;
    ml_floor_reset(q->floor);
    q->acc = q->frame_peak = 0;
    q->x1 = q->x2 = 0;
    q->acc_n = 0;
    q->frame = 0;
    q->active = false;
    q->prime = 0;
}

size_t ml_impulse_frame_samples(const ml_impulse *q)
{
    return q ? q->frame_n : 0;
}

/* Closes the open burst; emits it when short enough. false when ev is full. */
static bool close_burst(ml_impulse *q, ml_event *ev, size_t cap, size_t *nev)
{
    q->active = false;
    q->burst.end = q->last_hot + 1;
    if ((size_t)(q->burst.end - q->burst.start) > q->max_n)
        return true; /* a level change, not an impulse */
    if (*nev >= cap)
        return false;
    q->burst.rise_db = q->burst.peak_db - q->burst.baseline_db;
    ev[(*nev)++] = q->burst;
    return true;
}

/* One complete frame of mean square ms and peak |x| pk. */
static bool frame_done(ml_impulse *q, double ms, double pk, ml_event *ev, size_t cap, size_t *nev)
{
    bool ok = true;
    const double level = ml_db10(ms / 0.5);
    const double fl = ml_floor_get_level(q->floor);
    const bool hot = ml_floor_get_count(q->floor) >= q->judge_n && level > fl + q->cfg.threshold_db
                     && level > q->cfg.min_level_dbfs;
    if (hot) {
        if (!q->active) {
            q->active = true;
            q->burst = (ml_event){.start = q->frame, .peak_abs = pk, .peak_db = level, .baseline_db = fl};
        }
        q->last_hot = q->frame;
        if (pk > q->burst.peak_abs)
            q->burst.peak_abs = pk;
        if (level > q->burst.peak_db)
            q->burst.peak_db = level;
    } else if (q->active && (size_t)(q->frame - q->last_hot) >= q->gap_n) {
        ok = close_burst(q, ev, cap, nev);
    }
    ml_floor_push(q->floor, &level, 1);
    q->frame++;
    return ok;
}

ml_status ml_impulse_push(ml_impulse *q, const float *x, size_t n, ml_event *ev, size_t cap, size_t *nev)
{
    if (q == NULL || nev == NULL || (n > 0 && x == NULL) || (cap > 0 && ev == NULL))
        return ML_EINVAL;
    *nev = 0;
    bool ok = true;
    for (size_t i = 0; i < n; i++) {
        const double v = x[i];
        double d = q->cfg.order == 0 ? v : q->cfg.order == 1 ? v - q->x1 : v - 2.0 * q->x1 + q->x2;
        if (q->prime > 0) {
            d = 0;
            q->prime--;
        }
        q->x2 = q->x1;
        q->x1 = v;
        q->acc += d * d;
        if (fabs(v) > q->frame_peak)
            q->frame_peak = fabs(v);
        if (++q->acc_n == q->frame_n) {
            ok &= frame_done(q, q->acc / (double)q->frame_n, q->frame_peak, ev, cap, nev);
            q->acc = q->frame_peak = 0;
            q->acc_n = 0;
        }
    }
    return ok ? ML_OK : ML_EINVAL;
}

bool ml_impulse_get_open(const ml_impulse *q, int64_t *start_frame)
{
    if (q == NULL || !q->active || (size_t)(q->frame - q->burst.start) > q->max_n)
        return false;
    if (start_frame)
        *start_frame = q->burst.start;
    return true;
}

ml_status ml_impulse_finish(ml_impulse *q, ml_event *ev, size_t cap, size_t *nev)
{
    if (q == NULL || nev == NULL || (cap > 0 && ev == NULL))
        return ML_EINVAL;
    *nev = 0;
    if (q->active && !close_burst(q, ev, cap, nev))
        return ML_EINVAL;
    return ML_OK;
}

enum { CH_IDLE, CH_PENDING, CH_ACTIVE };

struct ml_change {
    ml_change_config cfg;
    ml_floor *base;
    size_t min_n, warm_n, max_n;
    int state;
    int64_t idx, in_start;
    bool in_run;            /* a run of in values is under way (since in_start)                */
    ml_event ev;
};

ml_change_config ml_change_config_default(double rate_hz, int direction, double threshold_db)
{
    return (ml_change_config){.rate_hz = rate_hz, .direction = direction, .threshold_db = threshold_db,
                              .min_s = 1.0, .baseline_s = 60.0, .warmup_s = 5.0, .max_s = 0.0};
}

ml_status ml_change_create(const ml_change_config *cfg, ml_change **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz > 0) || (cfg->direction != 1 && cfg->direction != -1)
        || !(cfg->threshold_db > 0) || !(cfg->min_s >= 0) || !(cfg->baseline_s * cfg->rate_hz >= 1)
        || !(cfg->baseline_s * cfg->rate_hz <= (double)(1 << 24)) || !(cfg->warmup_s >= 0)
        || !(cfg->warmup_s <= cfg->baseline_s) || !(cfg->max_s >= 0) || !(cfg->max_s * cfg->rate_hz < 1e15)
        || !(cfg->min_s * cfg->rate_hz < 1e15))
        return ML_EINVAL;
    ml_change *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->min_n = (size_t)llround(cfg->min_s * cfg->rate_hz);
    if (q->min_n < 1)
        q->min_n = 1;
    q->warm_n = (size_t)llround(cfg->warmup_s * cfg->rate_hz);
    q->max_n = (size_t)llround(cfg->max_s * cfg->rate_hz);
    ml_floor_config fc = ml_floor_config_default((size_t)llround(cfg->baseline_s * cfg->rate_hz));
    fc.lo_db = -400.0;
    fc.hi_db = 200.0;
    ml_status st = ml_floor_create(&fc, &q->base);
    if (st != ML_OK) {
        free(q);
        return st;
    }
    ml_change_reset(q);
    *out = q;
    return ML_OK;
}

void ml_change_destroy(ml_change *q)
{
    if (q == NULL)
        return;
    ml_floor_destroy(q->base);
    free(q);
}

void ml_change_reset(ml_change *q)
{
    if (q == NULL)
        return;
    ml_floor_reset(q->base);
    q->state = CH_IDLE;
    q->idx = 0;
    q->in_start = 0;
    q->in_run = false;
}

static bool emit(ml_change *q, int64_t end, ml_event *ev, size_t cap, size_t *nev)
{
    q->state = CH_IDLE;
    q->ev.end = end;
    q->ev.rise_db = q->ev.peak_db - q->ev.baseline_db;
    if (*nev >= cap)
        return false;
    ev[(*nev)++] = q->ev;
    return true;
}

ml_status ml_change_push(ml_change *q, const double *v, size_t n, ml_event *ev, size_t cap, size_t *nev)
{
    if (q == NULL || nev == NULL || (n > 0 && v == NULL) || (cap > 0 && ev == NULL))
        return ML_EINVAL;
    *nev = 0;
    bool ok = true;
    const double dir = q->cfg.direction;
    for (size_t i = 0; i < n; i++, q->idx++) {
        const double x = v[i];
        const double base = q->state == CH_IDLE ? ml_floor_get_level(q->base) : q->ev.baseline_db;
        const bool judge = ml_floor_get_count(q->base) >= q->warm_n && !isnan(base);
        const bool out = judge && !isnan(x) && dir * (x - base) >= q->cfg.threshold_db;
        switch (q->state) {
        case CH_IDLE:
            if (out) {
                q->state = CH_PENDING;
                q->ev = (ml_event){.start = q->idx, .peak_db = x, .baseline_db = base};
                if (q->min_n == 1)
                    q->state = CH_ACTIVE;
                q->in_run = false;
            } else {
                ml_floor_push(q->base, &x, 1);
            }
            break;
        case CH_PENDING:
            if (out) {
                if (dir * (x - q->ev.peak_db) > 0)
                    q->ev.peak_db = x;
                if ((size_t)(q->idx - q->ev.start + 1) >= q->min_n)
                    q->state = CH_ACTIVE;
            } else {
                q->state = CH_IDLE; /* too short: neither a change nor baseline material */
                ml_floor_push(q->base, &x, 1);
            }
            break;
        default: /* CH_ACTIVE */
            if (out) {
                if (dir * (x - q->ev.peak_db) > 0)
                    q->ev.peak_db = x;
                q->in_run = false;
            } else {
                if (!q->in_run) {
                    q->in_start = q->idx;
                    q->in_run = true;
                }
                if ((size_t)(q->idx - q->in_start + 1) >= q->min_n) {
                    ok &= emit(q, q->in_start, ev, cap, nev);
                    ml_floor_push(q->base, &x, 1);
                    break;
                }
            }
            if (q->max_n > 0 && (size_t)(q->idx + 1 - q->ev.start) >= q->max_n) {
                ok &= emit(q, q->idx + 1, ev, cap, nev);
                ml_floor_reset(q->base); /* the new level becomes the baseline */
            }
            break;
        }
    }
    return ok ? ML_OK : ML_EINVAL;
}

ml_status ml_change_finish(ml_change *q, ml_event *ev, size_t cap, size_t *nev)
{
    if (q == NULL || nev == NULL || (cap > 0 && ev == NULL))
        return ML_EINVAL;
    *nev = 0;
    if (q->state == CH_ACTIVE && !emit(q, q->in_run ? q->in_start : q->idx, ev, cap, nev))
        return ML_EINVAL;
    q->state = CH_IDLE;
    return ML_OK;
}

double ml_change_get_baseline(const ml_change *q)
{
    if (q == NULL)
        return NAN;
    return q->state == CH_IDLE ? ml_floor_get_level(q->base) : q->ev.baseline_db;
}

bool ml_change_get_open(const ml_change *q, int64_t *start, bool *in_run, int64_t *in_start)
{
    if (q == NULL || q->state == CH_IDLE)
        return false;
    if (start)
        *start = q->ev.start;
    if (in_run)
        *in_run = q->in_run;
    if (in_start)
        *in_start = q->in_start;
    return true;
}

int ml_change_get_state(const ml_change *q)
{
    return q == NULL || q->state == CH_IDLE ? 0 : q->state == CH_PENDING ? 1 : 2;
}

/* ---- state as numbers ------------------------------------------------------------------------- */

enum { IMP_TAG = 1, IMP_FIXED = 14, CH_TAG = 2, CH_FIXED = 9 };

size_t ml_impulse_save(const ml_impulse *q, double *s, size_t cap)
{
    if (q == NULL)
        return 0;
    const size_t nv = ml_floor_get_count(q->floor), need = IMP_FIXED + nv;
    if (s == NULL || cap < need)
        return need;
    const double fixed[IMP_FIXED] = {IMP_TAG,
                                     q->x1,
                                     q->x2,
                                     q->acc,
                                     q->frame_peak,
                                     (double)q->acc_n,
                                     (double)q->frame,
                                     q->active,
                                     (double)q->burst.start,
                                     q->burst.peak_abs,
                                     q->burst.peak_db,
                                     q->burst.baseline_db,
                                     (double)q->last_hot,
                                     (double)nv};
    for (size_t i = 0; i < IMP_FIXED; i++)
        s[i] = fixed[i];
    ml_floor_get_values(q->floor, s + IMP_FIXED, nv);
    return need;
}

/* A saved count: a whole number in [lo, hi]. */
static bool count_ok(double v, double lo, double hi)
{
    return v >= lo && v <= hi && v == floor(v);
}

ml_status ml_impulse_restore(ml_impulse *q, const double *s, size_t n, bool continuous)
{
    if (q == NULL || s == NULL || n < IMP_FIXED || s[0] != IMP_TAG || !count_ok(s[13], 0, (double)(1 << 24))
        || n != IMP_FIXED + (size_t)s[13] || !count_ok(s[5], 0, (double)q->frame_n - 1)
        || !count_ok(s[6], 0, 9e15) || !count_ok(s[8], -9e15, 9e15) || !count_ok(s[12], -9e15, 9e15))
        return ML_EINVAL;
    for (size_t i = 1; i < n; i++)
        if (i != 10 && i != 11 && !isfinite(s[i]))
            return ML_EINVAL;
    ml_impulse_reset(q);
    ml_floor_push(q->floor, s + IMP_FIXED, n - IMP_FIXED);
    if (!continuous) {
        q->prime = q->cfg.order;
        return ML_OK;
    }
    q->x1 = s[1];
    q->x2 = s[2];
    q->acc = s[3];
    q->frame_peak = s[4];
    q->acc_n = (size_t)s[5];
    q->frame = (int64_t)s[6];
    q->active = s[7] != 0;
    q->burst = (ml_event){.start = (int64_t)s[8], .peak_abs = s[9], .peak_db = s[10], .baseline_db = s[11]};
    q->last_hot = (int64_t)s[12];
    return ML_OK;
}

size_t ml_change_save(const ml_change *q, double *s, size_t cap)
{
    if (q == NULL)
        return 0;
    const size_t nv = ml_floor_get_count(q->base), need = CH_FIXED + nv;
    if (s == NULL || cap < need)
        return need;
    const double fixed[CH_FIXED] = {CH_TAG,         q->state,       (double)q->idx,
                                    q->in_run ? (double)q->in_start : NAN, (double)q->ev.start,
                                    q->ev.peak_db,  q->ev.baseline_db, 0, (double)nv};
    for (size_t i = 0; i < CH_FIXED; i++)
        s[i] = fixed[i];
    ml_floor_get_values(q->base, s + CH_FIXED, nv);
    return need;
}

ml_status ml_change_restore(ml_change *q, const double *s, size_t n, bool rebase)
{
    if (q == NULL || s == NULL || n < CH_FIXED || s[0] != CH_TAG || !count_ok(s[1], CH_IDLE, CH_ACTIVE)
        || !count_ok(s[2], 0, 9e15) || !(isnan(s[3]) || count_ok(s[3], -9e15, 9e15))
        || !count_ok(s[4], -9e15, 9e15) || !count_ok(s[8], 0, (double)(1 << 24)) || n != CH_FIXED + (size_t)s[8])
        return ML_EINVAL;
    if (s[1] != CH_IDLE && !(isfinite(s[5]) && isfinite(s[6])))
        return ML_EINVAL;
    for (size_t i = CH_FIXED; i < n; i++)
        if (!isfinite(s[i]))
            return ML_EINVAL;
    ml_change_reset(q);
    ml_floor_push(q->base, s + CH_FIXED, n - CH_FIXED);
    const int64_t shift = rebase ? (int64_t)s[2] : 0;
    q->state = (int)s[1];
    q->idx = (int64_t)s[2] - shift;
    q->in_run = !isnan(s[3]);
    q->in_start = q->in_run ? (int64_t)s[3] - shift : 0;
    q->ev = (ml_event){.start = (int64_t)s[4] - shift, .peak_db = s[5], .baseline_db = s[6]};
    return ML_OK;
}
