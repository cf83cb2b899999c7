/* Unit tests for dsp/modulation: the one definition of the carrier and modulation figures.
 * SPDX-License-Identifier: MIT
 *
 * The signal is built here: 1 s of unmodulated carrier of amplitude A = 0.3, then 3 s of the
 * envelope A (0.95 + 0.8 s + 0.2 s^2), s = sin(2 pi 1000 t), which is A (1.05 + 0.8 s - 0.1 cos 2wt)
 * (s^2 = (1 - cos 2wt)/2): its maximum A 1.95 (s = 1) and minimum A 0.35 (s = -1) are +95 % and
 * -65 % re C = A, its mean A 1.05 is a +5 % carrier shift, and its AC part has a second harmonic
 * of 0.1/0.8 = 12.5 % of the fundamental. On I/Q the carrier is A e(t) exp(j 2 pi fc t), on a
 * real IF A e(t) cos(2 pi fc t); white noise of sigma 1e-4 per component is added.
 *
 * References:
 * [cfr73.14] 47 CFR 73.14: positive peak 100 (MAX - C)/C, negative 100 (C - MIN)/C, C the
 *     carrier amplitude without modulation (docs/references.md 7).
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley 2001, sec. 3.1: the side
 *     frequencies of tone AM have amplitude m A / 2 each (docs/references.md 6).
 * Peak hold (README "Peak readings", analytic): the readings are the levels exceeded for 0.5 % of
 * the time; near its maximum the envelope is A (1.95 - 0.6 d^2) at phase offset d, exceeded for
 * the share d / pi, so the reading lies A 0.6 (0.005 pi)^2 = 1.5e-4 A below the maximum; near the
 * minimum A (0.35 + 0.2 d^2): 5e-5 A above it.
 */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/modulation.h"
#include "ml_check.h"
#include "testsig.h"

#define FS 48000.0
#define AMP 0.3
#define FM 1000.0
#define LEAD_S 1.0
#define SPAN_S 4.0
#define SIGMA 1e-4

/* frames of the signal above from sample t0 (lead-in of lead_s seconds, then modulation) */
static float *make_frames(size_t n, bool iq, double fc, double lead_s, size_t t0, unsigned seed)
{
    float *f = malloc(n * (iq ? 2 : 1) * sizeof *f);
    ts_rng rng = {seed};
    for (size_t i = 0; i < n; i++) {
        const double t = (double)(t0 + i) / FS, s = sin(2 * TS_PI * FM * t);
        const double e = t < lead_s ? 1.0 : 0.95 + 0.8 * s + 0.2 * s * s;
        const double ph = 2 * TS_PI * fc * t;
        if (iq) {
            f[2 * i] = (float)(AMP * e * cos(ph) + SIGMA * ts_gauss(&rng));
            f[2 * i + 1] = (float)(AMP * e * sin(ph) + SIGMA * ts_gauss(&rng));
        } else {
            f[i] = (float)(AMP * e * cos(ph) + SIGMA * ts_gauss(&rng));
        }
    }
    return f;
}

static ml_modulation *make(bool iq, double fc, size_t span, bool latch)
{
    ml_channels ch;
    ck_assert_int_eq(ml_channels_map(iq ? 2 : 1, 1, iq, false, 0, &ch), ML_OK);
    ml_modulation_config c = ml_modulation_config_default(FS, &ch, fc, AMP, (int64_t)span);
    c.latch = latch;
    ml_modulation *q = NULL;
    ck_assert_int_eq(ml_modulation_create(&c, &q), ML_OK);
    return q;
}

static void run(ml_modulation *q, const float *f, size_t n, bool iq, size_t block, ml_modulation_result *r)
{
    const size_t w = iq ? 2 : 1;
    for (size_t i = 0; i < n; i += block)
        ck_assert_int_eq(ml_modulation_push(q, f + w * i, n - i < block ? n - i : block), ML_OK);
    ck_assert_int_eq(ml_modulation_finish(q), ML_OK);
    ck_assert_int_eq(ml_modulation_get_result(q, r), ML_OK);
}

