/* Unit tests for dsp/kind: I/Q pair evidence and AM IF evidence on one channel.
 * SPDX-License-Identifier: MIT
 *
 * Signals are synthesised here (fixed seeds) as numpy would: tones, AM carriers, quadrature
 * pairs, white Gaussian noise. Truths are analytic:
 *  - image rejection of a quadrature pair with gain ratio g and phase error phi (I = g A cos wt,
 *    Q = A sin(wt + phi)): the line at +f over its image at -f is
 *    (1 + g^2 + 2 g cos phi) / (1 + g^2 - 2 g cos phi) (expand both into e^{+-jwt});
 *  - AM with index m: each sideband (m/2)^2 of the carrier's power, 20 lg(m/2) dBc
 *    (docs/references.md 6): -12.04 dBc at m = 0.5, -46.02 dBc at m = 0.01;
 *  - the principal fraction of x = s + n1, y = g s + n2 (powers S, N, N) from the eigenvalues of
 *    the 2x2 covariance [[S + N, g S], [g S, g^2 S + N]];
 *  - a line cos(w t) on x and its copy g cos(w (t - tau)) on y (phase phi = w tau): z = x + j y
 *    holds (1 + j g e^{-j phi}) / 2 at +f and (1 + j g e^{+j phi}) / 2 at -f, so the line at +f
 *    over the one at -f is (1 + g^2 + 2 g sin phi) / (1 + g^2 - 2 g sin phi) (image_ratio below);
 *  - a sum of sines through y = x + c x^3 (expand sin^3 = (3 sin - sin 3)/4): tone a next to tone
 *    b comes out at a + c (3/4 a^3 + 3/2 a b^2).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/kind.h"
#include "dsp/spectrum.h"
#include "testsig.h"

#define FS 48000.0
#define N3 (3 * 48000)

static float *stereo(size_t n)
{
    float *x = calloc(2 * n, sizeof *x);
    ck_assert_ptr_nonnull(x);
    return x;
}

static ml_pair_result pair_of(const float *x, size_t n, size_t block)
{
    ml_pair_config c = ml_pair_config_default(FS);
    ml_pair *q = NULL;
    ck_assert_int_eq(ml_pair_create(&c, &q), ML_OK);
    for (size_t i = 0; i < n; i += block)
        ck_assert_int_eq(ml_pair_push(q, x + 2 * i, n - i < block ? n - i : block, 2, 0, 1), ML_OK);
    ml_pair_result r;
    ck_assert_int_eq(ml_pair_get(q, &r), ML_OK);
    char buf[300];
    ck_assert_uint_gt(strlen(ml_pair_reason(&r, buf, sizeof buf)), 10);
    ml_pair_destroy(q);
    return r;
}

/* A 1 kHz tone with 50 Hz hum and noise: "audio". */
static double audio(size_t i, ts_rng *g)
{
    const double t = (double)i / FS;
    return 0.3 * sin(2 * TS_PI * 1000.0 * t) + 0.003 * sin(2 * TS_PI * 50.0 * t) + 1e-3 * ts_gauss(g);
}

START_TEST(pair_copies_are_not_iq)
{
    /* identical; near-identical (gain 0.8, independent noise 3e-3 on each); polarity inverted; a
     * real AM IF saved as stereo: one signal on both channels, never I/Q. */
    float *x = stereo(N3);
    ts_rng g = {1}, h = {2};
    for (int c = 0; c < 4; c++) {
        for (size_t i = 0; i < N3; i++) {
            const double t = (double)i / FS;
            double a = audio(i, &g), b = a;
            if (c == 1) {
                b = 0.8 * a + 3e-3 * ts_gauss(&h);
                a += 3e-3 * ts_gauss(&h);
            } else if (c == 2) {
                b = -a;
            } else if (c == 3) {
                a = 0.3 * (1 + 0.5 * sin(2 * TS_PI * 1000.0 * t)) * cos(2 * TS_PI * 12000.0 * t) + 1e-3 * ts_gauss(&g);
                b = a + 1e-3 * ts_gauss(&h);
            }
            x[2 * i] = (float)a;
            x[2 * i + 1] = (float)b;
        }
        ml_pair_result r = pair_of(x, N3, 4096);
        ck_assert_msg(r.verdict == ML_PAIR_COPIES, "case %d: verdict %d", c, r.verdict);
        if (c == 1) {
            /* S = 0.3^2/2 + 0.003^2/2 + 1e-6 (the audio's own noise is common), N = 9e-6 */
            const double S = 0.045 + 4.5e-6 + 1e-6, N = 9e-6, gg = 0.8;
            const double a11 = S + N, a22 = gg * gg * S + N, a12 = gg * S;
            const double lmax = 0.5 * (a11 + a22) + sqrt(0.25 * (a11 - a22) * (a11 - a22) + a12 * a12);
            ck_assert_double_eq_tol(r.principal_fraction, lmax / (a11 + a22), 1e-4);
        }
        if (c == 2)
            ck_assert_double_eq_tol(r.correlation, -1.0, 1e-9);
    }
    free(x);
}
END_TEST

