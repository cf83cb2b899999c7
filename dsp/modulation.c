/* The modulation analysis of an IF or I/Q capture (see dsp/modulation.h).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [cfr73.14] 47 CFR 73.14, percentage modulation: positive 100 (MAX - C)/C, negative
 *     100 (C - MIN)/C, C = carrier amplitude without modulation (docs/references.md 7).
 * [sm328] Recommendation ITU-R SM.328 (occupied bandwidth, 99 % of the mean power;
 *     docs/references.md 7).
 */
#include "dsp/modulation.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/am.h"
#include "dsp/blocks.h"

#define QUIET_MIN_S 0.1       /* unmodulated time needed before C is taken from it              */
#define MAX_BANDWIDTH_HZ 10000.0
#define BATCH_FRAMES 32768
#define PINCH_REL 0.02        /* pinch-off floor at least, fraction of C (dsp/am.h's default)    */
#define INDEX_U_MIN 0.002     /* least uncertainty of the envelope index (peaks_noise_biased)     */

struct ml_modulation_batch {
    float *frames;         /* room for the frames read (owned)                                */
    const float *data;     /* the frames demodulated into this batch                         */
    size_t nframes;
    ml_am_output out;      /* envelope and classes of the samples that came out               */
    size_t n;
    bool last;             /* the span's last batch: feeding it concludes the span            */
};

struct ml_modulation {
    ml_modulation_config cfg;
    double bw, transition;
    ml_am *am;
    ml_spectrum *rf, *aud; /* the captured signal; the demodulated audio (units of C)        */
    ml_blocks *blocks;     /* uncertainty blocks on aud, or NULL                               */
    size_t decim;          /* the audio spectrum takes every decim-th envelope sample         */
    ml_audio_plan plan;    /* aud's transform (at rate / decim) and what it resolves           */
    double hold_s;
    /* feed half */
    double inv_c;          /* 1 / provisional C                                               */
    uint64_t env_seen;     /* envelope samples fed (the decimation's phase)                    */
    double *denv;          /* the kept samples and their tags, of one batch                   */
    unsigned char *dtag;
    /* The captured samples wait here, as read, until the demodulator has classified them (its
     * envelope comes out a filter delay and up to a block later): a ring of (I, Q) pairs or IF
     * values. The first `skip` input samples (the channel filter's edge) produce no envelope
     * and never enter. */
    float *fifo;
    size_t fifo_cap, fifo_head, fifo_len; /* in samples */
    uint64_t skip;
    ml_modulation_envelope_fn on_env;
    void *on_env_ctx;
    /* both halves on the caller's thread */
    ml_modulation_batch *own;
    bool finished;
    /* C fixed or latched for later spans (NAN: none) */
    double c_keep, c_keep_quiet_s;
    ml_c_source c_keep_source;
    /* the last finished span */
    bool have_result;
    ml_status result_status;
    ml_modulation_result res;
    double prov_rel;       /* provisional C / C                                               */
};

ml_modulation_config ml_modulation_config_default(double rate_hz, const ml_channels *channels,
                                                  double carrier_hz, double carrier_amplitude,
                                                  int64_t span_frames)
{
    ml_modulation_config c = {
        .rate_hz = rate_hz,
        .carrier_hz = carrier_hz,
        .carrier_amplitude = carrier_amplitude,
        .bandwidth_hz = 0.0,
        .max_bandwidth_hz = MAX_BANDWIDTH_HZ,
        .peak_hold_s = 0.005,
        .positive_limit_pct = 125.0,
        .window = ML_WINDOW_HFT248D,
        .audio = ml_audio_config_default(),
        .span_frames = span_frames,
        .resolution = ML_RESOLUTION_SPAN,
        .quiet_min_s = QUIET_MIN_S,
        .latch = false,
        .single_precision = false,
        .uncertainty = false,
        .max_batch_frames = BATCH_FRAMES,
    };
    if (channels)
        c.channels = *channels;
    return c;
}

ml_status ml_modulation_channel(double rate_hz, bool complex_input, double carrier_hz, double requested_hz,
                                double max_hz, double *bandwidth_hz, double *transition_hz)
{
    double t = 0;
    const double widest = ml_am_default_bandwidth(rate_hz, complex_input, carrier_hz, max_hz, &t);
    *bandwidth_hz = widest;
    *transition_hz = t;
    if (widest <= 0)
        return ML_EINVAL;
    if (requested_hz > 0) { /* the widest as printed (0.1 Hz) is accepted: the carrier is measured */
        if (requested_hz > widest + 0.05)
            return ML_EINVAL;
        *bandwidth_hz = fmin(requested_hz, widest);
        *transition_hz = ml_am_transition(rate_hz, complex_input, carrier_hz, requested_hz);
    }
    return ML_OK;
}

