/* AM demodulation and envelope statistics.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley 2001, ch. 3 (envelope of
 *     A_c[1 + mu m(t)] cos(2 pi f_c t); over-modulation and phase reversal).
 * [catmull:1974] E. Catmull, R. Rom, "A class of local interpolating splines", in Computer Aided
 *     Geometric Design, Academic Press 1974 (the cubic used to oversample the envelope).
 */
#include "dsp/am.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/cfir.h"
#include "dsp/internal.h"

#define HIST_BINS 65536
#define HIST_RANGE 4.0 /* histogram covers 0 .. HIST_RANGE * carrier_ref */
#define OVERSAMPLE 4
#define CHUNK 1024     /* internal processing chunk (stack-free: buffers are in the object) */

struct ml_am {
    ml_am_config cfg;
    ml_cfir *filter;
    size_t latency;
    size_t startup;          /* half the filter: envelope before it comes from a part-filled filter */
    uint64_t in_count;       /* input samples pushed                                   */
    bool finished;           /* finish was called: no more pushes until reset          */
    double complex mixed[CHUNK], filtered[CHUNK];
    /* delay lines of latency + 1 samples: reference channel and input */
    float *ref_ring;
    double complex *in_ring;
    size_t ref_len, ref_pos;
    /* the current block's envelope and input samples, released when it is classified */
    double *blk_env;
    double complex *blk_in;
    const ml_am_output *out; /* where end_block releases samples (NULL: nowhere)        */
    size_t *out_count;
    /* baseband history for interpolation: h[0] oldest .. h[3] newest */
    double complex h[4];
    uint64_t produced;       /* envelope samples produced                              */
    /* current block */
    size_t block_len, block_fill;
    double block_sum, block_sumsq;
    double *pending;         /* OVERSAMPLE * block_len interpolated values             */
    size_t npending;
    /* totals */
    double sum_all, sum_mod, sum_quiet;
    uint64_t n_mod, n_quiet;
    uint64_t *hist_all, *hist_mod;
    uint64_t hist_all_n, hist_mod_n;
    double hist_scale;       /* bins per unit of envelope                               */
    double emax_abs, emin_abs;
    /* events */
    double thr_in, thr_good, thr_pos_in, thr_pos_out;
    bool in_low, in_pos, have_prev;
    double low_min, prev_env;
    double complex y_before, prev_y; /* baseband before the low run, and the previous one: their
                                        phases are only taken when an event test needs them     */
    uint64_t pinch_events, reversal_events, positive_over;
    /* trapezoid sums */
    double sa, se, saa, sae, see;
    uint64_t ntrap;
};

double ml_am_default_bandwidth(double rate_hz, bool complex_input, double carrier_hz, double max_hz,
                               double *transition_hz)
{
    const double nyq = rate_hz / 2, fc = carrier_hz;
    double b = complex_input ? fmin(max_hz, nyq - fabs(fc)) : fmin(fmin(max_hz, fc), nyq - fc);
    *transition_hz = fmin(1000.0, 0.25 * b);
    if (!complex_input) /* the mixer's image at -2 fc must fall in the stop band: b + t <= 2 fc - b */
        b = fmin(b, fc - *transition_hz / 2);
    b = fmin(b, nyq - *transition_hz);
    return b >= 100.0 ? b : 0.0;
}

ml_am_config ml_am_config_default(double rate_hz, bool complex_input, double carrier_hz,
                                  double bandwidth_hz, double carrier_ref)
{
    ml_am_config c = {
        .rate_hz = rate_hz,
        .complex_input = complex_input,
        .carrier_hz = carrier_hz,
        .bandwidth_hz = bandwidth_hz,
        .transition_hz = 1000.0,
        .carrier_ref = carrier_ref,
        .hold_s = 0.001,
        .block_s = 0.02,
        .quiet_rel = 0.02,
        .pinch_rel = 0.01,
        .positive_limit_pct = 125.0,
        .has_reference = false,
    };
    return c;
}

