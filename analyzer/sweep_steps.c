/* The sweep's two passes over a stepped recording: find the steps, then measure each on its own
 * (analyzer/sweep.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/sweep.h"
#include "dsp/resolution.h"
#include "dsp/spectrum.h"
#include "dsp/sweep.h"

#define CHUNK_FRAMES 32768
#define MAX_BANDWIDTH_HZ 20000.0 /* the widest channel filter chosen by itself: the audio band (a
                                    step's harmonics need room; measure stops at 10 kHz) */

void ml_sweep_run_free(ml_sweep_run *r)
{
    free(r->meas);
    r->meas = NULL;
    r->nsteps = 0;
}

/* Reads n frames at frame first of the segment in chunks, handing each chunk's analysed channel
 * (mono; NULL for if/iq) or frames to fn. 0 or an exit status. */
typedef int chunk_fn(void *ctx, const float *frames, const float *mono, size_t n);

static int read_span(ml_sweep_run *r, int64_t first, int64_t n, chunk_fn *fn, void *ctx)
{
    ml_segment *seg = r->seg;
    const char *name = r->o->m.in.path;
    if (ml_source_seek(seg->src, seg->first + first) != ML_OK)
        return ml_cli_error("%s: cannot seek to frame %lld: %s", name, (long long)(seg->first + first),
                            ml_source_detail(seg->src));
    float *buf = malloc(CHUNK_FRAMES * r->ch.stride * sizeof *buf);
    float *mono = malloc(CHUNK_FRAMES * sizeof *mono);
    int rc = buf && mono ? 0 : ml_cli_error("%s: out of memory", name);
    for (int64_t done = 0; rc == 0 && done < n;) {
        const size_t want = n - done < CHUNK_FRAMES ? (size_t)(n - done) : CHUNK_FRAMES;
        size_t got = 0;
        ml_segment part = *seg; /* reads count from the span's start */
        part.first = seg->first + first;
        part.nframes = n;
        if ((rc = ml_input_read(name, &part, buf, want, &got, done)) != 0)
            break;
        if (got == 0)
            break;
        if (r->kind == ML_KIND_AUDIO)
            ml_channels_split(&r->ch, buf, got, mono, NULL);
        rc = fn(ctx, buf, r->kind == ML_KIND_AUDIO ? mono : NULL, got);
        done += (int64_t)got;
    }
    free(buf);
    free(mono);
    return rc;
}

/* ---- pass 1: the steps ------------------------------------------------------------------- */

static int push_steps(void *ctx, const float *frames, const float *mono, size_t n)
{
    (void)frames;
    return ml_steps_push(ctx, mono, n) == ML_OK ? 0 : ml_cli_error("step search: a sample is not finite");
}

typedef struct {
    ml_modulation *mod;
    ml_steps *steps;
    ml_status st;
} env_ctx;

/* The envelope hook: the envelope (units of the provisional C) into the step search. */
static void envelope_to_steps(void *ctx, const double *env, size_t n)
{
    env_ctx *e = ctx;
    float buf[1024];
    for (size_t i = 0; i < n && e->st == ML_OK; i += 1024) {
        const size_t k = n - i < 1024 ? n - i : 1024;
        for (size_t j = 0; j < k; j++)
            buf[j] = (float)env[i + j];
        e->st = ml_steps_push(e->steps, buf, k);
    }
}

static int push_modulation(void *ctx, const float *frames, const float *mono, size_t n)
{
    (void)mono;
    env_ctx *e = ctx;
    const ml_status st = ml_modulation_push(e->mod, frames, n);
    return st == ML_OK && e->st == ML_OK ? 0 : ml_cli_error("modulation analysis: %s", ml_strerror(st));
}

/* The modulation analysis' configuration for a span of span_frames (carrier, channel, window,
 * audio band as measure sets them). */
static ml_modulation_config mod_config(const ml_sweep_run *r, double c_prov, int64_t span_frames)
{
    const ml_analysis_opts *an = &r->o->m.an;
    ml_modulation_config mc = ml_modulation_config_default(r->seg->info->rate_hz, &r->ch, r->car.frequency_hz,
                                                           c_prov, span_frames);
    mc.bandwidth_hz = r->bw_hz;
    mc.max_bandwidth_hz = MAX_BANDWIDTH_HZ;
    mc.peak_hold_s = an->peak_hold_ms / 1000.0;
    mc.window = an->window;
    mc.audio = an->audio;
    mc.single_precision = true; /* as measure */
    mc.max_batch_frames = CHUNK_FRAMES;
    return mc;
}

