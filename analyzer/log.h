/* The log command's options and its run on an open input (analyzer/log.c).
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_LOG_H
#define ML_ANALYZER_LOG_H

#include <stdbool.h>

#include "analyzer/measure.h"
#include "io/source.h"

typedef struct {
    const char *input;      /* file path, or NULL with a device                   */
    const char *device;     /* --device NAME|INDEX                                 */
    double device_rate_hz;  /* --rate (live; 0 = device default)                  */
    long device_channels;   /* --channels (live; 0 = device default)              */
    const char *out, *events, *plot;
    double interval_s, seconds, rotate_h, pace; /* seconds 0 / rotate_h 0 / pace 0: off */
    bool have_start;
    double start_utc;       /* --start-time, seconds since 1970 UTC               */
    ml_kind kind;           /* ML_KIND_AUDIO, ML_KIND_IF or ML_KIND_IQ             */
    long channel;           /* 1-based                                            */
    double carrier_hz, bandwidth_hz, mains_hz; /* NAN / 0 / 0 = choose            */
    double impulse_db, hum_db, noise_db, loss_db;
} ml_log_opts;

/* Parses argv (argv[0] = "log"). 0 ok, -1 help printed, else an exit status (error printed). */
int ml_log_parse(int argc, char **argv, ml_log_opts *o);

/* Logs src (any ml_source: file or live; frames may be -1) whose first frame is at start_utc
 * (seconds since 1970 UTC) until its end, o->seconds, SIGINT/SIGTERM or a read error. Writes
 * rows, events, summary (stdout) and plot. Does not close src. Returns 0, 1 when the input failed
 * mid-way (logged as an input-end event), or 2 after a printed error. */
int ml_log_run(const ml_log_opts *o, ml_source *src, double start_utc);

#endif
