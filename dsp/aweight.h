/* A-frequency weighting (IEC 61672-1) as a digital filter at the input's sample rate.
 * SPDX-License-Identifier: MIT
 *
 * The analogue weighting of IEC 61672-1:2013 Annex E (four zeros at 0 Hz; poles at f1 (double),
 * f2, f3 and f4 (double)) is mapped to three biquads by the bilinear transform, each pole
 * frequency pre-warped (2 fs tan(pi f / fs)) so that it lands at its analogue frequency. The gain
 * is set so that the digital response is exactly 0 dB at 1 kHz. At 44.1 kHz and above the response
 * meets the class-1 acceptance limits of IEC 61672-1 Table 3 at every one-third-octave frequency
 * from 10 Hz to 20 kHz below Nyquist (tests/unit/test_dsp_aweight.c); at lower rates the
 * frequencies near Nyquist fall outside class 1 (the bilinear map compresses them).
 */
#ifndef ML_DSP_AWEIGHT_H
#define ML_DSP_AWEIGHT_H

#include <stddef.h>

#include "dsp/status.h"

typedef struct ml_aweight ml_aweight;

typedef struct {
    double rate_hz; /* sample rate: 8000 .. 1e6 */
} ml_aweight_config;

ml_aweight_config ml_aweight_config_default(double rate_hz);

/* Designs the filter. ML_EINVAL for a rate out of range, ML_ENOMEM. */
ml_status ml_aweight_create(const ml_aweight_config *cfg, ml_aweight **out);
void ml_aweight_destroy(ml_aweight *q); /* NULL is a no-op */
void ml_aweight_reset(ml_aweight *q);   /* clears the filter state */

/* Filters n samples x[n] into y[n] (y may not alias x). Any n; never allocates. */
ml_status ml_aweight_push(ml_aweight *q, const float *x, double *y, size_t n);

/* Magnitude response of the digital filter at f_hz (0 < f_hz < rate/2) in dB, from its
 * coefficients (not measured). NAN for a bad f_hz. */
double ml_aweight_get_response_db(const ml_aweight *q, double f_hz);

/* The filter's state (ML_AWEIGHT_STATE values) into s, and back (set_state: finite values, else
 * ML_EINVAL and nothing changes): a stream continued in another process. */
#define ML_AWEIGHT_STATE 6
void ml_aweight_get_state(const ml_aweight *q, double *s);
ml_status ml_aweight_set_state(ml_aweight *q, const double *s);

#endif
