/* Audio distortion and noise metrics from a Welch power spectrum.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [ieee1241:2000] IEEE Std 1241-2000, Standard for Terminology and Test Methods for Analog-to-
 *     Digital Converters: SINAD eq. 94, ENOB eq. 102.
 * [aes17:2015] AES17-2015, measurement bandwidth 20 Hz to 20 kHz; 0 dBFS = full-scale sine.
 */
#include "dsp/metrics.h"

#include <math.h>
#include <stdlib.h>

#include "dsp/internal.h"

enum { BIN_NOISE = 0, BIN_OUT, BIN_DC, BIN_FUND, BIN_HARM };

ml_audio_config ml_audio_config_default(void)
{
    return (ml_audio_config){.band_lo_hz = 20.0, .band_hi_hz = 20000.0, .tone_hz = 0.0,
                             .harmonics = 10, .mains_hz = 0.0, .hum_harmonics = 6};
}

double ml_ratio_pct(double num_power, double den_power)
{
    if (!(den_power > 0) || !(num_power > 0))
        return 0.0;
    return 100.0 * sqrt(num_power / den_power);
}

double ml_ratio_db(double num_power, double den_power)
{
    if (!(den_power > 0))
        return 300.0;
    double r = num_power / den_power;
    return r > 1e-30 ? 10.0 * log10(r) : -300.0;
}

double ml_power_dbfs(double power)
{
    return ml_ratio_db(power, 0.5);
}

double ml_enob_bits(double sinad_db)
{
    /* [ieee1241:2000] eq. 94 and 102 with FSR = 2A: ENOB = (SINAD - 10 lg 1.5) / (20 lg 2) */
    return (sinad_db - 10.0 * log10(1.5)) / (20.0 * log10(2.0));
}

/* Sum of psd over [c - lobe, c + lobe] clipped to [0, nbins). Sets *count to the bins summed. */
static double lobe_sum(const double *psd, size_t nbins, size_t c, size_t lobe, size_t *count)
{
    size_t lo = c > lobe ? c - lobe : 0, hi = c + lobe < nbins ? c + lobe : nbins - 1;
    double s = 0.0;
    for (size_t k = lo; k <= hi; k++)
        s += psd[k];
    *count = hi - lo + 1;
    return s;
}

static void mark(unsigned char *m, size_t nbins, size_t c, size_t lobe, unsigned char what)
{
    size_t lo = c > lobe ? c - lobe : 0, hi = c + lobe < nbins ? c + lobe : nbins - 1;
    for (size_t k = lo; k <= hi; k++)
        if (m[k] == BIN_NOISE || m[k] == BIN_OUT || (what == BIN_FUND && m[k] != BIN_DC))
            m[k] = what;
}

/* True when the +-lobe window around c touches a fundamental or harmonic bin. */
static bool collides(const unsigned char *m, size_t nbins, size_t c, size_t lobe)
{
    size_t lo = c > lobe ? c - lobe : 0, hi = c + lobe < nbins ? c + lobe : nbins - 1;
    for (size_t k = lo; k <= hi; k++)
        if (m[k] == BIN_FUND || m[k] == BIN_HARM || m[k] == BIN_DC)
            return true;
    return false;
}

/* Power of the component whose lobe is centred on bin c: everything in its lobe, noise included,
 * so a component buried in noise reads the noise in its lobe rather than zero. */
static double component_power(const double *psd, size_t nbins, size_t c, size_t lobe, double enbw)
{
    size_t count = 0;
    return lobe_sum(psd, nbins, c, lobe, &count) / enbw;
}

static size_t nearest_bin(double hz, double bin_hz)
{
    return (size_t)floor(hz / bin_hz + 0.5);
}

/* Hum: choose 50 or 60 Hz (mains 0) by the larger sum over the first four multiples, then measure
 * each multiple clear of DC, the fundamental and the harmonics. m NULL: only DC is excluded. */
