/* Audio-file output: interleaved float frames written as WAV or FLAC through libsndfile.
 * SPDX-License-Identifier: MIT
 *
 * Samples are normalised like the input side (io/source.h): full scale is +-1.0, and a PCM file
 * read back through io/source returns each value to within half a code. Values beyond full scale
 * are clipped to the largest code in PCM files (never wrapped) and stored as they are in float
 * files.
 */
#ifndef ML_IO_SINK_H
#define ML_IO_SINK_H

#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

typedef struct ml_sink ml_sink;

typedef enum {
    ML_SINK_WAV = 0, /* RIFF WAVE (data limited to 4 GiB)                            */
    ML_SINK_FLAC,    /* FLAC, 16 or 24-bit PCM only                                  */
    ML_SINK_CONTAINER_COUNT
} ml_sink_container;

typedef enum {
    ML_SINK_PCM_16 = 0, /* 16-bit integer PCM                                          */
    ML_SINK_PCM_24,     /* 24-bit integer PCM                                          */
    ML_SINK_FLOAT,      /* 32-bit IEEE float (WAV only)                                */
    ML_SINK_ENCODING_COUNT
} ml_sink_encoding;

typedef struct {
    ml_sink_container container;
    ml_sink_encoding encoding;
    int rate_hz;  /* frames per second: >= 1 and what libsndfile accepts for the container */
    int channels; /* 1 .. 64                                                               */
} ml_sink_config;

/* WAV, 24-bit PCM, at rate_hz with `channels` channels. */
ml_sink_config ml_sink_config_default(int rate_hz, int channels);

/* Container from the file name's extension, case-insensitive: ".wav" or ".flac".
 * ML_EINVAL for NULL arguments, ML_EFORMAT for any other name (c untouched). */
ml_status ml_sink_container_from_path(const char *path, ml_sink_container *c);

/* Bytes one frame takes in the file's data (2, 3 or 4 per channel; FLAC: the PCM size before
 * compression). 0 for a bad configuration. */
size_t ml_sink_frame_bytes(const ml_sink_config *cfg);

/* Checks that libsndfile can write cfg. ML_EINVAL with a reason in detail[detail_len]
 * (detail may be NULL). Does not touch any file. */
ml_status ml_sink_check(const ml_sink_config *cfg, char *detail, size_t detail_len);

/* Creates (or truncates) the file `path` and writes its header. ML_EINVAL for a configuration
 * libsndfile or its codec cannot write (for example a rate FLAC cannot hold), ML_EIO when the
 * file cannot be created, ML_ENOMEM; the reason goes to detail[detail_len] (may be NULL). *out is
 * NULL on failure. Allocates. */
ml_status ml_sink_open_file(const char *path, const ml_sink_config *cfg, ml_sink **out, char *detail,
                            size_t detail_len);

/* Same on an open, seekable descriptor positioned at its start; ml_sink_close leaves fd open
 * (the caller owns it). */
ml_status ml_sink_open_fd(int fd, const ml_sink_config *cfg, ml_sink **out, char *detail, size_t detail_len);

/* Appends nframes frames from frames[nframes * channels]. PCM files hold the nearest code
 * round(x 2^(bits-1)) (half to even), clipped to the code range. ML_ERANGE when a value is NaN or
 * infinite (nothing of the block is written), ML_EIO on a write failure (reason in
 * ml_sink_detail), ML_EINVAL for NULL arguments. Does not allocate. */
ml_status ml_sink_write(ml_sink *s, const float *frames, size_t nframes);

/* Makes every later ml_sink_write rewrite the header too, so the file is complete after each
 * write (a capture interrupted at any moment, even by kill -9, leaves a valid file). Costs a
 * header seek per write. ML_EINVAL for NULL. */
ml_status ml_sink_set_durable(ml_sink *s);

/* Frames written so far. */
uint64_t ml_sink_frames(const ml_sink *s);

/* Back-end text of the last failure ("" when none); never NULL for a non-NULL s. */
const char *ml_sink_detail(const ml_sink *s);

/* Completes the header, closes and frees s (NULL: ML_OK, no-op). ML_EIO when the file could not
 * be completed; the reason goes to detail[detail_len] (may be NULL). The file is left in place
 * either way; removing a failed file is the caller's decision. */
ml_status ml_sink_close(ml_sink *s, char *detail, size_t detail_len);

#endif