/* if/iq: the carrier, the channel and C (--carrier-reference, else from the capture). */
static int modulation_setup(ml_sweep_run *r, double carrier_hz, double *c_file)
{
    ml_measure_opts *o = &r->o->m;
    ml_segment *seg = r->seg;
    const double rate = seg->info->rate_hz;
    const bool iq = r->kind == ML_KIND_IQ;
    int rc = ml_input_find_carrier(o->in.path, seg, &r->ch, carrier_hz, ML_INPUT_LOOK_S, &r->car);
    if (rc != 0)
        return rc;
    double transition;
    if ((rc = ml_measure_channel(o->in.path, rate, iq, r->car.frequency_hz, o->an.bandwidth_hz, MAX_BANDWIDTH_HZ,
                                 &r->bw_hz, &transition))
        != 0)
        return rc;
    *c_file = 0;
    if (o->an.carrier_reference)
        return ml_input_reference_carrier(o->an.carrier_reference, &o->in, iq, rate, r->car.frequency_hz,
                                          c_file);
    return 0;
}

/* if/iq pass 1: the modulation analysis over the whole segment, its envelope into the step
 * search; C from it. */
static int steps_modulation(ml_sweep_run *r, ml_steps *steps, double carrier_hz)
{
    double c_file = 0;
    int rc = modulation_setup(r, carrier_hz, &c_file);
    if (rc != 0)
        return rc;
    const ml_modulation_config mc = mod_config(r, c_file > 0 ? c_file : r->car.amplitude, r->seg->nframes);
    env_ctx e = {.steps = steps, .st = ML_OK};
    ml_status st = ml_modulation_create(&mc, &e.mod);
    if (st == ML_OK && c_file > 0)
        st = ml_modulation_set_reference(e.mod, c_file);
    if (st != ML_OK)
        return ml_cli_error("%s: cannot set up the modulation analysis: %s", r->o->m.in.path,
                            st == ML_ENOSIGNAL ? "too few frames for the channel filter" : ml_strerror(st));
    ml_modulation_on_envelope(e.mod, envelope_to_steps, &e);
    r->edge = ml_modulation_edge(e.mod);
    rc = read_span(r, 0, r->seg->nframes, push_modulation, &e);
    ml_modulation_result res;
    if (rc == 0 && (ml_modulation_finish(e.mod) != ML_OK || ml_modulation_get_result(e.mod, &res) != ML_OK))
        rc = ml_cli_error("%s: the carrier vanishes: no envelope to measure", r->o->m.in.path);
    if (rc == 0) {
        r->c = res.c;
        r->c_source = res.c_source;
    }
    ml_modulation_destroy(e.mod);
    return rc;
}

/* A "step" at a mains multiple far below the loudest step is hum heard between the steps
 * (analyzer/sweep.h). */
static bool is_hum(double f_hz, double level_dbfs, double loudest_dbfs)
{
    if (!(level_dbfs < loudest_dbfs - ML_SWEEP_HUM_DB))
        return false;
    for (int m = 1; m <= ML_STEPS_HUM_ORDERS; m++)
        if (fabs(f_hz / (50.0 * m) - 1) <= 0.01 || fabs(f_hz / (60.0 * m) - 1) <= 0.01)
            return true;
    return false;
}

