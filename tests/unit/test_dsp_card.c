/* Unit tests for dsp/card (the loopback test signal and its analysis) and dsp/benchfig (weighted
 * noise and levels in volts).
 * SPDX-License-Identifier: MIT
 *
 * References: docs/references.md 1.3 (white noise flat over 20 Hz - 20 kHz: A-weighted minus
 * unweighted level -2.048 dB, 468 +7.263 dB), 14 (0 dBu = 0.774597 V, dBV = dBu - 2.2185 dB, EBU R68:
 * 0 dBFS = +18 dBu). The dither level is analytic: TPDF of two uniform values of +-1/2 LSB has
 * variance LSB^2 / 6 (the sum of two variances LSB^2 / 12).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/benchfig.h"
#include "dsp/card.h"
#include "dsp/spectrum.h"

/* The test signal through a path y = g x + k x^3 + noise (a simulated card), delayed by `delay`
 * frames, analysed; returns the status of finish. */
typedef struct {
    double gain2;     /* channel 2's gain (linear)                 */
    double k3;        /* cubic term                                */
    double noise_rms; /* white Gaussian noise per channel          */
    double leak;      /* channel 1 into channel 2 (linear)         */
    int delay;
    int channels;
    int dither_bits;
} path;

static double gauss(unsigned *s)
{
    /* Box-Muller on a small LCG: enough for a noise floor test */
    double u1 = 0, u2;
    while (u1 == 0) {
        *s = *s * 1103515245u + 12345u;
        u1 = (double)(*s >> 8) / 16777216.0;
    }
    *s = *s * 1103515245u + 12345u;
    u2 = (double)(*s >> 8) / 16777216.0;
    return sqrt(-2.0 * log(u1)) * cos(6.283185307179586 * u2);
}

static ml_status run_path(const path *pp, double rate, ml_card_profile *prof, ml_cardan_why *why)
{
    ml_cardgen_config gc = ml_cardgen_config_default(rate);
    gc.dither_bits = pp->dither_bits;
    ml_cardgen *g = NULL;
    ck_assert_int_eq(ml_cardgen_create(&gc, &g), ML_OK);
    ml_cardan_config ac = {.rate_hz = rate, .channels = pp->channels};
    ml_cardan *a = NULL;
    ck_assert_int_eq(ml_cardan_create(&ac, &a), ML_OK);
    const size_t blk = 1000;
    float in[2 * 1000], out[2 * 1000];
    unsigned seed = 7;
    const uint64_t total = ml_cardgen_frames(g) + (uint64_t)pp->delay + (uint64_t)rate;
    int64_t left_delay = pp->delay;
    for (uint64_t done = 0; done < total; done += blk) {
        size_t k = 0;
        for (; k < blk && left_delay > 0; k++, left_delay--)
            in[2 * k] = in[2 * k + 1] = 0.0f;
        ml_cardgen_generate(g, in + 2 * k, blk - k);
        for (size_t i = 0; i < blk; i++) {
            const double x1 = in[2 * i], x2 = in[2 * i + 1];
            const double y1 = x1 + pp->k3 * x1 * x1 * x1 + pp->noise_rms * gauss(&seed);
            const double y2 = pp->gain2 * x2 + pp->leak * x1 + pp->noise_rms * gauss(&seed);
            if (pp->channels == 2) {
                out[2 * i] = (float)y1;
                out[2 * i + 1] = (float)y2;
            } else {
                out[i] = (float)y1;
            }
        }
        ck_assert_int_eq(ml_cardan_push(a, out, blk), ML_OK);
    }
    const ml_status st = ml_cardan_finish(a, prof, why);
    ml_cardan_destroy(a);
    ml_cardgen_destroy(g);
    return st;
}

