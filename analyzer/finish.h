/* The one finish step of the reporting commands (measure, live, compare): before the analysis,
 * every file the run reads and writes is registered and checked (io/output.h) and the limits
 * loaded; after it, limits -> pictures and PDF -> report -> one commit -> exit status.
 * SPDX-License-Identifier: MIT
 *
 * Every output (the report or standard output, --plot, --report, live's --save) is written into
 * a temporary and published together with the others by one commit, only when everything was
 * written: an error on any path leaves no file behind (ml_finish_files_free removes what was not
 * published). The one exception is live's capture: --save keeps it whenever frames arrived, even
 * when the analysis or the report failed (ml_finish_capture_end, ml_finish_failed).
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
#include "io/output.h"
#include "io/plot.h"
#include "io/report.h"

/* A file the run reads: no output may replace it. */
typedef struct {
    const char *path;         /* NULL: none                                                    */
    const char *what;         /* its name in messages ("the recording", "the carrier reference") */
} ml_finish_input;

/* The files a run writes, registered and checked by ml_finish_prepare. A member is NULL when not
 * asked for; report is standard output when there is no --output. */
typedef struct {
    ml_output_set *set;
    ml_output *report, *plot, *pdf, *save;
    bool capturing;           /* save was begun (ml_finish_capture_begin) and not yet ended     */
} ml_finish_files;

/* Checks the --plot/--report names, loads --limits into *limits (out->limits then points at it),
 * registers inputs[ninputs] and the limits profile as inputs and the report (--output or
 * standard output), capture_path (live's --save, or NULL), --plot and --report as outputs, and
 * refuses any output that cannot or must not be written (io/output.h: an input, another output,
 * not a regular file, an unwritable folder, ...). 0 with *files holding the checked outputs
 * (release them with ml_finish_files_free on every path), or an exit status (error printed;
 * *files then holds nothing). */
int ml_finish_prepare(ml_output_opts *out, ml_limits *limits, const ml_finish_input *inputs, size_t ninputs,
                      const char *capture_path, ml_finish_files *files);

/* Removes every output not published and frees the set (safe after a commit, and twice). */
void ml_finish_files_free(ml_finish_files *files);

/* live's --save: begins the capture's temporary and gives its descriptor in *fd for the capture
 * to be written through (io/audio.h save_fd; -1 without --save). 0 or an exit status (error
 * printed). */
int ml_finish_capture_begin(ml_finish_files *files, int *fd);

/* Ends the capture after its source was closed (which completed the file): it then waits for the
 * commit, or is dropped when no frame arrived. No-op without --save or when it was not begun.
 * 0 or an exit status (error printed: the capture could not be written, and is dropped). */
int ml_finish_capture_end(ml_finish_files *files, bool frames_arrived);

typedef struct {
    const ml_output_opts *out;
    ml_finish_files *files;         /* the checked outputs (ml_finish_prepare)                 */
    ml_report *report;              /* a measurement (its limits are applied here), or NULL     */
    const ml_comparison *comparison; /* or a comparison (limits applied to its sides already)  */
    const ml_plot_data *plot;       /* the pictures' data (A's for a comparison), or NULL      */
    const ml_plot_data *plot_b;     /* a comparison's B side, or NULL                          */
    const char *cmdline;            /* the whole command line, for the PDF record              */
    bool input_failed;              /* the input failed (a device fault): exit 2 once written  */
} ml_finish_job;

/* Limits (a measurement's), then --plot and --report, then the report or comparison, each into
 * its output's temporary, then one commit publishing them all (with an ended capture). Returns
 * the exit status: 2 after an error (printed; nothing of the report, pictures or PDF is
 * published, an ended capture still is) or a failed input, 1 when a check failed or a
 * comparison found a counted metric worse, else 0. */
int ml_finish(const ml_finish_job *job);

/* The run failed before its report with exit status rc (error printed): publishes only what a
 * failure keeps, live's capture when it was ended; returns rc, or 2 when that publishing fails
 * (printed). */
int ml_finish_failed(ml_finish_files *files, int rc);

#endif
