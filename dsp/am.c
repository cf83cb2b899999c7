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
    double complex mixed[CHUNK], filtered[CHUNK], delayed[CHUNK];
    double complex zin[CHUNK];  /* a chunk of ml_am_push_frames input, and its reference        */
    float refin[CHUNK];
    double complex rot[CHUNK]; /* exp(-2 pi i f k), k < CHUNK: the mixer within a chunk    */
    float ref_delayed[CHUNK];
    double lowest[CHUNK];
    /* the oversampled envelope in single precision, in units of carrier_ref (see envelope_run) */
    float yr[CHUNK + 3], yi[CHUNK + 3];  /* baseband behind the three samples before         */
    float over[OVERSAMPLE * CHUNK];      /* oversampled envelope: OVERSAMPLE rows of CHUNK     */
    float vmin[CHUNK], vmax[CHUNK];      /* their extremes per sample                          */
    /* delay lines of dly_len >= latency + CHUNK samples: reference channel and input */
    float *ref_ring;
    double complex *in_ring;
    size_t dly_len, dly_pos;
    /* the current block's samples, carried from one push to the next while it is incomplete */
    double *blk_env;
    double complex *blk_in;
    const ml_am_output *out; /* where samples go during a push or finish              */
    size_t *out_count;
    /* baseband history for interpolation: h[0] oldest .. h[2] newest */
    double complex h[3];
    uint64_t produced;       /* envelope samples produced                              */
    /* current block */
    size_t block_len, block_fill;
    double block_sum, block_sumsq;
    uint16_t *pending;       /* histogram bins of its OVERSAMPLE * block_len interpolated values */
    size_t npending;
    /* totals */
    double sum_all, sum_mod, sum_quiet;
    uint64_t n_mod, n_quiet;
    uint64_t *hist_quiet, *hist_mod; /* oversampled envelope of quiet and of modulated blocks */
    uint64_t hist_quiet_n, hist_mod_n;
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
        .single_precision = false,
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
                         .transition_hz = cfg->transition_hz, .stop_db = 100.0,
                         .single_precision = cfg->single_precision};
    ml_status st = ml_cfir_create(&fc, &q->filter);
    if (st != ML_OK) {
        free(q);
        return st;
    }
    q->latency = ml_cfir_latency(q->filter);
    q->startup = (ml_cfir_ntaps(q->filter) - 1) / 2;
    q->block_len = block_len;
    q->pending = malloc(OVERSAMPLE * block_len * sizeof *q->pending);
    q->hist_quiet = malloc(HIST_BINS * sizeof *q->hist_quiet);
    q->hist_mod = malloc(HIST_BINS * sizeof *q->hist_mod);
    q->dly_len = q->latency + CHUNK;
    q->ref_ring = cfg->has_reference ? malloc(q->dly_len * sizeof *q->ref_ring) : NULL;
    q->in_ring = malloc(q->dly_len * sizeof *q->in_ring);
    q->blk_env = malloc(block_len * sizeof *q->blk_env);
    q->blk_in = malloc(block_len * sizeof *q->blk_in);
    if (q->pending == NULL || q->hist_quiet == NULL || q->hist_mod == NULL || q->in_ring == NULL
        || q->blk_env == NULL || q->blk_in == NULL || (cfg->has_reference && q->ref_ring == NULL)) {
        ml_am_destroy(q);
        return ML_ENOMEM;
    }
    const double f = cfg->carrier_hz / cfg->rate_hz;
    for (size_t k = 0; k < CHUNK; k++) /* the phase reduced first: exact for any k */
        q->rot[k] = cexp(-2.0 * ML_PI * I * fmod((double)k * f, 1.0));
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
    free(q->hist_quiet);
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
    q->dly_pos = 0;
    if (q->ref_ring)
        memset(q->ref_ring, 0, q->dly_len * sizeof *q->ref_ring);
    memset(q->in_ring, 0, q->dly_len * sizeof *q->in_ring);
    q->out = NULL;
    q->out_count = NULL;
    memset(q->h, 0, sizeof q->h);
    q->block_fill = 0;
    q->block_sum = q->block_sumsq = 0;
    q->npending = 0;
    q->sum_all = q->sum_mod = q->sum_quiet = 0;
    q->n_mod = q->n_quiet = 0;
    memset(q->hist_quiet, 0, HIST_BINS * sizeof *q->hist_quiet);
    memset(q->hist_mod, 0, HIST_BINS * sizeof *q->hist_mod);
    q->hist_quiet_n = q->hist_mod_n = 0;
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

