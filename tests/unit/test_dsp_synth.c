/* Unit tests for dsp/synth: level rule, harmonics, AM spectra and envelopes, over-modulation,
 * hum, noise statistics, steps, lead-in, determinism, block invariance and reset.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [AES17] AES17-2015 3.12.1: a full-scale sine reads 0 dBFS (docs/references.md section 5, row
 *     "0 dBFS definition").
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., sec. 3.1: side-frequency amplitude
 *     mu A_c / 2 and total power P_c (1 + mu^2 / 2) (docs/references.md section 6, "confirmed").
 * [lntwww:2.7] LNTwww (TU Muenchen), Exercise 2.7 "Is the Modulation Depth Too High?": envelope
 *     |4 + 5 cos| (mu = 1.25): K2 = 0.102, K3 = 0.082 (docs/references.md 6.1, "confirmed").
 *
 * Tolerance conventions used below. Samples are floats: each holds its double value to within
 * 2^-24 relative (6e-8 for |x| <= 1). A DFT amplitude (2/N)|sum x e^-jwn| of the rounding error is
 * at most 2 * 6e-8 = 1.2e-7, so 1e-6 on amplitudes (and 1e-6 on per-sample values of magnitude
 * <= 2.2) leaves a margin of about 8.
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/synth.h"

#define PI 3.14159265358979323846
#define RATE 48000.0
#define N1S 48000 /* one second: a whole number of periods of every tone used below */
#define AMP_TOL 1e-6

static float *gen(const ml_synth_config *c, size_t nframes)
{
    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(c, &q), ML_OK);
    float *x = malloc(nframes * ml_synth_channels(q) * sizeof *x);
    ck_assert_ptr_nonnull(x);
    ck_assert_int_eq(ml_synth_generate(q, x, nframes), ML_OK);
    ml_synth_destroy(q);
    return x;
}

/* sum_n z[n] e^{-j 2 pi k n / n_total} over n = 0..n-1 where z = re[n*stride] + j im[n*stride]
 * (im may be NULL). k*n is reduced modulo n exactly in integers, so the twiddles are exact to
 * double rounding. */
static double complex dft(const float *re, const float *im, size_t stride, size_t n, long k)
{
    double complex s = 0;
    const long long nn = (long long)n;
    long long kk = ((long long)k % nn + nn) % nn;
    for (size_t i = 0; i < n; i++) {
        const double a = -2.0 * PI * (double)((kk * (long long)i) % nn) / (double)n;
        const double complex z = re[i * stride] + I * (im ? im[i * stride] : 0.0f);
        s += z * cexp(I * a);
    }
    return s;
}

/* Amplitude of a real sine at bin k (whole periods): 2 |X_k| / N. */
static double amp_real(const float *x, size_t stride, size_t n, long k)
{
    return 2.0 * cabs(dft(x, NULL, stride, n, k)) / (double)n;
}

static double db_amp(double db)
{
    return pow(10.0, db / 20.0);
}

static ml_synth_config am_config(double fc, double m, bool iq)
{
    ml_synth_config c = ml_synth_config_default(RATE);
    c.kind = ML_SYNTH_AM;
    c.carrier_hz = fc;
    c.mod_freq_hz = 1000;
    c.depth_pos = m;
    c.depth_neg = m;
    c.iq = iq;
    c.level_dbfs = -6;
    return c;
}

/* ---- configuration ---------------------------------------------------------------------------- */