static void measure_hum(const double *psd, const unsigned char *m, size_t nbins, size_t lobe, double enbw,
                        double bin_hz, double mains, int hum_harmonics, ml_audio_result *out)
{
    if (mains == 0) {
        double sum[2] = {0, 0};
        const double cand[2] = {50.0, 60.0};
        for (int j = 0; j < 2; j++)
            for (int mlt = 1; mlt <= 4; mlt++) {
                size_t c = nearest_bin(mlt * cand[j], bin_hz);
                if (c + lobe >= nbins || (m ? collides(m, nbins, c, lobe) : c < 2 * lobe))
                    continue;
                sum[j] += component_power(psd, nbins, c, lobe, enbw);
            }
        mains = sum[1] > sum[0] ? 60.0 : 50.0;
        out->mains_detected = true;
    }
    out->mains_hz = mains;
    for (int mlt = 1; mlt <= hum_harmonics && out->nhum < ML_MAX_HUM; mlt++) {
        double fh = mlt * mains;
        size_t c = nearest_bin(fh, bin_hz);
        if (c + lobe >= nbins)
            break;
        if (m ? collides(m, nbins, c, lobe) : c < 2 * lobe)
            continue;
        double p = component_power(psd, nbins, c, lobe, enbw);
        out->hum[out->nhum++] = (ml_component){.order = mlt, .frequency_hz = fh, .power = p};
        out->hum_power += p;
    }
}

ml_status ml_hum_analyze_psd(const ml_spectrum *spec, const double *psd, size_t nbins, double mains_hz,
                             int hum_harmonics, ml_audio_result *out)
{
    if (spec == NULL || psd == NULL || out == NULL || nbins != ml_spectrum_nbins(spec)
        || ml_spectrum_is_complex(spec) || hum_harmonics < 1 || hum_harmonics > ML_MAX_HUM
        || !(mains_hz == 0 || mains_hz == 50 || mains_hz == 60))
        return ML_EINVAL;
    *out = (ml_audio_result){0};
    out->bin_hz = ml_spectrum_rate_hz(spec) / (double)ml_spectrum_nfft(spec);
    measure_hum(psd, NULL, nbins, ml_spectrum_lobe_bins(spec), ml_spectrum_enbw_bins(spec), out->bin_hz,
                mains_hz, hum_harmonics, out);
    return ML_OK;
}

