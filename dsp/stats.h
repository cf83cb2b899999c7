/* Running time-domain statistics of a signal: mean, RMS, peaks, clipping, non-finite samples.
 * SPDX-License-Identifier: MIT
 *
 * A plain accumulator: memory does not depend on how many samples are pushed.
 */
#ifndef ML_DSP_STATS_H
#define ML_DSP_STATS_H

#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

typedef struct {
    double clip_hi;      /* a sample >= clip_hi counts as clipped (positive side)   */
    double clip_lo;      /* a sample <= clip_lo counts as clipped (negative side)   */
    uint64_t count;      /* finite samples seen                                     */
    uint64_t clipped;    /* samples at or beyond the clip thresholds                */
    uint64_t nonfinite;  /* NaN or infinite samples (not included in the sums)      */
    double sum;          /* sum of samples                                          */
    double sumsq;        /* sum of squared samples                                  */
    double min, max;     /* extremes (0 before the first sample)                    */
    /* partial sums: finite sample k goes to lane k % ML_STATS_LANES, and sum and sumsq are the
     * lanes added in order, so they do not depend on how the samples were split into pushes */
    double lane_sum[8], lane_sumsq[8];
} ml_stats;
#define ML_STATS_LANES 8

/* Clip thresholds for samples normalised to +-1.0 full scale with `bits` bits of resolution
 * (1 LSB = 2^(1-bits)): clipped means at or within 1 LSB of either full-scale code, that is
 * x >= 1 - 2 LSB (the positive full-scale code is 1 - 1 LSB) or x <= -1 + 1 LSB.
 * bits 2..32; ML_EINVAL otherwise. */
ml_status ml_stats_init(ml_stats *q, int bits);
void ml_stats_reset(ml_stats *q); /* keeps the thresholds */
void ml_stats_push(ml_stats *q, const float *x, size_t n);
/* The same for the n samples x[0], x[stride], x[2 stride], ... (one channel of interleaved
 * frames: stride = channels); stride >= 1. Never allocates. */
void ml_stats_push_strided(ml_stats *q, const float *x, size_t n, size_t stride);

/* Index of the first NaN or infinite value among x[0..n-1], or n when all are finite. */
size_t ml_first_nonfinite(const float *x, size_t n);

double ml_stats_mean(const ml_stats *q); /* 0 when empty */
double ml_stats_rms(const ml_stats *q);  /* 0 when empty */

#endif