START_TEST(config_rejection)
{
    ml_synth *q = (ml_synth *)&q; /* any non-NULL value: create must set it to NULL */
    ck_assert_int_eq(ml_synth_create(NULL, &q), ML_EINVAL);
    ck_assert_ptr_null(q);

    ml_synth_config bad[32];
    size_t nb = 0;
    const ml_synth_config sine = ml_synth_config_default(RATE);
    const ml_synth_config am = am_config(12000, 0.5, false);
    bad[nb] = sine, bad[nb++].rate_hz = 0;
    bad[nb] = sine, bad[nb++].rate_hz = NAN;
    bad[nb] = sine, bad[nb++].freq_hz = RATE / 2;          /* at Nyquist */
    bad[nb] = sine, bad[nb++].freq_hz = 0;
    bad[nb] = sine, bad[nb++].level_dbfs = NAN;
    bad[nb] = sine, bad[nb++].level_dbfs = 41;
    bad[nb] = sine, bad[nb].nharmonics = 1, bad[nb++].harmonics[0] = (ml_synth_harmonic){1, -40};
    bad[nb] = sine, bad[nb].nharmonics = 1,
    bad[nb++].harmonics[0] = (ml_synth_harmonic){24, -40}; /* 24 kHz = Nyquist */
    bad[nb] = sine, bad[nb].nharmonics = 2, bad[nb].harmonics[0] = (ml_synth_harmonic){3, -40},
    bad[nb++].harmonics[1] = (ml_synth_harmonic){3, -50}; /* duplicate order */
    bad[nb] = sine, bad[nb++].kind = ML_SYNTH_KIND_COUNT;
    bad[nb] = sine, bad[nb++].iq = true;                   /* I/Q only for AM */
    bad[nb] = sine, bad[nb++].cnr_db = 30;                 /* CNR only for AM */
    bad[nb] = sine, bad[nb].hum_hz = 50, bad[nb++].hum_depth_db = -40; /* hum depth only for AM */
    bad[nb] = sine, bad[nb++].hum_level_dbfs = -60;        /* a hum level without hum_hz */
    bad[nb] = sine, bad[nb++].noise_dbfs = INFINITY;
    bad[nb] = sine, bad[nb].kind = ML_SYNTH_TWO_TONE, bad[nb].freq2_hz = 1000; /* same as freq_hz */
    nb++;
    bad[nb] = sine, bad[nb++].kind = ML_SYNTH_STEPS;       /* no steps */
    bad[nb] = sine, bad[nb].kind = ML_SYNTH_STEPS, bad[nb].nsteps = 1,
    bad[nb++].steps[0] = (ml_synth_step){1000, -6, 1e-6};  /* rounds to 0 frames */
    bad[nb] = am, bad[nb++].carrier_hz = 500;              /* lower sideband at -500 Hz */
    bad[nb] = am, bad[nb++].carrier_hz = 23500;            /* upper sideband above Nyquist */
    bad[nb] = am, bad[nb++].depth_neg = -0.1;
    bad[nb] = am, bad[nb++].overmod = ML_OVERMOD_COUNT;
    bad[nb] = am, bad[nb].noise_dbfs = -60, bad[nb++].cnr_db = 40; /* both noise settings */
    bad[nb] = am, bad[nb].iq = true, bad[nb++].carrier_hz = -23500;
    bad[nb] = am, bad[nb++].lead_in_s = -1;
    for (size_t i = 0; i < nb; i++) {
        q = (ml_synth *)&q;
        ck_assert_msg(ml_synth_create(&bad[i], &q) == ML_EINVAL, "bad config %zu accepted", i);
        ck_assert_ptr_null(q);
    }
    /* NULL arguments of the other functions */
    float x[4];
    ck_assert_int_eq(ml_synth_generate(NULL, x, 1), ML_EINVAL);
    ck_assert_int_eq(ml_synth_create(&sine, &q), ML_OK);
    ck_assert_int_eq(ml_synth_generate(q, NULL, 1), ML_EINVAL);
    ck_assert_int_eq(ml_synth_generate(q, NULL, 0), ML_OK);
    ml_synth_destroy(q);
    ml_synth_destroy(NULL);
    ml_synth_reset(NULL);
}
END_TEST

/* ---- tones ------------------------------------------------------------------------------------ */

START_TEST(level_rule_rms_of_minus_6_dbfs_sine)
{
    /* [AES17]: L dBFS sine has amplitude 10^(L/20) and r.m.s. 10^(L/20)/sqrt(2): for -6 dBFS
     * 0.501187 and 0.354390. 1000 whole periods, so the mean square is exact; 1e-7 covers the
     * float storage (relative 6e-8 per sample). */
    ml_synth_config c = ml_synth_config_default(RATE);
    c.level_dbfs = -6;
    float *x = gen(&c, N1S);
    double ss = 0, peak = 0;
    for (size_t i = 0; i < N1S; i++) {
        ss += (double)x[i] * x[i];
        peak = fmax(peak, fabs(x[i]));
    }
    ck_assert_double_eq_tol(sqrt(ss / N1S), db_amp(-6) / sqrt(2.0), 1e-7);
    ck_assert_double_eq_tol(peak, db_amp(-6), 1e-7); /* 1 kHz at 48 kHz samples the crest at n = 12 */
    ck_assert_float_eq(x[0], 0.0f);                   /* zero phase at frame 0 */
    free(x);

    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    ck_assert_double_eq_tol(ml_synth_peak(q), db_amp(-6), 1e-15);
    ck_assert_uint_eq(ml_synth_channels(q), 1);
    ck_assert_double_eq(ml_synth_noise_sigma(q), 0);
    ml_synth_destroy(q);
}
END_TEST

