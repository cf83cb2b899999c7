/* Quasi-peak, average and peak readings (definitions in dsp/qpeak.h).
 * SPDX-License-Identifier: MIT
 *
 * References: docs/references.md 11 (CISPR 16-1-1 Band B: bandwidth, time constants and their
 * definitions, critically damped meter, pulse response).
 * [press:2007] W. H. Press et al., "Numerical Recipes", 3rd ed., Cambridge, 2007: classical
 *     fourth-order Runge-Kutta (sec. 17.1), Simpson's rule (sec. 4.1), bisection (sec. 9.1).
 */
#include <complex.h> /* before cfir.h uses double complex */

#include "dsp/qpeak.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/cfir.h"
#include "dsp/internal.h"

/* Frames processed at a time inside a push (fixed buffers). */
#define CHUNK 512
/* IF filter span: +-6 sigma (the tap at the edge is e^-18 = 1.5e-8 of the centre one). */
#define SIGMAS 6.0
/* A step of the second-order meter is within (1 + 8) e^-8 = 0.3 % of its end value after 8 TM. */
#define SETTLE_TM 8.0
/* The analytic filter's stopband. */
#define ANALYTIC_STOP_DB 80.0

typedef struct {
    uint64_t frames;
    double qp, av, peak, sum;
} acc;

struct ml_qpeak {
    ml_qpeak_config cfg;
    ml_cfir *ana;           /* real input: analytic-signal low-pass (at -rate/4)           */
    double complex *zin;    /* CHUNK: shifted input to ana                                 */
    double complex *zout;   /* CHUNK: its output                                           */
    size_t ntaps;           /* IF filter taps: odd                                         */
    double *tre, *tim;      /* taps in reversed order (dot products run forward)          */
    double *xre, *xim;      /* (ntaps - 1) history + CHUNK new samples                    */
    size_t latency;
    uint64_t settle;
    double tau_c, share, inv_share; /* detector: electrical charge constant, steady share k */
    double ic, id, ad;      /* 1 / tau_c, 1 / TD, exp(-T / TD)                            */
    double ma;              /* meter section gain 1 - exp(-T / TM)                        */
    double dt;              /* 1 / rate                                                   */
    /* state */
    uint64_t n;             /* input frames since reset                                   */
    double v, q1, q2, a1, a2;
    double e1, e2;          /* the two previous envelope samples                          */
    acc span, total;
};

/* Mean over one carrier cycle of max(e cos(phi) - v, 0): the diode current of a half-wave
 * rectifier charging to v (per unit conductance), e > v >= 0. */
static ML_INLINE double diode(double e, double v)
{
    if (!(e > v))
        return 0.0;
    double c = v / e;
    c = c < -1.0 ? -1.0 : c;
    return (sqrt(e * e - v * v) - v * acos(c)) / ML_PI;
}

static ML_INLINE double dvdt(double e, double v, double ic, double id)
{
    return diode(e, v) * ic - v * id;
}

/* Steady detector voltage for e = 1: the root of diode(1, v) / tau_c = v / td in (0, 1). */
static double steady(double tau_c, double td)
{
    double lo = 0.0, hi = 1.0;
    for (int i = 0; i < 200 && hi - lo > 1e-16; i++) {
        const double m = 0.5 * (lo + hi);
        if (diode(1.0, m) / tau_c - m / td > 0)
            lo = m;
        else
            hi = m;
    }
    return 0.5 * (lo + hi);
}

/* Time for v to rise from 0 to (1 - 1/e) of its steady value after e = 1 is applied:
 * t = integral of dv / (dv/dt), by Simpson's rule [press:2007] (the integrand is smooth and
 * bounded there, since dv/dt > 0 below the steady value). */
static double rise_time(double tau_c, double td)
{
    const double top = (1.0 - exp(-1.0)) * steady(tau_c, td);
    const int n = 4096;
    const double h = top / n;
    double s = 0.0;
    for (int i = 0; i <= n; i++) {
        const double w = (i == 0 || i == n) ? 1.0 : (i % 2 ? 4.0 : 2.0);
        s += w / dvdt(1.0, h * i, 1.0 / tau_c, 1.0 / td);
    }
    return s * h / 3.0;
}

ml_qpeak_config ml_qpeak_config_default(double rate_hz, bool complex_input, double centre_hz)
{
    return (ml_qpeak_config){.rate_hz = rate_hz,
                             .complex_input = complex_input,
                             .centre_hz = centre_hz,
                             .bandwidth_hz = 9000.0,
                             .charge_s = 0.001,
                             .discharge_s = 0.160,
                             .meter_s = 0.160,
                             .transition_hz = 250.0};
}

