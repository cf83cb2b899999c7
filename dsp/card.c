/* Qualifying a sound card: test signal, analysis, profile (see dsp/card.h).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * docs/references.md 14: the loopback qualification practice (THD+N near full scale at 1 kHz, idle
 *     noise with and without A weighting, ripple at -20 dBFS), 997 Hz as the digital alignment tone.
 * [iso266:1997] ISO 266: the preferred third-octave frequencies (nominal values), from memory.
 * [steele:2014] splitmix64, as in dsp/synth.c.
 * [lipshitz:1992] S. P. Lipshitz, R. A. Wannamaker, J. Vanderkooy, "Quantization and dither: a
 *     theoretical survey", JAES 40(5), 1992: TPDF dither of 2 LSB peak to peak, variance LSB^2/6
 *     (from memory; the variance is that of the sum of two independent uniform values).
 */
#include "dsp/card.h"

#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/benchfig.h"
#include "dsp/internal.h"
#include "dsp/resolution.h"
#include "dsp/spectrum.h"

#define LEAD_S 0.5
#define LEVEL_S 4.0
#define SILENCE_S 4.0
#define CROSS_S 2.0
#define STEP_S 0.5
#define TAIL_S 0.5
#define GUARD_S 0.1    /* left out at each end of a segment's analysis                        */
#define NOISE_S 0.05   /* opening capture that sets the onset threshold                       */
#define ONSET_MIN 1e-3 /* the threshold is at least -60 dBFS                                   */
#define LOUD_LEAD 0.1  /* an opening peak above -20 dBFS is no silence                         */
#define BLOCK_S 0.02   /* phase blocks of the frequency estimate                               */
#define SCRATCH 4096

/* [iso266:1997] third-octave nominal frequencies, Hz */
static const double STEPS_HZ[] = {20,    25,    31.5,  40,    50,    63,    80,   100,  125,
                                  160,   200,   250,   315,   400,   500,   630,  800,  1000,
                                  1250,  1600,  2000,  2500,  3150,  4000,  5000, 6300, 8000,
                                  10000, 12500, 16000, 20000, 25000, 31500, 40000};

static bool rate_ok(double rate_hz)
{
    return rate_hz >= ML_CARD_MIN_RATE_HZ && rate_hz <= ML_CARD_MAX_RATE_HZ;
}

size_t ml_card_schedule(double rate_hz, ml_card_segment *seg, size_t cap)
{
    if (!rate_ok(rate_hz) || seg == NULL || cap < ML_CARD_MAX_SEGMENTS)
        return 0;
    size_t n = 0;
    double t = 0;
    const double lv = ML_CARD_LEVEL_DBFS, f = ML_CARD_TEST_HZ;
    const ml_card_segment fixed[] = {
        {ML_CARD_SEG_LEAD, 0, LEAD_S, 0, 0, 0},       {ML_CARD_SEG_LEVEL, 0, LEVEL_S, f, lv, 3},
        {ML_CARD_SEG_SILENCE, 0, SILENCE_S, 0, 0, 0}, {ML_CARD_SEG_LEFT, 0, CROSS_S, f, lv, 1},
        {ML_CARD_SEG_RIGHT, 0, CROSS_S, f, lv, 2},
    };
    for (size_t i = 0; i < sizeof fixed / sizeof *fixed; i++) {
        seg[n] = fixed[i];
        seg[n++].start_s = t;
        t += fixed[i].seconds;
    }
    for (size_t i = 0; i < sizeof STEPS_HZ / sizeof *STEPS_HZ && n < ML_CARD_MAX_SEGMENTS - 1; i++) {
        if (!(STEPS_HZ[i] < 0.45 * rate_hz))
            break;
        seg[n++] = (ml_card_segment){ML_CARD_SEG_STEP, t, STEP_S, STEPS_HZ[i], ML_CARD_RESPONSE_DBFS, 3};
        t += STEP_S;
    }
    seg[n++] = (ml_card_segment){ML_CARD_SEG_TAIL, t, TAIL_S, 0, 0, 0};
    return n;
}

