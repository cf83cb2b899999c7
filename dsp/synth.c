/* Deterministic test-signal generator (tones, steps, AM IF / I/Q, hum, Gaussian noise).
 * SPDX-License-Identifier: MIT
 *
 * References: [haykin:2001], [blackman:2018], [steele:2014], [box:1958]; full entries in
 * dsp/synth.h.
 */
#include "dsp/synth.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/internal.h"

typedef struct {
    uint64_t start; /* first frame of the step within one pass                          */
    uint64_t frames;
    double freq_hz;
    double amp;     /* 10^(level/20)                                                    */
    double phase0;  /* phase in cycles at the step's first frame, first pass             */
} step_state;

struct ml_synth {
    ml_synth_config cfg;
    size_t channels;
    double amp;       /* tone / carrier amplitude                                       */
    double amp2;      /* second tone                                                    */
    double harm_amp[ML_SYNTH_MAX_HARMONICS];
    double hum_harm_amp[ML_SYNTH_MAX_HARMONICS];
    double hum_add;   /* additive hum amplitude (0: none)                               */
    double hum_mod;   /* envelope hum depth (0: none)                                   */
    double sigma;     /* noise r.m.s. per channel (0: none)                             */
    uint64_t lead_frames;
    step_state *steps;
    uint64_t cycle_frames;
    double cycle_phase; /* phase advance of one full pass of the steps, in cycles          */
    double peak;
    double env_peak;
    /* running state */
    uint64_t pos;     /* frames generated                                               */
    size_t step;      /* current step (STEPS)                                           */
    uint64_t pass;    /* completed passes of the steps                                  */
    uint64_t rng[4];  /* xoshiro256** state                                             */
    double spare;     /* second Box-Muller value                                        */
    bool has_spare;
};

/* ---- random numbers ---------------------------------------------------------------------- */

