/* AM demodulation: mixer, channel filter, envelope and its oversampling; the envelope's
 * statistics go to the parts in dsp/am_internal.h (block classification and histograms in
 * am_blocks.c, overmodulation events in am_events.c, the trapezoid fit in am_trapezoid.c).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [catmull:1974] E. Catmull, R. Rom, "A class of local interpolating splines", in Computer Aided
 *     Geometric Design, Academic Press 1974 (the cubic used to oversample the envelope).
 */
#include "dsp/am.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/am_internal.h"
#include "dsp/cfir.h"
#include "dsp/internal.h"

#define HIST_BINS ML_AM_HIST_BINS
#define HIST_RANGE ML_AM_HIST_RANGE
#define OVERSAMPLE ML_AM_OVERSAMPLE
#define CHUNK 1024     /* internal processing chunk (stack-free: buffers are in the object) */
#define PHASE_LOST 10   /* blocks in a row far off the predicted phase before it is taken afresh */
#define RATE_MIN_COHERENCE 0.25 /* a block's raw mean at least this share of the carrier: offsets up
                                   to 39 Hz with 20 ms blocks (sin(x) / x = 0.25 at x = 2.47)    */
#define REV_MIN 0.02    /* reversal depth at least 2 % of C: a pinched-off carrier band-limited to
                           the channel rings below zero by about 1 % at tones near 1 kHz          */
#define HYST_MIN 0.02   /* troughs and crests start 2 % of C from the carrier at least           */
#define FLOOR_SIGMAS 4.0 /* pinch floor F: 4 noise standard deviations (P(|noise| > F) = 3e-4)    */
#define REV_SIGMAS 5.0  /* reversal depth: 5 standard deviations (P = 3e-7 per sample)           */
#define HYST_SIGMAS 3.0
#define UNKNOWN_NOISE 0.05 /* noise assumed (re carrier_ref) before 32 samples are seen           */
#define TRANSITION_MAX_HZ 1000.0 /* the channel filter's transition at most (dsp/am.h)             */
#define IMAGE_SHARE 40.0 /* a real IF's default channel leaves the transition D / 40 of the room D
                            to the mixer's image: B = 97.5 % of the D / 2 that the image allows  */

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
    /* the oversampled envelope in single precision, in units of carrier_ref (see envelope_run) */
    float yr[CHUNK + 3], yi[CHUNK + 3];  /* baseband behind the three samples before         */
    float over[OVERSAMPLE * CHUNK];      /* oversampled envelope: OVERSAMPLE rows of CHUNK     */
    float vmin[CHUNK], vmax[CHUNK];      /* their extremes per sample                          */
    float sg[OVERSAMPLE * CHUNK];        /* the oversampled coherent reading, rows as over[]   */
    float slo[CHUNK];                    /* its lowest value per sample                        */
    unsigned char nfl[CHUNK], nfl4[CHUNK], nneg[CHUNK]; /* values below F, 4 F; negative       */
    double er[CHUNK];                    /* the envelope in units of carrier_ref               */
    double sc[CHUNK], qc[CHUNK];         /* the baseband turned back by the followed phase       */
    float ur[CHUNK], ui[CHUNK];          /* the carrier's phasor per sample, conjugated        */
    /* the carrier's phase (carrier_phase): phase (rad) at envelope sample phase_at, turning by
     * omega rad per sample; prot[k] = exp(-i omega k) for omega = prot_omega */
    bool have_phase, phase_locked; /* a phase to use; one measured by a block            */
    size_t lag, lag_pos;       /* the rate's lag L (half a block) and the ring's position      */
    double complex *lag_hist;  /* the last L baseband samples                                  */
    unsigned phase_misses;
    double phase, phase_at, omega, prot_omega;
    double complex prot[CHUNK];
    ml_am_levels lv;                     /* noise-aware levels of the current run               */
    /* delay lines of dly_len >= latency + CHUNK samples: reference channel and input */
    float *ref_ring;
    double complex *in_ring;
    size_t dly_len, dly_pos;
    /* the current block's samples, carried from one push to the next while it is incomplete */
    double *blk_env;
    double complex *blk_in;
    /* baseband history for interpolation: h[0] oldest .. h[2] newest */
    double complex h[3];
    uint64_t produced;       /* envelope samples produced                              */
    ml_am_blocks blocks;     /* block classification and peak histograms              */
    double emax_abs, emin_abs;
    ml_am_events events;     /* overmodulation events and positive excursions          */
    ml_am_trapezoid trap;    /* envelope against the reference channel                 */
};

double ml_am_image_distance_hz(double rate_hz, double carrier_hz)
{
    const double f = fabs(carrier_hz);
    return fmin(2.0 * f, rate_hz - 2.0 * f);
}