/* ---- create, reset, destroy ------------------------------------------------------------------ */

static bool config_ok(const ml_modulation_config *c)
{
    const ml_channels *ch = &c->channels;
    return c->rate_hz > 0 && isfinite(c->rate_hz) && ch->stride > 0 && ch->re < ch->stride
           && (!ch->complex_input || ch->im < ch->stride) && (!ch->has_ref || ch->ref < ch->stride)
           && fabs(c->carrier_hz) < c->rate_hz / 2 && (ch->complex_input || c->carrier_hz > 0)
           && c->carrier_amplitude > 0 && isfinite(c->carrier_amplitude) && c->bandwidth_hz >= 0
           && c->max_bandwidth_hz > 0 && c->peak_hold_s > 0 && c->peak_hold_s < 0.5
           && c->positive_limit_pct > 0 && c->span_frames > 0 && c->quiet_min_s >= 0
           && c->max_batch_frames > 0 && c->max_batch_frames <= ((size_t)1 << 26);
}

/* The demodulated audio's spectrum: at half the rate when the channel allows. The demodulated
 * audio lies below B + transition (the channel filter's stop band starts there): when that is
 * below a quarter of the rate, every second envelope sample carries it whole (Nyquist), and the
 * audio spectrum takes those at the same bin width -- half the transforms. Only an overmodulated
 * envelope, whose corners reach beyond, aliases a little more than at the full rate; the
 * envelope statistics keep every sample. */
static ml_status audio_spectrum(ml_modulation *q, int64_t env_frames)
{
    const ml_modulation_config *c = &q->cfg;
    const double rate = c->rate_hz;
    const bool narrow = q->bw + q->transition <= rate / 4;
    q->decim = 1;
    ml_spectrum_config sc;
    if (c->resolution == ML_RESOLUTION_SPAN) {
        /* a whole recording: the audio measurement's own transform (ml_audio_plan_transform), so
         * that a short capture resolves the mains lines as it does for audio, the envelope's DC
         * (C itself) removed from each segment */
        if (env_frames < 256)
            return ML_ENOSIGNAL;
        ml_audio_plan full, half;
        ml_status st = ml_audio_plan_transform(rate, env_frames, c->window, c->audio.mains_hz, &full);
        if (st != ML_OK)
            return st;
        q->plan = full;
        if (narrow && full.spectrum.nfft >= 512
            && ml_audio_plan_transform(rate / 2, env_frames / 2, c->window, c->audio.mains_hz, &half) == ML_OK
            && half.spectrum.nfft == full.spectrum.nfft / 2 && half.spectrum.window == full.spectrum.window
            && half.hum_resolved == full.hum_resolved
            && half.hum_fundamental_resolved == full.hum_fundamental_resolved) {
            q->decim = 2;
            q->plan = half;
        }
        sc = q->plan.spectrum;
    } else {
        if (narrow && ml_resolution_nfft(rate, env_frames, c->resolution) >= 512
            && ml_resolution_nfft(rate / 2, env_frames / 2, c->resolution)
                   == ml_resolution_nfft(rate, env_frames, c->resolution) / 2)
            q->decim = 2;
        sc = ml_spectrum_config_default(rate / (double)q->decim);
        sc.window = c->window;
        sc.nfft = ml_resolution_nfft(rate / (double)q->decim, env_frames / (int64_t)q->decim, c->resolution);
        sc.hop = ml_resolution_hop(sc.nfft, c->resolution);
        if (env_frames <= 0 || sc.nfft == 0)
            return ML_ENOSIGNAL;
        q->plan = (ml_audio_plan){.spectrum = sc, .hum_resolved = true, .hum_fundamental_resolved = true};
    }
    ml_status st = ml_spectrum_create(&sc, &q->aud);
    if (st != ML_OK || !c->uncertainty)
        return st;
    ml_audio_config bcfg = c->audio; /* the demodulated audio's band, as in conclude() */
    bcfg.band_hi_hz = fmin(bcfg.band_hi_hz, q->bw);
    if ((st = ml_blocks_create(q->aud, &sc, &bcfg, true, &q->blocks)) != ML_OK)
        return st;
    return ml_blocks_set_peaks(q->blocks, q->hold_s, q->decim);
}

