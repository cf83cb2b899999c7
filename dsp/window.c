/* Spectral-analysis windows and their figures of merit.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [harris:1978] F. J. Harris, "On the use of windows for harmonic analysis with the discrete
 *     Fourier transform", Proc. IEEE 66(1):51-83, Jan. 1978.
 * [heinzel:2002] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density estimation
 *     by the Discrete Fourier transform (DFT), including a comprehensive list of window functions
 *     and some new flat-top windows", MPI fuer Gravitationsphysik, 15 Feb 2002.
 */
#include "dsp/window.h"

#include <complex.h>
#include <math.h>

#include "dsp/internal.h"

typedef struct {
    const char *name;
    size_t nterms;
    double c[11];
} window_def;

/* Coefficients: Hann and Blackman-Harris [harris:1978] Table 1; HFT144D and HFT248D
 * [heinzel:2002] (the HFT144D and HFT248D entries of its window list). */
static const window_def defs[ML_WINDOW_COUNT] = {
    [ML_WINDOW_RECT] = {"rectangular", 1, {1.0}},
    [ML_WINDOW_HANN] = {"hann", 2, {0.5, 0.5}},
    [ML_WINDOW_BLACKMAN_HARRIS] = {"blackman-harris", 4, {0.35875, 0.48829, 0.14128, 0.01168}},
    [ML_WINDOW_HFT144D] = {"hft144d",
                           7,
                           {1.0, 1.96760033, 1.57983607, 0.81123644, 0.22583558, 0.02773848,
                            0.00090360}},
    [ML_WINDOW_HFT248D] = {"hft248d",
                           11,
                           {1.0, 1.985844164102, 1.791176438506, 1.282075284005, 0.667777530266,
                            0.240160796576, 0.056656381764, 0.008134974479, 0.000624544650,
                            0.000019808998, 0.000000132974}},
};

ml_status ml_window_fill(ml_window_type type, double *w, size_t n)
{
    if ((unsigned)type >= ML_WINDOW_COUNT || w == NULL || n < 2)
        return ML_EINVAL;
    const window_def *d = &defs[type];
    for (size_t i = 0; i < n; i++) {
        double z = 2.0 * ML_PI * (double)i / (double)n;
        double acc = 0.0;
        for (size_t k = 0; k < d->nterms; k++)
            acc += (k % 2 ? -1.0 : 1.0) * d->c[k] * cos((double)k * z);
        w[i] = acc;
    }
    return ML_OK;
}

size_t ml_window_coefficients(ml_window_type type, double *c, size_t max)
{
    if ((unsigned)type >= ML_WINDOW_COUNT || c == NULL)
        return 0;
    const window_def *d = &defs[type];
    for (size_t k = 0; k < d->nterms && k < max; k++)
        c[k] = d->c[k];
    return d->nterms;
}

double ml_window_leakage(ml_window_type type, size_t n, double offset_bins)
{
    if ((unsigned)type >= ML_WINDOW_COUNT || n < 2 || !isfinite(offset_bins))
        return 0.0;
    const window_def *d = &defs[type];
    const double dn = (double)n;
    /* w[j] = sum_k (-1)^k c_k cos(2 pi k j / n) has the two-sided coefficients a_0 = c_0,
     * a_{+-k} = (-1)^k c_k / 2, so W(nu) = sum_k a_k D(nu - k) with the Dirichlet kernel
     * D(x) = sum_{j<n} exp(-2 pi i x j / n) = exp(-i pi x (n-1)/n) sin(pi x) / sin(pi x / n).
     * A whole offset d (taken modulo n) hits the kernel's zeros except at d - k = 0: W(d) = n a_d. */
    const double i0 = nearbyint(offset_bins), f = offset_bins - i0;
    if (f == 0.0) {
        double a = 0.0; /* the coefficients whose index is congruent to the offset modulo n */
        const long r = (long)remainder(i0, dn), nl = (long)n;
        for (long k = -(long)d->nterms + 1; k < (long)d->nterms; k++)
            if ((r - k) % nl == 0)
                a += k == 0 ? d->c[0] : ((k % 2 != 0) ? -0.5 : 0.5) * d->c[k < 0 ? -k : k];
        return (a / d->c[0]) * (a / d->c[0]);
    }
    /* With x = i + f (i whole, |f| <= 1/2), the factors (-1)^i of exp(-i pi x) and sin(pi x) cancel:
     * D(x) = exp(-i pi f) sin(pi f) exp(i pi x / n) / sin(pi x / n)
     *      = exp(-i pi f) sin(pi f) (cot(pi x / n) + i).
     * Every term x = nu -+ k shares f, so |W(nu)| = |sin(pi f)| |sum_k a_k cot(pi x_k / n) + i sum_k a_k|,
     * one tangent per term, each to full relative precision: the flat tops' cancellation then holds
     * to about 1e-16 of the largest term, and large offsets lose nothing. W(0) = n c_0. */
    double re = d->c[0] / tan(ML_PI * offset_bins / dn), im = d->c[0];
    for (size_t k = 1; k < d->nterms; k++) {
        const double a = (k % 2 ? -0.5 : 0.5) * d->c[k];
        re += a * (1.0 / tan(ML_PI * (offset_bins - (double)k) / dn) + 1.0 / tan(ML_PI * (offset_bins + (double)k) / dn));
        im += 2.0 * a;
    }
    const double r = hypot(re, im) * fabs(sin(ML_PI * f)) / (dn * d->c[0]);
    return r * r;
}

double ml_window_leakage_envelope(ml_window_type type, size_t n, double offset_bins)
{
    double v = 0.0;
    for (int i = -2; i <= 2; i++)
        v = fmax(v, ml_window_leakage(type, n, offset_bins + 0.25 * i));
    return v;
}

size_t ml_window_terms(ml_window_type type)
{
    return (unsigned)type < ML_WINDOW_COUNT ? defs[type].nterms : 0;
}

const char *ml_window_name(ml_window_type type)
{
    return (unsigned)type < ML_WINDOW_COUNT ? defs[type].name : "unknown";
}

double ml_window_coherent_gain(const double *w, size_t n)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += w[i];
    return n ? s / (double)n : 0.0;
}

double ml_window_enbw_bins(const double *w, size_t n)
{
    double s = 0.0, s2 = 0.0;
    for (size_t i = 0; i < n; i++) {
        s += w[i];
        s2 += w[i] * w[i];
    }
    return s != 0.0 ? (double)n * s2 / (s * s) : 0.0;
}
