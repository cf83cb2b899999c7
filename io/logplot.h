/* Picture of a noise log: level history with events marked, and a spectrogram with its colour
 * scale (PNG, SVG or PDF by the file name's extension, cairo).
 * SPDX-License-Identifier: MIT
 *
 * The level history is read back from the rows CSV in two streamed passes and reduced to one
 * min/mean/max bucket per pixel column, the events are streamed from the events CSV and drawn as
 * they are read (spans shaded in the level panel and ticked above the spectrogram, each kind in
 * its colour, with a legend), and the spectrogram comes from a bounded history (dsp/history.h):
 * memory is fixed whatever the log's length. The files' first line (a '#' line saying what is
 * logged) is skipped; fields are read as RFC 4180 CSV (io/csv.h). Axes carry round-number ticks
 * (io/ticks.h): time since the input's start, level in dBFS, frequency (logarithmic for real
 * input, linear for I/Q), and the colour scale in dBFS/Hz.
 */
#ifndef ML_IO_LOGPLOT_H
#define ML_IO_LOGPLOT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "dsp/history.h"
#include "dsp/status.h"

typedef struct {
    const ml_history *sgram; /* columns of band power densities (may be NULL: no spectrogram) */
    const double *band_hz;   /* centre frequency of each history row (nrows values; log-spaced
                                for log_freq, evenly spaced otherwise)                        */
    bool log_freq;           /* draw the frequency axis logarithmically                   */
    double unit_power;       /* a density of unit_power per Hz is drawn as 0 dBFS/Hz      */
    const char *title;
} ml_logplot_spec;

/* Writes the picture to f, in the type of type_path's extension (.png, .svg, .pdf), from rows_csv
 * (columns offset_s, rms_dbfs, peak_dbfs, a_weighted_dbfs by name) and events_csv
 * (start_offset_s, end_offset_s, kind). ML_EIO (cannot read or write; detail in err), ML_EFORMAT
 * (a CSV lacks those columns), ML_EINVAL (no picture type), ML_ENOSIGNAL (no rows), ML_ENOMEM. */
ml_status ml_logplot_write(FILE *f, const char *type_path, const char *rows_csv, const char *events_csv,
                           const ml_logplot_spec *spec, char *err, size_t err_len);

#endif
