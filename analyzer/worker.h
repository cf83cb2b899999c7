/* A second thread for the second half of a streamed pipeline.
 * SPDX-License-Identifier: MIT
 *
 * The caller computes one batch while the worker consumes the previous one (double buffering):
 * ml_worker_submit hands a batch over once the worker has finished the one before, so with two
 * alternating batch buffers the caller never writes a buffer the worker still reads. Batches are
 * consumed in submission order, one at a time, so results do not depend on timing.
 */
#ifndef ML_ANALYZER_WORKER_H
#define ML_ANALYZER_WORKER_H

#include <stdbool.h>

typedef struct ml_worker ml_worker;
typedef void (*ml_worker_fn)(void *ctx, void *batch);

/* Starts the thread; fn(ctx, batch) runs on it for each submitted batch. NULL when no thread
 * could be started (the caller then runs fn itself). */
ml_worker *ml_worker_start(ml_worker_fn fn, void *ctx);

/* Waits until the previous batch is done, then hands over this one and returns at once.
 * w == NULL: runs fn(ctx, batch) in the calling thread. */
void ml_worker_submit(ml_worker *w, ml_worker_fn fn, void *ctx, void *batch);

/* Waits until every submitted batch is done (NULL: no-op). */
void ml_worker_wait(ml_worker *w);

/* Waits, stops and joins the thread, frees w (NULL: no-op). */
void ml_worker_stop(ml_worker *w);

#endif
