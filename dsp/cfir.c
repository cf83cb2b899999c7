/* Streaming linear-phase low-pass FIR for complex signals: Kaiser design, overlap-save filtering.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [kaiser:1974] J. F. Kaiser, "Nonrecursive digital filter design using the I0-sinh window
 *     function", Proc. IEEE Int. Symp. Circuits and Systems, 1974, pp. 20-23 (beta and length
 *     formulas for a windowed-sinc low-pass of attenuation A dB and transition width dF).
 * [oppenheim:2010] A. V. Oppenheim, R. W. Schafer, "Discrete-Time Signal Processing", 3rd ed.,
 *     Pearson, 2010: the Kaiser window design method (ch. 7) and block convolution by the DFT,
 *     overlap-save (ch. 8).
 * [abramowitz:1964] M. Abramowitz, I. A. Stegun, "Handbook of Mathematical Functions", NBS, 1964,
 *     eq. 9.6.12 (power series of the modified Bessel function I0).
 */
#include <complex.h> /* before fftw3.h: fftw_complex is then double complex */

#include "dsp/cfir.h"

#include <assert.h>
#include <fftw3.h>
#include <math.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/internal.h"

/* Passband tolerance of the guarantee, and the design attenuation that keeps a Kaiser design's
 * passband ripple (about equal to its stopband ripple) inside it: 20 lg(1 + 10^(-60/20)) =
 * 0.0087 dB. */
#define PASS_DB 0.01
#define MIN_DESIGN_DB 60.0
/* The beta formula reaches its nominal attenuation only to within about 1 dB (the sidelobe peak
 * of a fixed beta does not fall further as taps are added), so the design aims this much lower. */
#define DESIGN_MARGIN_DB 1.0
/* Grid points per rate/ntaps in the design check. The ripples of the taps' cosine sum have a period
 * of about 2 rate/ntaps, so this gives >= 32 points per ripple, where a parabola through the 3
 * points around a peak finds its height to 4e-5 of it (0.0003 dB; worst case for a cosine). */
#define CHECK_OVERSAMPLE 16
/* Design iterations before giving up. A step adds 2 taps, or about 0.2 % of the length for long
 * filters (the length formula's shortfall scales with the length); the margin above needs 0..3. */
#define MAX_GROW_STEPS 64

struct ml_cfir {
    ml_cfir_config cfg;
    size_t ntaps; /* M, odd                                                       */
    size_t nfft;  /* N, a power of two >= 2M                                      */
    size_t block; /* L = N - M + 1 new inputs and outputs per transform           */
    size_t fill;  /* inputs gathered in the current block: 0 .. L-1                */
    double *taps; /* M real taps                                                  */
    fftw_complex *in;   /* [0, M-1): previous inputs; [M-1, N): current block         */
    fftw_complex *work; /* spectrum, then (in place) the circular convolution          */
    fftw_complex *resp; /* DFT of the zero-padded taps, divided by N                   */
    fftw_plan fwd;      /* in -> work                                                  */
    fftw_plan inv;      /* work -> work                                                */
    /* single precision: the same buffers and plans in float (the double ones stay NULL) */
    fftwf_complex *fin, *fwork, *fresp;
    fftwf_plan ffwd, finv;
};

ml_cfir_config ml_cfir_config_default(double rate_hz, double cutoff_hz)
{
    double tr = 1000.0;
    if (0.5 * cutoff_hz < tr)
        tr = 0.5 * cutoff_hz;
    if (0.5 * (0.5 * rate_hz - cutoff_hz) < tr)
        tr = 0.5 * (0.5 * rate_hz - cutoff_hz);
    ml_cfir_config c = {.rate_hz = rate_hz, .cutoff_hz = cutoff_hz, .transition_hz = tr, .stop_db = 100.0};
    return c;
}

/* I0(x) = sum_k ((x/2)^2k / (k!)^2) [abramowitz:1964] eq. 9.6.12: all terms positive, so the sum
 * is accurate to a few ulps; for x <= 17 (beta <= 16.8 here) it stops after about 30 terms. */
