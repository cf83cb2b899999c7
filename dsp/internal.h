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

/* 10*log10(x) with a floor so that zero power gives a finite, very low number. */
double ml_db10(double x);

#endif