START_TEST(harmonic_levels_by_dft)
{
    /* Harmonic k at c dBc has amplitude A 10^(c/20) and is a zero-phase sine, whose DFT at its bin
     * is -j A N / 2 (imaginary, negative). Expected amplitudes: 0.501187 * {1, 10^(-52/20),
     * 10^(-40/20), 10^(-60/20)}. Tolerance AMP_TOL (header). */
    ml_synth_config c = ml_synth_config_default(RATE);
    c.level_dbfs = -6;
    c.nharmonics = 3;
    c.harmonics[0] = (ml_synth_harmonic){2, -52};
    c.harmonics[1] = (ml_synth_harmonic){3, -40};
    c.harmonics[2] = (ml_synth_harmonic){5, -60};
    float *x = gen(&c, N1S);
    const double a = db_amp(-6);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 1000), a, AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 2000), a * db_amp(-52), AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 3000), a * db_amp(-40), AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 5000), a * db_amp(-60), AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 4000), 0.0, AMP_TOL); /* not asked for */
    const double complex x3 = dft(x, NULL, 1, N1S, 3000) * 2.0 / N1S;
    ck_assert_double_eq_tol(creal(x3), 0.0, AMP_TOL);
    ck_assert_double_eq_tol(cimag(x3), -a * db_amp(-40), AMP_TOL);
    /* 3:-40 dBc is 1 % third harmonic: 20 log10(0.01) = -40. */
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 3000) / amp_real(x, 1, N1S, 1000), 0.01, 1e-5);
    free(x);

    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    /* peak bound = A (1 + sum of harmonic amplitudes) (dsp/synth.h) */
    ck_assert_double_eq_tol(ml_synth_peak(q), a * (1 + db_amp(-52) + db_amp(-40) + db_amp(-60)), 1e-15);
    ml_synth_destroy(q);
}
END_TEST

START_TEST(two_tone_levels)
{
    /* Two zero-phase sines of amplitudes 10^(-12/20) and 10^(-18/20) at 7 and 9 kHz (whole
     * periods in one second); peak bound = sum of the two. AMP_TOL (header). */
    ml_synth_config c = ml_synth_config_default(RATE);
    c.kind = ML_SYNTH_TWO_TONE;
    c.freq_hz = 7000;
    c.freq2_hz = 9000;
    c.level_dbfs = -12;
    c.level2_dbfs = -18;
    float *x = gen(&c, N1S);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 7000), db_amp(-12), AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 9000), db_amp(-18), AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 2000), 0, AMP_TOL);
    free(x);
}
END_TEST

/* ---- AM --------------------------------------------------------------------------------------- */

START_TEST(am_side_frequencies_are_m_over_2)
{
    /* [haykin:2001]: A (1 + m sin wm t) cos wc t has the carrier A at fc and m A / 2 at fc +- fm.
     * m = 0.8, A = 10^(-6/20): 0.501187 and 0.200475. Nothing at fc +- 2 fm. AMP_TOL (header). */
    const ml_synth_config c = am_config(12000, 0.8, false);
    float *x = gen(&c, N1S);
    const double a = db_amp(-6);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 12000), a, AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 11000), 0.8 * a / 2, AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 13000), 0.8 * a / 2, AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 10000), 0, AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 14000), 0, AMP_TOL);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 1000), 0, AMP_TOL); /* no audio leaks into the IF */
    free(x);
}
END_TEST

START_TEST(am_total_power)
{
    /* [haykin:2001]: P_t = P_c (1 + m^2 / 2), P_c = A^2 / 2 for a real IF; m = 0.8 gives
     * 1.32 P_c. One second holds whole periods of every component, so the mean square is exact;
     * 1e-6 relative covers the float samples (6e-8 relative each, squared: 1.2e-7). */
    const ml_synth_config c = am_config(12000, 0.8, false);
    float *x = gen(&c, N1S);
    double ss = 0;
    for (size_t i = 0; i < N1S; i++)
        ss += (double)x[i] * x[i];
    const double pc = db_amp(-6) * db_amp(-6) / 2;
    ck_assert_double_eq_tol(ss / N1S / (pc * (1 + 0.8 * 0.8 / 2)), 1.0, 1e-6);
    free(x);
}
END_TEST

