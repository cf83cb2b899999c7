/* The if/iq pipeline of the measure command: carrier, envelope, modulation and spectrum figures.
 * SPDX-License-Identifier: MIT
 *
 * Two passes over the segment: a short look at its opening seconds finds the carrier (and, for
 * --kind auto, decides whether a one-channel file is an IF capture), then one streamed pass feeds
 * the spectrum of the captured signal, the demodulator (dsp/am.h) and the spectrum of the
 * demodulated audio. Memory does not depend on the segment's length.
 *
 * References:
 * [cfr73.14] 47 CFR 73.14, percentage modulation: positive 100 (MAX - C)/C, negative
 *     100 (C - MIN)/C, C = carrier amplitude without modulation.
 * [cfr73.1570] 47 CFR 73.1570(b)(1): AM peaks at most 100 % negative, 125 % positive.
 * [sm328] Recommendation ITU-R SM.328 (occupied bandwidth, 99 % of the mean power).
 */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/measure.h"
#include "analyzer/plots.h"
#include "analyzer/uncertainty.h"
#include "analyzer/values.h"
#include "analyzer/worker.h"
#include "dsp/am.h"
#include "dsp/carrier.h"
#include "dsp/figures.h"
#include "dsp/metrics.h"
#include "dsp/rf.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"

#ifndef CMPLX /* C11; glibc's <complex.h> defines it for GCC only, clang has the same builtin */
#define CMPLX(x, y) __builtin_complex((double)(x), (double)(y))
#endif

#define PREFIX_S 4.0          /* seconds looked at to find the carrier                        */
#define MAX_BANDWIDTH_HZ 10000.0
#define INDEX_TOLERANCE 0.02  /* envelope vs spectral index disagreement worth a note          */
#define QUIET_MIN_S 0.1       /* unmodulated time needed before C is taken from it            */
#define BATCH_FRAMES (8 * ML_BLOCK_FRAMES) /* frames per hand-over to the spectrum thread         */
#define NBATCH (ML_WORKER_DEPTH + 1)       /* batch buffers used in turn (analyzer/worker.h)       */
/* Largest sample magnitude the pass takes: its channel filter, captured spectrum and oversampled
 * envelope compute in single precision (largest float 3.4e38), and a 65536-point transform of
 * samples of 1e30 stays below 1e35. Full scale is 1: this is 600 dB above it. */
#define MAX_LEVEL 1e30

/* The error for a sample beyond MAX_LEVEL in the measured columns of a batch of `got` frames read
 * from frame `done` of the segment on, naming the first such sample. */
static int level_error(const ml_measure_opts *o, const ml_segment *seg, const float *raw, size_t got,
                       const ml_channels *ch, int64_t done)
{
    const size_t col[2] = {ch->re, ch->im};
    for (size_t i = 0; i < got; i++)
        for (int c = 0; c < (ch->complex_input ? 2 : 1); c++) {
            const float v = raw[i * ch->stride + col[c]];
            if (fabsf(v) > MAX_LEVEL)
                return ml_cli_error("%s: frame %lld, channel %zu: sample %.3g lies beyond +-%.0e (full scale is 1), "
                                    "more than the modulation analysis takes",
                                    o->input, (long long)(seg->first + done + (int64_t)i), col[c] + 1, (double)v,
                                    MAX_LEVEL);
        }
    return ml_cli_error("%s: a sample lies beyond +-%.0e", o->input, MAX_LEVEL);
}

/* The streamed pass runs on two threads: this one reads, filters and demodulates a batch while
 * the worker feeds the previous batch's output to the spectra (feed is the larger half of the
 * work). Batches are fed in order, so the figures do not depend on timing. */
typedef struct {
    ml_spectrum *rf, *aud;
    bool iq;
    double inv_c;
    ml_blocks *blocks;     /* per-block audio figures for the uncertainty                     */
    ml_plot_data *plot;    /* envelope window for --plot, or NULL                             */
    size_t decim;          /* the audio spectrum takes every decim-th envelope sample         */
    uint64_t env_seen;     /* envelope samples fed so far (the decimation's phase)            */
    double *denv;          /* the kept samples and their tags, of one batch                   */
    unsigned char *dtag;
    ml_channels ch;        /* the columns of I and Q (or of the IF signal) in the frames      */
    /* The captured samples wait here, as read, until the demodulator has classified them (its
     * envelope comes out a filter delay and up to a block later): a ring of (I, Q) pairs or IF
     * values. The first `skip` input samples (the channel filter's edge) produce no envelope
     * and never enter. */
    float *fifo;
    size_t fifo_cap, fifo_head, fifo_len; /* in samples */
    uint64_t skip;
} feed_ctx;