double ml_am_transition(double rate_hz, bool complex_input, double carrier_hz, double bandwidth_hz)
{
    const double b = bandwidth_hz;
    double t = fmin(fmin(TRANSITION_MAX_HZ, 0.25 * b), rate_hz / 2 - b);
    if (!complex_input) /* the image's nearer sideband, at D - b at the nearest, in the stop band */
        t = fmin(t, ml_am_image_distance_hz(rate_hz, carrier_hz) - 2.0 * b);
    return t > 0 ? t : 0.0;
}

double ml_am_default_bandwidth(double rate_hz, bool complex_input, double carrier_hz, double max_hz,
                               double *transition_hz)
{
    const double nyq = rate_hz / 2, fc = fabs(carrier_hz);
    double b;
    if (complex_input) { /* the channel within the band edge, and the filter's stop edge too */
        b = fmin(max_hz, nyq - fc);
        b = fmin(b, nyq - fmin(TRANSITION_MAX_HZ, 0.25 * b));
    } else { /* 2 b + t <= D with the transition t of at least D / IMAGE_SHARE */
        const double d = ml_am_image_distance_hz(rate_hz, carrier_hz);
        b = fmin(max_hz, 0.5 * (d - fmin(TRANSITION_MAX_HZ, d / IMAGE_SHARE)));
    }
    if (!(b >= ML_AM_MIN_BANDWIDTH_HZ)) {
        *transition_hz = 0.0;
        return 0.0;
    }
    *transition_hz = ml_am_transition(rate_hz, complex_input, carrier_hz, b);
    return b;
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
        .pinch_rel = 0.02,
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
    /* a real IF: the mixer's image and its sidebands (up to B from it) in the stop band (dsp/am.h) */
    double transition_hz = cfg->transition_hz;
    if (!cfg->complex_input) {
        const double room = ml_am_image_distance_hz(cfg->rate_hz, cfg->carrier_hz) - 2.0 * cfg->bandwidth_hz;
        if (!(room > 0))
            return ML_EINVAL;
        transition_hz = fmin(transition_hz, room);
    }
    ml_am *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->cfg.transition_hz = transition_hz;
    ml_cfir_config fc = {.rate_hz = cfg->rate_hz, .cutoff_hz = cfg->bandwidth_hz,
                         .transition_hz = transition_hz, .stop_db = 100.0,
                         .single_precision = cfg->single_precision};
    ml_status st = ml_cfir_create(&fc, &q->filter);
    if (st != ML_OK) {
        free(q);
        return st;
    }
    q->latency = ml_cfir_latency(q->filter);
    q->startup = (ml_cfir_ntaps(q->filter) - 1) / 2;
    q->dly_len = q->latency + CHUNK;
    q->ref_ring = cfg->has_reference ? malloc(q->dly_len * sizeof *q->ref_ring) : NULL;
    q->in_ring = malloc(q->dly_len * sizeof *q->in_ring);
    q->blk_env = malloc(block_len * sizeof *q->blk_env);
    q->blk_in = malloc(block_len * sizeof *q->blk_in);
    q->lag = block_len / 2;
    q->lag_hist = malloc(q->lag * sizeof *q->lag_hist);
    /* independent noise samples in a block: the in-phase noise is flat over |f| < B */
    const double neff = (double)block_len * fmin(1.0, 2.0 * cfg->bandwidth_hz / cfg->rate_hz);
    const ml_status sb = ml_am_blocks_init(&q->blocks, block_len, cfg->carrier_ref, cfg->quiet_rel, neff);
    const ml_status se = ml_am_events_init(&q->events);
    if (sb != ML_OK || se != ML_OK || q->in_ring == NULL || q->lag_hist == NULL || q->blk_env == NULL || q->blk_in == NULL
        || (cfg->has_reference && q->ref_ring == NULL)) {
        ml_am_destroy(q);
        return ML_ENOMEM;
    }
    const double f = cfg->carrier_hz / cfg->rate_hz;
    for (size_t k = 0; k < CHUNK; k++) /* the phase reduced first: exact for any k */
        q->rot[k] = cexp(-2.0 * ML_PI * I * fmod((double)k * f, 1.0));
    ml_am_reset(q);
    *out = q;
    return ML_OK;
}

void ml_am_destroy(ml_am *q)
{
    if (q == NULL)
        return;
    ml_cfir_destroy(q->filter);
    ml_am_blocks_free(&q->blocks);
    ml_am_events_free(&q->events);
    free(q->ref_ring);
    free(q->in_ring);
    free(q->blk_env);
    free(q->blk_in);
    free(q->lag_hist);
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
    memset(q->h, 0, sizeof q->h);
    ml_am_blocks_reset(&q->blocks);
    q->emax_abs = 0;
    q->emin_abs = INFINITY;
    ml_am_events_reset(&q->events);
    q->have_phase = q->phase_locked = false;
    q->blocks.followed = false;
    q->lag_pos = 0;
    for (size_t k = 0; k < q->lag; k++)
        q->lag_hist[k] = 0;
    q->phase_misses = 0;
    q->phase = q->phase_at = q->omega = q->prot_omega = 0;
    for (size_t k = 0; k < CHUNK; k++)
        q->prot[k] = 1.0;
    q->trap = (ml_am_trapezoid){0};
}

