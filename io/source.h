/* One pull interface for every input: audio files now, live devices later.
 * SPDX-License-Identifier: MIT
 *
 * Samples come out as interleaved float frames normalised so that full scale is +-1.0
 * (libsndfile's float conversion), which is the dBFS reference of every metric.
 */
#ifndef ML_IO_SOURCE_H
#define ML_IO_SOURCE_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

typedef struct ml_source ml_source;

typedef struct {
    double rate_hz;      /* sample rate                                              */
    int channels;        /* >= 1                                                     */
    int64_t frames;      /* total frames; -1 when unknown (live input)               */
    int bits;            /* resolution of the stored samples: 8, 16, 24, 32; 24 for
                            float files (their mantissa)                             */
    bool is_float;       /* samples stored as floating point                         */
    char format[64];     /* short description, for example "WAV 24-bit PCM"          */
    bool cut_short;      /* the header announces more sample data than the file holds
                            (a recording cut off); frames counts what is there        */
} ml_source_info;

/* Opens an audio file (any format libsndfile reads: WAV, FLAC, AIFF, ...).
 * ML_EIO when it cannot be opened, ML_EFORMAT when it is not audio we can read;
 * ml_source_detail() of the returned NULL is not available, so the detail comes back in
 * detail[detail_len] (may be NULL). */
ml_status ml_source_open_file(const char *path, ml_source **out, char *detail, size_t detail_len);

/* As ml_source_open_file, for an open file: reads a duplicate of fd from its start (the caller
 * keeps fd and may close it once this returns). */
ml_status ml_source_open_fd(int fd, ml_source **out, char *detail, size_t detail_len);

/* Closes and frees; NULL is a no-op. */
void ml_source_close(ml_source *s);

const ml_source_info *ml_source_get_info(const ml_source *s);

/* Skips to frame `frame` from the start. ML_EINVAL when past the end or not seekable. */
ml_status ml_source_seek(ml_source *s, int64_t frame);

/* Reads up to nframes interleaved frames into buf[nframes * channels]. *got < nframes only at
 * the end of the input (or when a live capture stops). ML_EIO on a read failure. */
ml_status ml_source_read(ml_source *s, float *buf, size_t nframes, size_t *got);

/* Back-end text for the last failure ("" when none). Never NULL for a non-NULL s. */
const char *ml_source_detail(const ml_source *s);

/* Frames lost by the input (live overflows); 0 for files. */
uint64_t ml_source_lost_frames(const ml_source *s);

#endif
