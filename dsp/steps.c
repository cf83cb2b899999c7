/* Stepped-tone segmentation with bounded memory, and the step plan.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [harris:1978] F. J. Harris, "On the use of windows for harmonic analysis with the discrete Fourier
 *     transform", Proc. IEEE 66(1), 1978 (Hann window, main lobe +-2 bins; full entry in dsp/window.c).
 * [oppenheim:2010] A. V. Oppenheim, R. W. Schafer, Discrete-Time Signal Processing, 3rd ed.,
 *     Parseval's relation for the DFT (8.7.6).
 * The phase-advance frequency estimate is the one of dsp/spectrum.h's get_frequency, per step.
 */
#include "dsp/steps.h"

#include <assert.h>
#include <complex.h>
#include <fftw3.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/internal.h"
#include "dsp/order.h"
#include "dsp/window.h"

typedef struct {
    uint64_t j; /* frame number */
    size_t kp;  /* peak bin     */
    double f, lev_db, pt;
    double complex x; /* spectrum at the peak bin */
} frame_info;

struct ml_steps {
    ml_steps_config cfg;
    size_t F, hop, nfft, lobe, kmin;
    double scale; /* 2 / (nfft sum w^2) */
    double *w, *ring, *in, *pw; /* pw: the bins' powers, scratch for the median */
    fftw_complex *out;
    fftw_plan plan;
    uint64_t pos;    /* samples pushed */
    uint64_t frames; /* frames analysed */
    size_t rpos;     /* next write position in ring */
    /* open run */
    int open;
    uint64_t run_start, run_end, edge;
    double sum_f, sum_lev;
    size_t nrun;
    frame_info *fifo; /* the last `hold` frames, not yet committed */
    size_t hold, nfifo, fifo_head;
    /* committed (measured) part */
    size_t nmeas;
    double sum_pt, sum_fc, lev_min, lev_max;
    double complex zsum;
    size_t npairs;
    int have_prev;
    frame_info prev;
    /* steps found */
    ml_step *steps;
    uint64_t count;
    double loudest_db; /* the loudest tonal frame so far (-INFINITY: none)                   */
    /* steady runs too short to measure (ML_STEPS_MAX_SKIPPED kept) */
    ml_step skipped[ML_STEPS_MAX_SKIPPED];
    uint64_t nskipped;
};

ml_steps_config ml_steps_config_default(double rate_hz)
{
    return (ml_steps_config){.rate_hz = rate_hz, .frame_s = 0.2, .edge_s = 0.1, .min_step_s = 0.3,
                             .freq_tol_pct = 2.0, .freq_tol_hz = 2.0, .level_tol_db = 0.5, .tonal_db = 10.0,
                             .line_db = 15.0, .min_level_dbfs = -200.0, .max_steps = 4096};
}

static int in_range(double v, double lo, double hi)
{
    return v >= lo && v <= hi;
}

static int config_ok(const ml_steps_config *c)
{
    return c != NULL && in_range(c->rate_hz, 8000, 1e6) && in_range(c->frame_s, 0.01, 2)
           && in_range(c->edge_s, 0, 10) && c->min_step_s > 0 && c->min_step_s <= 3600
           && in_range(c->freq_tol_pct, 0.01, 50) && in_range(c->freq_tol_hz, 0, 1000)
           && in_range(c->level_tol_db, 0.01, 40) && in_range(c->tonal_db, 0, 60)
           && in_range(c->line_db, 3, 100) && in_range(c->min_level_dbfs, -200, 0) && c->max_steps >= 1
           && c->max_steps <= 1000000;
}

static void clear_run(ml_steps *q)
{
    q->open = 0;
    q->sum_f = q->sum_lev = 0.0;
    q->nrun = q->nfifo = q->fifo_head = 0;
    q->nmeas = q->npairs = 0;
    q->sum_pt = q->sum_fc = 0.0;
    q->lev_min = INFINITY;
    q->lev_max = -INFINITY;
    q->zsum = 0.0;
    q->have_prev = 0;
}