START_TEST(am_iq_envelope_and_sign_of_carrier)
{
    /* I + jQ = A (1 + m sin(2 pi fm n / rate)) e^{j 2 pi fc n / rate} (dsp/synth.h), checked per
     * frame; with fc = -3 kHz the complex spectrum has the carrier at -3 kHz (A) and side
     * frequencies at -2 and -4 kHz (m A / 2, [haykin:2001]), nothing at +3 kHz. The I channel
     * equals the real IF signal of the same carrier. AMP_TOL / 1e-6 per sample (header). */
    ml_synth_config c = am_config(-3000, 0.8, true);
    float *z = gen(&c, N1S);
    const double a = db_amp(-6);
    for (size_t i = 0; i < N1S; i++) {
        const double env = a * (1 + 0.8 * sin(2 * PI * (double)(i % 48) / 48.0));
        ck_assert_double_eq_tol(hypot(z[2 * i], z[2 * i + 1]), env, 1e-6);
    }
    const double complex cz = dft(z, z + 1, 2, N1S, -3000) / N1S;
    ck_assert_double_eq_tol(cabs(cz), a, AMP_TOL);
    ck_assert_double_eq_tol(cabs(dft(z, z + 1, 2, N1S, -2000)) / N1S, 0.8 * a / 2, AMP_TOL);
    ck_assert_double_eq_tol(cabs(dft(z, z + 1, 2, N1S, -4000)) / N1S, 0.8 * a / 2, AMP_TOL);
    ck_assert_double_eq_tol(cabs(dft(z, z + 1, 2, N1S, 3000)) / N1S, 0, AMP_TOL);
    free(z);

    c = am_config(12000, 0.8, true);
    z = gen(&c, N1S);
    const ml_synth_config r = am_config(12000, 0.8, false);
    float *x = gen(&r, N1S);
    for (size_t i = 0; i < N1S; i++)
        ck_assert_float_eq(z[2 * i], x[i]); /* same double expression, same rounding */
    free(z);
    free(x);
}
END_TEST

START_TEST(overmod_pinch_off_envelope)
{
    /* m = 1.5, pinch-off: |I + jQ| = A max(0, 1 + 1.5 sin th) per frame (docs/references.md 6.1, model
     * B). The envelope is exactly 0 (carrier cut off) where sin th < -2/3, a fraction
     * (pi - 2 asin(2/3)) / (2 pi) = 0.2677 of the time; with th = 2 pi i / 48 that is i = 30..42,
     * 13 of 48 frames (0.2708, within one frame, 1/48, of the continuous value). The count of
     * exact zeros must equal the count of frames with e < 0. 1e-6 per sample (header). */
    ml_synth_config c = am_config(3000, 1.5, true);
    float *z = gen(&c, N1S);
    const double a = db_amp(-6);
    size_t zeros = 0, want_zeros = 0;
    for (size_t i = 0; i < N1S; i++) {
        const double e = 1 + 1.5 * sin(2 * PI * (double)(i % 48) / 48.0);
        ck_assert_double_eq_tol(hypot(z[2 * i], z[2 * i + 1]), a * fmax(0, e), 1e-6);
        want_zeros += e < 0;
        zeros += z[2 * i] == 0 && z[2 * i + 1] == 0;
    }
    ck_assert_uint_eq(zeros, want_zeros);
    ck_assert_double_eq_tol((double)zeros / N1S, (PI - 2 * asin(2.0 / 3)) / (2 * PI), 1.0 / 48);
    free(z);
}
END_TEST

START_TEST(overmod_phase_reversal)
{
    /* m = 1.5, reversal: (I + jQ) e^{-j 2 pi fc n / rate} = A (1 + 1.5 sin th), a real, signed
     * envelope: negative (carrier phase flipped by 180 degrees) where 1 + 1.5 sin th < 0
     * (docs/references.md 6.1, model A). 1e-6 per sample (header). */
    ml_synth_config c = am_config(3000, 1.5, true);
    c.overmod = ML_OVERMOD_REVERSE;
    float *z = gen(&c, N1S);
    const double a = db_amp(-6);
    size_t negative = 0;
    for (size_t i = 0; i < N1S; i++) {
        const double e = 1 + 1.5 * sin(2 * PI * (double)(i % 48) / 48.0);
        const double complex base =
            (z[2 * i] + I * z[2 * i + 1]) * cexp(-I * 2 * PI * (double)((3000 * i) % N1S) / N1S);
        ck_assert_double_eq_tol(creal(base), a * e, 1e-6);
        ck_assert_double_eq_tol(cimag(base), 0, 1e-6);
        negative += creal(base) < 0;
    }
    ck_assert_uint_gt(negative, 0);
    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    ck_assert_double_eq_tol(ml_synth_envelope_peak(q), 2.5, 1e-15); /* max(|1 + 1.5|, |1 - 1.5|) */
    ml_synth_destroy(q);
    free(z);
}
END_TEST

