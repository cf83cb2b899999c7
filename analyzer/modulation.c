/* The if/iq pipeline of the measure command: carrier, envelope, modulation and spectrum figures.
 * SPDX-License-Identifier: MIT
 *
 * Two passes over the segment: a short look at its opening seconds finds the carrier
 * (dsp/carrier.h; for --kind auto it also decides whether a one-channel file is an IF capture),
 * then one streamed pass feeds the modulation analysis (dsp/modulation.h), which defines every
 * figure; here they are only checked, named (analyzer/values.h) and noted. Memory does not
 * depend on the segment's length.
 *
 * References:
 * [cfr73.1570] 47 CFR 73.1570(b)(1): AM peaks at most 100 % negative, 125 % positive.
 */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/imd.h"
#include "analyzer/interference.h"
#include "analyzer/measure.h"
#include "analyzer/plots.h"
#include "analyzer/uncertainty.h"
#include "analyzer/values.h"
#include "analyzer/worker.h"
#include "dsp/am.h"
#include "dsp/carrier.h"
#include "dsp/dropout.h"
#include "dsp/figures.h"
#include "dsp/metrics.h"
#include "dsp/modulation.h"
#include "dsp/resolution.h"
#include "dsp/rf.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"

#define MAX_BANDWIDTH_HZ 10000.0
#define INDEX_TOLERANCE 0.02  /* envelope vs spectral index disagreement worth a note          */
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
                return ml_cli_error(
                    "%s: frame %lld, channel %zu: sample %.3g lies beyond +-%.0e (full scale is 1), "
                    "more than the modulation analysis takes",
                    o->in.path, (long long)(seg->first + done + (int64_t)i), col[c] + 1, (double)v,
                    MAX_LEVEL);
        }
    return ml_cli_error("%s: a sample lies beyond +-%.0e", o->in.path, MAX_LEVEL);
}

/* The if/iq pass over one segment: the modulation analysis (dsp/modulation.h) fed on two
 * threads, the capture statistics, and the pictures' data. */
typedef struct {
    ml_measure_opts *o;
    ml_segment *seg;
    bool iq;
    ml_channels ch;
    double nominal_hz;     /* --carrier, NAN when none                                         */
    double c_prov;         /* the provisional C: the reference file's, else the carrier line's */
    bool have_ref_file;
    ml_modulation *mod;
    ml_modulation_batch *batch[NBATCH];
    ml_stats stats[2];     /* the captured channel(s)                                          */
    ml_qp_pass *qp;        /* the quasi-peak readings (analyzer/interference.h)               */
    float *ref;            /* the reference channel of a batch, for the trapezoid picture      */
    ml_imd_envelope *imd;  /* the demodulated audio's intermodulation (analyzer/imd.h)          */
    ml_dropout *drop;      /* dropouts of the captured (I) channel, reported as notes          */
    float *col;            /* that channel of a batch                                          */
} mod_pass;

/* Checks the nominal carrier against the input and maps the channels. */
static int check_input(mod_pass *p, double carrier_hz)
{
    const double rate = p->seg->info->rate_hz, nyq = rate / 2;
    if (!isnan(carrier_hz) && (p->iq ? !(fabs(carrier_hz) < nyq) : !(carrier_hz > 0 && carrier_hz < nyq)))
        return ml_cli_error("--carrier %.1f Hz is outside the captured band (%s%.1f Hz at %.0f Hz sampling)",
                            carrier_hz, p->iq ? "+-" : "0..", nyq, rate);
    return ml_input_channels(&p->o->in, p->seg, p->iq ? ML_KIND_IQ : ML_KIND_IF, &p->ch);
}

/* The positive peak limit the events count above: the profile's, else 125 % (47 CFR 73.1570). */
static double positive_limit(const ml_measure_opts *o, double fallback)
{
    for (size_t i = 0; o->out.limits && i < o->out.limits->n; i++)
        if (strcmp(o->out.limits->items[i].metric, "modulation.positive_peak_pct") == 0
            && o->out.limits->items[i].has_max)
            return o->out.limits->items[i].max;
    return fallback;
}