START_TEST(pair_quadrature_at_several_carriers)
{
    /* I/Q of an AM carrier (m = 0.5, 1 kHz) at +3, -2.5, +12, -15 kHz, noise 1e-3 on each: I/Q, the
     * line at the carrier (0.05 Hz: the phase-advance estimate), its image far down (> 40 dB). */
    const double fc[] = {3000.0, -2500.0, 12000.0, -15000.0};
    float *x = stereo(N3);
    ts_rng g = {3};
    for (size_t k = 0; k < 4; k++) {
        for (size_t i = 0; i < N3; i++) {
            const double t = (double)i / FS, e = 0.3 * (1 + 0.5 * sin(2 * TS_PI * 1000.0 * t));
            x[2 * i] = (float)(e * cos(2 * TS_PI * fc[k] * t + 0.3) + 1e-3 * ts_gauss(&g));
            x[2 * i + 1] = (float)(e * sin(2 * TS_PI * fc[k] * t + 0.3) + 1e-3 * ts_gauss(&g));
        }
        ml_pair_result r = pair_of(x, N3, 4096);
        ck_assert_msg(r.verdict == ML_PAIR_IQ, "%g Hz: verdict %d", fc[k], r.verdict);
        ck_assert_double_eq_tol(r.line_hz, fc[k], 0.05);
        ck_assert(r.image_db > 40.0);
        ck_assert(fabs(r.principal_fraction - 0.5) < 0.01);
    }
    free(x);
}
END_TEST

START_TEST(pair_imbalance_image_ratio)
{
    /* A 2 kHz quadrature pair with gain error 2 dB / phase error 10 degrees, and 3 dB / 25 degrees:
     * still I/Q; image ratio against the analytic value (header) within 0.3 dB (noise 1e-4 in each
     * lobe is 60 dB below the image). */
    const double gdb[] = {2.0, 3.0}, pdeg[] = {10.0, 25.0};
    float *x = stereo(N3);
    ts_rng g = {4};
    for (size_t k = 0; k < 2; k++) {
        const double gg = pow(10.0, gdb[k] / 20.0), ph = pdeg[k] * TS_PI / 180.0;
        for (size_t i = 0; i < N3; i++) {
            const double t = (double)i / FS;
            x[2 * i] = (float)(gg * 0.3 * cos(2 * TS_PI * 2000.0 * t) + 1e-4 * ts_gauss(&g));
            x[2 * i + 1] = (float)(0.3 * sin(2 * TS_PI * 2000.0 * t + ph) + 1e-4 * ts_gauss(&g));
        }
        const double irr = 10.0 * log10((1 + gg * gg + 2 * gg * cos(ph)) / (1 + gg * gg - 2 * gg * cos(ph)));
        ml_pair_result r = pair_of(x, N3, 4096);
        ck_assert_int_eq(r.verdict, ML_PAIR_IQ);
        ck_assert_msg(fabs(r.image_db - irr) <= 0.3, "image %.3f dB vs %.3f", r.image_db, irr);
    }
    free(x);
}
END_TEST

