/* The one input step (see analyzer/input.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/input.h"

#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/cli.h"
#include "dsp/kind.h"
#include "dsp/modulation.h"
#include "dsp/resolution.h"
#include "dsp/stats.h"

#define CHUNK_FRAMES 4096

static const char *plural(int n)
{
    return n == 1 ? "" : "s";
}

int ml_input_open_file(const ml_input_opts *in, ml_segment *seg)
{
    char err[512];
    memset(seg, 0, sizeof *seg);
    ml_status st = ml_source_open_file(in->path, &seg->src, err, sizeof err);
    if (st != ML_OK) {
        if (st == ML_EIO && err[0]) /* cannot open, not a regular file, ...: the detail says it all */
            return ml_cli_error("%s: %s", in->path, err);
        return ml_cli_error("%s: %s%s%s", in->path, ml_strerror(st), err[0] ? ": " : "", err);
    }
    const ml_source_info *info = ml_source_get_info(seg->src);
    seg->info = info;
    const double rate = info->rate_hz;
    if (info->frames == 0)
        return ml_cli_error("%s: the file holds no audio frames", in->path);
    if (info->channels > ML_MAX_CHANNELS)
        return ml_cli_error("%s: %d channels; at most %d are supported", in->path, info->channels,
                            ML_MAX_CHANNELS);
    if (in->channel > info->channels)
        return ml_cli_error("%s: --channel %ld but the file has %d channel%s", in->path, in->channel,
                            info->channels, plural(info->channels));
    if (in->reference_channel > info->channels)
        return ml_cli_error("%s: --reference-channel %ld but the file has %d channel%s", in->path,
                            in->reference_channel, info->channels, plural(info->channels));
    /* in double first: no --start or --duration may overflow a frame count (round = llround) */
    const double first = round(in->start_s * rate), total = (double)info->frames;
    const double n = in->duration_s < 0 ? total - first : round(in->duration_s * rate);
    if (!(first < total) || !(first + n <= total))
        return ml_cli_error("%s: the segment %.3f s + %.3f s goes past the end of the file (%.3f s)",
                            in->path, in->start_s, in->duration_s < 0 ? 0.0 : in->duration_s,
                            (double)info->frames / rate);
    seg->first = (int64_t)first;
    seg->nframes = (int64_t)n;
    if (seg->first > 0 && ml_source_seek(seg->src, seg->first) != ML_OK)
        return ml_cli_error("%s: cannot seek to %.3f s: %s", in->path, in->start_s,
                            ml_source_detail(seg->src));
    return 0;
}

long ml_input_device_channels(const ml_input_opts *in)
{
    if (in->channels > 0)
        return in->channels;
    long n = in->channel + (in->kind == ML_KIND_IQ ? 1 : 0);
    return in->reference_channel > n ? in->reference_channel : n;
}