static ml_status make_parts(ml_modulation *q)
{
    const ml_modulation_config *c = &q->cfg;
    const bool iq = c->channels.complex_input;
    ml_am_config ac = ml_am_config_default(c->rate_hz, iq, c->carrier_hz, q->bw, c->carrier_amplitude);
    ac.transition_hz = q->transition;
    ac.hold_s = c->peak_hold_s;
    ac.positive_limit_pct = c->positive_limit_pct;
    ac.has_reference = c->channels.has_ref;
    ac.single_precision = c->single_precision;
    q->hold_s = ac.hold_s;
    ml_spectrum_config rc = ml_spectrum_config_default(c->rate_hz);
    rc.window = c->window;
    rc.nfft = ml_resolution_nfft(c->rate_hz, c->span_frames, c->resolution);
    rc.hop = ml_resolution_hop(rc.nfft, c->resolution);
    rc.complex_input = iq;
    rc.single_precision = iq && c->single_precision; /* the largest transform */
    if (rc.nfft == 0)
        return ML_ENOSIGNAL;
    ml_status st;
    if ((st = ml_spectrum_create(&rc, &q->rf)) != ML_OK || (st = ml_am_create(&ac, &q->am)) != ML_OK)
        return st;
    if ((st = audio_spectrum(q, c->span_frames - 2 * (int64_t)ml_am_edge(q->am))) != ML_OK)
        return st;
    /* waiting at most: a batch, the filter's delay and an unfinished block (dsp/am.h) */
    q->fifo_cap = ml_am_output_cap(q->am, c->max_batch_frames) + ml_am_latency(q->am);
    q->fifo = malloc(q->fifo_cap * (iq ? 2 : 1) * sizeof *q->fifo);
    const size_t dcap = ml_am_output_cap(q->am, c->max_batch_frames) / q->decim + 1;
    q->denv = malloc(dcap * sizeof *q->denv);
    q->dtag = malloc(dcap);
    if (q->fifo == NULL || q->denv == NULL || q->dtag == NULL)
        return ML_ENOMEM;
    return ml_modulation_batch_create(q, &q->own);
}

ml_status ml_modulation_create(const ml_modulation_config *cfg, ml_modulation **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !config_ok(cfg))
        return ML_EINVAL;
    ml_modulation *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    ml_status st = ml_modulation_channel(cfg->rate_hz, cfg->channels.complex_input, cfg->carrier_hz,
                                         cfg->bandwidth_hz, cfg->max_bandwidth_hz, &q->bw, &q->transition);
    if (st == ML_OK)
        st = make_parts(q);
    if (st != ML_OK) {
        ml_modulation_destroy(q);
        return st;
    }
    q->inv_c = 1.0 / cfg->carrier_amplitude;
    q->c_keep = q->c_keep_quiet_s = NAN;
    ml_modulation_reset(q);
    *out = q;
    return ML_OK;
}

void ml_modulation_destroy(ml_modulation *q)
{
    if (q == NULL)
        return;
    ml_blocks_destroy(q->blocks);
    ml_am_destroy(q->am);
    ml_spectrum_destroy(q->rf);
    ml_spectrum_destroy(q->aud);
    ml_modulation_batch_destroy(q->own);
    free(q->fifo);
    free(q->denv);
    free(q->dtag);
    free(q);
}

void ml_modulation_reset(ml_modulation *q)
{
    if (q == NULL)
        return;
    ml_am_reset(q->am);
    ml_spectrum_reset(q->rf);
    ml_spectrum_reset(q->aud);
    ml_blocks_reset(q->blocks);
    q->env_seen = 0;
    q->fifo_head = q->fifo_len = 0;
    q->skip = ml_am_edge(q->am);
    q->finished = false;
}

ml_status ml_modulation_set_reference(ml_modulation *q, double c)
{
    if (q == NULL || !(isnan(c) || (c > 0 && isfinite(c))))
        return ML_EINVAL;
    q->c_keep = c;
    q->c_keep_quiet_s = 0;
    q->c_keep_source = ML_C_REFERENCE;
    return ML_OK;
}

size_t ml_modulation_edge(const ml_modulation *q)
{
    return q ? ml_am_edge(q->am) : 0;
}

