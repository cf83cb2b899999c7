/* A second thread for the second half of a streamed pipeline (see worker.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/worker.h"

#include <pthread.h>
#include <stdlib.h>

struct ml_worker {
    pthread_t thread;
    pthread_mutex_t lock;
    pthread_cond_t cond;
    ml_worker_fn fn;
    void *ctx;
    void *queue[ML_WORKER_DEPTH]; /* submitted batches in order, queue[head] the oldest          */
    size_t head, count;           /* count: submitted and not finished, the running one included */
    bool quit;
};

static void *run(void *arg)
{
    ml_worker *w = arg;
    pthread_mutex_lock(&w->lock);
    for (;;) {
        while (w->count == 0 && !w->quit)
            pthread_cond_wait(&w->cond, &w->lock);
        if (w->count == 0) /* quit with nothing pending */
            break;
        void *b = w->queue[w->head];
        pthread_mutex_unlock(&w->lock);
        w->fn(w->ctx, b);
        pthread_mutex_lock(&w->lock);
        w->head = (w->head + 1) % ML_WORKER_DEPTH;
        w->count--;
        pthread_cond_broadcast(&w->cond);
    }
    pthread_mutex_unlock(&w->lock);
    return NULL;
}

ml_worker *ml_worker_start(ml_worker_fn fn, void *ctx)
{
    ml_worker *w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->fn = fn;
    w->ctx = ctx;
    if (pthread_mutex_init(&w->lock, NULL) != 0) {
        free(w);
        return NULL;
    }
    if (pthread_cond_init(&w->cond, NULL) != 0) {
        pthread_mutex_destroy(&w->lock);
        free(w);
        return NULL;
    }
    if (pthread_create(&w->thread, NULL, run, w) != 0) {
        pthread_cond_destroy(&w->cond);
        pthread_mutex_destroy(&w->lock);
        free(w);
        return NULL;
    }
    return w;
}

/* Waits (lock held) until at most `left` batches are outstanding. */
static void wait_until(ml_worker *w, size_t left)
{
    while (w->count > left)
        pthread_cond_wait(&w->cond, &w->lock);
}

void ml_worker_submit(ml_worker *w, ml_worker_fn fn, void *ctx, void *batch)
{
    if (w == NULL) {
        fn(ctx, batch);
        return;
    }
    pthread_mutex_lock(&w->lock);
    wait_until(w, ML_WORKER_DEPTH - 1);
    w->queue[(w->head + w->count) % ML_WORKER_DEPTH] = batch;
    w->count++;
    pthread_cond_broadcast(&w->cond);
    pthread_mutex_unlock(&w->lock);
}

void ml_worker_wait(ml_worker *w)
{
    if (w == NULL)
        return;
    pthread_mutex_lock(&w->lock);
    wait_until(w, 0);
    pthread_mutex_unlock(&w->lock);
}

void ml_worker_stop(ml_worker *w)
{
    if (w == NULL)
        return;
    pthread_mutex_lock(&w->lock);
    wait_until(w, 0);
    w->quit = true;
    pthread_cond_broadcast(&w->cond);
    pthread_mutex_unlock(&w->lock);
    pthread_join(w->thread, NULL);
    pthread_cond_destroy(&w->cond);
    pthread_mutex_destroy(&w->lock);
    free(w);
}