START_TEST(config_rejection)
{
    ml_channels ch;
    ml_channels_map(2, 1, true, false, 0, &ch);
    const ml_modulation_config good = ml_modulation_config_default(FS, &ch, 3000, AMP, 192000);
    ck_assert_double_eq(good.peak_hold_s, 0.005);          /* README: 5 ms per second */
    ck_assert_double_eq(good.positive_limit_pct, 125.0);   /* 47 CFR 73.1570 */
    ck_assert_double_eq(good.quiet_min_s, 0.1);            /* README: at least 0.1 s */
    ck_assert_double_eq(good.max_bandwidth_hz, 10000.0);   /* README: at most 10 kHz */
    ml_modulation_config bad[8];
    for (int i = 0; i < 8; i++)
        bad[i] = good;
    bad[0].rate_hz = 0;
    bad[1].carrier_hz = 24000;          /* at Nyquist */
    bad[2].carrier_amplitude = 0;
    bad[3].peak_hold_s = 0.5;
    bad[4].span_frames = 0;
    bad[5].channels.im = 2;             /* outside the frame */
    bad[6].bandwidth_hz = 30000;        /* wider than fits */
    bad[7].channels.complex_input = false;
    bad[7].carrier_hz = -3000;          /* a real IF has no negative carrier */
    ml_modulation *q = (ml_modulation *)1;
    for (int i = 0; i < 8; i++) {
        ck_assert_int_eq(ml_modulation_create(&bad[i], &q), ML_EINVAL);
        ck_assert_ptr_null(q);
    }
    ml_modulation_config shortspan = good;
    shortspan.span_frames = 200; /* shorter than the channel filter */
    ck_assert_int_eq(ml_modulation_create(&shortspan, &q), ML_ENOSIGNAL);
    ml_modulation_destroy(NULL);
}
END_TEST