int ml_sweep_find_steps(ml_sweep_run *r, double carrier_hz)
{
    const double rate = r->seg->info->rate_hz;
    int rc = ml_input_channels(&r->o->m.in, r->seg, r->kind, &r->ch);
    if (rc != 0)
        return rc;
    r->steps_cfg = ml_steps_config_default(rate);
    r->steps_cfg.max_steps = ML_SWEEP_MAX_STEPS;
    if (r->kind != ML_KIND_AUDIO) /* the envelope in units of C: a step modulates at least 0.1 % */
        r->steps_cfg.min_level_dbfs = ML_SWEEP_MIN_MOD_DB;
    ml_steps *steps = NULL;
    if (ml_steps_create(&r->steps_cfg, &steps) != ML_OK)
        return ml_cli_error("%s: cannot set up the step search at %.0f Hz (8 kHz .. 1 MHz)", r->o->m.in.path,
                            rate);
    rc = r->kind == ML_KIND_AUDIO ? read_span(r, 0, r->seg->nframes, push_steps, steps)
                                  : steps_modulation(r, steps, carrier_hz);
    if (rc == 0)
        ml_steps_finish(steps);
    r->nfound = ml_steps_count(steps);
    if (rc == 0 && r->nfound > ML_SWEEP_MAX_STEPS)
        rc = ml_cli_error("%s: %llu steps found; at most %d are measured in one run (give --start and "
                          "--duration)",
                          r->o->m.in.path, (unsigned long long)r->nfound, ML_SWEEP_MAX_STEPS);
    if (rc == 0 && r->nfound > 0 && (r->meas = calloc((size_t)r->nfound, sizeof *r->meas)) == NULL)
        rc = ml_cli_error("%s: out of memory", r->o->m.in.path);
    double loudest = -INFINITY;
    for (uint64_t i = 0; rc == 0 && i < r->nfound; i++) {
        ml_step st;
        ml_steps_get(steps, i, &st);
        loudest = fmax(loudest, st.level_dbfs);
    }
    for (uint64_t i = 0; rc == 0 && i < r->nfound; i++) {
        ml_sweep_meas *m = &r->meas[r->nsteps];
        ml_steps_get(steps, i, &m->step);
        if (is_hum(m->step.frequency_hz, m->step.level_dbfs, loudest)) {
            if (r->nhum < ML_SWEEP_NAMED) {
                r->hum[r->nhum] = m->step;
                r->hum[r->nhum].start += r->edge;
            }
            r->nhum++;
            continue;
        }
        /* if/iq: envelope sample k is input sample edge + k */
        m->first = (int64_t)(m->step.measure_start + r->edge);
        m->nframes = (int64_t)(m->step.measure_end - m->step.measure_start);
        m->frequency_hz = m->step.frequency_hz;
        m->index = m->carrier_shift_pct = NAN;
        r->nsteps++;
    }
    /* the steady tones too short to be steps: the oldest still kept first */
    r->nskipped = ml_steps_skipped_count(steps);
    const uint64_t base = r->nskipped > ML_STEPS_MAX_SKIPPED ? r->nskipped - ML_STEPS_MAX_SKIPPED : 0;
    for (uint64_t i = 0; rc == 0 && base + i < r->nskipped && i < ML_SWEEP_NAMED; i++)
        if (ml_steps_get_skipped(steps, base + i, &r->skipped[i]) == ML_OK)
            r->skipped[i].start += r->edge;
    ml_steps_destroy(steps);
    return rc;
}

/* ---- pass 2: each step ------------------------------------------------------------------- */

/* A figure that was not measured, with its reason. */
static ml_figure no_figure(ml_audio_why why)
{
    return (ml_figure){.state = ML_FIG_NONE, .value = NAN, .why = why};
}

static int push_spectrum(void *ctx, const float *frames, const float *mono, size_t n)
{
    (void)frames;
    ml_spectrum_push(ctx, mono, n);
    return 0;
}

/* audio: the step's spectrum and its analysis with the step's frequency as the tone. */
static int measure_audio(ml_sweep_run *r, ml_sweep_meas *m)
{
    const double rate = r->seg->info->rate_hz;
    ml_spectrum_config sc;
    if (ml_sweep_step_transform(rate, m->nframes, m->frequency_hz, r->o->m.an.window, &sc) != ML_OK) {
        m->why_not = "the step is too short or its tone too close to the Nyquist frequency";
        return 0;
    }
    ml_spectrum *spec = NULL;
    if (ml_spectrum_create(&sc, &spec) != ML_OK)
        return ml_cli_error("%s: cannot set up a %zu-point spectrum", r->o->m.in.path, sc.nfft);
    int rc = read_span(r, m->first, m->nframes, push_spectrum, spec);
    ml_audio_config ac = r->o->m.an.audio;
    ac.tone_hz = m->frequency_hz;
    ac.tone_mode = ML_TONE_FORCE;
    ac.band_lo_hz = fmin(ac.band_lo_hz, m->frequency_hz / 2);
    ac.band_hi_hz = fmin(fmax(ac.band_hi_hz, 1.5 * m->frequency_hz), rate / 2);
    ml_audio_result ar;
    if (rc == 0 && ml_audio_analyze(spec, &ac, &ar) == ML_OK) {
        m->analysed = true;
        m->level = ar.figures.fundamental;
        m->thd = ar.figures.thd;
        m->thdn = ar.figures.thdn;
        if (ar.figures.fundamental_hz.state == ML_FIG_MEASURED)
            m->frequency_hz = ar.fundamental_hz;
        m->window = sc.window;
        m->nfft = sc.nfft;
    } else if (rc == 0) {
        m->why_not = "the step's spectrum could not be analysed";
    }
    ml_spectrum_destroy(spec);
    return rc;
}