void ml_modulation_on_envelope(ml_modulation *q, ml_modulation_envelope_fn fn, void *ctx)
{
    q->on_env = fn;
    q->on_env_ctx = ctx;
}

/* ---- batches and the two halves --------------------------------------------------------------- */

ml_status ml_modulation_batch_create(const ml_modulation *q, ml_modulation_batch **out)
{
    *out = NULL;
    if (q == NULL)
        return ML_EINVAL;
    ml_modulation_batch *b = calloc(1, sizeof *b);
    if (b == NULL)
        return ML_ENOMEM;
    const size_t n = q->cfg.max_batch_frames;
    b->frames = malloc(n * q->cfg.channels.stride * sizeof *b->frames);
    b->out.cap = ml_am_output_cap(q->am, n);
    b->out.env = malloc(b->out.cap * sizeof *b->out.env);
    b->out.in = NULL; /* the spectrum takes the samples as read (the fifo) */
    b->out.modulated = malloc(b->out.cap);
    if (b->frames == NULL || b->out.env == NULL || b->out.modulated == NULL) {
        ml_modulation_batch_destroy(b);
        return ML_ENOMEM;
    }
    *out = b;
    return ML_OK;
}

void ml_modulation_batch_destroy(ml_modulation_batch *b)
{
    if (b == NULL)
        return;
    free(b->frames);
    free(b->out.env);
    free(b->out.modulated);
    free(b);
}

float *ml_modulation_batch_frames(ml_modulation_batch *b)
{
    return b ? b->frames : NULL;
}

static ml_status demodulate(ml_modulation *q, ml_modulation_batch *b, const float *frames, size_t n)
{
    if (q->finished || n > q->cfg.max_batch_frames)
        return ML_EINVAL;
    b->data = frames;
    b->nframes = n;
    b->last = false;
    /* the demodulator reads its columns straight from the frames */
    return ml_am_push_frames(q->am, frames, &q->cfg.channels, n, &b->out, &b->n);
}

ml_status ml_modulation_demodulate(ml_modulation *q, ml_modulation_batch *b, size_t n)
{
    if (q == NULL || b == NULL)
        return ML_EINVAL;
    return demodulate(q, b, b->frames, n);
}

ml_status ml_modulation_demodulate_end(ml_modulation *q, ml_modulation_batch *b)
{
    if (q == NULL || b == NULL || q->finished)
        return ML_EINVAL;
    b->data = NULL;
    b->nframes = 0;
    b->last = true;
    q->finished = true;
    return ml_am_finish(q->am, &b->out, &b->n);
}

/* Appends the measured column(s) of n frames to the ring. */
static void fifo_append(ml_modulation *q, const float *raw, size_t n)
{
    size_t i = 0;
    if (q->skip > 0) {
        i = n < q->skip ? n : (size_t)q->skip;
        q->skip -= i;
    }
    const bool iq = q->cfg.channels.complex_input;
    const size_t nch = q->cfg.channels.stride, c0 = q->cfg.channels.re, c1 = q->cfg.channels.im;
    while (i < n) {
        /* up to the ring's end at a time, in plain loops */
        const size_t at = (q->fifo_head + q->fifo_len) % q->fifo_cap;
        const size_t m = n - i < q->fifo_cap - at ? n - i : q->fifo_cap - at;
        const float *restrict fr = raw + i * nch;
        float *restrict dst = q->fifo + (iq ? 2 : 1) * at;
        if (iq && nch == 2 && c0 == 0 && c1 == 1) { /* the frames are the pairs */
            memcpy(dst, fr, 2 * m * sizeof *dst);
        } else if (iq) {
            for (size_t j = 0; j < m; j++) {
                dst[2 * j] = fr[j * nch + c0];
                dst[2 * j + 1] = fr[j * nch + c1];
            }
        } else {
            for (size_t j = 0; j < m; j++)
                dst[j] = fr[j * nch + c0];
        }
        q->fifo_len += m;
        i += m;
    }
}

/* The input samples the n envelope samples belong to (from the ring) to the captured signal's
 * spectrum, tagged with their block's class. */
