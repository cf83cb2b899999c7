/* Order statistics of a sample: selection, median and quantiles (pure functions on caller
 * buffers; each reorders its input).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [hoare:1961] C. A. R. Hoare, "Algorithm 65: Find", Communications of the ACM 4(7), 1961
 *     (selection in O(n) on average).
 * [hyndman:1996] R. J. Hyndman, Y. Fan, "Sample quantiles in statistical packages", The American
 *     Statistician 50(4), 1996: definition 7 (linear interpolation between the order statistics
 *     x(floor(h)) and x(ceil(h)), h = (n - 1) p), numpy's default (docs/references.md 9).
 */
#ifndef ML_DSP_ORDER_H
#define ML_DSP_ORDER_H

#include <stddef.h>

/* The k-th smallest of x[n] (0-based, k < n), reordering x so that x[i] <= x[k] for i < k and
 * x[i] >= x[k] for i > k [hoare:1961]. */
double ml_order_select(double *x, size_t n, size_t k);

/* The median of x[n]: the middle value, or the mean of the two middle values for even n; NAN for
 * n == 0. Reorders x. */
double ml_order_median(double *x, size_t n);

/* The p-quantile (0 <= p <= 1) of x[n] by [hyndman:1996] definition 7; NAN for n == 0 or p
 * outside 0..1. Reorders x. */
double ml_order_quantile(double *x, size_t n, double p);

#endif
