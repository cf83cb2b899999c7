/* ITU-R P.372 man-made noise and Fa (definitions in dsp/mmnoise.h).
 * SPDX-License-Identifier: MIT
 *
 * References: docs/references.md 15 (ITU-R P.372 man-made noise model and constants; k T0).
 */
#include "dsp/mmnoise.h"

#include <math.h>
#include <stddef.h>

/* Boltzmann constant (J/K, exact since the 2019 SI) and the reference temperature (K). */
#define K_BOLTZMANN 1.380649e-23
#define T0_K 290.0

static const struct {
    const char *name;
    double c, d;
} envs[ML_MMNOISE_COUNT] = {
    {"city", 76.8, 27.7},        {"residential", 72.5, 27.7}, {"rural", 67.2, 27.7},
    {"quiet-rural", 53.6, 28.6}, {"galactic", 52.0, 23.0},
};

const char *ml_mmnoise_env_name(ml_mmnoise_env e)
{
    return (unsigned)e < ML_MMNOISE_COUNT ? envs[e].name : "unknown";
}

double ml_mmnoise_kt0_dbm_hz(void)
{
    return 10.0 * log10(K_BOLTZMANN * T0_K / 1e-3);
}

double ml_mmnoise_fam_db(ml_mmnoise_env e, double f_hz)
{
    if ((unsigned)e >= ML_MMNOISE_COUNT || !(f_hz >= ML_MMNOISE_MIN_HZ) || !(f_hz <= ML_MMNOISE_MAX_HZ))
        return NAN;
    return envs[e].c - envs[e].d * log10(f_hz / 1e6);
}

ml_status ml_mmnoise_assess(double density_dbfs_hz, double fullscale_dbm, double f_hz, ml_mmnoise_result *r)
{
    if (r == NULL || !isfinite(density_dbfs_hz) || !isfinite(fullscale_dbm) || !(f_hz >= ML_MMNOISE_MIN_HZ)
        || !(f_hz <= ML_MMNOISE_MAX_HZ))
        return ML_EINVAL;
    r->noise_dbm_hz = density_dbfs_hz + fullscale_dbm;
    r->fa_db = r->noise_dbm_hz - ml_mmnoise_kt0_dbm_hz();
    r->nearest = ML_MMNOISE_CITY;
    for (int e = 0; e < ML_MMNOISE_COUNT; e++) {
        r->fam_db[e] = ml_mmnoise_fam_db((ml_mmnoise_env)e, f_hz);
        if (fabs(r->fa_db - r->fam_db[e]) < fabs(r->fa_db - r->fam_db[r->nearest]))
            r->nearest = (ml_mmnoise_env)e;
    }
    r->distance_db = r->fa_db - r->fam_db[r->nearest];
    return ML_OK;
}