double ml_card_schedule_seconds(double rate_hz)
{
    ml_card_segment seg[ML_CARD_MAX_SEGMENTS];
    const size_t n = ml_card_schedule(rate_hz, seg, ML_CARD_MAX_SEGMENTS);
    return n ? seg[n - 1].start_s + seg[n - 1].seconds : 0;
}

/* ---- the test signal ------------------------------------------------------------------ */

struct ml_cardgen {
    ml_cardgen_config cfg;
    ml_card_segment seg[ML_CARD_MAX_SEGMENTS];
    int64_t start[ML_CARD_MAX_SEGMENTS + 1]; /* first frame of each segment; [n] the end    */
    size_t nseg, cur;
    uint64_t pos;
    uint64_t rng;
    double lsb; /* 0 without dither                            */
};

ml_cardgen_config ml_cardgen_config_default(double rate_hz)
{
    return (ml_cardgen_config){.rate_hz = rate_hz, .dither_bits = 24, .seed = 1};
}

ml_status ml_cardgen_create(const ml_cardgen_config *cfg, ml_cardgen **out)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (cfg == NULL || !rate_ok(cfg->rate_hz)
        || (cfg->dither_bits != 0 && (cfg->dither_bits < 8 || cfg->dither_bits > 32)))
        return ML_EINVAL;
    ml_cardgen *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->nseg = ml_card_schedule(cfg->rate_hz, q->seg, ML_CARD_MAX_SEGMENTS);
    for (size_t i = 0; i < q->nseg; i++)
        q->start[i] = llround(q->seg[i].start_s * cfg->rate_hz);
    q->start[q->nseg] = llround((q->seg[q->nseg - 1].start_s + q->seg[q->nseg - 1].seconds) * cfg->rate_hz);
    q->rng = cfg->seed;
    q->lsb = cfg->dither_bits ? ldexp(1.0, 1 - cfg->dither_bits) : 0.0;
    *out = q;
    return ML_OK;
}

void ml_cardgen_destroy(ml_cardgen *q)
{
    free(q);
}

uint64_t ml_cardgen_frames(const ml_cardgen *q)
{
    return q ? (uint64_t)q->start[q->nseg] : 0;
}

/* [steele:2014] splitmix64, then 53 bits as a uniform value in [0, 1) */
static double uniform(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    z ^= z >> 31;
    return (double)(z >> 11) * 0x1.0p-53;
}

ml_status ml_cardgen_generate(ml_cardgen *q, float *out, size_t nframes)
{
    if (q == NULL || (out == NULL && nframes > 0))
        return ML_EINVAL;
    const double rate = q->cfg.rate_hz;
    for (size_t i = 0; i < nframes; i++, q->pos++) {
        while (q->cur < q->nseg && (int64_t)q->pos >= q->start[q->cur + 1])
            q->cur++;
        double x = 0;
        unsigned mask = 0;
        if (q->cur < q->nseg && q->seg[q->cur].freq_hz > 0) {
            const ml_card_segment *s = &q->seg[q->cur];
            const double n = (double)((int64_t)q->pos - q->start[q->cur]);
            x = pow(10.0, s->level_dbfs / 20.0) * sin(2.0 * ML_PI * s->freq_hz * n / rate);
            mask = s->channels;
        }
        for (int c = 0; c < 2; c++) {
            /* [lipshitz:1992] TPDF: two uniform values of +-1/2 LSB */
            const double d = q->lsb > 0 ? q->lsb * (uniform(&q->rng) + uniform(&q->rng) - 1.0) : 0.0;
            out[2 * i + (size_t)c] = (float)(((mask >> c) & 1 ? x : 0.0) + d);
        }
    }
    return ML_OK;
}

/* ---- the profile ---------------------------------------------------------------------- */