size_t ml_am_latency(const ml_am *q)
{
    return q ? q->latency : 0;
}

/* Where one push or finish writes its envelope samples: out (the caller's arrays) from *count
 * on. Passed down the calls of that push, never kept in the object. */
typedef struct {
    const ml_am_output *out;
    size_t *count;
} sink;

/* The carrier's phase, followed from block to block: each block's mean baseband (the carrier
 * line's phasor: the modulation averages out of it) at the block's centre is compared with the
 * phase predicted there from the last phase and the turning rate omega (a carrier offset left by
 * the mixer); half the error corrects the phase. The rate is measured in each block as the angle
 * of the sum of y[i] conj(y[i - L]) over L samples (an AM baseband only turns with the offset; a
 * reversed stretch flips the sign of a minority of the products), L half a block: the rate is
 * unambiguous up to 1 / (2 L) = 1 / block_s = 50 Hz either way, and the noise of the products
 * moves it L times less than with neighbours' products; it is averaged with the last: the
 * reference does not lag. The raw block mean of a turning carrier is shortened by the turning
 * (the factor d below); offsets with d >= RATE_MIN_COHERENCE, up to 39 Hz with 20 ms blocks,
 * are followed (a carrier found by dsp/carrier.h in the span itself is off by far less).
 * A block whose mean is more than 90 degrees off
 * the prediction is a reversed stretch (or noise) and changes nothing; after PHASE_LOST such
 * blocks in a row the phase is taken afresh from the block (the first block may have measured
 * it inside a reversed stretch). A block whose mean is less than half
 * its mean envelope (times d: a reversal inside it) is left out too; after a block without carrier
 * (dsp/am_internal.h) the next block measures the phase afresh (the carrier may come back with
 * another). */
static void carrier_phase(ml_am *q)
{
    const ml_am_blocks *b = &q->blocks;
    const double n = (double)b->fill;
    const double complex m = b->sum_y / n;
    if (!(b->sum / n >= ML_AM_ABSENT_REL * q->cfg.carrier_ref)) { /* no carrier: measure afresh after */
        q->phase_locked = false;
        return;
    }
    const double rate = cabs(b->sum_lag) > 0 ? carg(b->sum_lag) / (double)q->lag : 0.0;
    /* the raw mean of a carrier turning by rate per sample is its phasor at the block's centre,
     * shortened by d = |sum exp(i rate k)| / n */
    const double half = 0.5 * rate * n, d = fabs(half) > 1e-9 ? fabs(sin(half) / (n * sin(0.5 * rate))) : 1.0;
    if (!(d >= RATE_MIN_COHERENCE) || !(cabs(m) > 0.5 * d * b->sum / n))
        return;
    const double at = (double)q->produced - 0.5 * n - 0.5, meas = carg(m);
    if (!q->phase_locked || !(at > q->phase_at)) {
        q->phase = meas;
        q->omega = rate;
        q->phase_at = at;
        q->have_phase = q->phase_locked = true;
        q->phase_misses = 0;
    } else {
        const double pred = q->phase + q->omega * (at - q->phase_at);
        const double err = remainder(meas - pred, 2.0 * ML_PI);
        if (fabs(err) > 0.5 * ML_PI && ++q->phase_misses < PHASE_LOST)
            return;
        if (fabs(err) > 0.5 * ML_PI) { /* lost: start again from this block */
            q->phase = meas;
        } else {
            q->phase = pred + 0.5 * err;
        }
        q->omega = 0.5 * (q->omega + rate);
        q->phase_at = at;
        q->phase_misses = 0;
    }
    if (q->omega != q->prot_omega) {
        const double complex r = cexp(-I * q->omega);
        q->prot[0] = 1.0;
        for (size_t k = 1; k < CHUNK; k++) /* renormalised every 64 steps: rounding stays ~1e-14 */
            q->prot[k] = k % 64 ? q->prot[k - 1] * r : cexp(-I * q->omega * (double)k);
        q->prot_omega = q->omega;
    }
}

/* Classifies the current block and releases it: its samples already sit in the output from
 * *count on; their class is written and the count moves past them. */
static void end_block(ml_am *q, const sink *o)
{
    const size_t fill = q->blocks.fill;
    if (fill == 0)
        return;
    carrier_phase(q);
    const bool modulated = ml_am_blocks_end(&q->blocks);
    q->blocks.followed = q->phase_locked; /* the next block's, turned back by a measured phase */
    if (q->blocks.last_absent && q->events.state < 0) /* a trough into a stretch without carrier */
        q->events.t_absent = true;
    memset(o->out->modulated + *o->count, modulated, fill);
    *o->count += fill;
}