/* Classifies the current block and releases it: its samples already sit in the output from
 * *out_count on; their class is written and the count moves past them. */
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
    q->sum_all += q->block_sum;
    uint64_t *restrict h = quiet ? q->hist_quiet : q->hist_mod;
    const uint16_t *restrict b = q->pending;
    const size_t np = q->npending; /* a local count: h's stores could alias the object's */
    for (size_t i = 0; i < np; i++)
        h[b[i]]++;
    if (quiet)
        q->hist_quiet_n += q->npending;
    else
        q->hist_mod_n += q->npending;
    memset(q->out->modulated + *q->out_count, !quiet, q->block_fill);
    *q->out_count += q->block_fill;
    q->block_fill = 0;
    q->block_sum = q->block_sumsq = 0;
    q->npending = 0;
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

/* Overmodulation events and positive excursions of n envelope samples e (baseband y, lowest
 * oversampled value of each sample's interval low). A "low run" is a stretch below 10 % of C.
 * When it ends, a carrier phase that differs by more than 90 degrees from before the run means
 * the envelope passed through zero with a phase reversal; otherwise a run that reached below
 * pinch_rel * C is a carrier pinch-off. A reversal so fast that no sample falls in a run shows as
 * a phase jump of more than 90 degrees between two consecutive samples below 50 % of C
 * [haykin:2001]. */
static void events(ml_am *q, const double complex *y, const double *e, const double *low, size_t n)
{
    /* the state in locals for the loop: stores through q could alias the arrays read */
    const double half = 0.5 * q->cfg.carrier_ref, thr_good = q->thr_good, thr_in = q->thr_in;
    const double thr_pos_in = q->thr_pos_in, thr_pos_out = q->thr_pos_out;
    bool in_low = q->in_low, in_pos = q->in_pos, have_prev = q->have_prev;
    double low_min = q->low_min, prev_env = q->prev_env;
    double complex y_before = q->y_before, prev_y = q->prev_y;
    uint64_t reversals = 0, pinches = 0, over = 0;
    for (size_t i = 0; i < n; i++) {
        if (!in_low && have_prev) {
            /* A run of samples at or above half the carrier that leave the positive excursion
             * state as it is changes nothing but the previous sample: passed over in one scan. */
            const double top = in_pos ? INFINITY : thr_pos_in, bottom = in_pos ? fmax(half, thr_pos_out) : half;
            size_t j = i;
            while (j < n && e[j] >= bottom && e[j] <= top)
                j++;
            if (j > i) {
                prev_env = e[j - 1];
                prev_y = y[j - 1];
                i = j - 1;
                continue;
            }
        }
        if (e[i] < thr_good) {
            if (!in_low) {
                in_low = true;
                low_min = INFINITY;
                y_before = have_prev ? prev_y : y[i];
            }
            if (low[i] < low_min)
                low_min = low[i];
        } else if (in_low) {
            if (phase_reversed(y[i], y_before))
                reversals++;
            else if (low_min < thr_in)
                pinches++;
            in_low = false;
        } else if (have_prev && prev_env < half && e[i] < half && phase_reversed(y[i], prev_y)) {
            reversals++;
        }
        prev_env = e[i];
        prev_y = y[i];
        have_prev = true;
        if (!in_pos && e[i] > thr_pos_in) {
            in_pos = true;
            over++;
        } else if (in_pos && e[i] < thr_pos_out) {
            in_pos = false;
        }
    }
    q->in_low = in_low;
    q->in_pos = in_pos;
    q->have_prev = have_prev;
    q->low_min = low_min;
    q->prev_env = prev_env;
    q->y_before = y_before;
    q->prev_y = prev_y;
    q->reversal_events += reversals;
    q->pinch_events += pinches;
    q->positive_over += over;
}

