/* Shared parts of the measure command: options, report helpers, the two pipelines.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_MEASURE_H
#define ML_ANALYZER_MEASURE_H

#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>

#include "analyzer/finish.h"
#include "analyzer/input.h"
#include "analyzer/limits.h"
#include "analyzer/options.h"
#include "dsp/dropout.h"
#include "dsp/metrics.h"
#include "dsp/window.h"
#include "io/plot.h"
#include "io/report.h"

#define ML_BLOCK_FRAMES 4096

/* Options of measure, live and compare (watch takes the same groups). */
typedef struct {
    ml_input_opts in;
    ml_analysis_opts an;
    ml_output_opts out;
    const char *input2;       /* compare: the second input B                                */
} ml_measure_opts;

/* Parses the options and ninputs input files into o (1: measure, 2: compare, 0: live, which also
 * takes the capture options); 0, -1 after --help, or
 * an exit status (error printed). argv[0] names the command in messages. */
int ml_measure_parse(int argc, char **argv, ml_measure_opts *o, int ninputs);
/* Analyses o->in.path into rep (no limits: the finish step applies them, analyzer/finish.h); 0 or
 * an exit status (error printed). */
int ml_measure_analyse(ml_measure_opts *o, ml_report *rep);

/* Adds a registered metric (unit and precision from the registry); NAN -> not measured. */
void ml_measure_add(ml_report *r, const char *name, double value);
/* The audio metrics (audio.*, hum.*) with their states, and their tables (the lines above the
 * noise) from an analysis; ok false -> nulls. */
void ml_measure_add_audio(ml_report *r, const ml_audio_result *a, bool ok);
/* The audio metrics, every one not measurable for the reason why (dsp/metrics.h). */
void ml_measure_add_audio_none(ml_report *r, ml_audio_why why);
/* The tone decision of a (dsp/metrics.h) as the text audio.measurement ("tone", or "hum and
 * noise") and, without a clear tone, a note beginning with `what` ("the recording", "the
 * demodulated audio") that says why and what the hum and noise are relative to (`re`: "full
 * scale", "100 % modulation"). */
void ml_measure_tone_note(ml_report *r, const ml_audio_result *a, const char *what, const char *re);
/* The notes on the analysis transform of plan (ml_audio_plan_transform): a window other than the
 * preferred one, and hum not measurable or a lower bound on a capture of capture_s seconds (the
 * length needed: the plan's plus overhead_s, what the capture loses before the analysis). */
/* The channel filter's one-sided width and transition for a carrier at carrier_hz (dsp/modulation.h
 * ml_modulation_channel: requested_hz, or the widest up to widest_hz when 0): 0, or exit status 2
 * with one line naming path (a --bandwidth that does not fit, saying the widest that does and why;
 * a carrier with no room for a channel). */
int ml_measure_channel(const char *path, double rate, bool iq, double carrier_hz, double requested_hz,
                       double widest_hz, double *bw_hz, double *transition_hz);
void ml_measure_plan_notes(ml_report *rep, const ml_audio_plan *plan, ml_window_type preferred, double capture_s,
                           double overhead_s);

/* ml_finish_prepare for o's inputs (the recording or recordings A and B, the carrier reference)
 * and outputs; 0 with *files to release by ml_finish_files_free, or an exit status (error
 * printed). */
int ml_measure_prepare(ml_measure_opts *o, ml_limits *limits, ml_finish_files *files);

/* The work of a measure, live or compare run on its parsed options and checked files
 * (analyzer/finish.h): an exit status (error printed). */
typedef int ml_measure_body(ml_measure_opts *o, ml_finish_files *files, const char *cmdline, void *ctx);

/* The frame of measure, live and compare: parses argv (ninputs as for ml_measure_parse), checks
 * the files (ml_measure_prepare), runs body(o, files, cmdline, ctx), then removes every file not
 * published. cmdline is the whole command line taken before getopt permuted argv
 * (ml_plots_cmdline; freed here, NULL allowed). Returns the exit status (0 after --help). */
int ml_measure_command(int argc, char **argv, int ninputs, char *cmdline, ml_measure_body *body, void *ctx);
/* Resolves the kind and runs its pipeline on the open segment. */
int ml_measure_run(ml_measure_opts *o, ml_segment *seg, ml_report *rep);
/* live's --help (analyzer/live.c). */
void ml_live_usage(FILE *f);
/* Where a tone of tone_hz played from frame `preroll` on (after silence) comes back in channel
 * (1-based) of seg, read from its start (analyzer/live.c, 'live --play-tone'): *onset the first
 * frame above the threshold (4 x the opening 0.1 s's peak, at least -70 dBFS), *latency the
 * round trip in frames. 0 or an exit status (error printed, naming name). */
int ml_live_find_onset(const char *name, long channel, double tone_hz, ml_segment *seg, uint64_t preroll,
                       int64_t *onset, int64_t *latency);

/* The dropouts r of the segment (dsp/dropout.h) as notes with their times (file time, s),
 * saying whether they were left out of the figures; a silence run still going on at the end of a
 * live capture marks seg->went_silent (the input stopped delivering). True when samples were
 * left out (left_out, and not a capture that is one value from end to end). */
bool ml_measure_dropout_notes(ml_report *rep, ml_segment *seg, const ml_dropout_result *r, bool left_out);
/* Fills the report's input description. */
void ml_measure_describe(ml_report *r, const ml_measure_opts *o, const ml_segment *seg, const char *kind,
                         const char *reason);
/* Progress on stderr when it is a terminal and the job is long. */
void ml_measure_progress(const ml_segment *seg, int64_t done, int64_t *next, bool *shown);
void ml_measure_progress_end(bool shown);
/* The audio pipeline (analyzer/audio.c): fills rep; 0 or an exit status (error already printed). */
int ml_measure_audio(ml_measure_opts *o, ml_segment *seg, const char *reason, ml_report *rep);
/* The if/iq pipeline (analyzer/modulation.c): fills rep; returns 0 or an exit status (error
 * already printed). kind is ML_KIND_IF or ML_KIND_IQ; reason says why. */
int ml_measure_modulation(ml_measure_opts *o, ml_segment *seg, ml_kind kind, const char *reason,
                          double carrier_hz, ml_report *rep);

#endif
