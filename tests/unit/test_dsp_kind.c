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
 *    the 2x2 covariance [[S + N, g S], [g S, g^2 S + N]].
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

static Suite *kind_suite(void)
{
    Suite *s = suite_create("dsp_kind");
    TCase *tc = tcase_create("pair");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, pair_copies_are_not_iq);
    tcase_add_test(tc, pair_quadrature_at_several_carriers);
    tcase_add_test(tc, pair_imbalance_image_ratio);
    tcase_add_test(tc, pair_two_programmes_and_silence);
    suite_add_tcase(s, tc);
    tc = tcase_create("channel");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, channel_if_or_audio);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(kind_suite());
}
