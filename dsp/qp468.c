/* ITU-R BS.468-4 quasi-peak noise meter: weighting filter (matched-z poles, least-squares FIR
 * correction) and a two-stage quasi-peak detector with time constants fitted to the standard's
 * tone-burst tables.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [bs468:1986] ITU-R BS.468-4 (1986): weighting prototype (docs/references.md 2.2), Table 1 with
 *     tolerances (2.1), clause 2 Tables 2 and 3 and the calibration of clause 2.6 (2.3).
 * [oppenheim:2010] A. V. Oppenheim, R. W. Schafer, Discrete-Time Signal Processing, 3rd ed.: impulse
 *     invariance / pole mapping z = e^{sT} (7.1), linear-phase FIR as a cosine series (5.7).
 */
#include "dsp/qp468.h"

#include <assert.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/biquad.h"
#include "dsp/internal.h"

#define FIR_MAX 8 /* cosine terms */
#define GRID 400

/* [bs468:1986] analogue prototype poles (rad/s), docs/references.md 2.2 */
static const double P_REAL[2] = {-25903.70104781628, -62675.1700584679};
static const double P_CPLX_RE[2] = {-23615.53521363528, -18743.74669072136};
static const double P_CPLX_IM[2] = {36379.90893732929, 62460.15645250649};

/* [bs468:1986] Table 1 (docs/references.md 2.1): frequency and tolerance, used as fit weights */
static const double T1_HZ[20] = {31.5, 63,   100,  200,  400,  800,   1000,  2000,  3150,  4000,
                                 5000, 6300, 7100, 8000, 9000, 10000, 12500, 14000, 16000, 20000};
static const double T1_TOL[20] = {2.0, 1.4, 1.0, 0.85, 0.7, 0.55, 0.5, 0.5, 0.5, 0.5,
                                  0.5, 0.05, 0.2, 0.4,  0.6, 0.8,  1.2, 1.4, 1.6, 2.0};

/* Fitted to [bs468:1986] Tables 2 and 3 (see the header): seconds */
static const double TAU_A1 = 1.48492e-3, TAU_R1 = 0.290620, TAU_2 = 0.140221;


struct ml_qp468 {
    ml_qp468_config cfg;
    ml_biquad s[3];
    double gain; /* makes the filter 0 dB at 1 kHz */
    double fir[2 * FIR_MAX - 1];
    size_t ntaps;
    double ring[2 * FIR_MAX - 1];
    size_t pos;
    double a1, b1, c2, k;
    double y1, y2;
    uint64_t frames, settle_frames, counted;
    double max, sum;
};

ml_qp468_config ml_qp468_config_default(double rate_hz)
{
    return (ml_qp468_config){.rate_hz = rate_hz, .weighted = true, .settle_s = 0.5};
}

static double iir_mag(const ml_qp468 *q, double f)
{
    const double complex zi = cexp(CMPLX(0.0, -2.0 * ML_PI * f / q->cfg.rate_hz));
    double complex h = 1.0;
    for (int i = 0; i < 3; i++)
        h *= ml_biquad_h(&q->s[i], zi);
    return cabs(h);
}

static double fir_amp(const ml_qp468 *q, double f) /* zero-phase amplitude sum a_k cos(k w) */
{
    const size_t kk = (q->ntaps + 1) / 2;
    const double w = 2.0 * ML_PI * f / q->cfg.rate_hz;
    double s = q->fir[kk - 1];
    for (size_t k = 1; k < kk; k++)
        s += 2.0 * q->fir[kk - 1 + k] * cos((double)k * w);
    return s;
}

static double analog_mag(double f)
{
    const double complex s = CMPLX(0.0, 2.0 * ML_PI * f);
    double complex h = s;
    for (int i = 0; i < 2; i++) {
        h /= s - P_REAL[i];
        h /= (s - CMPLX(P_CPLX_RE[i], P_CPLX_IM[i])) * (s - CMPLX(P_CPLX_RE[i], -P_CPLX_IM[i]));
    }
    return cabs(h);
}