static void feed_captured(ml_modulation *q, const unsigned char *tag, size_t n)
{
    const bool iq = q->cfg.channels.complex_input;
    const size_t w = iq ? 2 : 1;
    for (size_t done = 0; done < n;) {
        size_t m = n - done, run = q->fifo_cap - q->fifo_head;
        if (m > run)
            m = run;
        const float *x = q->fifo + w * q->fifo_head;
        if (iq)
            ml_spectrum_push_complex_float_tagged(q->rf, x, tag + done, m);
        else
            ml_spectrum_push_float_tagged(q->rf, x, tag + done, m);
        q->fifo_head = (q->fifo_head + m) % q->fifo_cap;
        q->fifo_len -= m;
        done += m;
    }
}

/* The envelope in units of the provisional carrier to the audio spectrum (every decim-th sample)
 * and to the blocks (every sample: the peak readings), tagged with their block's class. */
static void feed_envelope(ml_modulation *q, double *env, const unsigned char *tag, size_t n)
{
    for (size_t i = 0; i < n; i++)
        env[i] *= q->inv_c;
    const double *e = env;
    const unsigned char *t = tag;
    size_t m = n;
    if (q->decim > 1) {
        const size_t first = (size_t)((q->decim - q->env_seen % q->decim) % q->decim);
        m = 0;
        for (size_t i = first; i < n; i += q->decim, m++) {
            q->denv[m] = env[i];
            q->dtag[m] = tag[i];
        }
        e = q->denv;
        t = q->dtag;
    }
    q->env_seen += n;
    ml_spectrum_push_tagged(q->aud, e, t, m);
    if (q->blocks)
        ml_blocks_push(q->blocks, env, tag, n);
    if (q->on_env)
        q->on_env(q->on_env_ctx, env, n);
}

static ml_status conclude(ml_modulation *q);

ml_status ml_modulation_feed(ml_modulation *q, ml_modulation_batch *b)
{
    if (q == NULL || b == NULL)
        return ML_EINVAL;
    if (b->data != NULL)
        fifo_append(q, b->data, b->nframes);
    feed_captured(q, b->out.modulated, b->n);
    feed_envelope(q, b->out.env, b->out.modulated, b->n);
    return b->last ? conclude(q) : ML_OK;
}

ml_status ml_modulation_push(ml_modulation *q, const float *frames, size_t n)
{
    if (q == NULL || (n > 0 && frames == NULL))
        return ML_EINVAL;
    ml_status st = demodulate(q, q->own, frames, n);
    return st == ML_OK ? ml_modulation_feed(q, q->own) : st;
}

ml_status ml_modulation_finish(ml_modulation *q)
{
    ml_status st = ml_modulation_demodulate_end(q, q ? q->own : NULL);
    return st == ML_OK ? ml_modulation_feed(q, q->own) : st;
}

/* ---- the figures ------------------------------------------------------------------------------ */

/* C and where it comes from (dsp/modulation.h); latches a C of this span's own. */
static void choose_c(ml_modulation *q, const ml_am_result *ar, ml_modulation_result *r)
{
    const double quiet_s = (double)ar->quiet_samples / q->cfg.rate_hz;
    const bool quiet =
        (double)ar->quiet_samples >= q->cfg.quiet_min_s * q->cfg.rate_hz && ar->quiet_samples > 0;
    if (isfinite(q->c_keep) && q->c_keep_source == ML_C_REFERENCE) {
        r->c = q->c_keep;
        r->c_source = ML_C_REFERENCE;
    } else if (quiet) {
        r->c = ar->mean_quiet;
        r->c_source = ML_C_QUIET;
        r->c_quiet_s = quiet_s;
        if (q->cfg.latch && r->c > 0) {
            q->c_keep = r->c;
            q->c_keep_quiet_s = quiet_s;
            q->c_keep_source = ML_C_LATCHED;
        }
    } else if (isfinite(q->c_keep)) {
        r->c = q->c_keep;
        r->c_source = ML_C_LATCHED;
        r->c_quiet_s = q->c_keep_quiet_s;
    } else {
        /* under phase reversal the mean of E folds the reversed stretches up: the carrier line */
        r->c = ar->reversal_events > 0 ? ar->coherent_all : ar->mean_all;
        r->c_source = ML_C_MEAN;
    }
}