double ml_card_response_at(const ml_card_profile *p, int channel, double f_hz)
{
    if (p == NULL || channel < 0 || channel >= p->channels || !(f_hz > 0) || p->npoints == 0)
        return NAN;
    const double *hz = p->response_hz, *db = p->ch[channel].response_db;
    const size_t n = p->npoints;
    if (f_hz < hz[0] || f_hz > hz[n - 1])
        return NAN;
    for (size_t i = 0; i + 1 < n; i++)
        if (f_hz >= hz[i] && f_hz <= hz[i + 1]) {
            const double u = log10(f_hz / hz[i]) / log10(hz[i + 1] / hz[i]);
            return db[i] + u * (db[i + 1] - db[i]);
        }
    return db[0]; /* one point, at f_hz */
}

/* ---- the analysis ---------------------------------------------------------------------- */

struct ml_cardan {
    ml_cardan_config cfg;
    ml_card_segment seg[ML_CARD_MAX_SEGMENTS];
    size_t nseg, cur; /* the segment being analysed next (LEVEL first)              */
    int64_t pos;      /* frames pushed                                               */
    /* onset */
    int64_t noise_n;
    double noise_peak, thr;
    bool no_lead, found;
    int64_t t0;   /* the schedule's start in recording frames                   */
    double scale; /* recording frames per schedule frame (1 until measured)      */
    bool done;
    /* the frequency estimate on channel 1 over the level segment */
    size_t blk_len, blk_i;
    double complex blk_z;
    int64_t blk_first;
    double prev_phase, unwrap;
    size_t nblk;
    double s_t, s_p, s_tt, s_tp, s_amp;
    double f_meas;
    /* spectra: level, silence, crosstalk (left, right), per channel */
    ml_spectrum *lvl[ML_CARD_MAX_CHANNELS], *sil[ML_CARD_MAX_CHANNELS], *xt[2][ML_CARD_MAX_CHANNELS];
    /* the response steps' windowed DFTs */
    double complex step_z[ML_CARD_MAX_POINTS][ML_CARD_MAX_CHANNELS];
    double step_w[ML_CARD_MAX_POINTS];
    double step_hz[ML_CARD_MAX_POINTS];
    size_t nsteps;
    float *col;
};

static ml_status make_spectrum(const ml_cardan_config *cfg, double seconds, ml_spectrum **out)
{
    ml_spectrum_config sc = ml_spectrum_config_default(cfg->rate_hz);
    const int64_t n = (int64_t)floor((seconds - 2 * GUARD_S) * cfg->rate_hz);
    sc.nfft = ml_resolution_nfft(cfg->rate_hz, n, ML_RESOLUTION_SPAN);
    sc.hop = ml_resolution_hop(sc.nfft, ML_RESOLUTION_SPAN);
    if (sc.nfft == 0)
        return ML_EINVAL;
    return ml_spectrum_create(&sc, out);
}

ml_status ml_cardan_create(const ml_cardan_config *cfg, ml_cardan **out)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (cfg == NULL || !rate_ok(cfg->rate_hz) || cfg->channels < 1 || cfg->channels > ML_CARD_MAX_CHANNELS)
        return ML_EINVAL;
    ml_cardan *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->nseg = ml_card_schedule(cfg->rate_hz, q->seg, ML_CARD_MAX_SEGMENTS);
    q->cur = ML_CARD_SEG_LEVEL;
    q->noise_n = (int64_t)llround(NOISE_S * cfg->rate_hz);
    q->scale = 1.0;
    q->blk_len = (size_t)llround(BLOCK_S * cfg->rate_hz);
    q->f_meas = NAN;
    for (size_t i = 0; i < q->nseg; i++)
        if (q->seg[i].kind == ML_CARD_SEG_STEP)
            q->step_hz[q->nsteps++] = q->seg[i].freq_hz;
    ml_status st = (q->col = malloc(SCRATCH * sizeof *q->col)) ? ML_OK : ML_ENOMEM;
    for (int c = 0; c < cfg->channels && st == ML_OK; c++) {
        st = make_spectrum(cfg, LEVEL_S, &q->lvl[c]);
        if (st == ML_OK)
            st = make_spectrum(cfg, SILENCE_S, &q->sil[c]);
        for (int k = 0; k < 2 && st == ML_OK && cfg->channels == 2; k++)
            st = make_spectrum(cfg, CROSS_S, &q->xt[k][c]);
    }
    if (st != ML_OK) {
        ml_cardan_destroy(q);
        return st;
    }
    *out = q;
    return ML_OK;
}

