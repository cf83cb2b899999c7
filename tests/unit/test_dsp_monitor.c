/* Unit tests for dsp/monitor: the sliding-window analysis behind the watch command.
 * SPDX-License-Identifier: MIT
 *
 * Signals are synthesised here: AM on a carrier, A (1 + m cos(2 pi fm t)) on a real IF
 * cos(2 pi fc t) or on I/Q exp(j 2 pi fc t), and audio tones with a known harmonic.
 *
 * References:
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley 2001, sec. 3.1: the envelope
 *     of A[1 + m cos(2 pi fm t)] cos(2 pi fc t) is A(1 + m cos(2 pi fm t)) for m <= 1.
 * [newnes] Newnes Radio and RF Engineer's Pocket Book, sec. 8.3.1: m = (Emax - Emin)/(Emax + Emin).
 * [cfr73.14] 47 CFR 73.14: positive peak 100 (Emax - C)/C, negative 100 (C - Emin)/C.
 * [refs61] docs/references.md 6.1, model B: pinch-off, envelope max(0, 1 + m cos).
 */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/monitor.h"
#include "testsig.h"

#define FS 48000.0
#define AMP 0.3
#define FM 1000.0

/* n samples of AM (depth m; pinch-off beyond 100 %) from sample offset t0, into re/im */
static void am_signal(float *re, float *im, size_t n, size_t t0, double fc, double m)
{
    for (size_t i = 0; i < n; i++) {
        const double t = (double)(t0 + i) / FS;
        const double e = fmax(0.0, 1.0 + m * cos(2 * TS_PI * FM * t));
        re[i] = (float)(AMP * e * cos(2 * TS_PI * fc * t));
        if (im)
            im[i] = (float)(AMP * e * sin(2 * TS_PI * fc * t));
    }
}

static ml_monitor *make(ml_monitor_kind kind)
{
    ml_monitor_config c = ml_monitor_config_default(FS, kind);
    ml_monitor *q = NULL;
    ck_assert_int_eq(ml_monitor_create(&c, &q), ML_OK);
    return q;
}

/* pushes n frames of AM in blocks of `block` */
static void push_am(ml_monitor *q, size_t n, size_t t0, double fc, double m, bool iq, size_t block)
{
    float *re = malloc(n * sizeof *re), *im = malloc(n * sizeof *im);
    am_signal(re, iq ? im : NULL, n, t0, fc, m);
    for (size_t i = 0; i < n; i += block) {
        const size_t k = n - i < block ? n - i : block;
        ck_assert_int_eq(ml_monitor_push(q, re + i, iq ? im + i : NULL, k), ML_OK);
    }
    free(re);
    free(im);
}

START_TEST(config_rejection)
{
    ml_monitor *q = (ml_monitor *)1;
    ml_monitor_config c = ml_monitor_config_default(FS, ML_MONITOR_IQ);
    ml_monitor_config bad[8];
    for (int i = 0; i < 8; i++)
        bad[i] = c;
    bad[0].rate_hz = 0;
    bad[1].window_s = 0.05;              /* below 0.1 s */
    bad[2].window_s = 11;                /* above 10 s */
    bad[3].kind = (ml_monitor_kind)7;
    bad[4].peak_hold_s = 0;
    bad[5].refind_hz = 0;
    bad[6].rate_hz = 8000;               /* 0.1 s at 8 kHz: 800 < 1024 samples */
    bad[6].window_s = 0.1;
    bad[7].bandwidth_hz = -1;
    for (int i = 0; i < 8; i++) {
        ck_assert_int_eq(ml_monitor_create(&bad[i], &q), ML_EINVAL);
        ck_assert_ptr_null(q);
    }
    ck_assert_int_eq(ml_monitor_create(NULL, &q), ML_EINVAL);
    ck_assert_double_eq(c.window_s, 1.0); /* README: default window 1 s */
    ml_monitor_destroy(NULL);
}
END_TEST