/* The coherent (in-phase, signed) component of n baseband samples against the carrier's phase,
 * and the block's sums of it and of the baseband's moments. Until a block has measured the phase
 * (after the start, or after a stretch without carrier), each run takes it from its own mean
 * baseband, when that is at least half its mean magnitude. */
static ML_INLINE void components(ml_am *q, const double *restrict yy, const double *restrict e, size_t n)
{
    if (!q->phase_locked && n > 0) {
        double mr = 0, mi = 0, me = 0;
        for (size_t i = 0; i < n; i++) {
            mr += yy[2 * i];
            mi += yy[2 * i + 1];
            me += e[i];
        }
        if (!q->have_phase || hypot(mr, mi) > 0.5 * me) {
            q->phase = carg(CMPLX(mr, mi));
            q->phase_at = (double)q->produced + 0.5 * (double)n - 0.5;
            q->omega = 0;
            q->have_phase = true;
        }
    }
    const double complex u0 = cexp(-I * (q->phase + q->omega * ((double)q->produced - q->phase_at)));
    const double u0r = creal(u0), u0i = cimag(u0);
    const double *restrict pr = (const double *)q->prot;
    double *restrict sc = q->sc, *restrict qc = q->qc;
    float *restrict ur = q->ur, *restrict ui = q->ui;
    for (size_t i = 0; i < n; i++) {
        const double cr = u0r * pr[2 * i] - u0i * pr[2 * i + 1], ci = u0r * pr[2 * i + 1] + u0i * pr[2 * i];
        sc[i] = yy[2 * i] * cr - yy[2 * i + 1] * ci; /* Re(y u), u = cr + i ci = exp(-i phase) */
        qc[i] = yy[2 * i] * ci + yy[2 * i + 1] * cr; /* Im(y u) */
        ur[i] = (float)cr;
        ui[i] = (float)ci;
    }
    double sl[4] = {0}, ssl[4] = {0}, ql[4] = {0}, qql[4] = {0};
    ml_lanes_sum4(sc, n, sl, ssl);
    ml_lanes_sum4(qc, n, ql, qql);
    const double ss = (sl[0] + sl[1]) + (sl[2] + sl[3]), sq = (ql[0] + ql[1]) + (ql[2] + ql[3]);
    double ri[4] = {0}, yl[4] = {0}, lr[4] = {0}, li[4] = {0}; /* in lanes by sample index */
    size_t i = 0;
    for (; i + 4 <= n; i += 4)
        for (int k = 0; k < 4; k++) {
            const size_t j = i + (size_t)k;
            ri[k] += sc[j] * qc[j];
            yl[k] += yy[2 * j + 1];
        }
    for (; i < n; i++) {
        ri[0] += sc[i] * qc[i];
        yl[0] += yy[2 * i + 1];
    }
    double yr_sum = 0;
    for (i = 0; i < n; i++)
        yr_sum += yy[2 * i];
    /* the lag products y[i] conj(y[i - lag]), with the lag samples before the run in a ring */
    const size_t lag = q->lag;
    double complex *restrict hist = q->lag_hist;
    size_t at = q->lag_pos;
    for (i = 0; i < n; i++) {
        const double r = yy[2 * i], m = yy[2 * i + 1], pr0 = creal(hist[at]), pi0 = cimag(hist[at]);
        lr[i % 4] += r * pr0 + m * pi0;
        li[i % 4] += m * pr0 - r * pi0;
        hist[at] = CMPLX(r, m);
        at = at + 1 == lag ? 0 : at + 1;
    }
    q->lag_pos = at;
    ml_am_blocks *b = &q->blocks;
    b->sum_s += ss;
    b->sum_v += CMPLX(ss, sq);
    b->srr += (ssl[0] + ssl[1]) + (ssl[2] + ssl[3]);
    b->sii += (qql[0] + qql[1]) + (qql[2] + qql[3]);
    b->sri += (ri[0] + ri[1]) + (ri[2] + ri[3]);
    b->sum_y += CMPLX(yr_sum, (yl[0] + yl[1]) + (yl[2] + yl[3]));
    b->sum_lag += CMPLX((lr[0] + lr[1]) + (lr[2] + lr[3]), (li[0] + li[1]) + (li[2] + li[3]));
}

/* The levels troughs are judged by (dsp/am.h), from the noise: the quadrature component's
 * variance over the finished blocks (ml_am_blocks_noise_var), or before the first block ends over
 * the part of it seen so far (this run included); before 32 samples, UNKNOWN_NOISE. */
