/* The measurement pictures and PDF records from the analyzer's side: filling ml_plot_data while
 * the pipelines stream (bounded memory), and writing --plot and --report files safely.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_PLOTS_H
#define ML_ANALYZER_PLOTS_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/metrics.h"
#include "dsp/modulation.h"
#include "dsp/rf.h"
#include "dsp/spectrum.h"
#include "io/compare.h"
#include "io/output.h"
#include "io/plot.h"
#include "io/report.h"

/* Audio spectrum (dBFS per bin, log axis over the band) with fundamental, harmonics and hum. */
void ml_plots_audio(ml_plot_data *p, const ml_spectrum *spec, const ml_audio_result *a, bool ok);

/* Envelope window: nframes of the segment at rate; the window starts in the middle of the
 * segment and holds at most 0.1 s (ML_PLOT_MAX_ENV samples). edge: ml_am_edge (envelope
 * sample k belongs to input sample edge + k). with_ref: a reference channel is kept too. */
void ml_plots_begin_envelope(ml_plot_data *p, int64_t nframes, double rate_hz, size_t edge, bool with_ref);
/* Input samples first .. first + n - 1 of the segment; ref[n] the reference channel or NULL. */
void ml_plots_input(ml_plot_data *p, int64_t first, const float *ref, size_t n);
/* The next n envelope samples (any unit; scaled in ml_plots_modulation). */
void ml_plots_envelope(ml_plot_data *p, const double *env, size_t n);

/* The if/iq pictures of a modulation analysis r (dsp/modulation.h): the captured spectrum rf in
 * dBc re the unmodulated carrier's power C^2, linear axis around the carrier, with carrier,
 * the tone's sidebands, occupied bandwidth and mask (may be NULL); the envelope window scaled by
 * env_scale (units of the envelope hook, dsp/modulation.h) into units of C, with the peak
 * readings and the pinch-off level. */
void ml_plots_modulation(ml_plot_data *p, const ml_spectrum *rf, const ml_modulation_result *r,
                         const ml_mask *mask, double env_scale);

/* The whole command line, "modlens measure --kind iq file.wav", from argv (before getopt permutes
 * it), for the PDF record: allocated (the caller frees it), or NULL when out of memory. */
char *ml_plots_cmdline(int argc, char **argv);

/* Checks --plot / --report names (type by extension); 0 or an exit status (error printed). */
int ml_plots_check_paths(const char *plot_path, const char *report_path);

/* Writes the --plot and --report files of a measurement into their outputs' temporaries
 * (io/output.h; either may be NULL), published together by the finish step's commit
 * (analyzer/finish.h); 0 or an exit status (error printed, the failed output discarded). */
int ml_plots_write_measure(ml_output *plot, ml_output *pdf, const ml_report *r, const ml_plot_data *p,
                           const char *cmdline);
/* The same for a comparison (a, b may be NULL: a side read from JSON has no spectrum). */
int ml_plots_write_compare(ml_output *plot, ml_output *pdf, const ml_comparison *c, const ml_plot_data *a,
                           const ml_plot_data *b, const char *cmdline);

#endif
