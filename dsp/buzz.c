/* Periodic impulsive interference (definitions in dsp/buzz.h).
 * SPDX-License-Identifier: MIT
 *
 * References: docs/references.md 15 (periodic impulsive interference: dimmers, switch-mode
 * supplies, motors; common practice).
 */
#include "dsp/buzz.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* A window whose rate differs from the buzz's by more than this share is another source. */
#define SAME_RATE 0.05
/* A rate within this share of k * mains is tied to the mains. */
#define TIE_SHARE 0.02
#define TIE_MAX_K 40

static const char *const tie_names[ML_BUZZ_TIE_COUNT] = {"untied", "mains", "twice-mains", "mains-multiple"};
static const char *const tie_hints[ML_BUZZ_TIE_COUNT] = {
    "not tied to the mains",
    "at the mains rate: a device switching once per mains cycle (half-wave control)",
    "at twice the mains rate: phase-control (triac) dimmers and similar chopping controls",
    "at a multiple of the mains rate: rectifier or commutation noise modulated by the mains",
};

const char *ml_buzz_tie_name(ml_buzz_tie t)
{
    return (unsigned)t < ML_BUZZ_TIE_COUNT ? tie_names[t] : "unknown";
}

const char *ml_buzz_tie_hint(ml_buzz_tie t)
{
    return (unsigned)t < ML_BUZZ_TIE_COUNT ? tie_hints[t] : "unknown";
}

/* Relative distance of rate from the nearest multiple k >= 1 of mains (<= TIE_MAX_K). */
static double tie_distance(double rate, double mains, int *k)
{
    long m = lround(rate / mains);
    if (m < 1)
        m = 1;
    if (m > TIE_MAX_K)
        m = TIE_MAX_K;
    *k = (int)m;
    return fabs(rate - (double)m * mains) / ((double)m * mains);
}

ml_status ml_buzz_tie_to_mains(double rate_hz, double mains_hz, ml_buzz_tie *tie, double *tied_mains_hz,
                               int *multiple)
{
    if (!isfinite(rate_hz) || !(rate_hz > 0) || (mains_hz != 0 && mains_hz != 50 && mains_hz != 60))
        return ML_EINVAL;
    int k = 0, k60 = 0;
    double mains = mains_hz != 0 ? mains_hz : 50.0;
    double d = tie_distance(rate_hz, mains, &k);
    if (mains_hz == 0) {
        const double d60 = tie_distance(rate_hz, 60.0, &k60);
        if (d60 < d) {
            d = d60;
            k = k60;
            mains = 60.0;
        }
    }
    const bool tied = d <= TIE_SHARE;
    ml_buzz_tie t = !tied ? ML_BUZZ_UNTIED : k == 1 ? ML_BUZZ_MAINS : k == 2 ? ML_BUZZ_TWICE_MAINS : ML_BUZZ_MAINS_MULTIPLE;
    if (tie)
        *tie = t;
    if (tied_mains_hz)
        *tied_mains_hz = tied ? mains : 0.0;
    if (multiple)
        *multiple = tied ? k : 0;
    return ML_OK;
}

struct ml_buzz {
    ml_buzz_config cfg;
    size_t cap;           /* ring capacity                                        */
    double *ring;         /* impulse times, oldest at head                        */
    size_t head, count;
    double *w, *work;     /* the window's times; scratch (intervals, sorting)     */
    int64_t *idx;         /* grid indices                                         */
    uint64_t next_eval;   /* index of the next evaluation (time (next_eval + 1) step) */
    double last_t, last_now;
    size_t run_on, run_off, need_on, need_off;
    bool active, pending;
    ml_buzz_event ev, pend;
    double pend_rate_sum, pend_jit_sum;
    size_t pend_n;
    double rate_sum, jit_sum;
    size_t nevals;
    double counted_to;    /* impulses on the grid up to this time are counted     */
};

ml_buzz_config ml_buzz_config_default(double mains_hz)
{
    return (ml_buzz_config){.window_s = 2.0,
                            .step_s = 0.5,
                            .delay_s = 0.25,
                            .min_rate_hz = 5.0,
                            .max_rate_hz = 500.0,
                            .tolerance = 0.25,
                            .min_share = 0.8,
                            .min_impulses = 8,
                            .min_s = 1.0,
                            .hold_s = 1.0,
                            .mains_hz = mains_hz};
}

