/* Unit tests for dsp/carrier: the one carrier search (strongest, or nominal with its capture
 * range and level check) on spectra of signals synthesised here.
 * SPDX-License-Identifier: MIT
 *
 * Amplitudes are read as component powers over the HFT248D main lobe, exact to rounding
 * (tests/unit/test_dsp_rf.c explains why 1e-6 holds); frequencies come from the phase advance
 * between half-overlapping segments, better than 1 mHz on a noise-free tone.
 *
 * References:
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley 2001, sec. 3.1: tone AM puts
 *     m A / 2 at each side frequency (docs/references.md 6).
 * [heinzel:2002] G. Heinzel, A. Ruediger, R. Schilling, "Spectrum and spectral density estimation
 *     by the Discrete Fourier transform (DFT)", MPI fuer Gravitationsphysik, 2002: HFT248D
 *     sidelobes -248.4 dB (docs/references.md 3.2).
 */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/carrier.h"
#include "ml_check.h"
#include "testsig.h"

#define FS 48000.0
#define N 65536

/* A spectrum of tones a[k] cos/exp at f[k] (real or complex), plus white noise of rms sigma. */
static ml_spectrum *spectrum_of(const double *a, const double *f, size_t ntones, bool cplx, double sigma)
{
    ml_spectrum_config c = ml_spectrum_config_default(FS);
    c.nfft = 16384;
    c.hop = c.nfft / 2;
    c.complex_input = cplx;
    ml_spectrum *s = NULL;
    ck_assert_int_eq(ml_spectrum_create(&c, &s), ML_OK);
    double complex *z = calloc(N, sizeof *z);
    ts_rng rng = {7};
    for (size_t i = 0; i < N; i++) {
        for (size_t k = 0; k < ntones; k++) {
            const double ph = 2 * TS_PI * f[k] * (double)i / FS + 0.3 * (double)k;
            z[i] += cplx ? a[k] * cexp(I * ph) : a[k] * cos(ph);
        }
        z[i] += sigma * ts_gauss(&rng) + (cplx ? I * sigma * ts_gauss(&rng) : 0);
    }
    if (cplx) {
        ck_assert_int_eq(ml_spectrum_push_complex(s, z, N), ML_OK);
    } else {
        double *x = malloc(N * sizeof *x);
        for (size_t i = 0; i < N; i++)
            x[i] = creal(z[i]);
        ck_assert_int_eq(ml_spectrum_push_double(s, x, N), ML_OK);
        free(x);
    }
    free(z);
    return s;
}

START_TEST(config_rejection)
{
    const double a = 0.5, f = 3000;
    ml_spectrum *s = spectrum_of(&a, &f, 1, false, 0);
    ml_carrier car;
    ml_carrier_config c = ml_carrier_config_default(FS, false, NAN);
    ck_assert_double_eq(c.capture_hz, 200.0); /* README: +-200 Hz capture range */
    ck_assert_double_eq(c.min_rel, 1e-3);     /* README: within 60 dB of the strongest */
    ck_assert_double_eq(c.lo_hz, 20.0);
    ml_carrier_config bad[4] = {c, c, c, c};
    bad[0].capture_hz = 0;
    bad[1].min_rel = -1;
    bad[2].min_rel = 2;
    bad[3].lo_hz = 30000;
    for (int i = 0; i < 4; i++)
        ck_assert_int_eq(ml_carrier_find(s, &bad[i], &car), ML_EINVAL);
    ck_assert_int_eq(ml_carrier_find(NULL, &c, &car), ML_EINVAL);
    ck_assert_int_eq(ml_carrier_find(s, NULL, &car), ML_EINVAL);
    ml_spectrum_destroy(s);
}
END_TEST

START_TEST(strongest_component)
{
    /* analytic: the carrier is the strongest component and reads its amplitude (1e-6, rounding)
     * and frequency (1 mHz, noise-free phase advance) */
    const double a[2] = {0.3, 0.1}, f[2] = {7000.5, 2000};
    for (int cplx = 0; cplx <= 1; cplx++) {
        const double fr[2] = {cplx ? -f[0] : f[0], f[1]};
        ml_spectrum *s = spectrum_of(a, fr, 2, cplx, 0);
        ml_carrier car;
        ml_carrier_config c = ml_carrier_config_default(FS, cplx, NAN);
        ck_assert_int_eq(ml_carrier_find(s, &c, &car), ML_OK);
        ck_assert_double_eq_tol(car.frequency_hz, fr[0], 1e-3);
        ck_assert_double_eq_tol(car.amplitude, 0.3, 1e-6);
        ck_assert_double_eq(car.strongest_hz, car.frequency_hz);
        ck_assert_double_eq(car.range_hz, 0.0);
        ml_spectrum_destroy(s);
    }
}
END_TEST