/* n <= CHUNK clean baseband samples y (input samples x, aligned reference a) that all belong to
 * the current block: envelope, oversampled envelope, block sums, events, trapezoid sums. */
ML_HOT static void envelope_run(ml_am *q, const double complex *y, const double complex *x, const float *a, size_t n)
{
    const size_t at = *q->out_count + q->block_fill;
    double *restrict e = q->out->env + at, *restrict low = q->lowest;
    float *restrict v = q->over;
    const double *restrict yy = (const double *)y; /* C11 6.2.5: a complex is an array of two */
    for (size_t i = 0; i < n; i++) /* |y| without hypot: far from overflow and underflow */
        e[i] = sqrt(yy[2 * i] * yy[2 * i] + yy[2 * i + 1] * yy[2 * i + 1]);
    if (q->out->in != NULL)
        memcpy(q->out->in + at, x, n * sizeof *x);
    /* the block's sums in lanes: a single running sum would wait for each addition in turn */
    double sl[4] = {0}, ssl[4] = {0};
    ml_lanes_sum4(e, n, sl, ssl);
    q->block_sum += (sl[0] + sl[1]) + (sl[2] + sl[3]);
    q->block_sumsq += (ssl[0] + ssl[1]) + (ssl[2] + ssl[3]);
    /* Oversampled values of the interval y[j-2]..y[j-1] for sample j (from the fourth sample on):
     * the complex baseband is interpolated [catmull:1974] and then its magnitude taken, so the V
     * of a phase reversal keeps its zero. The baseband goes into separate real and imaginary
     * arrays behind the three samples before, and each of the OVERSAMPLE values into its own
     * array, so that the loop runs across samples in vector registers. These values only go into
     * the histograms (bins of 6e-5 carrier_ref), the extremes and the pinch-off test, so they are
     * computed in single precision (relative rounding 6e-8, far below the interpolation's own
     * error) in units of carrier_ref (so that no envelope level under- or overflows a float):
     * twice the values per vector register. */
    const size_t skip = q->produced >= 3 ? 0 : 3 - (size_t)q->produced < n ? 3 - (size_t)q->produced : n;
    const double inv_c = 1.0 / q->cfg.carrier_ref, c_ref = q->cfg.carrier_ref;
    float *restrict yr = q->yr, *restrict yi = q->yi;
    for (size_t i = 0; i < 3; i++) {
        yr[i] = (float)(creal(q->h[i]) * inv_c);
        yi[i] = (float)(cimag(q->h[i]) * inv_c);
    }
    for (size_t i = 0; i < n; i++) {
        yr[i + 3] = (float)(yy[2 * i] * inv_c);
        yi[i + 3] = (float)(yy[2 * i + 1] * inv_c);
    }
    float *restrict v0 = v, *restrict v1 = v + CHUNK, *restrict v2 = v + 2 * CHUNK, *restrict v3 = v + 3 * CHUNK;
    float *restrict vmin = q->vmin, *restrict vmax = q->vmax;
    for (size_t i = skip; i < n; i++) {
        /* the cubic's coefficients once per interval (complex times real: no complex product) */
        const float c0r = 2.0f * yr[i + 1], c1r = yr[i + 2] - yr[i],
                    c2r = 2.0f * yr[i] - 5.0f * yr[i + 1] + 4.0f * yr[i + 2] - yr[i + 3],
                    c3r = -yr[i] + 3.0f * yr[i + 1] - 3.0f * yr[i + 2] + yr[i + 3];
        const float c0i = 2.0f * yi[i + 1], c1i = yi[i + 2] - yi[i],
                    c2i = 2.0f * yi[i] - 5.0f * yi[i + 1] + 4.0f * yi[i + 2] - yi[i + 3],
                    c3i = -yi[i] + 3.0f * yi[i + 1] - 3.0f * yi[i + 2] + yi[i + 3];
#define ML_AM_OVER(K, OUT)                                                                        \
    do {                                                                                           \
        const float t = (float)(K) / OVERSAMPLE, t2 = t * t, t3 = t2 * t;                          \
        const float re = 0.5f * (c0r + c1r * t + c2r * t2 + c3r * t3);                             \
        const float im = 0.5f * (c0i + c1i * t + c2i * t2 + c3i * t3);                             \
        (OUT)[i] = sqrtf(re * re + im * im);                                                       \
    } while (0)
        ML_AM_OVER(0, v0);
        ML_AM_OVER(1, v1);
        ML_AM_OVER(2, v2);
        ML_AM_OVER(3, v3);
#undef ML_AM_OVER
        const float lo01 = v0[i] < v1[i] ? v0[i] : v1[i], lo23 = v2[i] < v3[i] ? v2[i] : v3[i];
        const float hi01 = v0[i] > v1[i] ? v0[i] : v1[i], hi23 = v2[i] > v3[i] ? v2[i] : v3[i];
        vmin[i] = lo01 < lo23 ? lo01 : lo23;
        vmax[i] = hi01 > hi23 ? hi01 : hi23;
    }
    for (size_t i = 0; i < skip; i++) /* no interval yet: the sample alone */
        vmin[i] = vmax[i] = (float)(e[i] * inv_c);
    for (size_t i = 0; i < n; i++) {
        const double m = (double)vmin[i] * c_ref;
        low[i] = e[i] < m ? e[i] : m;
    }
    /* extremes in lanes: the lowest of vmin, the highest of vmax */
    enum { LF = 8 };
    float hl[LF], ll[LF];
    for (int k = 0; k < LF; k++) {
        hl[k] = 0.0f;
        ll[k] = INFINITY;
    }
    ml_lanes_minmax8f(vmin + skip, vmax + skip, n - skip, ll, hl);
    double hi = q->emax_abs, lo = q->emin_abs;
    for (int k = 0; k < LF; k++) {
        const double h = (double)hl[k] * c_ref, l = (double)ll[k] * c_ref;
        hi = h > hi ? h : hi;
        lo = l < lo ? l : lo;
    }
    uint16_t *restrict bins = q->pending + q->npending;
    const float hs = (float)(HIST_BINS / HIST_RANGE); /* bins per carrier_ref: a power of two */
    const size_t nv = OVERSAMPLE * (n - skip);
    for (int k = 0; k < OVERSAMPLE; k++) {
        const float *restrict vk = v + (size_t)k * CHUNK;
        uint16_t *restrict bk = bins + (size_t)k * (n - skip);
        for (size_t j = skip; j < n; j++) {
            const float b = vk[j] * hs; /* clamped to the histogram; a NaN lands in bin 0 */
            bk[j - skip] = (uint16_t)(int32_t)(b > 0 ? (b < HIST_BINS - 1 ? b : HIST_BINS - 1) : 0);
        }
    }
    q->emax_abs = hi;
    q->emin_abs = lo;
    q->npending += nv;
    /* the last three baseband samples carry over */
    for (size_t i = 0; i < 3; i++) {
        const size_t back = 3 - i; /* h[i] = the sample `back` before the end */
        q->h[i] = back <= n ? y[n - back] : q->h[i + n];
    }
    q->produced += n;
    events(q, y, e, low, n);
    if (q->cfg.has_reference) {
        double sa = 0, se = 0, saa = 0, sae = 0, see = 0;
        for (size_t i = 0; i < n; i++) {
            sa += a[i];
            se += e[i];
            saa += (double)a[i] * a[i];
            sae += a[i] * e[i];
            see += e[i] * e[i];
        }
        q->sa += sa;
        q->se += se;
        q->saa += saa;
        q->sae += sae;
        q->see += see;
        q->ntrap += n;
    }
    q->block_fill += n;
    if (q->block_fill == q->block_len)
        end_block(q);
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
    return out != NULL && out->env != NULL && out->modulated != NULL
           && out->cap >= ml_am_output_cap(q, n);
}

