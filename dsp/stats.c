/* Running time-domain statistics.
 * SPDX-License-Identifier: MIT
 */
#include "dsp/stats.h"

#include <math.h>
#include <string.h>

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

void ml_stats_push(ml_stats *q, const float *x, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        double v = x[i];
        if (!isfinite(v)) {
            q->nonfinite++;
            continue;
        }
        if (q->count == 0) {
            q->min = v;
            q->max = v;
        } else {
            if (v < q->min)
                q->min = v;
            if (v > q->max)
                q->max = v;
        }
        q->count++;
        q->sum += v;
        q->sumsq += v * v;
        if (v >= q->clip_hi || v <= q->clip_lo)
            q->clipped++;
    }
}

double ml_stats_mean(const ml_stats *q)
{
    return q->count ? q->sum / (double)q->count : 0.0;
}

double ml_stats_rms(const ml_stats *q)
{
    return q->count ? sqrt(q->sumsq / (double)q->count) : 0.0;
}
