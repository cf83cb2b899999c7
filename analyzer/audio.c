/* The audio pipeline of the measure command: the chosen channel through the spectrum, the time
 * statistics and the uncertainty blocks; the figures come from dsp/figures.h and are named by
 * analyzer/values.h.
 * SPDX-License-Identifier: MIT
 *
 * The transform follows the capture's length (ml_audio_plan_transform: the mains lines resolved
 * whenever the length allows). Dropouts -- runs of one repeated value (digital silence, a stuck
 * converter) and discontinuities (dsp/dropout.h) -- are kept out of the figures: every sample
 * waits HOLD frames before it reaches the spectrum and the statistics, long enough for the
 * detector to know whether it belongs to a dropout, and the spectrum then averages only the
 * segments free of them (ml_spectrum_use_selected). A capture that is one dropout from end to end
 * (silence, DC alone) is analysed whole. Memory does not depend on the capture's length.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/imd.h"
#include "analyzer/measure.h"
#include "analyzer/plots.h"
#include "analyzer/uncertainty.h"
#include "analyzer/values.h"
#include "dsp/blocks.h"
#include "dsp/channels.h"
#include "dsp/dropout.h"
#include "dsp/figures.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"

typedef struct {
    ml_measure_opts *o;
    ml_segment *seg;
    ml_channels ch;
    ml_audio_plan plan;
    ml_spectrum_config sc;
    ml_spectrum *spec;
    ml_blocks *blocks;
    ml_stats stats;          /* the samples outside dropouts                                   */
    ml_stats stats_all;      /* every sample                                                   */
    ml_dropout *drop;
    ml_dropout_result *dr;   /* the detector's events (a scratch copy, reused)                 */
    size_t hold;             /* frames each sample waits for the dropout detector              */
    float *buf, *mono;
    ml_bench_pass *bench;
    float *fifo;             /* the waiting samples: fifo[0 .. nfifo)                          */
    unsigned char *tag;      /* 1 for a sample outside every dropout                           */
    size_t nfifo;
    int64_t out;             /* samples passed on so far (index of fifo[0])                    */
} audio_pass;

/* The band against the rate. */
static int check_band(const ml_measure_opts *o, ml_audio_config *a, double rate)
{
    if (a->band_hi_hz > rate / 2)
        a->band_hi_hz = rate / 2;
    if (a->band_lo_hz >= a->band_hi_hz)
        return ml_cli_error("%s: --band starts at %.1f Hz, at or above the Nyquist frequency %.1f Hz",
                            o->in.path, a->band_lo_hz, rate / 2);
    if (a->tone_hz > 0 && (a->tone_hz < a->band_lo_hz || a->tone_hz > a->band_hi_hz))
        return ml_cli_error("--tone %.3f Hz lies outside the band %.1f..%.1f Hz", a->tone_hz, a->band_lo_hz,
                            a->band_hi_hz);
    return 0;
}

/* The band, the transform for the capture's length, the spectrum, the blocks, the dropout
 * detector and the buffers. */
static int prepare(audio_pass *p)
{
    ml_measure_opts *o = p->o;
    ml_audio_config *a = &o->an.audio;
    const ml_source_info *info = p->seg->info;
    const double rate = info->rate_hz;
    int rc = check_band(o, a, rate);
    if (rc != 0)
        return rc;
    ml_status st = ml_audio_plan_transform(rate, p->seg->nframes, o->an.window, a->mains_hz, &p->plan);
    if (st == ML_ENOSIGNAL)
        return ml_cli_error("%s: %lld frames are too few to analyse (at least 256 needed)", o->in.path,
                            (long long)p->seg->nframes);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", o->in.path, ml_strerror(st));
    p->sc = p->plan.spectrum;
    /* the blocks measure the line the whole capture takes as its tone: the strongest outside
     * the mains lines (or the one at --tone), unless there is no tone by decree */
    ml_audio_config bc = *a;
    if (bc.tone_mode == ML_TONE_AUTO)
        bc.tone_mode = ML_TONE_FORCE;
    const ml_dropout_config dc = ml_dropout_config_default(rate);
    st = ml_spectrum_create(&p->sc, &p->spec);
    if (st == ML_OK)
        st = ml_blocks_create(p->spec, &p->sc, &bc, true, &p->blocks);
    if (st == ML_OK)
        st = ml_dropout_create(&dc, &p->drop);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", o->in.path, ml_strerror(st));
    ml_stats_init(&p->stats, info->bits);
    ml_stats_init(&p->stats_all, info->bits);
    p->hold = (size_t)ceil(dc.min_silence_s * rate) + 8;
    rc = ml_input_channels(&o->in, p->seg, ML_KIND_AUDIO, &p->ch);
    if (rc == 0)
        rc = ml_bench_audio_begin(rate, &p->bench);
    p->buf = malloc(ML_BLOCK_FRAMES * p->ch.stride * sizeof *p->buf);
    p->mono = malloc(ML_BLOCK_FRAMES * sizeof *p->mono);
    p->fifo = malloc((p->hold + ML_BLOCK_FRAMES) * sizeof *p->fifo);
    p->tag = malloc((p->hold + ML_BLOCK_FRAMES) * sizeof *p->tag);
    p->dr = malloc(sizeof *p->dr);
    if (rc == 0 && (p->buf == NULL || p->mono == NULL || p->fifo == NULL || p->tag == NULL || p->dr == NULL))
        rc = ml_cli_error("%s: out of memory", o->in.path);
    return rc;
}