static void noise_levels(ml_am *q)
{
    const ml_am_blocks *b = &q->blocks;
    double nv = ml_am_blocks_noise_var(b);
    if (nv < 0 && b->fill >= 32)
        nv = ml_am_blocks_var_q(b);
    const double sig = nv >= 0 ? sqrt(nv) / q->cfg.carrier_ref : UNKNOWN_NOISE;
    const double fl = fmax(q->cfg.pinch_rel, FLOOR_SIGMAS * sig);
    q->lv.floor = (float)fl;
    q->lv.floor4 = (float)(4.0 * fl);
    q->lv.rev = (float)fmax(REV_MIN, REV_SIGMAS * sig);
    q->lv.hyst = (float)fmax(HYST_MIN, HYST_SIGMAS * sig);
    /* the noise blurs the time below F: the share a pinch-off needs grows from 60 % (noise far
     * below F) to 70 % (F set by the noise), which keeps a 99 % tone at 30 dB CNR free of
     * pinch-offs (none in its 3000 troughs, tests/e2e/test_am_peaks.py) */
    q->lv.share = (float)(0.6 + 0.1 * fmin(1.0, FLOOR_SIGMAS * sig / fl));
}

/* Oversampled values of the interval y[j-2]..y[j-1] for sample j (from the fourth sample on):
 * the complex baseband is interpolated [catmull:1974] and then its magnitude taken, so the V of a
 * phase reversal keeps its zero, and its coherent reading (projected on the carrier's phase of
 * sample j). The baseband goes into separate real and imaginary arrays behind the three samples
 * before, and each of the OVERSAMPLE values into its own row of q->over and q->sg, so that the
 * loop runs across samples in vector registers. These values only go into the histograms (bins of
 * 6e-5 carrier_ref), the extremes and the troughs, so they are computed in single precision
 * (relative rounding 6e-8, far below the interpolation's own error) in units of carrier_ref (so
 * that no envelope level under- or overflows a float): twice the values per vector register.
 * Fills q->vmin, q->vmax (the extremes of each sample's interval), the marks of each sample
 * (lowest coherent reading, values below F and 4 F, negative readings). */
static ML_INLINE void oversample(ml_am *q, const double *restrict yy, const double *restrict e, size_t n,
                                 size_t skip)
{
    const double inv_c = 1.0 / q->cfg.carrier_ref;
    float *restrict yr = q->yr, *restrict yi = q->yi, *restrict v = q->over, *restrict g = q->sg;
    for (size_t i = 0; i < 3; i++) {
        yr[i] = (float)(creal(q->h[i]) * inv_c);
        yi[i] = (float)(cimag(q->h[i]) * inv_c);
    }
    for (size_t i = 0; i < n; i++) {
        yr[i + 3] = (float)(yy[2 * i] * inv_c);
        yi[i + 3] = (float)(yy[2 * i + 1] * inv_c);
    }
    float *restrict v0 = v, *restrict v1 = v + CHUNK, *restrict v2 = v + 2 * CHUNK,
                    *restrict v3 = v + 3 * CHUNK;
    float *restrict g0 = g, *restrict g1 = g + CHUNK, *restrict g2 = g + 2 * CHUNK,
                    *restrict g3 = g + 3 * CHUNK;
    float *restrict vmin = q->vmin, *restrict vmax = q->vmax, *restrict slo = q->slo;
    const float *restrict ur = q->ur, *restrict ui = q->ui;
    const double *restrict sc = q->sc;
    unsigned char *restrict nfl = q->nfl, *restrict nfl4 = q->nfl4, *restrict nneg = q->nneg;
    const float fl = q->lv.floor, fl4 = q->lv.floor4;
    for (size_t i = skip; i < n; i++) {
        /* the cubic's coefficients once per interval (complex times real: no complex product) */
        const float c0r = 2.0f * yr[i + 1], c1r = yr[i + 2] - yr[i],
                    c2r = 2.0f * yr[i] - 5.0f * yr[i + 1] + 4.0f * yr[i + 2] - yr[i + 3],
                    c3r = -yr[i] + 3.0f * yr[i + 1] - 3.0f * yr[i + 2] + yr[i + 3];
        const float c0i = 2.0f * yi[i + 1], c1i = yi[i + 2] - yi[i],
                    c2i = 2.0f * yi[i] - 5.0f * yi[i + 1] + 4.0f * yi[i + 2] - yi[i + 3],
                    c3i = -yi[i] + 3.0f * yi[i + 1] - 3.0f * yi[i + 2] + yi[i + 3];
        const float pr = ur[i], pi = ui[i];
#define ML_AM_OVER(K, OUT, SG)                                                                    \
    do {                                                                                           \
        const float t = (float)(K) / OVERSAMPLE, t2 = t * t, t3 = t2 * t;                          \
        const float re = 0.5f * (c0r + c1r * t + c2r * t2 + c3r * t3);                             \
        const float im = 0.5f * (c0i + c1i * t + c2i * t2 + c3i * t3);                             \
        (OUT)[i] = sqrtf(re * re + im * im);                                                       \
        (SG)[i] = re * pr - im * pi;                                                               \
    } while (0)
        ML_AM_OVER(0, v0, g0);
        ML_AM_OVER(1, v1, g1);
        ML_AM_OVER(2, v2, g2);
        ML_AM_OVER(3, v3, g3);
#undef ML_AM_OVER
        const float lo01 = v0[i] < v1[i] ? v0[i] : v1[i], lo23 = v2[i] < v3[i] ? v2[i] : v3[i];
        const float hi01 = v0[i] > v1[i] ? v0[i] : v1[i], hi23 = v2[i] > v3[i] ? v2[i] : v3[i];
        vmin[i] = lo01 < lo23 ? lo01 : lo23;
        vmax[i] = hi01 > hi23 ? hi01 : hi23;
        const float s01 = g0[i] < g1[i] ? g0[i] : g1[i], s23 = g2[i] < g3[i] ? g2[i] : g3[i];
        slo[i] = s01 < s23 ? s01 : s23;
        nfl[i] = (unsigned char)((v0[i] < fl) + (v1[i] < fl) + (v2[i] < fl) + (v3[i] < fl));
        nfl4[i] = (unsigned char)((v0[i] < fl4) + (v1[i] < fl4) + (v2[i] < fl4) + (v3[i] < fl4));
        nneg[i] = (unsigned char)((g0[i] < 0.0f) + (g1[i] < 0.0f) + (g2[i] < 0.0f) + (g3[i] < 0.0f));
    }
    for (size_t i = 0; i < skip; i++) { /* no interval yet: the sample alone, four times */
        const float ev = (float)(e[i] * inv_c), sv = (float)(sc[i] * inv_c);
        vmin[i] = vmax[i] = v0[i] = v1[i] = v2[i] = v3[i] = ev;
        slo[i] = g0[i] = g1[i] = g2[i] = g3[i] = sv;
        nfl[i] = (unsigned char)(4 * (ev < fl));
        nfl4[i] = (unsigned char)(4 * (ev < fl4));
        nneg[i] = (unsigned char)(4 * (sv < 0.0f));
    }
}

