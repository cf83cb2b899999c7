/* Measurements on the spectrum of the captured RF/IF signal.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [sm328] Recommendation ITU-R SM.328, Spectra and bandwidth of emissions (occupied bandwidth:
 *     beta/2 = 0.5 % of the total mean power outside each band edge).
 */
#include "dsp/rf.h"

#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdlib.h>

#include "dsp/internal.h"
#include "dsp/order.h"

/* Lines one CNR measurement may leave out on each side: harmonics and hum multiples. */
#define ML_RF_MAX_EXCLUDED 160

/* Signed frequency of bin k and the bin of a frequency (nearest), for real or complex spectra. */
static double bin_hz(const ml_spectrum *s)
{
    return ml_spectrum_rate_hz(s) / (double)ml_spectrum_nfft(s);
}

static bool freq_to_bin(const ml_spectrum *s, double f, size_t *k)
{
    const size_t nfft = ml_spectrum_nfft(s), nbins = ml_spectrum_nbins(s);
    long long b = llround(f / bin_hz(s));
    if (ml_spectrum_is_complex(s)) {
        if (b < -(long long)(nfft / 2) || b >= (long long)(nfft / 2))
            return false;
        *k = (size_t)(b < 0 ? b + (long long)nfft : b);
        return true;
    }
    if (b < 0 || b >= (long long)nbins)
        return false;
    *k = (size_t)b;
    return true;
}

/* Bins in ascending frequency order: index i -> bin. */
static size_t ordered(const ml_spectrum *s, size_t i)
{
    const size_t nfft = ml_spectrum_nfft(s);
    if (!ml_spectrum_is_complex(s))
        return i;
    return (i + nfft / 2) % nfft;
}

static double lobe_power(const ml_spectrum *s, const double *acc, size_t k, double norm)
{
    const size_t nbins = ml_spectrum_nbins(s), lobe = ml_spectrum_lobe_bins(s);
    const bool cplx = ml_spectrum_is_complex(s);
    double sum = 0.0;
    for (long long d = -(long long)lobe; d <= (long long)lobe; d++) {
        long long j = (long long)k + d;
        if (cplx)
            j = (j % (long long)nbins + (long long)nbins) % (long long)nbins;
        else if (j < 0 || j >= (long long)nbins)
            continue;
        sum += acc[j];
    }
    return sum * norm;
}

/* 1 / (segments * ENBW): turns sums of accumulated bins into power */
static double norm_of(const ml_spectrum *s)
{
    return 1.0 / ((double)ml_spectrum_segments(s) * ml_spectrum_enbw_bins(s));
}

ml_status ml_rf_find_peak(const ml_spectrum *s, double lo_hz, double hi_hz, double *hz, double *amplitude)
{
    if (s == NULL || hz == NULL || amplitude == NULL || !(hi_hz >= lo_hz))
        return ML_EINVAL;
    if (ml_spectrum_segments(s) == 0)
        return ML_ENOSIGNAL;
    const double *acc = ml_spectrum_sum(s);
    const size_t nbins = ml_spectrum_nbins(s), lobe = ml_spectrum_lobe_bins(s);
    const bool cplx = ml_spectrum_is_complex(s);
    size_t best = SIZE_MAX;
    for (size_t i = 0; i < nbins; i++) {
        size_t k = ordered(s, i);
        double f = ml_spectrum_bin_hz(s, k);
        if (f < lo_hz || f > hi_hz)
            continue;
        if (!cplx && (k < lobe || k + 1 >= nbins))
            continue;
        if (best == SIZE_MAX || acc[k] > acc[best])
            best = k;
    }
    if (best == SIZE_MAX)
        return ML_EINVAL;
    if (!(acc[best] > 0))
        return ML_ENOSIGNAL;
    ml_status st = ml_spectrum_get_frequency(s, best, hz);
    if (st != ML_OK)
        return st;
    *amplitude = sqrt(lobe_power(s, acc, best, norm_of(s)) / ml_spectrum_full_scale_power(s));
    return ML_OK;
}

double ml_rf_amplitude(const ml_spectrum *s, double f_hz)
{
    size_t k;
    if (s == NULL || ml_spectrum_segments(s) == 0 || !freq_to_bin(s, f_hz, &k))
        return 0.0;
    return sqrt(lobe_power(s, ml_spectrum_sum(s), k, norm_of(s)) / ml_spectrum_full_scale_power(s));
}

double ml_rf_band_power(const ml_spectrum *s, double lo_hz, double hi_hz)
{
    if (s == NULL || ml_spectrum_segments(s) == 0)
        return 0.0;
    const double *acc = ml_spectrum_sum(s);
    const size_t nbins = ml_spectrum_nbins(s);
    double sum = 0.0;
    for (size_t k = 0; k < nbins; k++) {
        double f = ml_spectrum_bin_hz(s, k);
        if (f >= lo_hz && f <= hi_hz)
            sum += acc[k];
    }
    return sum * norm_of(s);
}