START_TEST(pair_two_programmes_and_silence)
{
    /* Two different real signals (the audio and a 440 Hz tone): mirror-symmetric, not I/Q; a silent
     * second channel: ML_PAIR_SILENT (channel 2). Block invariance: 1, 7 and 4096 frames give the
     * same result bit for bit (the sums run in order). Nothing pushed: undecided. */
    float *x = stereo(N3);
    ts_rng g = {5}, h = {6};
    for (size_t i = 0; i < N3; i++) {
        x[2 * i] = (float)audio(i, &g);
        x[2 * i + 1] = (float)(0.2 * sin(2 * TS_PI * 440.0 * (double)i / FS) + 1e-3 * ts_gauss(&h));
    }
    ml_pair_result r = pair_of(x, N3, 4096);
    ck_assert_int_eq(r.verdict, ML_PAIR_TWO_SIGNALS);
    ck_assert(fabs(r.image_db) < 3.0);
    const size_t blocks[] = {1, 7};
    for (size_t b = 0; b < 2; b++) {
        ml_pair_result o = pair_of(x, N3, blocks[b]);
        ck_assert_int_eq(o.verdict, r.verdict);
        ck_assert(o.correlation == r.correlation && o.image_db == r.image_db && o.line_hz == r.line_hz);
    }
    for (size_t i = 0; i < N3; i++)
        x[2 * i + 1] = 0.0f;
    r = pair_of(x, N3, 4096);
    ck_assert_int_eq(r.verdict, ML_PAIR_SILENT);
    ck_assert_uint_eq(r.silent_channel, 2);
    free(x);

    ml_pair_config c = ml_pair_config_default(FS);
    ck_assert_uint_eq(c.nfft, 16384);
    ml_pair *q = NULL;
    ck_assert_int_eq(ml_pair_create(&c, &q), ML_OK);
    ck_assert_int_eq(ml_pair_get(q, &r), ML_OK);
    ck_assert_int_eq(r.verdict, ML_PAIR_UNDECIDED);
    float f[4] = {0};
    ck_assert_int_eq(ml_pair_push(q, f, 2, 2, 0, 0), ML_EINVAL);
    ck_assert_int_eq(ml_pair_push(q, f, 1, 2, 0, 2), ML_EINVAL);
    ck_assert_int_eq(ml_pair_push(q, f, 1, 1, 0, 1), ML_EINVAL);
    ck_assert_int_eq(ml_pair_push(q, NULL, 1, 2, 0, 1), ML_EINVAL);
    ck_assert_int_eq(ml_pair_push(q, f, 2, 2, 0, 1), ML_OK);
    ml_pair_reset(q);
    ck_assert_int_eq(ml_pair_get(q, &r), ML_OK);
    ck_assert_int_eq(r.verdict, ML_PAIR_UNDECIDED);
    ml_pair_destroy(q);
    c.nfft = 1000;
    ck_assert_int_eq(ml_pair_create(&c, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    c = ml_pair_config_default(0.0);
    ck_assert_int_eq(ml_pair_create(&c, &q), ML_EINVAL);
}
END_TEST

/* Line at +f over line at -f, dB, of x = cos(w t), y = g cos(w t - phi) (header). */
static double image_ratio_db(double g, double phi)
{
    return 10.0 * log10((1 + g * g + 2 * g * sin(phi)) / (1 + g * g - 2 * g * sin(phi)));
}

/* Receiver audio: a tone f0 (0.3) with its 2nd (1 %) and 3rd (0.5 %) harmonics and 50 Hz hum
 * (0.002) at time t. */
static double rx_audio(double f0, double t)
{
    return 0.3 * (sin(2 * TS_PI * f0 * t) + 0.01 * sin(2 * TS_PI * 2 * f0 * t + 0.4)
                  + 0.005 * sin(2 * TS_PI * 3 * f0 * t + 1.1))
           + 0.002 * sin(2 * TS_PI * 50.0 * t);
}

START_TEST(pair_delayed_copy_is_not_iq)
{
    /* dsp/kind.h pair rule 3: a stereo recording whose right channel is the left delayed by tau
     * (gain g; the tones delayed exactly, the common white noise 3e-4 by the nearest sample) has
     * its tone near 90 degrees one-sided, but its 2nd harmonic near 180 degrees mirror-symmetric:
     * ML_PAIR_MIRRORED, the failing line at +-2 f0, both image ratios against image_ratio_db
     * within 1 dB (the image of the tone lies some 30 dB down, where the noise adds a little). */
    const double f0[] = {1500.0, 800.0, 2600.0}, tau[] = {1.0 / 6000.0, 0.29e-3, 0.1e-3};
    const double gain[] = {0.95, 1.0, 0.9};
    float *x = stereo(N3);
    for (size_t c = 0; c < 3; c++) {
        ts_rng g = {40 + c};
        const long d = lround(tau[c] * FS);
        double *nz = malloc((N3 + (size_t)d) * sizeof *nz);
        ck_assert_ptr_nonnull(nz);
        for (size_t i = 0; i < N3 + (size_t)d; i++)
            nz[i] = 3e-4 * ts_gauss(&g);
        for (size_t i = 0; i < N3; i++) {
            const double t = (double)i / FS;
            x[2 * i] = (float)(rx_audio(f0[c], t) + nz[i + (size_t)d]);
            x[2 * i + 1] = (float)(gain[c] * (rx_audio(f0[c], t - tau[c]) + nz[i]));
        }
        free(nz);
        ml_pair_result r = pair_of(x, N3, 4096);
        const double phi = 2 * TS_PI * f0[c] * tau[c];
        ck_assert_msg(r.verdict == ML_PAIR_MIRRORED, "case %zu: verdict %d", c, r.verdict);
        ck_assert_double_eq_tol(r.line_hz, f0[c], 0.05);
        const double want1 = image_ratio_db(gain[c], phi), want2 = fabs(image_ratio_db(gain[c], 2 * phi));
        ck_assert_msg(fabs(r.image_db - want1) <= 1.0, "case %zu: image %.2f vs %.2f", c, r.image_db, want1);
        ck_assert_double_eq_tol(fabs(r.mirror_hz), 2 * f0[c], 0.05);
        ck_assert_msg(fabs(r.mirror_db - want2) <= 1.0, "case %zu: %.2f vs %.2f", c, r.mirror_db, want2);
        ck_assert(r.lines_tested >= 1);
        char buf[300];
        ck_assert_ptr_nonnull(strstr(ml_pair_reason(&r, buf, sizeof buf), "not an I/Q pair"));
    }
    /* odd harmonics only: at 90 degrees the 3rd sits at 270, one-sided on the other side; the hum
     * (60 Hz at 0.003, 40 dB below the tone, 4.5 degrees) is the witness, image 0.68 dB
     * (image_ratio_db) within 0.5 dB */
    ts_rng g = {46};
    for (size_t i = 0; i < N3; i++) {
        for (int ch = 0; ch < 2; ch++) {
            const double t = (double)i / FS - (ch ? 1.0 / 4800.0 : 0.0);
            x[2 * i + ch] = (float)(0.3 * (sin(2 * TS_PI * 1200.0 * t) + 0.01 * sin(2 * TS_PI * 3600.0 * t))
                                    + 0.003 * sin(2 * TS_PI * 60.0 * t) + 1e-5 * ts_gauss(&g));
        }
    }
    ml_pair_result r = pair_of(x, N3, 4096);
    ck_assert_int_eq(r.verdict, ML_PAIR_MIRRORED);
    ck_assert_double_eq_tol(fabs(r.mirror_hz), 60.0, 0.05);
    ck_assert_double_eq_tol(r.mirror_db, image_ratio_db(1.0, 2 * TS_PI * 60.0 / 4800.0), 0.5);
    /* a lone pure tone delayed to 90 degrees cannot be told from I/Q (header): still ML_PAIR_IQ,
     * no line tested */
    for (size_t i = 0; i < N3; i++) {
        const double t = (double)i / FS;
        x[2 * i] = (float)(0.3 * sin(2 * TS_PI * 1000.0 * t) + 1e-5 * ts_gauss(&g));
        x[2 * i + 1] = (float)(0.3 * sin(2 * TS_PI * 1000.0 * (t - 0.25e-3)) + 1e-5 * ts_gauss(&g));
    }
    r = pair_of(x, N3, 4096);
    ck_assert_int_eq(r.verdict, ML_PAIR_IQ);
    ck_assert_uint_eq(r.lines_tested, 0);
    ck_assert(isnan(r.mirror_hz));
    free(x);
}
END_TEST

START_TEST(pair_skewed_if_is_not_iq)
{
    /* An AM IF (9.6 kHz, m = 0.5 at 1.5 kHz) saved as stereo with the right channel 1.25 samples
     * late: the carrier at 90 degrees, its sidebands at 75.9 and 104.1 degrees, images 18.2 dB
     * down (image_ratio_db), less than rule 3's 20 dB: ML_PAIR_MIRRORED, the failing line one
     * of the sidebands, its image within 0.5 dB of the analytic value. */
    float *x = stereo(N3);
    ts_rng g = {48};
    const double tau = 1.25 / FS;
    for (size_t i = 0; i < N3; i++) {
        const double t = (double)i / FS;
        for (int ch = 0; ch < 2; ch++) {
            const double u = t - (ch ? tau : 0.0);
            const double e = 0.3 * (1 + 0.5 * sin(2 * TS_PI * 1500.0 * u));
            x[2 * i + ch] = (float)(e * cos(2 * TS_PI * 9600.0 * u) + 1e-5 * ts_gauss(&g));
        }
    }
    ml_pair_result r = pair_of(x, N3, 4096);
    ck_assert_int_eq(r.verdict, ML_PAIR_MIRRORED);
    ck_assert_double_eq_tol(r.line_hz, 9600.0, 0.05);
    ck_assert(fabs(fabs(r.mirror_hz) - 8100.0) < 0.05 || fabs(fabs(r.mirror_hz) - 11100.0) < 0.05);
    const double want = image_ratio_db(1.0, 2 * TS_PI * 8100.0 * tau);
    ck_assert_msg(fabs(r.mirror_db - want) <= 0.5, "image %.2f vs %.2f", r.mirror_db, want);
    ck_assert_double_eq_tol(r.mirror_required_db, 20.0, 1e-9);
    free(x);
}
END_TEST

/* I/Q of an AM carrier at fc with envelope e, gain error gdb (dB) and phase error pdeg (degrees) on
 * Q, DC offsets on both, white noise 1e-4. */
static void iq_am(float *x, double fc, double (*env)(double t), double gdb, double pdeg, uint64_t seed)
{
    ts_rng g = {seed};
    const double gg = pow(10.0, gdb / 20.0), ph = pdeg * TS_PI / 180.0;
    for (size_t i = 0; i < N3; i++) {
        const double t = (double)i / FS, e = 0.3 * env(t), w = 2 * TS_PI * fc * t;
        x[2 * i] = (float)(e * cos(w) + 0.01 + 1e-4 * ts_gauss(&g));
        x[2 * i + 1] = (float)(gg * e * sin(w + ph) - 0.007 + 1e-4 * ts_gauss(&g));
    }
}
static double env_tone_hum(double t)
{
    /* m = 0.5 at 1 kHz, its 2nd harmonic 0.05, 1 % hum modulation at 50 Hz */
    return 1 + 0.5 * sin(2 * TS_PI * 1000.0 * t) + 0.05 * sin(2 * TS_PI * 2000.0 * t)
           + 0.01 * sin(2 * TS_PI * 50.0 * t);
}
static double env_rich(double t)
{
    /* a distorted 1 kHz envelope: harmonics 0.15, 0.06, 0.03 (a carrier at 2.5 kHz puts its 3rd and
     * 4th lower products at -0.5 and -1.5 kHz, mirror to the 2nd and 1st at +0.5 and +1.5 kHz) */
    return 1 + 0.6 * cos(2 * TS_PI * 1000.0 * t) + 0.15 * cos(2 * TS_PI * 2000.0 * t)
           + 0.06 * cos(2 * TS_PI * 3000.0 * t) + 0.03 * cos(2 * TS_PI * 4000.0 * t);
}

START_TEST(pair_real_iq_stays_iq)
{
    /* dsp/kind.h pair rule 3 keeps genuine I/Q: AM with sidebands and hum sidebands at +3, -7.5 and
     * +12 kHz, gain/phase errors of 0.8 dB / 4 degrees (image 24.8 dB down, the image formula of
     * pair_imbalance_image_ratio) and 0.2 dB / 1 degree (38.6 dB), DC offsets of 0.01 and -0.007:
     * ML_PAIR_IQ with the sidebands tested (lines_tested >= 4: +-1 kHz, +-2 kHz). A carrier at
     * +2.5 kHz whose envelope harmonics cross 0 Hz (lines at -0.5 and +0.5 kHz, 8 dB apart, both
     * sidebands of the carrier with their counterparts about it) stays ML_PAIR_IQ too. */
    const double fc[] = {3000.0, -7500.0, 12000.0}, gdb[] = {0.8, 0.2}, pdeg[] = {4.0, 1.0};
    float *x = stereo(N3);
    for (size_t k = 0; k < 3; k++)
        for (size_t e = 0; e < 2; e++) {
            iq_am(x, fc[k], env_tone_hum, gdb[e], pdeg[e], 50 + 2 * k + e);
            ml_pair_result r = pair_of(x, N3, 4096);
            ck_assert_msg(r.verdict == ML_PAIR_IQ, "%g Hz, %g dB: verdict %d (mirror at %g Hz, %g dB)", fc[k],
                          gdb[e], r.verdict, r.mirror_hz, r.mirror_db);
            ck_assert_double_eq_tol(r.line_hz, fc[k], 0.05);
            ck_assert_uint_ge(r.lines_tested, 4);
        }
    for (size_t e = 0; e < 2; e++) {
        iq_am(x, 2500.0, env_rich, gdb[e], pdeg[e], 60 + e);
        ml_pair_result r = pair_of(x, N3, 4096);
        ck_assert_msg(r.verdict == ML_PAIR_IQ, "crossing: verdict %d (mirror at %g Hz, %g dB)", r.verdict,
                      r.mirror_hz, r.mirror_db);
        ck_assert_uint_ge(r.lines_tested, 6);
    }
    free(x);
}
END_TEST

/* IF evidence of one channel whose samples come from fn(i). */
typedef double (*sig_fn)(size_t i, ts_rng *g);

static ml_if_evidence_result channel_of(sig_fn fn, uint64_t seed)
{
    ml_spectrum_config sc = ml_spectrum_config_default(FS);
    sc.nfft = 32768;
    sc.hop = 16384;
    ml_spectrum *s = NULL;
    ck_assert_int_eq(ml_spectrum_create(&sc, &s), ML_OK);
    float *x = malloc(N3 * sizeof *x);
    ck_assert_ptr_nonnull(x);
    ts_rng g = {seed};
    for (size_t i = 0; i < N3; i++)
        x[i] = (float)fn(i, &g);
    ml_spectrum_push(s, x, N3);
    free(x);
    ml_if_evidence_result r;
    ck_assert_int_eq(ml_if_evidence(s, 0.0, &r), ML_OK);
    char buf[300];
    ck_assert_uint_gt(strlen(ml_if_evidence_reason(&r, buf, sizeof buf)), 10);
    ml_spectrum_destroy(s);
    return r;
}

static double if_am(size_t i, ts_rng *g)
{
    const double t = (double)i / FS;
    return 0.3 * (1 + 0.5 * sin(2 * TS_PI * 1000.0 * t)) * cos(2 * TS_PI * 12000.0 * t) + 1e-4 * ts_gauss(g);
}
static double if_hum(size_t i, ts_rng *g)
{
    const double t = (double)i / FS;
    return 0.3 * (1 + 0.01 * sin(2 * TS_PI * 50.0 * t)) * cos(2 * TS_PI * 12000.0 * t) + 1e-4 * ts_gauss(g);
}
static double if_pure(size_t i, ts_rng *g)
{
    return 0.3 * cos(2 * TS_PI * 10000.0 * (double)i / FS) + 1e-4 * ts_gauss(g);
}
static double audio_hum_imd(size_t i, ts_rng *g)
{
    /* a 5 kHz tone, hum at 50 and 100 Hz, and hum sidebands on the tone (their intermodulation) */
    const double t = (double)i / FS;
    return 0.3 * sin(2 * TS_PI * 5000.0 * t) * (1 + 0.003 * sin(2 * TS_PI * 100.0 * t))
           + 0.01 * sin(2 * TS_PI * 100.0 * t) + 0.005 * sin(2 * TS_PI * 50.0 * t) + 1e-4 * ts_gauss(g);
}
static double audio_hum(size_t i, ts_rng *g)
{
    const double t = (double)i / FS;
    return 0.3 * sin(2 * TS_PI * 4000.0 * t) + 0.01 * sin(2 * TS_PI * 50.0 * t) + 1e-4 * ts_gauss(g);
}
static double audio_harm(size_t i, ts_rng *g)
{
    const double t = (double)i / FS;
    return 0.3 * sin(2 * TS_PI * 7500.0 * t) + 3e-4 * sin(2 * TS_PI * 15000.0 * t) + 1e-5 * ts_gauss(g);
}
static double audio_low(size_t i, ts_rng *g)
{
    return audio(i, g);
}
static double white(size_t i, ts_rng *g)
{
    (void)i;
    return 0.01 * ts_gauss(g);
}
static double hum_only(size_t i, ts_rng *g)
{
    const double t = (double)i / FS;
    return 0.003 * sin(2 * TS_PI * 50.0 * t) + 0.001 * sin(2 * TS_PI * 100.0 * t + 1.0) + 1e-5 * ts_gauss(g);
}
static double carrier_exact(size_t i, ts_rng *g)
{
    /* a 12 kHz carrier at a quarter of the rate: float samples 0.4, 0, -0.4, 0 up to the rounding
     * of cos(), the only "sidebands" rounding residue more than 200 dB down */
    (void)g;
    return 0.4 * cos(2 * TS_PI * 12000.0 * (double)i / FS);
}
static double silence(size_t i, ts_rng *g)
{
    (void)i;
    (void)g;
    return 0.0;
}

START_TEST(channel_if_or_audio)
{
    /* dsp/kind.h rules with their analytic figures: AM IF m = 0.5 -> IF, sidebands at +-1 kHz at
     * 20 lg(0.25) = -12.04 dBc (0.05 dB); a carrier with 1 % hum modulation -> IF, hum sidebands at
     * +-50 Hz, -46.02 dBc (0.1 dB); a pure carrier -> IF (lone line); audio tones above 3 kHz
     * with hum: with hum sidebands weaker than the hum -> audio (intermodulation), with baseband hum
     * only -> audio; a 7.5 kHz tone with a -60 dBc 2nd harmonic -> audio (harmonic -60.0 dBc, 0.1);
     * a 1 kHz tone -> audio (below 3 kHz); silence -> undecided. */
    ml_if_evidence_result r = channel_of(if_am, 1);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_IF);
    ck_assert_int_eq(r.why, ML_IFW_SIDEBANDS);
    ck_assert_double_eq_tol(r.carrier_hz, 12000.0, 0.01);
    ck_assert_double_eq_tol(r.sideband_hz, 1000.0, 0.01);
    ck_assert_double_eq_tol(r.sideband_dbc, 20.0 * log10(0.25), 0.05);
    r = channel_of(if_hum, 2);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_IF);
    ck_assert(r.why == ML_IFW_SIDEBANDS || r.why == ML_IFW_HUM_SIDEBANDS);
    ck_assert_double_eq_tol(r.sideband_hz, 50.0, 0.01);
    ck_assert_double_eq_tol(r.sideband_dbc, 20.0 * log10(0.005), 0.1);
    r = channel_of(if_pure, 3);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_IF);
    ck_assert_int_eq(r.why, ML_IFW_LONE_CARRIER);
    r = channel_of(audio_hum_imd, 4);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert(r.why == ML_IFW_SIDEBANDS_IMD || r.why == ML_IFW_HUM_IMD);
    ck_assert(r.baseband_dbc > r.sideband_dbc);
    r = channel_of(audio_hum, 5);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert_int_eq(r.why, ML_IFW_BASEBAND_HUM);
    r = channel_of(audio_harm, 6);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert_int_eq(r.why, ML_IFW_HARMONICS);
    ck_assert_double_eq_tol(r.harmonic_dbc, -60.0, 0.1);
    r = channel_of(audio_low, 7);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert_int_eq(r.why, ML_IFW_LOW);
    r = channel_of(silence, 8);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_UNDECIDED);
    /* rule 0 (dsp/kind.h): white noise and hum alone hold no line clear of the noise outside the
     * mains lines: audio, never a "lone carrier" (the strongest bin of noise is no carrier) */
    r = channel_of(white, 9);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert_int_eq(r.why, ML_IFW_NOISE);
    r = channel_of(hum_only, 10);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert_int_eq(r.why, ML_IFW_NOISE);
    /* rounding residue is no sideband: an exact carrier is a lone line (IF), its reason names no
     * sideband */
    r = channel_of(carrier_exact, 11);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_IF);
    ck_assert_int_eq(r.why, ML_IFW_LONE_CARRIER);
    ck_assert(isnan(r.sideband_dbc));
    ck_assert_int_eq(ml_if_evidence(NULL, 0.0, &r), ML_EINVAL);
}
END_TEST

