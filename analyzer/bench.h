/* Levels in volts, weighted noise, the sound card's own floor and the settings file: what the
 * commands add to their options and reports (the figures themselves: dsp/benchfig.h, dsp/card.h).
 * SPDX-License-Identifier: MIT
 *
 * After its options are parsed a command calls ml_bench_setup: the settings file (analyzer/
 * settings.h) fills what the command line left unset, the calibration file and the card profile
 * are read (strict readers, io/cardfile.h), and what was applied is kept for the report. The
 * audio pass feeds its samples to the BS.468-4 quasi-peak meter and reports the weighted noise,
 * the levels in volts and the card-limited figures from one call; the modulation pass reports the
 * captured levels in volts from one call; the report's settings line comes from ml_bench_finish.
 */
#ifndef ML_ANALYZER_BENCH_H
#define ML_ANALYZER_BENCH_H

#include <stdbool.h>
#include <stddef.h>

#include "analyzer/options.h"
#include "dsp/benchfig.h"
#include "dsp/figures.h"
#include "dsp/metrics.h"
#include "dsp/modulation.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"
#include "io/report.h"

/* Which settings a command takes (ml_bench_setup's use). */
enum {
    ML_BENCH_DEVICE = 1 << 0,  /* device                                                      */
    ML_BENCH_OUTPUT = 1 << 1,  /* output_device                                               */
    ML_BENCH_MAINS = 1 << 2,   /* mains                                                       */
    ML_BENCH_LIMITS = 1 << 3,  /* limits                                                      */
    ML_BENCH_CARD = 1 << 4,    /* card                                                        */
    ML_BENCH_CAL = 1 << 5,     /* calibration, full_scale_dbu                                 */
};

/* Applies the settings file (unless an->no_settings) to what the command line left unset among
 * `use`, reads the calibration file (an->full_scale_dbu) and the card profile (an->card), checks
 * --card-correct, and records what was applied (an->settings_text, an->cal_source). out may be
 * NULL (no limits). 0 or an exit status (error printed: "modlens: FILE: problem"). */
int ml_bench_setup(unsigned use, ml_input_opts *in, ml_analysis_opts *an, ml_output_opts *out);

/* The audio pass's share: the quasi-peak meter over the analysed samples. */
typedef struct ml_bench_pass ml_bench_pass;

/* NULL (and 0) when the meter cannot run at rate_hz (outside 32 kHz .. 384 kHz: the QP reading
 * is then not measured); an exit status for a failure (error printed). */
int ml_bench_audio_begin(double rate_hz, ml_bench_pass **out);
void ml_bench_audio_push(ml_bench_pass *p, const float *x, size_t n); /* NULL p: no-op        */
/* The weighted noise, the volts (with a calibration) and the card-limited marks (with a card
 * profile) of the analysis a of spec (ok false: not measured) into rep; channel is the analysed
 * one (1-based) and rms_dbfs the capture's level. */
void ml_bench_audio_report(const ml_bench_pass *p, const ml_analysis_opts *an, int channel,
                           const ml_spectrum *spec, const ml_audio_result *a, bool ok, double rms_dbfs,
                           ml_report *rep);
void ml_bench_audio_end(ml_bench_pass *p); /* NULL is a no-op                                  */

/* if/iq: the captured levels in volts (carrier.level_dbu for a real IF, capture.rms_dbu) with a
 * calibration, and the note of what the calibration applies to. */
void ml_bench_modulation_report(const ml_analysis_opts *an, const ml_modulation_result *r,
                                double capture_rms_dbfs, bool iq, ml_report *rep);

/* if/iq: the weighted noise of the demodulated audio (audio.noise_a_dbfs, audio.snr_a_db,
 * audio.noise_468_dbfs), from its spectrum aud and the analysis a made on it (ok false: not
 * measured), in dB re 100 % modulation like the pass's other audio figures (dsp/benchfig.h). No
 * quasi-peak reading: the meter runs on the captured audio of an audio pass only. */
void ml_bench_demod_noise_report(const ml_spectrum *aud, const ml_audio_result *a, bool ok, ml_report *rep);

/* The settings and calibration in force into the report's settings line. */
void ml_bench_finish(const ml_analysis_opts *an, ml_report *rep);

/* The settings line's text for the analysis options into buf[len] (watch prints it). */
void ml_bench_settings_text(const ml_analysis_opts *an, char *buf, size_t len);

/* The figures of an audio analysis that a card profile limits, for watch's plain lines: the
 * short names, comma-separated, into buf[len] ("" none). */
void ml_bench_card_limited_names(const ml_analysis_opts *an, int channel, const ml_audio_plain_figures *f,
                                 const ml_noise_figures *n, char *buf, size_t len);

/* log: with a calibration, the row header's level columns rms_dbfs, peak_dbfs, a_weighted_dbfs
 * renamed rms_dbu, peak_dbu, a_weighted_dbu (a static copy of header; header itself without
 * one), and their values converted (dBFS + full scale; NAN stays NAN). */
const char *ml_bench_log_header(const ml_analysis_opts *an, const char *header);
void ml_bench_log_levels(const ml_analysis_opts *an, double *rms, double *peak, double *a_weighted);

#endif