void ml_cardan_destroy(ml_cardan *q)
{
    if (q == NULL)
        return;
    for (int c = 0; c < ML_CARD_MAX_CHANNELS; c++) {
        ml_spectrum_destroy(q->lvl[c]);
        ml_spectrum_destroy(q->sil[c]);
        ml_spectrum_destroy(q->xt[0][c]);
        ml_spectrum_destroy(q->xt[1][c]);
    }
    free(q->col);
    free(q);
}

bool ml_cardan_done(const ml_cardan *q)
{
    return q != NULL && q->done;
}

int64_t ml_cardan_onset(const ml_cardan *q)
{
    return q != NULL && q->found ? q->t0 + llround(q->seg[ML_CARD_SEG_LEVEL].start_s * q->cfg.rate_hz) : -1;
}

/* The analysed frames [*a, *b) of segment i in recording frames. */
static void window_of(const ml_cardan *q, size_t i, int64_t *a, int64_t *b)
{
    const double rate = q->cfg.rate_hz, s = i == ML_CARD_SEG_LEVEL ? 1.0 : q->scale;
    const ml_card_segment *g = &q->seg[i];
    *a = q->t0 + llround(s * (g->start_s + GUARD_S) * rate);
    *b = q->t0 + llround(s * (g->start_s + g->seconds - GUARD_S) * rate);
}

/* Frames of the opening noise and the search for the onset; returns the frames used (the rest,
 * from the onset's frame on, go to the segments). */
static size_t seek_onset(ml_cardan *q, const float *x, size_t n)
{
    const int nch = q->cfg.channels;
    size_t i = 0;
    for (; i < n && !q->found && !q->no_lead; i++, q->pos++) {
        double m = 0;
        for (int c = 0; c < nch; c++)
            m = fmax(m, fabs((double)x[i * (size_t)nch + (size_t)c]));
        if (q->pos < q->noise_n) {
            q->noise_peak = fmax(q->noise_peak, m);
            if (q->pos == q->noise_n - 1) {
                q->no_lead = q->noise_peak > LOUD_LEAD;
                q->thr = fmax(4.0 * q->noise_peak, ONSET_MIN);
            }
            continue;
        }
        if (m > q->thr) {
            /* the -1 dBFS sine's first sample above the threshold, counted from its start */
            const double a = pow(10.0, ML_CARD_LEVEL_DBFS / 20.0),
                         w = 2.0 * ML_PI * ML_CARD_TEST_HZ / q->cfg.rate_hz;
            int64_t n1 = 0;
            while (a * fabs(sin(w * (double)n1)) <= q->thr && n1 < (int64_t)q->cfg.rate_hz)
                n1++;
            q->found = true;
            q->t0 = q->pos - n1 - llround(q->seg[ML_CARD_SEG_LEVEL].start_s * q->cfg.rate_hz);
            return i; /* this frame belongs to the level segment (before its guard) */
        }
    }
    return i;
}

/* Channel c of frames x[n] into q->col (n <= SCRATCH). */
static void column(ml_cardan *q, const float *x, size_t n, int c)
{
    const size_t nch = (size_t)q->cfg.channels;
    for (size_t i = 0; i < n; i++)
        q->col[i] = x[i * nch + (size_t)c];
}

