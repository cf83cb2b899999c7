/* Frequency weightings and weighted residual noise from a Welch spectrum.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [iec61672:2013] IEC 61672-1:2013 Annex E, eqs. E.1 and E.6, pole frequencies f1..f4 (E.4) as listed
 *     in docs/references.md 1.1.
 * [bs468:1986] ITU-R BS.468-4 (1986): the weighting network's analogue prototype (zero at 0, poles
 *     in rad/s) as listed in docs/references.md 2.2; Table 1 (docs/references.md 2.1).
 */
#include "dsp/weighting.h"

#include <complex.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/internal.h"

/* [iec61672:2013] E.4: pole frequencies in Hz */
static const double F1 = 20.598997057618316, F2 = 107.65264864304629, F3 = 737.8622307362901,
                    F4 = 12194.217147998012;

/* [bs468:1986] analogue prototype poles (rad/s), docs/references.md 2.2 */
static const double P468_RE[6] = {-25903.70104781628, -23615.53521363528, -23615.53521363528,
                                  -18743.74669072136, -18743.74669072136, -62675.1700584679};
static const double P468_IM[6] = {0.0, 36379.90893732929, -36379.90893732929,
                                  62460.15645250649, -62460.15645250649, 0.0};

/* 20 lg of the A and C numerator/denominator products of eq. E.1/E.6, without the 1 kHz constant */
static double a_raw_db(double f)
{
    const double f2 = f * f;
    return 20.0 * log10(F4 * F4 * f2 * f2
                        / ((f2 + F1 * F1) * sqrt(f2 + F2 * F2) * sqrt(f2 + F3 * F3) * (f2 + F4 * F4)));
}

static double c_raw_db(double f)
{
    const double f2 = f * f;
    return 20.0 * log10(F4 * F4 * f2 / ((f2 + F1 * F1) * (f2 + F4 * F4)));
}

/* 20 lg |s / prod(s - p_i)| at s = j 2 pi f */
static double w468_raw_db(double f)
{
    const double complex s = CMPLX(0.0, 2.0 * ML_PI * f);
    double complex h = s;
    for (int i = 0; i < 6; i++)
        h /= s - CMPLX(P468_RE[i], P468_IM[i]);
    return 20.0 * log10(cabs(h));
}

double ml_weighting_db(ml_weighting w, double f_hz)
{
    if (!(f_hz > 0) || !isfinite(f_hz))
        return NAN;
    switch (w) {
    case ML_WEIGHTING_NONE:
        return 0.0;
    case ML_WEIGHTING_A: /* eq. E.6 with A1000 = A(1000) exactly */
        return a_raw_db(f_hz) - a_raw_db(1000.0);
    case ML_WEIGHTING_C: /* eq. E.1 with C1000 = C(1000) exactly */
        return c_raw_db(f_hz) - c_raw_db(1000.0);
    case ML_WEIGHTING_468: /* Table 1: 0 dB at 1 kHz */
        return w468_raw_db(f_hz) - w468_raw_db(1000.0);
    default:
        return NAN;
    }
}

const char *ml_weighting_name(ml_weighting w)
{
    static const char *const names[ML_WEIGHTING_COUNT] = {"none", "a", "c", "468"};
    return (unsigned)w < ML_WEIGHTING_COUNT ? names[w] : "unknown";
}

ml_wnoise_config ml_wnoise_config_default(void)
{
    return (ml_wnoise_config){.band_lo_hz = 20.0, .band_hi_hz = 20000.0, .exclude_hum = true};
}

/* 10 lg(p / 0.5); NAN for a zero power (digital silence: no level to state, never a floor value) */
static double dbfs(double p)
{
    return p > 0 ? 10.0 * log10(p / 0.5) : NAN;
}

static size_t nearest_bin(double hz, double bin_hz)
{
    return (size_t)floor(hz / bin_hz + 0.5);
}

/* Marks +-half bins around the bin nearest hz (clipped to [0, nbins)). */
static void exclude(unsigned char *m, size_t nbins, double hz, double bin_hz, size_t half)
{
    if (!(hz > 0) || !isfinite(hz))
        return;
    const double c_d = floor(hz / bin_hz + 0.5);
    if (c_d >= (double)nbins + (double)half)
        return;
    const size_t c = nearest_bin(hz, bin_hz);
    const size_t lo = c > half ? c - half : 0, hi = c + half < nbins ? c + half : nbins - 1;
    for (size_t k = lo; k <= hi; k++)
        m[k] = 1;
}

