/* The measurement report model and its writers (text, JSON, CSV).
 * SPDX-License-Identifier: MIT
 *
 * A report is a flat list of metrics with dotted names ("audio.thd_pct"), tables attached to a
 * dotted path ("audio.harmonics"), limit checks, notes and an input description. The JSON
 * writer nests the dotted names into objects; the text writer prints a table; the CSV writer
 * prints one row per metric. Writers never exit; they return ML_EIO when the stream fails.
 */
#ifndef ML_IO_REPORT_H
#define ML_IO_REPORT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "dsp/status.h"

#define ML_REPORT_MAX_METRICS 128
#define ML_REPORT_MAX_TABLES 8
#define ML_REPORT_MAX_COLS 6
#define ML_REPORT_MAX_ROWS 64
#define ML_REPORT_MAX_CHECKS 128
#define ML_REPORT_MAX_NOTES 16
#define ML_REPORT_NOTE_LEN 256
#define ML_REPORT_MAX_TEXTS 16

typedef struct {
    char name[64];    /* dotted JSON path, e.g. "audio.thd_pct"                       */
    const char *unit; /* display unit: "%", "dB", "dBFS", "Hz", "bits", "" ...        */
    int decimals;     /* digits after the point in text and CSV                        */
    bool valid;       /* false: not measurable here (JSON null, text "n/a")            */
    double value;
    bool has_u;       /* an uncertainty was estimated (analyzer/uncertainty.h)         */
    double u;         /* half-width of its 95 % interval, in the metric's unit          */
} ml_metric;

typedef struct {
    char name[64];    /* dotted JSON path, e.g. "modulation.overmodulation_kind"      */
    char value[96];
} ml_text;

typedef struct {
    char path[64];                          /* dotted path of the JSON array            */
    char title[64];                         /* heading in the text report               */
    size_t ncols, nrows;
    const char *cols[ML_REPORT_MAX_COLS];   /* JSON keys, e.g. "frequency_hz"            */
    int decimals[ML_REPORT_MAX_COLS];
    double cell[ML_REPORT_MAX_ROWS][ML_REPORT_MAX_COLS];
} ml_table;

typedef struct {
    char metric[64];  /* dotted metric name                                           */
    const char *unit;
    int decimals;
    bool valid;       /* the metric was measured                                       */
    double value;
    bool has_min, has_max;
    double min, max;
    bool pass;        /* valid and within both limits                                  */
    double margin;    /* distance to the nearest limit, positive inside (0 if !valid)   */
} ml_check;

typedef struct {
    /* input */
    char path[1024];
    char kind[16];           /* "audio", "if", "iq"                                       */
    char kind_reason[160];   /* why that kind                                              */
    char format[64];
    double sample_rate_hz;
    int channels;
    int channel;             /* 1-based channel analysed                                  */
    int64_t frames;
    double duration_s;
    double start_s, analysed_s;
    char limits_path[1024];  /* "" when none                                               */
    char analysis[320];      /* method summary: window, nfft, segments                     */
    size_t u_blocks;         /* blocks behind the uncertainties (0: none estimated)         */
    double u_block_s;        /* length of one block in seconds                              */
    size_t nmetrics;
    ml_metric metrics[ML_REPORT_MAX_METRICS];
    size_t ntables;
    ml_table tables[ML_REPORT_MAX_TABLES];
    size_t ntexts;
    ml_text texts[ML_REPORT_MAX_TEXTS];
    size_t nchecks;
    ml_check checks[ML_REPORT_MAX_CHECKS];
    size_t nnotes;
    char notes[ML_REPORT_MAX_NOTES][ML_REPORT_NOTE_LEN];
} ml_report;

typedef enum { ML_FORMAT_TEXT = 0, ML_FORMAT_JSON, ML_FORMAT_CSV } ml_report_format;

/* Appends a metric; returns a pointer to it (NULL when full). value NaN/inf marks it invalid. */
ml_metric *ml_report_add(ml_report *r, const char *name, const char *unit, int decimals, double value);
/* Appends a metric that could not be measured. */
ml_metric *ml_report_add_missing(ml_report *r, const char *name, const char *unit, int decimals);
/* Appends a text-valued field (JSON string at the dotted name; a line in the text header). */
void ml_report_add_text(ml_report *r, const char *name, const char *value);
/* Finds a metric by dotted name, or by its last component when that is unique; NULL if absent. */
const ml_metric *ml_report_find(const ml_report *r, const char *name);
/* Appends a note (a warning or remark shown to the user). */
void ml_report_note(ml_report *r, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* "pass" when every check passed, "fail" when one failed, "unchecked" without checks. */
const char *ml_report_verdict(const ml_report *r);

ml_status ml_report_write(FILE *f, const ml_report *r, ml_report_format fmt);

#endif