/* The phase of 20 ms blocks of channel 1 at the nominal tone (absolute frame p of x[0]). */
static void phase_blocks(ml_cardan *q, const float *x, size_t n, int64_t p)
{
    const size_t nch = (size_t)q->cfg.channels, len = q->blk_len;
    const double w0 = 2.0 * ML_PI * ML_CARD_TEST_HZ / q->cfg.rate_hz;
    for (size_t i = 0; i < n; i++) {
        if (q->blk_i == 0)
            q->blk_first = p + (int64_t)i;
        const double win = 0.5 - 0.5 * cos(2.0 * ML_PI * ((double)q->blk_i + 0.5) / (double)len);
        /* the phase reduced to one turn keeps sin and cos accurate far into a recording */
        const double ph = fmod(w0 * (double)(p + (int64_t)i), 2.0 * ML_PI);
        q->blk_z += win * (double)x[i * nch] * CMPLX(cos(ph), -sin(ph));
        if (++q->blk_i < len)
            continue;
        const double t = ((double)q->blk_first + 0.5 * (double)len) / q->cfg.rate_hz;
        double phase = carg(q->blk_z);
        if (q->nblk > 0) {
            double d = phase - q->prev_phase;
            d -= 2.0 * ML_PI * floor(d / (2.0 * ML_PI) + 0.5);
            q->unwrap += d;
        } else {
            q->unwrap = phase;
        }
        q->prev_phase = phase;
        q->s_t += t;
        q->s_p += q->unwrap;
        q->s_tt += t * t;
        q->s_tp += t * q->unwrap;
        q->s_amp += cabs(q->blk_z) * 4.0 / (double)len; /* 2 |z| / sum w, sum w = len / 2 */
        q->nblk++;
        q->blk_i = 0;
        q->blk_z = 0;
    }
}

/* The level segment is over: the tone's frequency, and the scale of the later segments. */
static void close_level(ml_cardan *q)
{
    const double n = (double)q->nblk;
    const double den = n * q->s_tt - q->s_t * q->s_t;
    if (q->nblk >= 3 && den > 0) {
        const double slope = (n * q->s_tp - q->s_t * q->s_p) / den; /* rad/s */
        q->f_meas = ML_CARD_TEST_HZ + slope / (2.0 * ML_PI);
        if (q->f_meas > 0)
            q->scale = ML_CARD_TEST_HZ / q->f_meas;
    }
}

/* n frames x (the first at recording frame p) of segment i's analysed part; off: frames of the
 * window before x[0]. */
static void feed(ml_cardan *q, size_t i, const float *x, size_t n, int64_t p, int64_t off, int64_t len)
{
    const int nch = q->cfg.channels;
    const ml_card_segment *g = &q->seg[i];
    if (g->kind == ML_CARD_SEG_STEP) {
        const size_t k = i - (ML_CARD_SEG_RIGHT + 1);
        const double w = 2.0 * ML_PI * g->freq_hz / q->scale / q->cfg.rate_hz;
        for (size_t j = 0; j < n; j++) {
            const double u = (double)(off + (int64_t)j);
            const double win = 0.5 - 0.5 * cos(2.0 * ML_PI * (u + 0.5) / (double)len);
            const double ph = fmod(w * u, 2.0 * ML_PI);
            const double complex e = CMPLX(cos(ph), -sin(ph));
            for (int c = 0; c < nch; c++)
                q->step_z[k][c] += win * (double)x[j * (size_t)nch + (size_t)c] * e;
            q->step_w[k] += win;
        }
        return;
    }
    if (g->kind == ML_CARD_SEG_LEVEL)
        phase_blocks(q, x, n, p);
    for (int c = 0; c < nch; c++) {
        ml_spectrum *s = g->kind == ML_CARD_SEG_LEVEL     ? q->lvl[c]
                         : g->kind == ML_CARD_SEG_SILENCE ? q->sil[c]
                         : g->kind == ML_CARD_SEG_LEFT    ? q->xt[0][c]
                         : g->kind == ML_CARD_SEG_RIGHT   ? q->xt[1][c]
                                                          : NULL;
        if (s == NULL)
            continue;
        column(q, x, n, c);
        ml_spectrum_push(s, q->col, n);
    }
}

