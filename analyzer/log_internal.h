/* Private to analyzer/log*.c: the logger's state and the functions its parts share.
 * SPDX-License-Identifier: MIT
 *
 * analyzer/log.c    options, the command, the run (reading, gaps, end, summary, picture);
 * analyzer/log_grid.c   the time grid: intervals and their steps, per-step spectra and
 *                       detectors, the interval's accumulators and its modulation analysis;
 * analyzer/log_events.c events (impulses merged, level changes, gaps, the end) and the summary;
 * analyzer/log_rows.c   the output files (names, rotation, continuation) and the rows.
 */
#ifndef ML_ANALYZER_LOG_INTERNAL_H
#define ML_ANALYZER_LOG_INTERNAL_H

#include <complex.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>

#include "analyzer/log.h"
#include "dsp/aweight.h"
#include "dsp/channels.h"
#include "dsp/detect.h"
#include "dsp/history.h"
#include "dsp/modulation.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"
#include "io/logfile.h"

#define ML_LOG_HUM_N 6       /* hum columns: mains fundamental and harmonics 2..6   */
#define ML_LOG_WORST_N 5     /* worst events kept for the summary                   */
#define ML_LOG_EV_CAP 1024   /* events returned by one detector push                 */
#define ML_LOG_SG_ROWS 128   /* spectrogram bands                                     */
#define ML_LOG_BLOCK 4096    /* frames read at a time                                 */

enum { ML_LOG_IMPULSE, ML_LOG_HUM, ML_LOG_NOISE, ML_LOG_CARRIER, ML_LOG_GAP, ML_LOG_END, ML_LOG_KINDS };
extern const char *const ml_log_kind_name[ML_LOG_KINDS];

typedef struct {
    int kind;
    double start_off, end_off, peak_dbfs, rise_db, start_utc;
} ml_log_summary_event;

typedef struct {
    int64_t start, end;        /* pos of the first impulse's start, the last one's end          */
    double peak_dbfs, rise_db; /* largest of the merged impulses                              */
    long n;                    /* impulses merged; 0 = none pending                             */
} ml_log_impulses;

typedef struct {
    const ml_log_opts *o;
    ml_source *src;
    const ml_source_info *info;
    double rate, start_utc, offset0_s; /* offset_s = offset0_s + pos / rate                 */
    bool is_complex, is_if;
    ml_channels ch;        /* the analysed column(s) of the frames                           */

    /* time grid */
    int64_t pos;           /* frames since the input's start, lost frames included          */
    int64_t origin;        /* pos of the first interval's start                              */
    int64_t ival_frames, step_len;
    int64_t ipos;          /* frames into the current interval                               */
    size_t steps_per_ival; /* K                                                              */

    /* detectors */
    ml_aweight *aw;
    ml_impulse *imp;
    int64_t imp_base;      /* pos of the impulse detector's frame 0                          */
    int64_t imp_counted;   /* pos of an open impulse already counted in a written row, or -1 */
    ml_log_impulses mi;    /* impulse event still open to merging                            */
    ml_change *chg[3];     /* hum, noise, carrier-loss                                       */
    double chg_peak[3];
    ml_spectrum *spec;     /* the step's spectrum                                            */
    size_t nbins;

    /* interval accumulators */
    ml_stats st;
    double asum;
    int64_t data_frames, lost_frames;
    long impulses;
    double *psd, *psd_sum, *scratch;
    size_t nspectra;
    char note[160];

    /* step accumulators */
    double step_sumsq;
    int64_t step_n;

    /* carrier and the interval's modulation analysis (if/iq) */
    double carrier_hz;     /* NAN until found                                                 */
    double carrier_amp;    /* its amplitude when found                                        */
    double reference_c;    /* --carrier-reference's C, or NAN                                 */
    bool mod_failed;       /* the analysis cannot be made for this carrier and interval       */
    ml_modulation *mod;
    bool mod_span;         /* the current interval's span is being analysed                   */
    double mains_hz;

    /* buffers */
    float *buf, *mono;
    double *aout;          /* the A-weighted samples of a chunk                               */
    float *pairs;          /* a chunk's I/Q as (re, im) pairs                                  */
    ml_event *ev;

    /* output */
    ml_logfile *rows, *events;
    char rows_path[1100], events_path[1100];
    int64_t period;        /* rotation period of the open files                              */
    double skip_events_until; /* events starting at or before this offset are already written */
    bool wrote_error;

    /* summary */
    long count[ML_LOG_KINDS];
    long per_hour[24];
    ml_log_summary_event worst[ML_LOG_WORST_N];
    size_t nworst;
    long rows_written;

    ml_history *sgram;     /* --plot: bounded spectrogram of the interval spectra          */
    double band_hz[ML_LOG_SG_ROWS], sg_col[ML_LOG_SG_ROWS];
} ml_logger;

double ml_log_offset_of(const ml_logger *L, int64_t pos);

/* log_rows.c */
/* v with decimals into b[n]; "" (an empty cell) when not finite. */
void ml_log_fmt_num(char *b, size_t n, double v, int decimals);
void ml_log_format_utc(double t, char *b, size_t n);
int64_t ml_log_period_of(const ml_log_opts *o, double utc);
void ml_log_paths_for(const ml_log_opts *o, int64_t period, char *rows, char *events, size_t n);
bool ml_log_csv_field(const char *line, int i, char *b, size_t n);
int ml_log_open_outputs(ml_logger *L, int64_t period, char *last_row, size_t last_len);
/* Writes the current interval's row (its modulation figures in mres, or NULL). */
int ml_log_write_row(ml_logger *L, const ml_modulation_result *mres);

/* log_events.c */
int ml_log_write_event(ml_logger *L, int kind, int64_t start_pos, int64_t end_pos, double peak_dbfs,
                       double rise_db, const char *detail);
int ml_log_flush_impulses(ml_logger *L);
int ml_log_impulse_events(ml_logger *L, size_t n);
int ml_log_change_events(ml_logger *L, int which, size_t n);
int ml_log_push_changes(ml_logger *L, const double value[3], const double level[3]);
void ml_log_print_summary(const ml_logger *L, FILE *f, const char *why);

/* log_grid.c */
ml_status ml_log_make_objects(ml_logger *L);
void ml_log_free_objects(ml_logger *L);
void ml_log_reset_interval(ml_logger *L);
/* The carrier found (frequency, amplitude): the modulation analysis starts with the next interval
 * (ml_log_start_modulation: with the current one, which must not have begun). */
void ml_log_set_carrier(ml_logger *L, double hz, double amplitude);
void ml_log_start_modulation(ml_logger *L);
void ml_log_sgram_bands(ml_logger *L);
/* The spectrogram column of the interval's mean spectrum L->psd into L->sg_col. */
void ml_log_sgram_column(ml_logger *L);
int ml_log_advance(ml_logger *L, const float *buf, size_t n);
int ml_log_finish(ml_logger *L, const char *end_note);

#endif
