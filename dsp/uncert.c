/* Repeatability from block estimates: running mean/variance and the 95 % interval.
 * SPDX-License-Identifier: MIT
 *
 * References: [gum:2008], [welford:1962] (full entries in dsp/uncert.h);
 * [hill:1970] G. W. Hill, "Algorithm 396: Student's t-quantiles", CACM 13(10), 1970 (expansion
 * of the t quantile in powers of 1/df around the normal quantile).
 */
#include "dsp/uncert.h"

#include <math.h>

void ml_running_reset(ml_running *q)
{
    q->n = 0;
    q->mean = 0;
    q->m2 = 0;
}

void ml_running_push(ml_running *q, double x)
{
    if (!isfinite(x))
        return;
    q->n++;
    const double d = x - q->mean;
    q->mean += d / (double)q->n;
    q->m2 += d * (x - q->mean); /* [welford:1962]: stable against cancellation */
}

double ml_running_std(const ml_running *q)
{
    return q->n < 2 ? NAN : sqrt(q->m2 / (double)(q->n - 1));
}

double ml_t975(uint64_t df)
{
    /* t(0.975, df), df = 1..30: standard tables (four decimals; [gum:2008] table G.2 lists the
     * same values rounded to two). */
    static const double tab[30] = {12.7062, 4.3027, 3.1824, 2.7764, 2.5706, 2.4469, 2.3646, 2.3060,
                                   2.2622,  2.2281, 2.2010, 2.1788, 2.1604, 2.1448, 2.1314, 2.1199,
                                   2.1098,  2.1009, 2.0930, 2.0860, 2.0796, 2.0739, 2.0687, 2.0639,
                                   2.0595,  2.0555, 2.0518, 2.0484, 2.0452, 2.0423};
    if (df < 1)
        return NAN;
    if (df <= 30)
        return tab[df - 1];
    /* [hill:1970]: t = z + g1/v + g2/v^2 + g3/v^3, z = 1.959964 the normal 97.5 % point */
    const double z = 1.959963985, z2 = z * z, v = (double)df;
    const double g1 = z * (z2 + 1) / 4;
    const double g2 = z * ((5 * z2 + 16) * z2 + 3) / 96;
    const double g3 = z * (((3 * z2 + 19) * z2 + 17) * z2 - 15) / 384;
    return z + g1 / v + g2 / (v * v) + g3 / (v * v * v);
}

double ml_running_u95(const ml_running *q)
{
    if (q->n < 3)
        return NAN;
    return ml_t975(q->n - 1) * ml_running_std(q) / sqrt((double)q->n);
}