int ml_input_open_device(const ml_input_opts *in, ml_live_config *lc, ml_segment *seg)
{
    const long nch = ml_input_device_channels(in);
    if (in->channel + (in->kind == ML_KIND_IQ ? 1 : 0) > nch || in->reference_channel > nch)
        return ml_cli_error("--channels %ld is too few for the channels to analyse", nch);
    lc->device = in->device;
    if (in->rate_hz > 0) /* else the rate the caller chose, or the device's (0) */
        lc->rate_hz = in->rate_hz;
    lc->channels = (int)nch;
    char err[512] = "";
    memset(seg, 0, sizeof *seg);
    /* --kind auto looks at the next channel too (an I/Q pair?) when the device has it */
    int most = 0;
    if (in->kind == ML_KIND_AUTO && in->channels == 0
        && ml_audio_device_channels(in->device, true, &most, err, sizeof err) == ML_OK && most > nch)
        lc->channels = (int)nch + 1;
    ml_status st = ml_source_open_live(lc, &seg->src, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", in->device ? in->device : "default input", err);
    seg->info = ml_source_get_info(seg->src);
    seg->live = true;
    return 0;
}

int ml_input_read(const char *name, ml_segment *seg, float *buf, size_t want, size_t *got, int64_t done)
{
    ml_status st = ml_source_read(seg->src, buf, want, got);
    if (seg->live && (st != ML_OK || *got < want)) {
        seg->ended_early = true;
        seg->nframes = done + (int64_t)*got;
        if (st != ML_OK && !seg->failed) {
            seg->failed = true;
            ml_cli_error("%s: %s", name, ml_source_detail(seg->src));
        }
        st = ML_OK;
    }
    if (st != ML_OK)
        return ml_cli_error("%s: read failed at frame %lld: %s", name, (long long)(seg->first + done),
                            ml_source_detail(seg->src));
    if (*got < want && !seg->live)
        return ml_cli_error("%s: file ends early: %lld of %lld frames could be read", name,
                            (long long)(done + (int64_t)*got), (long long)seg->nframes);
    const size_t nch = (size_t)seg->info->channels, n = *got * nch, i = ml_first_nonfinite(buf, n);
    if (i < n)
        return ml_cli_error("%s: frame %lld, channel %zu: sample is not a finite number (NaN or infinity)",
                            name, (long long)(seg->first + done + (int64_t)(i / nch)), i % nch + 1);
    return 0;
}

/* Pushes the opening `frames` frames of seg's channel(s) ch into s (the complex pair for complex
 * input, else the one channel), then seeks the source back to the segment's start. 0 or an exit
 * status (error printed). */
static int push_opening(const char *name, ml_segment *seg, const ml_channels *ch, int64_t frames, ml_spectrum *s)
{
    float *buf = malloc(CHUNK_FRAMES * ch->stride * sizeof *buf);
    double complex *z = ch->complex_input ? malloc(CHUNK_FRAMES * sizeof *z) : NULL;
    float *mono = malloc(CHUNK_FRAMES * sizeof *mono);
    int rc = buf && (z || !ch->complex_input) && mono ? 0 : ml_cli_error("%s: out of memory", name);
    for (int64_t done = 0; rc == 0 && done < frames;) {
        size_t want = frames - done < CHUNK_FRAMES ? (size_t)(frames - done) : CHUNK_FRAMES, got = 0;
        if ((rc = ml_input_read(name, seg, buf, want, &got, done)) != 0)
            break;
        if (ch->complex_input) {
            ml_channels_split_complex(ch, buf, got, z);
            ml_spectrum_push_complex(s, z, got);
        } else {
            ml_channels_split(ch, buf, got, mono, NULL);
            ml_spectrum_push(s, mono, got);
        }
        done += (int64_t)got;
        if (got < want) /* a live capture ended early */
            break;
    }
    free(buf);
    free(z);
    free(mono);
    if (rc == 0 && ml_source_seek(seg->src, seg->first) != ML_OK)
        rc = ml_cli_error("%s: cannot seek back to the segment start: %s", name, ml_source_detail(seg->src));
    return rc;
}

int ml_input_look_ahead(const char *name, ml_segment *seg, const ml_channels *ch, int64_t frames,
                        ml_spectrum **out)
{
    *out = NULL;
    const double rate = seg->info->rate_hz;
    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    sc.nfft = ml_resolution_nfft(rate, frames, ML_RESOLUTION_SPAN);
    if (sc.nfft == 0)
        return ml_cli_error("%s: %lld frames are too few to analyse (at least 256 needed)", name,
                            (long long)frames);
    /* a quarter-second resolution is plenty to find the carrier; keep several segments */
    while (sc.nfft > 4096 && (int64_t)sc.nfft * 4 > frames)
        sc.nfft /= 2;
    sc.hop = sc.nfft / 2;
    sc.complex_input = ch->complex_input;
    ml_status st = ml_spectrum_create(&sc, out);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", name, ml_strerror(st));
    const int rc = push_opening(name, seg, ch, frames, *out);
    if (rc != 0) {
        ml_spectrum_destroy(*out);
        *out = NULL;
    }
    return rc;
}

/* The Welch spectrum of the analysed channel over the opening `frames` frames at the analysis'
 * resolution (bins of about 0.75 Hz where the frames allow three segments), for the one-channel
 * kind evidence (dsp/kind.h: hum sidebands 50 Hz from the carrier must be resolved); the source
 * is left at the segment's start. */
static int channel_spectrum(const ml_input_opts *in, ml_segment *seg, int64_t frames, ml_spectrum **out)
{
    *out = NULL;
    ml_channels ch;
    if (ml_channels_map(seg->info->channels, in->channel, false, false, 0, &ch) != ML_OK)
        return ml_cli_error("%s: --channel %ld is not in the input", in->path, in->channel);
    ml_spectrum_config sc = ml_spectrum_config_default(seg->info->rate_hz);
    while (sc.nfft > 256 && 2 * (int64_t)sc.nfft > frames)
        sc.nfft /= 2;
    sc.hop = sc.nfft / 2;
    ml_status st = ml_spectrum_create(&sc, out);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", in->path, ml_strerror(st));
    return push_opening(in->path, seg, &ch, frames, *out);
}

/* The pair evidence (dsp/kind.h) of the analysed channel (x, 0-based cx) and the next (y) over the
 * opening `frames` frames, the transform shortened to the frames when they are few; the source is
 * left at the segment's start. */
static int pair_evidence(const ml_input_opts *in, ml_segment *seg, int64_t frames, ml_pair_result *r)
{
    const size_t nch = (size_t)seg->info->channels, cx = (size_t)in->channel - 1;
    ml_pair_config pc = ml_pair_config_default(seg->info->rate_hz);
    while (pc.nfft > 256 && 2 * (int64_t)pc.nfft > frames)
        pc.nfft /= 2;
    ml_pair *q = NULL;
    ml_status st = ml_pair_create(&pc, &q);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", in->path, ml_strerror(st));
    float *buf = malloc(CHUNK_FRAMES * nch * sizeof *buf);
    int rc = buf ? 0 : ml_cli_error("%s: out of memory", in->path);
    for (int64_t done = 0; rc == 0 && done < frames;) {
        size_t want = frames - done < CHUNK_FRAMES ? (size_t)(frames - done) : CHUNK_FRAMES, got = 0;
        if ((rc = ml_input_read(in->path, seg, buf, want, &got, done)) != 0)
            break;
        ml_pair_push(q, buf, got, nch, cx, cx + 1);
        done += (int64_t)got;
        if (got < want)
            break;
    }
    free(buf);
    if (rc == 0)
        ml_pair_get(q, r);
    ml_pair_destroy(q);
    if (rc == 0 && ml_source_seek(seg->src, seg->first) != ML_OK)
        rc = ml_cli_error("%s: cannot seek back to the segment start: %s", in->path,
                          ml_source_detail(seg->src));
    return rc;
}

/* One real channel: an AM IF signal or audio by the evidence of dsp/kind.h; *is_if, its carrier
 * and the reason appended to reason[len] (which holds `used` bytes). */
static int detect_if(const ml_input_opts *in, const ml_analysis_opts *an, ml_segment *seg, int64_t frames,
                     bool *is_if, double *carrier_hz, char *reason, size_t len, size_t used)
{
    *is_if = false;
    if (frames < 256) {
        snprintf(reason + used, len - used, "too short to look for a carrier: audio");
        return 0;
    }
    ml_spectrum *s = NULL;
    int rc = channel_spectrum(in, seg, frames, &s);
    ml_if_evidence_result e;
    ml_status st = rc == 0 ? ml_if_evidence(s, an->audio.mains_hz, &e) : ML_OK;
    ml_spectrum_destroy(s);
    if (rc != 0)
        return rc;
    if (st != ML_OK)
        return ml_cli_error("%s: %s", in->path, ml_strerror(st));
    if (e.verdict == ML_CHANNEL_UNDECIDED) {
        snprintf(reason + used, len - used, "no signal found: audio");
        return 0;
    }
    /* an AM channel needs room around its carrier, clear of the mixer's image (dsp/am.h: at least
     * ML_AM_MIN_BANDWIDTH_HZ a side) */
    double bw = 0, tr = 0;
    if (e.verdict == ML_CHANNEL_IF
        && ml_modulation_channel(seg->info->rate_hz, false, e.carrier_hz, 0, 10000.0, &bw, &tr) != ML_OK) {
        snprintf(reason + used, len - used,
                 "the strongest line (%.1f Hz) lies too close to the Nyquist frequency for an AM channel "
                 "around it: audio",
                 e.carrier_hz);
        return 0;
    }
    *is_if = e.verdict == ML_CHANNEL_IF;
    *carrier_hz = e.carrier_hz;
    ml_if_evidence_reason(&e, reason + used, len - used);
    return 0;
}

int ml_input_kind(ml_input_opts *in, const ml_analysis_opts *an, ml_segment *seg, double look_s,
                  ml_kind *kind, double *carrier_hz, char *reason, size_t len)
{
    static const char *const given[] = {"", "--kind audio", "--kind if", "--kind iq"};
    *kind = in->kind;
    *carrier_hz = an->carrier_hz;
    if (in->kind != ML_KIND_AUTO) {
        snprintf(reason, len, "%s", given[in->kind]);
        return 0;
    }
    int64_t frames = (int64_t)(look_s * seg->info->rate_hz);
    if (frames > seg->nframes)
        frames = seg->nframes;
    size_t used = (size_t)snprintf(reason, len, "--kind auto: ");
    /* two channels from the analysed one on (the reference not counted): I/Q only when they
     * stand in a quadrature relation; otherwise one of them */
    const long from = seg->info->channels - in->channel + 1 - (in->reference_channel >= in->channel ? 1 : 0);
    if (from >= 2 && in->reference_channel != in->channel + 1) {
        ml_pair_result pr;
        int rc = pair_evidence(in, seg, frames, &pr);
        if (rc != 0)
            return rc;
        char why[256];
        ml_pair_reason(&pr, why, sizeof why);
        if (pr.verdict == ML_PAIR_IQ) {
            *kind = ML_KIND_IQ;
            snprintf(reason + used, len - used, "channels %ld and %ld are %s: I/Q", in->channel,
                     in->channel + 1, why);
            return 0;
        }
        const long c1 = in->channel;
        if (pr.verdict == ML_PAIR_SILENT && pr.silent_channel == 1)
            in->channel++; /* the analysed channel is silent: the other one holds the signal */
        used += (size_t)snprintf(reason + used, len - used,
                                 "channels %ld and %ld: %s; channel %ld read alone: ", c1, c1 + 1, why,
                                 in->channel);
        if (used >= len)
            used = len - 1;
    }
    bool is_if = false;
    double fc = NAN;
    const int rc = detect_if(in, an, seg, frames, &is_if, &fc, reason, len, used);
    *kind = is_if ? ML_KIND_IF : ML_KIND_AUDIO;
    if (is_if && isnan(an->carrier_hz))
        *carrier_hz = fc;
    return rc;
}

int ml_input_channels(const ml_input_opts *in, const ml_segment *seg, ml_kind kind, ml_channels *out)
{
    const bool iq = kind == ML_KIND_IQ;
    const int nch = seg->info->channels;
    if (iq && in->channel + 1 > nch)
        return ml_cli_error("%s: --kind iq needs two channels (I and Q) from channel %ld; the %s has %d",
                            in->path, in->channel, seg->live ? "capture" : "file", nch);
    if (in->reference_channel > 0
        && (in->reference_channel == in->channel || (iq && in->reference_channel == in->channel + 1)))
        return ml_cli_error("--reference-channel %ld is one of the measured channels", in->reference_channel);
    if (ml_channels_map(nch, in->channel, iq, in->swap_iq, kind == ML_KIND_AUDIO ? 0 : in->reference_channel,
                        out)
        != ML_OK)
        return ml_cli_error("%s: --channel %ld is not in the input (%d channel%s)", in->path, in->channel,
                            nch, plural(nch));
    return 0;
}

int ml_input_find_carrier(const char *name, ml_segment *seg, const ml_channels *ch, double nominal_hz,
                          double look_s, ml_carrier *car)
{
    const double rate = seg->info->rate_hz;
    int64_t pre = (int64_t)(look_s * rate);
    if (pre > seg->nframes)
        pre = seg->nframes;
    ml_spectrum *look = NULL;
    int rc = ml_input_look_ahead(name, seg, ch, pre, &look);
    if (rc != 0)
        return rc;
    const ml_carrier_config cc = ml_carrier_config_default(rate, ch->complex_input, nominal_hz);
    ml_status st = ml_carrier_find(look, &cc, car);
    ml_spectrum_destroy(look);
    if (st != ML_OK && car->stronger_hz > 0 && !isnan(nominal_hz))
        return ml_cli_error("%s: --carrier %.1f Hz falls on a side frequency of the carrier at %.1f Hz, not on "
                            "a carrier of its own",
                            name, nominal_hz, car->stronger_hz);
    if (st != ML_OK && car->strongest_amplitude > 0 && !isnan(nominal_hz) && isfinite(car->prominence_db))
        return ml_cli_error("%s: near --carrier %.1f Hz nothing stands out as a carrier line (only %.1f dB above "
                            "the spectrum around it; the strongest component lies at %.1f Hz)",
                            name, nominal_hz, car->prominence_db, car->strongest_hz);
    if (st != ML_OK && car->strongest_amplitude > 0 && !isnan(nominal_hz))
        return ml_cli_error(
            "%s: no carrier within +-%.0f Hz of --carrier %.1f Hz (the strongest component lies at "
            "%.1f Hz)",
            name, car->range_hz, nominal_hz, car->strongest_hz);
    if (st != ML_OK)
        return ml_cli_error("%s: no carrier found%s", name,
                            st == ML_ENOSIGNAL ? " (the input is silent)" : "");
    return 0;
}

int ml_input_reference_carrier(const char *path, const ml_input_opts *in, bool iq, double rate_hz,
                               double near_hz, double *c)
{
    ml_input_opts ri = *in;
    ri.path = path;
    ri.start_s = 0;
    ri.duration_s = -1;
    ri.reference_channel = 0;
    ml_segment ref;
    int rc = ml_input_open_file(&ri, &ref);
    ml_channels ch;
    if (rc == 0 && ref.info->rate_hz != rate_hz)
        rc = ml_cli_error("%s: the carrier reference is sampled at %.0f Hz, the capture at %.0f Hz", path,
                          ref.info->rate_hz, rate_hz);
    if (rc == 0 && ml_channels_map(ref.info->channels, in->channel, iq, in->swap_iq, 0, &ch) != ML_OK)
        rc = ml_cli_error("%s: the carrier reference has %d channel%s; the measured channels need %ld", path,
                          ref.info->channels, plural(ref.info->channels), in->channel + (iq ? 1 : 0));
    ml_spectrum *s = NULL;
    if (rc == 0) {
        if (ref.nframes > (int64_t)(10 * rate_hz))
            ref.nframes = (int64_t)(10 * rate_hz);
        rc = ml_input_look_ahead(path, &ref, &ch, ref.nframes, &s);
    }
    if (rc == 0) {
        /* the carrier line near the capture's: within 20 bins and 50 Hz of it, whatever its level */
        ml_carrier_config cc = ml_carrier_config_default(rate_hz, iq, near_hz);
        cc.capture_hz = 20 * rate_hz / (double)ml_spectrum_nfft(s) + 50.0;
        cc.min_rel = 0;
        cc.lo_hz = -rate_hz / 2;
        ml_carrier car;
        if (ml_carrier_find(s, &cc, &car) != ML_OK || !(car.amplitude > 0))
            rc = isnan(near_hz)
                     ? ml_cli_error("%s: no carrier in the carrier reference", path)
                     : ml_cli_error("%s: no carrier near %.1f Hz in the carrier reference", path, near_hz);
        else
            *c = car.amplitude;
    }
    ml_spectrum_destroy(s);
    ml_source_close(ref.src);
    return rc;
}
