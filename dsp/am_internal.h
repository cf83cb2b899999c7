/* Private to dsp/am*.c: the demodulator's parts along their concepts. dsp/am.c is the object
 * (mixer, channel filter, delay lines, envelope, the carrier's phase and its oversampling); the
 * parts here keep their own state and see only the envelope samples they are given.
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
#define ML_AM_HIST_RANGE 4.0 /* the histograms cover ML_AM_HIST_RANGE * carrier_ref ...            */
#define ML_AM_HIST_LOW 0.5   /* ... from -ML_AM_HIST_LOW * carrier_ref (a reversed carrier) on     */
#define ML_AM_OVERSAMPLE 4
#define ML_AM_ABSENT_REL 0.1 /* a block whose mean is below 10 % of carrier_ref holds no carrier */

/* ---- block classification and peak histograms (dsp/am_blocks.c) --------------------------- *
 * The envelope is cut into blocks of `len` samples. A block is quiet (unmodulated carrier) when
 * its mean is above 5 % of carrier_ref and the spread of its envelope beyond the noise is small:
 * var(E) - var(Q) < (quiet_rel mean)^2 + allow var(Q), where Q is the baseband's quadrature
 * component (perpendicular to the block's own mean phasor, from the block's second moments of
 * the baseband turned back by the followed phase: a phase error does not matter, a frequency
 * error would add a ramp, and the turning rate is measured each block), which holds the noise
 * alone, as much of it as the in-phase part that adds to the envelope, and allow covers the
 * spread of the
 * two variance estimates (6 / sqrt(independent samples in a block): three standard deviations of
 * their difference for Gaussian noise). Without noise this is std(E) < quiet_rel mean. The
 * oversampled values of a block wait as histogram bins in pending[] until the block is
 * classified, then go into the quiet or the modulated histogram. A block whose mean is below
 * ML_AM_ABSENT_REL of carrier_ref holds no carrier (the transmitter is off, or the signal gone:
 * no modulation from 20 Hz up brings a 20 ms block's mean that low): it enters no sum and no
 * histogram, and is tagged like a quiet one (0). The values are the signed
 * reading (dsp/am.h): the histograms run from -ML_AM_HIST_LOW to ML_AM_HIST_RANGE -
 * ML_AM_HIST_LOW times carrier_ref. */
typedef struct {
    size_t len, fill;          /* block length; samples in the current block                   */
    double sum, sumsq;         /* envelope sums of the current block                           */
    double sum_s;              /* coherent envelope sum of the current block                   */
    double complex sum_y;      /* baseband sum of the current block (the carrier's phase)      */
    double complex sum_lag;    /* sum of y[i] conj(y[i - L]), L half a block: the turning rate */
    double complex sum_v;      /* sum of the baseband turned back by the followed phase (v)     */
    double srr, sii, sri;      /* v's second moments: sums of re^2, im^2, re im                 */
    uint16_t *pending;         /* bins of its ML_AM_OVERSAMPLE * len oversampled values         */
    size_t npending;
    double carrier_ref, quiet_rel, allow;
    double sum_all, sum_mod, sum_quiet;
    double sum_s_all, sum_s_mod; /* coherent envelope over all and over modulated blocks        */
    double q_var_all, q_var_quiet; /* sum over blocks of len x var(Q): the noise               */
    uint64_t n_mod, n_quiet, n_absent;
    bool followed;             /* the current block was turned back by a measured phase and rate:
                                  only such blocks' quadrature counts as noise                   */
    uint64_t n_noise_all, n_noise_quiet; /* samples behind q_var_all, q_var_quiet               */
    bool last_absent;          /* the block just ended was one without carrier                  */
    uint64_t *hist_quiet, *hist_mod; /* oversampled readings of quiet and of modulated blocks  */
    uint64_t hist_quiet_n, hist_mod_n;
    double hist_scale;         /* bins per unit of envelope                                    */
} ml_am_blocks;

