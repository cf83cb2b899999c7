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
    double *in;         /* FFT input (windowed segment), real input              */
    fftw_complex *cbuf; /* nfft most recent samples, complex input               */
    fftw_complex *cin;  /* FFT input, complex input                              */
    fftw_complex *out;  /* FFT output                                            */
    fftw_complex *prev; /* previous segment's spectrum                           */
    fftw_complex *xacc; /* sum over segments of X_i * conj(X_{i-1})              */
    double *acc;        /* sum over segments of scaled |X|^2                     */
    fftw_complex *xsel; /* the same over wholly tagged (selected) segments        */
    double *sel;
    size_t nsel;        /* selected segments                                     */
    int prev_sel;       /* the previous segment was selected                      */
    unsigned char *tags;/* tag of each sample in buf/cbuf                          */
    size_t ntagged;     /* tagged samples in the buffer                           */
    int use_sel;        /* getters read the selected accumulators                 */
    double scale;       /* 2 / (sum w)^2                                         */
    double enbw;
    size_t segments;
    fftw_plan plan;
    /* single precision (complex input only): the transform in float, accumulated in double */
    fftwf_complex *fcin, *fout, *fprev;
    float *fcbuf;       /* nfft most recent samples as (re, im) pairs (instead of cbuf)     */
    float *fwin;        /* the window in float                                           */
    fftwf_plan fplan;
    ml_spectrum_segment_fn hook; /* called after each transform, or NULL                */
    void *hook_ctx;
    double wsum;        /* sum w (remove_dc)                                        */
    double rho[4 * ML_MAX_WINDOW_TERMS];  /* |G(d)|^2 / G(0)^2, d = 0..2(K-1) (dof)       */
    size_t nrho;
    double *ovl;        /* squared overlap correlation at lags l hop, l = 1..novl (dof)     */
    size_t novl;
};

#define ML_MAX_OVERLAP_LAGS 1024

ml_spectrum_config ml_spectrum_config_default(double rate_hz)
{
    ml_spectrum_config c = {.nfft = 1024, .hop = 512, .window = ML_WINDOW_HFT248D, .rate_hz = rate_hz,
                            .complex_input = 0};
    if (rate_hz > 0) {
        while (c.nfft < ((size_t)1 << 18) && rate_hz / (double)c.nfft > 0.75)
            c.nfft *= 2;
        c.hop = c.nfft / 2;
    }
    return c;
}

/* The window's noise statistics for ml_spectrum_dof. The squared window of a K-term cosine window
 * is a (2K-1)-term cosine sum: with the two-sided coefficients a_{+-k} = (-1)^k c_k / 2 (a_0 = c_0)
 * of w, those of w^2 are b = a * a, and G(d) = sum_j w[j]^2 e^{-2 pi i d j / n} = n b_d, so
 * rho(d) = b_d^2 / b_0^2 (zero beyond 2(K-1)). The overlap correlation at lag s is
 * sum_j w[j] w[j+s] / sum w^2, summed here over at most 2048 evenly spaced j (the window is smooth,
 * and near zero at both ends: the rule's error is far below what the dof needs). */
