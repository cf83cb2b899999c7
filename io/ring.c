/* Lock-free SPSC frame ring (see io/ring.h).
 * SPDX-License-Identifier: MIT
 */
#include "io/ring.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

ml_status ml_ring_init(ml_ring *r, size_t min_frames, size_t channels)
{
    if (r == NULL || min_frames == 0 || channels == 0 || min_frames > SIZE_MAX / 4 / channels / sizeof(float))
        return ML_EINVAL;
    size_t cap = 1;
    while (cap < min_frames)
        cap <<= 1;
    r->data = calloc(cap * channels, sizeof *r->data);
    if (r->data == NULL)
        return ML_ENOMEM;
    r->capacity = cap;
    r->channels = channels;
    atomic_init(&r->head, 0);
    atomic_init(&r->tail, 0);
    return ML_OK;
}

void ml_ring_free(ml_ring *r)
{
    if (r == NULL)
        return;
    free(r->data);
    r->data = NULL;
    r->capacity = 0;
}

size_t ml_ring_readable(ml_ring *r)
{
    return atomic_load_explicit(&r->head, memory_order_acquire) - atomic_load_explicit(&r->tail, memory_order_relaxed);
}

size_t ml_ring_writable(ml_ring *r)
{
    return r->capacity
           - (atomic_load_explicit(&r->head, memory_order_relaxed) - atomic_load_explicit(&r->tail, memory_order_acquire));
}

/* Copies n frames between the ring at frame index `at` and a flat buffer, in up to two pieces. */
static void copy(ml_ring *r, size_t at, float *flat, size_t n, int into_ring)
{
    const size_t mask = r->capacity - 1, ch = r->channels;
    size_t first = r->capacity - (at & mask);
    if (first > n)
        first = n;
    float *ring1 = r->data + (at & mask) * ch;
    if (into_ring) {
        if (flat)
            memcpy(ring1, flat, first * ch * sizeof *flat);
        else
            memset(ring1, 0, first * ch * sizeof *ring1);
        if (n > first) {
            if (flat)
                memcpy(r->data, flat + first * ch, (n - first) * ch * sizeof *flat);
            else
                memset(r->data, 0, (n - first) * ch * sizeof *r->data);
        }
    } else {
        memcpy(flat, ring1, first * ch * sizeof *flat);
        if (n > first)
            memcpy(flat + first * ch, r->data, (n - first) * ch * sizeof *flat);
    }
}

size_t ml_ring_push(ml_ring *r, const float *x, size_t n)
{
    const size_t head = atomic_load_explicit(&r->head, memory_order_relaxed);
    const size_t room = r->capacity - (head - atomic_load_explicit(&r->tail, memory_order_acquire));
    if (n > room)
        n = room;
    copy(r, head, (float *)x, n, 1);
    atomic_store_explicit(&r->head, head + n, memory_order_release);
    return n;
}

size_t ml_ring_pop(ml_ring *r, float *y, size_t n)
{
    const size_t tail = atomic_load_explicit(&r->tail, memory_order_relaxed);
    const size_t avail = atomic_load_explicit(&r->head, memory_order_acquire) - tail;
    if (n > avail)
        n = avail;
    copy(r, tail, y, n, 0);
    atomic_store_explicit(&r->tail, tail + n, memory_order_release);
    return n;
}
