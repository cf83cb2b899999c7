/* Welch-averaged power spectrum with segment cross-spectrum for frequency estimation.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [welch:1967] P. D. Welch, "The use of fast Fourier transform for the estimation of power
 *     spectra", IEEE Trans. Audio Electroacoust. 15(2):70-73, 1967.
 * [heinzel:2002] see dsp/window.c (scaling of power spectra, sec. 9; ENBW).
 * [flanagan:1966] J. L. Flanagan, R. M. Golden, "Phase vocoder", Bell Syst. Tech. J. 45:1493-1509,
 *     1966 (frequency from the phase advance of a DFT bin between overlapping frames).
 */
#include "dsp/spectrum.h"

#include <assert.h>
#include <complex.h>
#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/internal.h"

struct ml_spectrum {
    ml_spectrum_config cfg;
    size_t nbins;
    double *win;        /* nfft window values                                   */
    double *buf;        /* nfft most recent samples, oldest first                */
    size_t fill;        /* valid samples in buf                                  */
    double *in;         /* FFT input (windowed segment)                          */
    fftw_complex *out;  /* FFT output                                            */
    fftw_complex *prev; /* previous segment's spectrum                           */
    fftw_complex *xacc; /* sum over segments of X_i * conj(X_{i-1})              */
    double *acc;        /* sum over segments of scaled |X|^2                     */
    double scale;       /* 2 / (sum w)^2                                         */
    double enbw;
    size_t segments;
    fftw_plan plan;
};

ml_spectrum_config ml_spectrum_config_default(double rate_hz)
{
    ml_spectrum_config c = {.nfft = 1024, .hop = 512, .window = ML_WINDOW_HFT248D, .rate_hz = rate_hz};
    if (rate_hz > 0) {
        while (c.nfft < ((size_t)1 << 18) && rate_hz / (double)c.nfft > 0.75)
            c.nfft *= 2;
        c.hop = c.nfft / 2;
    }
    return c;
}

static int is_pow2(size_t n)
{
    return n != 0 && (n & (n - 1)) == 0;
}

ml_status ml_spectrum_create(const ml_spectrum_config *cfg, ml_spectrum **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !is_pow2(cfg->nfft) || cfg->nfft < 16 || cfg->nfft > ((size_t)1 << 24)
        || cfg->hop == 0 || cfg->hop > cfg->nfft || !(cfg->rate_hz > 0) || !isfinite(cfg->rate_hz)
        || (unsigned)cfg->window >= ML_WINDOW_COUNT)
        return ML_EINVAL;
    ml_status st = ML_ENOMEM;
    ml_spectrum *q = calloc(1, sizeof *q);
    if (q == NULL)
        return st;
    q->cfg = *cfg;
    q->nbins = cfg->nfft / 2 + 1;
    q->win = malloc(cfg->nfft * sizeof *q->win);
    q->buf = malloc(cfg->nfft * sizeof *q->buf);
    q->in = fftw_alloc_real(cfg->nfft);
    q->out = fftw_alloc_complex(q->nbins);
    q->prev = fftw_alloc_complex(q->nbins);
    q->xacc = fftw_alloc_complex(q->nbins);
    q->acc = malloc(q->nbins * sizeof *q->acc);
    if (q->win == NULL || q->buf == NULL || q->in == NULL || q->out == NULL || q->prev == NULL
        || q->xacc == NULL || q->acc == NULL)
        goto fail;
    st = ML_EFFT;
    q->plan = fftw_plan_dft_r2c_1d((int)cfg->nfft, q->in, q->out, FFTW_ESTIMATE);
    if (q->plan == NULL)
        goto fail;
    ml_window_fill(cfg->window, q->win, cfg->nfft);
    double s = 0.0;
    for (size_t i = 0; i < cfg->nfft; i++)
        s += q->win[i];
    q->scale = 2.0 / (s * s);
    q->enbw = ml_window_enbw_bins(q->win, cfg->nfft);
    ml_spectrum_reset(q);
    *out = q;
    return ML_OK;
fail:
    ml_spectrum_destroy(q);
    return st;
}

void ml_spectrum_destroy(ml_spectrum *q)
{
    if (q == NULL)
        return;
    if (q->plan != NULL)
        fftw_destroy_plan(q->plan);
    free(q->win);
    free(q->buf);
    fftw_free(q->in);
    fftw_free(q->out);
    fftw_free(q->prev);
    fftw_free(q->xacc);
    free(q->acc);
    free(q);
}

void ml_spectrum_reset(ml_spectrum *q)
{
    if (q == NULL)
        return;
    q->fill = 0;
    q->segments = 0;
    memset(q->acc, 0, q->nbins * sizeof *q->acc);
    memset(q->xacc, 0, q->nbins * sizeof *q->xacc);
}