static int noise_statistics(ml_spectrum *q)
{
    double c[ML_MAX_WINDOW_TERMS];
    const size_t nt = ml_window_coefficients(q->cfg.window, c, ML_MAX_WINDOW_TERMS);
    const int kk = (int)nt - 1;
    double a[2 * ML_MAX_WINDOW_TERMS - 1];
    for (int k = -kk; k <= kk; k++)
        a[k + kk] = k == 0 ? c[0] : ((k % 2 != 0) ? -0.5 : 0.5) * c[k < 0 ? -k : k];
    q->nrho = (size_t)(2 * kk + 1);
    double b0 = 0.0;
    for (int d = 0; d <= 2 * kk; d++) {
        double bd = 0.0;
        for (int k = -kk; k <= kk; k++) {
            const int j = d - k;
            if (j >= -kk && j <= kk)
                bd += a[k + kk] * a[j + kk];
        }
        if (d == 0)
            b0 = bd;
        q->rho[d] = bd * bd / (b0 * b0);
    }
    const size_t n = q->cfg.nfft, hop = q->cfg.hop;
    size_t lags = (n - 1) / hop;
    if (lags > ML_MAX_OVERLAP_LAGS)
        lags = ML_MAX_OVERLAP_LAGS;
    q->novl = lags;
    if (lags == 0)
        return 1;
    q->ovl = malloc(lags * sizeof *q->ovl);
    if (q->ovl == NULL)
        return 0;
    const size_t step = n > 2048 ? n / 2048 : 1;
    double w2 = 0.0;
    for (size_t j = 0; j < n; j += step)
        w2 += q->win[j] * q->win[j];
    for (size_t l = 1; l <= lags; l++) {
        const size_t sft = l * hop;
        double acc = 0.0;
        for (size_t j = 0; j + sft < n; j += step)
            acc += q->win[j] * q->win[j + sft];
        q->ovl[l - 1] = (acc / w2) * (acc / w2);
    }
    return 1;
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
        || (unsigned)cfg->window >= ML_WINDOW_COUNT || (cfg->single_precision && !cfg->complex_input)
        || (cfg->remove_dc && cfg->complex_input))
        return ML_EINVAL;
    ml_status st = ML_ENOMEM;
    ml_spectrum *q = calloc(1, sizeof *q);
    if (q == NULL)
        return st;
    q->cfg = *cfg;
    q->cfg.complex_input = cfg->complex_input ? 1 : 0;
    const int cplx = q->cfg.complex_input;
    q->nbins = cplx ? cfg->nfft : cfg->nfft / 2 + 1;
    q->win = malloc(cfg->nfft * sizeof *q->win);
    const int single = cfg->single_precision ? 1 : 0;
    q->cfg.single_precision = single;
    if (single) {
        q->fcbuf = fftwf_alloc_real(2 * cfg->nfft);
        q->fwin = fftwf_alloc_real(cfg->nfft);
        q->fcin = fftwf_alloc_complex(cfg->nfft);
        q->fout = fftwf_alloc_complex(q->nbins);
        q->fprev = fftwf_alloc_complex(q->nbins);
        if (q->fcbuf == NULL || q->fwin == NULL || q->fcin == NULL || q->fout == NULL || q->fprev == NULL)
            goto fail;
    } else if (cplx) {
        q->cbuf = fftw_alloc_complex(cfg->nfft);
        q->cin = fftw_alloc_complex(cfg->nfft);
    } else {
        q->buf = malloc(cfg->nfft * sizeof *q->buf);
        q->in = fftw_alloc_real(cfg->nfft);
    }
    if (!single) {
        q->out = fftw_alloc_complex(q->nbins);
        q->prev = fftw_alloc_complex(q->nbins);
    }
    q->xacc = fftw_alloc_complex(q->nbins);
    q->acc = malloc(q->nbins * sizeof *q->acc);
    q->xsel = fftw_alloc_complex(q->nbins);
    q->sel = malloc(q->nbins * sizeof *q->sel);
    q->tags = calloc(cfg->nfft, 1);
    if (q->xsel == NULL || q->sel == NULL || q->tags == NULL)
        goto fail;
    if (q->win == NULL || q->xacc == NULL || q->acc == NULL
        || (!single && ((cplx ? (q->cbuf == NULL || q->cin == NULL) : (q->buf == NULL || q->in == NULL))
                        || q->out == NULL || q->prev == NULL)))
        goto fail;
    st = ML_EFFT;
    if (single)
        q->fplan = fftwf_plan_dft_1d((int)cfg->nfft, q->fcin, q->fout, FFTW_FORWARD, FFTW_ESTIMATE);
    else if (cplx)
        q->plan = fftw_plan_dft_1d((int)cfg->nfft, q->cin, q->out, FFTW_FORWARD, FFTW_ESTIMATE);
    else
        q->plan = fftw_plan_dft_r2c_1d((int)cfg->nfft, q->in, q->out, FFTW_ESTIMATE);
    if (single ? q->fplan == NULL : q->plan == NULL)
        goto fail;
    ml_window_fill(cfg->window, q->win, cfg->nfft);
    for (size_t i = 0; single && i < cfg->nfft; i++)
        q->fwin[i] = (float)q->win[i];
    double s = 0.0;
    for (size_t i = 0; i < cfg->nfft; i++)
        s += q->win[i];
    q->scale = (cplx ? 1.0 : 2.0) / (s * s);
    q->wsum = s;
    q->cfg.remove_dc = cfg->remove_dc ? 1 : 0;
    q->enbw = ml_window_enbw_bins(q->win, cfg->nfft);
    if (!noise_statistics(q))
        goto fail;
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
    if (q->fplan != NULL)
        fftwf_destroy_plan(q->fplan);
    fftwf_free(q->fcin);
    fftwf_free(q->fout);
    fftwf_free(q->fprev);
    fftwf_free(q->fcbuf);
    fftwf_free(q->fwin);
    free(q->win);
    free(q->buf);
    fftw_free(q->in);
    fftw_free(q->cbuf);
    fftw_free(q->cin);
    fftw_free(q->out);
    fftw_free(q->prev);
    fftw_free(q->xacc);
    free(q->acc);
    fftw_free(q->xsel);
    free(q->sel);
    free(q->tags);
    free(q->ovl);
    free(q);
}