/* Frames from the onset on, routed to the segments' analysed parts. */
static void route(ml_cardan *q, const float *x, size_t n)
{
    const size_t nch = (size_t)q->cfg.channels;
    size_t i = 0;
    while (!q->done) {
        if (q->cur >= q->nseg - 1) { /* the tail is not analysed */
            q->done = true;
            break;
        }
        int64_t a, b;
        window_of(q, q->cur, &a, &b);
        const int64_t p = q->pos;
        if (p >= b) {
            if (q->seg[q->cur].kind == ML_CARD_SEG_LEVEL)
                close_level(q);
            q->cur++;
            continue;
        }
        if (i == n)
            break;
        const int64_t left = (int64_t)(n - i);
        size_t run;
        if (p < a) {
            run = (size_t)(a - p < left ? a - p : left);
        } else {
            run = (size_t)(b - p < left ? b - p : left);
            if (run > SCRATCH)
                run = SCRATCH;
            feed(q, q->cur, x + i * nch, run, p, p - a, b - a);
        }
        i += run;
        q->pos += (int64_t)run;
    }
    q->pos += (int64_t)(n - i);
}

ml_status ml_cardan_push(ml_cardan *q, const float *frames, size_t n)
{
    if (q == NULL || (frames == NULL && n > 0))
        return ML_EINVAL;
    const size_t nch = (size_t)q->cfg.channels;
    for (size_t i = 0; i < n * nch; i++)
        if (!isfinite(frames[i]))
            return ML_EINVAL;
    size_t used = 0;
    if (!q->found && !q->no_lead)
        used = seek_onset(q, frames, n);
    if (q->no_lead || !q->found) {
        q->pos += (int64_t)(n - used);
        return ML_OK;
    }
    route(q, frames + used * nch, n - used);
    return ML_OK;
}

const char *ml_cardan_why_text(ml_cardan_why why)
{
    switch (why) {
    case ML_CARDAN_OK: return "";
    case ML_CARDAN_NO_LEAD:
        return "the recording starts loud: it must begin with the test signal's silence (start recording "
               "before "
               "playing)";
    case ML_CARDAN_NOT_FOUND: return "the test signal's 997 Hz tone was not found";
    case ML_CARDAN_SHORT: return "the recording ends before the test signal does";
    case ML_CARDAN_NOT_TEST:
        return "the opening segment holds no steady 997 Hz tone: not the card test signal";
    default: return "unknown";
    }
}

/* 10 lg of a figure's power ratio with its state; NAN when not measured */
static double fig_db(const ml_figure *f, ml_fig_state *state)
{
    *state = f->state;
    return (f->state == ML_FIG_MEASURED || f->state == ML_FIG_UPPER || f->state == ML_FIG_LOWER)
                   && f->value > 0
               ? 10.0 * log10(f->value)
               : NAN;
}

static ml_audio_config audio_config(const ml_cardan *q, ml_tone_mode mode, double tone_hz)
{
    ml_audio_config ac = ml_audio_config_default();
    ac.band_lo_hz = 20.0;
    ac.band_hi_hz = fmin(20000.0, q->cfg.rate_hz / 2);
    ac.tone_hz = tone_hz;
    ac.tone_mode = mode;
    return ac;
}

/* Level, THD and THD+N of channel c over the level segment. */
static ml_status level_figures(const ml_cardan *q, int c, ml_card_channel *ch)
{
    const ml_audio_config ac = audio_config(q, ML_TONE_FORCE, q->f_meas);
    ml_audio_result ar;
    const ml_status st = ml_audio_analyze(q->lvl[c], &ac, &ar);
    if (st == ML_ENOMEM)
        return st;
    if (st != ML_OK)
        return ML_OK;
    ch->level_dbfs = ar.fundamental_power > 0 ? 10.0 * log10(ar.fundamental_power / 0.5) : NAN;
    ch->thd_db = fig_db(&ar.figures.thd, &ch->thd_state);
    ch->thdn_db = fig_db(&ar.figures.thdn, &ch->thdn_state);
    return ML_OK;
}

