/* Dropouts in a stream of samples: runs of digital silence and sudden discontinuities.
 * SPDX-License-Identifier: MIT
 *
 * Streamed, bounded memory (a few numbers of state and at most ML_DROPOUT_MAX_EVENTS stored
 * events); the events do not depend on how the samples are split into pushes. Sample indices
 * count from the last reset (0 = the first sample pushed).
 *  - silence: a run of at least min_silence_s of one repeated value -- exact zeros, or any
 *    constant (a stuck converter, a held sample) -- is an ML_DROPOUT_SILENCE event [start, end].
 *    Audio above 20 Hz at one LSB or more does not hold a value for more than about a third of
 *    its period (17 ms at 20 Hz), so the default 50 ms leaves quiet passages alone; content below
 *    10 Hz with flat stretches (a slow square wave) would be taken for silence. A run at the very
 *    start is reported like any other (start 0: the capture began silent); one still going on at
 *    the last sample is reported by ml_dropout_get as ongoing, ending at the last sample.
 *  - step: the second difference e[n] = x[n] - 2 x[n-1] + x[n-2] (the error of predicting x[n] by
 *    continuing the last slope) is compared with its recent rms value s (an exponential mean of
 *    e^2 with time constant scale_s, not updated by flagged samples). |e| > step_ratio * s and
 *    |e| >= min_step flags the sample; flagged samples at most 3 apart form one ML_DROPOUT_STEP
 *    event [start, end] (a one-sample glitch flags its sample and the two after it). A pure tone
 *    has max|e| = sqrt(2) s, Gaussian noise about 5 s in 10^7 samples, so the default 20 is far
 *    from both; a step in a tone of frequency f and amplitude A has |e| about A against
 *    s = (2 pi f / rate)^2 A / sqrt(2): found below about rate / 8. Detection starts once scale_s
 *    of samples have set s, and again after each silence event; the steps into and out of a
 *    silence event are part of it, not step events.
 */
#ifndef ML_DSP_DROPOUT_H
#define ML_DSP_DROPOUT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

#define ML_DROPOUT_MAX_EVENTS 256

typedef struct {
    double rate_hz;       /* > 0                                                               */
    double min_silence_s; /* shortest silence event, > 0 (default 0.05)                        */
    double step_ratio;    /* > 1 (default 20)                                                  */
    double min_step;      /* >= 0, full scale 1 (default 1e-4, -80 dBFS)                         */
    double scale_s;       /* time constant of the recent rms second difference, > 0 (0.01)       */
} ml_dropout_config;

typedef enum {
    ML_DROPOUT_SILENCE = 0, /* a run of one repeated value                                     */
    ML_DROPOUT_STEP,        /* a discontinuity                                                 */
} ml_dropout_kind;

typedef struct {
    ml_dropout_kind kind;
    int64_t start, end; /* first and last sample of the event, inclusive                       */
    double value;       /* SILENCE: the repeated value; STEP: the largest |e|                 */
    double ratio;       /* STEP: that |e| over s; SILENCE: 0                                   */
} ml_dropout_event;

typedef struct {
    size_t nevents;         /* every event so far (an ongoing silence run included)          */
    size_t nsilence, nstep; /* of each kind                                                  */
    int64_t silent_samples; /* samples inside silence events                                 */
    int64_t samples;        /* samples pushed since reset                                    */
    bool ongoing;           /* the last event is a silence run still going on at the end     */
    size_t nstored;         /* events[] holds the first nstored events, in order             */
    ml_dropout_event events[ML_DROPOUT_MAX_EVENTS];
} ml_dropout_result;

typedef struct ml_dropout ml_dropout;

ml_dropout_config ml_dropout_config_default(double rate_hz);
/* Allocates the object. ML_EINVAL (bad config) | ML_ENOMEM leave *out NULL. */
ml_status ml_dropout_create(const ml_dropout_config *cfg, ml_dropout **out);
void ml_dropout_destroy(ml_dropout *q); /* NULL is a no-op */
void ml_dropout_reset(ml_dropout *q);   /* as just created; no allocation */
/* Appends n samples (any n; x may be NULL only when n == 0). Never allocates. */
ml_status ml_dropout_push(ml_dropout *q, const float *x, size_t n);
/* The events so far, an ongoing silence run of at least min_silence_s included. ML_EINVAL. */
ml_status ml_dropout_get(const ml_dropout *q, ml_dropout_result *r);

#endif
