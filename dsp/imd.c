/* Intermodulation distortion (SMPTE/DIN sidebands and difference-frequency) from a Welch spectrum.
 * SPDX-License-Identifier: MIT
 *
 * References (docs/references.md 5, 10 item 9 and 12):
 * [rp120] SMPTE RP120: 60 Hz + 7 kHz at 4:1; IMD as the r.s.s. of the sidebands over the high tone.
 * [iec60268-3] IEC 60268-3 14.12.7 (modulation distortion d2, d3: arithmetic sums per order over
 *     U(fh)) and 14.12.8.1 (difference-frequency distortion over 2 U(f2)).
 * [din45403] DIN 45403: 250 Hz + 8 kHz at 4:1.
 */
#include "dsp/imd.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/internal.h"
#include "dsp/order.h"

ml_imd_config ml_imd_config_default(void)
{
    return (ml_imd_config){.method = ML_IMD_AUTO, .smpte_orders = 3, .noise_margin_db = 6.0};
}

const char *ml_imd_method_name(ml_imd_method m)
{
    static const char *const names[ML_IMD_METHOD_COUNT] = {"auto", "smpte", "dfd"};
    return (unsigned)m < ML_IMD_METHOD_COUNT ? names[m] : "unknown";
}

typedef struct {
    const double *psd;
    size_t nbins, lobe;
    double enbw, bin_hz;
    unsigned char *mask; /* 1: a tone's or product's lobe (not noise) */
} spec_view;

static double lobe_power(const spec_view *v, size_t c)
{
    const size_t lo = c > v->lobe ? c - v->lobe : 0, hi = c + v->lobe < v->nbins ? c + v->lobe : v->nbins - 1;
    double s = 0.0;
    for (size_t k = lo; k <= hi; k++)
        s += v->psd[k];
    return s / v->enbw;
}

/* Nearest bin of hz when its lobe lies clear of DC's lobe and of Nyquist; else SIZE_MAX. */
static size_t usable_bin(const spec_view *v, double hz)
{
    if (!(hz > 0) || !isfinite(hz))
        return (size_t)-1;
    const double c = floor(hz / v->bin_hz + 0.5);
    if (c < (double)(2 * v->lobe) || c + (double)v->lobe >= (double)v->nbins)
        return (size_t)-1;
    return (size_t)c;
}

static void mark(const spec_view *v, double hz)
{
    const size_t c = usable_bin(v, hz);
    if (c == (size_t)-1)
        return;
    for (size_t k = c - v->lobe; k <= c + v->lobe; k++)
        v->mask[k] = 1;
}

/* Noise power a lobe at bin c would hold: mean of the unmasked bins within +-8 lobes (or +-32), times
 * the lobe's bin count, over ENBW. 0 when no free bin is near. */
static double noise_lobe_power(const spec_view *v, size_t c)
{
    for (size_t span = 8; span <= 32; span *= 4) {
        const size_t w = span * v->lobe;
        const size_t lo = c > w ? c - w : 0, hi = c + w < v->nbins ? c + w : v->nbins - 1;
        double s = 0.0;
        size_t cnt = 0;
        for (size_t k = lo; k <= hi; k++)
            if (!v->mask[k] && k >= v->lobe) {
                s += v->psd[k];
                cnt++;
            }
        if (cnt >= v->lobe)
            return s / (double)cnt * (double)(2 * v->lobe + 1) / v->enbw;
    }
    return 0.0;
}

/* Strongest component (local maximum, by lobe power) in bins [lo, hi], skipping bins within 2 lobes of
 * `avoid` (SIZE_MAX: none). SIZE_MAX when none. */
static size_t strongest(const spec_view *v, size_t lo, size_t hi, size_t avoid)
{
    size_t best = (size_t)-1;
    double bp = -1.0;
    if (lo < 2 * v->lobe)
        lo = 2 * v->lobe;
    if (hi + v->lobe >= v->nbins)
        hi = v->nbins - 1 - v->lobe;
    for (size_t k = lo; k <= hi && k < v->nbins; k++) {
        if (avoid != (size_t)-1 && (k > avoid ? k - avoid : avoid - k) <= 2 * v->lobe)
            continue;
        if (v->psd[k] < v->psd[k - 1] || v->psd[k] < v->psd[k + 1])
            continue;
        const double p = lobe_power(v, k);
        if (p > bp) {
            bp = p;
            best = k;
        }
    }
    return best;
}

/* Bin of the strongest component within +-lobe of hz (SIZE_MAX if none usable). */
static size_t tone_near(const spec_view *v, double hz)
{
    const size_t c = usable_bin(v, hz);
    if (c == (size_t)-1)
        return c;
    size_t best = c;
    for (size_t k = c - v->lobe; k <= c + v->lobe; k++)
        if (v->psd[k] > v->psd[best])
            best = k;
    return best;
}