static void envelope_to_plot(void *ctx, const double *env, size_t n)
{
    ml_plots_envelope(ctx, env, n);
}

/* Carrier, channel, C's reference and the analysis object: everything before the stream. */
static int prepare(mod_pass *p, double carrier_hz)
{
    ml_measure_opts *o = p->o;
    ml_segment *seg = p->seg;
    const double rate = seg->info->rate_hz;
    ml_carrier car;
    int rc = check_input(p, carrier_hz);
    if (rc == 0)
        rc = ml_input_find_carrier(o->in.path, seg, &p->ch, carrier_hz, ML_INPUT_LOOK_S, &car);
    if (rc != 0)
        return rc;
    double bw, transition;
    if ((rc = ml_measure_channel(o->in.path, rate, p->iq, car.frequency_hz, o->an.bandwidth_hz, MAX_BANDWIDTH_HZ, &bw,
                                 &transition))
        != 0)
        return rc;
    double c_file = 0;
    if (o->an.carrier_reference
        && (rc = ml_input_reference_carrier(o->an.carrier_reference, &o->in, p->iq, rate, car.frequency_hz,
                                            &c_file))
               != 0)
        return rc;
    p->have_ref_file = c_file > 0;
    p->c_prov = c_file > 0 ? c_file : car.amplitude;
    if (ml_resolution_nfft(rate, seg->nframes, ML_RESOLUTION_SPAN) == 0)
        return ml_cli_error("%s: %lld frames are too few to analyse", o->in.path, (long long)seg->nframes);
    ml_modulation_config mc =
        ml_modulation_config_default(rate, &p->ch, car.frequency_hz, p->c_prov, seg->nframes);
    mc.bandwidth_hz = bw;
    mc.peak_hold_s = o->an.peak_hold_ms / 1000.0;
    mc.positive_limit_pct = positive_limit(o, mc.positive_limit_pct);
    mc.window = o->an.window;
    mc.audio = o->an.audio;
    mc.single_precision = true; /* rounding near a float capture's own resolution (dsp/cfir.h) */
    mc.uncertainty = true;
    mc.max_batch_frames = BATCH_FRAMES;
    ml_status st = ml_modulation_create(&mc, &p->mod);
    if (st == ML_ENOSIGNAL)
        return ml_cli_error("%s: %lld frames are too few for the channel filter", o->in.path,
                            (long long)seg->nframes);
    if (st == ML_EINVAL) /* the options were checked: what is left is the rate against the filter */
        return ml_cli_error("%s: cannot set up the modulation analysis at %.0f Hz: a %.0f Hz channel filter "
                            "with a %.0f Hz transition would be too long at this sample rate; resample the "
                            "capture to a lower rate",
                            o->in.path, rate, bw, transition);
    if (st == ML_OK && c_file > 0)
        st = ml_modulation_set_reference(p->mod, c_file);
    for (int k = 0; st == ML_OK && k < NBATCH; k++)
        st = ml_modulation_batch_create(p->mod, &p->batch[k]);
    if (st == ML_OK && o->out.plot && (p->ref = malloc(BATCH_FRAMES * sizeof *p->ref)) == NULL)
        st = ML_ENOMEM;
    if (st != ML_OK)
        return ml_cli_error("%s: cannot set up the modulation analysis: %s", o->in.path, ml_strerror(st));
    if (o->out.plot)
        ml_plots_begin_envelope(o->out.plot, seg->nframes, rate, ml_modulation_edge(p->mod), p->ch.has_ref);
    /* the envelope: to the intermodulation's spectrum, then to the picture */
    if (ml_imd_envelope_create(&o->an, rate, seg->nframes, bw, transition,
                               o->out.plot ? envelope_to_plot : NULL, o->out.plot, &p->imd)
        != ML_OK)
        return ml_cli_error("%s: out of memory", o->in.path);
    ml_modulation_on_envelope(p->mod, ml_imd_envelope_hook, p->imd);
    ml_stats_init(&p->stats[0], seg->info->bits);
    ml_stats_init(&p->stats[1], seg->info->bits);
    const ml_dropout_config dc = ml_dropout_config_default(rate);
    if (ml_dropout_create(&dc, &p->drop) != ML_OK || (p->col = malloc(BATCH_FRAMES * sizeof *p->col)) == NULL
        || (p->qp = ml_qp_pass_create(rate, p->iq, car.frequency_hz)) == NULL)
        return ml_cli_error("%s: out of memory", o->in.path);
    return 0;
}