ml_status ml_am_create(const ml_am_config *cfg, ml_am **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz > 0) || !isfinite(cfg->rate_hz) || !(cfg->bandwidth_hz > 0)
        || !(cfg->transition_hz > 0) || !(cfg->carrier_ref > 0) || !isfinite(cfg->carrier_ref)
        || !(fabs(cfg->carrier_hz) < cfg->rate_hz / 2) || (!cfg->complex_input && cfg->carrier_hz < 0)
        || !(cfg->hold_s > 0 && cfg->hold_s < 0.5) || !(cfg->block_s > 0) || !(cfg->quiet_rel > 0)
        || !(cfg->pinch_rel > 0 && cfg->pinch_rel < 0.5) || !(cfg->positive_limit_pct > 0))
        return ML_EINVAL;
    const size_t block_len = (size_t)llround(cfg->block_s * cfg->rate_hz);
    if (block_len < 4 || block_len > (size_t)1 << 24)
        return ML_EINVAL;
    ml_am *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    ml_cfir_config fc = {.rate_hz = cfg->rate_hz, .cutoff_hz = cfg->bandwidth_hz,
                         .transition_hz = cfg->transition_hz, .stop_db = 100.0};
    ml_status st = ml_cfir_create(&fc, &q->filter);
    if (st != ML_OK) {
        free(q);
        return st;
    }
    q->latency = ml_cfir_latency(q->filter);
    q->startup = (ml_cfir_ntaps(q->filter) - 1) / 2;
    q->block_len = block_len;
    q->pending = malloc(OVERSAMPLE * block_len * sizeof *q->pending);
    q->hist_all = malloc(HIST_BINS * sizeof *q->hist_all);
    q->hist_mod = malloc(HIST_BINS * sizeof *q->hist_mod);
    q->ref_len = q->latency + 1;
    q->ref_ring = cfg->has_reference ? malloc(q->ref_len * sizeof *q->ref_ring) : NULL;
    q->in_ring = malloc(q->ref_len * sizeof *q->in_ring);
    q->blk_env = malloc(block_len * sizeof *q->blk_env);
    q->blk_in = malloc(block_len * sizeof *q->blk_in);
    if (q->pending == NULL || q->hist_all == NULL || q->hist_mod == NULL || q->in_ring == NULL
        || q->blk_env == NULL || q->blk_in == NULL || (cfg->has_reference && q->ref_ring == NULL)) {
        ml_am_destroy(q);
        return ML_ENOMEM;
    }
    q->hist_scale = HIST_BINS / (HIST_RANGE * cfg->carrier_ref);
    q->thr_in = cfg->pinch_rel * cfg->carrier_ref;
    q->thr_good = 0.1 * cfg->carrier_ref;
    q->thr_pos_in = (1.0 + cfg->positive_limit_pct / 100.0) * cfg->carrier_ref;
    q->thr_pos_out = q->thr_pos_in - q->thr_in; /* hysteresis of pinch_rel * C */
    ml_am_reset(q);
    *out = q;
    return ML_OK;
}

void ml_am_destroy(ml_am *q)
{
    if (q == NULL)
        return;
    ml_cfir_destroy(q->filter);
    free(q->pending);
    free(q->hist_all);
    free(q->hist_mod);
    free(q->ref_ring);
    free(q->in_ring);
    free(q->blk_env);
    free(q->blk_in);
    free(q);
}

void ml_am_reset(ml_am *q)
{
    if (q == NULL)
        return;
    ml_cfir_reset(q->filter);
    q->in_count = 0;
    q->finished = false;
    q->produced = 0;
    q->ref_pos = 0;
    if (q->ref_ring)
        memset(q->ref_ring, 0, q->ref_len * sizeof *q->ref_ring);
    memset(q->in_ring, 0, q->ref_len * sizeof *q->in_ring);
    q->out = NULL;
    q->out_count = NULL;
    memset(q->h, 0, sizeof q->h);
    q->block_fill = 0;
    q->block_sum = q->block_sumsq = 0;
    q->npending = 0;
    q->sum_all = q->sum_mod = q->sum_quiet = 0;
    q->n_mod = q->n_quiet = 0;
    memset(q->hist_all, 0, HIST_BINS * sizeof *q->hist_all);
    memset(q->hist_mod, 0, HIST_BINS * sizeof *q->hist_mod);
    q->hist_all_n = q->hist_mod_n = 0;
    q->emax_abs = 0;
    q->emin_abs = INFINITY;
    q->in_low = q->in_pos = q->have_prev = false;
    q->low_min = q->prev_env = 0;
    q->y_before = q->prev_y = 0;
    q->pinch_events = q->reversal_events = q->positive_over = 0;
    q->sa = q->se = q->saa = q->sae = q->see = 0;
    q->ntrap = 0;
}

size_t ml_am_latency(const ml_am *q)
{
    return q ? q->latency : 0;
}