/* Measures one product; returns 0 if skipped. */
static int product(const spec_view *v, double hz, int n, double margin, ml_imd_product *p)
{
    const size_t c = usable_bin(v, hz);
    if (c == (size_t)-1)
        return 0;
    const double pw = lobe_power(v, c), nz = noise_lobe_power(v, c);
    *p = (ml_imd_product){.frequency_hz = hz, .n = n, .amplitude = sqrt(2.0 * pw),
                          .noise_amplitude = sqrt(2.0 * nz),
                          .upper_bound = !(pw > nz * pow(10.0, margin / 10.0))}; /* 0 over 0 too */
    return 1;
}

/* A figure is a bound when its bounded products carry more than half of it, or when it is zero
 * and made of products (all of them then below the noise, which may be zero too). */
static bool mostly_bound(double bound, double sum, size_t nproducts)
{
    return bound > 0.5 * sum || (sum == 0 && nproducts > 0);
}

/* The noise power a lobe holds from the median density of the bins above DC's lobe (lines are too
 * few to move the median); NAN when it cannot be formed (no memory, too few bins). */
static double median_noise_lobe(const spec_view *v)
{
    if (v->nbins <= 3 * v->lobe)
        return NAN;
    const size_t n = v->nbins - 2 * v->lobe;
    double *tmp = malloc(n * sizeof *tmp);
    if (tmp == NULL)
        return NAN;
    memcpy(tmp, v->psd + 2 * v->lobe, n * sizeof *tmp);
    const double med = ml_order_median(tmp, n);
    free(tmp);
    return med * (double)(2 * v->lobe + 1) / v->enbw;
}

/* Checks a forced frequency pair. */
static bool pair_ok(double f1, double f2, double nyq)
{
    if (f1 == 0 && f2 == 0)
        return true;
    return f1 > 0 && f2 > f1 && f2 < nyq && isfinite(f2);
}