START_TEST(channel_bandwidth)
{
    /* ml_am_default_bandwidth and ml_am_transition (dsp/am.h), worked out by hand. Mixing a real
     * IF leaves the image of its carrier D = min(2 fc, fs - 2 fc) from 0 Hz, with side frequencies
     * (docs/references.md 6: carrier +- fm) down to D - fm: 2 B + t <= D keeps them in the stop
     * band for any fm <= B; the default transition is t0 = min(1000, D / 40).
     *  - I/Q at 3 kHz, 48 kHz: min(10000, 24000 - 3000) = 10000, transition min(1000, 2500) = 1000;
     *  - real IF at 3 kHz (below fs / 4): D = 6000, t0 = 150, B = (6000 - 150) / 2 = 2925;
     *  - real IF at 20 kHz (above fs / 4): D = 48000 - 40000 = 8000, t0 = 200, B = 3900;
     *  - real IF at 12 kHz: D = 24000, B = min(10000, 11700) = 10000, t = min(1000, 2500, 4000);
     *  - real IF at 16 kHz: D = 16000, t0 = 400, B = 7800;
     *  - --bandwidth 2900 on a real IF at 8 kHz, 22.05 kHz: D = 6050, t = min(1000, 725, 8125,
     *    6050 - 5800) = 250; 3000 does not fit (the widest is (6050 - 151.25) / 2 = 2949.375);
     *  - real IF at 23.7 kHz: D = 600, B = (600 - 15) / 2 = 292.5 < 300: no channel. */
    double b, t;
    ck_assert_int_eq(ml_modulation_channel(FS, true, 3000, 0, 10000, &b, &t), ML_OK);
    ck_assert_double_eq(b, 10000);
    ck_assert_double_eq(t, 1000);
    ck_assert_int_eq(ml_modulation_channel(FS, false, 3000, 0, 10000, &b, &t), ML_OK);
    ck_assert_double_eq_tol(b, 2925, 1e-9);
    ck_assert_double_eq_tol(t, 150, 1e-9);
    ck_assert_int_eq(ml_modulation_channel(FS, false, 20000, 0, 10000, &b, &t), ML_OK);
    ck_assert_double_eq_tol(b, 3900, 1e-9);
    ck_assert_double_eq_tol(t, 200, 1e-9);
    ck_assert_int_eq(ml_modulation_channel(FS, false, 12000, 0, 10000, &b, &t), ML_OK);
    ck_assert_double_eq_tol(b, 10000, 1e-9);
    ck_assert_double_eq_tol(t, 1000, 1e-9);
    ck_assert_int_eq(ml_modulation_channel(FS, false, 16000, 0, 10000, &b, &t), ML_OK);
    ck_assert_double_eq_tol(b, 7800, 1e-9);
    ck_assert_double_eq_tol(t, 400, 1e-9);
    ck_assert_int_eq(ml_modulation_channel(22050, false, 8000, 2900, 10000, &b, &t), ML_OK);
    ck_assert_double_eq_tol(b, 2900, 1e-9);
    ck_assert_double_eq_tol(t, 250, 1e-9);
    ck_assert_int_eq(ml_modulation_channel(22050, false, 8000, 3000, 10000, &b, &t), ML_EINVAL);
    ck_assert_double_eq_tol(b, 2949.375, 1e-9); /* the widest, for the message */
    ck_assert_int_eq(ml_modulation_channel(FS, false, 20000, 4000, 10000, &b, &t), ML_EINVAL);
    ck_assert_int_eq(ml_modulation_channel(FS, false, 23700, 0, 10000, &b, &t), ML_EINVAL);
    ck_assert_double_eq(b, 0);
    ck_assert_int_eq(ml_modulation_channel(FS, true, 3000, 4000, 10000, &b, &t), ML_OK);
    ck_assert_double_eq(b, 4000);
    ck_assert_double_eq(t, 1000);
    ck_assert_int_eq(ml_modulation_channel(FS, true, 3000, 12000, 10000, &b, &t), ML_EINVAL);
    ck_assert_double_eq(b, 10000); /* the widest, for the message */
    ck_assert_int_eq(ml_modulation_channel(FS, false, 50, 0, 10000, &b, &t), ML_EINVAL);
    /* the rule itself over a grid of rates and real carriers on both sides of fs / 4: every
     * channel given keeps 2 B + t <= D, is at least 97.5 % of D / 2 unless max_hz bounds it, and a
     * request up to the widest gets a transition that keeps the rule too */
    const double rates[] = {16000, 22050, 44100, 48000, 96000};
    for (size_t i = 0; i < sizeof rates / sizeof rates[0]; i++) {
        const double fs = rates[i];
        for (double fc = 100; fc < fs / 2; fc += fs / 97) {
            const double d = fmin(2 * fc, fs - 2 * fc);
            if (ml_modulation_channel(fs, false, fc, 0, 10000, &b, &t) != ML_OK) {
                ck_assert_double_lt(0.5 * d, 300 * 1.03); /* only when under 300 Hz fits */
                continue;
            }
            ck_assert_msg(2 * b + t <= d + 1e-9, "fs %g fc %g: B %g t %g D %g", fs, fc, b, t, d);
            ck_assert(b >= 300 && t > 0 && b + t <= fs / 2);
            ck_assert(b == 10000 || b >= 0.975 * 0.5 * d - 1e-9);
            const double req = 0.9 * b;
            ck_assert_int_eq(ml_modulation_channel(fs, false, fc, req, 10000, &b, &t), ML_OK);
            ck_assert(2 * b + t <= d + 1e-9 && t > 0);
        }
    }
}
END_TEST