/* The absolute extremes of the oversampled envelope, updated from q->vmin, q->vmax (in lanes). */
static ML_INLINE void extremes(ml_am *q, size_t n, size_t skip)
{
    const double c_ref = q->cfg.carrier_ref;
    enum { LF = 8 };
    float hl[LF], ll[LF];
    for (int k = 0; k < LF; k++) {
        hl[k] = 0.0f;
        ll[k] = INFINITY;
    }
    ml_lanes_minmax8f(q->vmin + skip, q->vmax + skip, n - skip, ll, hl);
    double hi = q->emax_abs, lo = q->emin_abs;
    for (int k = 0; k < LF; k++) {
        const double h = (double)hl[k] * c_ref, l = (double)ll[k] * c_ref;
        hi = h > hi ? h : hi;
        lo = l < lo ? l : lo;
    }
    q->emax_abs = hi;
    q->emin_abs = lo;
}

/* The histogram bins of the oversampled readings, pending until their block is classified. The
 * reading is the envelope, or the coherent reading where that lies below -rev (a reversed
 * carrier, dsp/am.h). */
static ML_INLINE void histogram_bins(ml_am *q, size_t n, size_t skip)
{
    uint16_t *restrict bins = q->blocks.pending + q->blocks.npending;
    const float hs = (float)(HIST_BINS / HIST_RANGE); /* bins per carrier_ref: a power of two */
    const float low = (float)ML_AM_HIST_LOW, rev = -q->lv.rev;
    for (int k = 0; k < OVERSAMPLE; k++) {
        const float *restrict vk = q->over + (size_t)k * CHUNK, *restrict gk = q->sg + (size_t)k * CHUNK;
        uint16_t *restrict bk = bins + (size_t)k * (n - skip);
        for (size_t j = skip; j < n; j++) {
            const float r = gk[j] < rev ? gk[j] : vk[j];
            const float b = (r + low) * hs; /* clamped to the histogram; a NaN lands in bin 0 */
            bk[j - skip] = (uint16_t)(int32_t)(b > 0 ? (b < HIST_BINS - 1 ? b : HIST_BINS - 1) : 0);
        }
    }
    q->blocks.npending += OVERSAMPLE * (n - skip);
}

/* n <= CHUNK clean baseband samples y (input samples x, aligned reference a) that all belong to
 * the current block: envelope, its components, oversampled envelope, block sums, troughs and
 * crests, trapezoid sums. */
