/* The demodulator's trapezoid: the least-squares line of the envelope e against the reference
 * channel a (the modulating audio), e = intercept + slope a, and the RMS residual about it.
 * SPDX-License-Identifier: MIT
 */
#include <math.h>

#include "dsp/am_internal.h"

void ml_am_trapezoid_push(ml_am_trapezoid *t, const float *a, const double *e, size_t n)
{
    double sa = 0, se = 0, saa = 0, sae = 0, see = 0;
    for (size_t i = 0; i < n; i++) {
        sa += a[i];
        se += e[i];
        saa += (double)a[i] * a[i];
        sae += a[i] * e[i];
        see += e[i] * e[i];
    }
    t->sa += sa;
    t->se += se;
    t->saa += saa;
    t->sae += sae;
    t->see += see;
    t->n += n;
}

bool ml_am_trapezoid_fit(const ml_am_trapezoid *t, double *slope, double *intercept, double *residual_rms,
                         double *ref_rms)
{
    if (t->n < 2)
        return false;
    const double n = (double)t->n;
    const double ma = t->sa / n, me = t->se / n;
    const double vaa = t->saa / n - ma * ma, vae = t->sae / n - ma * me, vee = t->see / n - me * me;
    if (!(vaa > 0))
        return false;
    *slope = vae / vaa;
    *intercept = me - *slope * ma;
    *residual_rms = sqrt(fmax(0.0, vee - vae * vae / vaa));
    *ref_rms = sqrt(vaa);
    return true;
}
