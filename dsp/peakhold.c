/* Peak hold with a timed release (see dsp/peakhold.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/peakhold.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>

struct ml_peakhold {
    ml_peakhold_config cfg;
    double peak;  /* value of the latest peak; NaN when none yet                 */
    double age_s; /* time since that peak                                         */
    double x;     /* latest reading (NaN when none)                               */
};

ml_peakhold_config ml_peakhold_config_default(void)
{
    ml_peakhold_config c = {.hold_s = 2.0, .decay_per_s = 20.0};
    return c;
}

ml_status ml_peakhold_create(const ml_peakhold_config *cfg, ml_peakhold **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->hold_s >= 0) || !isfinite(cfg->hold_s) || !(cfg->decay_per_s > 0)
        || !isfinite(cfg->decay_per_s))
        return ML_EINVAL;
    ml_peakhold *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    ml_peakhold_reset(q);
    *out = q;
    return ML_OK;
}

void ml_peakhold_destroy(ml_peakhold *q)
{
    free(q);
}

void ml_peakhold_reset(ml_peakhold *q)
{
    if (q == NULL)
        return;
    q->peak = NAN;
    q->age_s = 0;
    q->x = NAN;
}

/* The released value: the peak less the decay since its hold time ran out. */
static double released(const ml_peakhold *q)
{
    return q->peak - q->cfg.decay_per_s * fmax(0.0, q->age_s - q->cfg.hold_s);
}

ml_status ml_peakhold_push(ml_peakhold *q, double dt_s, double x)
{
    if (q == NULL || !(dt_s >= 0) || !isfinite(dt_s))
        return ML_EINVAL;
    q->age_s += dt_s;
    q->x = x; /* NaN: no current reading, so nothing holds the release up */
    if (isnan(x))
        return ML_OK;
    /* a reading at or above what is shown now becomes the new peak (a fresh hold) */
    if (isnan(q->peak) || x >= released(q)) {
        q->peak = x;
        q->age_s = 0;
    }
    return ML_OK;
}

double ml_peakhold_get_value(const ml_peakhold *q)
{
    if (q == NULL || isnan(q->peak))
        return NAN;
    const double r = released(q);
    return isnan(q->x) ? r : fmax(r, q->x);
}

bool ml_peakhold_holding(const ml_peakhold *q)
{
    return q != NULL && !isnan(q->peak) && q->age_s <= q->cfg.hold_s;
}
