/* The sweep command's parts: options, the two passes over a stepped recording, the report, and
 * play-and-measure on a device.
 * SPDX-License-Identifier: MIT
 *
 * A sweep reads a recording twice (a capture is recorded into a file first, analyzer/sweep_live.c):
 *  1. the steps: dsp/steps.h on the analysed channel (audio), or on the envelope of the modulation
 *     analysis over the whole segment (if/iq; that pass also gives C from the carrier-only pauses);
 *  2. each step's measured part on its own: its Welch spectrum (dsp/sweep.h chooses the
 *     transform) through ml_audio_analyze with the step's frequency as the tone (audio), or the
 *     modulation analysis on the step's span with C fixed from pass 1 (if/iq).
 * Memory is bounded: the steps found (at most ML_SWEEP_MAX_STEPS) and one step's analysis at a
 * time.
 */
#ifndef ML_ANALYZER_SWEEP_H
#define ML_ANALYZER_SWEEP_H

#include <stdbool.h>
#include <stddef.h>

#include "analyzer/input.h"
#include "analyzer/measure.h"
#include "analyzer/plan.h"
#include "dsp/carrier.h"
#include "dsp/metrics.h"
#include "dsp/modulation.h"
#include "dsp/steps.h"

#define ML_SWEEP_MAX_STEPS 4096
#define ML_SWEEP_DROP_DB 3.0 /* the band edges' level re the reference (the -3 dB points) */
/* if/iq: a step's tone modulates the carrier by at least 0.1 % (-60 dB re 100 %); weaker ripple
 * of the envelope (a quantised carrier's, hum's) is no step */
#define ML_SWEEP_MIN_MOD_DB (-60.0)
/* A steady tone within 1 % of a mains multiple (m x 50 or 60 Hz, m = 1..6) more than this far below
 * the loudest step is hum heard in the pauses (or under a step lost in it), not a step: it is left
 * out and counted (a real step at 50 Hz lies within a few tens of dB of the others) */
#define ML_SWEEP_HUM_DB ML_STEPS_HUM_DB
#define ML_SWEEP_NAMED 8 /* tones left out that the notes name one by one (the rest are counted) */

typedef struct {
    ml_measure_opts m;        /* input, analysis and output groups; m.in.path the FILE or "live" */
    double reference_hz;      /* --reference-hz (default 1000)                                   */
    ml_plan_opts plan;        /* --freqs, --levels, --step-seconds, --pause-seconds (a device)    */
} ml_sweep_opts;

/* One step's measurement. Frames count from the segment's first frame, in the input's time. */
typedef struct {
    ml_step step;             /* as dsp/steps.h found it (if/iq: moved to the input's time)       */
    int64_t first, nframes;   /* the part measured                                               */
    double frequency_hz;      /* the step's (phase-advance) frequency                            */
    bool analysed;            /* pass 2 ran on it (else why_not says why)                         */
    const char *why_not;
    ml_figure level;          /* audio: the fundamental's power re full scale; if/iq: the
                                 demodulated tone's power in units of C (0.5 = 100 %)           */
    ml_figure thd, thdn;      /* power ratios (dsp/metrics.h)                                     */
    double index;             /* if/iq: modulation.index of the step; NAN otherwise              */
    double carrier_shift_pct; /* if/iq                                                            */
    ml_window_type window;    /* audio: the step's window                                         */
    size_t nfft;
} ml_sweep_meas;

/* The two passes' state over one segment. */
typedef struct {
    ml_sweep_opts *o;
    ml_segment *seg;
    ml_kind kind;             /* ML_KIND_AUDIO, ML_KIND_IF or ML_KIND_IQ                          */
    ml_channels ch;
    /* if/iq */
    ml_carrier car;
    double bw_hz;
    size_t edge;              /* envelope sample k belongs to input sample edge + k              */
    double c;                 /* C for every step (pass 1), and where it came from               */
    ml_c_source c_source;
    /* the steps */
    ml_steps_config steps_cfg;
    size_t nsteps;
    ml_sweep_meas *meas;      /* nsteps entries (malloc)                                           */
    uint64_t nfound;          /* steps dsp/steps.h found (more than ML_SWEEP_MAX_STEPS: refused)  */
    size_t nhum;              /* of those, hum left out (ML_SWEEP_HUM_DB)                         */
    ml_step hum[ML_SWEEP_NAMED];     /* the first of them (named in a note, input time)          */
    uint64_t nskipped;               /* steady tones too short to measure (dsp/steps.h)          */
    ml_step skipped[ML_SWEEP_NAMED]; /* the first of them (named in a note, input time)          */
} ml_sweep_run;

/* Pass 1 (analyzer/sweep_steps.c): finds the steps of r->seg (r->kind and r->o set; for if/iq
 * also finds the carrier and C). 0 or an exit status (error printed). */
int ml_sweep_find_steps(ml_sweep_run *r, double carrier_hz);
/* Pass 2: measures each step. 0 or an exit status (error printed). */
int ml_sweep_measure_steps(ml_sweep_run *r);
void ml_sweep_run_free(ml_sweep_run *r);

/* The whole analysis of an open segment into rep (its series and groups) and the pictures' data
 * (analyzer/sweep.c): kind, both passes, the report. series is the caller's (freed by it). 0 or
 * an exit status. */
int ml_sweep_analyse(ml_sweep_opts *o, ml_segment *seg, ml_report *rep, ml_report_series *series);

/* What a sweep fills and hands to ml_finish: the report (the caller's, in static storage: it is
 * large), its series and the pictures' data. */
typedef struct {
    ml_report *rep;
    ml_report_series ser;
    ml_plot_data pd;
} ml_sweep_output;
/* Clears rep and sets out up empty around it; o->m.out.plot points at out->pd when pictures or a
 * PDF report are asked for (out must stay where it is until ml_sweep_output_free). */
void ml_sweep_output_init(ml_sweep_output *out, ml_report *rep, ml_sweep_opts *o);
void ml_sweep_output_free(ml_sweep_output *out);

/* Play-and-measure (analyzer/sweep_live.c): plays o's plan on the output while capturing the
 * input into a temporary file (or --save's), measures the round trip as 'live --play-tone' does,
 * then analyses the capture as a file; finishes the report. An exit status. */
int ml_sweep_live(ml_sweep_opts *o, ml_finish_files *files, const char *cmdline);

#endif