static double two_tones(size_t i, ts_rng *g)
{
    /* test_imd's difference-frequency example: 13 and 14 kHz at 0.5, 1 kHz at 0.03, 12 and
     * 15 kHz at 0.02, scaled by 0.9 (phases 0.37 k as there) */
    const double t = (double)i / FS, f[5] = {13000.0, 14000.0, 1000.0, 12000.0, 15000.0};
    const double a[5] = {0.5, 0.5, 0.03, 0.02, 0.02};
    double x = 0.0;
    for (int k = 0; k < 5; k++)
        x += a[k] * sin(2 * TS_PI * f[k] * t + 0.37 * k);
    return 0.9 * x + 1e-6 * ts_gauss(g);
}
static double tone_and_low_line(size_t i, ts_rng *g)
{
    /* an 8 kHz tone and a 2 kHz line 30 dB down (amplitude ratio 10^(-30/20)), no 14 kHz mirror */
    const double t = (double)i / FS;
    return 0.3 * sin(2 * TS_PI * 8000.0 * t) + 0.3 * pow(10.0, -1.5) * sin(2 * TS_PI * 2000.0 * t + 0.2)
           + 1e-5 * ts_gauss(g);
}
static double carrier_weak_spur(size_t i, ts_rng *g)
{
    /* a 10 kHz carrier with a 2 kHz spur 50 dB down: no line of consequence */
    const double t = (double)i / FS;
    return 0.3 * cos(2 * TS_PI * 10000.0 * t) + 0.3 * pow(10.0, -2.5) * sin(2 * TS_PI * 2000.0 * t)
           + 1e-5 * ts_gauss(g);
}
static double carrier_hum_noise(size_t i, ts_rng *g)
{
    /* a 12 kHz carrier with mains hum at baseband 70 dB down (below rule 5's 60 dB) in noise */
    const double t = (double)i / FS;
    return 0.3 * cos(2 * TS_PI * 12000.0 * t) + 0.3 * pow(10.0, -3.5) * sin(2 * TS_PI * 50.0 * t)
           + 1e-5 * ts_gauss(g);
}
static double carrier_far_sidebands(size_t i, ts_rng *g)
{
    /* a 12 kHz carrier AM at 11 kHz, m = 0.5: sidebands at 1 and 23 kHz, beyond rule 2's +-10 kHz */
    const double t = (double)i / FS;
    return 0.3 * (1 + 0.5 * sin(2 * TS_PI * 11000.0 * t)) * cos(2 * TS_PI * 12000.0 * t) + 1e-5 * ts_gauss(g);
}

