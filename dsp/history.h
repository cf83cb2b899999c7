/* Bounded history of equally long columns (a spectrogram of any duration in fixed memory).
 * SPDX-License-Identifier: MIT
 *
 * Columns of nrows values (linear powers) are appended with their time span. At most max_cols are
 * kept: when full, neighbouring pairs are merged (the mean of their values, the union of their
 * spans), and from then on every kept column gathers twice as many pushed columns. The history
 * therefore always covers everything pushed, at a time resolution that halves as it grows.
 */
#ifndef ML_DSP_HISTORY_H
#define ML_DSP_HISTORY_H

#include <stddef.h>

#include "dsp/status.h"

typedef struct ml_history ml_history;

typedef struct {
    size_t nrows;    /* values per column: 1 .. 4096 (default 128)      */
    size_t max_cols; /* columns kept: even, 2 .. 65536 (default 1024)   */
} ml_history_config;

ml_history_config ml_history_config_default(void);
/* Allocates max_cols * nrows values. ML_EINVAL | ML_ENOMEM. */
ml_status ml_history_create(const ml_history_config *cfg, ml_history **out);
void ml_history_destroy(ml_history *q);
void ml_history_reset(ml_history *q);
/* Appends one column col[nrows] spanning t0_s .. t1_s. Never allocates. */
ml_status ml_history_push(ml_history *q, double t0_s, double t1_s, const double *col);
/* Columns available (the last may still be gathering). */
size_t ml_history_get_count(const ml_history *q);
/* Column i (0 = oldest): its values (nrows, read-only, valid until the next push) and span.
 * NULL for i out of range. */
const double *ml_history_get_column(const ml_history *q, size_t i, double *t0_s, double *t1_s);
size_t ml_history_get_rows(const ml_history *q);

#endif
