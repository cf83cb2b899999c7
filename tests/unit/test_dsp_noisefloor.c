/* Unit tests for dsp/noisefloor: the noise floor of a spectrum as a density, and hum over it.
 * SPDX-License-Identifier: MIT
 *
 * The power spectra are set by hand (flat, plus single lines), so every expected value follows
 * from the definitions in dsp/noisefloor.h by arithmetic: a flat psd of v per bin is the density
 * v / ENBW / bin width, relative to the full-scale power.
 */
#include <check.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/noisefloor.h"
#include "ml_check.h"

#define FS 48000.0
#define NFFT 8192

static ml_spectrum *make(void)
{
    ml_spectrum_config c = ml_spectrum_config_default(FS);
    c.nfft = NFFT;
    c.hop = NFFT / 2;
    c.window = ML_WINDOW_HANN;
    ml_spectrum *s = NULL;
    ck_assert_int_eq(ml_spectrum_create(&c, &s), ML_OK);
    return s;
}

START_TEST(flat_floor_and_band)
{
    ml_spectrum *s = make();
    const size_t nb = ml_spectrum_nbins(s);
    double *psd = malloc(nb * sizeof *psd), *scratch = malloc(nb * sizeof *scratch);
    const double v = 1e-9, bin = FS / NFFT;
    for (size_t k = 0; k < nb; k++)
        psd[k] = v;
    size_t lo, hi;
    ml_noisefloor_band(s, &lo, &hi);
    ck_assert_uint_eq(lo, ml_spectrum_lobe_bins(s));        /* above the DC lobe */
    ck_assert_uint_eq(hi, (size_t)(20000.0 / bin));         /* up to 20 kHz */
    /* flat: the median is v, density v / ENBW / bin, re the full-scale power 0.5 (a real sine) */
    const double want = 10 * log10(v / ml_spectrum_enbw_bins(s) / bin / 0.5);
    ck_assert_double_eq_tol(ml_noisefloor_dbfs_hz(s, psd, lo, hi, scratch), want, 1e-9);
    /* a few strong lines move a median not at all */
    for (size_t k = 100; k < 110; k++)
        psd[k] = 1.0;
    ck_assert_double_eq_tol(ml_noisefloor_dbfs_hz(s, psd, lo, hi, scratch), want, 1e-9);
    /* silence: no floor, never a floor value */
    for (size_t k = 0; k < nb; k++)
        psd[k] = 0;
    ck_assert(isnan(ml_noisefloor_dbfs_hz(s, psd, lo, hi, scratch)));
    free(psd);
    free(scratch);
    ml_spectrum_destroy(s);
}
END_TEST

START_TEST(hum_over_floor)
{
    /* Over a flat psd the hum lobes hold exactly the floor's power: 0 dB. Adding power p to the
     * bin at 50 Hz raises the hum by p / ENBW over F = (2 lobe + 1) n v / ENBW (n components):
     * 10 lg(1 + p / ((2 lobe + 1) n v)). */
    ml_spectrum *s = make();
    const size_t nb = ml_spectrum_nbins(s);
    double *psd = malloc(nb * sizeof *psd), *scratch = malloc(nb * sizeof *scratch);
    const double v = 1e-9, bin = FS / NFFT;
    for (size_t k = 0; k < nb; k++)
        psd[k] = v;
    size_t lo, hi;
    ml_noisefloor_band(s, &lo, &hi);
    const double fl = ml_noisefloor_dbfs_hz(s, psd, lo, hi, scratch);
    double over, hum;
    ck_assert_int_eq(ml_noisefloor_hum_over(s, psd, nb, 50.0, 6, fl, &over, &hum), ML_OK);
    ck_assert_double_eq_tol(over, 0.0, 1e-9);
    const double p = 1e-5;
    psd[(size_t)lround(50.0 / bin)] += p;
    /* the 50 Hz bin (8.5 bins) lies 2 bins from the Hann window's DC lobe edge: 6 components */
    const double lobe = (double)ml_spectrum_lobe_bins(s);
    ck_assert_int_eq(ml_noisefloor_hum_over(s, psd, nb, 50.0, 6, fl, &over, &hum), ML_OK);
    ck_assert_double_eq_tol(over, 10 * log10(1 + p / ((2 * lobe + 1) * 6 * v)), 1e-6);
    free(psd);
    free(scratch);
    ml_spectrum_destroy(s);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_noisefloor");
    TCase *tc = tcase_create("noisefloor");
    tcase_add_test(tc, flat_floor_and_band);
    tcase_add_test(tc, hum_over_floor);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