START_TEST(channel_lone_only_when_alone)
{
    /* dsp/kind.h rule 6: a line is lone only when no other line within 40 dB of it stands clear
     * of the noise, other than a symmetric pair around it or mains hum.
     *  - test_imd's DFD signal: 13 and 14 kHz of equal strength (0 dB apart, 0.1 dB: float
     *    rounding and noise are some 150 dB down), and a 1 kHz line: audio, the other line named;
     *  - an 8 kHz tone with a 2 kHz line at -30 dBc (the amplitudes' ratio): audio, other line
     *    -30.0 dBc within 0.1 dB;
     *  - a carrier with a spur at -50 dBc, and one with baseband hum at -70 dBc (both more than
     *    40 dB down): IF, a lone carrier, no other line reported;
     *  - a carrier with sidebands 11 kHz off (20 lg(0.25) = -12.04 dBc, docs/references.md 6),
     *    beyond rule 2's span: the pair is modulation, not another line: IF with those sidebands. */
    ml_if_evidence_result r = channel_of(two_tones, 21);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert_int_eq(r.why, ML_IFW_OTHER_LINE);
    ck_assert(fabs(r.carrier_hz - 13000.0) < 0.01 || fabs(r.carrier_hz - 14000.0) < 0.01);
    ck_assert_double_eq_tol(r.other_hz, 27000.0 - r.carrier_hz, 0.01);
    ck_assert_double_eq_tol(r.other_dbc, 0.0, 0.1);
    r = channel_of(tone_and_low_line, 22);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_AUDIO);
    ck_assert_int_eq(r.why, ML_IFW_OTHER_LINE);
    ck_assert_double_eq_tol(r.carrier_hz, 8000.0, 0.01);
    ck_assert_double_eq_tol(r.other_hz, 2000.0, 0.01);
    ck_assert_double_eq_tol(r.other_dbc, -30.0, 0.1);
    r = channel_of(carrier_weak_spur, 23);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_IF);
    ck_assert_int_eq(r.why, ML_IFW_LONE_CARRIER);
    ck_assert(isnan(r.other_dbc));
    r = channel_of(carrier_hum_noise, 24);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_IF);
    ck_assert_int_eq(r.why, ML_IFW_LONE_CARRIER);
    r = channel_of(carrier_far_sidebands, 25);
    ck_assert_int_eq(r.verdict, ML_CHANNEL_IF);
    ck_assert_int_eq(r.why, ML_IFW_SIDEBANDS);
    ck_assert_double_eq_tol(r.sideband_hz, 11000.0, 0.01);
    ck_assert_double_eq_tol(r.sideband_dbc, 20.0 * log10(0.25), 0.05);
}
END_TEST