ml_status ml_weighted_noise(const ml_spectrum *spec, const ml_audio_result *tone, const ml_wnoise_config *cfg,
                            ml_wnoise_result *out)
{
    if (spec == NULL || cfg == NULL || out == NULL || ml_spectrum_is_complex(spec))
        return ML_EINVAL;
    const double rate = ml_spectrum_rate_hz(spec), nyq = rate / 2.0;
    const size_t nbins = ml_spectrum_nbins(spec), lobe = ml_spectrum_lobe_bins(spec);
    const double bin_hz = rate / (double)ml_spectrum_nfft(spec), enbw = ml_spectrum_enbw_bins(spec);
    if (!(cfg->band_lo_hz >= 0) || !(cfg->band_hi_hz > cfg->band_lo_hz) || !isfinite(cfg->band_lo_hz))
        return ML_EINVAL;
    if (tone != NULL && fabs(tone->bin_hz - bin_hz) > 1e-9 * bin_hz)
        return ML_EINVAL;
    *out = (ml_wnoise_result){0};
    out->band_lo_hz = cfg->band_lo_hz;
    out->band_hi_hz = cfg->band_hi_hz < nyq ? cfg->band_hi_hz : nyq;
    if (!(out->band_hi_hz > out->band_lo_hz))
        return ML_EINVAL;
    size_t klo = (size_t)ceil(out->band_lo_hz / bin_hz), khi = (size_t)floor(out->band_hi_hz / bin_hz);
    if (khi > nbins - 1)
        khi = nbins - 1;
    if (klo < lobe)
        klo = lobe;
    if (klo > khi)
        return ML_EINVAL;
    if (ml_spectrum_segments(spec) == 0)
        return ML_ENOSIGNAL;

    double *psd = malloc(nbins * sizeof *psd);
    unsigned char *m = calloc(nbins, 1);
    ml_status st = ML_ENOMEM;
    if (psd == NULL || m == NULL)
        goto done;
    if ((st = ml_spectrum_get_psd(spec, psd, nbins)) != ML_OK)
        goto done;

    const size_t half = lobe + 1;
    if (tone != NULL) {
        if (tone->fundamental_power > 0) {
            exclude(m, nbins, tone->fundamental_hz, bin_hz, half);
            for (size_t i = 0; i < tone->nharmonics && i < ML_MAX_HARMONICS; i++)
                exclude(m, nbins, tone->harmonics[i].frequency_hz, bin_hz, half);
        }
        if (cfg->exclude_hum)
            for (size_t i = 0; i < tone->nhum && i < ML_MAX_HUM; i++) {
                exclude(m, nbins, tone->hum[i].frequency_hz, bin_hz, half);
                out->hum_removed_power += tone->hum[i].power;
            }
    }

    /* Fill each excluded run inside the band from the remaining bins beside it. */
    size_t left = 0;
    for (size_t k = klo; k <= khi; k++)
        left += m[k] == 0;
    if (left == 0) {
        st = ML_ENOSIGNAL;
        goto done;
    }
    out->nbins_band = khi - klo + 1;
    out->nbins_excluded = out->nbins_band - left;
    for (size_t k = klo; k <= khi;) {
        if (!m[k]) {
            k++;
            continue;
        }
        size_t e = k;
        while (e + 1 <= khi && m[e + 1])
            e++;
        double s = 0.0;
        size_t cnt = 0;
        for (size_t j = k, c = 0; j > klo && c < lobe; c++) { /* left neighbours */
            j--;
            if (!m[j]) {
                s += psd[j];
                cnt++;
            }
        }
        for (size_t j = e + 1, c = 0; j <= khi && c < lobe; j++, c++)
            if (!m[j]) {
                s += psd[j];
                cnt++;
            }
        if (cnt == 0) { /* a run between two other runs: use the band's mean noise */
            for (size_t j = klo; j <= khi; j++)
                if (!m[j]) {
                    s += psd[j];
                    cnt++;
                }
        }
        for (size_t j = k; j <= e; j++)
            psd[j] = s / (double)cnt;
        k = e + 1;
    }

    double sum[ML_WEIGHTING_COUNT] = {0};
    for (size_t k = klo; k <= khi; k++) {
        const double f = (double)k * bin_hz;
        sum[ML_WEIGHTING_NONE] += psd[k];
        if (f > 0) /* klo >= lobe >= 1, so never DC */
            for (int w = ML_WEIGHTING_A; w < ML_WEIGHTING_COUNT; w++)
                sum[w] += psd[k] * pow(10.0, ml_weighting_db((ml_weighting)w, f) / 10.0);
    }
    out->noise_power = sum[ML_WEIGHTING_NONE] / enbw;
    out->noise_a_power = sum[ML_WEIGHTING_A] / enbw;
    out->noise_c_power = sum[ML_WEIGHTING_C] / enbw;
    out->noise_468_power = sum[ML_WEIGHTING_468] / enbw;
    out->noise_dbfs = dbfs(out->noise_power);
    out->noise_a_dbfs = dbfs(out->noise_a_power);
    out->noise_c_dbfs = dbfs(out->noise_c_power);
    out->noise_468_dbfs = dbfs(out->noise_468_power);
    st = ML_OK;
done:
    free(psd);
    free(m);
    return st;
}
