/* Unit tests for dsp/levels: dBu, dBV, volts and watts against published alignment figures.
 * SPDX-License-Identifier: MIT
 *
 * References: docs/references.md 14 (0 dBu = sqrt(0.6) = 0.774597 V; dBV = dBu - 2.2185; +4 dBu =
 * 1.228 V; -10 dBV = 0.3162 V = -7.78 dBu; EBU R68-2000: alignment at -18 dBFS, 0 dBu -> 0 dBFS =
 * +18 dBu = 6.153 V r.m.s.; SMPTE RP155: +4 dBu at -20 dBFS -> 0 dBFS = +24 dBu = 12.28 V r.m.s.)
 * and 5 (0 dBFS = r.m.s. of a full-scale sine, AES17-2015 3.12.1).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>

#include "dsp/levels.h"
#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/synth.h"

START_TEST(unit_constants)
{
    /* docs/references.md 14: 0 dBu = sqrt(0.6) V = 0.774597 V (computed there) */
    ck_assert_double_eq_tol(ml_dbu_to_vrms(0.0), 0.774597, 5e-7);
    /* docs/references.md 14: dBV = dBu - 2.2185 dB (20 lg(1/0.7746) computed there) */
    ck_assert_double_eq_tol(ml_dbu_to_dbv(0.0), -2.2185, 5e-5);
    ck_assert_double_eq_tol(ml_dbv_to_dbu(0.0), 2.2185, 5e-5);
    /* docs/references.md 14: +4 dBu = 1.228 V (printed to 4 digits) */
    ck_assert_double_eq_tol(ml_dbu_to_vrms(4.0), 1.228, 5e-4);
    /* docs/references.md 14: -10 dBV = 0.3162 V = -7.78 dBu (printed to 4 and 3 digits) */
    ck_assert_double_eq_tol(ml_dbv_to_dbu(-10.0), -7.78, 5e-3);
    ck_assert_double_eq_tol(ml_dbu_to_vrms(ml_dbv_to_dbu(-10.0)), 0.3162, 5e-5);
    /* round trips (analytic inverses) */
    ck_assert_double_eq_tol(ml_vrms_to_dbu(ml_dbu_to_vrms(-37.5)), -37.5, 1e-12);
    ck_assert(isnan(ml_vrms_to_dbu(0.0)) && isnan(ml_vrms_to_dbu(-1.0)) && isnan(ml_dbu_to_vrms(NAN)));
}
END_TEST

START_TEST(alignment_practices)
{
    /* EBU R68-2000 (docs/references.md 14): 0 dBFS = +18 dBu = 6.153 V r.m.s.; 0 dBu reads -18 dBFS */
    ml_level_cal c = ml_level_cal_default();
    ck_assert(c.full_scale_dbu == 18.0);
    ck_assert_double_eq_tol(ml_level_vrms(&c, 0.0), 6.153, 5e-4);
    ck_assert_double_eq_tol(ml_level_dbfs_from_dbu(&c, 0.0), -18.0, 1e-12);
    ck_assert_double_eq_tol(ml_level_dbfs_from_vrms(&c, 0.774597), -18.0, 1e-5);
    ck_assert_double_eq_tol(ml_level_dbv(&c, -18.0), -2.2185, 5e-5);
    /* SMPTE RP155 (docs/references.md 14): +4 dBu at -20 dBFS -> full scale +24 dBu = 12.28 V r.m.s. */
    ck_assert_int_eq(ml_level_cal_from_tone(ml_dbu_to_vrms(4.0), -20.0, &c), ML_OK);
    ck_assert_double_eq_tol(c.full_scale_dbu, 24.0, 1e-9);
    ck_assert_double_eq_tol(ml_level_vrms(&c, 0.0), 12.28, 5e-3);
    /* a full-scale sine's power 0.5 gives the full-scale voltage; -6.02 dB of power halves it... */
    ck_assert_double_eq_tol(ml_level_power_vrms(&c, 0.5), ml_level_vrms(&c, 0.0), 1e-12);
    /* ...and power 0.125 (amplitude 0.5) is half the voltage (analytic: V ~ sqrt(P)) */
    ck_assert_double_eq_tol(ml_level_power_vrms(&c, 0.125), ml_level_vrms(&c, 0.0) / 2.0, 1e-12);
    ck_assert(ml_level_dbu(&c, -INFINITY) == -INFINITY && ml_level_vrms(&c, -INFINITY) == 0.0);
}
END_TEST