START_TEST(schedule)
{
    ml_card_segment s[ML_CARD_MAX_SEGMENTS];
    /* 48 kHz: lead, level, silence, left, right, 31 steps (20 Hz .. 20 kHz < 21.6 kHz), tail */
    ck_assert_uint_eq(ml_card_schedule(48000, s, ML_CARD_MAX_SEGMENTS), 37);
    ck_assert(s[1].kind == ML_CARD_SEG_LEVEL && s[1].freq_hz == 997.0 && s[1].level_dbfs == -1.0);
    ck_assert(s[5].freq_hz == 20.0 && s[35].freq_hz == 20000.0 && s[36].kind == ML_CARD_SEG_TAIL);
    /* 44.1 kHz: 20 kHz is not below 0.45 x rate = 19845 Hz */
    ck_assert_uint_eq(ml_card_schedule(44100, s, ML_CARD_MAX_SEGMENTS), 36);
    ck_assert_double_eq_tol(ml_card_schedule_seconds(48000), 0.5 + 4 + 4 + 2 + 2 + 31 * 0.5 + 0.5, 1e-12);
    ck_assert_uint_eq(ml_card_schedule(1000, s, ML_CARD_MAX_SEGMENTS), 0);
}
END_TEST

START_TEST(bit_exact_path)
{
    /* A bit-exact loopback: flat, no crosstalk, no rate error, the floor at the dither's level */
    const path pp = {.gain2 = 1, .delay = 1234, .channels = 2, .dither_bits = 24};
    ml_card_profile p;
    ml_cardan_why why;
    ck_assert_int_eq(run_path(&pp, 48000, &p, &why), ML_OK);
    ck_assert_int_eq(why, ML_CARDAN_OK);
    ck_assert_double_eq_tol(p.rate_error_ppm, 0.0, 0.01);
    ck_assert_double_eq_tol(p.gain_difference_db, 0.0, 1e-4);
    for (int c = 0; c < 2; c++) {
        /* the -1 dBFS tone reads -1 dBFS (float rounding far below 0.001 dB) */
        ck_assert_double_eq_tol(p.ch[c].level_dbfs, -1.0, 1e-3);
        for (size_t k = 0; k < p.npoints; k++)
            ck_assert_double_eq_tol(p.ch[c].response_db[k], 0.0, 0.001);
        /* dither: LSB = 2^-23, variance LSB^2/6, 20 Hz..20 kHz of 0..24 kHz (white): analytic */
        const double lsb = ldexp(1.0, -23), p_band = lsb * lsb / 6.0 * (19980.0 / 24000.0);
        ck_assert_double_eq_tol(p.ch[c].noise_dbfs, 10 * log10(p_band / 0.5), 0.5);
        /* docs/references.md 1.3: white noise, A-weighted minus unweighted: -2.048 dB */
        ck_assert_double_eq_tol(p.ch[c].noise_a_dbfs - p.ch[c].noise_dbfs, -2.048, 0.3);
        /* docs/references.md 1.3: 468-weighted minus unweighted: +7.263 dB */
        ck_assert_double_eq_tol(p.ch[c].noise_468_dbfs - p.ch[c].noise_dbfs, 7.263, 0.3);
        /* nothing leaks: crosstalk only an upper bound, far down */
        ck_assert(p.ch[c].crosstalk_state == ML_FIG_UPPER && p.ch[c].crosstalk_db < -120);
        ck_assert(isnan(p.ch[c].hum_dbfs));
    }
}
END_TEST

