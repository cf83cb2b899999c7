/* Absolute noise of a calibrated RF capture as ITU-R P.372 sees it: the external noise figure Fa
 * and the man-made noise environment it lies nearest (docs/references.md 15).
 * SPDX-License-Identifier: MIT
 *
 * Definitions:
 *  - noise density in dBm/Hz = density_dbfs_hz + fullscale_dbm, where density_dbfs_hz is
 *    10 lg(noise power per Hz / power of the full-scale reference) and fullscale_dbm is the input
 *    power (dBm) that the calibration assigns to that full-scale reference (a full-scale sine for
 *    a real capture; the caller states which reference the calibration used);
 *  - Fa = noise density - 10 lg(k T0 / 1 mW), in dB above k T0 b (the bandwidth b cancels),
 *    k = 1.380649e-23 J/K (exact, SI 2019), T0 = 290 K: k T0 = -173.975 dBm/Hz;
 *  - the P.372 median man-made noise of each environment, Fam = c - d lg(f / 1 MHz), dB above
 *    k T0 b, with (c, d): city 76.8, 27.7; residential 72.5, 27.7; rural 67.2, 27.7; quiet rural
 *    53.6, 28.6; galactic 52.0, 23.0 (docs/references.md 15, the Recommendation's constants).
 *    Used here from 0.3 to 30 MHz (the model holds from 0.3 MHz; above 30 MHz the city curve
 *    changes slope, which is not modelled). Galactic noise reaches the ground only above the
 *    ionosphere's critical frequency (a few MHz); below it its line is a reference only;
 *  - the nearest environment: the smallest |Fa - Fam| over the five (the first in the order above
 *    on a tie); distance = Fa - Fam of it (positive: noisier than that environment's median).
 * The measured Fa includes the receiving system's own noise; it is an upper bound of the
 * external noise unless that is well below.
 */
#ifndef ML_DSP_MMNOISE_H
#define ML_DSP_MMNOISE_H

#include "dsp/status.h"

typedef enum {
    ML_MMNOISE_CITY = 0,
    ML_MMNOISE_RESIDENTIAL,
    ML_MMNOISE_RURAL,
    ML_MMNOISE_QUIET_RURAL,
    ML_MMNOISE_GALACTIC,
    ML_MMNOISE_COUNT
} ml_mmnoise_env;

#define ML_MMNOISE_MIN_HZ 0.3e6
#define ML_MMNOISE_MAX_HZ 30e6

/* Short key: "city", "residential", "rural", "quiet-rural", "galactic"; "unknown" otherwise. */
const char *ml_mmnoise_env_name(ml_mmnoise_env e);

/* 10 lg(k T0 / 1 mW) in dBm/Hz: -173.975. */
double ml_mmnoise_kt0_dbm_hz(void);

/* Fam (dB above k T0 b) of environment e at f_hz; NAN for an unknown e or f_hz outside
 * [ML_MMNOISE_MIN_HZ, ML_MMNOISE_MAX_HZ] (or not finite). */
double ml_mmnoise_fam_db(ml_mmnoise_env e, double f_hz);

typedef struct {
    double noise_dbm_hz;               /* density_dbfs_hz + fullscale_dbm                   */
    double fa_db;                      /* dB above k T0 b                                   */
    double fam_db[ML_MMNOISE_COUNT];   /* each environment's median at f_hz                  */
    ml_mmnoise_env nearest;            /* environment nearest to fa_db                       */
    double distance_db;                /* fa_db - fam_db[nearest]                            */
} ml_mmnoise_result;

/* Fills r (see the definitions above). ML_EINVAL for NULL r, non-finite inputs or f_hz outside
 * the model's range (r is then left alone). Pure; no allocation. */
ml_status ml_mmnoise_assess(double density_dbfs_hz, double fullscale_dbm, double f_hz, ml_mmnoise_result *r);

#endif