static void feed_job(void *ctx, void *batch)
{
    ml_modulation_feed(ctx, batch);
}

/* The streamed pass on two threads: this one reads, checks, takes the capture statistics and
 * demodulates a batch while the worker feeds the previous batches' output to the spectra (the
 * feed half is the larger). Batches are fed in order, so the figures do not depend on timing. */
static int stream(mod_pass *p)
{
    ml_measure_opts *o = p->o;
    ml_segment *seg = p->seg;
    const size_t nch = p->ch.stride;
    ml_worker *worker = ml_worker_start(feed_job, p->mod); /* NULL: feed runs on this thread */
    int k = 0, rc = 0;
    int64_t done = 0, next = 0;
    bool shown = false;
    while (rc == 0 && done < seg->nframes) {
        const size_t want = seg->nframes - done < BATCH_FRAMES ? (size_t)(seg->nframes - done) : BATCH_FRAMES;
        size_t got = 0;
        /* batch k was last handed over NBATCH submissions ago: submit waited for it to finish */
        float *raw = ml_modulation_batch_frames(p->batch[k]);
        if ((rc = ml_input_read(o->in.path, seg, raw, want, &got, done)) != 0)
            break;
        for (int c = 0; c < (p->iq ? 2 : 1) && rc == 0;
             c++) { /* here: the two threads' shares stay balanced */
            ml_stats_push_strided(&p->stats[c], raw + (c ? p->ch.im : p->ch.re), got, nch);
            if (fmax(-p->stats[c].min, p->stats[c].max) > MAX_LEVEL)
                rc = level_error(o, seg, raw, got, &p->ch, done);
        }
        if (rc != 0)
            break;
        ml_channels_split(&p->ch, raw, got, p->col, NULL);
        ml_dropout_push(p->drop, p->col, got);
        ml_qp_pass_push(p->qp, raw, got, &p->ch); /* this half has room: the feed half is the larger */
        if (o->out.plot) { /* the reference channel's window; the envelope's goes in on the feed thread */
            ml_channels_split_ref(&p->ch, raw, got, p->ref);
            ml_plots_input(o->out.plot, done, p->ch.has_ref ? p->ref : NULL, got);
        }
        ml_modulation_demodulate(p->mod, p->batch[k], got);
        ml_worker_submit(worker, feed_job, p->mod, p->batch[k]);
        k = (k + 1) % NBATCH;
        done += (int64_t)got;
        ml_measure_progress(seg, done, &next, &shown);
    }
    ml_measure_progress_end(shown);
    if (rc == 0) {
        ml_modulation_demodulate_end(p->mod, p->batch[k]);
        ml_worker_submit(worker, feed_job, p->mod, p->batch[k]);
    }
    ml_worker_stop(worker); /* waits for a batch in flight before the buffers go */
    return rc;
}