ml_status ml_buzz_create(const ml_buzz_config *cfg, ml_buzz **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->window_s > 0) || !(cfg->window_s <= 60) || !(cfg->step_s > 0)
        || !(cfg->step_s <= cfg->window_s) || !(cfg->delay_s >= 0) || !(cfg->delay_s <= 60)
        || !(cfg->min_rate_hz > 0) || !(cfg->window_s * cfg->min_rate_hz >= 3) || !(cfg->max_rate_hz > cfg->min_rate_hz)
        || !(cfg->window_s * cfg->max_rate_hz <= 1e5) || !(cfg->tolerance > 0) || !(cfg->tolerance < 0.5)
        || !(cfg->min_share > 0) || !(cfg->min_share <= 1) || cfg->min_impulses < 3 || !(cfg->min_s >= 0)
        || !(cfg->min_s <= 1e6) || !(cfg->hold_s >= 0) || !(cfg->hold_s <= 1e6)
        || (cfg->mains_hz != 0 && cfg->mains_hz != 50 && cfg->mains_hz != 60))
        return ML_EINVAL;
    ml_buzz *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    /* the window plus what may arrive ahead of an evaluation (delay_s + step_s) at max_rate */
    q->cap = (size_t)ceil((cfg->window_s + cfg->delay_s + cfg->step_s) * cfg->max_rate_hz) + 2;
    q->ring = malloc(q->cap * sizeof *q->ring);
    q->w = malloc(q->cap * sizeof *q->w);
    q->work = malloc(q->cap * sizeof *q->work);
    q->idx = malloc(q->cap * sizeof *q->idx);
    if (q->ring == NULL || q->w == NULL || q->work == NULL || q->idx == NULL) {
        ml_buzz_destroy(q);
        return ML_ENOMEM;
    }
    q->need_on = (size_t)ceil(cfg->min_s / cfg->step_s - 1e-9);
    if (q->need_on < 1)
        q->need_on = 1;
    q->need_off = (size_t)ceil(cfg->hold_s / cfg->step_s - 1e-9);
    if (q->need_off < 1)
        q->need_off = 1;
    ml_buzz_reset(q);
    *out = q;
    return ML_OK;
}

void ml_buzz_destroy(ml_buzz *q)
{
    if (q == NULL)
        return;
    free(q->ring);
    free(q->w);
    free(q->work);
    free(q->idx);
    free(q);
}

void ml_buzz_reset(ml_buzz *q)
{
    if (q == NULL)
        return;
    q->head = q->count = 0;
    q->next_eval = 0;
    q->last_t = q->last_now = 0.0;
    q->run_on = q->run_off = 0;
    q->active = q->pending = false;
    q->pend_n = q->nevals = 0;
    q->pend_rate_sum = q->pend_jit_sum = q->rate_sum = q->jit_sum = 0.0;
    q->counted_to = -INFINITY;
}

