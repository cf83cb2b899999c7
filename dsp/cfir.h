/* Streaming linear-phase low-pass FIR for complex signals (channel filter after mixing to 0 Hz).
 * SPDX-License-Identifier: MIT
 *
 * The taps are a Kaiser-windowed sinc: odd length, symmetric (linear phase), real (so the response
 * at -f equals the response at f), normalised to unity gain at 0 Hz. Filtering is overlap-save fast
 * convolution with FFTs planned once in create, so push costs O(log ntaps) per sample and the
 * memory is fixed by the configuration, whatever the length of the input.
 *
 * Design guarantee (checked in create on a dense grid of the designed response, with the peaks
 * between grid points interpolated, and exactly at both band edges):
 *  - |response| within +-0.01 dB of 0 dB for |f| <= cutoff_hz;
 *  - |response| <= -stop_db for cutoff_hz + transition_hz <= |f| <= rate_hz / 2.
 */
#ifndef ML_DSP_CFIR_H
#define ML_DSP_CFIR_H

#include <complex.h>
#include <stddef.h>

#include "dsp/status.h"

/* Largest filter create accepts; a spec needing more taps is rejected with ML_EINVAL. */
#define ML_CFIR_MAX_TAPS 262143

typedef struct ml_cfir ml_cfir;

typedef struct {
    double rate_hz;       /* sample rate: finite, > 0                                          */
    double cutoff_hz;     /* passband edge: 0 < cutoff_hz; response within +-0.01 dB up to here */
    double transition_hz; /* transition band width above cutoff_hz: > 0, and
                           * cutoff_hz + transition_hz <= rate_hz / 2                           */
    double stop_db;       /* attenuation from cutoff_hz + transition_hz to rate_hz / 2: 20..160 */
    int single_precision; /* 0 (default): filter in double; 1: the transforms in float (about
                           * half the time), inputs and outputs still double: its rounding
                           * noise lies some 140 dB below the signal (tests/unit/test_dsp_cfir.c),
                           * the resolution of a float or 24-bit capture itself; the design
                           * guarantee is that of the taps                                     */
} ml_cfir_config;

/* stop_db 100; transition_hz = min(1000 Hz, cutoff_hz / 2, (rate_hz / 2 - cutoff_hz) / 2), i.e.
 * the stop edge lies no further than 1.5 * cutoff_hz and halfway to Nyquist at most. The result
 * is only valid for create if 0 < cutoff_hz < rate_hz / 2 (create checks). */
ml_cfir_config ml_cfir_config_default(double rate_hz, double cutoff_hz);

/* Designs the taps, checks them against the guarantee above (adding taps until it holds), plans
 * the FFTs (FFTW_ESTIMATE) and allocates everything push needs. The design attenuation is
 * max(stop_db, 60) + 1 dB: 60 dB keeps the passband ripple under 0.01 dB, and the 1 dB covers
 * the Kaiser beta formula's small shortfall. ML_EINVAL (bad or NULL cfg, or a spec needing more
 * than ML_CFIR_MAX_TAPS taps) | ML_ENOMEM | ML_EFFT leave *out NULL. out must not be NULL.
 * Not thread-safe (FFTW planner). Takes a few ms for thousands of taps, about 0.5 s near the
 * maximum. Memory: 3 complex buffers of nfft < 8 * ntaps samples, plus the taps. */
ml_status ml_cfir_create(const ml_cfir_config *cfg, ml_cfir **out);

void ml_cfir_destroy(ml_cfir *q); /* NULL is a no-op */
void ml_cfir_reset(ml_cfir *q);   /* zero history and pending output, as just created; no allocation */

size_t ml_cfir_ntaps(const ml_cfir *q); /* odd, >= 3; 0 for NULL */

/* Delay in samples from an input sample to the output it produces: (ntaps - 1) / 2 of group delay
 * plus the block length of the overlap-save buffering. Constant for the object's life: y[i] of
 * the concatenated outputs corresponds to input time i - latency (the first latency outputs
 * are the filtered zeros that precede the input). 0 for NULL. */
size_t ml_cfir_latency(const ml_cfir *q);

/* Filters n samples x[n] into y[n]: exactly n outputs (any n, including 0). x and y must not
 * overlap; they may be NULL only when n == 0. The output does not depend on how the input is split
 * into calls (bit-identical). Never allocates. ML_EINVAL for NULL q or NULL x/y with n > 0. */
ml_status ml_cfir_push(ml_cfir *q, const double complex *x, size_t n, double complex *y);

/* Copies the real taps into h[ntaps]; ntaps must equal ml_cfir_ntaps(q), else ML_EINVAL. */
ml_status ml_cfir_get_taps(const ml_cfir *q, double *h, size_t ntaps);

/* 20 lg |H(f_hz)| of the designed taps by the direct DTFT sum (O(ntaps), no allocation); any real
 * f_hz (the response is even and periodic in rate_hz). About -3000 at an exact zero; NaN for NULL
 * q or a non-finite f_hz. */
double ml_cfir_response_db(const ml_cfir *q, double f_hz);

#endif
