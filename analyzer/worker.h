/* A second thread for the second half of a streamed pipeline.
 * SPDX-License-Identifier: MIT
 *
 * The caller computes one batch while the worker consumes earlier ones: up to ML_WORKER_DEPTH
 * submitted batches wait or run on the worker, and ml_worker_submit blocks while that many are
 * outstanding. With ML_WORKER_DEPTH + 1 batch buffers used in turn, the caller never writes a
 * buffer the worker may still read, and either side can run ahead of the other by a few batches
 * when their costs vary from batch to batch. Batches are consumed in submission order, one at a
 * time, so results do not depend on timing.
 */
#ifndef ML_ANALYZER_WORKER_H
#define ML_ANALYZER_WORKER_H

#include <stdbool.h>

#define ML_WORKER_DEPTH 3

typedef struct ml_worker ml_worker;
typedef void (*ml_worker_fn)(void *ctx, void *batch);

/* Starts the thread; fn(ctx, batch) runs on it for each submitted batch. NULL when no thread
 * could be started (the caller then runs fn itself). */
ml_worker *ml_worker_start(ml_worker_fn fn, void *ctx);

/* Waits until fewer than ML_WORKER_DEPTH batches are outstanding, then hands over this one and
 * returns at once.
 * w == NULL: runs fn(ctx, batch) in the calling thread. */
void ml_worker_submit(ml_worker *w, ml_worker_fn fn, void *ctx, void *batch);

/* Waits until every submitted batch is done (NULL: no-op). */
void ml_worker_wait(ml_worker *w);

/* Waits, stops and joins the thread, frees w (NULL: no-op). */
void ml_worker_stop(ml_worker *w);

#endif
