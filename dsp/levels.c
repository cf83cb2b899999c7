/* Level units: dBFS, dBu, dBV, volts r.m.s., watts.
 * SPDX-License-Identifier: MIT
 *
 * References: docs/references.md 14 (0 dBu = sqrt(0.6) V, dBV = dBu - 2.2185 dB, EBU R68 alignment)
 * and 5 (0 dBFS = r.m.s. of a full-scale sine, AES17-2015 3.12.1).
 */
#include "dsp/levels.h"

#include <math.h>
#include <stddef.h>

ml_level_cal ml_level_cal_default(void)
{
    return (ml_level_cal){.full_scale_dbu = 18.0};
}

static int cal_ok(double dbu)
{
    return isfinite(dbu) && dbu >= ML_LEVEL_CAL_MIN_DBU && dbu <= ML_LEVEL_CAL_MAX_DBU;
}

ml_status ml_level_cal_from_dbu(double full_scale_dbu, ml_level_cal *out)
{
    if (out == NULL || !cal_ok(full_scale_dbu))
        return ML_EINVAL;
    out->full_scale_dbu = full_scale_dbu;
    return ML_OK;
}

ml_status ml_level_cal_from_tone(double tone_vrms, double tone_dbfs, ml_level_cal *out)
{
    if (out == NULL || !(tone_vrms > 0) || !isfinite(tone_vrms) || !(tone_dbfs >= -200 && tone_dbfs <= 20))
        return ML_EINVAL;
    /* the tone is tone_dbfs below full scale and reads 20 lg(V/V0) dBu */
    return ml_level_cal_from_dbu(ml_vrms_to_dbu(tone_vrms) - tone_dbfs, out);
}

double ml_dbu_to_vrms(double dbu)
{
    if (isnan(dbu) || dbu == INFINITY)
        return NAN;
    return ML_DBU_REF_VRMS * pow(10.0, dbu / 20.0);
}

double ml_vrms_to_dbu(double vrms)
{
    if (!(vrms > 0) || !isfinite(vrms))
        return NAN;
    return 20.0 * log10(vrms / ML_DBU_REF_VRMS);
}

/* 20 lg(V0 / 1 V) = -2.2185 dB: a level in dBV is that much lower than in dBu */
static double dbv_minus_dbu(void)
{
    return 20.0 * log10(ML_DBU_REF_VRMS);
}

double ml_dbu_to_dbv(double dbu)
{
    return isnan(dbu) ? NAN : dbu + dbv_minus_dbu();
}

double ml_dbv_to_dbu(double dbv)
{
    return isnan(dbv) ? NAN : dbv - dbv_minus_dbu();
}

double ml_level_dbu(const ml_level_cal *cal, double dbfs)
{
    if (cal == NULL || isnan(dbfs) || dbfs == INFINITY)
        return NAN;
    return dbfs + cal->full_scale_dbu;
}

double ml_level_dbv(const ml_level_cal *cal, double dbfs)
{
    return ml_dbu_to_dbv(ml_level_dbu(cal, dbfs));
}

double ml_level_vrms(const ml_level_cal *cal, double dbfs)
{
    return ml_dbu_to_vrms(ml_level_dbu(cal, dbfs));
}

double ml_level_dbfs_from_dbu(const ml_level_cal *cal, double dbu)
{
    if (cal == NULL || !isfinite(dbu))
        return NAN;
    return dbu - cal->full_scale_dbu;
}

double ml_level_dbfs_from_vrms(const ml_level_cal *cal, double vrms)
{
    return ml_level_dbfs_from_dbu(cal, ml_vrms_to_dbu(vrms));
}

double ml_level_power_vrms(const ml_level_cal *cal, double power)
{
    if (cal == NULL || !(power >= 0) || !isfinite(power))
        return NAN;
    /* a full-scale sine (power 0.5) has full_scale_dbu volts; voltage scales with sqrt(power) */
    return ml_dbu_to_vrms(cal->full_scale_dbu) * sqrt(power / 0.5);
}

double ml_level_watts(double vrms, double load_ohms)
{
    if (!(vrms >= 0) || !isfinite(vrms) || !(load_ohms > 0) || !isfinite(load_ohms))
        return NAN;
    return vrms * vrms / load_ohms;
}