ml_status ml_steps_create(const ml_steps_config *cfg, ml_steps **out)
{
    assert(out != NULL);
    *out = NULL;
    if (!config_ok(cfg))
        return ML_EINVAL;
    ml_status st = ML_ENOMEM;
    ml_steps *q = calloc(1, sizeof *q);
    if (q == NULL)
        return st;
    q->cfg = *cfg;
    q->F = (size_t)llround(cfg->frame_s * cfg->rate_hz);
    if (q->F < 16)
        q->F = 16;
    q->F += q->F % 2;
    q->hop = q->F / 2;
    q->nfft = 16;
    while (q->nfft < 2 * q->F)
        q->nfft *= 2;
    /* Hann main lobe: +-2 unpadded bins = +-2 nfft/F padded bins, plus one */
    q->lobe = (size_t)ceil(2.0 * (double)q->nfft / (double)q->F) + 1;
    q->kmin = q->lobe;
    q->edge = (uint64_t)llround(cfg->edge_s * cfg->rate_hz);
    q->hold = (size_t)((q->edge + q->hop - 1) / q->hop);
    q->w = malloc(q->F * sizeof *q->w);
    q->ring = calloc(q->F, sizeof *q->ring);
    q->in = fftw_alloc_real(q->nfft);
    q->out = fftw_alloc_complex(q->nfft / 2 + 1);
    q->pw = malloc((q->nfft / 2 + 1) * sizeof *q->pw);
    q->fifo = malloc((q->hold + 1) * sizeof *q->fifo);
    q->steps = malloc(cfg->max_steps * sizeof *q->steps);
    if (q->w == NULL || q->ring == NULL || q->in == NULL || q->out == NULL || q->fifo == NULL
        || q->steps == NULL || q->pw == NULL)
        goto fail;
    double s2 = 0.0;
    for (size_t n = 0; n < q->F; n++) {
        q->w[n] = 0.5 - 0.5 * cos(2.0 * ML_PI * (double)n / (double)q->F);
        s2 += q->w[n] * q->w[n];
    }
    q->scale = 2.0 / ((double)q->nfft * s2); /* [oppenheim:2010] Parseval: a sine of amplitude A -> A^2/2 */
    st = ML_EFFT;
    q->plan = fftw_plan_dft_r2c_1d((int)q->nfft, q->in, q->out, FFTW_ESTIMATE);
    if (q->plan == NULL)
        goto fail;
    ml_steps_reset(q);
    *out = q;
    return ML_OK;
fail:
    ml_steps_destroy(q);
    return st;
}

void ml_steps_destroy(ml_steps *q)
{
    if (q == NULL)
        return;
    if (q->plan != NULL)
        fftw_destroy_plan(q->plan);
    fftw_free(q->in);
    fftw_free(q->out);
    free(q->w);
    free(q->ring);
    free(q->pw);
    free(q->fifo);
    free(q->steps);
    free(q);
}

void ml_steps_reset(ml_steps *q)
{
    if (q == NULL)
        return;
    memset(q->ring, 0, q->F * sizeof *q->ring);
    q->pos = q->frames = 0;
    q->rpos = 0;
    q->count = q->nskipped = 0;
    q->loudest_db = -INFINITY;
    clear_run(q);
}

/* Adds a frame to the measured part. */
static void commit(ml_steps *q, const frame_info *fi)
{
    q->nmeas++;
    q->sum_pt += fi->pt;
    q->sum_fc += fi->f;
    q->lev_min = fmin(q->lev_min, fi->lev_db);
    q->lev_max = fmax(q->lev_max, fi->lev_db);
    if (q->have_prev && q->prev.j + 1 == fi->j && q->prev.kp == fi->kp) {
        q->zsum += fi->x * conj(q->prev.x);
        q->npairs++;
    }
    q->prev = *fi;
    q->have_prev = 1;
}

/* Ends the open run and records it as a step when its measured part is long enough. */
static void close_run(ml_steps *q)
{
    if (!q->open)
        return;
    const uint64_t ms = q->run_start + q->edge, me = q->run_end > q->edge ? q->run_end - q->edge : 0;
    const double rate = q->cfg.rate_hz;
    if (me > ms && (double)(me - ms) >= q->cfg.min_step_s * rate && q->nmeas > 0) {
        ml_step s = {.index = q->count, .start = q->run_start, .end = q->run_end, .measure_start = ms,
                     .measure_end = me, .nframes = q->nmeas};
        const double fc = q->sum_fc / (double)q->nmeas;
        s.frequency_hz = fc;
        if (q->npairs > 0) {
            /* advance 2 pi f hop / rate, modulo 2 pi; the turn count from the interpolated mean */
            const double turns = carg(q->zsum) / (2.0 * ML_PI), hops = fc * (double)q->hop / rate;
            s.frequency_hz = (turns + round(hops - turns)) * rate / (double)q->hop;
        }
        s.level_dbfs = 10.0 * log10(q->sum_pt / (double)q->nmeas / 0.5);
        s.level_spread_db = q->lev_max - q->lev_min;
        q->steps[q->count % q->cfg.max_steps] = s;
        q->count++;
    } else if (q->nrun >= ML_STEPS_SKIP_FRAMES) {
        const ml_step s = {.index = q->nskipped, .start = q->run_start, .end = q->run_end,
                           .frequency_hz = q->sum_f / (double)q->nrun,
                           .level_dbfs = q->sum_lev / (double)q->nrun, .nframes = q->nrun};
        q->skipped[q->nskipped % ML_STEPS_MAX_SKIPPED] = s;
        q->nskipped++;
    }
    clear_run(q);
}