ml_status ml_imd_analyze(const ml_spectrum *spec, const ml_imd_config *cfg, ml_imd_result *out)
{
    if (spec == NULL || cfg == NULL || out == NULL || ml_spectrum_is_complex(spec))
        return ML_EINVAL;
    const double rate = ml_spectrum_rate_hz(spec), nyq = rate / 2.0;
    if ((unsigned)cfg->method >= ML_IMD_METHOD_COUNT || cfg->smpte_orders < 1
        || cfg->smpte_orders > ML_IMD_MAX_ORDER || !(cfg->noise_margin_db >= 0 && cfg->noise_margin_db <= 40)
        || !pair_ok(cfg->f1_hz, cfg->f2_hz, nyq))
        return ML_EINVAL;
    if (ml_spectrum_segments(spec) == 0)
        return ML_ENOSIGNAL;
    const size_t nbins = ml_spectrum_nbins(spec);
    double *psd = malloc(nbins * sizeof *psd);
    unsigned char *mask = calloc(nbins, 1);
    ml_status st = ML_ENOMEM;
    if (psd == NULL || mask == NULL)
        goto done;
    if ((st = ml_spectrum_get_psd(spec, psd, nbins)) != ML_OK)
        goto done;
    const spec_view v = {psd, nbins, ml_spectrum_lobe_bins(spec), ml_spectrum_enbw_bins(spec),
                         rate / (double)ml_spectrum_nfft(spec), mask};

    /* The two tones */
    size_t ka, kb;
    if (cfg->f1_hz > 0) {
        ka = tone_near(&v, cfg->f1_hz);
        kb = tone_near(&v, cfg->f2_hz);
    } else {
        ka = strongest(&v, 0, nbins - 1, (size_t)-1);
        kb = ka == (size_t)-1 ? ka : strongest(&v, 0, nbins - 1, ka);
    }
    st = ML_ENOSIGNAL;
    if (ka == (size_t)-1 || kb == (size_t)-1 || ka == kb)
        goto done;
    if (ka > kb) {
        const size_t t = ka;
        ka = kb;
        kb = t;
    }
    *out = (ml_imd_result){0};
    out->smpte_pct = out->smpte_d2_pct = out->smpte_d3_pct = out->dfd2_pct = out->dfd3_pct = NAN;
    if ((st = ml_spectrum_get_frequency(spec, ka, &out->f1_hz)) != ML_OK
        || (st = ml_spectrum_get_frequency(spec, kb, &out->f2_hz)) != ML_OK)
        goto done;
    out->u1 = sqrt(2.0 * lobe_power(&v, ka));
    out->u2 = sqrt(2.0 * lobe_power(&v, kb));
    st = ML_ENOSIGNAL;
    if (!(out->u1 > 0) || !(out->u2 > 0))
        goto done;
    out->ratio_db = 20.0 * log10(out->u1 / out->u2);

    ml_imd_method m = cfg->method;
    if (m == ML_IMD_AUTO) {
        out->detected = true;
        const double f1 = out->f1_hz, f2 = out->f2_hz;
        /* a test signal's tones stand clear of the noise (not two peaks of noise) */
        const double nl = median_noise_lobe(&v), clear = pow(10.0, ML_IMD_CLEAR_DB / 10.0);
        if (!(out->u1 * out->u1 / 2.0 > clear * nl && out->u2 * out->u2 / 2.0 > clear * nl))
            goto done; /* ML_ENOSIGNAL */
        if (f1 < 500.0 && f2 > 3000.0 && out->ratio_db >= 6.0 && out->ratio_db <= 18.0)
            m = ML_IMD_SMPTE;
        else if (fabs(out->ratio_db) <= 3.0 && f2 - f1 <= f2 / 4.0)
            m = ML_IMD_DFD;
        else
            goto done; /* ML_ENOSIGNAL: no IMD test signal */
    }
    out->method = m;
    const double f1 = out->f1_hz, f2 = out->f2_hz, margin = cfg->noise_margin_db;

    /* Lobes that are not noise: both tones, every product up to the highest order, tone harmonics */
    mark(&v, f1);
    mark(&v, f2);
    for (int n = 1; n <= ML_IMD_MAX_ORDER + 2; n++) {
        mark(&v, f2 - n * f1);
        mark(&v, f2 + n * f1);
        mark(&v, (n + 1) * f1);
        mark(&v, (n + 1) * f2);
        mark(&v, (n + 1) * f1 - n * f2);
        mark(&v, (n + 1) * f2 - n * f1);
    }
    mark(&v, f2 - f1);

    ml_imd_product *p = out->products;
    if (m == ML_IMD_SMPTE) {
        out->smpte_orders = cfg->smpte_orders;
        double sum2 = 0.0, bound2 = 0.0, d[2] = {0, 0}, dbound[2] = {0, 0};
        size_t nd[2] = {0, 0};
        for (int n = 1; n <= cfg->smpte_orders; n++)
            for (int sgn = -1; sgn <= 1; sgn += 2) {
                if (!product(&v, f2 + sgn * n * f1, sgn * n, margin, &p[out->nproducts])) {
                    out->nskipped++;
                    continue;
                }
                const ml_imd_product *q = &p[out->nproducts++];
                sum2 += q->amplitude * q->amplitude;
                bound2 += q->upper_bound ? q->amplitude * q->amplitude : 0.0;
                if (n <= 2) {
                    nd[n - 1]++;
                    d[n - 1] += q->amplitude;
                    dbound[n - 1] += q->upper_bound ? q->amplitude : 0.0;
                }
            }
        out->smpte_pct = 100.0 * sqrt(sum2) / out->u2;
        out->smpte_d2_pct = 100.0 * d[0] / out->u2;
        out->smpte_d3_pct = 100.0 * d[1] / out->u2;
        out->smpte_upper_bound = mostly_bound(bound2, sum2, out->nproducts);
        out->smpte_d2_upper_bound = mostly_bound(dbound[0], d[0], nd[0]);
        out->smpte_d3_upper_bound = mostly_bound(dbound[1], d[1], nd[1]);
    } else {
        const struct {
            double hz;
            int n;
        } prods[3] = {{f2 - f1, 2}, {2 * f1 - f2, -3}, {2 * f2 - f1, 3}};
        double d[2] = {0, 0}, dbound[2] = {0, 0};
        size_t nd[2] = {0, 0};
        for (int i = 0; i < 3; i++) {
            if (!product(&v, prods[i].hz, prods[i].n, margin, &p[out->nproducts])) {
                out->nskipped++;
                continue;
            }
            const ml_imd_product *q = &p[out->nproducts++];
            const int o = i == 0 ? 0 : 1;
            nd[o]++;
            d[o] += q->amplitude;
            dbound[o] += q->upper_bound ? q->amplitude : 0.0;
        }
        out->dfd2_pct = 100.0 * d[0] / (2.0 * out->u2);
        out->dfd3_pct = 100.0 * d[1] / (2.0 * out->u2);
        out->dfd2_upper_bound = mostly_bound(dbound[0], d[0], nd[0]);
        out->dfd3_upper_bound = mostly_bound(dbound[1], d[1], nd[1]);
    }
    st = ML_OK;
done:
    free(psd);
    free(mask);
    return st;
}