/* Idle noise and hum of channel c over the silence. */
static ml_status silence_figures(const ml_cardan *q, int c, ml_card_channel *ch)
{
    const ml_audio_config ac = audio_config(q, ML_TONE_NONE, 0);
    ml_audio_result ar;
    ml_status st = ml_audio_analyze(q->sil[c], &ac, &ar);
    if (st == ML_ENOMEM)
        return st;
    if (st != ML_OK) /* digital silence: no noise to state */
        return ML_OK;
    ml_noise_figures nf;
    st = ml_bench_noise(q->sil[c], &ar, NULL, &nf);
    if (st == ML_ENOMEM)
        return st;
    ch->noise_dbfs = nf.noise_dbfs;
    ch->noise_a_dbfs = nf.noise_a_dbfs;
    ch->noise_468_dbfs = nf.noise_468_dbfs;
    const ml_figure *h = &ar.figures.hum;
    ch->hum_dbfs = (h->state == ML_FIG_MEASURED || h->state == ML_FIG_LOWER) && h->value > 0
                       ? 10.0 * log10(h->value / 0.5)
                       : NAN;
    return ML_OK;
}

/* Crosstalk from channel d into channel c over crosstalk segment k (0: left, 1: right). */
static ml_status crosstalk(const ml_cardan *q, int k, int d, int c, ml_card_channel *ch)
{
    const ml_audio_config ac = audio_config(q, ML_TONE_FORCE, q->f_meas);
    ml_audio_result rd, rc;
    ml_status st = ml_audio_analyze(q->xt[k][d], &ac, &rd);
    if (st == ML_OK)
        st = ml_audio_analyze(q->xt[k][c], &ac, &rc);
    if (st == ML_ENOMEM)
        return st;
    if (st == ML_OK && rc.fundamental_power > 0 && rd.fundamental_power > 0) {
        ch->crosstalk_db = 10.0 * log10(rc.fundamental_power / rd.fundamental_power);
        ch->crosstalk_state = rc.tone_clear ? ML_FIG_MEASURED : ML_FIG_UPPER;
    }
    return ML_OK;
}

static void profile_init(const ml_cardan *q, ml_card_profile *p)
{
    memset(p, 0, sizeof *p);
    p->rate_hz = q->cfg.rate_hz;
    p->channels = q->cfg.channels;
    p->test_hz = ML_CARD_TEST_HZ;
    p->test_level_dbfs = ML_CARD_LEVEL_DBFS;
    p->response_level_dbfs = ML_CARD_RESPONSE_DBFS;
    p->band_lo_hz = 20.0;
    p->band_hi_hz = fmin(20000.0, q->cfg.rate_hz / 2);
    p->rate_error_ppm = p->gain_difference_db = NAN;
    p->npoints = q->nsteps;
    for (size_t k = 0; k < q->nsteps; k++)
        p->response_hz[k] = q->step_hz[k];
    for (int c = 0; c < ML_CARD_MAX_CHANNELS; c++) {
        ml_card_channel *ch = &p->ch[c];
        ch->level_dbfs = ch->thd_db = ch->thdn_db = ch->noise_dbfs = ch->noise_a_dbfs = NAN;
        ch->noise_468_dbfs = ch->hum_dbfs = ch->crosstalk_db = NAN;
        ch->thd_state = ch->thdn_state = ch->crosstalk_state = ML_FIG_NONE;
        for (size_t k = 0; k < ML_CARD_MAX_POINTS; k++)
            ch->response_db[k] = NAN;
    }
}

/* The response of each channel re its 1 kHz step. */
static void response(const ml_cardan *q, ml_card_profile *p)
{
    size_t ref = q->nsteps;
    for (size_t k = 0; k < q->nsteps; k++)
        if (q->step_hz[k] == 1000.0)
            ref = k;
    if (ref == q->nsteps)
        return;
    for (int c = 0; c < q->cfg.channels; c++) {
        const double a_ref = cabs(q->step_z[ref][c]);
        for (size_t k = 0; k < q->nsteps; k++) {
            const double a = cabs(q->step_z[k][c]);
            p->ch[c].response_db[k] = a > 0 && a_ref > 0 ? 20.0 * log10(a / a_ref) : NAN;
        }
    }
}