/* if/iq: the modulation analysis of the step's span, C fixed from pass 1 when it was heard. */
static int measure_modulation(ml_sweep_run *r, ml_sweep_meas *m)
{
    if (m->frequency_hz > r->bw_hz) {
        m->why_not = "the tone lies outside the channel filter";
        return 0;
    }
    /* the span whose envelope covers the measured part (the filter's settling at each end) */
    const int64_t edge = (int64_t)r->edge;
    const int64_t a = m->first - edge > 0 ? m->first - edge : 0;
    const int64_t b = m->first + m->nframes + edge < r->seg->nframes ? m->first + m->nframes + edge
                                                                      : r->seg->nframes;
    const bool fixed = r->c_source == ML_C_REFERENCE || r->c_source == ML_C_QUIET;
    ml_modulation_config mc = mod_config(r, fixed ? r->c : r->car.amplitude, b - a);
    /* the demodulated audio's bins (its spectrum keeps this width when it halves the rate) and a
     * window that resolves a low tone there (dsp/sweep.h) */
    const double rate = r->seg->info->rate_hz;
    const size_t nfft = ml_resolution_nfft(rate, b - a - 2 * edge, mc.resolution);
    if (nfft > 0)
        mc.window = ml_sweep_window(m->frequency_hz / (rate / (double)nfft), mc.window);
    m->window = mc.window;
    mc.audio.tone_hz = m->frequency_hz;
    mc.audio.tone_mode = ML_TONE_FORCE;
    mc.audio.band_lo_hz = fmin(mc.audio.band_lo_hz, m->frequency_hz / 2);
    env_ctx e = {.st = ML_OK};
    ml_status st = ml_modulation_create(&mc, &e.mod);
    if (st == ML_ENOSIGNAL) {
        ml_modulation_destroy(e.mod);
        m->why_not = "the step is too short for the channel filter";
        return 0;
    }
    if (st == ML_OK && fixed)
        st = ml_modulation_set_reference(e.mod, r->c);
    if (st != ML_OK) {
        ml_modulation_destroy(e.mod);
        return ml_cli_error("%s: cannot set up the modulation analysis: %s", r->o->m.in.path,
                            ml_strerror(st));
    }
    int rc = read_span(r, a, b - a, push_modulation, &e);
    ml_modulation_result res;
    if (rc == 0 && ml_modulation_finish(e.mod) == ML_OK && ml_modulation_get_result(e.mod, &res) == ML_OK) {
        m->analysed = true;
        const ml_audio_result *ar = &res.audio_result;
        m->level = res.audio_valid ? ar->figures.fundamental : no_figure(ML_WHY_TONE_NOT_CLEAR);
        m->thd = res.audio_valid ? ar->figures.thd : no_figure(ML_WHY_TONE_NOT_CLEAR);
        m->thdn = res.audio_valid ? ar->figures.thdn : no_figure(ML_WHY_TONE_NOT_CLEAR);
        if (res.audio_valid && ar->figures.fundamental_hz.state == ML_FIG_MEASURED)
            m->frequency_hz = ar->fundamental_hz;
        m->index = res.index;
        m->carrier_shift_pct = res.carrier_shift_pct;
        m->nfft = res.rf_nfft;
    } else if (rc == 0) {
        m->why_not = "no envelope: the carrier vanishes";
    }
    ml_modulation_destroy(e.mod);
    return rc;
}

int ml_sweep_measure_steps(ml_sweep_run *r)
{
    int rc = 0;
    bool shown = false;
    int64_t next = 0;
    for (size_t i = 0; i < r->nsteps && rc == 0; i++) {
        ml_sweep_meas *m = &r->meas[i];
        m->level = m->thd = m->thdn = no_figure(ML_WHY_OK);
        rc = r->kind == ML_KIND_AUDIO ? measure_audio(r, m) : measure_modulation(r, m);
        ml_measure_progress(r->seg, m->first + m->nframes, &next, &shown);
    }
    ml_measure_progress_end(shown);
    if (rc != 0 || r->kind != ML_KIND_AUDIO)
        return rc;
    /* a hum run the segmentation read off its frequency (broken up by a weak step beside it, its
     * few frames give a coarse estimate) is hum by the frequency its own analysis measured */
    double loudest = -INFINITY;
    for (size_t i = 0; i < r->nsteps; i++)
        loudest = fmax(loudest, r->meas[i].step.level_dbfs);
    size_t kept = 0;
    for (size_t i = 0; i < r->nsteps; i++) {
        ml_sweep_meas *m = &r->meas[i];
        if (isfinite(m->frequency_hz) && is_hum(m->frequency_hz, m->step.level_dbfs, loudest)) {
            if (r->nhum < ML_SWEEP_NAMED) {
                r->hum[r->nhum] = m->step;
                r->hum[r->nhum].frequency_hz = m->frequency_hz;
                r->hum[r->nhum].start += r->edge;
            }
            r->nhum++;
            continue;
        }
        if (kept != i)
            r->meas[kept] = *m;
        kept++;
    }
    r->nsteps = kept;
    return rc;
}