START_TEST(not_before_the_window_is_full)
{
    ml_monitor *q = make(ML_MONITOR_IQ);
    ck_assert_uint_eq(ml_monitor_window_frames(q), 48000); /* 1 s at 48 kHz */
    ml_monitor_result r;
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_ENOSIGNAL);
    push_am(q, 47999, 0, 3000, 0.8, true, 4096);
    ck_assert_uint_eq(ml_monitor_fill(q), 47999);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_ENOSIGNAL);
    ck_assert(isnan(r.modulation.index));
    double db[8], lo, hi;
    ck_assert_int_eq(ml_monitor_get_columns(q, db, 8, &lo, &hi), ML_ENOSIGNAL);
    push_am(q, 1, 47999, 3000, 0.8, true, 1);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ml_monitor_destroy(q);
}
END_TEST

START_TEST(tone_modulation_iq_and_if)
{
    /* m = 0.8: Emax = A 1.8, Emin = A 0.2, C = A [haykin:2001], so index 0.8 [newnes] and both
     * peaks 80 % [cfr73.14]. The peak readings need 5 ms per second beyond the level: for a cosine
     * peak that is the level at phase pi 0.005, m A (1 - cos(0.005 pi)) = 1.0e-4 m A below it, so
     * the peaks read 0.01 % low; C is the mean envelope over whole 1 kHz cycles (1 s): exact up to
     * the filter edges (the envelope drops 2 edge() samples, a fraction of a cycle: < 0.1 % of m).
     * Tolerances: 0.2 % of modulation on peaks, 0.002 on the index. The carrier is found at fc
     * (a 3 kHz complex carrier, a 12 kHz real IF) to 0.01 Hz (noise-free, phase-advance estimate).
     * Level: A = 0.3 is -10.46 dBFS (20 lg 0.3); 0.01 dB. */
    const struct { bool iq; double fc; } cases[] = {{true, 3000}, {true, -5000}, {false, 12000}};
    for (size_t k = 0; k < 3; k++) {
        ml_monitor *q = make(cases[k].iq ? ML_MONITOR_IQ : ML_MONITOR_IF);
        push_am(q, 48000, 0, cases[k].fc, 0.8, cases[k].iq, 4096);
        ml_monitor_result r;
        ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
        ck_assert(r.carrier_ok);
        ck_assert_double_eq_tol(r.modulation.carrier_hz, cases[k].fc, 0.01);
        ck_assert_double_eq_tol(r.modulation.carrier_level_dbfs, 20 * log10(AMP), 0.01);
        ck_assert_double_eq_tol(r.modulation.index, 0.8, 0.002);
        ck_assert_double_eq_tol(r.modulation.positive_peak_pct, 80.0, 0.2);
        ck_assert_double_eq_tol(r.modulation.negative_peak_pct, 80.0, 0.2);
        ck_assert_uint_eq(r.modulation.pinch_events + r.modulation.reversal_events, 0);
        /* a pure cosine envelope: no harmonics, so the envelope THD is far below 0.1 % */
        ck_assert_double_le(r.modulation.audio.thd_pct, 0.1);
        ck_assert_double_eq_tol(r.audio.fundamental_hz, FM, 0.01);
        ck_assert_double_eq(r.window_s, 1.0);
        ck_assert_uint_eq(r.carrier_finds, 1);
        ml_monitor_destroy(q);
    }
}
END_TEST

START_TEST(pinch_off_reads_100_percent)
{
    /* m = 1.3 with pinch-off [refs61 model B]: the envelope sits at 0 for part of each cycle, so
     * the negative peak is 100 % and pinch-off events are counted (one per cycle). */
    ml_monitor *q = make(ML_MONITOR_IQ);
    push_am(q, 48000, 0, 3000, 1.3, true, 4096);
    ml_monitor_result r;
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_double_ge(r.modulation.negative_peak_pct, 99.9);
    ck_assert_uint_ge(r.modulation.pinch_events + r.modulation.reversal_events, 100);
    ml_monitor_destroy(q);
}
END_TEST