void ml_spectrum_reset(ml_spectrum *q)
{
    if (q == NULL)
        return;
    q->fill = 0;
    q->segments = 0;
    q->nsel = 0;
    q->prev_sel = 0;
    q->ntagged = 0;
    q->use_sel = 0;
    memset(q->tags, 0, q->cfg.nfft);
    memset(q->acc, 0, q->nbins * sizeof *q->acc);
    memset(q->xacc, 0, q->nbins * sizeof *q->xacc);
    memset(q->sel, 0, q->nbins * sizeof *q->sel);
    memset(q->xsel, 0, q->nbins * sizeof *q->xsel);
}

/* One bin of accumulate below: power a^2 + b^2 (times scale) and, when has_prev, the cross term
 * with the previous segment's c + id. */
static inline void accumulate_bin(ml_spectrum *restrict q, size_t k, double scale, double a, double b,
                                  int has_prev, double c, double d, int sel, int psel)
{
    const double p = (a * a + b * b) * scale;
    q->acc[k] += p;
    if (sel)
        q->sel[k] += p;
    if (has_prev) {
        /* X_i conj(X_{i-1}) written out: C's complex product would also handle infinities (C11
         * Annex G) at a call per bin; spectra of finite samples are finite */
        const fftw_complex xc = CMPLX(a * c + b * d, b * c - a * d);
        q->xacc[k] += xc;
        if (sel && psel)
            q->xsel[k] += xc;
    }
}

/* While every segment so far was selected, the selected sums equal the sums of all segments,
 * addition for addition, so they are not written: sel and xsel are filled from acc and xacc
 * when the first segment that is not selected arrives. */
static int sel_is_all(const ml_spectrum *q)
{
    return q->nsel == q->segments;
}

static void split_selected(ml_spectrum *q)
{
    memcpy(q->sel, q->acc, q->nbins * sizeof *q->sel);
    memcpy(q->xsel, q->xacc, q->nbins * sizeof *q->xsel);
}

/* Adds segment spectrum x (and its cross-spectrum with prev, when not NULL) to the accumulators of
 * all segments, and to the selected ones when sel (with psel: the previous segment was selected
 * too). One pass over the bins: the arrays are larger than the caches for long transforms.
 * Instantiated for the double and the single precision transforms (R: the type of their real
 * and imaginary parts). The usual case -- a previous segment and no selected sums to write --
 * has a loop of its own over plain arrays, which vectorises; its arithmetic is accumulate_bin's. */