/* Appends the measured column(s) of `got` frames to the ring. */
static void fifo_append(feed_ctx *f, const float *raw, size_t got)
{
    size_t i = 0;
    if (f->skip > 0) {
        i = got < f->skip ? got : (size_t)f->skip;
        f->skip -= i;
    }
    const size_t nch = f->ch.stride, c0 = f->ch.re, c1 = f->ch.im;
    while (i < got) {
        /* up to the ring's end at a time, in plain loops */
        const size_t at = (f->fifo_head + f->fifo_len) % f->fifo_cap;
        const size_t m = got - i < f->fifo_cap - at ? got - i : f->fifo_cap - at;
        const float *restrict fr = raw + i * nch;
        float *restrict dst = f->fifo + (f->iq ? 2 : 1) * at;
        if (f->iq && nch == 2 && c0 == 0 && c1 == 1) { /* the frames are the pairs */
            memcpy(dst, fr, 2 * m * sizeof *dst);
        } else if (f->iq) {
            for (size_t j = 0; j < m; j++) {
                dst[2 * j] = fr[j * nch + c0];
                dst[2 * j + 1] = fr[j * nch + c1];
            }
        } else {
            for (size_t j = 0; j < m; j++)
                dst[j] = fr[j * nch + c0];
        }
        f->fifo_len += m;
        i += m;
    }
}

/* Feeds the demodulator's output to the spectra: the input samples it belongs to (from the ring)
 * to the captured signal's spectrum, the envelope in units of the provisional carrier (every
 * decim-th sample) to the audio spectrum and the blocks, all tagged with their block's class. */
static void feed(feed_ctx *f, const ml_am_output *out, size_t n)
{
    const size_t w = f->iq ? 2 : 1;
    for (size_t done = 0; done < n;) {
        size_t m = n - done, run = f->fifo_cap - f->fifo_head;
        if (m > run)
            m = run;
        const float *x = f->fifo + w * f->fifo_head;
        if (f->iq)
            ml_spectrum_push_complex_float_tagged(f->rf, x, out->modulated + done, m);
        else
            ml_spectrum_push_float_tagged(f->rf, x, out->modulated + done, m);
        f->fifo_head = (f->fifo_head + m) % f->fifo_cap;
        f->fifo_len -= m;
        done += m;
    }
    for (size_t i = 0; i < n; i++)
        out->env[i] *= f->inv_c;
    const double *env = out->env;
    const unsigned char *tag = out->modulated;
    size_t m = n;
    if (f->decim > 1) {
        size_t first = (size_t)((f->decim - f->env_seen % f->decim) % f->decim);
        m = 0;
        for (size_t i = first; i < n; i += f->decim, m++) {
            f->denv[m] = out->env[i];
            f->dtag[m] = out->modulated[i];
        }
        env = f->denv;
        tag = f->dtag;
    }
    f->env_seen += n;
    ml_spectrum_push_tagged(f->aud, env, tag, m);
    ml_blocks_push(f->blocks, out->env, out->modulated, n); /* the peak readings: every sample */
}

typedef struct {
    ml_am_output out;
    size_t n;
    float *raw;            /* the batch's frames as read, for the captured signal's spectrum  */
    size_t got;
} feed_batch;

static void feed_job(void *ctx, void *batch)
{
    feed_ctx *f = ctx;
    feed_batch *b = batch;
    fifo_append(f, b->raw, b->got);
    feed(f, &b->out, b->n);
    if (f->plot)
        ml_plots_envelope(f->plot, b->out.env, b->n);
}

/* Spectrum of the first `frames` frames of the segment, then seeks back to its start. */
static int look_ahead(const ml_measure_opts *o, ml_segment *seg, bool iq, int64_t frames, ml_spectrum **out)
{
    *out = NULL;
    ml_channels ch;
    if (ml_channels_map(seg->info->channels, o->channel, iq, o->swap_iq, 0, &ch) != ML_OK)
        return ml_cli_error("%s: channel %ld%s is not in the input (%d channels)", o->input, o->channel,
                            iq ? " and the next" : "", seg->info->channels);
    const double rate = seg->info->rate_hz;
    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    sc.nfft = ml_measure_nfft(rate, frames);
    if (sc.nfft == 0)
        return ml_cli_error("%s: %lld frames are too few to analyse (at least 256 needed)", o->input,
                            (long long)frames);
    /* a quarter-second resolution is plenty to find the carrier; keep several segments */
    while (sc.nfft > 4096 && (int64_t)sc.nfft * 4 > frames)
        sc.nfft /= 2;
    sc.hop = sc.nfft / 2;
    sc.complex_input = iq;
    ml_status st = ml_spectrum_create(&sc, out);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", o->input, ml_strerror(st));
    const size_t nch = (size_t)seg->info->channels;
    float *buf = malloc(ML_BLOCK_FRAMES * nch * sizeof *buf);
    double complex *z = malloc(ML_BLOCK_FRAMES * sizeof *z);
    float *mono = malloc(ML_BLOCK_FRAMES * sizeof *mono);
    int rc = 0;
    if (buf == NULL || z == NULL || mono == NULL)
        rc = ml_cli_error("%s: out of memory", o->input);
    int64_t done = 0;
    while (rc == 0 && done < frames) {
        size_t want = frames - done < ML_BLOCK_FRAMES ? (size_t)(frames - done) : ML_BLOCK_FRAMES, got = 0;
        rc = ml_measure_read(o, seg, buf, want, &got, done);
        if (rc != 0)
            break;
        if (iq) {
            ml_channels_split_complex(&ch, buf, got, z);
            ml_spectrum_push_complex(*out, z, got);
        } else {
            ml_channels_split(&ch, buf, got, mono, NULL);
            ml_spectrum_push(*out, mono, got);
        }
        done += (int64_t)got;
        if (got < want) /* a live capture ended early */
            break;
    }
    free(buf);
    free(z);
    free(mono);
    if (rc == 0 && ml_source_seek(seg->src, seg->first) != ML_OK)
        rc = ml_cli_error("%s: cannot seek back to the segment start: %s", o->input, ml_source_detail(seg->src));
    if (rc != 0) {
        ml_spectrum_destroy(*out);
        *out = NULL;
    }
    return rc;
}