/* Transform the full buffer: accumulate power and the cross-spectrum with the previous segment. */
static void transform(ml_spectrum *q)
{
    const size_t n = q->cfg.nfft;
    for (size_t i = 0; i < n; i++)
        q->in[i] = q->buf[i] * q->win[i];
    fftw_execute(q->plan);
    for (size_t k = 0; k < q->nbins; k++) {
        double re = creal(q->out[k]), im = cimag(q->out[k]);
        double p = (re * re + im * im) * q->scale;
        q->acc[k] += (k == 0 || k == q->nbins - 1) ? 0.5 * p : p;
    }
    if (q->segments > 0)
        for (size_t k = 0; k < q->nbins; k++)
            q->xacc[k] += q->out[k] * conj(q->prev[k]);
    memcpy(q->prev, q->out, q->nbins * sizeof *q->out);
    q->segments++;
    /* keep the last nfft - hop samples as the start of the next segment */
    memmove(q->buf, q->buf + q->cfg.hop, (n - q->cfg.hop) * sizeof *q->buf);
    q->fill = n - q->cfg.hop;
}

#define PUSH_BODY                                                                                  \
    if (q == NULL || (x == NULL && n > 0))                                                         \
        return ML_EINVAL;                                                                          \
    size_t i = 0;                                                                                  \
    while (i < n) {                                                                                \
        size_t take = q->cfg.nfft - q->fill;                                                       \
        if (take > n - i)                                                                          \
            take = n - i;                                                                          \
        for (size_t j = 0; j < take; j++)                                                          \
            q->buf[q->fill + j] = (double)x[i + j];                                                \
        q->fill += take;                                                                           \
        i += take;                                                                                 \
        if (q->fill == q->cfg.nfft)                                                                \
            transform(q);                                                                          \
    }                                                                                              \
    return ML_OK;

ml_status ml_spectrum_push(ml_spectrum *q, const float *x, size_t n)
{
    PUSH_BODY
}

ml_status ml_spectrum_push_double(ml_spectrum *q, const double *x, size_t n)
{
    PUSH_BODY
}

size_t ml_spectrum_segments(const ml_spectrum *q)
{
    return q ? q->segments : 0;
}

size_t ml_spectrum_nfft(const ml_spectrum *q)
{
    return q ? q->cfg.nfft : 0;
}

size_t ml_spectrum_nbins(const ml_spectrum *q)
{
    return q ? q->nbins : 0;
}

double ml_spectrum_rate_hz(const ml_spectrum *q)
{
    return q ? q->cfg.rate_hz : 0.0;
}

double ml_spectrum_enbw_bins(const ml_spectrum *q)
{
    return q ? q->enbw : 0.0;
}

size_t ml_spectrum_lobe_bins(const ml_spectrum *q)
{
    return q ? ml_window_terms(q->cfg.window) + 1 : 0;
}

ml_window_type ml_spectrum_window(const ml_spectrum *q)
{
    return q ? q->cfg.window : ML_WINDOW_COUNT;
}

ml_status ml_spectrum_get_psd(const ml_spectrum *q, double *psd, size_t nbins)
{
    if (q == NULL || psd == NULL || nbins != q->nbins)
        return ML_EINVAL;
    if (q->segments == 0)
        return ML_ENOSIGNAL;
    for (size_t k = 0; k < nbins; k++)
        psd[k] = q->acc[k] / (double)q->segments;
    return ML_OK;
}

const double *ml_spectrum_sum(const ml_spectrum *q)
{
    return q ? q->acc : NULL;
}

ml_status ml_spectrum_get_frequency(const ml_spectrum *q, size_t k, double *hz)
{
    if (q == NULL || hz == NULL || k == 0 || k + 1 >= q->nbins)
        return ML_EINVAL;
    if (q->segments == 0)
        return ML_ENOSIGNAL;
    const double n = (double)q->cfg.nfft, hop = (double)q->cfg.hop;
    double delta;
    if (q->segments >= 2 && cabs(q->xacc[k]) > 0) {
        /* X_i[k] advances by 2 pi f hop / fs per segment [flanagan:1966]; the bin centre accounts
         * for 2 pi k hop / n of it, the rest is the offset delta (in bins) from the centre. */
        double dphi = carg(q->xacc[k]) - 2.0 * ML_PI * (double)k * hop / n;
        dphi = remainder(dphi, 2.0 * ML_PI);
        delta = dphi * n / (2.0 * ML_PI * hop);
    } else {
        /* Parabolic interpolation of log power around the peak: coarse, one segment only. */
        double a = ml_db10(q->acc[k - 1]), b = ml_db10(q->acc[k]), c = ml_db10(q->acc[k + 1]);
        double den = a - 2.0 * b + c;
        delta = den != 0.0 ? 0.5 * (a - c) / den : 0.0;
        if (delta > 0.5)
            delta = 0.5;
        if (delta < -0.5)
            delta = -0.5;
    }
    *hz = ((double)k + delta) * q->cfg.rate_hz / n;
    return ML_OK;
}
