/* Single-producer single-consumer ring of interleaved float frames, safe between an audio
 * callback (one side) and a normal thread (the other side).
 * SPDX-License-Identifier: MIT
 *
 * Lock-free: each side owns one index and reads the other's with acquire ordering (C11 atomics).
 * Neither push nor pop allocates, blocks or makes a system call, so both may run in a real-time
 * audio callback.
 */
#ifndef ML_IO_RING_H
#define ML_IO_RING_H

#include <stdatomic.h>
#include <stddef.h>

#include "dsp/status.h"

typedef struct {
    float *data;          /* capacity * channels floats                                    */
    size_t capacity;      /* frames; a power of two                                        */
    size_t channels;
    atomic_size_t head;   /* frames ever pushed (producer owns)                            */
    atomic_size_t tail;   /* frames ever popped (consumer owns)                            */
} ml_ring;

/* Allocates room for at least min_frames frames (rounded up to a power of two) of `channels`
 * channels. ML_EINVAL for zero sizes, ML_ENOMEM. */
ml_status ml_ring_init(ml_ring *r, size_t min_frames, size_t channels);
void ml_ring_free(ml_ring *r);

/* Frames ready to pop / room to push, as seen from the calling side. */
size_t ml_ring_readable(ml_ring *r);
size_t ml_ring_writable(ml_ring *r);

/* Producer: copies up to n frames from x[n * channels]; returns the frames copied (the rest do
 * not fit). x NULL pushes silence. */
size_t ml_ring_push(ml_ring *r, const float *x, size_t n);
/* Consumer: copies up to n frames into y[n * channels]; returns the frames copied. */
size_t ml_ring_pop(ml_ring *r, float *y, size_t n);

#endif