/* The demodulated audio: the envelope's AC part in units of C (full scale = 100 % modulation). */
static void audio_figures(ml_modulation *q, ml_modulation_result *r)
{
    ml_audio_config acfg = q->cfg.audio;
    if (acfg.band_hi_hz > q->bw)
        acfg.band_hi_hz = q->bw;
    bool ok = false;
    if (acfg.band_lo_hz < acfg.band_hi_hz
        && !(acfg.tone_hz > 0 && (acfg.tone_hz < acfg.band_lo_hz || acfg.tone_hz > acfg.band_hi_hz)))
        ok = ml_audio_analyze(q->aud, &acfg, &r->audio_result) == ML_OK;
    /* the demodulated audio is in units of C: its total power is about 1 */
    r->audio_no_signal = ok ? ml_figures_no_signal(&r->audio_result, 1.0) : NULL;
    if (r->audio_no_signal != NULL)
        ok = false;
    if (!ok)
        memset(&r->audio_result, 0, sizeof r->audio_result);
    r->audio_valid = ok;
    ml_figures_audio(&r->audio_result, ok, &r->audio);
}

/* The carrier line, the CNR and the spectral figures of the captured signal. */
static void carrier_figures(ml_modulation *q, ml_modulation_result *r)
{
    const double rate = q->cfg.rate_hz, fc = q->cfg.carrier_hz;
    const double lh = (double)ml_spectrum_lobe_bins(q->rf) * rate / (double)ml_spectrum_nfft(q->rf);
    double f_car = fc, a_car = 0;
    if (ml_rf_find_peak(q->rf, fc - lh, fc + lh, &f_car, &a_car) != ML_OK)
        a_car = 0;
    r->carrier_hz = f_car;
    r->carrier_amplitude = a_car;
    r->carrier_level_dbfs = a_car > 0 ? 20 * log10(a_car) : NAN;
    const double p_car = a_car * a_car * ml_spectrum_full_scale_power(q->rf);
    /* noise in the channel: mean density between the lines of carrier, tone sidebands and hum */
    const ml_audio_result *au = &r->audio_result;
    const bool tone = r->audio_valid && au->tone_present; /* no tone: no sidebands to measure */
    const double fm = tone ? au->fundamental_hz : 0;
    r->cnr_db = a_car > 0 ? ml_rf_cnr_db(q->rf, f_car, p_car, q->bw, fm, q->cfg.audio.harmonics,
                                         r->audio_valid ? au->mains_hz : 0, q->cfg.audio.hum_harmonics)
                          : NAN;
    r->cnr_bandwidth_hz = 2 * q->bw;
    r->index_spectral = r->sideband_asymmetry_db = NAN;
    if (tone && a_car > 0) {
        const double up = ml_rf_amplitude(q->rf, f_car + fm), lo = ml_rf_amplitude(q->rf, f_car - fm);
        r->index_spectral = (up + lo) / a_car;
        if (up > 0 && lo > 0)
            r->sideband_asymmetry_db = 20 * log10(up / lo);
    }
    double lo, hi;
    r->occupied_bandwidth_hz = ml_rf_occupied_bandwidth(q->rf, 0.99, &lo, &hi) == ML_OK ? hi - lo : NAN;
}

/* The z of the standard normal distribution exceeded with probability p (0 < p < 0.5), by
 * bisection on erfc: 2.576 for 0.005. */