static void end_block(ml_am *q)
{
    if (q->block_fill == 0)
        return;
    const double n = (double)q->block_fill;
    const double mean = q->block_sum / n;
    const double var = fmax(0.0, q->block_sumsq / n - mean * mean);
    const bool quiet = mean > 0.05 * q->cfg.carrier_ref && sqrt(var) < q->cfg.quiet_rel * mean;
    if (quiet) {
        q->sum_quiet += q->block_sum;
        q->n_quiet += q->block_fill;
    } else {
        q->sum_mod += q->block_sum;
        q->n_mod += q->block_fill;
    }
    for (size_t i = 0; i < q->npending; i++) {
        double v = q->pending[i] * q->hist_scale;
        size_t b = v <= 0 ? 0 : v >= HIST_BINS - 1 ? HIST_BINS - 1 : (size_t)v;
        q->hist_all[b]++;
        if (!quiet)
            q->hist_mod[b]++;
    }
    q->hist_all_n += q->npending;
    if (!quiet)
        q->hist_mod_n += q->npending;
    if (q->out != NULL) {
        size_t c = *q->out_count;
        for (size_t i = 0; i < q->block_fill; i++, c++) {
            q->out->env[c] = q->blk_env[i];
            q->out->in[c] = q->blk_in[i];
            q->out->modulated[c] = !quiet;
        }
        *q->out_count = c;
    }
    q->block_fill = 0;
    q->block_sum = q->block_sumsq = 0;
    q->npending = 0;
}

/* |z|: sqrt(re^2 + im^2) instead of hypot (same value within 1 ulp; envelopes are far from the
 * overflow and underflow limits hypot guards against), several times faster. */
static inline double mag(double complex z)
{
    const double re = creal(z), im = cimag(z);
    return sqrt(re * re + im * im);
}

/* Whether |phase(y) - phase(y0)|, wrapped into [0, pi], exceeds pi/2: the same as
 * cos(phase(y) - phase(y0)) < 0, i.e. Re(y conj(y0)) < 0, with no arctangent. A zero sample has
 * phase 0 (as carg(0) = 0), so it stands in as 1. */
static bool phase_reversed(double complex y, double complex y0)
{
    if (y == 0)
        y = 1;
    if (y0 == 0)
        y0 = 1;
    return creal(y) * creal(y0) + cimag(y) * cimag(y0) < 0;
}

/* One baseband sample y (envelope |y|), its input sample x and aligned reference a. */
static void envelope_sample(ml_am *q, double complex y, double complex x, double a)
{
    const double e = mag(y);
    q->blk_env[q->block_fill] = e;
    q->blk_in[q->block_fill] = x;
    /* oversampled values of the interval h[1]..h[2]: the complex baseband is interpolated
     * [catmull:1974] and then its magnitude taken, so the V of a phase reversal keeps its zero */
    q->h[0] = q->h[1];
    q->h[1] = q->h[2];
    q->h[2] = q->h[3];
    q->h[3] = y;
    double lowest = e;
    if (q->produced >= 3) {
        const double complex p0 = q->h[0], p1 = q->h[1], p2 = q->h[2], p3 = q->h[3];
        /* the cubic's coefficients once per interval (complex times real: no complex product) */
        const double complex c0 = 2.0 * p1, c1 = -p0 + p2, c2 = 2.0 * p0 - 5.0 * p1 + 4.0 * p2 - p3,
                             c3 = -p0 + 3.0 * p1 - 3.0 * p2 + p3;
        /* the four values first (independent: the square roots overlap), then their extremes */
        double v[OVERSAMPLE];
        for (int k = 0; k < OVERSAMPLE; k++) {
            const double t = (double)k / OVERSAMPLE, t2 = t * t, t3 = t2 * t;
            const double re = 0.5 * (creal(c0) + creal(c1) * t + creal(c2) * t2 + creal(c3) * t3);
            const double im = 0.5 * (cimag(c0) + cimag(c1) * t + cimag(c2) * t2 + cimag(c3) * t3);
            v[k] = sqrt(re * re + im * im);
        }
        double hi = q->emax_abs, lo = q->emin_abs;
        double *pend = q->pending + q->npending;
        for (int k = 0; k < OVERSAMPLE; k++) {
            hi = v[k] > hi ? v[k] : hi;
            lo = v[k] < lo ? v[k] : lo;
            lowest = v[k] < lowest ? v[k] : lowest;
            pend[k] = v[k];
        }
        q->emax_abs = hi;
        q->emin_abs = lo;
        q->npending += OVERSAMPLE;
    }
    q->produced++;
    q->sum_all += e;
    q->block_sum += e;
    q->block_sumsq += e * e;
    if (++q->block_fill == q->block_len)
        end_block(q);

    /* Overmodulation events. A "low run" is a stretch below 10 % of C. When it ends, a carrier
     * phase that differs by more than 90 degrees from before the run means the envelope passed
     * through zero with a phase reversal; otherwise a run that reached below pinch_rel * C is a
     * carrier pinch-off. A reversal so fast that no sample falls in a run shows as a phase jump of
     * more than 90 degrees between two consecutive samples below 50 % of C [haykin:2001]. */
    if (e < q->thr_good) {
        if (!q->in_low) {
            q->in_low = true;
            q->low_min = INFINITY;
            q->y_before = q->have_prev ? q->prev_y : y;
        }
        if (lowest < q->low_min)
            q->low_min = lowest;
    } else {
        if (q->in_low) {
            if (phase_reversed(y, q->y_before))
                q->reversal_events++;
            else if (q->low_min < q->thr_in)
                q->pinch_events++;
            q->in_low = false;
        } else if (q->have_prev && q->prev_env < 0.5 * q->cfg.carrier_ref && e < 0.5 * q->cfg.carrier_ref
                   && phase_reversed(y, q->prev_y)) {
            q->reversal_events++;
        }
    }
    q->prev_env = e;
    q->prev_y = y;
    q->have_prev = true;
    if (!q->in_pos && e > q->thr_pos_in) {
        q->in_pos = true;
        q->positive_over++;
    } else if (q->in_pos && e < q->thr_pos_out) {
        q->in_pos = false;
    }
    if (q->cfg.has_reference) {
        q->sa += a;
        q->se += e;
        q->saa += a * a;
        q->sae += a * e;
        q->see += e * e;
        q->ntrap++;
    }
}