/* The notes that qualify the figures. */
static void notes(const mod_pass *p, const ml_modulation_result *r, const ml_level_figures *lv,
                  ml_report *rep)
{
    if (r->c_source == ML_C_MEAN)
        ml_report_note(rep,
                       "no unmodulated carrier in the capture: peaks are relative to the mean envelope and "
                       "carrier shift is not measured (give --carrier-reference, or include a carrier-only "
                       "stretch)");
    if (isfinite(r->index) && isfinite(r->index_spectral)
        && fabs(r->index - r->index_spectral) > INDEX_TOLERANCE && !r->peaks_noise_biased)
        ml_report_note(
            rep,
            "envelope and spectral modulation index disagree by %.3f (more than %.2f): the modulation is "
            "not a single clean tone, or it is distorted or over 100 %%",
            fabs(r->index - r->index_spectral), INDEX_TOLERANCE);
    if (r->peaks_noise_biased)
        ml_report_note(rep,
                       "noise: the envelope index exceeds the spectral one by %.4f, about what noise of %.2f %% "
                       "of C does to the held peaks (up to %.2f %%); index_spectral is the better reading",
                       r->index - r->index_spectral, r->noise_pct, r->held_noise_pct);
    if (r->pinch_events + r->reversal_events > 0)
        ml_report_note(rep,
                       "overmodulation: %llu carrier pinch-off and %llu phase-reversal troughs; the carrier was "
                       "off %.3f %% and reversed %.3f %% of the modulated time",
                       (unsigned long long)r->pinch_events, (unsigned long long)r->reversal_events,
                       r->carrier_off_pct, r->overmodulation_pct - r->carrier_off_pct);
    if (r->absent_s > 0)
        ml_report_note(rep,
                       "the carrier was absent for %.2f s (20 ms blocks whose mean envelope is below 10 %% of the "
                       "carrier): those stretches are in no figure",
                       r->absent_s);
    if (lv->clipped > 0)
        ml_report_note(rep, "clipping: %llu samples at or within 1 LSB of full scale",
                       (unsigned long long)lv->clipped);
    (void)p;
}

/* Reasons and qualifiers of the peak figures (dsp/modulation.h says when each applies). */
static void qualify(const ml_modulation_result *r, ml_report *rep)
{
    if (r->positive_peak_why) {
        ml_report_unmeasured(rep, "modulation.positive_peak_held_pct", "%s", r->positive_peak_why);
        if (!isfinite(r->positive_peak_pct))
            ml_report_unmeasured(rep, "modulation.positive_peak_pct", "%s", r->positive_peak_why);
    }
    if (r->negative_peak_why)
        ml_report_unmeasured(rep, "modulation.negative_peak_pct", "%s", r->negative_peak_why);
    if (r->top_noise_pct >= 0.5)
        ml_report_qualify(rep, "modulation.positive_peak_pct",
                          "true peak: noise of %.2f %% of C lifts it by up to about %.1f %%", r->noise_pct,
                          r->top_noise_pct);
    if (r->peaks_noise_biased) {
        static const char *const names[] = {"modulation.index", "modulation.positive_peak_held_pct",
                                            "modulation.negative_peak_pct"};
        for (size_t i = 0; i < sizeof names / sizeof *names; i++)
            ml_report_qualify(rep, names[i], "noise-biased: noise moves held peaks by up to %.2f %% of C "
                              "(index_spectral %.4f)", r->held_noise_pct, r->index_spectral);
    }
    if (r->shift_from_line)
        ml_report_qualify(rep, "modulation.carrier_shift_pct",
                          "from the carrier line: under phase reversal the mean envelope is not the carrier");
    if (r->floor_from_noise)
        ml_report_qualify(rep, "modulation.carrier_off_pct",
                          "noise-limited: the carrier counts as off below %.1f %% of C", r->floor_pct);
}

/* The emission mask's margin, when the profile has one. */
static void mask_values(const mod_pass *p, const ml_modulation_result *r, ml_report *rep)
{
    const ml_limits *l = p->o->out.limits;
    if (l == NULL || !l->has_mask)
        return;
    double margin, woff;
    const ml_status st = ml_modulation_get_mask_margin(p->mod, &l->mask, &margin, &woff);
    const ml_value v[] = {{.name = "spectrum.mask_margin_db", .value = st == ML_OK ? margin : NAN},
                          {.name = "spectrum.mask_worst_offset_hz", .value = st == ML_OK ? woff : NAN}};
    ml_values_report(rep, v, 2);
    const double nyq = p->seg->info->rate_hz / 2, f = r->carrier_hz;
    if (st != ML_OK)
        ml_report_note(rep, "the emission mask lies outside the captured band (+-%.0f Hz around the carrier)",
                       p->iq ? nyq - fabs(f) : fmin(f, nyq - f));
}