/* Copies n samples into a delay ring of len at pos, and out the n that entered `delay` earlier. */
#define DELAY(RING, LEN, POS, DELAY_, SRC, DST, N, ZERO)                                           \
    do {                                                                                           \
        size_t w_ = (POS), r_ = (POS) >= (DELAY_) ? (POS) - (DELAY_) : (POS) + (LEN) - (DELAY_);   \
        for (size_t i_ = 0; i_ < (N); i_++) {                                                      \
            (RING)[w_] = (SRC) ? (SRC)[i_] : (ZERO);                                               \
            w_ = w_ + 1 == (LEN) ? 0 : w_ + 1;                                                     \
        }                                                                                          \
        for (size_t i_ = 0; i_ < (N); i_++) {                                                      \
            (DST)[i_] = (RING)[r_];                                                                \
            r_ = r_ + 1 == (LEN) ? 0 : r_ + 1;                                                     \
        }                                                                                          \
    } while (0)

/* Runs n input samples (z == NULL: zeros, for the final flush) through mixer, filter and delay
 * lines, and the clean outputs through envelope_run, cut at block ends. */
ML_HOT static ml_status process(ml_am *q, const double complex *z, const float *ref, const float *frames,
                                const ml_channels *fr, size_t n)
{
    const double f = q->cfg.carrier_hz / q->cfg.rate_hz;
    const double gain = q->cfg.complex_input ? 1.0 : 2.0;
    size_t done = 0;
    while (done < n) {
        size_t m = n - done < CHUNK ? n - done : CHUNK;
        const double complex *zc = z ? z + done : NULL;
        const float *rc = ref ? ref + done : NULL;
        if (frames != NULL) { /* the chunk's columns out of the frames */
            const float *restrict d = frames + done * fr->stride;
            const size_t st = fr->stride, re = fr->re, im = fr->im;
            if (q->cfg.complex_input) {
                for (size_t i = 0; i < m; i++)
                    q->zin[i] = CMPLX(d[i * st + re], d[i * st + im]);
            } else {
                for (size_t i = 0; i < m; i++)
                    q->zin[i] = CMPLX(d[i * st + re], 0.0);
            }
            for (size_t i = 0; q->cfg.has_reference && i < m; i++)
                q->refin[i] = d[i * st + fr->ref];
            zc = q->zin;
            rc = q->cfg.has_reference ? q->refin : NULL;
        }
        /* mixer: the chunk's start phase exactly from the sample index, times a table within it
         * (products written out: C's complex '*' also handles infinities, C11 Annex G, at a call
         * per sample; these operands are always finite) */
        const double complex r0 = cexp(-2.0 * ML_PI * I * fmod((double)q->in_count * f, 1.0)) * gain;
        const double r0r = creal(r0), r0i = cimag(r0);
        if (zc) {
            for (size_t i = 0; i < m; i++) {
                const double tr = creal(q->rot[i]), ti = cimag(q->rot[i]);
                const double rr = r0r * tr - r0i * ti, ri = r0r * ti + r0i * tr;
                const double zr = creal(zc[i]), zi = cimag(zc[i]);
                q->mixed[i] = CMPLX(zr * rr - zi * ri, zr * ri + zi * rr);
            }
        } else {
            memset(q->mixed, 0, m * sizeof *q->mixed);
        }
        ml_status st = ml_cfir_push(q->filter, q->mixed, m, q->filtered);
        if (st != ML_OK)
            return st;
        /* output t is input t - latency: the delay lines line up its input and reference */
        if (q->out->in != NULL)
            DELAY(q->in_ring, q->dly_len, q->dly_pos, q->latency, zc, q->delayed, m, 0.0);
        if (q->cfg.has_reference)
            DELAY(q->ref_ring, q->dly_len, q->dly_pos, q->latency, rc, q->ref_delayed, m, 0.0f);
        q->dly_pos = (q->dly_pos + m) % q->dly_len;
        /* it is only clean once the filter's past half holds input, i.e. from input index
         * startup on: outputs with t < latency + startup are left out */
        const uint64_t clean = q->latency + q->startup;
        size_t i = q->in_count >= clean ? 0 : clean - q->in_count < m ? (size_t)(clean - q->in_count) : m;
        while (i < m) {
            size_t k = m - i, room = q->block_len - q->block_fill;
            if (k > room)
                k = room;
            envelope_run(q, q->filtered + i, q->delayed + i, q->ref_delayed + i, k);
            i += k;
        }
        q->in_count += m;
        done += m;
    }
    return ML_OK;
}