static bool config_ok(const ml_qpeak_config *c)
{
    if (c == NULL || !isfinite(c->rate_hz) || !(c->rate_hz > 0) || !isfinite(c->bandwidth_hz)
        || !(c->bandwidth_hz > 0) || !(c->rate_hz >= 4.0 * c->bandwidth_hz)
        || !(c->rate_hz <= 1000.0 * c->bandwidth_hz) || !isfinite(c->centre_hz) || !(c->charge_s > 0)
        || !(c->charge_s * c->rate_hz >= 8.0) || !(c->discharge_s > 2.0 * c->charge_s) || !(c->discharge_s <= 1e4)
        || !(c->meter_s > 0) || !(c->meter_s <= 1e4))
        return false;
    if (c->complex_input)
        return fabs(c->centre_hz) + c->bandwidth_hz / 2 <= c->rate_hz / 2;
    return c->transition_hz > 0 && c->transition_hz <= c->rate_hz / 8 && c->centre_hz >= c->transition_hz
           && c->centre_hz + c->bandwidth_hz / 2 <= c->rate_hz / 2 - c->transition_hz;
}

ml_status ml_qpeak_create(const ml_qpeak_config *cfg, ml_qpeak **out)
{
    assert(out != NULL);
    *out = NULL;
    if (!config_ok(cfg))
        return ML_EINVAL;
    ml_qpeak *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    ml_status st = ML_ENOMEM;
    q->cfg = *cfg;
    const double fs = cfg->rate_hz;
    q->dt = 1.0 / fs;

    /* IF filter: h(t) proportional to exp(-t^2 / (2 sigma^2)) has the response
     * exp(-2 pi^2 sigma^2 f^2); = 1/2 at f = B/2 gives sigma = sqrt(2 ln 2) / (pi B). */
    const double sigma = sqrt(2.0 * log(2.0)) / (ML_PI * cfg->bandwidth_hz) * fs; /* in samples */
    const size_t half = (size_t)ceil(SIGMAS * sigma);
    q->ntaps = 2 * half + 1;
    q->tre = malloc(q->ntaps * sizeof *q->tre);
    q->tim = malloc(q->ntaps * sizeof *q->tim);
    q->xre = calloc(q->ntaps - 1 + CHUNK, sizeof *q->xre);
    q->xim = calloc(q->ntaps - 1 + CHUNK, sizeof *q->xim);
    if (q->tre == NULL || q->tim == NULL || q->xre == NULL || q->xim == NULL)
        goto fail;
    double centre = cfg->centre_hz;
    if (!cfg->complex_input) {
        /* the analytic signal arrives shifted by -rate/4 */
        centre -= fs / 4;
        ml_cfir_config cc = ml_cfir_config_default(fs, fs / 4 - cfg->transition_hz);
        cc.transition_hz = cfg->transition_hz;
        cc.stop_db = ANALYTIC_STOP_DB;
        q->zin = malloc(CHUNK * sizeof *q->zin);
        q->zout = malloc(CHUNK * sizeof *q->zout);
        if (q->zin == NULL || q->zout == NULL)
            goto fail;
        st = ml_cfir_create(&cc, &q->ana);
        if (st != ML_OK)
            goto fail;
        q->latency = ml_cfir_latency(q->ana);
    }
    double gsum = 0.0;
    for (size_t k = 0; k < q->ntaps; k++) {
        const double t = (double)k - (double)half;
        gsum += exp(-t * t / (2.0 * sigma * sigma));
    }
    /* y[n] = sum_k c[k] x[n - k], c[k] = g[k - half] e^{j w0 (k - half)}; stored reversed:
     * t[j] = c[ntaps - 1 - j], so y[n] = sum_j t[j] x[n - ntaps + 1 + j]. */
    const double w0 = 2.0 * ML_PI * centre / fs;
    for (size_t j = 0; j < q->ntaps; j++) {
        const double t = (double)half - (double)j;
        const double g = exp(-t * t / (2.0 * sigma * sigma)) / gsum;
        q->tre[j] = g * cos(w0 * t);
        q->tim[j] = g * sin(w0 * t);
    }
    q->latency += half;
    q->settle = (uint64_t)q->latency + (uint64_t)ceil(SETTLE_TM * cfg->meter_s * fs);

    /* Detector: tau_c such that the rise to 1 - 1/e of the steady value takes charge_s. The rise
     * time grows with tau_c, from 0. With tau_c = charge_s the diode's mean current, at most
     * e / pi, charges more slowly than a resistor of that constant would, so the rise takes longer
     * than charge_s and the root lies below (checked). */
    const double td = cfg->discharge_s;
    double lo = log(cfg->charge_s) - 20.0, hi = log(cfg->charge_s);
    if (!(rise_time(cfg->charge_s, td) > cfg->charge_s)) {
        st = ML_EINVAL;
        goto fail;
    }
    for (int i = 0; i < 100; i++) {
        const double m = 0.5 * (lo + hi);
        if (rise_time(exp(m), td) > cfg->charge_s)
            hi = m;
        else
            lo = m;
    }
    q->tau_c = exp(0.5 * (lo + hi));
    q->share = steady(q->tau_c, td);
    q->inv_share = 1.0 / q->share;
    q->ic = 1.0 / q->tau_c;
    q->id = 1.0 / td;
    q->ad = exp(-q->dt / td);
    q->ma = -expm1(-q->dt / cfg->meter_s);
    ml_qpeak_reset(q);
    *out = q;
    return ML_OK;
fail:
    ml_qpeak_destroy(q);
    return st;
}