/* |X|^2 (fftw_complex is double complex: <complex.h> comes first) */
static double p2(double complex x)
{
    return creal(x) * creal(x) + cimag(x) * cimag(x);
}

/* True when f_hz lies on a mains multiple m x 50 or m x 60 Hz, m <= ML_STEPS_HUM_ORDERS, within 1 %
 * or tol_hz (the frame's resolution). */
static bool at_mains(double f_hz, double tol_hz)
{
    for (int m = 1; m <= ML_STEPS_HUM_ORDERS; m++)
        for (int j = 0; j < 2; j++) {
            const double fm = m * (j ? 60.0 : 50.0);
            if (fabs(f_hz - fm) <= fmax(0.01 * fm, tol_hz))
                return true;
        }
    return false;
}

/* The frame's line when its strongest, at bin kp, is hum (header): the strongest bin two lobes clear
 * of kp and of every mains multiple, and a lobe clear of kp's harmonics 2..10, whose lobe's mean
 * power stands line_db over the median bin power med; kp when there is none. */
static size_t beside_hum(const ml_steps *q, size_t kp, double med)
{
    const size_t half = q->nfft / 2;
    const double bin_hz = q->cfg.rate_hz / (double)q->nfft, lobe_hz = (double)q->lobe * bin_hz;
    const double fkp = (double)kp * bin_hz;
    size_t best = kp;
    double pbest = 0.0;
    const double pkp = p2(q->out[kp]), over = pow(10.0, q->cfg.line_db / 10.0);
    const double per_raw = (double)q->F / (double)q->nfft; /* a padded bin in the frame's own bins */
    for (size_t k = q->kmin; k + q->lobe <= half; k++) {
        const double f = (double)k * bin_hz, p = p2(q->out[k]);
        /* two lobes clear: a bin whose own lobe reaches into a mains line's holds that line */
        if (!(p > pbest) || at_mains(f, 2.0 * lobe_hz) || (k > kp ? k - kp : kp - k) <= 2 * q->lobe)
            continue;
        /* and line_db over the hum line's leakage there (the Hann window's sidelobes, their
         * envelope within half a frame bin: ml_window_leakage_envelope) */
        const double leak = ml_window_leakage_envelope(ML_WINDOW_HANN, q->F, ((double)k - (double)kp) * per_raw);
        if (p < over * leak * pkp)
            continue;
        const double h = nearbyint(f / fkp);
        if (h >= 2 && h <= 10 && fabs(f - h * fkp) <= lobe_hz)
            continue;
        best = k;
        pbest = p;
    }
    if (best == kp)
        return kp;
    double pl = 0.0;
    for (size_t k = best - q->lobe; k <= best + q->lobe; k++)
        pl += p2(q->out[k]);
    return pl / (double)(2 * q->lobe + 1) >= pow(10.0, q->cfg.line_db / 10.0) * med ? best : kp;
}