START_TEST(overmod_reversal_matches_published_distortion)
{
    /* [lntwww:2.7]: ideal envelope |1 + 1.25 cos| (= |4 + 5 cos| / 4) has K2 = H2/H1 = 0.102 and
     * K3 = 0.082 (published to 3 decimals; exact values 0.1023 and 0.0819, docs/references.md 6.1).
     * fc = 0 in I/Q gives |I + jQ| = A |e| directly; sine instead of cosine only shifts phases.
     * rate 192 kHz puts 192 samples in a period, so harmonics that fold back onto 2 and 3 kHz are
     * above the 189th, below 1e-5 of H1 for an envelope with a kink (amplitudes fall as 1/k^2).
     * Tolerance 0.001: the rounding of the published 3-decimal values (0.0005) plus margin. */
    ml_synth_config c = am_config(0, 1.25, true);
    c.rate_hz = 192000;
    c.overmod = ML_OVERMOD_REVERSE;
    const size_t n = 192000;
    float *z = gen(&c, n);
    float *env = malloc(n * sizeof *env);
    ck_assert_ptr_nonnull(env);
    for (size_t i = 0; i < n; i++)
        env[i] = (float)hypot(z[2 * i], z[2 * i + 1]);
    const double h1 = amp_real(env, 1, n, 1000);
    ck_assert_double_eq_tol(amp_real(env, 1, n, 2000) / h1, 0.102, 0.001);
    ck_assert_double_eq_tol(amp_real(env, 1, n, 3000) / h1, 0.082, 0.001);
    free(env);
    free(z);
}
END_TEST

START_TEST(asymmetric_peaks)
{
    /* depth_pos = 1.2, depth_neg = 0.9 (+120 % / -90 %): the envelope A (1 + d x) peaks at
     * 2.2 A where sin th = 1 (frame 12 of each 48-frame period) and dips to 0.1 A where
     * sin th = -1 (frame 36). With pinch-off nothing is cut (e >= 0.1). 1e-6 (header). */
    ml_synth_config c = am_config(3000, 1.2, true);
    c.depth_neg = 0.9;
    float *z = gen(&c, 4800);
    const double a = db_amp(-6);
    double mx = 0, mn = INFINITY;
    for (size_t i = 0; i < 4800; i++) {
        const double e = hypot(z[2 * i], z[2 * i + 1]);
        mx = fmax(mx, e);
        mn = fmin(mn, e);
    }
    ck_assert_double_eq_tol(mx, 2.2 * a, 1e-6);
    ck_assert_double_eq_tol(mn, 0.1 * a, 1e-6);
    ck_assert_double_eq_tol(hypot(z[24], z[25]), 2.2 * a, 1e-6);
    ck_assert_double_eq_tol(hypot(z[72], z[73]), 0.1 * a, 1e-6);
    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    ck_assert_double_eq_tol(ml_synth_peak(q), 2.2 * a, 1e-15);
    ml_synth_destroy(q);
    free(z);
}
END_TEST

START_TEST(lead_in_is_unmodulated)
{
    /* lead_in 10 ms = 480 frames of |I + jQ| = A; the tone then starts at zero phase, so frame
     * 480 + 12 is the first crest, A (1 + m). 1e-6 (header). */
    ml_synth_config c = am_config(3000, 0.8, true);
    c.lead_in_s = 0.01;
    float *z = gen(&c, 960);
    const double a = db_amp(-6);
    for (size_t i = 0; i < 480; i++)
        ck_assert_double_eq_tol(hypot(z[2 * i], z[2 * i + 1]), a, 1e-6);
    ck_assert_double_eq_tol(hypot(z[2 * 492], z[2 * 492 + 1]), 1.8 * a, 1e-6);
    ck_assert_double_eq_tol(hypot(z[2 * 516], z[2 * 516 + 1]), 0.2 * a, 1e-6);
    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    ck_assert_uint_eq(ml_synth_lead_in_frames(q), 480);
    ml_synth_destroy(q);
    free(z);
}
END_TEST

