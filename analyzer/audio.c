/* The audio pipeline of the measure command: the chosen channel through the spectrum, the time
 * statistics and the uncertainty blocks; the figures come from dsp/figures.h and are named by
 * analyzer/values.h.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/imd.h"
#include "analyzer/measure.h"
#include "analyzer/plots.h"
#include "analyzer/uncertainty.h"
#include "analyzer/values.h"
#include "dsp/blocks.h"
#include "dsp/channels.h"
#include "dsp/figures.h"
#include "dsp/resolution.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"

typedef struct {
    ml_measure_opts *o;
    ml_segment *seg;
    ml_channels ch;
    ml_spectrum_config sc;
    ml_spectrum *spec;
    ml_blocks *blocks;
    ml_stats stats;
    float *buf, *mono;
    ml_bench_pass *bench;
} audio_pass;

/* The band against the rate, the spectrum, the blocks and the buffers. */
static int prepare(audio_pass *p)
{
    ml_measure_opts *o = p->o;
    ml_audio_config *a = &o->an.audio;
    const ml_source_info *info = p->seg->info;
    const double rate = info->rate_hz;
    if (a->band_hi_hz > rate / 2)
        a->band_hi_hz = rate / 2;
    if (a->band_lo_hz >= a->band_hi_hz)
        return ml_cli_error("%s: --band starts at %.1f Hz, at or above the Nyquist frequency %.1f Hz",
                            o->in.path, a->band_lo_hz, rate / 2);
    if (a->tone_hz > 0 && (a->tone_hz < a->band_lo_hz || a->tone_hz > a->band_hi_hz))
        return ml_cli_error("--tone %.3f Hz lies outside the band %.1f..%.1f Hz", a->tone_hz, a->band_lo_hz,
                            a->band_hi_hz);
    p->sc = ml_spectrum_config_default(rate);
    p->sc.window = o->an.window;
    p->sc.nfft = ml_resolution_nfft(rate, p->seg->nframes, ML_RESOLUTION_SPAN);
    p->sc.hop = ml_resolution_hop(p->sc.nfft, ML_RESOLUTION_SPAN);
    if (p->sc.nfft == 0)
        return ml_cli_error("%s: %lld frames are too few to analyse (at least 256 needed)", o->in.path,
                            (long long)p->seg->nframes);
    ml_status st = ml_spectrum_create(&p->sc, &p->spec);
    if (st == ML_OK)
        st = ml_blocks_create(p->spec, &p->sc, a, false, &p->blocks);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", o->in.path, ml_strerror(st));
    ml_stats_init(&p->stats, info->bits);
    int rc = ml_input_channels(&o->in, p->seg, ML_KIND_AUDIO, &p->ch);
    if (rc == 0)
        rc = ml_bench_audio_begin(rate, &p->bench);
    p->buf = malloc(ML_BLOCK_FRAMES * p->ch.stride * sizeof *p->buf);
    p->mono = malloc(ML_BLOCK_FRAMES * sizeof *p->mono);
    if (rc == 0 && (p->buf == NULL || p->mono == NULL))
        rc = ml_cli_error("%s: out of memory", o->in.path);
    return rc;
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
        ml_stats_push(&p->stats, p->mono, got);
        ml_spectrum_push(p->spec, p->mono, got);
        ml_bench_audio_push(p->bench, p->mono, got);
        done += (int64_t)got;
        ml_measure_progress(seg, done, &next, &shown);
    }
    ml_measure_progress_end(shown);
    return rc;
}

/* The figures into the report, with the notes that qualify them and their intervals. */
static int report(audio_pass *p, const char *reason, ml_report *rep)
{
    const ml_measure_opts *o = p->o;
    const ml_audio_config *a = &o->an.audio;
    const double rate = p->seg->info->rate_hz;
    ml_measure_describe(rep, o, p->seg, "audio", reason);
    ml_audio_result ar;
    ml_status st = ml_audio_analyze(p->spec, a, &ar);
    const ml_stats *s = &p->stats;
    const char *residue =
        st == ML_OK ? ml_figures_no_signal(&ar, s->count ? s->sumsq / (double)s->count : 0) : NULL;
    if (residue != NULL)
        st = ML_ENOSIGNAL;
    const bool ok = st == ML_OK;
    snprintf(rep->analysis, sizeof rep->analysis,
             "%s window, %zu-point FFT (%.3f Hz bins), %zu segments, band %.1f..%.1f Hz",
             ml_window_name(o->an.window), p->sc.nfft, rate / (double)p->sc.nfft,
             ml_spectrum_segments(p->spec), a->band_lo_hz, a->band_hi_hz);
    if (!ok && s->sumsq == 0)
        ml_report_note(rep, "input is silent: every analysed sample is zero");
    else if (!ok && st == ML_ENOSIGNAL)
        ml_report_note(rep, "no signal in the band %.1f..%.1f Hz (%s)", a->band_lo_hz, a->band_hi_hz,
                       residue ? residue : "DC only?");
    else if (!ok && st == ML_EINVAL) /* the only input-dependent cause: the band is too narrow for the bins */
        return ml_cli_error("%s: the band %.1f..%.1f Hz holds too few spectrum bins of %.1f Hz to analyse "
                            "(the sample rate is %.0f Hz); widen --band or give a longer recording",
                            o->in.path, a->band_lo_hz, a->band_hi_hz, rate / (double)p->sc.nfft, rate);
    else if (!ok)
        return ml_cli_error("%s: analysis failed: %s", o->in.path, ml_strerror(st));
    ml_measure_add_audio(rep, &ar, ok);
    if (o->out.plot)
        ml_plots_audio(o->out.plot, p->spec, &ar, ok);
    ml_level_figures lv;
    ml_value v[ML_VALUES_MAX];
    ml_figures_level(s, 1, &lv);
    ml_values_report(rep, v, ml_values_level(&lv, "audio", v));
    if (s->clipped > 0)
        ml_report_note(rep, "clipping: %llu samples at or within 1 LSB of full scale",
                       (unsigned long long)s->clipped);
    if (ok && ar.fundamental_power < 10.0 * ar.noise_power)
        ml_report_note(rep, "no clear test tone: the strongest component is less than 10 dB above the noise");
    ml_uncertainty_report(p->blocks, rep);
    ml_bench_audio_report(p->bench, &o->an, (int)o->in.channel, p->spec, &ar, ok, lv.rms_dbfs, rep);
    ml_imd_report(rep, ok ? p->spec : NULL, &o->an); /* intermodulation: analyzer/imd.c */
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
    ml_blocks_destroy(p.blocks);
    ml_spectrum_destroy(p.spec);
    ml_bench_audio_end(p.bench);
    return rc;
}