#define ML_ACCUMULATE(NAME, T, R)                                                                 \
    ML_HOT static void NAME(ml_spectrum *q, const T *x_, const T *prev_, int sel, int psel)         \
    {                                                                                              \
        const size_t nb = q->nbins;                                                                \
        const int same = sel_is_all(q), selected = sel != 0;                                       \
        if (!sel && same && q->segments > 0)                                                       \
            split_selected(q);                                                                     \
        if (same) /* still the same sums: only acc and xacc are written */                         \
            sel = psel = 0;                                                                        \
        const R *restrict x = (const R *)x_, *restrict pv = (const R *)prev_;                      \
        /* DC and Nyquist of a real signal have no mirror image: half the one-sided scale */      \
        const size_t lo = q->cfg.complex_input ? 0 : 1, hi = q->cfg.complex_input ? nb : nb - 1;   \
        size_t k = lo;                                                                             \
        if (pv != NULL && !sel) {                                                                  \
            double *restrict acc = q->acc, *restrict xa = (double *)q->xacc;                       \
            const double sc = q->scale;                                                            \
            for (; k < hi; k++) {                                                                  \
                const double a = x[2 * k], b = x[2 * k + 1], c = pv[2 * k], d = pv[2 * k + 1];     \
                acc[k] += (a * a + b * b) * sc;                                                    \
                xa[2 * k] += a * c + b * d;                                                        \
                xa[2 * k + 1] += b * c - a * d;                                                    \
            }                                                                                      \
        }                                                                                          \
        for (; k < hi; k++)                                                                        \
            accumulate_bin(q, k, q->scale, x[2 * k], x[2 * k + 1], pv != NULL, pv ? pv[2 * k] : 0,  \
                           pv ? pv[2 * k + 1] : 0, sel, psel);                                     \
        for (size_t e = 0; lo == 1 && e < 2; e++) {                                                \
            const size_t ke = e == 0 ? 0 : nb - 1;                                                 \
            accumulate_bin(q, ke, 0.5 * q->scale, x[2 * ke], x[2 * ke + 1], pv != NULL,            \
                           pv ? pv[2 * ke] : 0, pv ? pv[2 * ke + 1] : 0, sel, psel);               \
        }                                                                                          \
        q->segments++;                                                                             \
        q->nsel += (size_t)selected;                                                               \
    }
ML_ACCUMULATE(accumulate, fftw_complex, double)
ML_ACCUMULATE(accumulate_f, fftwf_complex, float)

/* The windowed segment in double precision: transform, accumulate, hand it to the hook, and keep
 * it as the previous one (the buffers swap; both come from fftw_alloc, so equally aligned for the
 * plan). */
ML_HOT static void transform_double(ml_spectrum *q, int selected)
{
    const size_t n = q->cfg.nfft;
    const double *restrict w = q->win;
    if (q->cfg.complex_input) {
        const fftw_complex *restrict src = q->cbuf;
        fftw_complex *restrict dst = q->cin;
        for (size_t i = 0; i < n; i++)
            dst[i] = CMPLX(creal(src[i]) * w[i], cimag(src[i]) * w[i]);
        fftw_execute_dft(q->plan, q->cin, q->out);
    } else {
        for (size_t i = 0; i < n; i++)
            q->in[i] = q->buf[i] * w[i];
        if (q->cfg.remove_dc) {
            /* w (x - m) with m = sum(w x) / sum(w): the windowed segment then sums to 0 */
            double sx = 0.0;
            for (size_t i = 0; i < n; i++)
                sx += q->in[i];
            const double mean = sx / q->wsum;
            for (size_t i = 0; i < n; i++)
                q->in[i] -= mean * w[i];
        }
        fftw_execute_dft_r2c(q->plan, q->in, q->out);
    }
    const fftw_complex *prev = q->segments > 0 ? q->prev : NULL;
    accumulate(q, q->out, prev, selected, q->prev_sel);
    if (q->hook)
        q->hook(q->hook_ctx, q->out, prev, selected);
    fftw_complex *t = q->prev;
    q->prev = q->out;
    q->out = t;
}

/* The same in single precision (complex input only; no hook). */
ML_HOT static void transform_single(ml_spectrum *q, int selected)
{
    const size_t n = q->cfg.nfft;
    const float *restrict w = q->fwin;
    const float *restrict src = q->fcbuf;
    float *restrict dst = (float *)q->fcin; /* fftwf_complex is float[2] or float complex */
    for (size_t i = 0; i < n; i++) {
        dst[2 * i] = src[2 * i] * w[i];
        dst[2 * i + 1] = src[2 * i + 1] * w[i];
    }
    fftwf_execute_dft(q->fplan, q->fcin, q->fout);
    accumulate_f(q, q->fout, q->segments > 0 ? q->fprev : NULL, selected, q->prev_sel);
    fftwf_complex *t = q->fprev;
    q->fprev = q->fout;
    q->fout = t;
}

