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
#define RUN 256 /* samples gathered and checked at a time */

ML_HOT size_t ml_first_nonfinite(const float *x, size_t n)
{
    size_t i = 0;
    while (i < n) {
        /* RUN at a time with no early exit, so that the check vectorises; only a run that holds
         * a non-finite sample is scanned one by one */
        const size_t m = n - i < RUN ? n - i : RUN;
        int bad = 0;
        for (size_t j = 0; j < m; j++)
            bad |= !(fabsf(x[i + j]) <= FLT_MAX); /* NaN and infinities */
        if (bad) {
            while (isfinite(x[i]))
                i++;
            return i;
        }
        i += m;
    }
    return n;
}

/* Adds n <= RUN finite contiguous samples to the lanes, the first to lane q->count % LANES. */
static ML_INLINE void add_finite(ml_stats *q, const double *x, size_t n)
{
    if (n > 0 && q->count == 0)
        q->min = q->max = x[0];
    /* the lanes in local arrays, so that the compiler keeps them in vector registers */
    double s[LANES], ss[LANES], lo[LANES], hi[LANES];
    uint64_t cl[LANES] = {0};
    for (int k = 0; k < LANES; k++) {
        s[k] = q->lane_sum[k];
        ss[k] = q->lane_sumsq[k];
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
        cl[k] += (uint64_t)(((v) >= chi) | ((v) <= clo));                                          \
    } while (0)
    for (; j < n && lane != 0; j++, lane = (lane + 1) % LANES) {
        const double v = x[j];
        ML_STATS_ADD(lane, v);
    }
#if defined(__GNUC__) && LANES == 8
    /* The same per-lane operations in vector registers (dsp/internal.h): compilers do not
     * vectorise these lane-wise reductions themselves. */
    if (j + LANES <= n) {
        ml_v4d vs[2], vss[2], vlo[2], vhi[2];
        ml_v4i vcl[2] = {{0, 0, 0, 0}, {0, 0, 0, 0}};
        memcpy(vs, s, sizeof vs);
        memcpy(vss, ss, sizeof vss);
        memcpy(vlo, lo, sizeof vlo);
        memcpy(vhi, hi, sizeof vhi);
        const ml_v4d vchi = {chi, chi, chi, chi}, vclo = {clo, clo, clo, clo};
        for (; j + LANES <= n; j += LANES)
            for (int h = 0; h < 2; h++) {
                ml_v4d v;
                memcpy(&v, x + j + 4 * h, sizeof v);
                vs[h] += v;
                vss[h] += v * v;
                vlo[h] = ML_VMIN(ml_v4d, ml_v4i, v, vlo[h]);
                vhi[h] = ML_VMAX(ml_v4d, ml_v4i, v, vhi[h]);
                vcl[h] -= (v >= vchi) | (v <= vclo); /* a true comparison is -1 */
            }
        memcpy(s, vs, sizeof vs);
        memcpy(ss, vss, sizeof vss);
        memcpy(lo, vlo, sizeof vlo);
        memcpy(hi, vhi, sizeof vhi);
        for (int k = 0; k < LANES; k++)
            cl[k] += (uint64_t)vcl[k / 4][k % 4];
    }
#else
    for (; j + LANES <= n; j += LANES)
        for (int k = 0; k < LANES; k++) {
            const double v = x[j + k];
            ML_STATS_ADD(k, v);
        }
#endif
    for (int k = 0; j < n; j++, k++) {
        const double v = x[j];
        ML_STATS_ADD(k, v);
    }
#undef ML_STATS_ADD
    for (int k = 0; k < LANES; k++) {
        q->lane_sum[k] = s[k];
        q->lane_sumsq[k] = ss[k];
        q->min = lo[k] < q->min ? lo[k] : q->min;
        q->max = hi[k] > q->max ? hi[k] : q->max;
        q->clipped += cl[k];
    }
    q->count += n;
}

ML_HOT void ml_stats_push_strided(ml_stats *q, const float *x, size_t n, size_t stride)
{
    double buf[RUN];
    size_t i = 0;
    while (i < n) {
        /* RUN samples gathered into a contiguous run of doubles; its finite samples go through
         * the lanes (which vectorise), a non-finite one is counted and skipped */
        const size_t m = n - i < RUN ? n - i : RUN;
        int bad = 0;
        for (size_t j = 0; j < m; j++) {
            buf[j] = x[(i + j) * stride];
            bad |= !(fabs(buf[j]) <= DBL_MAX);
        }
        size_t j = 0;
        while (j < m) {
            size_t run = m - j;
            if (bad)
                for (run = 0; j + run < m && isfinite(buf[j + run]); run++)
                    ;
            add_finite(q, buf + j, run);
            j += run;
            if (j < m) {
                q->nonfinite++;
                j++;
            }
        }
        i += m;
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
