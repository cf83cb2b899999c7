/* Dropouts: runs of digital silence and discontinuities (definitions in dsp/dropout.h).
 * SPDX-License-Identifier: MIT
 *
 * References: none; the second difference is the error of linear extrapolation (any numerical
 * analysis text).
 */
#include "dsp/dropout.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#define MERGE_GAP 3 /* flagged samples at most this far apart form one step event */

struct ml_dropout {
    ml_dropout_config cfg;
    int64_t min_run;        /* min_silence_s in samples                                      */
    int64_t warm;           /* scale_s in samples: updates of s before detection             */
    double alpha;           /* 1 / warm: the exponential mean's weight                       */
    ml_dropout_result r;    /* events so far (the ongoing run is added by get)              */
    int64_t idx;            /* index of the next sample                                      */
    double p1, p2;          /* the last two samples                                          */
    double run_val;         /* the repeated value of the current run                         */
    int64_t run_start, run_len;
    double ms;              /* exponential mean of e^2                                       */
    int64_t updates;        /* updates of ms since the last (re)start of detection           */
    int64_t quiet_until;    /* no step detection for samples up to this index               */
    bool step_open;         /* the last stored step event may still grow                     */
    int64_t step_last;      /* last flagged sample of the open step event                    */
};

ml_dropout_config ml_dropout_config_default(double rate_hz)
{
    return (ml_dropout_config){.rate_hz = rate_hz, .min_silence_s = 0.05, .step_ratio = 20.0, .min_step = 1e-4,
                               .scale_s = 0.01};
}

ml_status ml_dropout_create(const ml_dropout_config *cfg, ml_dropout **out)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz > 0) || !isfinite(cfg->rate_hz) || !(cfg->min_silence_s > 0)
        || !(cfg->step_ratio > 1) || !isfinite(cfg->step_ratio) || !(cfg->min_step >= 0) || !isfinite(cfg->min_step)
        || !(cfg->scale_s > 0) || !(cfg->min_silence_s * cfg->rate_hz < 9e18) || !(cfg->scale_s * cfg->rate_hz < 9e18))
        return ML_EINVAL;
    ml_dropout *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->min_run = (int64_t)ceil(cfg->min_silence_s * cfg->rate_hz);
    if (q->min_run < 2)
        q->min_run = 2;
    q->warm = (int64_t)ceil(cfg->scale_s * cfg->rate_hz);
    if (q->warm < 4)
        q->warm = 4;
    q->alpha = 1.0 / (double)q->warm;
    ml_dropout_reset(q);
    *out = q;
    return ML_OK;
}

void ml_dropout_destroy(ml_dropout *q)
{
    free(q);
}

void ml_dropout_reset(ml_dropout *q)
{
    if (q == NULL)
        return;
    memset(&q->r, 0, sizeof q->r);
    q->idx = 0;
    q->p1 = q->p2 = 0.0;
    q->run_val = 0.0;
    q->run_start = 0;
    q->run_len = 0;
    q->ms = 0.0;
    q->updates = 0;
    q->quiet_until = -1;
    q->step_open = false;
    q->step_last = 0;
}

static void add_event(ml_dropout_result *r, const ml_dropout_event *e)
{
    /* stored by member, over zeroed memory: the events hold no stray padding bytes */
    r->nevents++;
    if (e->kind == ML_DROPOUT_SILENCE) {
        r->nsilence++;
        r->silent_samples += e->end - e->start + 1;
    } else {
        r->nstep++;
    }
    if (r->nstored < ML_DROPOUT_MAX_EVENTS) {
        ml_dropout_event *d = &r->events[r->nstored++];
        memset(d, 0, sizeof *d);
        d->kind = e->kind;
        d->start = e->start;
        d->end = e->end;
        d->value = e->value;
        d->ratio = e->ratio;
    }
}

/* A run that reached the minimum: the step flagged on entering it (if any, within two samples of
 * its start) is part of it. */
static void absorb_entry_step(ml_dropout *q)
{
    ml_dropout_result *r = &q->r;
    if (r->nstored == 0 || r->nstored != r->nevents)
        return; /* beyond the stored events: counts only, nothing to match */
    ml_dropout_event *last = &r->events[r->nstored - 1];
    if (last->kind == ML_DROPOUT_STEP && last->end >= q->run_start - 2) {
        r->nstored--;
        r->nevents--;
        r->nstep--;
        q->step_open = false;
    }
}

/* The current run ends before sample q->idx: a silence event when long enough. */
static void close_run(ml_dropout *q)
{
    if (q->run_len >= q->min_run) {
        ml_dropout_event e = {.kind = ML_DROPOUT_SILENCE, .start = q->run_start,
                              .end = q->run_start + q->run_len - 1, .value = q->run_val};
        add_event(&q->r, &e);
        /* the step out of the run, and a fresh scale: what follows a silence starts anew */
        q->quiet_until = q->idx + 1;
        q->updates = 0;
        q->ms = 0.0;
        q->step_open = false;
    }
}

ml_status ml_dropout_push(ml_dropout *q, const float *x, size_t n)
{
    if (q == NULL || (x == NULL && n > 0))
        return ML_EINVAL;
    const double ratio2 = q->cfg.step_ratio * q->cfg.step_ratio, min_step = q->cfg.min_step;
    for (size_t i = 0; i < n; i++) {
        const double v = x[i];
        /* runs of one value */
        if (q->run_len > 0 && v == q->run_val) {
            q->run_len++;
            if (q->run_len == q->min_run)
                absorb_entry_step(q);
        } else {
            close_run(q);
            q->run_val = v;
            q->run_start = q->idx;
            q->run_len = 1;
        }
        /* steps: the second difference against its recent rms value */
        if (q->idx >= 2 && q->run_len < q->min_run) {
            const double e = v - 2.0 * q->p1 + q->p2, e2 = e * e;
            const bool armed = q->updates >= q->warm && q->idx > q->quiet_until;
            if (armed && e2 > ratio2 * q->ms && fabs(e) >= min_step) {
                const double rt = q->ms > 0 ? fabs(e) / sqrt(q->ms) : INFINITY;
                ml_dropout_result *r = &q->r;
                if (q->step_open && q->idx - q->step_last <= MERGE_GAP) {
                    if (r->nstored == r->nevents) {
                        ml_dropout_event *last = &r->events[r->nstored - 1];
                        last->end = q->idx;
                        if (fabs(e) > last->value) {
                            last->value = fabs(e);
                            last->ratio = rt;
                        }
                    }
                } else {
                    ml_dropout_event ev = {.kind = ML_DROPOUT_STEP, .start = q->idx, .end = q->idx,
                                           .value = fabs(e), .ratio = rt};
                    add_event(r, &ev);
                    q->step_open = true;
                }
                q->step_last = q->idx;
            } else {
                q->ms += q->alpha * (e2 - q->ms);
                q->updates++;
            }
        }
        q->p2 = q->p1;
        q->p1 = v;
        q->idx++;
    }
    return ML_OK;
}

ml_status ml_dropout_get(const ml_dropout *q, ml_dropout_result *r)
{
    if (q == NULL || r == NULL)
        return ML_EINVAL;
    *r = q->r;
    r->samples = q->idx;
    r->ongoing = false;
    if (q->run_len >= q->min_run) {
        ml_dropout_event e = {.kind = ML_DROPOUT_SILENCE, .start = q->run_start, .end = q->run_start + q->run_len - 1,
                              .value = q->run_val};
        add_event(r, &e);
        r->ongoing = true;
    }
    return ML_OK;
}