START_TEST(carrier_going_at_the_edge)
{
    /* m = 0.8 at 1 kHz with the carrier gone for the window's last 8 ms (zeros: a 20 ms block
     * keeps 60 % of its power, no block is 20 dB down): the last 5 ms are silent, so the signal
     * goes within the window (gap_s > 0), which is not analysed and latches nothing
     * (ML_ENOSIGNAL, carrier_ok false). Gone for the last 3 ms only (less than the peak hold's
     * 5 ms per second) it is analysed, without a pinch-off (a trough cut by the end is not
     * judged, dsp/am.h). A 50 Hz tone at m = 1 whose window ends in its trough (the 5 ms there
     * hold 1/85 of the block's power [haykin:2001: mean of (1 - cos x)^2 over |x| < pi/4 against
     * 1.5 over the cycle], 19 dB down) is no gap. */
    for (int k = 0; k < 3; k++) {
        ml_monitor *q = make(ML_MONITOR_IQ);
        const size_t n = 48000, off = k == 0 ? 384 : k == 1 ? 144 : 0;
        float *re = malloc(n * sizeof *re), *im = malloc(n * sizeof *im);
        if (k < 2) {
            am_signal(re, im, n, 0, 3000, 0.8);
        } else {
            for (size_t i = 0; i < n; i++) { /* ends at cos = -1: t = 1 s is 50 whole cycles */
                const double t = (double)(i + 1) / FS - 1.0 + 0.01;
                const double e = 1.0 + cos(2 * TS_PI * 50.0 * t);
                re[i] = (float)(AMP * e * cos(2 * TS_PI * 3000 * t));
                im[i] = (float)(AMP * e * sin(2 * TS_PI * 3000 * t));
            }
        }
        for (size_t i = n - off; i < n; i++)
            re[i] = im[i] = 0.0f;
        ck_assert_int_eq(ml_monitor_push(q, re, im, n), ML_OK);
        ml_monitor_result r;
        const ml_status st = ml_monitor_analyse(q, &r);
        if (k == 0) {
            ck_assert_int_eq(st, ML_ENOSIGNAL);
            ck_assert(!r.carrier_ok);
            ck_assert_double_gt(r.gap_s, 0.0);
        } else {
            ck_assert_int_eq(st, ML_OK);
            ck_assert(r.carrier_ok);
            ck_assert_double_eq(r.gap_s, 0.0);
            ck_assert_uint_eq(r.modulation.pinch_events, 0);
        }
        free(re);
        free(im);
        ml_monitor_destroy(q);
    }
}
END_TEST

START_TEST(window_slides)
{
    /* 1 s at m = 0.5, then 1 s at m = 0.8: the window holds only the second second, so it reads
     * as the m = 0.8 case above (same tolerances). Half a second later, the window holds 0.5 s
     * of each: the peaks are the larger depth's, 80 %. */
    ml_monitor *q = make(ML_MONITOR_IQ);
    push_am(q, 48000, 0, 3000, 0.5, true, 4096);
    ml_monitor_result r;
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_double_eq_tol(r.modulation.index, 0.5, 0.002);
    push_am(q, 24000, 48000, 3000, 0.8, true, 4096);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_double_ge(r.modulation.positive_peak_pct,
                        75.0); /* C is then the mean envelope: A, peaks 80 % */
    push_am(q, 24000, 72000, 3000, 0.8, true, 4096);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_double_eq_tol(r.modulation.index, 0.8, 0.002);
    ck_assert_double_eq_tol(r.modulation.positive_peak_pct, 80.0, 0.2);
    ck_assert_uint_eq(r.analysed_frames, 96000);
    ml_monitor_destroy(q);
}
END_TEST

