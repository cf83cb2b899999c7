/* Which samples of an interleaved frame the analysis takes, and taking them: the one place
 * where channels are mapped (I/Q order, reference channel) and split out of the frames.
 * SPDX-License-Identifier: MIT
 *
 * Frames come from files and devices as interleaved floats (io/source.h): frame i holds
 * data[i * stride + c] for channel c = 0 .. stride - 1. An analysis takes one real column
 * (audio, or a real IF signal), or two as the real and imaginary parts of I/Q, and optionally a
 * reference column (the modulating audio).
 */
#ifndef ML_DSP_CHANNELS_H
#define ML_DSP_CHANNELS_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/status.h"

typedef struct {
    size_t stride;      /* samples per frame (the channel count): >= 1                        */
    size_t re;          /* column of the real part: audio, IF, or I                             */
    size_t im;          /* column of the imaginary part Q (complex only)                        */
    bool complex_input; /* I/Q: re and im; otherwise re alone                                    */
    bool has_ref;       /* a reference column is taken too                                       */
    size_t ref;         /* its column (has_ref)                                                  */
} ml_channels;

/* The map for a frame of `channels` channels: channel (1-based) is the analysed one, for I/Q the
 * I channel with Q the next (swap_iq: Q then I); reference_channel (1-based, 0 = none).
 * ML_EINVAL when a column lies outside the frame, or the reference is one of the analysed. */
ml_status ml_channels_map(int channels, long channel, bool complex_input, bool swap_iq,
                          long reference_channel, ml_channels *out);

/* The analysed real column of n frames into re[n] and, for I/Q, the imaginary column into im[n]
 * (im may be NULL for real input). */
void ml_channels_split(const ml_channels *c, const float *frames, size_t n, float *re, float *im);

/* The same as complex samples z[n] (imaginary part 0 for real input). */
void ml_channels_split_complex(const ml_channels *c, const float *frames, size_t n, double _Complex *z);

/* The reference column of n frames into ref[n]; nothing when !has_ref. */
void ml_channels_split_ref(const ml_channels *c, const float *frames, size_t n, float *ref);

#endif