START_TEST(simulated_card)
{
    /* y = x + k x^3: for x = A sin, the 3rd harmonic is k A^3 / 4 and the fundamental A + 3 k A^3 / 4
     * (sin^3 = (3 sin - sin 3) / 4); THD = (k A^3 / 4) / (A + 3 k A^3 / 4) at A = 10^(-1/20). */
    const double k3 = 1e-4, A = pow(10, -1 / 20.0), sigma = 1e-5;
    const path pp = {.gain2 = pow(10, -0.5 / 20),
                     .k3 = k3,
                     .noise_rms = sigma,
                     .leak = 1e-4,
                     .delay = 20000,
                     .channels = 2,
                     .dither_bits = 0};
    ml_card_profile p;
    ml_cardan_why why;
    ck_assert_int_eq(run_path(&pp, 48000, &p, &why), ML_OK);
    const double thd = (k3 * A * A * A / 4) / (A + 3 * k3 * A * A * A / 4);
    ck_assert_double_eq_tol(p.ch[0].thd_db, 20 * log10(thd), 0.2);
    ck_assert_double_eq_tol(p.gain_difference_db, -0.5, 0.01);
    /* white noise sigma^2 over 20 Hz..20 kHz of 24 kHz */
    ck_assert_double_eq_tol(p.ch[0].noise_dbfs, 10 * log10(sigma * sigma * 19980 / 24000 / 0.5), 0.5);
    ck_assert_double_eq_tol(p.ch[1].noise_dbfs, 10 * log10(sigma * sigma * 19980 / 24000 / 0.5), 0.5);
    /* channel 2 holds 1e-4 of channel 1: -80 dB re channel 1, read against channel 1's level */
    ck_assert_double_eq_tol(p.ch[1].crosstalk_db, -80.0, 0.1);
    ck_assert(p.ch[1].crosstalk_state == ML_FIG_MEASURED);
    ck_assert(p.ch[0].crosstalk_state == ML_FIG_UPPER);
}
END_TEST

START_TEST(mono_and_errors)
{
    const path pp = {.channels = 1, .dither_bits = 24, .delay = 100};
    ml_card_profile p;
    ml_cardan_why why;
    ck_assert_int_eq(run_path(&pp, 44100, &p, &why), ML_OK);
    ck_assert(isnan(p.gain_difference_db) && isnan(p.ch[0].crosstalk_db));
    ck_assert_uint_eq(p.npoints, 30);
    /* silence only: no onset */
    ml_cardan_config ac = {.rate_hz = 48000, .channels = 1};
    ml_cardan *a = NULL;
    ck_assert_int_eq(ml_cardan_create(&ac, &a), ML_OK);
    float z[4800] = {0};
    for (int i = 0; i < 10; i++)
        ck_assert_int_eq(ml_cardan_push(a, z, 4800), ML_OK);
    ck_assert_int_eq(ml_cardan_finish(a, &p, &why), ML_ENOSIGNAL);
    ck_assert_int_eq(why, ML_CARDAN_NOT_FOUND);
    ml_cardan_destroy(a);
    /* a loud start */
    ck_assert_int_eq(ml_cardan_create(&ac, &a), ML_OK);
    for (int i = 0; i < 4800; i++)
        z[i] = (float)(0.5 * sin(0.1 * i));
    ck_assert_int_eq(ml_cardan_push(a, z, 4800), ML_OK);
    ck_assert_int_eq(ml_cardan_finish(a, &p, &why), ML_ENOSIGNAL);
    ck_assert_int_eq(why, ML_CARDAN_NO_LEAD);
    z[3] = NAN;
    ck_assert_int_eq(ml_cardan_push(a, z, 4800), ML_EINVAL);
    ml_cardan_destroy(a);
}
END_TEST

START_TEST(reach)
{
    ml_card_profile p;
    memset(&p, 0, sizeof p);
    p.channels = 1;
    p.ch[0] = (ml_card_channel){.thd_db = -100,
                                .thdn_db = -95,
                                .noise_dbfs = -110,
                                .noise_a_dbfs = -112,
                                .noise_468_dbfs = -103,
                                .hum_dbfs = NAN};
    ml_card_dut d = {.fundamental_dbfs = -10,
                     .thd_db = -95,
                     .thdn_db = -50,
                     .snr_db = 95,
                     .snr_a_db = 50,
                     .noise_dbfs = -105,
                     .noise_a_dbfs = -60,
                     .noise_468_dbfs = NAN,
                     .hum_dbfs = -80};
    ml_card_reach r;
    ml_card_reach_of(&p, 0, &d, &r);
    /* THD 5 dB above the card's -100: limited; THD+N far above: not */
    ck_assert(r.thd && !r.thdn);
    /* the card's THD+N at -10 dBFS: -100 dB (+) -110 - (-10) = -100 dB -> 10 lg(2) - 100 */
    ck_assert_double_eq_tol(r.card_thdn_db, -100 + 10 * log10(2.0), 1e-9);
    /* card SNR at -10 dBFS: 100 dB; the dut's 95 is within 10 dB */
    ck_assert(r.snr && !r.snr_a && r.noise && !r.noise_a && !r.noise_468 && !r.hum);
    d.thd_db = -89.9;
    ml_card_reach_of(&p, 3, &d, &r); /* a channel beyond the profile's: channel 1 */
    ck_assert(!r.thd);
}
END_TEST