START_TEST(block_invariance_and_reset)
{
    /* The ring holds the same samples whatever the push sizes, so the results are identical. */
    const size_t blocks[] = {1, 7, 4096};
    ml_monitor_result ref;
    for (size_t b = 0; b < 3; b++) {
        ml_monitor *q = make(ML_MONITOR_IQ);
        push_am(q, 60000, 0, 3000, 0.6, true, blocks[b]);
        ml_monitor_result r;
        ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
        if (b == 0)
            ref = r;
        ck_assert_double_eq(r.modulation.index, ref.modulation.index);
        ck_assert_double_eq(r.modulation.positive_peak_pct, ref.modulation.positive_peak_pct);
        ck_assert_double_eq(r.modulation.audio.thd_pct, ref.modulation.audio.thd_pct);
        ck_assert_double_eq(r.modulation.cnr_db, ref.modulation.cnr_db);
        /* reset: empty again, then the same input gives the same figures */
        ml_monitor_reset(q);
        ck_assert_uint_eq(ml_monitor_fill(q), 0);
        ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_ENOSIGNAL);
        push_am(q, 60000, 0, 3000, 0.6, true, 4096);
        ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
        ck_assert_double_eq(r.modulation.index, ref.modulation.index);
        ck_assert_double_eq(r.modulation.negative_peak_pct, ref.modulation.negative_peak_pct);
        ml_monitor_destroy(q);
    }
}
END_TEST

START_TEST(audio_tone_with_harmonic)
{
    /* 1 kHz at amplitude 0.5 with its 3rd harmonic at -40 dB (0.005): THD = 0.005 / 0.5 = 1 %,
     * the fundamental at 20 lg 0.5 = -6.02 dBFS and the RMS sqrt((0.25 + 2.5e-5 + 1e-6) / 2);
     * 50 Hz hum of amplitude 0.001: power 5e-7 = 20 lg 0.001 = -60 dBFS, which a 1 s window
     * resolves (32768 points: the hum lies outside the DC lobe). Noise-free apart from float
     * rounding (about -150 dBFS). Tolerances: 0.001 % on THD (the
     * flat-top window's leakage is far below), 0.01 dB on levels, 0.01 Hz on frequency, 0.1 dB on
     * hum (its lobe also holds the noise of the lobe's bins, far below). */
    ml_monitor *q = make(ML_MONITOR_AUDIO);
    float *x = malloc(48000 * sizeof *x);
    for (size_t i = 0; i < 48000; i++) {
        const double t = (double)i / FS;
        x[i] = (float)(0.5 * sin(2 * TS_PI * 1000 * t) + 0.005 * sin(2 * TS_PI * 3000 * t)
                       + 0.001 * sin(2 * TS_PI * 50 * t));
    }
    ck_assert_int_eq(ml_monitor_push(q, x, NULL, 48000), ML_OK);
    ml_monitor_result r;
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert(r.audio_ok);
    ck_assert_double_eq_tol(r.audio.thd_pct, 1.0, 0.001);
    ck_assert_double_eq_tol(r.audio.fundamental_dbfs, 20 * log10(0.5), 0.01);
    ck_assert_double_eq_tol(r.rms_dbfs, 10 * log10((0.25 + 2.5e-5 + 1e-6) / 2 / 0.5), 0.01);
    ck_assert_double_eq_tol(r.audio.hum_dbfs, -60.0, 0.1);
    ck_assert_double_eq_tol(r.audio.fundamental_hz, 1000.0, 0.01);
    /* the hum is noise to the SNR (dsp/metrics.h: the noise density is taken over every bin but
     * DC, fundamental and harmonics): SNR = 10 lg(0.125 / 5e-7) = 53.98 dB, less up to 0.25 dB
     * because the density is spread over the excluded bins too (the +-lobe bins of DC, the tone
     * and 9 harmonics: about 3 % of the band's 13600 bins, 0.13 dB) */
    ck_assert_double_eq_tol(r.audio.snr_db, 10 * log10(0.125 / 5e-7), 0.25);
    ck_assert(isnan(r.modulation.index)); /* no modulation figures for audio */
    /* the display columns: the column holding 1 kHz reads the tone's level, -6.02 dBFS (0.1 dB:
     * the flat-top window's scalloping), and a column far from any component (column 41: 1676 ..
     * 1860 Hz, more than 600 Hz from the tone and its harmonic) reads below -100 */
    double db[64], lo, hi;
    ck_assert_int_eq(ml_monitor_get_columns(q, db, 64, &lo, &hi), ML_OK);
    ck_assert_double_eq(lo, 20.0);
    ck_assert_double_eq(hi, 20000.0);
    const size_t c1k = (size_t)(64 * log(1000.0 / 20.0) / log(1000.0));
    ck_assert_double_eq_tol(db[c1k], 20 * log10(0.5), 0.1);
    ck_assert_double_le(db[41], -100.0);
    free(x);
    ml_monitor_destroy(q);
}
END_TEST