ml_status ml_rf_occupied_bandwidth(const ml_spectrum *s, double fraction, double *lo_hz, double *hi_hz)
{
    if (s == NULL || lo_hz == NULL || hi_hz == NULL || !(fraction > 0 && fraction < 1))
        return ML_EINVAL;
    if (ml_spectrum_segments(s) == 0)
        return ML_ENOSIGNAL;
    const double *acc = ml_spectrum_sum(s);
    const size_t nbins = ml_spectrum_nbins(s);
    const size_t first = ml_spectrum_is_complex(s) ? 0 : ml_spectrum_lobe_bins(s);
    double total = 0.0;
    for (size_t i = first; i < nbins; i++)
        total += acc[ordered(s, i)];
    if (!(total > 0))
        return ML_ENOSIGNAL;
    const double tail = 0.5 * (1.0 - fraction) * total, bw = bin_hz(s);
    /* lower edge: cumulative power from below reaches the tail share */
    double cum = 0.0;
    *lo_hz = ml_spectrum_bin_hz(s, ordered(s, first));
    for (size_t i = first; i < nbins; i++) {
        size_t k = ordered(s, i);
        if (cum + acc[k] >= tail) {
            double part = acc[k] > 0 ? (tail - cum) / acc[k] : 0.0;
            *lo_hz = ml_spectrum_bin_hz(s, k) - 0.5 * bw + part * bw;
            break;
        }
        cum += acc[k];
    }
    cum = 0.0;
    *hi_hz = ml_spectrum_bin_hz(s, ordered(s, nbins - 1));
    for (size_t i = nbins; i-- > first;) {
        size_t k = ordered(s, i);
        if (cum + acc[k] >= tail) {
            double part = acc[k] > 0 ? (tail - cum) / acc[k] : 0.0;
            *hi_hz = ml_spectrum_bin_hz(s, k) + 0.5 * bw - part * bw;
            break;
        }
        cum += acc[k];
    }
    return ML_OK;
}

/* Mask limit (dBc) at offset d >= first point; linear between points, later point at ties. */
static double mask_at(const ml_mask *m, double d)
{
    size_t n = m->npoints;
    if (d >= m->offset_hz[n - 1])
        return m->dbc[n - 1];
    for (size_t i = n - 1; i-- > 0;) {
        if (d >= m->offset_hz[i]) {
            double span = m->offset_hz[i + 1] - m->offset_hz[i];
            if (span <= 0)
                return m->dbc[i + 1];
            return m->dbc[i] + (m->dbc[i + 1] - m->dbc[i]) * (d - m->offset_hz[i]) / span;
        }
    }
    return m->dbc[0];
}

ml_status ml_rf_mask_margin(const ml_spectrum *s, double carrier_hz, double carrier_power,
                            const ml_mask *mask, double *margin_db, double *worst_offset_hz)
{
    if (s == NULL || mask == NULL || margin_db == NULL || worst_offset_hz == NULL || mask->npoints < 1
        || mask->npoints > ML_MASK_MAX_POINTS || !(carrier_power > 0) || !(mask->rbw_hz > 0))
        return ML_EINVAL;
    if (ml_spectrum_segments(s) == 0)
        return ML_ENOSIGNAL;
    const double *acc = ml_spectrum_sum(s);
    const size_t nbins = ml_spectrum_nbins(s);
    const double bw = bin_hz(s), norm = norm_of(s);
    const size_t half = (size_t)floor(0.5 * mask->rbw_hz / bw);
    const size_t dc = ml_spectrum_is_complex(s) ? 0 : ml_spectrum_lobe_bins(s);
    /* sliding rbw sum over bins in frequency order */
    double win = 0.0;
    size_t lo = dc, hi = dc; /* the window covers ordered indices [lo, hi); both only move up */
    bool any = false;
    double worst = INFINITY, worst_off = 0.0;
    for (size_t i = dc; i < nbins; i++) {
        const size_t want_lo = i >= dc + half ? i - half : dc;
        const size_t want_hi = i + half + 1 < nbins ? i + half + 1 : nbins;
        while (hi < want_hi)
            win += acc[ordered(s, hi++)];
        while (lo < want_lo)
            win -= acc[ordered(s, lo++)];
        const double f = ml_spectrum_bin_hz(s, ordered(s, i));
        const double d = fabs(f - carrier_hz);
        if (d < mask->offset_hz[0] || d > mask->offset_hz[mask->npoints - 1] + 0.5 * bw)
            continue;
        const double level = ml_db10(fmax(win, 0.0) * norm / carrier_power);
        const double margin = mask_at(mask, d) - level;
        any = true;
        if (margin < worst) {
            worst = margin;
            worst_off = f - carrier_hz;
        }
    }
    if (!any)
        return ML_ENOSIGNAL;
    *margin_db = worst;
    *worst_offset_hz = worst_off;
    return ML_OK;
}

/* The bins k0 .. k1 - 1 (ascending) whose frequencies lie in [lo_hz, hi_hz], within the index
 * range [first, last) of one monotonic run of bin frequencies (a real spectrum has one run, a
 * complex one two: the non-negative frequencies, then the negative ones). */