ML_HOT static void envelope_run(ml_am *q, const sink *o, const double complex *y, const double complex *x,
                                const float *a, size_t n)
{
    const size_t at = *o->count + q->blocks.fill;
    double *restrict e = o->out->env + at;
    const double *restrict yy = (const double *)y; /* C11 6.2.5: a complex is an array of two */
    for (size_t i = 0; i < n; i++) /* |y| without hypot: far from overflow and underflow */
        e[i] = sqrt(yy[2 * i] * yy[2 * i] + yy[2 * i + 1] * yy[2 * i + 1]);
    if (o->out->in != NULL)
        memcpy(o->out->in + at, x, n * sizeof *x);
    /* the block's sums in lanes: a single running sum would wait for each addition in turn */
    double sl[4] = {0}, ssl[4] = {0};
    ml_lanes_sum4(e, n, sl, ssl);
    q->blocks.sum += (sl[0] + sl[1]) + (sl[2] + sl[3]);
    q->blocks.sumsq += (ssl[0] + ssl[1]) + (ssl[2] + ssl[3]);
    components(q, yy, e, n);
    q->blocks.fill += n; /* the block's sums now hold this run: noise_levels may read them */
    noise_levels(q);
    q->blocks.fill -= n;
    /* the first three samples of the stream have no interval before them */
    const size_t skip = q->produced >= 3 ? 0 : 3 - (size_t)q->produced < n ? 3 - (size_t)q->produced : n;
    oversample(q, yy, e, n, skip);
    extremes(q, n, skip);
    histogram_bins(q, n, skip);
    /* the last three baseband samples carry over */
    for (size_t i = 0; i < 3; i++) {
        const size_t back = 3 - i; /* h[i] = the sample `back` before the end */
        q->h[i] = back <= n ? y[n - back] : q->h[i + n];
    }
    q->produced += n;
    const double inv_c = 1.0 / q->cfg.carrier_ref;
    for (size_t i = 0; i < n; i++) {
        q->er[i] = e[i] * inv_c;
        q->vmin[i] = fminf(q->vmin[i], (float)q->er[i]);
        q->vmax[i] = fmaxf(q->vmax[i], (float)q->er[i]);
        q->slo[i] = fminf(q->slo[i], (float)(q->sc[i] * inv_c));
    }
    const ml_am_marks mk = {.lo = q->vmin, .hi = q->vmax, .slo = q->slo, .n_floor = q->nfl,
                            .n_floor4 = q->nfl4, .n_neg = q->nneg};
    ml_am_events_push(&q->events, &q->lv, q->er, &mk, n);
    if (q->cfg.has_reference)
        ml_am_trapezoid_push(&q->trap, a, e, n);
    q->blocks.fill += n;
    if (q->blocks.fill == q->blocks.len)
        end_block(q, o);
}

size_t ml_am_output_cap(const ml_am *q, size_t n)
{
    return q ? n + q->blocks.len + (q->latency - q->startup) : 0;
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
ML_HOT static ml_status process(ml_am *q, const sink *o, const double complex *z, const float *ref,
                                const float *frames, const ml_channels *fr, size_t n)
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
        if (o->out->in != NULL)
            DELAY(q->in_ring, q->dly_len, q->dly_pos, q->latency, zc, q->delayed, m, 0.0);
        if (q->cfg.has_reference)
            DELAY(q->ref_ring, q->dly_len, q->dly_pos, q->latency, rc, q->ref_delayed, m, 0.0f);
        q->dly_pos = (q->dly_pos + m) % q->dly_len;
        /* it is only clean once the filter's past half holds input, i.e. from input index
         * startup on: outputs with t < latency + startup are left out */
        const uint64_t clean = q->latency + q->startup;
        size_t i = q->in_count >= clean ? 0 : clean - q->in_count < m ? (size_t)(clean - q->in_count) : m;
        while (i < m) {
            size_t k = m - i, room = q->blocks.len - q->blocks.fill;
            if (k > room)
                k = room;
            envelope_run(q, o, q->filtered + i, q->delayed + i, q->ref_delayed + i, k);
            i += k;
        }
        q->in_count += m;
        done += m;
    }
    return ML_OK;
}

/* A push or finish begins: the incomplete block carried over goes to the start of the output. */
static sink begin_output(ml_am *q, const ml_am_output *out, size_t *count)
{
    *count = 0;
    memcpy(out->env, q->blk_env, q->blocks.fill * sizeof *out->env);
    if (out->in != NULL)
        memcpy(out->in, q->blk_in, q->blocks.fill * sizeof *out->in);
    return (sink){out, count};
}

/* ... and ends: an incomplete block is kept for the next one. */
static void end_output(ml_am *q, const sink *o)
{
    memcpy(q->blk_env, o->out->env + *o->count, q->blocks.fill * sizeof *q->blk_env);
    if (o->out->in != NULL)
        memcpy(q->blk_in, o->out->in + *o->count, q->blocks.fill * sizeof *q->blk_in);
}