START_TEST(latches_c_from_a_quiet_stretch)
{
    /* 1 s of carrier alone, then the envelope A (0.95 + 0.8 s + 0.2 s^2), s = sin(2 pi fm t):
     * +95 % / -65 % re C = A with a +5 % carrier shift (tests/unit/test_dsp_modulation.c derives
     * it). The first window is unmodulated and sets C; a window wholly modulated 1 s later keeps
     * it [cfr73.14], where the window's own mean envelope would read +85.7 / -66.7 %. The 0.005 pi
     * hold lowers the positive reading by 0.015 %; 0.1 % for the hold at a 1 s window's few
     * cycles and the 20 ms block the change falls in. A reference of 1.1 A set afterwards gives
     * 100 (1.95 - 1.1)/1.1 = 77.27 %; a reset forgets the latch. */
    ml_monitor *q = make(ML_MONITOR_IQ);
    float *re = malloc(96000 * sizeof *re), *im = malloc(96000 * sizeof *im);
    for (size_t i = 0; i < 96000; i++) {
        const double t = (double)i / FS, sn = sin(2 * TS_PI * FM * t);
        const double e = t < 1.0 ? 1.0 : 0.95 + 0.8 * sn + 0.2 * sn * sn;
        re[i] = (float)(AMP * e * cos(2 * TS_PI * 3000 * t));
        im[i] = (float)(AMP * e * sin(2 * TS_PI * 3000 * t));
    }
    ml_monitor_result r;
    ck_assert_int_eq(ml_monitor_push(q, re, im, 48000), ML_OK);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_int_eq(r.modulation.c_source, ML_C_QUIET);
    ck_assert_int_eq(ml_monitor_push(q, re + 48000, im + 48000, 48000), ML_OK);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_int_eq(r.modulation.c_source, ML_C_LATCHED);
    ck_assert_double_eq_tol(r.modulation.positive_peak_pct, 95.0, 0.1);
    ck_assert_double_eq_tol(r.modulation.negative_peak_pct, 65.0, 0.1);
    ck_assert_double_eq_tol(r.modulation.carrier_shift_pct, 5.0, 0.05);
    ck_assert_double_eq_tol(r.modulation.unmodulated_dbfs, 20 * log10(AMP), 0.01);
    ck_assert_int_eq(ml_monitor_set_reference(q, 1.1 * AMP), ML_OK);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_int_eq(r.modulation.c_source, ML_C_REFERENCE);
    ck_assert_double_eq_tol(r.modulation.positive_peak_pct, 100 * (1.95 - 1.1) / 1.1, 0.1);
    ck_assert_int_eq(ml_monitor_set_reference(q, NAN), ML_OK);
    ck_assert_int_eq(ml_monitor_analyse(q, &r), ML_OK);
    ck_assert_int_eq(r.modulation.c_source, ML_C_MEAN);
    ck_assert_double_eq_tol(r.modulation.positive_peak_pct, 100 * (1.95 - 1.05) / 1.05, 0.1);
    ck_assert_double_eq_tol(r.modulation.negative_peak_pct, 100 * (1.05 - 0.35) / 1.05, 0.1);
    free(re);
    free(im);
    ml_monitor_destroy(q);
}
END_TEST

static Suite *monitor_suite(void)
{
    Suite *s = suite_create("dsp_monitor");
    TCase *tc = tcase_create("monitor");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, config_rejection);
    tcase_add_test(tc, not_before_the_window_is_full);
    tcase_add_test(tc, tone_modulation_iq_and_if);
    tcase_add_test(tc, pinch_off_reads_100_percent);
    tcase_add_test(tc, carrier_going_at_the_edge);
    tcase_add_test(tc, window_slides);
    tcase_add_test(tc, block_invariance_and_reset);
    tcase_add_test(tc, audio_tone_with_harmonic);
    tcase_add_test(tc, latches_c_from_a_quiet_stretch);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(monitor_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