static int cmp_double(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

typedef struct {
    bool periodic;
    double rate, jitter, first, last;
    size_t on_grid;
} verdict;

/* Least-squares line t = a + p k over the impulses whose residual res[i] is within +-lim (all when
 * res is NULL). */
static bool fit(const double *t, const int64_t *k, size_t n, const double *res, double lim, double *a, double *p)
{
    double sk = 0, st = 0, skk = 0, skt = 0;
    size_t m = 0;
    for (size_t i = 0; i < n; i++) {
        if (res && fabs(res[i]) > lim)
            continue;
        const double kk = (double)(k[i] - k[0]), tt = t[i] - t[0];
        sk += kk;
        st += tt;
        skk += kk * kk;
        skt += kk * tt;
        m++;
    }
    const double den = (double)m * skk - sk * sk;
    if (m < 2 || !(den > 0))
        return false;
    *p = ((double)m * skt - sk * st) / den;
    *a = t[0] + (st - *p * sk) / (double)m;
    return *p > 0;
}

/* Periodicity of the impulses in (e - window, e]. */
static verdict judge(ml_buzz *q, double e)
{
    verdict v = {0};
    size_t n = 0;
    for (size_t i = 0; i < q->count; i++) {
        const double t = q->ring[(q->head + i) % q->cap];
        if (t > e - q->cfg.window_s && t <= e)
            q->w[n++] = t;
    }
    if (n < q->cfg.min_impulses || n < 3)
        return v;
    for (size_t i = 0; i + 1 < n; i++)
        q->work[i] = q->w[i + 1] - q->w[i];
    qsort(q->work, n - 1, sizeof *q->work, cmp_double);
    size_t m = n - 1;
    double p0 = m % 2 ? q->work[m / 2] : 0.5 * (q->work[m / 2 - 1] + q->work[m / 2]);
    if (!(p0 >= 1.0 / q->cfg.max_rate_hz) || !(p0 <= 1.0 / q->cfg.min_rate_hz))
        return v;
    /* With impulses missing, the median interval lies above the period (the longer intervals
     * outnumber the short half of the one-period ones), and the rounding of long intervals below
     * would slip: refine twice as the median of interval / its whole number of periods, over the
     * intervals of 1 to 3 periods. */
    for (int it = 0; it < 2; it++) {
        m = 0;
        for (size_t i = 0; i + 1 < n; i++) {
            const double d = q->w[i + 1] - q->w[i];
            const long s = lround(d / p0);
            if (s >= 1 && s <= 3)
                q->work[m++] = d / (double)s;
        }
        if (m == 0)
            return v;
        qsort(q->work, m, sizeof *q->work, cmp_double);
        p0 = m % 2 ? q->work[m / 2] : 0.5 * (q->work[m / 2 - 1] + q->work[m / 2]);
    }
    q->idx[0] = 0;
    for (size_t i = 1; i < n; i++) {
        long s = lround((q->w[i] - q->w[i - 1]) / p0);
        q->idx[i] = q->idx[i - 1] + (s < 1 ? 1 : s);
    }
    double a = 0, p = 0;
    if (!fit(q->w, q->idx, n, NULL, 0, &a, &p))
        return v;
    /* residuals in work[] (the intervals are no longer needed) */
    for (int pass = 0; pass < 2; pass++) {
        for (size_t i = 0; i < n; i++)
            q->work[i] = q->w[i] - (a + p * (double)(q->idx[i] - q->idx[0]));
        if (pass == 0 && !fit(q->w, q->idx, n, q->work, q->cfg.tolerance * p, &a, &p))
            return v;
    }
    const double lim = q->cfg.tolerance * p;
    double ss = 0;
    v.first = INFINITY;
    v.last = -INFINITY;
    for (size_t i = 0; i < n; i++)
        if (fabs(q->work[i]) <= lim) {
            v.on_grid++;
            ss += q->work[i] * q->work[i];
            v.first = fmin(v.first, q->w[i]);
            v.last = fmax(v.last, q->w[i]);
        }
    v.rate = 1.0 / p;
    v.jitter = v.on_grid ? sqrt(ss / (double)v.on_grid) : 0;
    v.periodic = v.on_grid >= q->cfg.min_impulses && (double)v.on_grid >= q->cfg.min_share * (double)n
                 && v.last - v.first >= 0.5 * q->cfg.window_s && v.rate >= q->cfg.min_rate_hz
                 && v.rate <= q->cfg.max_rate_hz;
    return v;
}

/* Impulses of the window ending at e that came after counted_to (each is counted once). */
static uint64_t count_new(const ml_buzz *q, double e)
{
    uint64_t c = 0;
    for (size_t i = 0; i < q->count; i++) {
        const double t = q->ring[(q->head + i) % q->cap];
        if (t > e - q->cfg.window_s && t <= e && t > q->counted_to)
            c++;
    }
    return c;
}

static void close_event(ml_buzz *q)
{
    ml_buzz_event *b = &q->ev;
    b->rate_hz = q->rate_sum / (double)q->nevals;
    b->jitter_s = q->jit_sum / (double)q->nevals;
    ml_buzz_tie_to_mains(b->rate_hz, q->cfg.mains_hz, &b->tie, &b->mains_hz, &b->multiple);
}

static bool evaluate(ml_buzz *q, double e, ml_buzz_event *ev, size_t cap, size_t *nev)
{
    verdict v = judge(q, e);
    if (q->active && v.periodic && fabs(v.rate - q->rate_sum / (double)q->nevals) > SAME_RATE * v.rate)
        v.periodic = false;
    if (q->pending && v.periodic && fabs(v.rate - q->pend_rate_sum / (double)q->pend_n) > SAME_RATE * v.rate)
        q->pending = false; /* a run at another rate starts over */
    bool ok = true;
    if (v.periodic) {
        q->run_off = 0;
        if (q->active) {
            q->ev.impulses += count_new(q, e);
            q->counted_to = e;
            q->ev.end_s = fmax(q->ev.end_s, v.last);
            q->rate_sum += v.rate;
            q->jit_sum += v.jitter;
            q->nevals++;
            q->ev.rate_min_hz = fmin(q->ev.rate_min_hz, v.rate);
            q->ev.rate_max_hz = fmax(q->ev.rate_max_hz, v.rate);
        } else {
            if (!q->pending) {
                q->pending = true;
                q->pend = (ml_buzz_event){.start_s = v.first, .end_s = v.last, .rate_min_hz = v.rate,
                                          .rate_max_hz = v.rate};
                q->pend_rate_sum = q->pend_jit_sum = 0;
                q->pend_n = 0;
                q->counted_to = e - q->cfg.window_s;
                q->pend.impulses = count_new(q, e);
                q->counted_to = e;
            } else {
                q->pend.impulses += count_new(q, e);
                q->counted_to = e;
                q->pend.end_s = fmax(q->pend.end_s, v.last);
                q->pend.rate_min_hz = fmin(q->pend.rate_min_hz, v.rate);
                q->pend.rate_max_hz = fmax(q->pend.rate_max_hz, v.rate);
            }
            q->pend_rate_sum += v.rate;
            q->pend_jit_sum += v.jitter;
            q->pend_n++;
            if (q->pend_n >= q->need_on) {
                q->active = true;
                q->pending = false;
                q->ev = q->pend;
                q->rate_sum = q->pend_rate_sum;
                q->jit_sum = q->pend_jit_sum;
                q->nevals = q->pend_n;
            }
        }
    } else {
        q->pending = false;
        if (q->active && ++q->run_off >= q->need_off) {
            q->active = false;
            q->run_off = 0;
            close_event(q);
            if (*nev < cap)
                ev[(*nev)++] = q->ev;
            else
                ok = false;
        }
    }
    return ok;
}

ml_status ml_buzz_push(ml_buzz *q, const double *t_s, size_t n, double now_s, ml_buzz_event *ev, size_t cap,
                       size_t *nev)
{
    if (q == NULL || nev == NULL || (n > 0 && t_s == NULL) || (cap > 0 && ev == NULL) || !isfinite(now_s)
        || now_s < q->last_now)
        return ML_EINVAL;
    *nev = 0;
    for (size_t i = 0; i < n; i++)
        if (!isfinite(t_s[i]) || t_s[i] < q->last_t || t_s[i] < 0 || (i > 0 && t_s[i] < t_s[i - 1]))
            return ML_EINVAL;
    bool ok = true;
    size_t i = 0;
    for (;;) {
        const double e = (double)(q->next_eval + 1) * q->cfg.step_s;
        /* impulses up to the evaluation's time (and those after it, up to now) go into the ring */
        while (i < n && (t_s[i] <= e || e + q->cfg.delay_s > now_s)) {
            if (q->count == q->cap) { /* full: the oldest goes */
                q->head = (q->head + 1) % q->cap;
                q->count--;
            }
            q->ring[(q->head + q->count++) % q->cap] = t_s[i];
            q->last_t = t_s[i];
            i++;
        }
        if (e + q->cfg.delay_s > now_s)
            break;
        ok &= evaluate(q, e, ev, cap, nev);
        q->next_eval++;
        /* forget what no later window can hold */
        while (q->count > 0 && q->ring[q->head] <= e + q->cfg.step_s - q->cfg.window_s) {
            q->head = (q->head + 1) % q->cap;
            q->count--;
        }
    }
    q->last_now = now_s;
    return ok ? ML_OK : ML_EINVAL;
}

ml_status ml_buzz_finish(ml_buzz *q, ml_buzz_event *ev, size_t cap, size_t *nev)
{
    if (q == NULL || nev == NULL || (cap > 0 && ev == NULL))
        return ML_EINVAL;
    *nev = 0;
    if (!q->active)
        return ML_OK;
    q->active = false;
    close_event(q);
    if (cap == 0)
        return ML_EINVAL;
    ev[(*nev)++] = q->ev;
    return ML_OK;
}

bool ml_buzz_get_active(const ml_buzz *q, ml_buzz_event *e)
{
    if (q == NULL || !q->active)
        return false;
    if (e) {
        *e = q->ev;
        e->rate_hz = q->rate_sum / (double)q->nevals;
        e->jitter_s = q->jit_sum / (double)q->nevals;
        ml_buzz_tie_to_mains(e->rate_hz, q->cfg.mains_hz, &e->tie, &e->mains_hz, &e->multiple);
    }
    return true;
}

/* ---- state as numbers ---- */

enum { BUZZ_TAG = 3, EV_N = 10, BUZZ_FIXED = 16 + 2 * EV_N };

static void put_event(double *s, const ml_buzz_event *e)
{
    const double v[EV_N] = {e->start_s,   e->end_s,    e->rate_hz,        e->rate_min_hz, e->rate_max_hz,
                            e->jitter_s,  (double)e->impulses, (double)e->tie, e->mains_hz,  e->multiple};
    memcpy(s, v, sizeof v);
}

static bool get_event(const double *s, ml_buzz_event *e)
{
    for (int i = 0; i < EV_N; i++)
        if (!isfinite(s[i]))
            return false;
    if (!(s[6] >= 0 && s[6] <= 9e15 && s[6] == floor(s[6])) || !(s[7] >= 0 && s[7] < ML_BUZZ_TIE_COUNT)
        || s[7] != floor(s[7]) || !(fabs(s[9]) <= 1000) || s[9] != floor(s[9]))
        return false;
    *e = (ml_buzz_event){.start_s = s[0], .end_s = s[1], .rate_hz = s[2], .rate_min_hz = s[3],
                         .rate_max_hz = s[4], .jitter_s = s[5], .impulses = (uint64_t)s[6],
                         .tie = (ml_buzz_tie)s[7], .mains_hz = s[8], .multiple = (int)s[9]};
    return true;
}

size_t ml_buzz_save(const ml_buzz *q, double *s, size_t cap)
{
    if (q == NULL)
        return 0;
    const size_t need = BUZZ_FIXED + q->count;
    if (s == NULL || cap < need)
        return need;
    const double fixed[16] = {BUZZ_TAG,        (double)q->count,   (double)q->next_eval, q->last_t,
                              q->last_now,     (double)q->run_on,  (double)q->run_off,   q->active,
                              q->pending,      q->pend_rate_sum,   q->pend_jit_sum,      (double)q->pend_n,
                              q->rate_sum,     q->jit_sum,         (double)q->nevals,    q->counted_to};
    memcpy(s, fixed, sizeof fixed);
    put_event(s + 16, &q->ev);
    put_event(s + 16 + EV_N, &q->pend);
    for (size_t i = 0; i < q->count; i++)
        s[BUZZ_FIXED + i] = q->ring[(q->head + i) % q->cap];
    return need;
}

ml_status ml_buzz_restore(ml_buzz *q, const double *s, size_t n)
{
    if (q == NULL || s == NULL || n < BUZZ_FIXED || s[0] != BUZZ_TAG || !(s[1] >= 0 && s[1] <= (double)q->cap)
        || s[1] != floor(s[1]) || n != BUZZ_FIXED + (size_t)s[1])
        return ML_EINVAL;
    const size_t counts[] = {2, 5, 6, 11, 14};
    for (size_t i = 0; i < sizeof counts / sizeof *counts; i++)
        if (!(s[counts[i]] >= 0 && s[counts[i]] <= 9e15 && s[counts[i]] == floor(s[counts[i]])))
            return ML_EINVAL;
    for (size_t i = 3; i < 16; i++)
        if (i != 15 && !isfinite(s[i]))
            return ML_EINVAL;
    if (isnan(s[15]) || s[15] == INFINITY || !(s[3] >= 0) || !(s[4] >= s[3]))
        return ML_EINVAL;
    ml_buzz_event ev, pend;
    if (!get_event(s + 16, &ev) || !get_event(s + 16 + EV_N, &pend))
        return ML_EINVAL;
    for (size_t i = BUZZ_FIXED; i < n; i++)
        if (!isfinite(s[i]) || s[i] < 0 || s[i] > s[3] || (i > BUZZ_FIXED && s[i] < s[i - 1]))
            return ML_EINVAL;
    if ((s[7] != 0 && s[14] < 1) || (s[8] != 0 && s[11] < 1))
        return ML_EINVAL;
    ml_buzz_reset(q);
    q->count = (size_t)s[1];
    for (size_t i = 0; i < q->count; i++)
        q->ring[i] = s[BUZZ_FIXED + i];
    q->next_eval = (uint64_t)s[2];
    q->last_t = s[3];
    q->last_now = s[4];
    q->run_on = (size_t)s[5];
    q->run_off = (size_t)s[6];
    q->active = s[7] != 0;
    q->pending = s[8] != 0;
    q->pend_rate_sum = s[9];
    q->pend_jit_sum = s[10];
    q->pend_n = (size_t)s[11];
    q->rate_sum = s[12];
    q->jit_sum = s[13];
    q->nevals = (size_t)s[14];
    q->counted_to = s[15];
    q->ev = ev;
    q->pend = pend;
    return ML_OK;
}

/* ---- comb of lines ---- */

#define COMB_HALF 32

static int cmp_float(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Bin k is a line: a local maximum at least thr (a power ratio) above the median of its
 * neighbourhood. */
static bool is_line(const double *psd, size_t nbins, size_t k, double thr)
{
    if (k == 0 || k + 1 >= nbins || !(psd[k] >= psd[k - 1]) || !(psd[k] > psd[k + 1]))
        return false;
    double win[2 * COMB_HALF + 1];
    const size_t lo = k > COMB_HALF ? k - COMB_HALF : 0, hi = k + COMB_HALF < nbins ? k + COMB_HALF : nbins - 1;
    size_t m = 0;
    for (size_t j = lo; j <= hi; j++)
        win[m++] = psd[j];
    qsort(win, m, sizeof *win, cmp_float);
    const double med = m % 2 ? win[m / 2] : 0.5 * (win[m / 2 - 1] + win[m / 2]);
    return psd[k] > med * thr;
}

/* The line within +-1.5 bins of frequency f (the strongest), or SIZE_MAX. */
static size_t line_near(const double *psd, size_t nbins, double bin_hz, double f, double thr)
{
    const double c = f / bin_hz;
    size_t best = SIZE_MAX;
    for (long j = (long)ceil(c - 1.5); j <= (long)floor(c + 1.5); j++)
        if (j > 0 && (size_t)j < nbins && is_line(psd, nbins, (size_t)j, thr)
            && (best == SIZE_MAX || psd[j] > psd[best]))
            best = (size_t)j;
    return best;
}

ml_status ml_buzz_find_comb(const double *psd, size_t nbins, double bin_hz, double lo_hz, double hi_hz,
                            double threshold_db, size_t min_lines, double *spacing_hz, size_t *lines)
{
    if (psd == NULL || spacing_hz == NULL || lines == NULL || nbins < 16 || !isfinite(bin_hz) || !(bin_hz > 0)
        || !isfinite(lo_hz) || !isfinite(hi_hz) || !(lo_hz > 0) || lo_hz > hi_hz || min_lines < 2
        || !(threshold_db > 0) || !isfinite(threshold_db))
        return ML_EINVAL;
    *spacing_hz = 0;
    *lines = 0;
    const double thr = pow(10.0, threshold_db / 10.0), top = (double)(nbins - 1) * bin_hz;
    size_t best_n = 0;
    double best_s = 0;
    const size_t k0 = (size_t)ceil(lo_hz / bin_hz), k1 = (size_t)floor(hi_hz / bin_hz);
    for (size_t k = k0 > 0 ? k0 : 1; k <= k1 && k < nbins; k++) {
        if (!is_line(psd, nbins, k, thr))
            continue;
        /* lines at the orders of s = k bins; s refined as we go (slope through the origin) */
        double s = (double)k * bin_hz, skf = 0, skk = 0;
        size_t cnt = 0;
        for (int ord = 1; ord * s <= top; ord++) {
            const size_t j = line_near(psd, nbins, bin_hz, ord * s, thr);
            if (j == SIZE_MAX)
                continue;
            cnt++;
            skf += ord * (double)j * bin_hz;
            skk += (double)ord * ord;
            s = skf / skk;
        }
        if (cnt > best_n) {
            best_n = cnt;
            best_s = s;
        }
    }
    if (best_n >= min_lines) {
        *spacing_hz = best_s;
        *lines = best_n;
    }
    return ML_OK;
}