/* The figures into the report under their names, with their notes and intervals. */
static int report(mod_pass *p, const char *reason, ml_report *rep)
{
    const ml_measure_opts *o = p->o;
    ml_modulation_result r;
    if (ml_modulation_get_result(p->mod, &r) != ML_OK) {
        if (r.no_carrier != NULL && isfinite(r.carrier_prominence_db))
            return ml_cli_error("%s: no carrier at %.1f Hz: its line stands %.1f dB out of the spectrum around it "
                                "(at least %.0f dB needed)",
                                o->in.path, r.carrier_hz, r.carrier_prominence_db, ML_MODULATION_MIN_PROMINENCE_DB);
        if (r.no_carrier != NULL)
            return ml_cli_error("%s: no carrier at %.1f Hz: %s", o->in.path, r.carrier_hz, r.no_carrier);
        return ml_cli_error(r.samples == 0 ? "%s: no envelope could be measured"
                                           : "%s: the carrier vanishes: no envelope to measure",
                            o->in.path);
    }
    ml_measure_describe(rep, o, p->seg, p->iq ? "iq" : "if", reason);
    if (r.audio_no_signal != NULL)
        ml_report_note(rep, "no modulation in the demodulated audio band: %s", r.audio_no_signal);
    ml_value v[ML_VALUES_MAX];
    const size_t n = ml_values_modulation(&r, p->nominal_hz, p->ch.has_ref, v);
    ml_values_report(rep, v, n - 1); /* spectrum.occupied_bandwidth_hz after the trapezoid's note */
    qualify(&r, rep);
    if (p->ch.has_ref && !r.has_trapezoid)
        ml_report_note(rep, "the reference channel is silent: no trapezoid");
    ml_values_report(rep, v + n - 1, 1);
    mask_values(p, &r, rep);
    ml_measure_add_audio(rep, &r.audio_result, r.audio_valid);
    if (r.audio_valid)
        ml_measure_tone_note(rep, &r.audio_result, "the demodulated audio", "100 % modulation");
    ml_level_figures lv;
    ml_figures_level(p->stats, p->iq ? 2 : 1, &lv);
    ml_values_report(rep, v, ml_values_level(&lv, "capture", v));
    ml_bench_demod_noise_report(ml_modulation_get_audio_spectrum(p->mod), &r.audio_result, r.audio_valid, rep);
    ml_bench_modulation_report(&o->an, &r, lv.rms_dbfs, p->iq, rep);
    ml_qp_pass_report(p->qp, rep);
    char cref[160];
    ml_report_add_text(rep, "modulation.carrier_reference",
                       ml_values_c_source(&r, o->an.carrier_reference, cref, sizeof cref));
    ml_report_add_text(rep, "modulation.overmodulation_kind", ml_values_overmodulation_kind(&r));
    char image[64] = ""; /* a real IF's mixer image, kept in the stop band (dsp/am.h) */
    if (!p->iq)
        snprintf(image, sizeof image, ", the mixer's image %.0f Hz away",
                 ml_am_image_distance_hz(p->seg->info->rate_hz, r.carrier_hz));
    snprintf(rep->analysis, sizeof rep->analysis,
             "carrier %.1f Hz, channel filter +-%.0f Hz (stop band from %.0f Hz%s; %zu taps; %zu samples of "
             "settling left out at each end), %s window, %zu-point FFT%s, peak hold %.3g ms/s, pinch-off floor "
             "%.2f %% of C",
             r.carrier_hz, r.bandwidth_hz, r.bandwidth_hz + r.transition_hz, image, r.filter_taps, r.edge,
             ml_window_name(o->an.window), r.rf_nfft,
             r.spectra_modulated_only ? " over modulated stretches" : "", o->an.peak_hold_ms, r.floor_pct);
    const ml_audio_plan *plan = ml_modulation_get_audio_plan(p->mod);
    const double rate = p->seg->info->rate_hz;
    const size_t used = strlen(rep->analysis);
    snprintf(rep->analysis + used, sizeof rep->analysis - used, "; demodulated audio: %s window, %zu-point FFT (%.3f Hz bins)",
             ml_window_name(plan->spectrum.window), plan->spectrum.nfft, plan->spectrum.rate_hz / (double)plan->spectrum.nfft);
    ml_measure_plan_notes(rep, plan, o->an.window, (double)p->seg->nframes / rate, 2.0 * (double)r.edge / rate);
    notes(p, &r, &lv, rep);
    ml_dropout_result *dr = malloc(sizeof *dr);
    if (dr != NULL && ml_dropout_get(p->drop, dr) == ML_OK && dr->nevents > 0) {
        ml_measure_dropout_notes(rep, p->seg, dr, false);
        ml_report_note(rep, "a dropout in an IF or I/Q capture is a gap in the carrier: the modulation "
                            "figures read it as carrier pinch-off");
    }
    free(dr);
    ml_modulation_uncertainty u;
    ml_modulation_get_uncertainty(p->mod, &u);
    ml_values_report_u(rep, v, ml_values_modulation_u(&u, v));
    rep->u_blocks = u.blocks;
    rep->u_block_s = u.block_s;
    if (o->out.plot)
        ml_plots_modulation(o->out.plot, ml_modulation_get_spectrum(p->mod), &r,
                            o->out.limits && o->out.limits->has_mask ? &o->out.limits->mask : NULL,
                            p->c_prov / r.c);
    ml_imd_envelope_report(p->imd, rep, &o->an, r.audio_valid && r.audio_result.tone_present); /* imd.c */
    return 0;
}