START_TEST(nominal_capture_range)
{
    /* a 3000 Hz carrier and a stronger 9000 Hz tone: --carrier 3150 finds 3000 (within 200 Hz);
     * --carrier 2750 does not (250 Hz away): nothing within the range reaches 60 dB below the
     * strongest (noise at -100 dB re 0.3 per bin), so no carrier, and the strongest is named */
    const double a[2] = {0.3, 0.6}, f[2] = {3000, 9000};
    ml_spectrum *s = spectrum_of(a, f, 2, false, 1e-6);
    ml_carrier car;
    ml_carrier_config c = ml_carrier_config_default(FS, false, 3150);
    ck_assert_int_eq(ml_carrier_find(s, &c, &car), ML_OK);
    ck_assert_double_eq_tol(car.frequency_hz, 3000, 1e-2);
    ck_assert_double_eq_tol(car.amplitude, 0.3, 1e-5);
    ck_assert_double_eq(car.range_hz, 200.0);
    c.nominal_hz = 2750;
    ck_assert_int_eq(ml_carrier_find(s, &c, &car), ML_ENOSIGNAL);
    ck_assert_double_eq_tol(car.strongest_hz, 9000, 1e-2);
    ck_assert_double_eq_tol(car.strongest_amplitude, 0.6, 1e-5);
    ck_assert_double_eq(car.amplitude, 0.0);
    ml_spectrum_destroy(s);
}
END_TEST

START_TEST(nominal_level_check)
{
    /* the component within the capture range must come within 60 dB of the strongest: at -50 dB
     * it is the carrier, at -70 dB it is not (analytic levels 20 lg(a / 1)) */
    const double a1[2] = {1.0, pow(10, -50 / 20.0)}, a2[2] = {1.0, pow(10, -70 / 20.0)}, f[2] = {9000, 3000};
    ml_spectrum *s1 = spectrum_of(a1, f, 2, true, 0), *s2 = spectrum_of(a2, f, 2, true, 0);
    ml_carrier car;
    ml_carrier_config c = ml_carrier_config_default(FS, true, 3000);
    ck_assert_int_eq(ml_carrier_find(s1, &c, &car), ML_OK);
    ck_assert_double_eq_tol(car.amplitude, a1[1], 1e-6);
    ck_assert_int_eq(ml_carrier_find(s2, &c, &car), ML_ENOSIGNAL);
    ck_assert_double_eq_tol(car.strongest_amplitude, 1.0, 1e-6);
    /* without the level check the weak line is found */
    c.min_rel = 0;
    ck_assert_int_eq(ml_carrier_find(s2, &c, &car), ML_OK);
    ck_assert_double_eq_tol(car.amplitude, a2[1], 1e-6);
    ml_spectrum_destroy(s1);
    ml_spectrum_destroy(s2);
}
END_TEST

START_TEST(silence_has_no_carrier)
{
    const double a = 0, f = 3000;
    ml_spectrum *s = spectrum_of(&a, &f, 1, false, 0);
    ml_carrier car;
    ml_carrier_config c = ml_carrier_config_default(FS, false, NAN);
    ck_assert_int_eq(ml_carrier_find(s, &c, &car), ML_ENOSIGNAL);
    ck_assert_double_eq(car.strongest_amplitude, 0.0);
    ml_spectrum_destroy(s);
}
END_TEST