static void band_bins(const ml_spectrum *s, double lo_hz, double hi_hz, size_t first, size_t last, size_t *k0,
                      size_t *k1)
{
    size_t a = first, b = last;
    while (a < b && ml_spectrum_bin_hz(s, a) < lo_hz)
        a++;
    while (b > a && ml_spectrum_bin_hz(s, b - 1) > hi_hz)
        b--;
    *k0 = a;
    *k1 = b;
}

ml_status ml_rf_noise_density(const ml_spectrum *s, double lo_hz, double hi_hz, const double *exclude,
                              size_t nexclude, double *per_bin)
{
    if (s == NULL || per_bin == NULL || (nexclude > 0 && exclude == NULL) || !(hi_hz > lo_hz))
        return ML_EINVAL;
    if (ml_spectrum_segments(s) == 0)
        return ML_ENOSIGNAL;
    const double *acc = ml_spectrum_sum(s);
    const size_t nbins = ml_spectrum_nbins(s), lobe = ml_spectrum_lobe_bins(s);
    const double bw = bin_hz(s);
    const bool cplx = ml_spectrum_is_complex(s);
    /* the bins of the band in ascending index order (the order of the sums), run by run */
    size_t runs[2][2], nruns = 0;
    band_bins(s, lo_hz, hi_hz, cplx ? 0 : lobe, cplx ? nbins / 2 : nbins, &runs[0][0], &runs[0][1]);
    nruns = 1;
    if (cplx) {
        band_bins(s, lo_hz, hi_hz, nbins / 2, nbins, &runs[1][0], &runs[1][1]);
        nruns = 2;
    }
    double sum = 0.0;
    size_t count = 0;
    for (size_t r = 0; r < nruns; r++)
        for (size_t k = runs[r][0]; k < runs[r][1]; k++) {
            const double f = ml_spectrum_bin_hz(s, k);
            bool skip = false;
            for (size_t j = 0; j < nexclude && !skip; j++)
                skip = fabs(f - exclude[j]) <= ((double)lobe + 0.5) * bw;
            if (skip)
                continue;
            sum += acc[k];
            count++;
        }
    if (count == 0)
        return ML_ENOSIGNAL;
    *per_bin = sum * norm_of(s) / (double)count;
    return ML_OK;
}

double ml_rf_cnr_db(const ml_spectrum *s, double f_car_hz, double p_car, double bw_hz, double fm_hz,
                    int harmonics, double mains_hz, int hum_harmonics)
{
    double excl[1 + 2 * ML_RF_MAX_EXCLUDED];
    size_t nex = 0;
    excl[nex++] = f_car_hz;
    for (int h = 1;
         fm_hz > 0 && h <= harmonics && h * fm_hz <= bw_hz && nex + 2 <= sizeof excl / sizeof *excl; h++) {
        excl[nex++] = f_car_hz + h * fm_hz;
        excl[nex++] = f_car_hz - h * fm_hz;
    }
    for (int h = 1; mains_hz > 0 && h <= hum_harmonics && nex + 2 <= sizeof excl / sizeof *excl; h++) {
        excl[nex++] = f_car_hz + h * mains_hz;
        excl[nex++] = f_car_hz - h * mains_hz;
    }
    double nd = 0;
    if (s == NULL || ml_rf_noise_density(s, f_car_hz - bw_hz, f_car_hz + bw_hz, excl, nex, &nd) != ML_OK
        || !(nd > 0))
        return NAN;
    return 10 * log10(p_car / (nd * 2 * bw_hz / bin_hz(s)));
}

double ml_rf_line_prominence_db(const ml_spectrum *s, double f_hz)
{
    size_t k;
    if (s == NULL || ml_spectrum_segments(s) == 0 || !freq_to_bin(s, f_hz, &k))
        return NAN;
    const double *acc = ml_spectrum_sum(s);
    const size_t nbins = ml_spectrum_nbins(s), lobe = ml_spectrum_lobe_bins(s);
    const bool cplx = ml_spectrum_is_complex(s);
    double around[2 * ML_RF_PROMINENCE_BINS];
    size_t n = 0;
    for (long long d = (long long)lobe + 1; d <= (long long)(lobe + ML_RF_PROMINENCE_BINS); d++)
        for (int side = -1; side <= 1; side += 2) {
            long long j = (long long)k + side * d;
            if (cplx) {
                if (d >= (long long)nbins / 2)
                    continue;
                j = (j % (long long)nbins + (long long)nbins) % (long long)nbins;
            } else if (j < (long long)lobe || j >= (long long)nbins) {
                continue;
            }
            around[n++] = acc[j];
        }
    if (n == 0)
        return NAN;
    const double med = ml_order_median(around, n);
    const double p = lobe_power(s, acc, k, 1.0);
    if (!(med > 0))
        return p > 0 ? INFINITY : NAN;
    return 10.0 * log10(p / (med * (double)(2 * lobe + 1)));
}