int ml_measure_channel(const char *path, double rate, bool iq, double carrier_hz, double requested_hz,
                       double widest_hz, double *bw_hz, double *transition_hz)
{
    ml_status st = ml_modulation_channel(rate, iq, carrier_hz, requested_hz, widest_hz, bw_hz, transition_hz);
    if (st != ML_OK && *bw_hz > 0)
        return ml_cli_error("%s: --bandwidth %.1f Hz does not fit around a carrier at %.1f Hz sampled at %.0f Hz "
                            "(at most %.1f Hz%s)",
                            path, requested_hz, carrier_hz, rate, *bw_hz,
                            *bw_hz > widest_hz - 0.05 ? ""
                            : iq                      ? ": wider reaches past the band edge"
                                                      : ": wider lets the mixer's image into the channel");
    if (st != ML_OK)
        return ml_cli_error("%s: the carrier at %.1f Hz is too close to %s for a channel filter", path, carrier_hz,
                            iq ? "the band edge" : "0 Hz or the Nyquist frequency");
    return 0;
}

int ml_measure_modulation(ml_measure_opts *o, ml_segment *seg, ml_kind kind, const char *reason,
                          double carrier_hz, ml_report *rep)
{
    mod_pass p = {.o = o, .seg = seg, .iq = kind == ML_KIND_IQ, .nominal_hz = o->an.carrier_hz};
    int rc = prepare(&p, carrier_hz);
    if (rc == 0)
        rc = stream(&p);
    if (rc == 0)
        rc = report(&p, reason, rep);
    for (int k = 0; k < NBATCH; k++)
        ml_modulation_batch_destroy(p.batch[k]);
    ml_modulation_destroy(p.mod);
    ml_imd_envelope_destroy(p.imd);
    ml_dropout_destroy(p.drop);
    ml_qp_pass_destroy(p.qp);
    free(p.ref);
    free(p.col);
    return rc;
}
