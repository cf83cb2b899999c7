/* Deterministic test signals and statistics helpers for the unit tests (header only).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [steele:2014] G. L. Steele, D. Lea, C. H. Flood, "Fast splittable pseudorandom number
 *     generators", OOPSLA 2014 (the SplitMix64 generator).
 * [box:1958] G. E. P. Box, M. E. Muller, "A note on the generation of random normal deviates",
 *     Ann. Math. Statist. 29(2):610-611, 1958.
 */
#ifndef ML_TESTS_UNIT_TESTSIG_H
#define ML_TESTS_UNIT_TESTSIG_H

#include <complex.h>
#include <math.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/window.h"

#define TS_PI 3.14159265358979323846

/* SplitMix64 [steele:2014]: a fixed seed gives the same sequence on every platform. */
typedef struct {
    uint64_t s;
} ts_rng;

static inline uint64_t ts_next(ts_rng *r)
{
    uint64_t z = (r->s += 0x9E3779B97F4A7C15u);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9u;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBu;
    return z ^ (z >> 31);
}

/* Uniform in (0, 1): 53 random bits, never exactly 0 (log() below stays finite). */
static inline double ts_uniform(ts_rng *r)
{
    return ((double)(ts_next(r) >> 11) + 0.5) * 0x1.0p-53;
}

/* Standard normal deviate, Box-Muller [box:1958] (one of the pair; simplicity over speed). */
static inline double ts_gauss(ts_rng *r)
{
    double u1 = ts_uniform(r), u2 = ts_uniform(r);
    return sqrt(-2.0 * log(u1)) * cos(2.0 * TS_PI * u2);
}

/* x[i] = a * sin(2 pi f i / fs + phase), accumulated into x (so tones can be summed). */
static inline void ts_add_sine(double *x, size_t n, double a, double f_hz, double rate_hz, double phase)
{
    const double w = 2.0 * TS_PI * f_hz / rate_hz;
    for (size_t i = 0; i < n; i++)
        x[i] += a * sin(w * (double)i + phase);
}

static inline void ts_to_float(const double *x, float *y, size_t n)
{
    for (size_t i = 0; i < n; i++)
        y[i] = (float)x[i];
}

/* Spectral correlation of the squared window, used for the variance of a band-power estimate.
 * For Gaussian white noise of variance s2 and an nfft-point window w, the DFT values X_k are
 * complex Gaussian with E[X_k conj(X_j)] = s2 * G(k - j), G(d) = sum_n w[n]^2 e^{-2 pi i d n / N}.
 * Isserlis' theorem gives cov(|X_k|^2, |X_j|^2) = s2^2 (|G(k - j)|^2 + |G(k + j)|^2); the second
 * term vanishes unless k + j is within the lobe of 0 or N (bins near DC or Nyquist).
 * Returns rho[d] = |G(d)|^2 / G(0)^2 for d = 0..dmax (G(-d) = conj G(d)). w^2 of a K-term cosine
 * window is a (2K-1)-term cosine sum, so rho(d) = 0 exactly for |d| > 2(K-1) up to rounding. */
static inline void ts_window_rho(const double *w, size_t nfft, double *rho, size_t dmax)
{
    double g0 = 0.0;
    for (size_t n = 0; n < nfft; n++)
        g0 += w[n] * w[n];
    for (size_t d = 0; d <= dmax; d++) {
        double complex g = 0.0;
        for (size_t n = 0; n < nfft; n++)
            g += w[n] * w[n] * cexp(-2.0 * I * TS_PI * (double)((d * n) % nfft) / (double)nfft);
        rho[d] = (creal(g) * creal(g) + cimag(g) * cimag(g)) / (g0 * g0);
    }
}

/* Relative variance (var / mean^2) of ONE segment's average of |X_k|^2 over nb consecutive bins
 * away from DC and Nyquist: (1/nb^2) sum_{k,j} rho(k - j) (see ts_window_rho). */
static inline double ts_band_relvar(const double *rho, size_t dmax, size_t nb)
{
    double s = (double)nb * rho[0];
    for (size_t d = 1; d <= dmax && d < nb; d++)
        s += 2.0 * (double)(nb - d) * rho[d];
    return s / ((double)nb * (double)nb);
}

/* Variance of the mean of nseg segment estimates, each of variance v, where consecutive
 * segments may overlap (hop >= nfft/2) and so be correlated, but segments two apart do not
 * overlap and are independent. |cov| <= v (Cauchy-Schwarz) gives the bound
 * var <= (nseg v + 2 (nseg - 1) v) / nseg^2. With hop = nfft all covariances are 0: v / nseg. */
static inline double ts_mean_var_bound(double v, size_t nseg, int overlapped)
{
    double s = (double)nseg;
    return overlapped ? (s * v + 2.0 * (s - 1.0) * v) / (s * s) : v / s;
}

#endif