static double bessel_i0(double x)
{
    const double q = 0.25 * x * x;
    double term = 1.0, sum = 1.0;
    for (int k = 1; k < 500 && term > 1e-17 * sum; k++) {
        term *= q / ((double)k * (double)k);
        sum += term;
    }
    return sum;
}

/* Kaiser-windowed sinc of m taps (odd), ideal cutoff fc_norm = fc / rate, scaled to sum 1 (unity
 * gain at 0 Hz) [oppenheim:2010] ch. 7; the window is I0(beta sqrt(1 - (t/c)^2)) / I0(beta). */
static void design_taps(double *h, size_t m, double fc_norm, double beta)
{
    const size_t c = (m - 1) / 2;
    const double i0b = bessel_i0(beta);
    double sum = 0.0;
    for (size_t n = 0; n < m; n++) {
        double t = (double)n - (double)c;
        double r = t / (double)c;
        double w = bessel_i0(beta * sqrt(fmax(0.0, 1.0 - r * r))) / i0b;
        double s = n == c ? 2.0 * fc_norm : sin(2.0 * ML_PI * fc_norm * t) / (ML_PI * t);
        h[n] = s * w;
        sum += h[n];
    }
    for (size_t n = 0; n < m; n++)
        h[n] /= sum;
}

/* Zero-phase amplitude A(f) = h[c] + 2 sum_k h[c+k] cos(2 pi f k / rate): |H(f)| = |A(f)| for
 * symmetric taps. Each cosine is evaluated directly (no recurrence), so the stopband value is
 * accurate to ~1e-16 * sum|h|, far below -160 dB. */
static double amplitude(const double *h, size_t m, double f_norm)
{
    const size_t c = (m - 1) / 2;
    double a = h[c];
    for (size_t k = 1; k <= c; k++)
        a += 2.0 * h[c + k] * cos(2.0 * ML_PI * f_norm * (double)k);
    return a;
}

static double db20(double a)
{
    return ml_db10(a * a);
}

/* Value at the vertex of the parabola through (-1, a), (0, b), (1, c): the peak between samples. */
static double vertex(double a, double b, double c)
{
    double den = a - 2.0 * b + c;
    return den != 0.0 ? b - (a - c) * (a - c) / (8.0 * den) : b;
}

/* Whether h[m] meets the guarantee in cfir.h. Samples |H| on a grid of g >= CHECK_OVERSAMPLE * m
 * points over [0, rate) by a zero-padded real FFT, refines every local extremum by a parabola, and
 * adds the exact DTFT at both band edges. *ok receives the verdict; ML_ENOMEM | ML_EFFT. */
static ml_status check_design(const double *h, size_t m, const ml_cfir_config *cfg, bool *ok)
{
    size_t g = 1024;
    while (g < CHECK_OVERSAMPLE * m)
        g *= 2;
    const size_t nb = g / 2 + 1;
    double *x = fftw_alloc_real(g);
    fftw_complex *spec = fftw_alloc_complex(nb);
    fftw_plan p = NULL;
    ml_status st = ML_ENOMEM;
    if (x == NULL || spec == NULL)
        goto done;
    st = ML_EFFT;
    if ((p = fftw_plan_dft_r2c_1d((int)g, x, spec, FFTW_ESTIMATE)) == NULL)
        goto done;
    memcpy(x, h, m * sizeof *h);
    memset(x + m, 0, (g - m) * sizeof *x);
    fftw_execute(p);
    fftw_destroy_plan(p);
    for (size_t k = 0; k < nb; k++) /* magnitudes, in place in the real buffer */
        x[k] = cabs(spec[k]);

    const double fs = cfg->rate_hz, f_stop = cfg->cutoff_hz + cfg->transition_hz;
    double pass_hi = amplitude(h, m, cfg->cutoff_hz / fs), pass_lo = pass_hi;
    double stop_hi = fabs(amplitude(h, m, f_stop / fs));
    for (size_t k = 0; k < nb; k++) {
        double f = (double)k * fs / (double)g;
        /* neighbours mirror around 0 and rate/2, where |H| is even */
        double a = x[k > 0 ? k - 1 : 1], b = x[k], c = x[k + 1 < nb ? k + 1 : nb - 2];
        double peak = b, dip = b;
        if (b >= a && b >= c)
            peak = vertex(a, b, c);
        if (b <= a && b <= c)
            dip = vertex(a, b, c);
        if (f <= cfg->cutoff_hz) {
            pass_hi = fmax(pass_hi, peak);
            pass_lo = fmin(pass_lo, dip);
        }
        if (f >= f_stop)
            stop_hi = fmax(stop_hi, peak);
    }
    *ok = db20(pass_hi) <= PASS_DB && db20(pass_lo) >= -PASS_DB && db20(stop_hi) <= -cfg->stop_db;
    st = ML_OK;
done:
    fftw_free(x);
    fftw_free(spec);
    return st;
}