static void analyse_frame(ml_steps *q)
{
    const size_t F = q->F;
    double mean = 0.0;
    for (size_t n = 0; n < F; n++)
        mean += q->ring[n];
    mean /= (double)F;
    for (size_t n = 0; n < F; n++) /* oldest sample first: ring[rpos] */
        q->in[n] = (q->ring[(q->rpos + n) % F] - mean) * q->w[n];
    memset(q->in + F, 0, (q->nfft - F) * sizeof *q->in);
    fftw_execute(q->plan);
    const size_t half = q->nfft / 2;
    double tot = 0.0, best = -1.0;
    size_t kp = q->kmin;
    for (size_t k = q->kmin; k <= half; k++) {
        const double p = p2(q->out[k]);
        q->pw[k - q->kmin] = p;
        tot += p;
        if (k + q->lobe <= half && p > best) {
            best = p;
            kp = k;
        }
    }
    /* the noise in the lobe: the median bin power / ln 2 (the mean of exponentially distributed
     * bin powers) times the lobe's bins */
    const size_t nb = half + 1 - q->kmin, nlobe = 2 * q->lobe + 1;
    const double med = ml_order_select(q->pw, nb, nb / 2), noise = med / log(2.0) * (double)nlobe;
    double pt = 0.0;
    for (size_t k = kp - q->lobe; k <= kp + q->lobe; k++)
        pt += p2(q->out[k]);
    /* a steady hum line far below the loudest step is not the frame's tone when another line
     * stands out beside it (a stop-band step under the hum) */
    if (isfinite(q->loudest_db) && pt > 0
        && 10.0 * log10(pt * q->scale / 0.5) < q->loudest_db - ML_STEPS_HUM_DB
        && at_mains((double)kp * q->cfg.rate_hz / (double)q->nfft,
                    (double)q->lobe * q->cfg.rate_hz / (double)q->nfft)) {
        const size_t k2 = beside_hum(q, kp, med);
        if (k2 != kp) {
            kp = k2;
            best = p2(q->out[kp]);
            pt = 0.0;
            for (size_t k = kp - q->lobe; k <= kp + q->lobe; k++)
                pt += p2(q->out[k]);
        }
    }
    frame_info fi = {.j = q->frames, .kp = kp};
    const uint64_t fstart = q->frames * q->hop, fend = fstart + F;
    q->frames++;
    /* parabolic interpolation of ln power around the peak */
    double d = 0.0;
    {
        const double pl = p2(q->out[kp - 1]);
        const double pr = p2(q->out[kp + 1]);
        if (pl > 0 && pr > 0 && best > 0) {
            const double l = log(pl), c = log(best), r = log(pr), den = l - 2.0 * c + r;
            if (den < 0)
                d = 0.5 * (l - r) / den;
        }
    }
    fi.f = ((double)kp + d) * q->cfg.rate_hz / (double)q->nfft;
    fi.pt = pt * q->scale;
    fi.lev_db = fi.pt > 0 ? 10.0 * log10(fi.pt / 0.5) : -INFINITY;
    fi.x = q->out[kp];
    const double rest = (tot - pt) * q->scale;
    int tonal = fi.pt > 0 && fi.lev_db >= q->cfg.min_level_dbfs;
    if (tonal && !(fi.pt >= pow(10.0, q->cfg.tonal_db / 10.0) * rest)) /* else a line above the noise */
        tonal = pt / (double)nlobe >= pow(10.0, q->cfg.line_db / 10.0) * med;
    /* the level's scatter from the noise: P = |A + n|^2 varies by sqrt(2 N / A^2) (first order) */
    const double snr = noise > 0 ? pt / noise : INFINITY;
    const double ltol = fmax(q->cfg.level_tol_db, 3.0 * 10.0 / log(10.0) * sqrt(2.0 / snr));
    if (!tonal) {
        close_run(q);
        return;
    }
    q->loudest_db = fmax(q->loudest_db, fi.lev_db);
    if (q->open) {
        const double mf = q->sum_f / (double)q->nrun, ml = q->sum_lev / (double)q->nrun;
        const double ftol = fmax(q->cfg.freq_tol_pct / 100.0 * mf, q->cfg.freq_tol_hz);
        if (fabs(fi.f - mf) > ftol || fabs(fi.lev_db - ml) > ltol)
            close_run(q);
    }
    if (!q->open) {
        q->open = 1;
        q->run_start = fstart;
    }
    q->run_end = fend;
    q->sum_f += fi.f;
    q->sum_lev += fi.lev_db;
    q->nrun++;
    /* hold the last `hold` frames back (they may fall in the end edge); commit the older ones */
    if (q->hold == 0) {
        if (fstart >= q->run_start + q->edge)
            commit(q, &fi);
        return;
    }
    if (q->nfifo == q->hold) {
        const frame_info old = q->fifo[q->fifo_head];
        q->fifo_head = (q->fifo_head + 1) % q->hold;
        q->nfifo--;
        if (old.j * q->hop >= q->run_start + q->edge)
            commit(q, &old);
    }
    q->fifo[(q->fifo_head + q->nfifo) % q->hold] = fi;
    q->nfifo++;
}

ml_status ml_steps_push(ml_steps *q, const float *x, size_t n)
{
    if (q == NULL || (n > 0 && x == NULL))
        return ML_EINVAL;
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(x[i]))
            return ML_ERANGE;
        q->ring[q->rpos] = (double)x[i];
        q->rpos = q->rpos + 1 == q->F ? 0 : q->rpos + 1;
        q->pos++;
        if (q->pos >= q->F && (q->pos - q->F) % q->hop == 0)
            analyse_frame(q);
    }
    return ML_OK;
}