START_TEST(watts_into_load)
{
    /* P = V^2 / R (Ohm's law): 2.828 V into 8 ohm = 1 W; 1 V into 600 ohm = 1.667 mW; 0 dBu into
     * 600 ohm = 1 mW by the definition of the dBu (docs/references.md 14). */
    ck_assert_double_eq_tol(ml_level_watts(sqrt(8.0), 8.0), 1.0, 1e-12);
    ck_assert_double_eq_tol(ml_level_watts(1.0, 600.0), 1.0 / 600.0, 1e-15);
    ck_assert_double_eq_tol(ml_level_watts(ml_dbu_to_vrms(0.0), 600.0), 1e-3, 1e-12);
    ck_assert(isnan(ml_level_watts(1.0, 0.0)) && isnan(ml_level_watts(-1.0, 8.0)));
}
END_TEST

START_TEST(calibration_from_capture)
{
    /* A 997 Hz tone made at -18.0 dBFS (synth level rule: amplitude 10^(L/20), docs/references.md 5)
     * stands for 0.7746 V at the port. Measured from the capture with the project's spectrum and
     * ml_audio_analyze (flat-top window: amplitude error << 0.01 dB), it must give +18.0 dBu full scale
     * (EBU R68, docs/references.md 14) within 0.01 dB, and a -30 dBFS reading must then be 0.1946 V
     * (0.7746 V x 10^(-12/20), analytic). */
    const double rate = 48000;
    ml_synth_config sc = ml_synth_config_default(rate);
    sc.freq_hz = 997.0;
    sc.level_dbfs = -18.0;
    sc.noise_dbfs = -100.0;
    ml_synth *syn = NULL;
    ck_assert_int_eq(ml_synth_create(&sc, &syn), ML_OK);
    const size_t n = 4 * 48000;
    float *x = malloc(n * sizeof *x);
    ck_assert_int_eq(ml_synth_generate(syn, x, n), ML_OK);
    ml_spectrum *sp = NULL;
    ml_spectrum_config spc = ml_spectrum_config_default(rate);
    ck_assert_int_eq(ml_spectrum_create(&spc, &sp), ML_OK);
    ck_assert_int_eq(ml_spectrum_push(sp, x, n), ML_OK);
    ml_audio_config ac = ml_audio_config_default();
    ml_audio_result r;
    ck_assert_int_eq(ml_audio_analyze(sp, &ac, &r), ML_OK);
    const double dbfs = ml_power_dbfs(r.fundamental_power);
    ml_level_cal c;
    ck_assert_int_eq(ml_level_cal_from_tone(0.774597, dbfs, &c), ML_OK);
    ck_assert_double_eq_tol(c.full_scale_dbu, 18.0, 0.01);
    ck_assert_double_eq_tol(ml_level_vrms(&c, -30.0), 0.774597 * pow(10.0, -12.0 / 20.0), 0.774597 * 0.0012);
    ml_spectrum_destroy(sp);
    ml_synth_destroy(syn);
    free(x);
}
END_TEST

START_TEST(rejections)
{
    ml_level_cal c = {7.0};
    ck_assert_int_eq(ml_level_cal_from_dbu(NAN, &c), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_dbu(61.0, &c), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_dbu(-61.0, &c), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_dbu(10.0, NULL), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_tone(0.0, -18.0, &c), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_tone(INFINITY, -18.0, &c), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_tone(1.0, NAN, &c), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_tone(1.0, 30.0, &c), ML_EINVAL);
    ck_assert_int_eq(ml_level_cal_from_tone(1e-9, 0.0, &c), ML_EINVAL); /* -178 dBu: out of range */
    ck_assert(c.full_scale_dbu == 7.0);               /* untouched on failure */
    ck_assert(isnan(ml_level_dbu(&c, NAN)) && isnan(ml_level_dbu(NULL, 0.0)));
    ck_assert(isnan(ml_level_power_vrms(&c, -1.0)) && isnan(ml_level_dbfs_from_vrms(&c, 0.0)));
}
END_TEST

static Suite *levels_suite(void)
{
    Suite *s = suite_create("dsp_levels");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, unit_constants);
    tcase_add_test(tc, alignment_practices);
    tcase_add_test(tc, watts_into_load);
    tcase_add_test(tc, calibration_from_capture);
    tcase_add_test(tc, rejections);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(levels_suite());
}