static double tol_at(double f) /* Table 1 tolerance, linear in lg f, clamped at the ends */
{
    if (f <= T1_HZ[0])
        return T1_TOL[0];
    for (int i = 1; i < 20; i++)
        if (f <= T1_HZ[i]) {
            const double t = log(f / T1_HZ[i - 1]) / log(T1_HZ[i] / T1_HZ[i - 1]);
            return T1_TOL[i - 1] + t * (T1_TOL[i] - T1_TOL[i - 1]);
        }
    return T1_TOL[19];
}

/* Solves the K x K system m a = v in place (Gaussian elimination, partial pivoting). */
static int solve(double m[FIR_MAX][FIR_MAX], double *v, size_t kk)
{
    for (size_t c = 0; c < kk; c++) {
        size_t piv = c;
        for (size_t r = c + 1; r < kk; r++)
            if (fabs(m[r][c]) > fabs(m[piv][c]))
                piv = r;
        if (!(fabs(m[piv][c]) > 0))
            return 0;
        for (size_t j = 0; j < kk; j++) {
            const double t = m[c][j];
            m[c][j] = m[piv][j];
            m[piv][j] = t;
        }
        const double t = v[c];
        v[c] = v[piv];
        v[piv] = t;
        for (size_t r = c + 1; r < kk; r++) {
            const double f = m[r][c] / m[c][c];
            for (size_t j = c; j < kk; j++)
                m[r][j] -= f * m[c][j];
            v[r] -= f * v[c];
        }
    }
    for (size_t c = kk; c-- > 0;) {
        double s = v[c];
        for (size_t j = c + 1; j < kk; j++)
            s -= m[c][j] * v[j];
        v[c] = s / m[c][c];
    }
    return 1;
}

/* Matched-z sections, then the least-squares cosine-series correction (see the header). */
static int design(ml_qp468 *q)
{
    const double fs = q->cfg.rate_hz, T = 1.0 / fs;
    /* zeros at z = 1 and z = -1 over the two real poles */
    const double r0 = exp(P_REAL[0] * T), r1 = exp(P_REAL[1] * T);
    q->s[0] = (ml_biquad){{1.0, 0.0, -1.0}, {1.0, -(r0 + r1), r0 * r1}, 0, 0};
    for (int i = 0; i < 2; i++) {
        const double complex p = cexp(CMPLX(P_CPLX_RE[i] * T, P_CPLX_IM[i] * T));
        const double m2 = creal(p) * creal(p) + cimag(p) * cimag(p);
        q->s[1 + i] = (ml_biquad){{1.0, 0.0, 0.0}, {1.0, -2.0 * creal(p), m2}, 0, 0};
    }
    const size_t kk = fs < 64000 ? 8 : 3;
    q->ntaps = 2 * kk - 1;
    const double hi = fmin(0.46 * fs, 24000.0), ga = analog_mag(1000.0), gd = iir_mag(q, 1000.0);
    double m[FIR_MAX][FIR_MAX] = {{0}}, v[FIR_MAX] = {0};
    for (size_t i = 0; i < GRID; i++) {
        const double f = 20.0 * pow(hi / 20.0, (double)i / (GRID - 1));
        const double c = (analog_mag(f) / ga) / (iir_mag(q, f) / gd), w = 1.0 / tol_at(f);
        double row[FIR_MAX];
        for (size_t k = 0; k < kk; k++)
            row[k] = w * cos((double)k * 2.0 * ML_PI * f / fs) / c;
        for (size_t a = 0; a < kk; a++) {
            v[a] += row[a] * w;
            for (size_t b = 0; b < kk; b++)
                m[a][b] += row[a] * row[b];
        }
    }
    if (!solve(m, v, kk))
        return 0;
    for (size_t k = 0; k < kk; k++) { /* taps h[kk-1 +- k] = a_k / 2, h[kk-1] = a_0 */
        q->fir[kk - 1 + k] = k == 0 ? v[0] : v[k] / 2.0;
        q->fir[kk - 1 - k] = q->fir[kk - 1 + k];
    }
    q->gain = 1.0 / (iir_mag(q, 1000.0) * fabs(fir_amp(q, 1000.0)));
    return isfinite(q->gain) && q->gain > 0;
}

static void clear_state(ml_qp468 *q)
{
    for (int i = 0; i < 3; i++)
        q->s[i].z1 = q->s[i].z2 = 0.0;
    for (size_t i = 0; i < 2 * FIR_MAX - 1; i++)
        q->ring[i] = 0.0;
    q->pos = 0;
    q->y1 = q->y2 = 0.0;
    q->frames = q->counted = 0;
    q->max = q->sum = 0.0;
}