ml_status ml_steps_finish(ml_steps *q)
{
    if (q == NULL)
        return ML_EINVAL;
    close_run(q);
    return ML_OK;
}

uint64_t ml_steps_count(const ml_steps *q)
{
    return q == NULL ? 0 : q->count;
}

uint64_t ml_steps_skipped_count(const ml_steps *q)
{
    return q == NULL ? 0 : q->nskipped;
}

ml_status ml_steps_get_skipped(const ml_steps *q, uint64_t i, ml_step *out)
{
    if (q == NULL || out == NULL || i >= q->nskipped)
        return ML_EINVAL;
    if (q->nskipped - i > ML_STEPS_MAX_SKIPPED)
        return ML_ENOSIGNAL;
    *out = q->skipped[i % ML_STEPS_MAX_SKIPPED];
    return ML_OK;
}

ml_status ml_steps_get(const ml_steps *q, uint64_t i, ml_step *out)
{
    if (q == NULL || out == NULL || i >= q->count)
        return ML_EINVAL;
    if (q->count - i > q->cfg.max_steps)
        return ML_ENOSIGNAL;
    *out = q->steps[i % q->cfg.max_steps];
    return ML_OK;
}

size_t ml_steps_latency(const ml_steps *q)
{
    return q == NULL ? 0 : q->F + q->hop;
}

/* ---- plan ---- */

ml_step_plan ml_step_plan_default(void)
{
    ml_step_plan p = {.nfreqs = 1, .nlevels = 1, .step_s = 1.0, .pause_s = 0.25};
    p.freqs_hz[0] = 1000.0;
    p.levels_dbfs[0] = -20.0;
    return p;
}

static int plan_ok(const ml_step_plan *p, double rate_hz)
{
    if (p == NULL || !(rate_hz > 0) || p->nfreqs < 1 || p->nfreqs > ML_STEP_PLAN_MAX_FREQS || p->nlevels < 1
        || p->nlevels > ML_STEP_PLAN_MAX_LEVELS || !in_range(p->step_s, 0.05, 3600)
        || !in_range(p->pause_s, 0, 3600))
        return 0;
    for (size_t i = 0; i < p->nfreqs; i++)
        if (!(p->freqs_hz[i] > 0 && p->freqs_hz[i] < rate_hz / 2))
            return 0;
    for (size_t i = 0; i < p->nlevels; i++)
        if (!in_range(p->levels_dbfs[i], -200, 0))
            return 0;
    return 1;
}

size_t ml_step_plan_entries(const ml_step_plan *p)
{
    if (p == NULL || p->nfreqs > ML_STEP_PLAN_MAX_FREQS || p->nlevels > ML_STEP_PLAN_MAX_LEVELS)
        return 0;
    return p->nfreqs * p->nlevels * (p->pause_s > 0 ? 2 : 1);
}

ml_status ml_step_plan_to_synth(const ml_step_plan *p, double rate_hz, ml_synth_step *steps, size_t cap,
                                size_t *n)
{
    if (!plan_ok(p, rate_hz) || steps == NULL || n == NULL || cap < ml_step_plan_entries(p))
        return ML_EINVAL;
    size_t k = 0;
    for (size_t l = 0; l < p->nlevels; l++)
        for (size_t f = 0; f < p->nfreqs; f++) {
            steps[k++] = (ml_synth_step){p->freqs_hz[f], p->levels_dbfs[l], p->step_s};
            if (p->pause_s > 0)
                steps[k++] = (ml_synth_step){0.0, p->levels_dbfs[l], p->pause_s};
        }
    *n = k;
    return ML_OK;
}

ml_status ml_step_plan_schedule(const ml_step_plan *p, double rate_hz, ml_step_expect *out, size_t cap,
                                size_t *n)
{
    if (!plan_ok(p, rate_hz) || out == NULL || n == NULL || cap < p->nfreqs * p->nlevels)
        return ML_EINVAL;
    double t = 0.0; /* seconds before the current entry, summed as dsp/synth.h does */
    size_t k = 0;
    for (size_t l = 0; l < p->nlevels; l++)
        for (size_t f = 0; f < p->nfreqs; f++) {
            const uint64_t a = (uint64_t)llround(rate_hz * t);
            t += p->step_s;
            out[k++] = (ml_step_expect){.freq_index = f, .level_index = l, .frequency_hz = p->freqs_hz[f],
                                        .level_dbfs = p->levels_dbfs[l], .start = a,
                                        .end = (uint64_t)llround(rate_hz * t)};
            t += p->pause_s;
        }
    *n = k;
    return ML_OK;
}
