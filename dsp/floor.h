/* Running robust floor: a quantile of the last N values of a level sequence (in dB).
 * SPDX-License-Identifier: MIT
 *
 * The values are kept in a ring of N and counted in a histogram of step_db wide bins between lo_db
 * and hi_db (values outside are clamped to the edges); a cursor on the quantile's bin follows the
 * pushes, so a push costs O(1) plus the cursor's move and a query O(1); memory is fixed at create.
 * The quantile is the lowest bin below whose upper edge lies at least the share q of the values,
 * read at the bin's centre (resolution step_db). The
 * median (q = 0.5) ignores anything that occupies less than half of the window: short bursts do
 * not raise the floor.
 */
#ifndef ML_DSP_FLOOR_H
#define ML_DSP_FLOOR_H

#include <stddef.h>

#include "dsp/status.h"

typedef struct ml_floor ml_floor;

typedef struct {
    size_t window;   /* values remembered: 1 .. 2^24 (default 1000)                */
    double quantile; /* share of values below the floor: 0 < q < 1 (default 0.5)  */
    double lo_db;    /* histogram range (default -200 .. +20 dB)                  */
    double hi_db;
    double step_db;  /* bin width: > 0, at most 1e6 bins in the range (0.1 dB)    */
} ml_floor_config;

ml_floor_config ml_floor_config_default(size_t window);

/* Allocates the ring and histogram. ML_EINVAL | ML_ENOMEM. */
ml_status ml_floor_create(const ml_floor_config *cfg, ml_floor **out);
void ml_floor_destroy(ml_floor *q); /* NULL is a no-op */
void ml_floor_reset(ml_floor *q);   /* forgets every value */

/* Appends n values v[n] in dB (NaN values are skipped); the oldest drop out beyond window. */
ml_status ml_floor_push(ml_floor *q, const double *v, size_t n);

/* The quantile of the values held (dB, resolution step_db); NAN when none is held. */
double ml_floor_get_level(const ml_floor *q);
/* Number of values held: min(pushed since reset, window). */
size_t ml_floor_get_count(const ml_floor *q);

/* The values held, oldest first, as the centres of the bins they were counted in, into v[cap]
 * (the first min(count, cap)); returns the number held. Pushing them into a floor of the same
 * config after a reset rebuilds this one exactly (a log resumed in a new process). */
size_t ml_floor_get_values(const ml_floor *q, double *v, size_t cap);

#endif
