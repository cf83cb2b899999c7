/* Private to dsp/am*.c: the demodulator's parts along their concepts. dsp/am.c is the object
 * (mixer, channel filter, delay lines, envelope and its oversampling); the parts here keep
 * their own state and see only the envelope samples they are given.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_DSP_AM_INTERNAL_H
#define ML_DSP_AM_INTERNAL_H

#include <complex.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

#define ML_AM_HIST_BINS 65536
#define ML_AM_HIST_RANGE 4.0 /* the histograms cover 0 .. ML_AM_HIST_RANGE * carrier_ref */
#define ML_AM_OVERSAMPLE 4

/* ---- block classification and peak histograms (dsp/am_blocks.c) --------------------------- *
 * The envelope is cut into blocks of `len` samples; a block is quiet (unmodulated carrier) when
 * the standard deviation of its envelope is below quiet_rel times its mean and its mean is above
 * 5 % of carrier_ref. The oversampled values of a block wait as histogram bins in pending[] until
 * the block is classified, then go into the quiet or the modulated histogram. */
typedef struct {
    size_t len, fill;          /* block length; samples in the current block                   */
    double sum, sumsq;         /* envelope sums of the current block                           */
    uint16_t *pending;         /* bins of its ML_AM_OVERSAMPLE * len oversampled values         */
    size_t npending;
    double carrier_ref, quiet_rel;
    double sum_all, sum_mod, sum_quiet;
    uint64_t n_mod, n_quiet;
    uint64_t *hist_quiet, *hist_mod; /* oversampled envelope of quiet and of modulated blocks  */
    uint64_t hist_quiet_n, hist_mod_n;
    double hist_scale;         /* bins per unit of envelope                                    */
} ml_am_blocks;

ml_status ml_am_blocks_init(ml_am_blocks *b, size_t len, double carrier_ref, double quiet_rel);
void ml_am_blocks_free(ml_am_blocks *b);
void ml_am_blocks_reset(ml_am_blocks *b);
/* Classifies the current block (fill > 0), moves its sums and pending bins into the totals of its
 * class and starts the next block. Returns true when the block was modulated. */
bool ml_am_blocks_end(ml_am_blocks *b);
/* Level below which a share p of the modulated blocks' oversampled envelope lies (the quiet
 * blocks' when none is modulated); 0 without samples. */
double ml_am_blocks_quantile(const ml_am_blocks *b, double p);
/* Share (0..1) of all envelope time spent below level. */
double ml_am_blocks_fraction_below(const ml_am_blocks *b, double level);

/* ---- overmodulation events and positive excursions (dsp/am_events.c) ---------------------- */
typedef struct {
    double half, thr_good, thr_in, thr_pos_in, thr_pos_out;
    bool in_low, in_pos, have_prev;
    double low_min, prev_env;
    double complex y_before, prev_y; /* baseband before the low run, and the previous one      */
    uint64_t pinch_events, reversal_events, positive_over;
} ml_am_events;

void ml_am_events_init(ml_am_events *ev, double carrier_ref, double pinch_rel, double positive_limit_pct);
void ml_am_events_reset(ml_am_events *ev);
/* n envelope samples e with their baseband y and the lowest oversampled value of each sample's
 * interval low[n]. */
void ml_am_events_push(ml_am_events *ev, const double complex *y, const double *e, const double *low,
                       size_t n);

/* ---- trapezoid: least-squares line of the envelope against the reference (dsp/am_trapezoid.c) */
typedef struct {
    double sa, se, saa, sae, see;
    uint64_t n;
} ml_am_trapezoid;

void ml_am_trapezoid_push(ml_am_trapezoid *t, const float *a, const double *e, size_t n);
/* slope, intercept, RMS residual and reference RMS; false when the reference did not vary. */
bool ml_am_trapezoid_fit(const ml_am_trapezoid *t, double *slope, double *intercept, double *residual_rms,
                         double *ref_rms);

#endif
