/* The log command's options and its run on an open input (analyzer/log*.c).
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_LOG_H
#define ML_ANALYZER_LOG_H

#include <stdbool.h>

#include "analyzer/options.h"
#include "io/source.h"

typedef struct {
    ml_input_opts in;       /* FILE or --device (--rate, --channels, --seconds), --kind, --channel */
    ml_analysis_opts an;    /* --mains, --band, --carrier, --bandwidth, --carrier-reference, ...  */
    const char *out, *events, *plot;
    const char *timezone;   /* --timezone, NULL: the system's                                     */
    bool new_log;           /* --new-log: an --out holding another log starts a new file beside it */
    double interval_s, rotate_h, pace; /* rotate_h 0 / pace 0: off                                */
    bool have_start;
    double start_utc;       /* --start-time, seconds since 1970 UTC                               */
    double impulse_db, hum_db, noise_db, loss_db, level_db;
    bool have_cal;          /* --fullscale-dbm and --rf-hz given                                   */
    double fullscale_dbm;   /* --fullscale-dbm: input power (dBm) of the full-scale reference      */
    double rf_hz;           /* --rf-hz: the receive (radio) frequency                              */
} ml_log_opts;

/* Parses argv (argv[0] = "log"). 0 ok, -1 help printed, else an exit status (error printed). */
int ml_log_parse(int argc, char **argv, ml_log_opts *o);

/* Logs src (any ml_source: file or live; frames may be -1) whose first frame is at start_utc
 * (seconds since 1970 UTC) until its end, o->in.seconds (0: no limit), SIGINT/SIGTERM or a read
 * error. o->in.kind is the kind the input step decided (ML_KIND_AUTO is read as audio). Every
 * output (rows, events, state, --plot) is checked before anything is written; an error found at
 * the start writes nothing. Writes rows, events, the state beside them, summary (stdout) and
 * plot. Does not close src. Sets the process's time zone (TZ) to --timezone when given. Returns
 * 0, 1 when the input failed mid-way (logged as an input-end event), or 2 after a printed
 * error. */
int ml_log_run(const ml_log_opts *o, ml_source *src, double start_utc);

#endif
