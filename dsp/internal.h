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

/* 10*log10(x) with a floor so that zero power gives a finite, very low number. */
double ml_db10(double x);

#endif
