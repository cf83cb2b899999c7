/* The one finish step of the reporting commands (measure, live, compare): before the analysis,
 * the outputs are checked against the inputs and the limits loaded; after it, limits -> pictures
 * and PDF -> report -> exit status.
 * SPDX-License-Identifier: MIT
 *
 * watch and log report as they go (a screen or --plain lines; CSV rows written one by one) and
 * end with their own exit status; they share the option groups and the input step instead.
 */
#ifndef ML_ANALYZER_FINISH_H
#define ML_ANALYZER_FINISH_H

#include <stdbool.h>
#include <stddef.h>

#include "analyzer/limits.h"
#include "analyzer/options.h"
#include "io/compare.h"
#include "io/plot.h"
#include "io/report.h"

/* Checks the --plot/--report names, loads --limits into *limits (out->limits then points at it),
 * and refuses an output that names one of inputs[ninputs] (NULL entries are skipped) or another
 * output (capture_path, --save, counts as one). 0 or an exit status (error printed). */
int ml_finish_prepare(ml_output_opts *out, ml_limits *limits, const char *const *inputs, size_t ninputs,
                      const char *capture_path);

typedef struct {
    const ml_output_opts *out;
    ml_report *report;              /* a measurement (its limits are applied here), or NULL     */
    const ml_comparison *comparison; /* or a comparison (limits applied to its sides already)  */
    const ml_plot_data *plot;       /* the pictures' data (A's for a comparison), or NULL      */
    const ml_plot_data *plot_b;     /* a comparison's B side, or NULL                          */
    const char *cmdline;            /* for the PDF record                                      */
    bool input_failed;              /* the input failed (a device fault): exit 2 once written  */
} ml_finish_job;

/* Limits (a measurement's), then --plot and --report, then the report or comparison to --output
 * (complete or not at all); returns the exit status: 2 after an error (printed) or a failed
 * input, 1 when a check failed or a comparison found a counted metric worse, else 0. */
int ml_finish(const ml_finish_job *job);

#endif