/* ---- hum -------------------------------------------------------------------------------------- */

START_TEST(hum_additive_and_envelope)
{
    /* Additive hum: 50 Hz at -70 dBFS and its 2nd harmonic at -6 dBc, i.e. amplitudes
     * 10^(-70/20) = 3.162e-4 and 10^(-76/20) = 1.585e-4 (dsp/synth.h). The tolerance is scaled
     * to these small values: float rounding of samples <= 5e-4 is below 3e-11, so 1e-9. */
    ml_synth_config c = ml_synth_config_default(RATE);
    c.kind = ML_SYNTH_SILENCE;
    c.hum_hz = 50;
    c.hum_level_dbfs = -70;
    c.nhum_harmonics = 1;
    c.hum_harmonics[0] = (ml_synth_harmonic){2, -6};
    float *x = gen(&c, N1S);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 50), db_amp(-70), 1e-9);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 100), db_amp(-76), 1e-9);
    ck_assert_double_eq_tol(amp_real(x, 1, N1S, 150), 0, 1e-9);
    free(x);

    /* Envelope hum: depth -40 dB re 100 % = 1 % hum modulation, no tone (m = 0):
     * |I + jQ| = A (1 + 0.01 sin(2 pi 50 n / rate)). 1e-6 (header). */
    ml_synth_config d = am_config(0, 0, true);
    d.hum_hz = 50;
    d.hum_depth_db = -40;
    float *z = gen(&d, 960);
    const double a = db_amp(-6);
    for (size_t i = 0; i < 960; i++)
        ck_assert_double_eq_tol(hypot(z[2 * i], z[2 * i + 1]), a * (1 + 0.01 * sin(2 * PI * 50 * i / RATE)),
                                1e-6);
    free(z);
}
END_TEST

/* ---- noise ------------------------------------------------------------------------------------ */

#define NNOISE (1u << 20)

START_TEST(noise_level_and_distribution)
{
    /* -40 dBFS noise: sigma = 10^(-40/20) / sqrt(2) = 7.0711e-3 (AES17 level rule, dsp/synth.h).
     * Over N = 2^20 Gaussian samples the sample variance has relative standard deviation
     * sqrt(2/N) = 1.4e-3, so 1 % is 7 standard deviations; the mean has standard deviation
     * sigma / sqrt(N) = 6.9e-6 (tolerance 5e-5, 7 sd); the fraction within +-sigma is
     * erf(1/sqrt(2)) = 0.682689 with binomial sd sqrt(p(1-p)/N) = 4.5e-4 (tolerance 3e-3). */
    ml_synth_config c = ml_synth_config_default(RATE);
    c.kind = ML_SYNTH_SILENCE;
    c.noise_dbfs = -40;
    c.seed = 12345;
    float *x = gen(&c, NNOISE);
    const double sigma = db_amp(-40) / sqrt(2.0);
    double s = 0, ss = 0;
    size_t inside = 0;
    for (size_t i = 0; i < NNOISE; i++) {
        s += x[i];
        ss += (double)x[i] * x[i];
        inside += fabs(x[i]) < sigma;
    }
    ck_assert_double_eq_tol(s / NNOISE, 0, 5e-5);
    ck_assert_double_eq_tol(ss / NNOISE / (sigma * sigma), 1.0, 0.01);
    ck_assert_double_eq_tol((double)inside / NNOISE, erf(1 / sqrt(2.0)), 3e-3);
    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    ck_assert_double_eq_tol(ml_synth_noise_sigma(q), sigma, 1e-15);
    ml_synth_destroy(q);
    free(x);
}
END_TEST

