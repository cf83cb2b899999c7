/* Private helpers for dsp/ sources and their tests only.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_DSP_INTERNAL_H
#define ML_DSP_INTERNAL_H

#include <stddef.h>

#define ML_PI 3.14159265358979323846

/* 10*log10(x) with a floor so that zero power gives a finite, very low number. */
double ml_db10(double x);

#endif