void ml_qpeak_destroy(ml_qpeak *q)
{
    if (q == NULL)
        return;
    ml_cfir_destroy(q->ana);
    free(q->zin);
    free(q->zout);
    free(q->tre);
    free(q->tim);
    free(q->xre);
    free(q->xim);
    free(q);
}

static void acc_clear(acc *a)
{
    *a = (acc){0};
}

void ml_qpeak_reset(ml_qpeak *q)
{
    if (q == NULL)
        return;
    ml_cfir_reset(q->ana);
    memset(q->xre, 0, (q->ntaps - 1 + CHUNK) * sizeof *q->xre);
    memset(q->xim, 0, (q->ntaps - 1 + CHUNK) * sizeof *q->xim);
    q->n = 0;
    q->v = q->q1 = q->q2 = q->a1 = q->a2 = 0.0;
    q->e1 = q->e2 = 0.0;
    acc_clear(&q->span);
    acc_clear(&q->total);
}

size_t ml_qpeak_latency(const ml_qpeak *q)
{
    return q ? q->latency : 0;
}

uint64_t ml_qpeak_get_settle_frames(const ml_qpeak *q)
{
    return q ? q->settle : 0;
}

/* IF filter over m new samples at x[ntaps - 1 ..], envelope into env[m]; then the history moves. */
ML_HOT static void if_filter(ml_qpeak *q, size_t m, double *restrict env)
{
    const size_t nt = q->ntaps;
    const double *restrict tr = q->tre, *restrict ti = q->tim;
    const double *restrict xr = q->xre, *restrict xi = q->xim;
    for (size_t i = 0; i < m; i++) {
        double yr = 0.0, yi = 0.0;
        for (size_t j = 0; j < nt; j++) {
            yr += tr[j] * xr[i + j] - ti[j] * xi[i + j];
            yi += tr[j] * xi[i + j] + ti[j] * xr[i + j];
        }
        env[i] = sqrt(yr * yr + yi * yi);
    }
    memmove(q->xre, q->xre + m, (nt - 1) * sizeof *q->xre);
    memmove(q->xim, q->xim + m, (nt - 1) * sizeof *q->xim);
}

static ML_INLINE void acc_add(acc *a, double e, double peak, double qp, double av)
{
    a->frames++;
    a->sum += e;
    if (peak > a->peak)
        a->peak = peak;
    if (qp > a->qp)
        a->qp = qp;
    if (av > a->av)
        a->av = av;
}

/* Detector, meters and the accumulators for m envelope samples. */
static void detect(ml_qpeak *q, const double *env, size_t m, acc *blk)
{
    double v = q->v, q1 = q->q1, q2 = q->q2, a1 = q->a1, a2 = q->a2, e1 = q->e1, e2 = q->e2;
    const double ic = q->ic, id = q->id, ad = q->ad, ma = q->ma, h = q->dt, k = q->inv_share;
    for (size_t i = 0; i < m; i++) {
        const double e = env[i];
        /* detector: with the diode off for the whole step, the exact decay; else one RK4 step
         * [press:2007] with e held */
        if (e <= v * ad) {
            v *= ad;
        } else {
            const double k1 = dvdt(e, v, ic, id);
            const double k2 = dvdt(e, v + 0.5 * h * k1, ic, id);
            const double k3 = dvdt(e, v + 0.5 * h * k2, ic, id);
            const double k4 = dvdt(e, v + h * k3, ic, id);
            v += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
        }
        q1 += (v * k - q1) * ma;
        q2 += (q1 - q2) * ma;
        a1 += (e - a1) * ma;
        a2 += (a1 - a2) * ma;
        /* peak: the sample itself, and the vertex of the log-parabola at a local maximum e1 */
        double pk = e;
        if (e1 > e2 && e1 >= e && e2 > 0 && e > 0) {
            const double ym = log(e2), y0 = log(e1), yp = log(e);
            const double d = ym - 2.0 * y0 + yp; /* < 0 at a strict maximum */
            const double p = d < 0 ? 0.5 * (ym - yp) / d : 0.0;
            const double top = exp(y0 - 0.25 * (ym - yp) * p);
            if (top > pk)
                pk = top;
        }
        e2 = e1;
        e1 = e;
        acc_add(&q->span, e, pk, q2, a2);
        acc_add(&q->total, e, pk, q2, a2);
        if (blk)
            acc_add(blk, e, pk, q2, a2);
    }
    q->v = v;
    q->q1 = q1;
    q->q2 = q2;
    q->a1 = a1;
    q->a2 = a2;
    q->e1 = e1;
    q->e2 = e2;
}