START_TEST(cnr_sets_noise_power)
{
    /* CNR 30 dB (dsp/synth.h): real IF noise power = (A^2/2) / 10^3; I/Q: each channel the same
     * sigma^2, so complex noise power 2 sigma^2 = A^2 / 10^3. The noise is the difference from the
     * same signal without noise. Statistics as in noise_level_and_distribution: 1 % is over 7
     * standard deviations of a 2^20-sample variance. I and Q noise are independent: their
     * correlation coefficient has sd 1/sqrt(N) = 1e-3 (tolerance 7e-3). */
    const double a = db_amp(-6);
    for (int iq = 0; iq < 2; iq++) {
        ml_synth_config c = am_config(iq ? 3000 : 12000, 0.8, iq);
        ml_synth_config c0 = c;
        c.cnr_db = 30;
        float *x = gen(&c, NNOISE), *x0 = gen(&c0, NNOISE);
        const size_t nch = iq ? 2 : 1;
        double p[2] = {0, 0}, pq = 0;
        for (size_t i = 0; i < NNOISE; i++) {
            double d[2];
            for (size_t k = 0; k < nch; k++) {
                d[k] = (double)x[i * nch + k] - x0[i * nch + k];
                p[k] += d[k] * d[k];
            }
            if (iq)
                pq += d[0] * d[1];
        }
        const double sigma2 = a * a / 2 / 1000;
        ck_assert_double_eq_tol(p[0] / NNOISE / sigma2, 1.0, 0.01);
        if (iq) {
            ck_assert_double_eq_tol(p[1] / NNOISE / sigma2, 1.0, 0.01);
            ck_assert_double_eq_tol(pq / sqrt(p[0] * p[1]), 0.0, 7e-3);
        }
        free(x);
        free(x0);
    }
}
END_TEST

/* ---- steps ------------------------------------------------------------------------------------ */

START_TEST(steps_levels_boundaries_and_continuity)
{
    /* Steps 1 kHz -6 dBFS 0.5 s, pause 0.25 s, 2 kHz -20 dBFS 0.5 s: boundaries at frames 24000,
     * 36000, 60000 (round(rate * running sum)). Each tone segment holds whole periods, so the DFT
     * amplitude is exact (AMP_TOL, header). */
    ml_synth_config c = ml_synth_config_default(RATE);
    c.kind = ML_SYNTH_STEPS;
    c.nsteps = 3;
    c.steps[0] = (ml_synth_step){1000, -6, 0.5};
    c.steps[1] = (ml_synth_step){0, -6, 0.25};
    c.steps[2] = (ml_synth_step){2000, -20, 0.5};
    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    ck_assert_uint_eq(ml_synth_cycle_frames(q), 60000);
    ml_synth_destroy(q);
    float *x = gen(&c, 60000);
    ck_assert_double_eq_tol(amp_real(x, 1, 24000, 500), db_amp(-6), AMP_TOL);    /* 1 kHz = bin 500 */
    for (size_t i = 24000; i < 36000; i++)
        ck_assert_float_eq(x[i], 0.0f);
    ck_assert_double_eq_tol(amp_real(x + 36000, 1, 24000, 1000), db_amp(-20), AMP_TOL); /* 2 kHz */
    free(x);

    /* Phase continuity: 1 kHz for 10.5 periods (504 frames), then 1.5 kHz. |sin(a + d) - sin a|
     * <= |d|, so no frame-to-frame change exceeds A * 2 pi * 1500 / 48000 = 0.19635 A; a phase
     * jump at the boundary would break this. Two passes check the repeat, too; 1e-6 (header). */
    c.nsteps = 2;
    c.steps[0] = (ml_synth_step){1000, 0, 0.0105};
    c.steps[1] = (ml_synth_step){1500, 0, 0.0105};
    x = gen(&c, 2016);
    for (size_t i = 1; i < 2016; i++)
        ck_assert_double_le(fabs((double)x[i] - x[i - 1]), 2 * PI * 1500 / RATE + 1e-6);
    free(x);
}
END_TEST

/* ---- determinism, blocks, reset --------------------------------------------------------------- */

/* Configurations that exercise every code path with state: steps, AM with lead-in, hum, noise. */
static ml_synth_config state_config(int which)
{
    ml_synth_config c = ml_synth_config_default(RATE);
    c.noise_dbfs = -50;
    switch (which) {
    case 0:
        c.nharmonics = 1;
        c.harmonics[0] = (ml_synth_harmonic){3, -40};
        c.hum_hz = 60;
        c.hum_level_dbfs = -60;
        break;
    case 1:
        c.kind = ML_SYNTH_STEPS;
        c.nsteps = 3;
        c.steps[0] = (ml_synth_step){997, -6, 0.013};
        c.steps[1] = (ml_synth_step){0, -6, 0.007};
        c.steps[2] = (ml_synth_step){3001, -12, 0.011};
        break;
    default:
        c = am_config(-5000, 0.9, true);
        c.depth_pos = 1.2;
        c.lead_in_s = 0.05;
        c.cnr_db = 40;
        c.hum_hz = 100;
        c.hum_depth_db = -45;
        c.hum_level_dbfs = -70;
        break;
    }
    return c;
}