/* Transform the full buffer: accumulate power and the cross-spectrum with the previous segment,
 * then slide the buffer by one hop. */
static void transform(ml_spectrum *q)
{
    const size_t n = q->cfg.nfft;
    const int selected = q->ntagged == n;
    if (q->cfg.single_precision)
        transform_single(q, selected);
    else
        transform_double(q, selected);
    q->prev_sel = selected;
    /* the tags of the samples leaving the buffer */
    for (size_t i = 0; i < q->cfg.hop; i++)
        q->ntagged -= q->tags[i];
    memmove(q->tags, q->tags + q->cfg.hop, n - q->cfg.hop);
    /* keep the last nfft - hop samples as the start of the next segment */
    if (q->cfg.single_precision)
        memmove(q->fcbuf, q->fcbuf + 2 * q->cfg.hop, 2 * (n - q->cfg.hop) * sizeof *q->fcbuf);
    else if (q->cfg.complex_input)
        memmove(q->cbuf, q->cbuf + q->cfg.hop, (n - q->cfg.hop) * sizeof *q->cbuf);
    else
        memmove(q->buf, q->buf + q->cfg.hop, (n - q->cfg.hop) * sizeof *q->buf);
    q->fill = n - q->cfg.hop;
}

void ml_spectrum_on_segment(ml_spectrum *q, ml_spectrum_segment_fn fn, void *ctx)
{
    if (q == NULL)
        return;
    q->hook = fn;
    q->hook_ctx = ctx;
}

ml_status ml_spectrum_add_segment(ml_spectrum *q, const double _Complex *x, const double _Complex *prev)
{
    if (q == NULL || x == NULL)
        return ML_EINVAL;
    accumulate(q, x, prev, 0, 0);
    q->prev_sel = 0;
    return ML_OK;
}

/* Appends n samples: STORE(d, j) writes sample j of the caller's array to buffer index d; tag
 * (NULL: none) marks the selected ones. Transforms each time the buffer is full. */
#define PUSH_BODY(STORE, TAG)                                                                      \
    if (q == NULL || (x == NULL && n > 0))                                                         \
        return ML_EINVAL;                                                                          \
    size_t i = 0;                                                                                  \
    while (i < n) {                                                                                \
        size_t take = q->cfg.nfft - q->fill;                                                       \
        if (take > n - i)                                                                          \
            take = n - i;                                                                          \
        for (size_t j = 0; j < take; j++)                                                          \
            STORE(q->fill + j, i + j);                                                             \
        store_tags(q, (TAG) ? (TAG) + i : NULL, take);                                             \
        q->fill += take;                                                                           \
        i += take;                                                                                 \
        if (q->fill == q->cfg.nfft)                                                                \
            transform(q);                                                                          \
    }                                                                                              \
    return ML_OK;

/* Tags of the next n samples (from index fill on); tag NULL: none selected. */
static void store_tags(ml_spectrum *q, const unsigned char *tag, size_t n)
{
    unsigned char *restrict t = q->tags + q->fill;
    if (tag == NULL) {
        memset(t, 0, n);
        return;
    }
    size_t count = 0;
    for (size_t j = 0; j < n; j++) {
        t[j] = tag[j] != 0;
        count += t[j];
    }
    q->ntagged += count;
}

#define STORE_REAL(d, j) (q->buf[d] = x[j])
#define STORE_CPLX(d, j) (q->cbuf[d] = x[j])
#define STORE_PAIR_AS_CPLX(d, j) (q->cbuf[d] = CMPLX(x[2 * (j)], x[2 * (j) + 1]))
#define STORE_CPLX_AS_PAIR(d, j) (q->fcbuf[2 * (d)] = (float)creal(x[j]), q->fcbuf[2 * (d) + 1] = (float)cimag(x[j]))
#define STORE_PAIR(d, j) (q->fcbuf[2 * (d)] = x[2 * (j)], q->fcbuf[2 * (d) + 1] = x[2 * (j) + 1])