static double db20(double x, uint64_t frames)
{
    return frames > 0 && x > 0 ? 20.0 * log10(x) : NAN;
}

static void to_reading(const acc *a, ml_qpeak_reading *r)
{
    r->frames = a->frames;
    r->qp_dbfs = db20(a->qp, a->frames);
    r->av_dbfs = db20(a->av, a->frames);
    r->peak_dbfs = db20(a->peak, a->frames);
    r->mean_dbfs = a->frames > 0 ? db20(a->sum / (double)a->frames, a->frames) : NAN;
}

ml_status ml_qpeak_push(ml_qpeak *q, const float *data, size_t nframes, size_t stride, size_t re, size_t im,
                        ml_qpeak_reading *blk)
{
    if (q == NULL || (nframes > 0 && data == NULL) || re >= stride || (q->cfg.complex_input && im >= stride))
        return ML_EINVAL;
    acc b = {0};
    double env[CHUNK];
    const size_t off = q->ntaps - 1;
    for (size_t done = 0; done < nframes;) {
        const size_t m = nframes - done < CHUNK ? nframes - done : CHUNK;
        const float *f = data + done * stride;
        if (q->cfg.complex_input) {
            for (size_t i = 0; i < m; i++) {
                q->xre[off + i] = f[i * stride + re];
                q->xim[off + i] = f[i * stride + im];
            }
        } else {
            /* x (-j)^n: the band 0 .. rate/2 moves to -rate/4 .. rate/4 */
            for (size_t i = 0; i < m; i++) {
                const double x = f[i * stride + re];
                switch ((q->n + i) & 3u) {
                case 0: q->zin[i] = CMPLX(x, 0.0); break;
                case 1: q->zin[i] = CMPLX(0.0, -x); break;
                case 2: q->zin[i] = CMPLX(-x, 0.0); break;
                default: q->zin[i] = CMPLX(0.0, x); break;
                }
            }
            ml_status st = ml_cfir_push(q->ana, q->zin, m, q->zout);
            if (st != ML_OK)
                return st;
            for (size_t i = 0; i < m; i++) {
                q->xre[off + i] = 2.0 * creal(q->zout[i]);
                q->xim[off + i] = 2.0 * cimag(q->zout[i]);
            }
        }
        if_filter(q, m, env);
        detect(q, env, m, blk ? &b : NULL);
        q->n += m;
        done += m;
    }
    if (blk)
        to_reading(&b, blk);
    return ML_OK;
}

ml_status ml_qpeak_get_span(const ml_qpeak *q, ml_qpeak_reading *r)
{
    if (q == NULL || r == NULL)
        return ML_EINVAL;
    to_reading(&q->span, r);
    return ML_OK;
}

void ml_qpeak_restart_span(ml_qpeak *q)
{
    if (q != NULL)
        acc_clear(&q->span);
}

ml_status ml_qpeak_get_total(const ml_qpeak *q, ml_qpeak_reading *r)
{
    if (q == NULL || r == NULL)
        return ML_EINVAL;
    to_reading(&q->total, r);
    return ML_OK;
}

ml_status ml_qpeak_get_state(const ml_qpeak *q, ml_qpeak_state *s)
{
    if (q == NULL || s == NULL)
        return ML_EINVAL;
    *s = (ml_qpeak_state){.envelope = q->e1, .detector = q->v * q->inv_share, .qp_meter = q->q2, .av_meter = q->a2};
    return ML_OK;
}

ml_status ml_qpeak_get_detector(const ml_qpeak *q, double *tau_c_s, double *k)
{
    if (q == NULL)
        return ML_EINVAL;
    if (tau_c_s)
        *tau_c_s = q->tau_c;
    if (k)
        *k = q->share;
    return ML_OK;
}