#define NSTATE 20000

START_TEST(seed_determinism)
{
    /* The same seed gives bit-identical output; another seed gives other noise. */
    ml_synth_config c = state_config(_i);
    float *a = gen(&c, NSTATE), *b = gen(&c, NSTATE);
    const size_t bytes = NSTATE * (c.iq ? 2 : 1) * sizeof(float);
    ck_assert_int_eq(memcmp(a, b, bytes), 0);
    c.seed = 2;
    float *d = gen(&c, NSTATE);
    ck_assert_int_ne(memcmp(a, d, bytes), 0);
    free(a);
    free(b);
    free(d);
}
END_TEST

START_TEST(block_invariance)
{
    /* Blocks of 1, 7 and 4096 frames give the same bits as one call (STYLE.md section 6). */
    const ml_synth_config c = state_config(_i);
    float *ref = gen(&c, NSTATE);
    const size_t nch = c.iq ? 2 : 1;
    float *x = malloc(NSTATE * nch * sizeof *x);
    ck_assert_ptr_nonnull(x);
    const size_t blocks[] = {1, 7, 4096};
    for (size_t b = 0; b < 3; b++) {
        ml_synth *q = NULL;
        ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
        for (size_t done = 0; done < NSTATE;) {
            const size_t n = NSTATE - done < blocks[b] ? NSTATE - done : blocks[b];
            ck_assert_int_eq(ml_synth_generate(q, x + done * nch, n), ML_OK);
            done += n;
        }
        ck_assert_uint_eq(ml_synth_position(q), NSTATE);
        ml_synth_destroy(q);
        ck_assert_msg(memcmp(x, ref, NSTATE * nch * sizeof *x) == 0, "block %zu differs", blocks[b]);
    }
    free(x);
    free(ref);
}
END_TEST

START_TEST(reset_restarts)
{
    /* After reset the generator repeats its output from frame 0, noise included. */
    const ml_synth_config c = state_config(_i);
    const size_t nch = c.iq ? 2 : 1;
    float *a = malloc(NSTATE * nch * sizeof *a), *b = malloc(NSTATE * nch * sizeof *b);
    ck_assert(a != NULL && b != NULL);
    ml_synth *q = NULL;
    ck_assert_int_eq(ml_synth_create(&c, &q), ML_OK);
    ck_assert_int_eq(ml_synth_generate(q, a, NSTATE), ML_OK);
    ml_synth_reset(q);
    ck_assert_uint_eq(ml_synth_position(q), 0);
    ck_assert_int_eq(ml_synth_generate(q, b, NSTATE), ML_OK);
    ck_assert_int_eq(memcmp(a, b, NSTATE * nch * sizeof *a), 0);
    ml_synth_destroy(q);
    free(a);
    free(b);
}
END_TEST

static Suite *synth_suite(void)
{
    Suite *s = suite_create("dsp_synth");
    TCase *tc = tcase_create("synth");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, config_rejection);
    tcase_add_test(tc, level_rule_rms_of_minus_6_dbfs_sine);
    tcase_add_test(tc, harmonic_levels_by_dft);
    tcase_add_test(tc, two_tone_levels);
    tcase_add_test(tc, am_side_frequencies_are_m_over_2);
    tcase_add_test(tc, am_total_power);
    tcase_add_test(tc, am_iq_envelope_and_sign_of_carrier);
    tcase_add_test(tc, overmod_pinch_off_envelope);
    tcase_add_test(tc, overmod_phase_reversal);
    tcase_add_test(tc, overmod_reversal_matches_published_distortion);
    tcase_add_test(tc, asymmetric_peaks);
    tcase_add_test(tc, lead_in_is_unmodulated);
    tcase_add_test(tc, hum_additive_and_envelope);
    tcase_add_test(tc, noise_level_and_distribution);
    tcase_add_test(tc, cnr_sets_noise_power);
    tcase_add_test(tc, steps_levels_boundaries_and_continuity);
    tcase_add_loop_test(tc, seed_determinism, 0, 3);
    tcase_add_loop_test(tc, block_invariance, 0, 3);
    tcase_add_loop_test(tc, reset_restarts, 0, 3);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(synth_suite());
}
