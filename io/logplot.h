/* Picture of a noise log: level history with events marked, and a spectrogram (PNG, cairo).
 * SPDX-License-Identifier: MIT
 *
 * The level history is read back from the rows CSV in two streamed passes and reduced to one
 * min/mean/max bucket per pixel column, the events are streamed from the events CSV and drawn as
 * they are read, and the spectrogram comes from a bounded history (dsp/history.h): memory is fixed
 * whatever the log's length.
 */
#ifndef ML_IO_LOGPLOT_H
#define ML_IO_LOGPLOT_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/history.h"
#include "dsp/status.h"

typedef struct {
    const ml_history *sgram; /* columns of band powers (may be NULL: no spectrogram)     */
    const double *band_hz;   /* centre frequency of each history row (nrows values)       */
    bool log_freq;           /* draw the frequency axis logarithmically                   */
    double unit_power;       /* a band power of unit_power is drawn as 0 dB               */
    const char *title;
} ml_logplot_spec;

/* Writes png from rows_csv (columns offset_s, rms_dbfs, peak_dbfs, a_weighted_dbfs by name) and
 * events_csv (start_offset_s, end_offset_s, kind). ML_EIO (cannot read or write; detail in err),
 * ML_EFORMAT (a CSV lacks those columns), ML_ENOSIGNAL (no rows), ML_ENOMEM. */
ml_status ml_logplot_write(const char *png, const char *rows_csv, const char *events_csv,
                           const ml_logplot_spec *spec, char *err, size_t err_len);

#endif