ml_status ml_cardan_finish(ml_cardan *q, ml_card_profile *out, ml_cardan_why *why)
{
    if (q == NULL || out == NULL || why == NULL)
        return ML_EINVAL;
    profile_init(q, out);
    const double level = q->nblk > 0 ? 20.0 * log10(q->s_amp / (double)q->nblk) : -INFINITY;
    *why = q->no_lead  ? ML_CARDAN_NO_LEAD
           : !q->found ? ML_CARDAN_NOT_FOUND
           : !q->done  ? ML_CARDAN_SHORT
           : !(q->f_meas > 0 && fabs(q->f_meas / ML_CARD_TEST_HZ - 1) < 0.01 && level > -60 && level < 3)
               ? ML_CARDAN_NOT_TEST
               : ML_CARDAN_OK;
    if (*why != ML_CARDAN_OK)
        return ML_ENOSIGNAL;
    out->rate_error_ppm = 1e6 * (ML_CARD_TEST_HZ / q->f_meas - 1.0);
    ml_status st = ML_OK;
    for (int c = 0; c < q->cfg.channels && st == ML_OK; c++) {
        st = level_figures(q, c, &out->ch[c]);
        if (st == ML_OK)
            st = silence_figures(q, c, &out->ch[c]);
    }
    if (st == ML_OK && q->cfg.channels == 2) {
        st = crosstalk(q, 0, 0, 1, &out->ch[1]);
        if (st == ML_OK)
            st = crosstalk(q, 1, 1, 0, &out->ch[0]);
        out->gain_difference_db = out->ch[1].level_dbfs - out->ch[0].level_dbfs;
    }
    response(q, out);
    return st;
}

/* ---- what the profile says about a measurement ------------------------------------------ */

static double db_sum(double a_db, double b_db)
{
    if (!isfinite(a_db))
        return b_db;
    if (!isfinite(b_db))
        return a_db;
    return 10.0 * log10(pow(10.0, a_db / 10.0) + pow(10.0, b_db / 10.0));
}

/* the measurement lies less than the margin above the card's own (false with a NAN) */
static bool near_floor(double dut, double card)
{
    return isfinite(dut) && isfinite(card) && dut - card < ML_CARD_MARGIN_DB;
}

void ml_card_reach_of(const ml_card_profile *p, int channel, const ml_card_dut *d, ml_card_reach *out)
{
    const double n = NAN;
    *out = (ml_card_reach){.card_thd_db = n,
                           .card_thdn_db = n,
                           .card_snr_db = n,
                           .card_snr_a_db = n,
                           .card_noise_dbfs = n,
                           .card_noise_a_dbfs = n,
                           .card_noise_468_dbfs = n,
                           .card_hum_dbfs = n};
    if (p == NULL || d == NULL || p->channels < 1)
        return;
    const ml_card_channel *c = &p->ch[channel >= 0 && channel < p->channels ? channel : 0];
    const double t = isfinite(c->thd_db) ? c->thd_db : c->thdn_db, l = d->fundamental_dbfs;
    out->card_thd_db = t;
    out->card_thdn_db = db_sum(t, isfinite(l) ? c->noise_dbfs - l : NAN);
    out->card_snr_db = l - c->noise_dbfs;
    out->card_snr_a_db = l - c->noise_a_dbfs;
    out->card_noise_dbfs = c->noise_dbfs;
    out->card_noise_a_dbfs = c->noise_a_dbfs;
    out->card_noise_468_dbfs = c->noise_468_dbfs;
    out->card_hum_dbfs = c->hum_dbfs;
    out->thd = near_floor(d->thd_db, out->card_thd_db);
    out->thdn = near_floor(d->thdn_db, out->card_thdn_db);
    /* an SNR within the margin of the card's: the card's minus the dut's is less than M */
    out->snr = near_floor(-d->snr_db, -out->card_snr_db);
    out->snr_a = near_floor(-d->snr_a_db, -out->card_snr_a_db);
    out->noise = near_floor(d->noise_dbfs, c->noise_dbfs);
    out->noise_a = near_floor(d->noise_a_dbfs, c->noise_a_dbfs);
    out->noise_468 = near_floor(d->noise_468_dbfs, c->noise_468_dbfs);
    out->hum = near_floor(d->hum_dbfs, c->hum_dbfs);
}
