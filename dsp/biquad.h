/* Private to dsp/: the second-order IIR section the weighting filters cascade (A-weighting,
 * ITU-R BS.468-4), in transposed direct form II.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_DSP_BIQUAD_H
#define ML_DSP_BIQUAD_H

#include <complex.h>

typedef struct {
    double b[3], a[3]; /* a[0] = 1 */
    double z1, z2;     /* transposed direct form II state */
} ml_biquad;

/* One sample v through the section s (its state advanced); returns the output. */
static inline double ml_biquad_step(ml_biquad *s, double v)
{
    const double o = s->b[0] * v + s->z1;
    s->z1 = s->b[1] * v - s->a[1] * o + s->z2;
    s->z2 = s->b[2] * v - s->a[2] * o;
    return o;
}

/* The section's transfer function at zi = z^-1 = exp(-j 2 pi f / fs). */
static inline double complex ml_biquad_h(const ml_biquad *q, double complex zi)
{
    return (q->b[0] + q->b[1] * zi + q->b[2] * zi * zi) / (q->a[0] + q->a[1] * zi + q->a[2] * zi * zi);
}

#endif
