/* Peak hold with a timed release: the display marker of a live meter.
 * SPDX-License-Identifier: MIT
 *
 * The held value h follows every reading that is at least h at once. After the latest such
 * reading (the peak, at time tp) h stays at the peak for hold_s; from tp + hold_s on it falls
 * linearly by decay_per_s per second, but never below the current reading:
 *     h(t) = max(x(t), peak - decay_per_s * max(0, t - tp - hold_s)).
 * Time advances only by the dt_s given to push, so the result does not depend on how the clock
 * is split into steps for a constant reading. A NaN reading (not measured) advances time and
 * leaves no current reading x, so h is then the released peak alone.
 */
#ifndef ML_DSP_PEAKHOLD_H
#define ML_DSP_PEAKHOLD_H

#include <stdbool.h>

#include "dsp/status.h"

typedef struct ml_peakhold ml_peakhold;

typedef struct {
    double hold_s;      /* time the peak is held: >= 0 (default 2)                              */
    double decay_per_s; /* fall after the hold, in the readings' units per second: > 0 (20)      */
} ml_peakhold_config;

ml_peakhold_config ml_peakhold_config_default(void);

/* Allocates the object. ML_EINVAL for a bad or NULL cfg; ML_ENOMEM. *out NULL on error. */
ml_status ml_peakhold_create(const ml_peakhold_config *cfg, ml_peakhold **out);
void ml_peakhold_destroy(ml_peakhold *q); /* NULL is a no-op */
/* Forgets the peak: the next reading is held as if it were the first. No allocation. */
void ml_peakhold_reset(ml_peakhold *q);

/* Advances time by dt_s (>= 0), then takes the reading x (NaN: none). ML_EINVAL for a negative
 * or non-finite dt_s. Never allocates. */
ml_status ml_peakhold_push(ml_peakhold *q, double dt_s, double x);

/* The held value; NaN before the first reading (or since reset). */
double ml_peakhold_get_value(const ml_peakhold *q);
/* True while the peak is inside its hold time (not yet released). */
bool ml_peakhold_holding(const ml_peakhold *q);

#endif