static uint64_t splitmix64(uint64_t *x) /* [steele:2014] */
{
    uint64_t z = (*x += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

static uint64_t rotl(uint64_t x, int k)
{
    return (x << k) | (x >> (64 - k));
}

static uint64_t xoshiro(uint64_t s[4]) /* xoshiro256** [blackman:2018] */
{
    const uint64_t result = rotl(s[1] * 5, 7) * 9;
    const uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

static void seed_rng(ml_synth *q)
{
    /* splitmix64 expands the 64-bit seed into a state that is never all zero, as the xoshiro
     * authors recommend [blackman:2018] sec. 4. */
    uint64_t x = q->cfg.seed;
    for (int i = 0; i < 4; i++)
        q->rng[i] = splitmix64(&x);
    q->has_spare = false;
    q->spare = 0;
}

static double gaussian(ml_synth *q) /* unit variance, Box-Muller [box:1958] */
{
    if (q->has_spare) {
        q->has_spare = false;
        return q->spare;
    }
    /* 53-bit uniforms: u1 in (0, 1] keeps log() finite, u2 in [0, 1). */
    const double u1 = (double)((xoshiro(q->rng) >> 11) + 1) * 0x1.0p-53;
    const double u2 = (double)(xoshiro(q->rng) >> 11) * 0x1.0p-53;
    const double r = sqrt(-2.0 * log(u1));
    q->spare = r * sin(2.0 * ML_PI * u2);
    q->has_spare = true;
    return r * cos(2.0 * ML_PI * u2);
}

/* ---- phases ------------------------------------------------------------------------------- */

/* Phase in cycles of a tone of f Hz after n frames, reduced to (-1, 1). Computing it from the
 * frame index rather than by accumulation keeps it exact to ~1e-10 cycles for any length below a
 * day at 100 MHz and makes the output independent of block boundaries. */
static double cycles(double f_hz, uint64_t n, double rate_hz)
{
    return fmod(f_hz * (double)n, rate_hz) / rate_hz;
}

/* sin of the fundamental plus its harmonics at phase c (cycles). */
static double tone(double c, const ml_synth_harmonic *h, const double *amp, size_t nh)
{
    double v = sin(2.0 * ML_PI * c);
    for (size_t k = 0; k < nh; k++)
        v += amp[k] * sin(2.0 * ML_PI * fmod((double)h[k].order * c, 1.0));
    return v;
}

/* ---- configuration ------------------------------------------------------------------------ */

ml_synth_config ml_synth_config_default(double rate_hz)
{
    ml_synth_config c;
    memset(&c, 0, sizeof c);
    c.kind = ML_SYNTH_SINE;
    c.rate_hz = rate_hz;
    c.freq_hz = 1000.0;
    c.level_dbfs = -20.0;
    c.level2_dbfs = -20.0;
    c.mod_freq_hz = 1000.0;
    c.depth_pos = 0.5;
    c.depth_neg = 0.5;
    c.overmod = ML_OVERMOD_PINCH;
    c.noise_dbfs = -INFINITY;
    c.cnr_db = INFINITY;
    c.hum_level_dbfs = -INFINITY;
    c.hum_depth_db = -INFINITY;
    c.seed = 1;
    return c;
}

static bool in_range(double x, double lo, double hi) /* false for NaN */
{
    return x >= lo && x <= hi;
}

static bool level_ok(double dbfs)
{
    return in_range(dbfs, -300.0, 40.0);
}

/* Orders unique and in range, levels in range, and each k * base_hz below Nyquist. */
static bool harmonics_ok(const ml_synth_harmonic *h, size_t n, double base_hz, double nyquist_hz)
{
    if (n > ML_SYNTH_MAX_HARMONICS)
        return false;
    for (size_t i = 0; i < n; i++) {
        if (h[i].order < 2 || h[i].order > ML_SYNTH_MAX_ORDER || !in_range(h[i].level_dbc, -300.0, 40.0))
            return false;
        if (!((double)h[i].order * base_hz < nyquist_hz))
            return false;
        for (size_t j = 0; j < i; j++)
            if (h[j].order == h[i].order)
                return false;
    }
    return true;
}

static int max_order(const ml_synth_harmonic *h, size_t n)
{
    int m = 1;
    for (size_t i = 0; i < n; i++)
        if (h[i].order > m)
            m = h[i].order;
    return m;
}

static bool config_ok(const ml_synth_config *c)
{
    if ((unsigned)c->kind >= ML_SYNTH_KIND_COUNT || !in_range(c->rate_hz, 1.0, 1e8))
        return false;
    const double ny = c->rate_hz / 2;
    const bool am = c->kind == ML_SYNTH_AM;
    switch (c->kind) {
    case ML_SYNTH_SINE:
        if (!(c->freq_hz > 0 && c->freq_hz < ny) || !level_ok(c->level_dbfs)
            || !harmonics_ok(c->harmonics, c->nharmonics, c->freq_hz, ny))
            return false;
        break;
    case ML_SYNTH_TWO_TONE:
        if (!(c->freq_hz > 0 && c->freq_hz < ny) || !(c->freq2_hz > 0 && c->freq2_hz < ny)
            || c->freq_hz == c->freq2_hz || !level_ok(c->level_dbfs) || !level_ok(c->level2_dbfs)
            || c->nharmonics != 0)
            return false;
        break;
    case ML_SYNTH_STEPS:
        if (c->nsteps < 1 || c->nsteps > ML_SYNTH_MAX_STEPS)
            return false;
        for (size_t i = 0; i < c->nsteps; i++) {
            const ml_synth_step *s = &c->steps[i];
            if (!(s->freq_hz >= 0 && s->freq_hz < ny) || !level_ok(s->level_dbfs)
                || !in_range(s->seconds, 0.0, 1e7) || !(s->seconds > 0)
                || !harmonics_ok(c->harmonics, c->nharmonics, s->freq_hz, ny))
                return false;
        }
        break;
    case ML_SYNTH_SILENCE:
        if (c->nharmonics != 0)
            return false;
        break;
    case ML_SYNTH_AM: {
        if (!(c->mod_freq_hz > 0 && c->mod_freq_hz < ny) || !level_ok(c->level_dbfs)
            || !in_range(c->depth_pos, 0.0, 10.0) || !in_range(c->depth_neg, 0.0, 10.0)
            || (unsigned)c->overmod >= ML_OVERMOD_COUNT || !in_range(c->lead_in_s, 0.0, 1e6)
            || !harmonics_ok(c->harmonics, c->nharmonics, c->mod_freq_hz, ny))
            return false;
        /* Every side frequency of the (linear) modulation must stay inside the band, or it
         * would fold over: fc +- B with B the highest tone harmonic or envelope-hum harmonic. */
        double b = c->mod_freq_hz * max_order(c->harmonics, c->nharmonics);
        if (c->hum_hz > 0 && isfinite(c->hum_depth_db))
            b = fmax(b, c->hum_hz * max_order(c->hum_harmonics, c->nhum_harmonics));
        if (c->iq ? !(fabs(c->carrier_hz) + b < ny) : !(c->carrier_hz - b > 0 && c->carrier_hz + b < ny))
            return false;
        break;
    }
    default:
        return false;
    }
    if (!am && (c->iq || c->lead_in_s != 0))
        return false;
    /* Impairments */
    if (!(c->noise_dbfs == -INFINITY || level_ok(c->noise_dbfs)))
        return false;
    if (!(c->cnr_db == INFINITY || (am && in_range(c->cnr_db, -100.0, 300.0))))
        return false;
    if (isfinite(c->noise_dbfs) && isfinite(c->cnr_db))
        return false;
    if (c->hum_hz == 0) {
        if (isfinite(c->hum_level_dbfs) || isfinite(c->hum_depth_db) || c->nhum_harmonics != 0)
            return false;
    } else if (!(c->hum_hz > 0 && c->hum_hz < ny)
               || !harmonics_ok(c->hum_harmonics, c->nhum_harmonics, c->hum_hz, ny)) {
        return false;
    }
    if (!(c->hum_level_dbfs == -INFINITY || level_ok(c->hum_level_dbfs)))
        return false;
    if (!(c->hum_depth_db == -INFINITY || (am && in_range(c->hum_depth_db, -300.0, 0.0))))
        return false;
    return true;
}

static double db_amp(double db) /* -INFINITY gives 0 */
{
    return pow(10.0, db / 20.0);
}

static double sum_amps(const double *a, size_t n) /* 1 + sum of harmonic amplitudes */
{
    double s = 1.0;
    for (size_t i = 0; i < n; i++)
        s += a[i];
    return s;
}

/* Builds the step table; false when a step rounds to no frame at all. */
static bool build_steps(ml_synth *q)
{
    const ml_synth_config *c = &q->cfg;
    double t_s = 0, phase = 0;
    uint64_t start = 0;
    for (size_t i = 0; i < c->nsteps; i++) {
        t_s += c->steps[i].seconds;
        /* Boundaries from the running sum, so rounding never accumulates. */
        /* 2^53 frames keeps llround and the frame arithmetic exact. */
        if (!(t_s * c->rate_hz < 0x1.0p53))
            return false;
        const uint64_t end = (uint64_t)llround(t_s * c->rate_hz);
        if (end <= start)
            return false;
        step_state *s = &q->steps[i];
        s->start = start;
        s->frames = end - start;
        s->freq_hz = c->steps[i].freq_hz;
        s->amp = db_amp(c->steps[i].level_dbfs);
        s->phase0 = phase;
        phase = fmod(phase + cycles(s->freq_hz, s->frames, c->rate_hz), 1.0);
        start = end;
    }
    q->cycle_frames = start;
    q->cycle_phase = phase;
    return true;
}

static void compute_peaks(ml_synth *q)
{
    const ml_synth_config *c = &q->cfg;
    const double hx = sum_amps(q->harm_amp, c->nharmonics);
    const double hh = sum_amps(q->hum_harm_amp, c->nhum_harmonics);
    const double add = q->hum_add * hh;
    q->env_peak = 0;
    switch (c->kind) {
    case ML_SYNTH_SINE: q->peak = q->amp * hx + add; break;
    case ML_SYNTH_TWO_TONE: q->peak = q->amp + q->amp2 + add; break;
    case ML_SYNTH_STEPS: {
        double m = 0;
        for (size_t i = 0; i < c->nsteps; i++)
            if (q->steps[i].freq_hz > 0)
                m = fmax(m, q->steps[i].amp * hx);
        q->peak = m + add;
        break;
    }
    case ML_SYNTH_AM: {
        /* e lies within [1 - dneg X - Hd, 1 + dpos X + Hd], X bounding |x| and Hd the hum. */
        const double hd = q->hum_mod * hh;
        const double hi = 1.0 + c->depth_pos * hx + hd;
        const double lo = 1.0 - c->depth_neg * hx - hd;
        q->env_peak = c->overmod == ML_OVERMOD_PINCH ? hi : fmax(hi, -lo);
        q->peak = q->amp * q->env_peak + add;
        break;
    }
    default: q->peak = add; break;
    }
}

ml_status ml_synth_create(const ml_synth_config *cfg, ml_synth **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !config_ok(cfg))
        return ML_EINVAL;
    ml_synth *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    const ml_synth_config *c = &q->cfg;
    q->channels = c->kind == ML_SYNTH_AM && c->iq ? 2 : 1;
    q->amp = db_amp(c->level_dbfs);
    q->amp2 = db_amp(c->level2_dbfs);
    for (size_t i = 0; i < c->nharmonics; i++)
        q->harm_amp[i] = db_amp(c->harmonics[i].level_dbc);
    for (size_t i = 0; i < c->nhum_harmonics; i++)
        q->hum_harm_amp[i] = db_amp(c->hum_harmonics[i].level_dbc);
    q->hum_add = c->hum_hz > 0 ? db_amp(c->hum_level_dbfs) : 0;
    q->hum_mod = c->hum_hz > 0 ? db_amp(c->hum_depth_db) : 0;
    if (isfinite(c->noise_dbfs))
        q->sigma = db_amp(c->noise_dbfs) / sqrt(2.0); /* AES17: r.m.s. of a sine of that level */
    else if (isfinite(c->cnr_db))
        q->sigma = q->amp / sqrt(2.0 * pow(10.0, c->cnr_db / 10.0)); /* see header: CNR */
    if (c->kind == ML_SYNTH_AM)
        q->lead_frames = (uint64_t)llround(c->lead_in_s * c->rate_hz);
    if (c->kind == ML_SYNTH_STEPS) {
        q->steps = calloc(c->nsteps, sizeof *q->steps);
        if (q->steps == NULL) {
            ml_synth_destroy(q);
            return ML_ENOMEM;
        }
        if (!build_steps(q)) {
            ml_synth_destroy(q);
            return ML_EINVAL;
        }
    }
    compute_peaks(q);
    ml_synth_reset(q);
    *out = q;
    return ML_OK;
}

void ml_synth_destroy(ml_synth *q)
{
    if (q == NULL)
        return;
    free(q->steps);
    free(q);
}

void ml_synth_reset(ml_synth *q)
{
    if (q == NULL)
        return;
    q->pos = 0;
    q->step = 0;
    q->pass = 0;
    seed_rng(q);
}

/* ---- generation --------------------------------------------------------------------------- */

static double hum_wave(const ml_synth *q, uint64_t n)
{
    const ml_synth_config *c = &q->cfg;
    return tone(cycles(c->hum_hz, n, c->rate_hz), c->hum_harmonics, q->hum_harm_amp, c->nhum_harmonics);
}

static double step_sample(ml_synth *q)
{
    const ml_synth_config *c = &q->cfg;
    uint64_t in_pass = q->pos - q->pass * q->cycle_frames;
    while (in_pass >= q->steps[q->step].start + q->steps[q->step].frames) {
        if (++q->step == c->nsteps) {
            q->step = 0;
            q->pass++;
            in_pass -= q->cycle_frames;
        }
    }
    const step_state *s = &q->steps[q->step];
    if (s->freq_hz == 0)
        return 0;
    /* Phase continues from the previous step; each later pass starts pass * cycle_phase on. */
    const double ph = fmod((double)q->pass * q->cycle_phase, 1.0) + s->phase0
                      + cycles(s->freq_hz, in_pass - s->start, c->rate_hz);
    return s->amp * tone(fmod(ph, 1.0), c->harmonics, q->harm_amp, c->nharmonics);
}

static void am_sample(const ml_synth *q, double hum, double *i_out, double *q_out)
{
    const ml_synth_config *c = &q->cfg;
    const uint64_t n = q->pos;
    double e = 1.0 + q->hum_mod * hum;
    if (n >= q->lead_frames) {
        const double c_mod = cycles(c->mod_freq_hz, n - q->lead_frames, c->rate_hz);
        const double x = tone(c_mod, c->harmonics, q->harm_amp, c->nharmonics);
        e += (x >= 0 ? c->depth_pos : c->depth_neg) * x;
    }
    const double g = c->overmod == ML_OVERMOD_PINCH ? fmax(0.0, e) : e;
    const double ph = 2.0 * ML_PI * cycles(c->carrier_hz, n, c->rate_hz);
    *i_out = q->amp * g * cos(ph);
    *q_out = q->amp * g * sin(ph);
}

ml_status ml_synth_generate(ml_synth *q, float *out, size_t nframes)
{
    if (q == NULL || (out == NULL && nframes > 0))
        return ML_EINVAL;
    const ml_synth_config *c = &q->cfg;
    for (size_t f = 0; f < nframes; f++, q->pos++) {
        const uint64_t n = q->pos;
        const double hum = c->hum_hz > 0 ? hum_wave(q, n) : 0.0;
        double v[2] = {0.0, 0.0};
        switch (c->kind) {
        case ML_SYNTH_SINE:
            v[0] = q->amp * tone(cycles(c->freq_hz, n, c->rate_hz), c->harmonics, q->harm_amp, c->nharmonics);
            break;
        case ML_SYNTH_TWO_TONE:
            v[0] = q->amp * sin(2.0 * ML_PI * cycles(c->freq_hz, n, c->rate_hz))
                   + q->amp2 * sin(2.0 * ML_PI * cycles(c->freq2_hz, n, c->rate_hz));
            break;
        case ML_SYNTH_STEPS: v[0] = step_sample(q); break;
        case ML_SYNTH_AM: am_sample(q, hum, &v[0], &v[1]); break;
        default: break;
        }
        for (size_t ch = 0; ch < q->channels; ch++) {
            double s = v[ch] + q->hum_add * hum;
            if (q->sigma > 0)
                s += q->sigma * gaussian(q);
            out[f * q->channels + ch] = (float)s;
        }
    }
    return ML_OK;
}

size_t ml_synth_channels(const ml_synth *q)
{
    return q ? q->channels : 0;
}

uint64_t ml_synth_position(const ml_synth *q)
{
    return q ? q->pos : 0;
}

uint64_t ml_synth_cycle_frames(const ml_synth *q)
{
    return q ? q->cycle_frames : 0;
}

uint64_t ml_synth_lead_in_frames(const ml_synth *q)
{
    return q ? q->lead_frames : 0;
}

double ml_synth_noise_sigma(const ml_synth *q)
{
    return q ? q->sigma : 0;
}

double ml_synth_peak(const ml_synth *q)
{
    return q ? q->peak : 0;
}

double ml_synth_envelope_peak(const ml_synth *q)
{
    return q ? q->env_peak : 0;
}