ml_status ml_spectrum_push(ml_spectrum *q, const float *x, size_t n)
{
    return ml_spectrum_push_float_tagged(q, x, NULL, n);
}

ml_status ml_spectrum_push_double(ml_spectrum *q, const double *x, size_t n)
{
    return ml_spectrum_push_tagged(q, x, NULL, n);
}

ml_status ml_spectrum_push_tagged(ml_spectrum *q, const double *x, const unsigned char *tag, size_t n)
{
    if (q != NULL && q->cfg.complex_input)
        return ML_EINVAL;
    PUSH_BODY(STORE_REAL, tag)
}

ml_status ml_spectrum_push_float_tagged(ml_spectrum *q, const float *x, const unsigned char *tag, size_t n)
{
    if (q != NULL && q->cfg.complex_input)
        return ML_EINVAL;
    PUSH_BODY(STORE_REAL, tag)
}

ml_status ml_spectrum_push_complex(ml_spectrum *q, const double _Complex *x, size_t n)
{
    return ml_spectrum_push_complex_tagged(q, x, NULL, n);
}

ml_status ml_spectrum_push_complex_tagged(ml_spectrum *q, const double _Complex *x, const unsigned char *tag,
                                          size_t n)
{
    if (q == NULL || !q->cfg.complex_input)
        return ML_EINVAL;
    if (q->cfg.single_precision) {
        PUSH_BODY(STORE_CPLX_AS_PAIR, tag)
    }
    PUSH_BODY(STORE_CPLX, tag)
}

ml_status ml_spectrum_push_complex_float_tagged(ml_spectrum *q, const float *x, const unsigned char *tag,
                                                size_t n)
{
    if (q == NULL || !q->cfg.complex_input)
        return ML_EINVAL;
    if (q->cfg.single_precision) {
        PUSH_BODY(STORE_PAIR, tag)
    }
    PUSH_BODY(STORE_PAIR_AS_CPLX, tag)
}

ml_status ml_spectrum_use_selected(ml_spectrum *q, int on)
{
    if (q == NULL)
        return ML_EINVAL;
    if (on && q->nsel == 0)
        return ML_ENOSIGNAL;
    q->use_sel = on ? 1 : 0;
    return ML_OK;
}

size_t ml_spectrum_selected_segments(const ml_spectrum *q)
{
    return q ? q->nsel : 0;
}

void ml_spectrum_scale(ml_spectrum *q, double gain)
{
    if (q == NULL)
        return;
    const double g2 = gain * gain;
    const int same = sel_is_all(q);
    for (size_t k = 0; k < q->nbins; k++) {
        q->acc[k] *= g2;
        q->xacc[k] *= g2;
        if (!same) {
            q->sel[k] *= g2;
            q->xsel[k] *= g2;
        }
    }
}

int ml_spectrum_is_complex(const ml_spectrum *q)
{
    return q ? q->cfg.complex_input : 0;
}

double ml_spectrum_full_scale_power(const ml_spectrum *q)
{
    return (q && q->cfg.complex_input) ? 1.0 : 0.5;
}

double ml_spectrum_bin_hz(const ml_spectrum *q, size_t k)
{
    if (q == NULL)
        return 0.0;
    double bin = q->cfg.rate_hz / (double)q->cfg.nfft;
    if (q->cfg.complex_input && k >= q->cfg.nfft / 2)
        return ((double)k - (double)q->cfg.nfft) * bin;
    return (double)k * bin;
}

