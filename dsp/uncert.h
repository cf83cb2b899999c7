/* Repeatability of a measurement from the spread of independent block estimates.
 * SPDX-License-Identifier: MIT
 *
 * A recording is cut into n blocks; each block gives its own estimate x_i of a metric. With the
 * block mean m, the sample standard deviation s = sqrt(sum (x_i - m)^2 / (n - 1)) and Student's
 * t quantile t(0.975, n - 1), the half-width of the two-sided 95 % confidence interval of the
 * whole recording's value is
 *     u = t(0.975, n - 1) * s / sqrt(n)
 * ([gum:2008] G.3 and G.4: type A evaluation, coverage factor from the t distribution). The
 * running sums follow [welford:1962], so memory does not depend on n.
 *
 * References:
 * [gum:2008] JCGM 100:2008, Evaluation of measurement data - Guide to the expression of
 *     uncertainty in measurement, sections 4.2 and G.3, table G.2.
 * [welford:1962] B. P. Welford, "Note on a method for calculating corrected sums of squares and
 *     products", Technometrics 4(3), 1962.
 */
#ifndef ML_DSP_UNCERT_H
#define ML_DSP_UNCERT_H

#include <stddef.h>
#include <stdint.h>

typedef struct {
    uint64_t n;      /* estimates pushed (non-finite ones are skipped)               */
    double mean;     /* running mean                                                 */
    double m2;       /* running sum of squared deviations from the mean               */
} ml_running;

void ml_running_reset(ml_running *q);
void ml_running_push(ml_running *q, double x);      /* NaN and infinities are ignored */
double ml_running_std(const ml_running *q);          /* sample std (n - 1); NAN when n < 2 */

/* Student's t quantile t(0.975, df) for df >= 1 (two-sided 95 %); NAN for df < 1.
 * Exact table values for df <= 30 ([gum:2008] table G.2 gives them to two decimals; these have
 * four), then the Cornish-Fisher expansion in 1/df, within 1e-4 of the exact value. */
double ml_t975(uint64_t df);

/* u = t(0.975, n - 1) s / sqrt(n) (see above); NAN when fewer than 3 estimates. */
double ml_running_u95(const ml_running *q);

#endif
