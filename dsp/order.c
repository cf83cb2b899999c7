/* Order statistics of a sample (see dsp/order.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/order.h"

#include <math.h>

double ml_order_select(double *x, size_t n, size_t k)
{
    size_t lo = 0, hi = n - 1;
    while (lo < hi) {
        const double pivot = x[lo + (hi - lo) / 2];
        size_t i = lo, j = hi;
        while (i <= j) {
            while (x[i] < pivot)
                i++;
            while (x[j] > pivot)
                j--;
            if (i <= j) {
                const double t = x[i];
                x[i] = x[j];
                x[j] = t;
                i++;
                if (j == 0)
                    break;
                j--;
            }
        }
        if (k <= j)
            hi = j;
        else if (k >= i)
            lo = i;
        else
            return x[k];
    }
    return x[k];
}

/* The smallest of x[k + 1 .. n - 1] after ml_order_select(x, n, k): every one of them is >= x[k]. */
static double next_above(const double *x, size_t n, size_t k)
{
    double v = x[k + 1];
    for (size_t i = k + 2; i < n; i++)
        if (x[i] < v)
            v = x[i];
    return v;
}

double ml_order_median(double *x, size_t n)
{
    if (n == 0)
        return NAN;
    if (n % 2)
        return ml_order_select(x, n, n / 2);
    const double lower = ml_order_select(x, n, n / 2 - 1);
    return 0.5 * (lower + next_above(x, n, n / 2 - 1));
}

double ml_order_quantile(double *x, size_t n, double p)
{
    if (n == 0 || !(p >= 0 && p <= 1))
        return NAN;
    const double h = (double)(n - 1) * p;
    const size_t k = (size_t)floor(h);
    const double lo = ml_order_select(x, n, k);
    if (k + 1 >= n || h == (double)k)
        return lo;
    return lo + (h - (double)k) * (next_above(x, n, k) - lo);
}