/* The figures of the signal above, read against C from its unmodulated lead-in. */
static void check_figures(const ml_modulation_result *r, bool iq)
{
    ck_assert_int_eq(r->c_source, ML_C_QUIET);
    /* the lead-in's whole 20 ms blocks: 1 s less the filter's edge and the block the change falls in */
    ck_assert_double_ge(r->c_quiet_s, 0.95);
    ck_assert_double_le(r->c_quiet_s, 1.0);
    ck_assert_double_eq_tol(r->unmodulated_dbfs, 20 * log10(AMP), 0.01); /* noise: < 1e-4 relative */
    ck_assert(r->spectra_modulated_only);
    /* [cfr73.14] with the hold offsets above: 95 - 0.015 and 65 - 0.005; 0.05 % for the noise */
    ck_assert_double_eq_tol(r->positive_peak_held_pct, 95.0 - 0.015, 0.05);
    ck_assert_double_eq_tol(r->negative_peak_pct, 65.0 - 0.005, 0.05);
    /* the noise (dsp/am.h: r.m.s. of the quadrature component) is the added noise through the
     * channel filter: per component sigma sqrt(sum h^2) for I/Q; the IF's mixer doubles a real
     * noise of sigma into two components of variance 2 sigma^2. sum h^2 of a low-pass flat to B
     * = 10 kHz with its 1 kHz transition centred at B + 500 Hz is 2 (B + 500) / fs = 0.4375
     * (Parseval); 3 % for the transition's shape and the estimate's spread over 3e4 blocks
     * samples. */
    const double sig = SIGMA * sqrt((iq ? 1.0 : 2.0) * 2 * (r->bandwidth_hz + 500) / FS);
    ck_assert_double_eq_tol(r->noise_pct, 100 * sig / AMP, 0.03 * 100 * sig / AMP);
    /* the true peak is at least the envelope's maximum 1.95 A and the held reading; its upper
     * side is checked in true_peak_at_any_time on a signal without the step of this one's onset
     * (its band-limited ringing lifts the first crest by a few tenths of a per cent) */
    ck_assert_double_ge(r->positive_peak_pct, 95.0 - 0.01);
    ck_assert_double_ge(r->positive_peak_pct, r->positive_peak_held_pct);
    ck_assert(!r->peaks_noise_biased); /* 70 dB CNR: the index agrees with the spectral one */
    ck_assert_double_eq_tol(r->index, (1.95 - 0.35) / (1.95 + 0.35), 5e-4);
    /* whole tone cycles in whole 20 ms blocks: the modulated mean is 1.05 A, except that the
     * block the lead-in ends in counts as modulated: at most 20 ms of E = A among 3 s, which
     * lowers the shift by at most 5 x 0.02 / 3 = 0.033 % */
    ck_assert_double_eq_tol(r->carrier_shift_pct, 5.0 - 0.0167, 0.0167);
    /* the carrier line under modulation is the mean envelope, 1.05 A */
    ck_assert_double_eq_tol(r->carrier_level_dbfs, 20 * log10(1.05 * AMP), 0.01);
    /* [haykin:2001]: side frequencies 0.8 A / 2 each against the line 1.05 A */
    ck_assert_double_eq_tol(r->index_spectral, 0.8 / 1.05, 1e-3);
    ck_assert_double_eq_tol(r->sideband_asymmetry_db, 0.0, 0.01);
    /* the second harmonic of the envelope: 0.1 / 0.8 */
    ck_assert(r->audio_valid);
    ck_assert_double_eq_tol(r->audio.fundamental_hz, FM, 0.01);
    ck_assert_double_eq_tol(r->audio.thd_pct, 12.5, 0.01);
    /* the fundamental 0.8 of C in the demodulated audio: 20 lg 0.8 dBFS (units of C) */
    ck_assert_double_eq_tol(r->audio.fundamental_dbfs, 20 * log10(0.8), 0.01);
    /* CNR: carrier line power (1.05 A)^2 (I/Q) or (1.05 A)^2 / 2 (IF) against white noise of
     * 2 sigma^2 / fs per Hz (I/Q) or sigma^2 / (fs / 2) (IF) in the channel 2B: analytic; 0.1 dB
     * for the spread of the mean over some 10^5 bins and segments */
    const double pc = iq ? pow(1.05 * AMP, 2) : pow(1.05 * AMP, 2) / 2;
    const double nd = iq ? 2 * SIGMA * SIGMA / FS : SIGMA * SIGMA / (FS / 2);
    ck_assert_double_eq_tol(r->cnr_db, 10 * log10(pc / (nd * 2 * r->bandwidth_hz)), 0.1);
    ck_assert_uint_eq(r->pinch_events + r->reversal_events, 0);
    ck_assert_double_eq(r->overmodulation_pct, 0.0);
    ck_assert_double_eq(r->carrier_off_pct, 0.0);
    ck_assert(!r->shift_from_line);
}