/* Overlap-save cost per output sample is proportional to N log2 N / (N - M + 1). Its minimum over
 * powers of two lies near N = 8M, but measured throughput (FFTW_ESTIMATE, 300..16000 taps) was
 * within the run-to-run noise from 2M to 8M, while the latency and memory grow with N; so the
 * candidates are the smallest power of two >= 2M and the next one. */
static size_t choose_nfft(size_t m)
{
    size_t n = 64;
    while (n < 2 * m)
        n *= 2;
    double cost1 = (double)n * log2((double)n) / (double)(n - m + 1);
    double cost2 = (double)(2 * n) * log2((double)(2 * n)) / (double)(2 * n - m + 1);
    return cost2 < cost1 ? 2 * n : n;
}

static bool config_ok(const ml_cfir_config *cfg)
{
    return cfg != NULL && isfinite(cfg->rate_hz) && cfg->rate_hz > 0 && isfinite(cfg->cutoff_hz)
           && cfg->cutoff_hz > 0 && isfinite(cfg->transition_hz) && cfg->transition_hz > 0
           && cfg->cutoff_hz + cfg->transition_hz <= 0.5 * cfg->rate_hz && cfg->stop_db >= 20.0
           && cfg->stop_db <= 160.0;
}

ml_status ml_cfir_create(const ml_cfir_config *cfg, ml_cfir **out)
{
    assert(out != NULL);
    *out = NULL;
    if (!config_ok(cfg))
        return ML_EINVAL;
    /* [kaiser:1974]: beta = 0.1102 (A - 8.7) for A > 50 (always the case: A >= 61), and
     * N = (A - 7.95) / (2.285 * 2 pi dF) + 1 taps with dF = transition / rate. */
    const double a_db = fmax(cfg->stop_db, MIN_DESIGN_DB) + DESIGN_MARGIN_DB;
    const double beta = 0.1102 * (a_db - 8.7);
    const double n_est = (a_db - 7.95) / (2.285 * 2.0 * ML_PI * cfg->transition_hz / cfg->rate_hz) + 1.0;
    if (!(n_est <= (double)ML_CFIR_MAX_TAPS))
        return ML_EINVAL;
    size_t m = (size_t)ceil(n_est);
    m |= 1; /* odd: a whole-sample group delay */
    if (m < 3)
        m = 3;

    ml_status st = ML_ENOMEM;
    ml_cfir *q = calloc(1, sizeof *q);
    if (q == NULL)
        return st;
    q->cfg = *cfg;
    /* The ideal cutoff sits mid-transition: a windowed sinc's ripples are symmetric about it. */
    const double fc_norm = (cfg->cutoff_hz + 0.5 * cfg->transition_hz) / cfg->rate_hz;
    for (int step = 0;; step++) {
        if (step > MAX_GROW_STEPS || m > ML_CFIR_MAX_TAPS) {
            st = ML_EINVAL;
            goto fail;
        }
        free(q->taps);
        q->taps = malloc(m * sizeof *q->taps);
        st = ML_ENOMEM;
        if (q->taps == NULL)
            goto fail;
        design_taps(q->taps, m, fc_norm, beta);
        bool ok = false;
        if ((st = check_design(q->taps, m, cfg, &ok)) != ML_OK)
            goto fail;
        if (ok)
            break;
        m += 2 * (1 + m / 1024);
    }
    q->ntaps = m;
    q->nfft = choose_nfft(m);
    q->block = q->nfft - m + 1;
    assert(q->nfft <= ((size_t)1 << 20)); /* 2 * ML_CFIR_MAX_TAPS < 2^19: fits FFTW's int */

    st = ML_ENOMEM;
    q->in = fftw_alloc_complex(q->nfft);
    q->work = fftw_alloc_complex(q->nfft);
    q->resp = fftw_alloc_complex(q->nfft);
    if (q->in == NULL || q->work == NULL || q->resp == NULL)
        goto fail;
    st = ML_EFFT;
    q->fwd = fftw_plan_dft_1d((int)q->nfft, q->in, q->work, FFTW_FORWARD, FFTW_ESTIMATE);
    q->inv = fftw_plan_dft_1d((int)q->nfft, q->work, q->work, FFTW_BACKWARD, FFTW_ESTIMATE);
    if (q->fwd == NULL || q->inv == NULL)
        goto fail;
    /* resp = DFT(taps, zero-padded) / N, so that inv(fwd(x) .* resp) is the circular convolution
     * itself (FFTW's transforms are unnormalised). The forward plan is reused through the
     * new-array interface on buffers of the same size and alignment (FFTW manual sec. 4.6). */
    for (size_t i = 0; i < q->nfft; i++)
        q->in[i] = i < m ? q->taps[i] / (double)q->nfft : 0.0;
    fftw_execute_dft(q->fwd, q->in, q->resp);
    if (cfg->single_precision) {
        /* the response is computed in double and rounded once; the double buffers go */
        st = ML_ENOMEM;
        q->fin = fftwf_alloc_complex(q->nfft);
        q->fwork = fftwf_alloc_complex(q->nfft);
        q->fresp = fftwf_alloc_complex(q->nfft);
        if (q->fin == NULL || q->fwork == NULL || q->fresp == NULL)
            goto fail;
        for (size_t k = 0; k < q->nfft; k++) {
            ((float *)q->fresp)[2 * k] = (float)creal(q->resp[k]);
            ((float *)q->fresp)[2 * k + 1] = (float)cimag(q->resp[k]);
        }
        st = ML_EFFT;
        q->ffwd = fftwf_plan_dft_1d((int)q->nfft, q->fin, q->fwork, FFTW_FORWARD, FFTW_ESTIMATE);
        q->finv = fftwf_plan_dft_1d((int)q->nfft, q->fwork, q->fwork, FFTW_BACKWARD, FFTW_ESTIMATE);
        if (q->ffwd == NULL || q->finv == NULL)
            goto fail;
        fftw_destroy_plan(q->fwd);
        fftw_destroy_plan(q->inv);
        q->fwd = q->inv = NULL;
        fftw_free(q->in);
        fftw_free(q->work);
        fftw_free(q->resp);
        q->in = q->work = q->resp = NULL;
    }
    ml_cfir_reset(q);
    *out = q;
    return ML_OK;
fail:
    ml_cfir_destroy(q);
    return st;
}