/* A push or finish begins: the incomplete block carried over goes to the start of the output. */
static void begin_output(ml_am *q, const ml_am_output *out, size_t *count)
{
    *count = 0;
    q->out = out;
    q->out_count = count;
    memcpy(out->env, q->blk_env, q->block_fill * sizeof *out->env);
    if (out->in != NULL)
        memcpy(out->in, q->blk_in, q->block_fill * sizeof *out->in);
}

/* ... and ends: an incomplete block is kept for the next one. */
static void end_output(ml_am *q)
{
    memcpy(q->blk_env, q->out->env + *q->out_count, q->block_fill * sizeof *q->blk_env);
    if (q->out->in != NULL)
        memcpy(q->blk_in, q->out->in + *q->out_count, q->block_fill * sizeof *q->blk_in);
    q->out = NULL;
    q->out_count = NULL;
}

ml_status ml_am_push(ml_am *q, const double complex *z, const float *ref, size_t n, const ml_am_output *out,
                     size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, n) || (n > 0 && z == NULL)
        || (q->cfg.has_reference && n > 0 && ref == NULL) || q->finished)
        return ML_EINVAL;
    begin_output(q, out, count);
    ml_status st = process(q, z, ref, NULL, NULL, n);
    end_output(q);
    return st;
}

ml_status ml_am_push_frames(ml_am *q, const float *frames, const ml_channels *c, size_t n, const ml_am_output *out,
                            size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, n) || q->finished
        || (n > 0 && (frames == NULL || c == NULL || c->stride == 0 || c->re >= c->stride
                      || (q->cfg.complex_input && (!c->complex_input || c->im >= c->stride))
                      || (q->cfg.has_reference && (!c->has_ref || c->ref >= c->stride)))))
        return ML_EINVAL;
    begin_output(q, out, count);
    ml_status st = process(q, NULL, NULL, frames, c, n);
    end_output(q);
    return st;
}

