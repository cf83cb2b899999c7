/* Channel mapping and splitting of interleaved frames (see dsp/channels.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/channels.h"

#include <complex.h>
#include <string.h>

#ifndef CMPLX /* C11; glibc's <complex.h> defines it for GCC only, clang has the same builtin */
#define CMPLX(x, y) __builtin_complex((double)(x), (double)(y))
#endif

ml_status ml_channels_map(int channels, long channel, bool complex_input, bool swap_iq,
                          long reference_channel, ml_channels *out)
{
    if (out == NULL || channels < 1 || channel < 1 || channel + (complex_input ? 1 : 0) > channels
        || reference_channel < 0 || reference_channel > channels
        || (reference_channel > 0
            && (reference_channel == channel || (complex_input && reference_channel == channel + 1))))
        return ML_EINVAL;
    const size_t c0 = (size_t)(channel - 1);
    *out = (ml_channels){.stride = (size_t)channels,
                         .re = c0 + (complex_input && swap_iq ? 1 : 0),
                         .im = complex_input ? c0 + (swap_iq ? 0 : 1) : c0,
                         .complex_input = complex_input,
                         .has_ref = reference_channel > 0,
                         .ref = reference_channel > 0 ? (size_t)(reference_channel - 1) : 0};
    return ML_OK;
}

void ml_channels_split(const ml_channels *c, const float *frames, size_t n, float *re, float *im)
{
    const size_t st = c->stride, r = c->re, q = c->im;
    /* one plain loop per case */
    if (st == 1) {
        memcpy(re, frames, n * sizeof *re);
    } else {
        for (size_t i = 0; i < n; i++)
            re[i] = frames[i * st + r];
    }
    if (c->complex_input && im != NULL)
        for (size_t i = 0; i < n; i++)
            im[i] = frames[i * st + q];
}

void ml_channels_split_complex(const ml_channels *c, const float *frames, size_t n, double _Complex *z)
{
    const size_t st = c->stride, r = c->re, q = c->im;
    if (c->complex_input) {
        for (size_t i = 0; i < n; i++)
            z[i] = CMPLX(frames[i * st + r], frames[i * st + q]);
    } else {
        for (size_t i = 0; i < n; i++)
            z[i] = CMPLX(frames[i * st + r], 0.0);
    }
}

void ml_channels_split_ref(const ml_channels *c, const float *frames, size_t n, float *ref)
{
    for (size_t i = 0; c->has_ref && i < n; i++)
        ref[i] = frames[i * c->stride + c->ref];
}
