/* Running time-domain statistics.
 * SPDX-License-Identifier: MIT
 */
#include "dsp/stats.h"

#include <float.h>
#include <math.h>
#include <string.h>

#include "dsp/internal.h"

ml_status ml_stats_init(ml_stats *q, int bits)
{
    if (q == NULL || bits < 2 || bits > 32)
        return ML_EINVAL;
    double lsb = ldexp(1.0, 1 - bits);
    memset(q, 0, sizeof *q);
    /* half an LSB of slack absorbs the rounding of float conversion */
    q->clip_hi = 1.0 - 2.0 * lsb - 0.5 * lsb;
    q->clip_lo = -1.0 + lsb + 0.5 * lsb;
    return ML_OK;
}

void ml_stats_reset(ml_stats *q)
{
    double hi = q->clip_hi, lo = q->clip_lo;
    memset(q, 0, sizeof *q);
    q->clip_hi = hi;
    q->clip_lo = lo;
}

#define LANES ML_STATS_LANES
#define RUN 256 /* samples checked for finiteness at a time */

/* Length of the leading run of finite samples among x[0], x[stride], ... (n of them): checked
 * RUN at a time with no early exit, so the check vectorises; only a run holding a non-finite
 * sample is scanned one by one. */
static size_t finite_run(const float *x, size_t n, size_t stride)
{
    size_t i = 0;
    while (i < n) {
        const size_t m = n - i < RUN ? n - i : RUN;
        int bad = 0;
        for (size_t j = 0; j < m; j++)
            bad |= !(fabsf(x[(i + j) * stride]) <= FLT_MAX); /* NaN and infinities */
        if (bad) {
            while (isfinite(x[i * stride]))
                i++;
            return i;
        }
        i += m;
    }
    return n;
}

/* Adds n finite samples x[0], x[stride], ... to the lanes, the first to lane q->count % LANES. */
static inline void add_finite(ml_stats *q, const float *x, size_t n, size_t stride)
{
    double *restrict s = q->lane_sum, *restrict ss = q->lane_sumsq;
    if (n > 0 && q->count == 0)
        q->min = q->max = x[0];
    double lo[LANES], hi[LANES];
    uint64_t cl[LANES] = {0};
    for (int k = 0; k < LANES; k++) {
        lo[k] = q->min;
        hi[k] = q->max;
    }
    const double chi = q->clip_hi, clo = q->clip_lo;
    size_t j = 0, lane = (size_t)(q->count % LANES);
#define ML_STATS_ADD(k, v)                                                                         \
    do {                                                                                           \
        s[k] += (v);                                                                               \
        ss[k] += (v) * (v);                                                                        \
        lo[k] = (v) < lo[k] ? (v) : lo[k];                                                         \
        hi[k] = (v) > hi[k] ? (v) : hi[k];                                                         \
        cl[k] += (v) >= chi || (v) <= clo;                                                         \
    } while (0)
    for (; j < n && lane != 0; j++, lane = (lane + 1) % LANES) {
        const double v = x[j * stride];
        ML_STATS_ADD(lane, v);
    }
    for (; j + LANES <= n; j += LANES)
        for (int k = 0; k < LANES; k++) {
            const double v = x[(j + k) * stride];
            ML_STATS_ADD(k, v);
        }
    for (int k = 0; j < n; j++, k++) {
        const double v = x[j * stride];
        ML_STATS_ADD(k, v);
    }
#undef ML_STATS_ADD
    for (int k = 0; k < LANES; k++) {
        q->min = lo[k] < q->min ? lo[k] : q->min;
        q->max = hi[k] > q->max ? hi[k] : q->max;
        q->clipped += cl[k];
    }
    q->count += n;
}

ML_HOT void ml_stats_push_strided(ml_stats *q, const float *x, size_t n, size_t stride)
{
    size_t i = 0;
    while (i < n) {
        /* a run of finite samples goes through the lanes (which vectorise); a non-finite one is
         * counted and skipped. RUN at a time, so the samples are still in cache for the lanes. */
        const size_t m = n - i < RUN ? n - i : RUN;
        const size_t run = finite_run(x + i * stride, m, stride);
        add_finite(q, x + i * stride, run, stride);
        i += run;
        if (run < m) {
            q->nonfinite++;
            i++;
        }
    }
    double sum = 0, sumsq = 0;
    for (int k = 0; k < LANES; k++) {
        sum += q->lane_sum[k];
        sumsq += q->lane_sumsq[k];
    }
    q->sum = sum;
    q->sumsq = sumsq;
}

void ml_stats_push(ml_stats *q, const float *x, size_t n)
{
    ml_stats_push_strided(q, x, n, 1);
}

double ml_stats_mean(const ml_stats *q)
{
    return q->count ? q->sum / (double)q->count : 0.0;
}

double ml_stats_rms(const ml_stats *q)
{
    return q->count ? sqrt(q->sumsq / (double)q->count) : 0.0;
}