size_t ml_spectrum_segments(const ml_spectrum *q)
{
    return q ? (q->use_sel ? q->nsel : q->segments) : 0;
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

int ml_spectrum_removes_dc(const ml_spectrum *q)
{
    return q ? q->cfg.remove_dc : 0;
}

int ml_spectrum_clears_dc(const ml_spectrum *q, size_t c)
{
    if (q == NULL)
        return 0;
    const size_t lobe = ml_spectrum_lobe_bins(q);
    return q->cfg.remove_dc ? c >= lobe + 1 : c >= 2 * lobe;
}

double ml_spectrum_dof(const ml_spectrum *q, size_t nb)
{
    const size_t segs = ml_spectrum_segments(q);
    if (q == NULL || segs == 0 || nb == 0)
        return 0.0;
    /* one segment: var(sum_k |X_k|^2) / mean^2 = sum_{k,j} rho(k - j) / nb^2 (Isserlis) */
    const double m = (double)nb;
    double s = m * q->rho[0];
    for (size_t d = 1; d < q->nrho && d < nb; d++)
        s += 2.0 * (m - (double)d) * q->rho[d];
    const double v1 = s / (m * m);
    /* the mean of S segments whose estimates l apart correlate by ovl[l] */
    const double S = (double)segs;
    double f = 1.0;
    for (size_t l = 1; l <= q->novl && l < segs; l++)
        f += 2.0 * (1.0 - (double)l / S) * q->ovl[l - 1];
    return 2.0 / (v1 * f / S);
}

ml_status ml_spectrum_get_psd(const ml_spectrum *q, double *psd, size_t nbins)
{
    if (q == NULL || psd == NULL || nbins != q->nbins)
        return ML_EINVAL;
    const size_t segs = ml_spectrum_segments(q);
    if (segs == 0)
        return ML_ENOSIGNAL;
    const double *acc = ml_spectrum_sum(q);
    for (size_t k = 0; k < nbins; k++)
        psd[k] = acc[k] / (double)segs;
    return ML_OK;
}

const double *ml_spectrum_sum(const ml_spectrum *q)
{
    return q ? (q->use_sel && !sel_is_all(q) ? q->sel : q->acc) : NULL;
}

ml_status ml_spectrum_get_frequency(const ml_spectrum *q, size_t k, double *hz)
{
    if (q == NULL || hz == NULL || k >= q->nbins || (!q->cfg.complex_input && (k == 0 || k + 1 >= q->nbins)))
        return ML_EINVAL;
    const size_t segs = ml_spectrum_segments(q);
    if (segs == 0)
        return ML_ENOSIGNAL;
    const double n = (double)q->cfg.nfft, hop = (double)q->cfg.hop;
    const double *acc = ml_spectrum_sum(q);
    const fftw_complex *xacc = q->use_sel && !sel_is_all(q) ? q->xsel : q->xacc;
    size_t pairs = segs;
    if (pairs < 2 && q->use_sel && q->segments >= 2 && cabs(q->xacc[k]) > 0) {
        /* one selected segment has no phase advance: every segment's has (a steady line's
         * frequency is the same in the segments left out; where it is absent there, its bin holds
         * noise, which weighs little in the sum of products) */
        xacc = q->xacc;
        pairs = q->segments;
    }
    double delta;
    if (pairs >= 2 && cabs(xacc[k]) > 0) {
        /* X_i[k] advances by 2 pi f hop / fs per segment [flanagan:1966]; the bin centre accounts
         * for 2 pi k hop / n of it, the rest is the offset delta (in bins) from the centre. */
        double dphi = carg(xacc[k]) - 2.0 * ML_PI * (double)k * hop / n;
        dphi = remainder(dphi, 2.0 * ML_PI);
        delta = dphi * n / (2.0 * ML_PI * hop);
    } else {
        /* Parabolic interpolation of log power around the peak: coarse, one segment only. */
        const size_t km = k > 0 ? k - 1 : q->nbins - 1, kp = k + 1 < q->nbins ? k + 1 : 0;
        double a = ml_db10(acc[km]), b = ml_db10(acc[k]), c = ml_db10(acc[kp]);
        double den = a - 2.0 * b + c;
        delta = den != 0.0 ? 0.5 * (a - c) / den : 0.0;
        if (delta > 0.5)
            delta = 0.5;
        if (delta < -0.5)
            delta = -0.5;
    }
    *hz = ml_spectrum_bin_hz(q, k) + delta * q->cfg.rate_hz / n;
    return ML_OK;
}