START_TEST(nominal_sideband_is_no_carrier)
{
    /* Tone AM [haykin:2001, docs/references.md 6]: a carrier of A at 12 kHz and side frequencies
     * of m A / 2 at 12 +- 1 kHz. --carrier 11000 (or 13000) lands on a side frequency: within its
     * channel (+-10 kHz) the carrier is stronger (m = 1: 6 dB) and the mirror image about it, at
     * 13 (11) kHz, is there with the same amplitude: a sideband, no carrier; stronger_hz names
     * it. --carrier 12000 finds the carrier. At m = 2 the side frequencies equal the carrier
     * (not 3 dB weaker): the side frequency is taken (the rule needs the carrier 3 dB stronger). */
    const double A = 0.4, f[3] = {12000, 11000, 13000};
    for (int k = 0; k < 2; k++) {
        const double m = k == 0 ? 1.0 : 2.0, a[3] = {A, m * A / 2, m * A / 2};
        ml_spectrum *s = spectrum_of(a, f, 3, false, 1e-6);
        ml_carrier car;
        ml_carrier_config c = ml_carrier_config_default(FS, false, 12000);
        ck_assert_int_eq(ml_carrier_find(s, &c, &car), ML_OK);
        ck_assert_double_eq_tol(car.frequency_hz, 12000, 1e-2);
        for (int side = 1; side <= 2; side++) {
            c.nominal_hz = f[side];
            if (m == 1.0) {
                ck_assert_int_eq(ml_carrier_find(s, &c, &car), ML_ENOSIGNAL);
                ck_assert_double_eq_tol(car.stronger_hz, 12000, 1e-2);
                ck_assert_double_eq(car.amplitude, 0.0);
            } else {
                ck_assert_int_eq(ml_carrier_find(s, &c, &car), ML_OK);
                ck_assert_double_eq_tol(car.frequency_hz, f[side], 1e-2);
            }
        }
        ml_spectrum_destroy(s);
    }
}
END_TEST

START_TEST(nominal_must_be_a_line)
{
    /* --carrier 13500 next to a tone at 13000 Hz (a strong component 500 Hz away, outside the
     * 200 Hz capture range): the strongest bin of 13300 .. 13700 Hz is the skirt of the 13 kHz
     * line's window or noise, no line: it stands less than 10 dB out of the spectrum around it
     * (its prominence is reported). With white noise of sigma 1e-3 alone near 13.5 kHz the same.
     * A real line at 13.5 kHz 50 dB below the tone (above the noise floor by far) is found. */
    const double a2[2] = {0.5, 0.5 * pow(10, -50 / 20.0)}, f2[2] = {13000, 13500};
    ml_spectrum *s1 = spectrum_of(a2, f2, 1, false, 1e-3), *s2 = spectrum_of(a2, f2, 2, false, 1e-3);
    ml_carrier car;
    ml_carrier_config c = ml_carrier_config_default(FS, false, 13500);
    ck_assert_double_eq(c.min_prominence_db, 10.0);
    c.min_rel = 0; /* the level check off: the prominence alone decides */
    ck_assert_int_eq(ml_carrier_find(s1, &c, &car), ML_ENOSIGNAL);
    ck_assert(car.prominence_db < 10.0);
    ck_assert_int_eq(ml_carrier_find(s2, &c, &car), ML_OK);
    ck_assert_double_eq_tol(car.frequency_hz, 13500, 0.05);
    ck_assert_double_ge(car.prominence_db, 10.0);
    /* the strongest mode asks for no prominence unless told */
    ml_carrier_config cs = ml_carrier_config_default(FS, false, NAN);
    ck_assert(isinf(cs.min_prominence_db) && cs.min_prominence_db < 0);
    /* white noise only: the strongest bin is no line when the prominence is asked for */
    const double z = 0, fz = 3000;
    ml_spectrum *sn = spectrum_of(&z, &fz, 1, true, 1e-3);
    ck_assert_int_eq(ml_carrier_find(sn, &cs, &car), ML_OK);
    cs.min_prominence_db = 10.0;
    ck_assert_int_eq(ml_carrier_find(sn, &cs, &car), ML_ENOSIGNAL);
    ck_assert(car.prominence_db < 10.0);
    ml_spectrum_destroy(s1);
    ml_spectrum_destroy(s2);
    ml_spectrum_destroy(sn);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_carrier");
    TCase *tc = tcase_create("carrier");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, config_rejection);
    tcase_add_test(tc, strongest_component);
    tcase_add_test(tc, nominal_capture_range);
    tcase_add_test(tc, nominal_level_check);
    tcase_add_test(tc, silence_has_no_carrier);
    tcase_add_test(tc, nominal_sideband_is_no_carrier);
    tcase_add_test(tc, nominal_must_be_a_line);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