/* One sample through the chain; returns y2 (uncalibrated). */
static inline double step(ml_qp468 *q, double x)
{
    double r = x;
    if (q->cfg.weighted) {
        double v = q->gain * x;
        for (int k = 0; k < 3; k++) {
            v = ml_biquad_step(&q->s[k], v);
        }
        q->ring[q->pos] = v;
        double acc = 0.0;
        size_t j = q->pos;
        for (size_t t = 0; t < q->ntaps; t++) {
            acc += q->fir[t] * q->ring[j];
            j = j == 0 ? q->ntaps - 1 : j - 1;
        }
        q->pos = q->pos + 1 == q->ntaps ? 0 : q->pos + 1;
        r = acc;
    }
    r = fabs(r);
    q->y1 += q->a1 * (r > q->y1 ? r - q->y1 : 0.0) - q->b1 * q->y1;
    q->y2 += q->c2 * (q->y1 - q->y2);
    return q->y2;
}

ml_status ml_qp468_create(const ml_qp468_config *cfg, ml_qp468 **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz >= 32000 && cfg->rate_hz <= 384000)
        || !(cfg->settle_s >= 0 && cfg->settle_s <= 3600))
        return ML_EINVAL;
    ml_qp468 *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    const double fs = cfg->rate_hz;
    q->a1 = 1.0 - exp(-1.0 / (TAU_A1 * fs));
    q->b1 = 1.0 - exp(-1.0 / (TAU_R1 * fs));
    q->c2 = 1.0 - exp(-1.0 / (TAU_2 * fs));
    if (cfg->weighted && !design(q)) {
        free(q);
        return ML_EINVAL;
    }
    /* clause 2.6: a steady 1 kHz sine reads its r.m.s. value; calibrate on the whole chain */
    clear_state(q);
    const size_t n = (size_t)(3.0 * fs), from = n - (size_t)(0.5 * fs);
    const double w = 2.0 * ML_PI * 1000.0 / fs;
    double mx = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double y = step(q, sin(w * (double)i));
        if (i >= from && y > mx)
            mx = y;
    }
    q->k = (1.0 / sqrt(2.0)) / mx;
    q->settle_frames = (uint64_t)llround(cfg->settle_s * fs);
    clear_state(q);
    *out = q;
    return ML_OK;
}

void ml_qp468_destroy(ml_qp468 *q)
{
    free(q);
}

void ml_qp468_reset(ml_qp468 *q)
{
    if (q != NULL)
        clear_state(q);
}

ml_status ml_qp468_push(ml_qp468 *q, const float *x, size_t n)
{
    if (q == NULL || (n > 0 && x == NULL))
        return ML_EINVAL;
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(x[i]))
            return ML_ERANGE;
        const double y = q->k * step(q, (double)x[i]);
        if (++q->frames > q->settle_frames) {
            q->counted++;
            q->sum += y;
            if (y > q->max)
                q->max = y;
        }
    }
    return ML_OK;
}

static double dbfs(double x)
{
    return x > 0 ? 20.0 * log10(x * sqrt(2.0)) : NAN;
}

ml_status ml_qp468_get(const ml_qp468 *q, ml_qp468_result *out)
{
    if (q == NULL || out == NULL)
        return ML_EINVAL;
    *out = (ml_qp468_result){0};
    out->reading = q->k * q->y2;
    out->max_reading = q->max;
    out->mean_reading = q->counted ? q->sum / (double)q->counted : 0.0;
    out->reading_dbfs = dbfs(out->reading);
    out->max_dbfs = dbfs(out->max_reading);
    out->mean_dbfs = dbfs(out->mean_reading);
    out->frames = q->frames;
    return ML_OK;
}

double ml_qp468_get_response_db(const ml_qp468 *q, double f_hz)
{
    if (q == NULL || !q->cfg.weighted || !(f_hz > 0 && f_hz < q->cfg.rate_hz / 2))
        return NAN;
    return 20.0 * log10(q->gain * iir_mag(q, f_hz) * fabs(fir_amp(q, f_hz)));
}
