/* Level units: dBFS, dBu, dBV, volts r.m.s. and watts, given a calibration of full scale in dBu.
 * SPDX-License-Identifier: MIT
 *
 * Definitions (docs/references.md 14 and 5):
 *  - dBFS: a full-scale sine (peak 1.0) reads 0 dBFS (AES17-2015 3.12.1); a component of mean square
 *    power P (full-scale units, as in dsp/spectrum.h: full-scale sine = 0.5) is 10 lg(P / 0.5) dBFS.
 *  - dBu: 20 lg(V / V0) with V0 = sqrt(0.6) V = 0.774597 V r.m.s. (1 mW into 600 ohm; no load implied).
 *  - dBV: 20 lg(V / 1 V) = dBu + 20 lg(V0 / 1 V) = dBu - 2.2185 dB.
 *  - calibration: full_scale_dbu, the dBu of the r.m.s. voltage a full-scale sine corresponds to at
 *    the analogue port (EBU R68-2000 practice: alignment 0 dBu at -18 dBFS, so full scale +18 dBu =
 *    6.153 V r.m.s.; SMPTE RP155 practice: +24 dBu). Then dBu = dBFS + full_scale_dbu.
 *  - a calibration from a capture: a tone of known r.m.s. voltage V read at L dBFS gives
 *    full_scale_dbu = 20 lg(V / V0) - L.
 *  - power into a resistive load R: V^2 / R watts (V r.m.s.).
 * These are pure functions without state; they never allocate.
 */
#ifndef ML_DSP_LEVELS_H
#define ML_DSP_LEVELS_H

#include "dsp/status.h"

#define ML_DBU_REF_VRMS 0.77459666924148338 /* sqrt(0.6): 0 dBu in volts r.m.s.                  */

/* Accepted calibration range: full scale between -60 and +60 dBu (1 mV .. 775 V r.m.s.). */
#define ML_LEVEL_CAL_MIN_DBU (-60.0)
#define ML_LEVEL_CAL_MAX_DBU 60.0

typedef struct {
    double full_scale_dbu; /* dBu of a 0 dBFS sine: ML_LEVEL_CAL_MIN_DBU .. ML_LEVEL_CAL_MAX_DBU   */
} ml_level_cal;

/* EBU R68 practice: 0 dBFS = +18 dBu. */
ml_level_cal ml_level_cal_default(void);

/* Calibration from a stated full-scale level. ML_EINVAL when full_scale_dbu is not finite or out
 * of range, or out is NULL (then *out is untouched). */
ml_status ml_level_cal_from_dbu(double full_scale_dbu, ml_level_cal *out);

/* Calibration from a captured tone: its r.m.s. voltage tone_vrms (> 0, measured at the analogue
 * port, e.g. with a true-r.m.s. meter) and its level tone_dbfs as read from the capture (-200 ..
 * +20 dBFS, for example 10 lg(P1 / 0.5) of ml_audio_result's fundamental_power). ML_EINVAL for values
 * out of range or a resulting calibration out of range. */
ml_status ml_level_cal_from_tone(double tone_vrms, double tone_dbfs, ml_level_cal *out);

/* Conversions under a calibration (cal must not be NULL). A non-finite input gives NAN;
 * -INFINITY dBFS gives -INFINITY dBu/dBV and 0 V. */
double ml_level_dbu(const ml_level_cal *cal, double dbfs);
double ml_level_dbv(const ml_level_cal *cal, double dbfs);
double ml_level_vrms(const ml_level_cal *cal, double dbfs);
/* Inverse: dBFS of a voltage (> 0; else NAN) or of a dBu level. */
double ml_level_dbfs_from_vrms(const ml_level_cal *cal, double vrms);
double ml_level_dbfs_from_dbu(const ml_level_cal *cal, double dbu);
/* r.m.s. volts of a mean-square power in full-scale units (>= 0; else NAN): sqrt(power / 0.5) times
 * the full-scale sine's r.m.s. voltage. */
double ml_level_power_vrms(const ml_level_cal *cal, double power);

/* Plain unit conversions (no calibration). NAN for a non-positive voltage or a non-finite input. */
double ml_dbu_to_vrms(double dbu);
double ml_vrms_to_dbu(double vrms);
double ml_dbu_to_dbv(double dbu); /* dbu - 2.2185 */
double ml_dbv_to_dbu(double dbv);
/* Power in watts of vrms volts r.m.s. across load_ohms (> 0); NAN for a bad argument. */
double ml_level_watts(double vrms, double load_ohms);

#endif