START_TEST(figures_iq_and_if)
{
    const size_t n = (size_t)(SPAN_S * FS);
    const struct { bool iq; double fc; } cases[] = {{true, 3000}, {true, -7000}, {false, 12000}};
    for (size_t k = 0; k < 3; k++) {
        float *f = make_frames(n, cases[k].iq, cases[k].fc, LEAD_S, 0, 5);
        ml_modulation *q = make(cases[k].iq, cases[k].fc, n, false);
        ml_modulation_result r;
        run(q, f, n, cases[k].iq, 4096, &r);
        ck_assert_double_eq_tol(r.carrier_hz, cases[k].fc, 0.01);
        check_figures(&r, cases[k].iq);
        ml_modulation_destroy(q);
        free(f);
    }
}
END_TEST

START_TEST(push_sizes_halves_and_reset)
{
    /* blocks of 7 and 4096 frames, and the two halves with batches, give the same figures (the
     * demodulator and the spectra do not depend on push sizes; only the order in which a block's
     * envelope sums are added follows the chunks: 1e-9 relative covers that rounding); a reset
     * span reads the same again */
    const size_t n = (size_t)(2.0 * FS);
    float *f = make_frames(n, true, 3000, 0.5, 0, 9);
    ml_modulation *q = make(true, 3000, n, false);
    ml_modulation_result a, b, c, d;
    run(q, f, n, true, 4096, &a);
    ml_modulation_reset(q);
    run(q, f, n, true, 7, &b);
    ml_modulation_reset(q);
    ml_modulation_batch *bt = NULL;
    ck_assert_int_eq(ml_modulation_batch_create(q, &bt), ML_OK);
    for (size_t i = 0; i < n; i += 30000) {
        const size_t m = n - i < 30000 ? n - i : 30000;
        memcpy(ml_modulation_batch_frames(bt), f + 2 * i, 2 * m * sizeof *f);
        ck_assert_int_eq(ml_modulation_demodulate(q, bt, m), ML_OK);
        ck_assert_int_eq(ml_modulation_feed(q, bt), ML_OK);
    }
    ck_assert_int_eq(ml_modulation_demodulate_end(q, bt), ML_OK);
    ck_assert_int_eq(ml_modulation_feed(q, bt), ML_OK);
    ck_assert_int_eq(ml_modulation_get_result(q, &c), ML_OK);
    ml_modulation_reset(q);
    run(q, f, n, true, 4096, &d);
    const ml_modulation_result *o[3] = {&b, &c, &d};
    for (int i = 0; i < 3; i++) {
        ck_assert_double_eq_tol(o[i]->positive_peak_pct, a.positive_peak_pct, 1e-9 * a.positive_peak_pct);
        ck_assert_double_eq_tol(o[i]->negative_peak_pct, a.negative_peak_pct, 1e-9 * a.negative_peak_pct);
        ck_assert_double_eq_tol(o[i]->c, a.c, 1e-9 * a.c);
        ck_assert_double_eq_tol(o[i]->cnr_db, a.cnr_db, 1e-9 * a.cnr_db);
        ck_assert_double_eq_tol(o[i]->audio.thd_pct, a.audio.thd_pct, 1e-9 * a.audio.thd_pct);
        ck_assert_double_eq_tol(o[i]->carrier_hz, a.carrier_hz, 1e-9 * a.carrier_hz);
        ck_assert_double_eq_tol(o[i]->index_spectral, a.index_spectral, 1e-9);
        ck_assert_uint_eq(o[i]->quiet_samples, a.quiet_samples);
    }
    /* after finish, pushes wait for a reset */
    ck_assert_int_eq(ml_modulation_push(q, f, 10), ML_EINVAL);
    ml_modulation_batch_destroy(bt);
    ml_modulation_destroy(q);
    free(f);
}
END_TEST