ml_status ml_am_push(ml_am *q, const double complex *z, const float *ref, size_t n, const ml_am_output *out,
                     size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, n) || (n > 0 && z == NULL)
        || (q->cfg.has_reference && n > 0 && ref == NULL) || q->finished)
        return ML_EINVAL;
    const sink o = begin_output(q, out, count);
    ml_status st = process(q, &o, z, ref, NULL, NULL, n);
    end_output(q, &o);
    return st;
}

ml_status ml_am_push_frames(ml_am *q, const float *frames, const ml_channels *c, size_t n,
                            const ml_am_output *out, size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, n) || q->finished
        || (n > 0 && (frames == NULL || c == NULL || c->stride == 0 || c->re >= c->stride
                      || (q->cfg.complex_input && (!c->complex_input || c->im >= c->stride))
                      || (q->cfg.has_reference && (!c->has_ref || c->ref >= c->stride)))))
        return ML_EINVAL;
    const sink o = begin_output(q, out, count);
    ml_status st = process(q, &o, NULL, NULL, frames, c, n);
    end_output(q, &o);
    return st;
}

ml_status ml_am_finish(ml_am *q, const ml_am_output *out, size_t *count)
{
    if (q == NULL || count == NULL || !output_ok(q, out, 0) || q->finished)
        return ML_EINVAL;
    const sink o = begin_output(q, out, count);
    /* Flush: latency - startup zeros bring out the envelope of the inputs up to n - startup - 1,
     * the last whose filter window lies wholly inside the input; later ones would see the zeros. */
    ml_status st = process(q, &o, NULL, NULL, NULL, NULL, q->latency - q->startup);
    if (st == ML_OK) {
        end_block(q, &o);
        ml_am_events_end(&q->events, &q->lv);
    }
    end_output(q, &o);
    q->finished = true;
    return st;
}

ml_status ml_am_get_result(const ml_am *q, ml_am_result *out)
{
    if (q == NULL || out == NULL)
        return ML_EINVAL;
    memset(out, 0, sizeof *out);
    if (q->produced == 0)
        return ML_ENOSIGNAL;
    const ml_am_blocks *b = &q->blocks;
    out->samples = q->produced;
    out->absent_samples = b->n_absent;
    const uint64_t present = b->n_quiet + b->n_mod;
    if (present == 0)
        return ML_ENOSIGNAL;
    out->mean_all = b->sum_all / (double)present;
    out->modulated_samples = b->n_mod;
    out->quiet_samples = b->n_quiet;
    out->mean_modulated = b->n_mod ? b->sum_mod / (double)b->n_mod : 0.0;
    out->mean_quiet = b->n_quiet ? b->sum_quiet / (double)b->n_quiet : 0.0;
    out->coherent_all = b->sum_s_all / (double)present;
    out->coherent_modulated = b->n_mod ? b->sum_s_mod / (double)b->n_mod : 0.0;
    /* hold_s per second of signal is the share of time a level must be exceeded to count */
    out->emax = ml_am_blocks_quantile(b, 1.0 - q->cfg.hold_s);
    out->emin = ml_am_blocks_quantile(b, q->cfg.hold_s);
    if (out->emax > q->emax_abs)
        out->emax = q->emax_abs;
    if (out->emin >= 0 && out->emin < q->emin_abs) /* within the bin of the lowest value */
        out->emin = q->emin_abs;
    out->emax_abs = q->emax_abs;
    out->emin_abs = isfinite(q->emin_abs) ? q->emin_abs : 0.0;
    const ml_am_events *ev = &q->events;
    out->pinch_events = ev->pinch_events;
    out->reversal_events = ev->reversal_events;
    out->troughs = ev->troughs;
    out->crests = ev->crests;
    out->positive_over = ml_am_events_crests_above(ev, 1.0 + q->cfg.positive_limit_pct / 100.0);
    out->off_samples = (double)ev->off_values / OVERSAMPLE;
    out->reversed_samples = (double)ev->reversed_values / OVERSAMPLE;
    const double nv = ml_am_blocks_noise_var(b);
    out->noise_rms = nv >= 0 ? sqrt(nv) : NAN;
    out->floor_rel = q->lv.floor;
    out->reversal_rel = q->lv.rev;
    out->floor_from_noise = q->lv.floor > (float)q->cfg.pinch_rel;
    if (q->cfg.has_reference)
        out->has_trapezoid = ml_am_trapezoid_fit(&q->trap, &out->trap_slope, &out->trap_intercept,
                                                 &out->trap_residual_rms, &out->trap_ref_rms);
    return ML_OK;
}

double ml_am_fraction_below(const ml_am *q, double level)
{
    return q ? ml_am_blocks_fraction_below(&q->blocks, level) : 0.0;
}

uint64_t ml_am_crests_above(const ml_am *q, double level)
{
    return q ? ml_am_events_crests_above(&q->events, level / q->cfg.carrier_ref) : 0;
}