size_t ml_am_output_cap(const ml_am *q, size_t n)
{
    return q ? n + q->block_len + (q->latency - q->startup) : 0;
}

size_t ml_am_edge(const ml_am *q)
{
    return q ? q->startup : 0;
}

static bool output_ok(const ml_am *q, const ml_am_output *out, size_t n)
{
    return out != NULL && out->env != NULL && out->in != NULL && out->modulated != NULL
           && out->cap >= ml_am_output_cap(q, n);
}

/* Runs n input samples (z == NULL: zeros, for the final flush) through mixer, filter and delay
 * lines, and the clean outputs through envelope_sample. */
static ml_status process(ml_am *q, const double complex *z, const float *ref, size_t n)
{
    const double f = q->cfg.carrier_hz / q->cfg.rate_hz;
    const double gain = q->cfg.complex_input ? 1.0 : 2.0;
    size_t done = 0;
    while (done < n) {
        size_t m = n - done < CHUNK ? n - done : CHUNK;
        /* mixer: exact phase from the sample index each chunk, a rotator within it */
        double cyc = fmod((double)q->in_count * f, 1.0);
        double complex rot = cexp(-2.0 * ML_PI * I * cyc) * gain;
        const double complex step = cexp(-2.0 * ML_PI * I * f);
        /* products written out: C's complex '*' also handles infinities (C11 Annex G), which
         * costs a call per sample; these operands are always finite */
        const double sr = creal(step), si = cimag(step);
        double rr = creal(rot), ri = cimag(rot);
        for (size_t i = 0; i < m; i++) {
            if (z) {
                const double zr = creal(z[done + i]), zi = cimag(z[done + i]);
                q->mixed[i] = CMPLX(zr * rr - zi * ri, zr * ri + zi * rr);
            } else {
                q->mixed[i] = 0.0;
            }
            const double nr = rr * sr - ri * si;
            ri = rr * si + ri * sr;
            rr = nr;
        }
        ml_status st = ml_cfir_push(q->filter, q->mixed, m, q->filtered);
        if (st != ML_OK)
            return st;
        for (size_t i = 0; i < m; i++) {
            uint64_t t = q->in_count + i; /* input index of this output: t - latency */
            /* the rings hold the last ref_len samples; the one latency ago lines up */
            const size_t old = q->ref_pos + 1 == q->ref_len ? 0 : q->ref_pos + 1;
            float a = 0.0f;
            if (q->cfg.has_reference) {
                q->ref_ring[q->ref_pos] = ref ? ref[done + i] : 0.0f;
                a = q->ref_ring[old];
            }
            q->in_ring[q->ref_pos] = z ? z[done + i] : 0.0;
            const double complex x = q->in_ring[old];
            q->ref_pos = old;
            /* output t is input t - latency; it is only clean once the filter's past half holds
             * input, i.e. from input index startup on */
            if (t < q->latency + q->startup)
                continue;
            envelope_sample(q, q->filtered[i], x, a);
        }
        q->in_count += m;
        done += m;
    }
    return ML_OK;
}