/* Tags the k samples at the head of the queue (indices out .. out + k - 1): 0 inside a dropout
 * the detector has found so far. */
static void tag_head(audio_pass *p, size_t k)
{
    memset(p->tag, 1, k);
    ml_dropout_get(p->drop, p->dr);
    const int64_t lo = p->out, hi = p->out + (int64_t)k - 1;
    for (size_t i = 0; i < p->dr->nstored; i++) {
        const ml_dropout_event *e = &p->dr->events[i];
        if (e->end < lo || e->start > hi)
            continue;
        const int64_t a = e->start > lo ? e->start : lo, b = e->end < hi ? e->end : hi;
        memset(p->tag + (a - lo), 0, (size_t)(b - a + 1));
    }
}

/* Passes the k samples at the head of the queue on to the statistics and the spectrum. */
static void pass_on(audio_pass *p, size_t k)
{
    if (k == 0)
        return;
    tag_head(p, k);
    ml_stats_push(&p->stats_all, p->fifo, k);
    for (size_t i = 0; i < k;) { /* the statistics of the runs outside dropouts */
        size_t j = i;
        while (j < k && p->tag[j] == p->tag[i])
            j++;
        if (p->tag[i])
            ml_stats_push(&p->stats, p->fifo + i, j - i);
        i = j;
    }
    ml_spectrum_push_float_tagged(p->spec, p->fifo, p->tag, k);
    ml_bench_audio_push(p->bench, p->fifo, k);
    memmove(p->fifo, p->fifo + k, (p->nfifo - k) * sizeof *p->fifo);
    p->nfifo -= k;
    p->out += (int64_t)k;
}

/* One pass over the segment. */
static int stream(audio_pass *p)
{
    ml_segment *seg = p->seg;
    int64_t done = 0, next = 0;
    bool shown = false;
    int rc = 0;
    while (done < seg->nframes && rc == 0) {
        const size_t want =
            seg->nframes - done < ML_BLOCK_FRAMES ? (size_t)(seg->nframes - done) : ML_BLOCK_FRAMES;
        size_t got = 0;
        if ((rc = ml_input_read(p->o->in.path, seg, p->buf, want, &got, done)) != 0)
            break;
        ml_channels_split(&p->ch, p->buf, got, p->mono, NULL);
        ml_dropout_push(p->drop, p->mono, got);
        memcpy(p->fifo + p->nfifo, p->mono, got * sizeof *p->mono);
        p->nfifo += got;
        if (p->nfifo > p->hold)
            pass_on(p, p->nfifo - p->hold);
        done += (int64_t)got;
        ml_measure_progress(seg, done, &next, &shown);
    }
    if (rc == 0)
        pass_on(p, p->nfifo);
    ml_measure_progress_end(shown);
    return rc;
}

/* The analysis line, and the notes on the transform chosen for the capture's length. */
static void describe_analysis(const audio_pass *p, ml_report *rep)
{
    const ml_measure_opts *o = p->o;
    const ml_audio_config *a = &o->an.audio;
    const double rate = p->seg->info->rate_hz;
    snprintf(rep->analysis, sizeof rep->analysis,
             "%s window, %zu-point FFT (%.3f Hz bins), %zu segments, band %.1f..%.1f Hz",
             ml_window_name(p->sc.window), p->sc.nfft, rate / (double)p->sc.nfft,
             ml_spectrum_segments(p->spec), a->band_lo_hz, a->band_hi_hz);
    ml_measure_plan_notes(rep, &p->plan, o->an.window, (double)p->seg->nframes / rate, 0.0);
}

/* Every spectral figure read from segments that all hold a dropout says so (the level figures of
 * the samples, which leave dropouts out, and the frequencies keep their marks): a gap lowers the
 * tone and adds its edges' splatter to the noise. */