int ml_measure_detect_if(ml_measure_opts *o, ml_segment *seg, bool *is_if, double *carrier_hz, char *reason,
                         size_t reason_len)
{
    *is_if = false;
    const double rate = seg->info->rate_hz, nyq = rate / 2;
    int64_t frames = (int64_t)(PREFIX_S * rate);
    if (frames > seg->nframes)
        frames = seg->nframes;
    if (ml_measure_nfft(rate, frames) == 0) {
        snprintf(reason, reason_len, "--kind auto: too short to look for a carrier; treated as audio");
        return 0;
    }
    ml_spectrum *s = NULL;
    int rc = look_ahead(o, seg, false, frames, &s);
    if (rc != 0)
        return rc;
    const ml_carrier_config cc = ml_carrier_config_default(rate, false, NAN);
    ml_carrier car;
    ml_status st = ml_carrier_find(s, &cc, &car);
    if (st != ML_OK) {
        snprintf(reason, reason_len, "--kind auto: no signal found; treated as audio");
        ml_spectrum_destroy(s);
        return 0;
    }
    const double fc = car.frequency_hz, ac = car.amplitude;
    /* Sidebands: the strongest component within +-min(fc, nyq - fc, 10 kHz) of the carrier but
     * outside its lobe must have a mirror image within 3 dB on the other side. */
    const double bin = rate / (double)ml_spectrum_nfft(s), lobe = (double)ml_spectrum_lobe_bins(s) * bin;
    const double span = fmin(fmin(fc, nyq - fc), MAX_BANDWIDTH_HZ);
    bool symmetric = false;
    double fm = 0;
    if (fc >= 3000.0 && span > 2 * lobe + 20.0) {
        double fu, au, fl, al;
        ml_status su = ml_rf_find_peak(s, fc + lobe + bin, fc + span, &fu, &au);
        ml_status sl = ml_rf_find_peak(s, fc - span, fc - lobe - bin, &fl, &al);
        if (su == ML_OK && sl == ML_OK) {
            /* the stronger side's partner must sit at the mirror frequency with a similar level */
            double f_strong = au >= al ? fu : fl, a_strong = fmax(au, al);
            double mirror = 2 * fc - f_strong, a_mirror = ml_rf_amplitude(s, mirror);
            fm = fabs(f_strong - fc);
            symmetric = a_mirror > 0 && a_strong > 0 && fabs(20 * log10(a_mirror / a_strong)) < 3.0
                        && a_strong > 1e-3 * ac;
        }
    }
    ml_spectrum_destroy(s);
    if (fc >= 3000.0 && symmetric) {
        *is_if = true;
        *carrier_hz = isnan(o->carrier_hz) ? fc : o->carrier_hz;
        snprintf(reason, reason_len,
                 "--kind auto: one channel whose strongest component (%.1f Hz) has symmetric sidebands "
                 "(+-%.1f Hz): an AM IF signal",
                 fc, fm);
    } else if (fc < 3000.0) {
        snprintf(reason, reason_len,
                 "--kind auto: the strongest component (%.1f Hz) lies in the audio range below 3 kHz: "
                 "demodulated audio",
                 fc);
    } else {
        snprintf(reason, reason_len,
                 "--kind auto: the strongest component (%.1f Hz) has no symmetric sidebands: demodulated audio",
                 fc);
    }
    return 0;
}