ml_status ml_am_push(ml_am *q, const double complex *z, const float *ref, size_t n, const ml_am_output *out,
                     size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, n) || (n > 0 && z == NULL)
        || (q->cfg.has_reference && n > 0 && ref == NULL) || q->finished)
        return ML_EINVAL;
    *count = 0;
    q->out = out;
    q->out_count = count;
    ml_status st = process(q, z, ref, n);
    q->out = NULL;
    q->out_count = NULL;
    return st;
}

ml_status ml_am_finish(ml_am *q, const ml_am_output *out, size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, 0) || q->finished)
        return ML_EINVAL;
    *count = 0;
    q->out = out;
    q->out_count = count;
    /* Flush: latency - startup zeros bring out the envelope of the inputs up to n - startup - 1,
     * the last whose filter window lies wholly inside the input; later ones would see the zeros. */
    ml_status st = process(q, NULL, NULL, q->latency - q->startup);
    if (st == ML_OK)
        end_block(q);
    q->finished = true;
    q->out = NULL;
    q->out_count = NULL;
    return st;
}

/* Level below which a share p of the histogram's mass lies (linear within a bin). */
static double quantile(const uint64_t *hist, uint64_t total, double p, double scale)
{
    if (total == 0)
        return 0.0;
    const double target = p * (double)total;
    double cum = 0.0;
    for (size_t b = 0; b < HIST_BINS; b++) {
        double next = cum + (double)hist[b];
        if (next >= target && hist[b] > 0)
            return ((double)b + (target - cum) / (double)hist[b]) / scale;
        cum = next;
    }
    return (double)HIST_BINS / scale;
}

ml_status ml_am_get_result(const ml_am *q, ml_am_result *out)
{
    if (q == NULL || out == NULL)
        return ML_EINVAL;
    memset(out, 0, sizeof *out);
    if (q->produced == 0)
        return ML_ENOSIGNAL;
    out->samples = q->produced;
    out->mean_all = q->sum_all / (double)q->produced;
    out->modulated_samples = q->n_mod;
    out->quiet_samples = q->n_quiet;
    out->mean_modulated = q->n_mod ? q->sum_mod / (double)q->n_mod : 0.0;
    out->mean_quiet = q->n_quiet ? q->sum_quiet / (double)q->n_quiet : 0.0;
    const bool use_mod = q->hist_mod_n > 0;
    const uint64_t *h = use_mod ? q->hist_mod : q->hist_all;
    const uint64_t tot = use_mod ? q->hist_mod_n : q->hist_all_n;
    /* hold_s per second of signal is the share of time a level must be exceeded to count */
    out->emax = quantile(h, tot, 1.0 - q->cfg.hold_s, q->hist_scale);
    out->emin = quantile(h, tot, q->cfg.hold_s, q->hist_scale);
    if (out->emax > q->emax_abs)
        out->emax = q->emax_abs;
    if (out->emin < q->emin_abs)
        out->emin = q->emin_abs;
    out->emax_abs = q->emax_abs;
    out->emin_abs = isfinite(q->emin_abs) ? q->emin_abs : 0.0;
    out->pinch_events = q->pinch_events;
    out->reversal_events = q->reversal_events;
    out->positive_over = q->positive_over;
    if (q->cfg.has_reference && q->ntrap > 1) {
        const double n = (double)q->ntrap;
        const double ma = q->sa / n, me = q->se / n;
        const double vaa = q->saa / n - ma * ma, vae = q->sae / n - ma * me, vee = q->see / n - me * me;
        if (vaa > 0) {
            out->has_trapezoid = true;
            out->trap_slope = vae / vaa;
            out->trap_intercept = me - out->trap_slope * ma;
            out->trap_residual_rms = sqrt(fmax(0.0, vee - vae * vae / vaa));
            out->trap_ref_rms = sqrt(vaa);
        }
    }
    return ML_OK;
}

double ml_am_fraction_below(const ml_am *q, double level)
{
    if (q == NULL || q->hist_all_n == 0)
        return 0.0;
    double v = level * q->hist_scale;
    if (v <= 0)
        return 0.0;
    size_t b = v >= HIST_BINS ? HIST_BINS : (size_t)v;
    double cum = 0.0;
    for (size_t i = 0; i < b; i++)
        cum += (double)q->hist_all[i];
    if (b < HIST_BINS)
        cum += (v - (double)b) * (double)q->hist_all[b];
    return cum / (double)q->hist_all_n;
}