ml_status ml_audio_analyze(const ml_spectrum *spec, const ml_audio_config *cfg, ml_audio_result *out)
{
    if (spec == NULL || cfg == NULL || out == NULL)
        return ML_EINVAL;
    const double rate = ml_spectrum_rate_hz(spec), nyq = rate / 2.0;
    if (!(cfg->band_lo_hz >= 0) || !(cfg->band_hi_hz > cfg->band_lo_hz) || cfg->harmonics < 2
        || cfg->harmonics > ML_MAX_HARMONICS || cfg->hum_harmonics < 1 || cfg->hum_harmonics > ML_MAX_HUM
        || !(cfg->tone_hz >= 0) || !(cfg->mains_hz == 0 || cfg->mains_hz == 50 || cfg->mains_hz == 60))
        return ML_EINVAL;
    if (ml_spectrum_segments(spec) == 0)
        return ML_ENOSIGNAL;
    const size_t nbins = ml_spectrum_nbins(spec), nfft = ml_spectrum_nfft(spec);
    const size_t lobe = ml_spectrum_lobe_bins(spec);
    const double enbw = ml_spectrum_enbw_bins(spec), bin_hz = rate / (double)nfft;

    *out = (ml_audio_result){0};
    out->bin_hz = bin_hz;
    out->band_lo_hz = cfg->band_lo_hz;
    out->band_hi_hz = cfg->band_hi_hz < nyq ? cfg->band_hi_hz : nyq;
    if (!(out->band_hi_hz > out->band_lo_hz))
        return ML_EINVAL;
    if (cfg->tone_hz > 0 && (cfg->tone_hz < out->band_lo_hz || cfg->tone_hz > out->band_hi_hz))
        return ML_EINVAL;

    size_t klo = (size_t)ceil(out->band_lo_hz / bin_hz), khi = (size_t)floor(out->band_hi_hz / bin_hz);
    if (khi > nbins - 1)
        khi = nbins - 1;
    if (klo < lobe)
        klo = lobe; /* DC and its lobe never count as signal or noise */
    if (klo + 2 * lobe + 1 > khi)
        return ML_EINVAL;

    double *psd = malloc(nbins * sizeof *psd);
    unsigned char *m = malloc(nbins);
    if (psd == NULL || m == NULL) {
        free(psd);
        free(m);
        return ML_ENOMEM;
    }
    ml_status st = ml_spectrum_get_psd(spec, psd, nbins);
    if (st != ML_OK)
        goto done;
    for (size_t k = 0; k < nbins; k++)
        m[k] = (k < lobe) ? BIN_DC : (k < klo || k > khi) ? BIN_OUT : BIN_NOISE;

    /* Band power B (bins above DC) */
    double band = 0.0;
    size_t nband = 0;
    for (size_t k = klo; k <= khi; k++) {
        band += psd[k];
        nband++;
    }
    if (!(band > 0)) {
        st = ML_ENOSIGNAL;
        goto done;
    }

    /* Fundamental: strongest bin in the band, or near the requested tone */
    size_t s_lo = klo, s_hi = khi;
    if (cfg->tone_hz > 0) {
        if (cfg->tone_hz < out->band_lo_hz || cfg->tone_hz > out->band_hi_hz) {
            st = ML_EINVAL;
            goto done;
        }
        size_t c = nearest_bin(cfg->tone_hz, bin_hz);
        s_lo = c > lobe ? c - lobe : 0;
        s_hi = c + lobe;
        if (s_lo < klo)
            s_lo = klo;
        if (s_hi > khi)
            s_hi = khi;
    }
    size_t kf = s_lo;
    for (size_t k = s_lo; k <= s_hi; k++)
        if (psd[k] > psd[kf])
            kf = k;
    if (kf == 0 || kf + 1 >= nbins) {
        st = ML_ENOSIGNAL;
        goto done;
    }
    st = ml_spectrum_get_frequency(spec, kf, &out->fundamental_hz);
    if (st != ML_OK)
        goto done;
    const double f1 = out->fundamental_hz;
    mark(m, nbins, kf, lobe, BIN_FUND);

    /* Harmonic bins (marked before the noise estimate so they are excluded from it) */
    size_t hbin[ML_MAX_HARMONICS];
    for (int h = 2; h <= cfg->harmonics; h++) {
        double fh = h * f1;
        if (fh > out->band_hi_hz || fh >= nyq)
            break;
        size_t c = nearest_bin(fh, bin_hz);
        if (c > khi)
            break;
        hbin[out->nharmonics] = c;
        out->harmonics[out->nharmonics] = (ml_component){.order = h, .frequency_hz = fh};
        out->nharmonics++;
        mark(m, nbins, c, lobe, BIN_HARM);
    }

    /* Noise density per bin from the remaining band bins */
    double nsum = 0.0;
    size_t ncount = 0;
    for (size_t k = klo; k <= khi; k++)
        if (m[k] == BIN_NOISE) {
            nsum += psd[k];
            ncount++;
        }
    const double nd_bin = ncount ? nsum / (double)ncount : 0.0;
    out->noise_density = nd_bin / enbw;
    out->noise_power = nd_bin * (double)nband / enbw;
    out->band_power = band / enbw;

    out->fundamental_power = component_power(psd, nbins, kf, lobe, enbw);
    if (!(out->fundamental_power > 0)) {
        st = ML_ENOSIGNAL;
        goto done;
    }
    for (size_t i = 0; i < out->nharmonics; i++) {
        out->harmonics[i].power = component_power(psd, nbins, hbin[i], lobe, enbw);
        out->distortion_power += out->harmonics[i].power;
    }

    measure_hum(psd, m, nbins, lobe, enbw, bin_hz, cfg->mains_hz, cfg->hum_harmonics, out);
    st = ML_OK;
done:
    free(psd);
    free(m);
    return st;
}