/* neff: independent noise samples in a block (len x min(1, 2 B / rate)). */
ml_status ml_am_blocks_init(ml_am_blocks *b, size_t len, double carrier_ref, double quiet_rel, double neff);
void ml_am_blocks_free(ml_am_blocks *b);
void ml_am_blocks_reset(ml_am_blocks *b);
/* Classifies the current block (fill > 0), moves its sums and pending bins into the totals of its
 * class and starts the next block. Returns true when the block was modulated (last_absent says
 * whether it held no carrier). */
bool ml_am_blocks_end(ml_am_blocks *b);
/* Level below which a share p of the modulated blocks' oversampled readings lies (the quiet
 * blocks' when none is modulated); 0 without samples. */
double ml_am_blocks_quantile(const ml_am_blocks *b, double p);
/* Share (0..1) of all envelope time whose reading lies below level. */
double ml_am_blocks_fraction_below(const ml_am_blocks *b, double level);
/* The noise: variance of the quadrature component per sample over the quiet blocks when there
 * are any, else over all blocks so far, of those turned back by a measured phase and rate
 * (followed); -1 before the first such block ends. */
double ml_am_blocks_noise_var(const ml_am_blocks *b);
/* The current (partial) block's quadrature variance about its own mean phasor; -1 when empty. */
double ml_am_blocks_var_q(const ml_am_blocks *b);

/* ---- troughs, crests and overmodulation events (dsp/am_events.c) --------------------------- *
 * Levels in units of carrier_ref. A trough begins where the envelope falls below 1 - hyst and
 * ends where the whole interval of a sample is back at or above 1; a crest begins above 1 + hyst
 * and ends at or below 1. Each trough is judged once, when it ends (dsp/am.h). */
typedef struct {
    float floor, floor4, rev, hyst; /* pinch floor F, 4 F, reversal depth, trough/crest margin  */
    float share;               /* pinch-off: more than this share of the time below 4 F below F */
} ml_am_levels;

/* Per envelope sample (units of carrier_ref): the lowest and highest oversampled envelope of its
 * interval and the sample, the lowest coherent reading, and of the ML_AM_OVERSAMPLE values of the
 * interval how many lie below F, below 4 F, and how many have a negative coherent reading. */
typedef struct {
    float *lo, *hi, *slo;
    unsigned char *n_floor, *n_floor4, *n_neg;
} ml_am_marks;

typedef struct {
    int state;                 /* 0 none, -1 in a trough, +1 in a crest                        */
    bool t_absent;             /* the trough overlaps a block without carrier, or is cut by
                                  either end of the input: not judged                           */
    bool seen;                 /* a value was pushed since the reset                           */
    float t_lo, t_slo, c_hi;   /* trough: lowest envelope and coherent reading; crest: highest  */
    uint64_t t_floor, t_floor4, t_neg; /* trough: oversampled values below F, 4 F, negative    */
    uint64_t pinch_events, reversal_events, troughs, crests, absent_troughs;
    uint64_t off_values, reversed_values; /* oversampled values: carrier off, carrier reversed  */
    uint64_t *crest_hist;      /* the crests' highest values, 0 .. ML_AM_HIST_RANGE carrier_ref */
} ml_am_events;

#define ML_AM_PINCH_MIN4 8 /* a pinch-off is judged on at least this many oversampled values below 4 F */

ml_status ml_am_events_init(ml_am_events *ev);
void ml_am_events_free(ml_am_events *ev);
void ml_am_events_reset(ml_am_events *ev);
/* n envelope samples er (units of carrier_ref) with their marks, judged by the levels lv. */
void ml_am_events_push(ml_am_events *ev, const ml_am_levels *lv, const double *er, const ml_am_marks *mk,
                       size_t n);
/* Judges a trough left open at the end of the span (as if it ended there). */
void ml_am_events_end(ml_am_events *ev, const ml_am_levels *lv);
/* Crests whose highest value exceeds level (units of carrier_ref). */
uint64_t ml_am_events_crests_above(const ml_am_events *ev, double level);

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
