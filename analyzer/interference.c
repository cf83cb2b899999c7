/* measure's quasi-peak readings (see analyzer/interference.h).
 * SPDX-License-Identifier: MIT
 *
 * Definitions (README "Metric definitions"): interference.qp_dbfs is the highest deflection of
 * the quasi-peak meter, interference.av_dbfs of the average meter, over the segment's frames after
 * the chain has settled (its latency plus 8 meter time constants, 1.3 s: dsp/qpeak.h), in dBFS of
 * the channel's envelope (an unmodulated carrier at L dBFS reads L).
 */
#include "analyzer/interference.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#include "analyzer/values.h"
#include "analyzer/worker.h"
#include "dsp/qpeak.h"

#define NJOBS (ML_WORKER_DEPTH + 1) /* buffers used in turn (analyzer/worker.h) */

typedef struct {
    struct ml_qp_pass *p;
    float *buf;   /* the captured column(s), (re[, im]) per frame */
    size_t n, cap;
} job;

/* The chain runs on a thread of its own: it costs about as much as the rest of the if/iq pass. */
struct ml_qp_pass {
    ml_qpeak *q;
    uint64_t frames, settle;
    double rate_hz;
    bool iq;
    ml_worker *worker;
    job jobs[NJOBS];
    int next;
    char why[96];
};

ml_qp_pass *ml_qp_pass_create(double rate_hz, bool iq, double carrier_hz)
{
    ml_qp_pass *p = calloc(1, sizeof *p);
    if (p == NULL)
        return NULL;
    p->rate_hz = rate_hz;
    const ml_qpeak_config c = ml_qpeak_config_default(rate_hz, iq, carrier_hz);
    if (rate_hz < 4 * c.bandwidth_hz)
        snprintf(p->why, sizeof p->why, "sample rate below 36 kHz: no room for the 9 kHz Band B channel");
    else if (ml_qpeak_create(&c, &p->q) != ML_OK)
        snprintf(p->why, sizeof p->why, "the 9 kHz Band B channel does not fit around the carrier");
    else
        p->settle = ml_qpeak_get_settle_frames(p->q);
    p->iq = iq;
    return p;
}

/* On the worker: a job's frames through the chain; the readings start once it has settled. */
static void run(void *ctx, void *batch)
{
    ml_qp_pass *p = ctx;
    const job *j = batch;
    const size_t stride = p->iq ? 2 : 1, im = p->iq ? 1 : 0;
    const float *x = j->buf;
    size_t n = j->n;
    if (p->frames < p->settle && p->frames + n >= p->settle) {
        const size_t k = (size_t)(p->settle - p->frames);
        ml_qpeak_push(p->q, x, k, stride, 0, im, NULL);
        ml_qpeak_restart_span(p->q);
        x += k * stride;
        n -= k;
        p->frames += k;
    }
    ml_qpeak_push(p->q, x, n, stride, 0, im, NULL);
    p->frames += n;
}

void ml_qp_pass_push(ml_qp_pass *p, const float *frames, size_t n, const ml_channels *ch)
{
    if (p == NULL || p->q == NULL || n == 0)
        return;
    if (p->worker == NULL && p->next == 0 && p->jobs[0].buf == NULL)
        p->worker = ml_worker_start(run, p); /* NULL: run on this thread */
    job *j = &p->jobs[p->next]; /* handed over NJOBS submissions ago: done (ml_worker_submit) */
    const size_t stride = p->iq ? 2 : 1;
    if (n > j->cap) {
        ml_worker_wait(p->worker);
        float *b = realloc(j->buf, n * stride * sizeof *b);
        if (b == NULL) {
            ml_worker_wait(p->worker);
            ml_qpeak_destroy(p->q);
            p->q = NULL;
            snprintf(p->why, sizeof p->why, "out of memory");
            return;
        }
        j->buf = b;
        j->cap = n;
    }
    for (size_t i = 0; i < n; i++) {
        j->buf[i * stride] = frames[i * ch->stride + ch->re];
        if (p->iq)
            j->buf[i * stride + 1] = frames[i * ch->stride + ch->im];
    }
    j->p = p;
    j->n = n;
    ml_worker_submit(p->worker, run, p, j);
    p->next = (p->next + 1) % NJOBS;
}

void ml_qp_pass_report(ml_qp_pass *p, ml_report *rep)
{
    if (p)
        ml_worker_wait(p->worker);
    static const char *const names[2] = {"interference.qp_dbfs", "interference.av_dbfs"};
    ml_qpeak_reading r;
    char why[128];
    double v[2] = {NAN, NAN};
    if (p && p->q && p->frames > p->settle && ml_qpeak_get_span(p->q, &r) == ML_OK) {
        v[0] = r.qp_dbfs;
        v[1] = r.av_dbfs;
        snprintf(why, sizeof why, "no signal in the Band B channel");
    } else if (p && p->q) {
        snprintf(why, sizeof why, "capture shorter than the quasi-peak meter's settling (%.2f s)",
                 (double)p->settle / p->rate_hz);
    } else {
        snprintf(why, sizeof why, "%s", p ? p->why : "out of memory");
    }
    for (int i = 0; i < 2; i++) {
        if (isfinite(v[i])) {
            const ml_value x = {names[i], v[i], ML_FIG_MEASURED, NULL};
            ml_values_report(rep, &x, 1);
        } else {
            ml_report_add_missing_why(rep, names[i], "dBFS", 2, why);
        }
    }
}

void ml_qp_pass_destroy(ml_qp_pass *p)
{
    if (p == NULL)
        return;
    ml_worker_stop(p->worker);
    ml_qpeak_destroy(p->q);
    for (int i = 0; i < NJOBS; i++)
        free(p->jobs[i].buf);
    free(p);
}