static double normal_upper_quantile(double p)
{
    double lo = 0.0, hi = 40.0;
    for (int i = 0; i < 60; i++) {
        const double mid = 0.5 * (lo + hi);
        if (0.5 * erfc(mid / sqrt(2.0)) > p)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

/* The peaks and the index against the noise (dsp/modulation.h: held_noise_pct, top_noise_pct,
 * peaks_noise_biased). */
static void noise_figures(ml_modulation *q, const ml_am_result *ar, ml_modulation_result *r)
{
    const double c = r->c;
    r->noise_pct = isfinite(ar->noise_rms) ? 100 * ar->noise_rms / c : NAN;
    r->floor_pct = 100 * ar->floor_rel * q->cfg.carrier_amplitude / c;
    r->reversal_pct = 100 * ar->reversal_rel * q->cfg.carrier_amplitude / c;
    r->floor_from_noise = ar->floor_from_noise;
    const double n_indep = (double)ar->samples * fmin(1.0, 2.0 * q->bw / q->cfg.rate_hz);
    r->held_noise_pct = r->noise_pct * normal_upper_quantile(q->hold_s);
    r->top_noise_pct = n_indep > 1 ? r->noise_pct * sqrt(2.0 * log(n_indep)) : NAN;
    double u_max = NAN, u_min = NAN, u_index = NAN;
    if (q->blocks)
        ml_blocks_get_peaks(q->blocks, &u_max, &u_min, &u_index);
    const double u = isfinite(u_index) ? fmax(u_index, INDEX_U_MIN) : INDEX_U_MIN;
    const double d = r->index - r->index_spectral;
    r->peaks_noise_biased = isfinite(d) && d > u && isfinite(r->held_noise_pct) && d <= 1.5 * r->held_noise_pct / 100;
}

/* The envelope figures [cfr73.14]: peaks, index, carrier shift, the overmodulation. */
static void envelope_figures(ml_modulation *q, const ml_am_result *ar, ml_modulation_result *r)
{
    const double c = r->c, emax = ar->emax, emin = ar->emin;
    r->index = emax + emin > 0 && emax >= emin ? (emax - emin) / (emax + emin) : NAN;
    r->positive_peak_pct = 100 * (ar->emax_abs - c) / c;
    r->positive_peak_held_pct = 100 * (emax - c) / c;
    r->negative_peak_pct = 100 * (c - emin) / c;
    /* a peak is a distance from C on its side: never negative */
    if (!(r->positive_peak_pct >= 0)) {
        r->positive_peak_pct = r->positive_peak_held_pct = NAN;
        r->positive_peak_why = "the envelope never rises above C";
    } else if (!(r->positive_peak_held_pct >= 0)) {
        r->positive_peak_held_pct = NAN;
        r->positive_peak_why = "the envelope does not stay above C long enough for a held peak";
    }
    if (!(r->negative_peak_pct >= 0)) {
        r->negative_peak_pct = NAN;
        r->negative_peak_why = "the envelope does not stay below C long enough for a held peak";
    }
    r->shift_from_line = ar->reversal_events > 0;
    const double emod = r->shift_from_line ? ar->coherent_modulated : ar->mean_modulated;
    r->carrier_shift_pct = r->c_source != ML_C_MEAN && ar->modulated_samples > 0 ? 100 * (emod - c) / c : NAN;
    r->pinch_rel = ar->floor_rel * q->cfg.carrier_amplitude / c;
    const double t_mod = (double)ar->modulated_samples;
    r->carrier_off_pct = t_mod > 0 ? 100 * ar->off_samples / t_mod : 0.0;
    r->overmodulation_pct = t_mod > 0 ? 100 * (ar->off_samples + ar->reversed_samples) / t_mod : 0.0;
    r->pinch_events = ar->pinch_events;
    r->reversal_events = ar->reversal_events;
    r->positive_over = ml_am_crests_above(q->am, (1.0 + q->cfg.positive_limit_pct / 100.0) * c);
    r->has_trapezoid = ar->has_trapezoid;
    r->trapezoid_deviation_pct = ar->has_trapezoid ? 100 * ar->trap_residual_rms / c : NAN;
    r->emax_rel = emax / c;
    r->emin_rel = emin / c;
    noise_figures(q, ar, r);
}

/* The end of a span: C, the spectra's scale and selection, and every figure. */
static ml_status conclude(ml_modulation *q)
{
    ml_modulation_result *r = &q->res;
    const double nan = NAN;
    *r = (ml_modulation_result){.bandwidth_hz = q->bw, .transition_hz = q->transition,
                                .filter_taps = 2 * ml_am_edge(q->am) + 1, .edge = ml_am_edge(q->am),
                                .rf_nfft = ml_spectrum_nfft(q->rf), .carrier_hz = q->cfg.carrier_hz,
                                .carrier_level_dbfs = nan, .c = nan, .c_source = ML_C_MEAN,
                                .unmodulated_dbfs = nan, .cnr_db = nan, .cnr_bandwidth_hz = 2 * q->bw,
                                .index = nan, .index_spectral = nan, .positive_peak_pct = nan,
                                .negative_peak_pct = nan, .carrier_shift_pct = nan, .overmodulation_pct = nan,
                                .sideband_asymmetry_db = nan, .trapezoid_deviation_pct = nan,
                                .occupied_bandwidth_hz = nan, .emax_rel = nan, .emin_rel = nan,
                                .pinch_rel = PINCH_REL, .carrier_prominence_db = nan,
                                .positive_peak_held_pct = nan, .carrier_off_pct = nan, .noise_pct = nan,
                                .floor_pct = nan, .reversal_pct = nan, .held_noise_pct = nan,
                                .top_noise_pct = nan};
    ml_figures_audio_none(&r->audio);
    q->have_result = true;
    q->prov_rel = nan;
    ml_am_result ar;
    const ml_status sa = ml_am_get_result(q->am, &ar);
    r->samples = ar.samples;
    r->absent_s = (double)ar.absent_samples / q->cfg.rate_hz;
    if (sa != ML_OK) {
        if (ar.absent_samples > 0)
            r->no_carrier = "the carrier is absent (every 20 ms block below 10 % of it)";
        return q->result_status = ML_ENOSIGNAL;
    }
    r->modulated_samples = ar.modulated_samples;
    r->quiet_samples = ar.quiet_samples;
    choose_c(q, &ar, r);
    if (!(r->c > 0))
        return q->result_status = ML_ENOSIGNAL;
    r->unmodulated_dbfs = 20 * log10(r->c);
    q->prov_rel = q->cfg.carrier_amplitude / r->c;
    ml_spectrum_scale(q->aud, q->prov_rel);
    /* With unmodulated stretches in the span, the spectra cover the wholly modulated FFT
     * segments only, so that a lead-in or pauses do not dilute sidebands and tones. */
    if (ar.quiet_samples + ar.absent_samples > 0 && ar.modulated_samples > 0 && ml_spectrum_selected_segments(q->rf) > 0
        && ml_spectrum_selected_segments(q->aud) > 0) {
        ml_spectrum_use_selected(q->rf, 1);
        ml_spectrum_use_selected(q->aud, 1);
        r->spectra_modulated_only = true;
    }
    audio_figures(q, r);
    carrier_figures(q, r);
    r->carrier_prominence_db =
        r->carrier_amplitude > 0 ? ml_rf_line_prominence_db(q->rf, r->carrier_hz) : -INFINITY;
    if (!(r->carrier_prominence_db >= ML_MODULATION_MIN_PROMINENCE_DB)) {
        r->no_carrier = "no carrier line stands out of the noise";
        return q->result_status = ML_ENOSIGNAL;
    }
    envelope_figures(q, &ar, r);
    return q->result_status = ML_OK;
}

ml_status ml_modulation_get_result(const ml_modulation *q, ml_modulation_result *out)
{
    if (q == NULL || out == NULL)
        return ML_EINVAL;
    if (!q->have_result)
        return ML_ENOSIGNAL;
    *out = q->res;
    return q->result_status;
}

ml_status ml_modulation_get_uncertainty(const ml_modulation *q, ml_modulation_uncertainty *out)
{
    if (q == NULL || out == NULL)
        return ML_EINVAL;
    const double nan = NAN;
    *out = (ml_modulation_uncertainty){.index = nan, .positive_peak_held_pct = nan, .negative_peak_pct = nan};
    ml_figures_audio_none(&out->audio);
    if (q->blocks == NULL || !q->have_result)
        return ML_OK;
    ml_blocks_get_audio(q->blocks, &out->audio);
    out->blocks = ml_blocks_count(q->blocks);
    out->block_s = ml_blocks_block_s(q->blocks);
    double u_max, u_min, u_index;
    ml_blocks_get_peaks(q->blocks, &u_max, &u_min, &u_index);
    /* the blocks read the envelope in units of the provisional C */
    out->positive_peak_held_pct = 100.0 * q->prov_rel * u_max;
    out->negative_peak_pct = 100.0 * q->prov_rel * u_min;
    out->index = u_index;
    return ML_OK;
}

const ml_spectrum *ml_modulation_get_spectrum(const ml_modulation *q)
{
    return q ? q->rf : NULL;
}

const ml_audio_plan *ml_modulation_get_audio_plan(const ml_modulation *q)
{
    return q ? &q->plan : NULL;
}

const ml_spectrum *ml_modulation_get_audio_spectrum(const ml_modulation *q)
{
    return q ? q->aud : NULL;
}

ml_status ml_modulation_get_mask_margin(const ml_modulation *q, const ml_mask *mask, double *margin_db,
                                        double *worst_offset_hz)
{
    if (q == NULL || !q->have_result || !(q->res.c > 0))
        return ML_EINVAL;
    /* the mask refers to the unmodulated carrier's power [cfr 73.44] */
    return ml_rf_mask_margin(q->rf, q->res.carrier_hz,
                             q->res.c * q->res.c * ml_spectrum_full_scale_power(q->rf), mask, margin_db,
                             worst_offset_hz);
}