ml_status ml_am_finish(ml_am *q, const ml_am_output *out, size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, 0) || q->finished)
        return ML_EINVAL;
    begin_output(q, out, count);
    /* Flush: latency - startup zeros bring out the envelope of the inputs up to n - startup - 1,
     * the last whose filter window lies wholly inside the input; later ones would see the zeros. */
    ml_status st = process(q, NULL, NULL, NULL, NULL, q->latency - q->startup);
    if (st == ML_OK)
        end_block(q);
    end_output(q);
    q->finished = true;
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
    /* without modulated blocks every block was quiet: all of them are the quiet ones */
    const uint64_t *h = use_mod ? q->hist_mod : q->hist_quiet;
    const uint64_t tot = use_mod ? q->hist_mod_n : q->hist_quiet_n;
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
    const uint64_t total = q ? q->hist_quiet_n + q->hist_mod_n : 0;
    if (total == 0)
        return 0.0;
    double v = level * q->hist_scale;
    if (v <= 0)
        return 0.0;
    size_t b = v >= HIST_BINS ? HIST_BINS : (size_t)v;
    double cum = 0.0;
    for (size_t i = 0; i < b; i++)
        cum += (double)(q->hist_quiet[i] + q->hist_mod[i]);
    if (b < HIST_BINS)
        cum += (v - (double)b) * (double)(q->hist_quiet[b] + q->hist_mod[b]);
    return cum / (double)total;
}