/* Mean envelope of a capture of the unmodulated carrier: its carrier line's amplitude. */
static int reference_carrier(const ml_measure_opts *o, bool iq, double rate, double fc, double *c)
{
    char err[256];
    ml_segment ref = {0};
    ml_status st = ml_source_open_file(o->carrier_reference, &ref.src, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s%s%s", o->carrier_reference, ml_strerror(st), err[0] ? ": " : "", err);
    ref.info = ml_source_get_info(ref.src);
    int rc = 0;
    ml_measure_opts ro = *o;
    ro.input = o->carrier_reference;
    if (ref.info->rate_hz != rate) {
        rc = ml_cli_error("%s: the carrier reference is sampled at %.0f Hz, the capture at %.0f Hz",
                          o->carrier_reference, ref.info->rate_hz, rate);
        goto done;
    }
    if (ref.info->channels < (int)o->channel + (iq ? 1 : 0)) {
        rc = ml_cli_error("%s: the carrier reference has %d channel%s; the measured channels need %ld",
                          o->carrier_reference, ref.info->channels, ref.info->channels == 1 ? "" : "s",
                          o->channel + (iq ? 1 : 0));
        goto done;
    }
    ref.first = 0;
    ref.nframes = ref.info->frames < (int64_t)(10 * ref.info->rate_hz) ? ref.info->frames
                                                                         : (int64_t)(10 * ref.info->rate_hz);
    ml_spectrum *s = NULL;
    rc = look_ahead(&ro, &ref, iq, ref.nframes, &s);
    if (rc != 0)
        goto done;
    /* the carrier line near the capture's: within 20 bins and 50 Hz of it, whatever its level */
    ml_carrier_config cc = ml_carrier_config_default(rate, iq, fc);
    cc.capture_hz = 20 * rate / (double)ml_spectrum_nfft(s) + 50.0;
    cc.min_rel = 0;
    cc.lo_hz = -rate / 2;
    ml_carrier car;
    st = ml_carrier_find(s, &cc, &car);
    ml_spectrum_destroy(s);
    if (st != ML_OK || !(car.amplitude > 0)) {
        rc = ml_cli_error("%s: no carrier near %.1f Hz in the carrier reference", o->carrier_reference, fc);
        goto done;
    }
    const double a = car.amplitude;
    *c = a;
done:
    ml_source_close(ref.src);
    return rc;
}

int ml_measure_modulation(ml_measure_opts *o, ml_segment *seg, ml_kind kind, const char *reason,
                          double carrier_hz, ml_report *rep)
{
    const bool iq = kind == ML_KIND_IQ;
    const ml_source_info *info = seg->info;
    const double rate = info->rate_hz, nyq = rate / 2;
    const size_t nch = (size_t)info->channels;
    if (iq && (size_t)o->channel + 1 > nch)
        return ml_cli_error("%s: --kind iq needs two channels (I and Q) from channel %ld; the file has %zu",
                            o->input, o->channel, nch);
    if (o->reference_channel > 0
        && (o->reference_channel == o->channel || (iq && o->reference_channel == o->channel + 1)))
        return ml_cli_error("--reference-channel %ld is one of the measured channels", o->reference_channel);
    if (!isnan(carrier_hz) && (iq ? !(fabs(carrier_hz) < nyq) : !(carrier_hz > 0 && carrier_hz < nyq)))
        return ml_cli_error("--carrier %.1f Hz is outside the captured band (%s%.1f Hz at %.0f Hz sampling)",
                            carrier_hz, iq ? "+-" : "0..", nyq, rate);

    /* 1. the carrier, from the opening seconds */
    int64_t pre = (int64_t)(PREFIX_S * rate);
    if (pre > seg->nframes)
        pre = seg->nframes;
    ml_spectrum *look = NULL;
    int rc = look_ahead(o, seg, iq, pre, &look);
    if (rc != 0)
        return rc;
    const ml_carrier_config cc = ml_carrier_config_default(rate, iq, carrier_hz);
    ml_carrier car;
    ml_status st = ml_carrier_find(look, &cc, &car);
    ml_spectrum_destroy(look);
    if (st != ML_OK && car.strongest_amplitude > 0 && !isnan(carrier_hz))
        return ml_cli_error("%s: no carrier within +-%.0f Hz of --carrier %.1f Hz (the strongest component lies at "
                            "%.1f Hz)",
                            o->input, car.range_hz, carrier_hz, car.strongest_hz);
    if (st != ML_OK)
        return ml_cli_error("%s: no carrier found%s", o->input, st == ML_ENOSIGNAL ? " (the input is silent)" : "");
    const double fc = car.frequency_hz, ac = car.amplitude;

    double transition = 0;
    double bw = ml_am_default_bandwidth(rate, iq, fc, MAX_BANDWIDTH_HZ, &transition);
    if (o->bandwidth_hz > 0) {
        if (o->bandwidth_hz > bw + 1e-9)
            return ml_cli_error("--bandwidth %.1f Hz does not fit around a carrier at %.1f Hz sampled at %.0f Hz "
                                "(at most %.1f Hz)",
                                o->bandwidth_hz, fc, rate, bw);
        bw = o->bandwidth_hz;
        transition = fmin(transition, 0.25 * bw);
    }
    if (bw <= 0)
        return ml_cli_error("%s: the carrier at %.1f Hz is too close to %s for a channel filter", o->input, fc,
                            iq ? "the band edge" : "0 Hz or the Nyquist frequency");

    double c_file = 0;
    if (o->carrier_reference) {
        rc = reference_carrier(o, iq, rate, fc, &c_file);
        if (rc != 0)
            return rc;
    }
    const double c_prov = c_file > 0 ? c_file : ac;

    /* 2. one streamed pass */
    ml_spectrum_config rc_cfg = ml_spectrum_config_default(rate);
    rc_cfg.window = o->window;
    rc_cfg.nfft = ml_measure_nfft(rate, seg->nframes);
    rc_cfg.hop = rc_cfg.nfft / 2;
    rc_cfg.complex_input = iq;
    rc_cfg.single_precision = iq; /* the largest transform; its rounding is far below any figure */
    ml_am_config ac_cfg = ml_am_config_default(rate, iq, fc, bw, c_prov);
    ac_cfg.transition_hz = transition;
    ac_cfg.hold_s = o->peak_hold_ms / 1000.0;
    ac_cfg.has_reference = o->reference_channel > 0;
    ac_cfg.single_precision = true; /* rounding near a float capture's own resolution (dsp/cfir.h) */
    for (size_t i = 0; o->limits && i < o->limits->n; i++)
        if (strcmp(o->limits->items[i].metric, "modulation.positive_peak_pct") == 0 && o->limits->items[i].has_max)
            ac_cfg.positive_limit_pct = o->limits->items[i].max;
    ml_spectrum *rf = NULL, *aud = NULL;
    ml_am *am = NULL;
    float *ref = NULL;
    feed_batch batch[NBATCH] = {{{0}, 0, NULL, 0}};
    ml_worker *worker = NULL;
    ml_blocks *blocks = NULL;
    feed_ctx fctx = {0};
    ml_stats stats[2];
    ml_stats_init(&stats[0], info->bits);
    ml_stats_init(&stats[1], info->bits);
    if (rc_cfg.nfft == 0)
        return ml_cli_error("%s: %lld frames are too few to analyse", o->input, (long long)seg->nframes);
    if ((st = ml_spectrum_create(&rc_cfg, &rf)) != ML_OK || (st = ml_am_create(&ac_cfg, &am)) != ML_OK) {
        rc = ml_cli_error("%s: cannot set up the analysis: %s", o->input, ml_strerror(st));
        goto done;
    }
    const int64_t env_frames = seg->nframes - 2 * (int64_t)ml_am_edge(am);
    /* The demodulated audio lies below bw + transition (the channel filter's stop band starts
     * there): when that is below a quarter of the rate, every second envelope sample carries it
     * whole (Nyquist), and the audio spectrum takes those at the same bin width -- half the
     * transforms. Only an overmodulated envelope, whose corners reach beyond, aliases a little
     * more than at the full rate; the envelope statistics keep every sample. */
    size_t decim = 1;
    if (bw + transition <= rate / 4 && ml_measure_nfft(rate, env_frames) >= 512
        && ml_measure_nfft(rate / 2, env_frames / 2) == ml_measure_nfft(rate, env_frames) / 2)
        decim = 2;
    ml_spectrum_config ac_spec = ml_spectrum_config_default(rate / (double)decim);
    ac_spec.window = o->window;
    ac_spec.nfft = ml_measure_nfft(rate / (double)decim, env_frames / (int64_t)decim);
    ac_spec.hop = ac_spec.nfft / 2;
    if (env_frames <= 0 || ac_spec.nfft == 0) {
        rc = ml_cli_error("%s: %lld frames are too few for the %zu-tap channel filter", o->input,
                          (long long)seg->nframes, 2 * ml_am_edge(am) + 1);
        goto done;
    }
    if ((st = ml_spectrum_create(&ac_spec, &aud)) != ML_OK) {
        rc = ml_cli_error("%s: %s", o->input, ml_strerror(st));
        goto done;
    }
    ml_audio_config bcfg = o->audio; /* the demodulated audio's band, as in step 4 */
    bcfg.band_hi_hz = fmin(bcfg.band_hi_hz, bw);
    if (ml_blocks_create(aud, &ac_spec, &bcfg, true, &blocks) != ML_OK
        || ml_blocks_set_peaks(blocks, ac_cfg.hold_s, decim) != ML_OK) {
        rc = ml_cli_error("%s: out of memory", o->input);
        goto done;
    }
    if (o->plot)
        ml_plots_begin_envelope(o->plot, seg->nframes, rate, ml_am_edge(am), o->reference_channel > 0);
    ref = malloc(BATCH_FRAMES * sizeof *ref);
    bool nomem = ref == NULL;
    for (int k = 0; k < NBATCH; k++) {
        batch[k].raw = malloc(BATCH_FRAMES * nch * sizeof *batch[k].raw);
        nomem = nomem || batch[k].raw == NULL;
        ml_am_output *out = &batch[k].out;
        out->cap = ml_am_output_cap(am, BATCH_FRAMES);
        out->env = malloc(out->cap * sizeof *out->env);
        out->in = NULL; /* the spectrum takes the samples as read (feed_ctx.fifo) */
        out->modulated = malloc(out->cap);
        nomem = nomem || out->env == NULL || out->modulated == NULL;
    }
    if (nomem) {
        rc = ml_cli_error("%s: out of memory", o->input);
        goto done;
    }
    fctx = (feed_ctx){.rf = rf, .aud = aud, .iq = iq, .inv_c = 1.0 / c_prov, .blocks = blocks, .plot = o->plot,
                      .decim = decim};
    fctx.denv = malloc((batch[0].out.cap / decim + 1) * sizeof *fctx.denv);
    fctx.dtag = malloc(batch[0].out.cap / decim + 1);
    /* waiting at most: a batch, the filter's delay and an unfinished block (dsp/am.h) */
    fctx.fifo_cap = ml_am_output_cap(am, BATCH_FRAMES) + ml_am_latency(am);
    fctx.fifo = malloc(fctx.fifo_cap * (iq ? 2 : 1) * sizeof *fctx.fifo);
    fctx.skip = ml_am_edge(am);
    if (fctx.denv == NULL || fctx.dtag == NULL || fctx.fifo == NULL) {
        rc = ml_cli_error("%s: out of memory", o->input);
        goto done;
    }
    if (ml_channels_map((int)nch, o->channel, iq, o->swap_iq, o->reference_channel, &fctx.ch) != ML_OK) {
        rc = ml_cli_error("%s: the channels to analyse are not in the input", o->input);
        goto done;
    }
    worker = ml_worker_start(feed_job, &fctx); /* NULL: feed runs on this thread */
    int k = 0;
    int64_t done_frames = 0, next = 0;
    bool shown = false;
    while (done_frames < seg->nframes) {
        size_t want = seg->nframes - done_frames < BATCH_FRAMES ? (size_t)(seg->nframes - done_frames)
                                                                : BATCH_FRAMES;
        size_t got = 0;
        /* batch k was last handed over NBATCH submissions ago: submit waited for it to finish */
        rc = ml_measure_read(o, seg, batch[k].raw, want, &got, done_frames);
        if (rc != 0)
            goto done;
        batch[k].got = got;
        for (int c = 0; c < (iq ? 2 : 1); c++) { /* here: the two threads' shares stay balanced */
            ml_stats_push_strided(&stats[c], batch[k].raw + (c ? fctx.ch.im : fctx.ch.re), got, nch);
            if (fmax(-stats[c].min, stats[c].max) > MAX_LEVEL) {
                rc = level_error(o, seg, batch[k].raw, got, &fctx.ch, done_frames);
                goto done;
            }
        }
        if (o->plot) { /* the reference channel's window; the envelope's goes in on the feed thread */
            ml_channels_split_ref(&fctx.ch, batch[k].raw, got, ref);
            ml_plots_input(o->plot, done_frames, o->reference_channel > 0 ? ref : NULL, got);
        }
        /* the demodulator reads its columns straight from the frames */
        ml_am_push_frames(am, batch[k].raw, &fctx.ch, got, &batch[k].out, &batch[k].n);
        ml_worker_submit(worker, feed_job, &fctx, &batch[k]);
        k = (k + 1) % NBATCH;
        done_frames += (int64_t)got;
        ml_measure_progress(seg, done_frames, &next, &shown);
    }
    ml_measure_progress_end(shown);
    ml_am_finish(am, &batch[k].out, &batch[k].n);
    batch[k].got = 0;
    ml_worker_submit(worker, feed_job, &fctx, &batch[k]);
    ml_worker_stop(worker);
    worker = NULL;
    ml_am_result ar;
    if (ml_am_get_result(am, &ar) != ML_OK) {
        rc = ml_cli_error("%s: no envelope could be measured", o->input);
        goto done;
    }

    /* 3. the unmodulated carrier C */
    double c;
    char cref[128];
    const bool c_known = c_file > 0 || (double)ar.quiet_samples >= QUIET_MIN_S * rate;
    if (c_file > 0) {
        c = c_file;
        snprintf(cref, sizeof cref, "carrier reference file %s", o->carrier_reference);
    } else if (c_known) {
        c = ar.mean_quiet;
        snprintf(cref, sizeof cref, "unmodulated stretches of this capture (%.2f s)",
                 (double)ar.quiet_samples / rate);
    } else {
        c = ar.mean_all;
        snprintf(cref, sizeof cref, "mean envelope (no unmodulated carrier found)");
    }
    if (!(c > 0)) {
        rc = ml_cli_error("%s: the carrier vanishes: no envelope to measure", o->input);
        goto done;
    }
    ml_spectrum_scale(aud, c_prov / c);
    /* With unmodulated stretches in the capture, the spectra cover the wholly modulated FFT
     * segments only, so that a lead-in or pauses do not dilute sidebands and tones. */
    bool mod_only = false;
    if (ar.quiet_samples > 0 && ar.modulated_samples > 0 && ml_spectrum_selected_segments(rf) > 0
        && ml_spectrum_selected_segments(aud) > 0) {
        ml_spectrum_use_selected(rf, 1);
        ml_spectrum_use_selected(aud, 1);
        mod_only = true;
    }

    /* 4. demodulated audio: the envelope's AC part in units of C (full scale = 100 % modulation) */
    ml_measure_describe(rep, o, seg, iq ? "iq" : "if", reason);
    ml_audio_config acfg = o->audio;
    if (acfg.band_hi_hz > bw)
        acfg.band_hi_hz = bw;
    ml_audio_result au;
    bool aok = false;
    if (acfg.band_lo_hz < acfg.band_hi_hz
        && !(acfg.tone_hz > 0 && (acfg.tone_hz < acfg.band_lo_hz || acfg.tone_hz > acfg.band_hi_hz)))
        aok = ml_audio_analyze(aud, &acfg, &au) == ML_OK;
    /* the demodulated audio is in units of C: its total power is about 1 */
    const char *residue = aok ? ml_figures_no_signal(&au, 1.0) : NULL;
    if (residue != NULL) {
        aok = false;
        ml_report_note(rep, "no modulation in the demodulated audio band: %s", residue);
    }
    if (!aok)
        memset(&au, 0, sizeof au);

    /* 5. figures */
    const double fsp = ml_spectrum_full_scale_power(rf);
    double f_car = fc, a_car = 0;
    {
        const double lh = (double)ml_spectrum_lobe_bins(rf) * rate / (double)rc_cfg.nfft;
        if (ml_rf_find_peak(rf, fc - lh, fc + lh, &f_car, &a_car) != ML_OK)
            a_car = 0;
    }
    const double p_car = a_car * a_car * fsp;
    ml_measure_add(rep, "carrier.frequency_hz", f_car);
    ml_measure_add(rep, "carrier.offset_hz", isnan(o->carrier_hz) ? NAN : f_car - o->carrier_hz);
    ml_measure_add(rep, "carrier.level_dbfs", a_car > 0 ? 20 * log10(a_car) : NAN);
    ml_measure_add(rep, "carrier.unmodulated_dbfs", 20 * log10(c));
    /* noise in the channel: mean density between the lines of carrier, tone sidebands and hum */
    const double fm = aok ? au.fundamental_hz : 0;
    const double cnr = ml_rf_cnr_db(rf, f_car, p_car, bw, fm, acfg.harmonics, aok ? au.mains_hz : 0,
                                    acfg.hum_harmonics);
    ml_measure_add(rep, "carrier.cnr_db", cnr);
    ml_measure_add(rep, "carrier.cnr_bandwidth_hz", 2 * bw);

    const double emax = ar.emax;
    /* a pinch-off or reversal event means the envelope did reach zero: it is then no noise spike */
    const double emin = ar.pinch_events + ar.reversal_events > 0 ? fmin(ar.emin, ar.emin_abs) : ar.emin;
    const double m_env = emax + emin > 0 ? (emax - emin) / (emax + emin) : NAN;
    double m_spec = NAN, asym = NAN;
    if (aok && a_car > 0) {
        const double au_ = ml_rf_amplitude(rf, f_car + fm), al_ = ml_rf_amplitude(rf, f_car - fm);
        m_spec = (au_ + al_) / a_car;
        if (au_ > 0 && al_ > 0)
            asym = 20 * log10(au_ / al_);
    }
    ml_measure_add(rep, "modulation.index", m_env);
    ml_measure_add(rep, "modulation.index_spectral", m_spec);
    ml_measure_add(rep, "modulation.positive_peak_pct", 100 * (emax - c) / c);
    ml_measure_add(rep, "modulation.negative_peak_pct", 100 * (c - emin) / c);
    ml_measure_add(rep, "modulation.carrier_shift_pct",
                   c_known && ar.modulated_samples > 0 ? 100 * (ar.mean_modulated - c) / c : NAN);
    ml_measure_add(rep, "modulation.overmodulation_pct", 100 * ml_am_fraction_below(am, ac_cfg.pinch_rel * c));
    ml_measure_add(rep, "modulation.pinch_off_events", (double)(ar.pinch_events + ar.reversal_events));
    ml_measure_add(rep, "modulation.carrier_pinch_events", (double)ar.pinch_events);
    ml_measure_add(rep, "modulation.phase_reversal_events", (double)ar.reversal_events);
    ml_measure_add(rep, "modulation.positive_peaks_over_limit", (double)ar.positive_over);
    ml_measure_add(rep, "modulation.sideband_asymmetry_db", asym);
    ml_measure_add(rep, "modulation.envelope_thd_pct", aok ? ml_ratio_pct(au.distortion_power, au.fundamental_power) : NAN);
    ml_measure_add(rep, "modulation.hum_db", aok ? ml_power_dbfs(au.hum_power) : NAN);
    ml_measure_add(rep, "modulation.noise_db", aok ? ml_power_dbfs(au.noise_power) : NAN);
    if (ar.has_trapezoid) {
        ml_measure_add(rep, "modulation.trapezoid_deviation_pct", 100 * ar.trap_residual_rms / c);
    } else if (o->reference_channel > 0) {
        ml_measure_add(rep, "modulation.trapezoid_deviation_pct", NAN);
        ml_report_note(rep, "the reference channel is silent: no trapezoid");
    }
    double lo, hi;
    ml_measure_add(rep, "spectrum.occupied_bandwidth_hz",
                   ml_rf_occupied_bandwidth(rf, 0.99, &lo, &hi) == ML_OK ? hi - lo : NAN);
    if (o->limits && o->limits->has_mask) {
        double margin, woff;
        /* the mask refers to the unmodulated carrier's power [cfr 73.44] */
        st = ml_rf_mask_margin(rf, f_car, c * c * fsp, &o->limits->mask, &margin, &woff);
        ml_measure_add(rep, "spectrum.mask_margin_db", st == ML_OK ? margin : NAN);
        ml_measure_add(rep, "spectrum.mask_worst_offset_hz", st == ML_OK ? woff : NAN);
        if (st != ML_OK)
            ml_report_note(rep, "the emission mask lies outside the captured band (+-%.0f Hz around the carrier)",
                           iq ? nyq - fabs(f_car) : fmin(f_car, nyq - f_car));
    }
    ml_measure_add_audio(rep, &au, aok);
    ml_level_figures lv;
    ml_value v[ML_VALUES_MAX];
    ml_figures_level(stats, iq ? 2 : 1, &lv);
    ml_values_report(rep, v, ml_values_level(&lv, "capture", v));

    ml_report_add_text(rep, "modulation.carrier_reference", cref);
    const char *over = ar.reversal_events > ar.pinch_events ? "phase reversal"
                       : ar.pinch_events > 0               ? "carrier pinch-off"
                                                           : "none";
    ml_report_add_text(rep, "modulation.overmodulation_kind", over);
    snprintf(rep->analysis, sizeof rep->analysis,
             "carrier %.1f Hz, channel filter +-%.0f Hz (%zu taps; %zu samples of settling left out at each "
             "end), %s window, %zu-point FFT%s, peak hold %.3g ms/s",
             f_car, bw, 2 * ml_am_edge(am) + 1, ml_am_edge(am), ml_window_name(o->window), rc_cfg.nfft,
             mod_only ? " over modulated stretches" : "", o->peak_hold_ms);
    if (!c_known)
        ml_report_note(rep, "no unmodulated carrier in the capture: peaks are relative to the mean envelope and "
                            "carrier shift is not measured (give --carrier-reference, or include a carrier-only "
                            "stretch)");
    if (isfinite(m_env) && isfinite(m_spec) && fabs(m_env - m_spec) > INDEX_TOLERANCE)
        ml_report_note(rep,
                       "envelope and spectral modulation index disagree by %.3f (more than %.2f): the modulation is "
                       "not a single clean tone, or it is distorted or over 100 %%",
                       fabs(m_env - m_spec), INDEX_TOLERANCE);
    if (ar.pinch_events + ar.reversal_events > 0)
        ml_report_note(rep, "overmodulation: %llu carrier pinch-off and %llu phase-reversal events",
                       (unsigned long long)ar.pinch_events, (unsigned long long)ar.reversal_events);
    if (stats[0].clipped + stats[1].clipped > 0)
        ml_report_note(rep, "clipping: %llu samples at or within 1 LSB of full scale",
                       (unsigned long long)(stats[0].clipped + stats[1].clipped));
    ml_uncertainty_report(blocks, rep);
    double u_max, u_min, u_index;
    ml_blocks_get_peaks(blocks, &u_max, &u_min, &u_index);
    const ml_value u_peaks[] = {{"modulation.positive_peak_pct", 100.0 * c_prov / c * u_max},
                                {"modulation.negative_peak_pct", 100.0 * c_prov / c * u_min},
                                {"modulation.index", u_index}};
    ml_values_report_u(rep, u_peaks, 3);
    if (o->plot)
        ml_plots_modulation(o->plot, rf, f_car, c * c * fsp, fm, bw, o->limits && o->limits->has_mask ? &o->limits->mask : NULL,
                            c_prov / c, emax / c, emin / c, ac_cfg.pinch_rel);
done:
    ml_worker_stop(worker); /* waits for a batch in flight before the buffers go */
    free(fctx.denv);
    free(fctx.dtag);
    free(fctx.fifo);
    ml_blocks_destroy(blocks);
    free(ref);
    for (int b = 0; b < NBATCH; b++) {
        free(batch[b].raw);
        free(batch[b].out.env);
        free(batch[b].out.in);
        free(batch[b].out.modulated);
    }
    ml_am_destroy(am);
    ml_spectrum_destroy(rf);
    ml_spectrum_destroy(aud);
    return rc;
}