/* Two tones a sin(2 pi fl t) + b sin(2 pi fh t) through y = x + c x^3, white noise 1e-5. */
static double fl_, fh_, a_, b_, c_;
static double two_tone_cubic(size_t i, ts_rng *g)
{
    const double t = (double)i / FS, x = a_ * sin(2 * TS_PI * fl_ * t) + b_ * sin(2 * TS_PI * fh_ * t);
    return x + c_ * x * x * x + 1e-5 * ts_gauss(g);
}

START_TEST(channel_two_tone_is_audio)
{
    /* dsp/kind.h rule 1b: SMPTE-like two-tone signals whose low tone lies on a mains line, through
     * odd-order distortion (their products fh +- 2 fl look like hum sidebands): the low tone is
     * stronger than the high one, which an IF carrier never lets a baseband line be: audio, the
     * low tone named, its level re the high tone against the cubic's analytic amplitudes (header)
     * within 0.05 dB. 50 Hz + 6 kHz at 4:1 (docs/references.md 12), c = 0.05; 60 Hz + 9 kHz at
     * 2:1, c = 0.2; 100 Hz + 5 kHz at 1:1, c = 0.01. */
    const double fl[] = {50.0, 60.0, 100.0}, fh[] = {6000.0, 9000.0, 5000.0}, a[] = {0.4, 0.3, 0.2},
                 b[] = {0.1, 0.15, 0.2}, c[] = {0.05, 0.2, 0.01};
    for (size_t k = 0; k < 3; k++) {
        fl_ = fl[k], fh_ = fh[k], a_ = a[k], b_ = b[k], c_ = c[k];
        const double al = a_ + c_ * (0.75 * a_ * a_ * a_ + 1.5 * a_ * b_ * b_);
        const double ah = b_ + c_ * (0.75 * b_ * b_ * b_ + 1.5 * a_ * a_ * b_);
        ml_if_evidence_result r = channel_of(two_tone_cubic, 70 + k);
        ck_assert_msg(r.verdict == ML_CHANNEL_AUDIO && r.why == ML_IFW_BASEBAND_STRONGER, "case %zu: %d %d",
                      k, r.verdict, r.why);
        ck_assert_double_eq_tol(r.carrier_hz, fh[k], 0.01);
        ck_assert_double_eq_tol(r.other_hz, fl[k], 0.01);
        const double want = 20 * log10(al / ah);
        ck_assert_msg(fabs(r.other_dbc - want) <= 0.05, "case %zu: %.3f vs %.3f dB", k, r.other_dbc, want);
    }
}
END_TEST

static Suite *kind_suite(void)
{
    Suite *s = suite_create("dsp_kind");
    TCase *tc = tcase_create("pair");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, pair_copies_are_not_iq);
    tcase_add_test(tc, pair_quadrature_at_several_carriers);
    tcase_add_test(tc, pair_imbalance_image_ratio);
    tcase_add_test(tc, pair_two_programmes_and_silence);
    tcase_add_test(tc, pair_delayed_copy_is_not_iq);
    tcase_add_test(tc, pair_skewed_if_is_not_iq);
    tcase_add_test(tc, pair_real_iq_stays_iq);
    suite_add_tcase(s, tc);
    tc = tcase_create("channel");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, channel_if_or_audio);
    tcase_add_test(tc, channel_lone_only_when_alone);
    tcase_add_test(tc, channel_two_tone_is_audio);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(kind_suite());
}