START_TEST(volts)
{
    /* EBU R68 (docs/references.md 14): 0 dBFS = +18 dBu; a tone at -18 dBFS is 0 dBu = 0.774597 V,
     * -2.2185 dBV;
     * into 600 ohm that is 1 mW (the definition of 0 dBu) */
    ml_level_cal cal = ml_level_cal_default();
    ml_audio_plain_figures f;
    ml_figures_audio_none(&f);
    f.fundamental_dbfs = -18.0;
    f.hum_dbfs = -90;
    f.noise_dbfs = -100;
    ml_noise_figures n;
    ml_bench_noise_none(&n);
    ml_volt_figures v;
    ml_bench_volts(&cal, 600, 0, &f, &n, -20, &v);
    ck_assert_double_eq_tol(v.fundamental_dbu, 0.0, 1e-12);
    ck_assert_double_eq_tol(v.fundamental_vrms, 0.774597, 5e-7);
    ck_assert_double_eq_tol(v.fundamental_dbv, -2.2185, 5e-5);
    ck_assert_double_eq_tol(v.fundamental_w, 1e-3, 1e-9);
    ck_assert_double_eq_tol(v.noise_dbu, -82, 1e-12);
    ck_assert_double_eq_tol(v.rms_dbu, -2, 1e-12);
    ck_assert_double_eq_tol(v.hum_dbu, -72, 1e-12);
    ck_assert(isnan(v.noise_a_dbu));
    /* a correction of +0.5 dB (the card reads 0.5 dB high there) comes off the tone only */
    ml_bench_volts(&cal, 0, 0.5, &f, &n, -20, &v);
    ck_assert_double_eq_tol(v.fundamental_dbu, -0.5, 1e-12);
    ck_assert(isnan(v.fundamental_w));
}
END_TEST

START_TEST(response_interpolation)
{
    ml_card_profile p;
    memset(&p, 0, sizeof p);
    p.channels = 1;
    p.npoints = 3;
    p.response_hz[0] = 100, p.response_hz[1] = 1000, p.response_hz[2] = 10000;
    p.ch[0].response_db[0] = -1, p.ch[0].response_db[1] = 0, p.ch[0].response_db[2] = -3;
    /* linear in lg f: sqrt(10) x 1000 Hz is half way between 1 and 10 kHz */
    ck_assert_double_eq_tol(ml_card_response_at(&p, 0, 1000 * sqrt(10.0)), -1.5, 1e-12);
    ck_assert_double_eq_tol(ml_card_response_at(&p, 0, 100), -1, 1e-12);
    ck_assert(isnan(ml_card_response_at(&p, 0, 50)) && isnan(ml_card_response_at(&p, 1, 500)));
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("dsp_card");
    TCase *t = tcase_create("core");
    tcase_set_timeout(t, 120);
    tcase_add_test(t, schedule);
    tcase_add_test(t, bit_exact_path);
    tcase_add_test(t, simulated_card);
    tcase_add_test(t, mono_and_errors);
    tcase_add_test(t, reach);
    tcase_add_test(t, volts);
    tcase_add_test(t, response_interpolation);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    return ml_check_run(suite());
}