void ml_cfir_destroy(ml_cfir *q)
{
    if (q == NULL)
        return;
    if (q->fwd != NULL)
        fftw_destroy_plan(q->fwd);
    if (q->inv != NULL)
        fftw_destroy_plan(q->inv);
    if (q->ffwd != NULL)
        fftwf_destroy_plan(q->ffwd);
    if (q->finv != NULL)
        fftwf_destroy_plan(q->finv);
    fftwf_free(q->fin);
    fftwf_free(q->fwork);
    fftwf_free(q->fresp);
    fftw_free(q->in);
    fftw_free(q->work);
    fftw_free(q->resp);
    free(q->taps);
    free(q);
}

void ml_cfir_reset(ml_cfir *q)
{
    if (q == NULL)
        return;
    /* zero history = silence before the first input; zero work = the outputs of that silence,
     * handed out during the first block */
    if (q->cfg.single_precision) {
        memset(q->fin, 0, q->nfft * sizeof *q->fin);
        memset(q->fwork, 0, q->nfft * sizeof *q->fwork);
    } else {
        memset(q->in, 0, q->nfft * sizeof *q->in);
        memset(q->work, 0, q->nfft * sizeof *q->work);
    }
    q->fill = 0;
}

size_t ml_cfir_ntaps(const ml_cfir *q)
{
    return q ? q->ntaps : 0;
}

