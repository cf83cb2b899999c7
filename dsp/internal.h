/* Private helpers for dsp/ sources and their tests only.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_DSP_INTERNAL_H
#define ML_DSP_INTERNAL_H

#include <stddef.h>

#define ML_PI 3.14159265358979323846

/* C11's CMPLX: glibc's <complex.h> defines it for GCC only; clang has the same builtin. */
#include <complex.h>
#ifndef CMPLX
#define CMPLX(x, y) __builtin_complex((double)(x), (double)(y))
#endif

/* Hot per-sample loops get an AVX2 version beside the baseline one, chosen when the program
 * starts (an ifunc): the same operations in wider registers, so the same results (ISO C mode
 * contracts no multiply-add). Off where the compiler or target lacks it, and under the
 * sanitizers and the fuzzer, which instrument one version only. */
#ifdef __has_feature
#define ML_HAS_FEATURE(x) __has_feature(x)
#else
#define ML_HAS_FEATURE(x) 0
#endif
#if defined(__x86_64__) && defined(__GNUC__) && !defined(ML_NO_CLONES) && !defined(__SANITIZE_ADDRESS__) \
    && !ML_HAS_FEATURE(address_sanitizer) && !ML_HAS_FEATURE(undefined_behavior_sanitizer)
#define ML_HOT __attribute__((target_clones("avx2", "default")))
#else
#define ML_HOT
#endif

/* A helper that must be inlined into its (ML_HOT) caller, so that it is compiled for the caller's
 * instruction set. */
#if defined(__GNUC__)
#define ML_INLINE inline __attribute__((always_inline))
#else
#define ML_INLINE inline
#endif

#include <string.h>

/* Reductions in lanes: element i goes to lane i % lanes, each lane accumulates in index order, so
 * the results are those of the plain loops in the #else branches whatever the vector width.
 * Compilers do not vectorise such lane-wise reductions themselves (they may not reorder a
 * floating-point sum, and do not see that the lanes already are the order): GNU C vector
 * extensions (GCC and clang) do it here. */
#if defined(__GNUC__)
typedef double ml_v4d __attribute__((vector_size(32)));
typedef float ml_v8f __attribute__((vector_size(32)));
typedef long long ml_v4i __attribute__((vector_size(32)));
typedef int ml_v8i __attribute__((vector_size(32)));

/* Lane-wise a < b ? a : b and a > b ? a : b (b where a is NaN), as the plain comparisons give,
 * for a vector type VT whose comparisons give the integer vector type IT. Macros, not functions:
 * a function taking or returning these types would depend on the instruction set for its ABI.
 * The arguments are evaluated twice. */
#define ML_VMIN(VT, IT, a, b) ((VT)((((IT)((a) < (b))) & (IT)(a)) | (~((IT)((a) < (b))) & (IT)(b))))
#define ML_VMAX(VT, IT, a, b) ((VT)((((IT)((a) > (b))) & (IT)(a)) | (~((IT)((a) > (b))) & (IT)(b))))
#endif

/* s[k] += x[i], ss[k] += x[i]^2 for i % 4 == k, i < n (whole groups of 4; the rest into lane 0). */
static ML_INLINE void ml_lanes_sum4(const double *x, size_t n, double s[4], double ss[4])
{
    size_t i = 0;
#if defined(__GNUC__)
    ml_v4d vs, vss;
    memcpy(&vs, s, sizeof vs);
    memcpy(&vss, ss, sizeof vss);
    for (; i + 4 <= n; i += 4) {
        ml_v4d v;
        memcpy(&v, x + i, sizeof v);
        vs += v;
        vss += v * v;
    }
    memcpy(s, &vs, sizeof vs);
    memcpy(ss, &vss, sizeof vss);
#else
    for (; i + 4 <= n; i += 4)
        for (int k = 0; k < 4; k++) {
            s[k] += x[i + k];
            ss[k] += x[i + k] * x[i + k];
        }
#endif
    for (; i < n; i++) {
        s[0] += x[i];
        ss[0] += x[i] * x[i];
    }
}

/* lo[k] = min(lo[k], a[i]) and hi[k] = max(hi[k], b[i]) for i % 8 == k (the rest into lane 0);
 * a NaN is passed over. */
static ML_INLINE void ml_lanes_minmax8f(const float *a, const float *b, size_t n, float lo[8], float hi[8])
{
    size_t i = 0;
#if defined(__GNUC__)
    ml_v8f vlo, vhi;
    memcpy(&vlo, lo, sizeof vlo);
    memcpy(&vhi, hi, sizeof vhi);
    for (; i + 8 <= n; i += 8) {
        ml_v8f va, vb;
        memcpy(&va, a + i, sizeof va);
        memcpy(&vb, b + i, sizeof vb);
        vlo = ML_VMIN(ml_v8f, ml_v8i, va, vlo);
        vhi = ML_VMAX(ml_v8f, ml_v8i, vb, vhi);
    }
    memcpy(lo, &vlo, sizeof vlo);
    memcpy(hi, &vhi, sizeof vhi);
#else
    for (; i + 8 <= n; i += 8)
        for (int k = 0; k < 8; k++) {
            lo[k] = a[i + k] < lo[k] ? a[i + k] : lo[k];
            hi[k] = b[i + k] > hi[k] ? b[i + k] : hi[k];
        }
#endif
    for (; i < n; i++) {
        lo[0] = a[i] < lo[0] ? a[i] : lo[0];
        hi[0] = b[i] > hi[0] ? b[i] : hi[0];
    }
}

/* 10*log10(x) with a floor so that zero power gives a finite, very low number. */
double ml_db10(double x);

#endif