START_TEST(reference_latch_and_mean)
{
    /* Two spans: the first unmodulated only, the second modulated only. Without a latch the
     * second span's C is its mean envelope 1.05 A: peaks 100 (1.95 - 1.05)/1.05 = 85.71 % and
     * 100 (1.05 - 0.35)/1.05 = 66.67 %, no carrier shift. With the latch it keeps A from the
     * first span: +95 / -65 % and +5 % shift, as with a reference of A. A reference of 1.1 A
     * reads 100 (1.95 - 1.1)/1.1 = 77.27 % and 100 (1.1 - 0.35)/1.1 = 68.18 %. Tolerances as in
     * check_figures. */
    const size_t n = (size_t)(2.0 * FS);
    float *quiet = make_frames(n, true, 3000, 10.0, 0, 3);
    float *mod = make_frames(n, true, 3000, 0.0, n, 4);
    ml_modulation_result r;
    for (int latch = 0; latch <= 1; latch++) {
        ml_modulation *q = make(true, 3000, n, latch);
        run(q, quiet, n, true, 4096, &r);
        ck_assert_int_eq(r.c_source, ML_C_QUIET);
        ml_modulation_reset(q);
        run(q, mod, n, true, 4096, &r);
        if (latch) {
            ck_assert_int_eq(r.c_source, ML_C_LATCHED);
            ck_assert_double_eq_tol(r.positive_peak_held_pct, 95.0, 0.05);
            ck_assert_double_eq_tol(r.negative_peak_pct, 65.0, 0.05);
            ck_assert_double_eq_tol(r.carrier_shift_pct, 5.0, 0.01);
            ck_assert_double_ge(r.c_quiet_s, 1.9);
        } else {
            ck_assert_int_eq(r.c_source, ML_C_MEAN);
            ck_assert_double_eq_tol(r.positive_peak_held_pct, 100 * (1.95 - 1.05) / 1.05, 0.05);
            ck_assert_double_eq_tol(r.negative_peak_pct, 100 * (1.05 - 0.35) / 1.05, 0.05);
            ck_assert(isnan(r.carrier_shift_pct));
        }
        /* a reference overrides both, and NAN forgets it (and the latch) */
        ck_assert_int_eq(ml_modulation_set_reference(q, 1.1 * AMP), ML_OK);
        ml_modulation_reset(q);
        run(q, mod, n, true, 4096, &r);
        ck_assert_int_eq(r.c_source, ML_C_REFERENCE);
        ck_assert_double_eq_tol(r.positive_peak_held_pct, 100 * (1.95 - 1.1) / 1.1, 0.05);
        ck_assert_double_eq_tol(r.negative_peak_pct, 100 * (1.1 - 0.35) / 1.1, 0.05);
        ck_assert_int_eq(ml_modulation_set_reference(q, NAN), ML_OK);
        ml_modulation_reset(q);
        run(q, mod, n, true, 4096, &r);
        ck_assert_int_eq(r.c_source, ML_C_MEAN);
        ck_assert_int_eq(ml_modulation_set_reference(q, -1), ML_EINVAL);
        ml_modulation_destroy(q);
    }
    free(quiet);
    free(mod);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_modulation");
    TCase *tc = tcase_create("modulation");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, config_rejection);
    tcase_add_test(tc, channel_bandwidth);
    tcase_add_test(tc, figures_iq_and_if);
    tcase_add_test(tc, push_sizes_halves_and_reset);
    tcase_add_test(tc, reference_latch_and_mean);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