size_t ml_cfir_latency(const ml_cfir *q)
{
    return q ? (q->ntaps - 1) / 2 + q->block : 0;
}

/* One overlap-save step [oppenheim:2010] ch. 8: in[] holds the M-1 previous inputs and L new ones;
 * the last L points of the circular convolution equal the linear one. They stay in work[M-1, N)
 * and are handed out while the next block fills, hence the extra latency of L samples. */
static void transform(ml_cfir *q)
{
    const size_t n = q->nfft, hist = q->ntaps - 1;
    fftw_execute(q->fwd);
    for (size_t k = 0; k < n; k++) { /* written out: no C11 Annex G infinity handling needed */
        const double a = creal(q->work[k]), b = cimag(q->work[k]);
        const double c = creal(q->resp[k]), d = cimag(q->resp[k]);
        q->work[k] = CMPLX(a * c - b * d, a * d + b * c);
    }
    fftw_execute(q->inv);
    memcpy(q->in, q->in + q->block, hist * sizeof *q->in); /* L > M - 1: the ranges are disjoint */
    q->fill = 0;
}

/* The same in single precision. */
ML_HOT static void transform_single(ml_cfir *q)
{
    const size_t n = q->nfft, hist = q->ntaps - 1;
    fftwf_execute(q->ffwd);
    float *restrict w = (float *)q->fwork;
    const float *restrict r = (const float *)q->fresp;
    for (size_t k = 0; k < n; k++) {
        const float a = w[2 * k], b = w[2 * k + 1], c = r[2 * k], d = r[2 * k + 1];
        w[2 * k] = a * c - b * d;
        w[2 * k + 1] = a * d + b * c;
    }
    fftwf_execute(q->finv);
    memcpy(q->fin, q->fin + q->block, hist * sizeof *q->fin);
    q->fill = 0;
}

/* Rounds x[n] into the float input buffer at d and widens the float outputs at s into y[n]. */
ML_HOT static void exchange_single(float *restrict d, const float *restrict s, const double *restrict x,
                                   double *restrict y, size_t n)
{
    for (size_t i = 0; i < 2 * n; i++)
        d[i] = (float)x[i];
    for (size_t i = 0; i < 2 * n; i++)
        y[i] = s[i];
}

ml_status ml_cfir_push(ml_cfir *q, const double complex *x, size_t n, double complex *y)
{
    if (q == NULL || (n > 0 && (x == NULL || y == NULL)))
        return ML_EINVAL;
    const size_t hist = q->ntaps - 1;
    size_t i = 0;
    while (i < n) {
        size_t take = q->block - q->fill;
        if (take > n - i)
            take = n - i;
        if (q->cfg.single_precision) {
            exchange_single((float *)(q->fin + hist + q->fill), (const float *)(q->fwork + hist + q->fill),
                            (const double *)(x + i), (double *)(y + i), take);
        } else {
            memcpy(q->in + hist + q->fill, x + i, take * sizeof *x);
            memcpy(y + i, q->work + hist + q->fill, take * sizeof *y);
        }
        q->fill += take;
        i += take;
        if (q->fill == q->block)
            q->cfg.single_precision ? transform_single(q) : transform(q);
    }
    return ML_OK;
}

ml_status ml_cfir_get_taps(const ml_cfir *q, double *h, size_t ntaps)
{
    if (q == NULL || h == NULL || ntaps != q->ntaps)
        return ML_EINVAL;
    memcpy(h, q->taps, ntaps * sizeof *h);
    return ML_OK;
}

double ml_cfir_response_db(const ml_cfir *q, double f_hz)
{
    if (q == NULL || !isfinite(f_hz))
        return NAN;
    return db20(amplitude(q->taps, q->ntaps, f_hz / q->cfg.rate_hz));
}