static void dropout_qualifiers(ml_report *rep)
{
    static const char *const kept[] = {"audio.rms_dbfs", "audio.peak_dbfs", "audio.dc_offset_pct",
                                       "audio.clipped_samples", "audio.fundamental_hz", "hum.mains_hz",
                                       "audio.measurement"};
    for (size_t i = 0; i < rep->nmetrics; i++) {
        ml_metric *m = &rep->metrics[i];
        if (!m->valid || (strncmp(m->name, "audio.", 6) != 0 && strncmp(m->name, "hum.", 4) != 0)
            || strncmp(m->name, "audio.imd", 9) == 0)
            continue;
        bool keep = false;
        for (size_t j = 0; j < sizeof kept / sizeof *kept; j++)
            keep = keep || strcmp(m->name, kept[j]) == 0;
        if (keep)
            continue;
        char q[ML_REPORT_WHY_LEN];
        snprintf(q, sizeof q, "%s%sincludes a dropout (every analysis segment holds one)", m->qualifier,
                 m->qualifier[0] ? "; " : "");
        ml_report_qualify(rep, m->name, "%s", q);
    }
}

/* The figures into the report, with the notes that qualify them and their intervals. */
static int report(audio_pass *p, const char *reason, ml_report *rep)
{
    const ml_measure_opts *o = p->o;
    const ml_audio_config *a = &o->an.audio;
    const double rate = p->seg->info->rate_hz;
    ml_measure_describe(rep, o, p->seg, "audio", reason);
    ml_dropout_get(p->drop, p->dr);
    const bool excluded = ml_measure_dropout_notes(rep, p->seg, p->dr, true);
    /* the segments free of dropouts, when any are (else all of them, with the note above) */
    const bool held = excluded && ml_spectrum_use_selected(p->spec, 1) != ML_OK;
    if (held)
        ml_report_note(rep, "every analysis segment holds a dropout: the figures include them");
    const ml_stats *s = excluded && p->stats.count > 0 ? &p->stats : &p->stats_all;
    ml_audio_result ar;
    ml_status st = ml_audio_analyze(p->spec, a, &ar);
    const char *residue =
        st == ML_OK ? ml_figures_no_signal(&ar, s->count ? s->sumsq / (double)s->count : 0) : NULL;
    if (residue != NULL)
        st = ML_ENOSIGNAL;
    const bool ok = st == ML_OK, silent = s->sumsq == 0;
    describe_analysis(p, rep);
    if (!ok && silent)
        ml_report_note(rep, "input is silent: every analysed sample is zero");
    else if (!ok && st == ML_ENOSIGNAL)
        ml_report_note(rep, "no signal in the band %.1f..%.1f Hz (%s)", a->band_lo_hz, a->band_hi_hz,
                       residue ? residue : "nothing but DC");
    else if (!ok && st == ML_EINVAL) /* the only input-dependent cause: the band is too narrow for the bins */
        return ml_cli_error("%s: the band %.1f..%.1f Hz holds too few spectrum bins of %.1f Hz to analyse "
                            "(the sample rate is %.0f Hz); widen --band or give a longer recording",
                            o->in.path, a->band_lo_hz, a->band_hi_hz, rate / (double)p->sc.nfft, rate);
    else if (!ok)
        return ml_cli_error("%s: analysis failed: %s", o->in.path, ml_strerror(st));
    if (ok)
        ml_measure_add_audio(rep, &ar, true);
    else
        ml_measure_add_audio_none(rep, silent ? ML_WHY_SILENT : ML_WHY_NO_SIGNAL);
    if (o->out.plot)
        ml_plots_audio(o->out.plot, p->spec, &ar, ok);
    ml_level_figures lv;
    ml_value v[ML_VALUES_MAX];
    ml_figures_level(s, 1, &lv);
    ml_values_report(rep, v, ml_values_level(&lv, "audio", v));
    if (s->clipped > 0)
        ml_report_note(rep, "clipping: %llu samples at or within 1 LSB of full scale",
                       (unsigned long long)s->clipped);
    if (ok)
        ml_measure_tone_note(rep, &ar, "the recording", "full scale");
    ml_uncertainty_report(p->blocks, rep);
    ml_bench_audio_report(p->bench, &o->an, (int)o->in.channel, p->spec, &ar, ok, lv.rms_dbfs, rep);
    ml_imd_report(rep, ok ? p->spec : NULL, &o->an, ok && ar.tone_present); /* analyzer/imd.c */
    if (held)
        dropout_qualifiers(rep);
    return 0;
}

int ml_measure_audio(ml_measure_opts *o, ml_segment *seg, const char *reason, ml_report *rep)
{
    audio_pass p = {.o = o, .seg = seg};
    int rc = prepare(&p);
    if (rc == 0)
        rc = stream(&p);
    if (rc == 0)
        rc = report(&p, reason, rep);
    free(p.buf);
    free(p.mono);
    free(p.fifo);
    free(p.tag);
    free(p.dr);
    ml_dropout_destroy(p.drop);
    ml_blocks_destroy(p.blocks);
    ml_spectrum_destroy(p.spec);
    ml_bench_audio_end(p.bench);
    return rc;
}
