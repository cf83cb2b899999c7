/* The measurement report model and its writers (text, JSON, CSV).
 * SPDX-License-Identifier: MIT
 *
 * A report is a flat list of metrics with dotted names ("audio.thd_pct"), tables attached to a
 * dotted path ("audio.harmonics"), limit checks, notes and an input description. The JSON
 * writer nests the dotted names into objects; the text writer prints a table; the CSV writer
 * prints one row per figure. Writers never exit; they return ML_EIO when the stream fails.
 *
 * Honest figures. A metric that could not be measured is not a number: it is null in JSON, an
 * empty value in CSV and "n/a" in text, and it may carry a short reason (why not). A measured
 * metric may carry a qualifier (how to read it: "noise-limited", "resolution-limited", ...) and
 * may be a bound: ML_BOUND_UPPER means the true value is at most the one given (text "< 0.30"),
 * ML_BOUND_LOWER at least (text "> 60.0"). Where they appear:
 *   JSON  the value stays a number (or null) at its dotted name; three objects nested like the
 *         metrics themselves (as "uncertainty" is) carry the rest, always present, empty when
 *         unused: "reasons" {"hum": {"level_dbc": "capture shorter than 0.4 s"}}, "qualifiers"
 *         {"audio": {"thd_pct": "noise-limited: upper bound"}} and "bounds" {"audio":
 *         {"thd_pct": "upper"}} ("upper" or "lower").
 *   text  "n/a" or "< 0.3000" with a mark "[1]" beside the value; the marks are explained under
 *         the metric table ("[1] audio.thd_pct: noise-limited: upper bound").
 *   CSV   the columns "bound", "qualifier" and "reason" of the figure's row (ml_report_write_csv).
 *   PDF   as text.
 * Numbers are printed to the metric's decimals, and a value that rounds to zero at that precision
 * prints as 0 (never "-0.00") in every format.
 *
 * CSV shape (ML_FORMAT_CSV): NO header row, so that `cat *.csv` of many runs is one table; the
 * columns are fixed, in the order of ML_REPORT_CSV_COLUMNS (ml_report_write_csv_header prints
 * that line), and new columns are only ever added at the end. Every row carries the input file,
 * its kind and the analysed segment (start and length in seconds), then what the row is:
 *   row_kind  "metric" (one figure), "cell" (a table cell, name "audio.harmonics[2].level_dbc"),
 *             "text" (a text field), "input" (a line of the input description: format,
 *             sample_rate_hz, ...), "note" (one note, in the text column), "verdict" (the
 *             report's verdict: pass, fail or unchecked, in the text column).
 *   value     a number or empty (metric not measured); uncertainty the 95 % half-width or empty;
 *   lower_limit, upper_limit, margin: numbers or empty (margin positive inside the limits);
 *   verdict   "pass" / "fail" for a checked figure, else empty.
 * Fields are quoted as RFC 4180 asks (a field holding a comma, a double quote, CR or LF is put in
 * double quotes, inner quotes doubled); lines end in LF.
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
#define ML_REPORT_PATH_LEN 4096   /* PATH_MAX of Linux: a path is never cut in the model       */
#define ML_REPORT_WHY_LEN 128     /* a reason or qualifier, including the terminating NUL      */
#define ML_REPORT_SETTINGS_LEN 512
#define ML_REPORT_MAX_CARD 32     /* card-limited figures listed at most                        */

/* The header line of the CSV report (without the newline), which the report never prints itself. */
#define ML_REPORT_CSV_COLUMNS                                                                        \
    "file,input_kind,start_s,duration_s,row_kind,name,value,unit,uncertainty,bound,lower_limit,"     \
    "upper_limit,margin,verdict,qualifier,reason,text"

/* How a measured value bounds the true one. */
typedef enum {
    ML_BOUND_NONE = 0, /* the value is an estimate of the true value                            */
    ML_BOUND_UPPER,    /* the true value is at most the value ("< 0.30 %": e.g. below the noise) */
    ML_BOUND_LOWER     /* the true value is at least the value ("> 60.0 dB")                      */
} ml_bound;

typedef struct {
    char name[64];    /* dotted JSON path, e.g. "audio.thd_pct"                       */
    const char *unit; /* display unit: "%", "dB", "dBFS", "Hz", "bits", "" ...        */
    int decimals;     /* digits after the point in text and CSV                        */
    bool valid;       /* false: not measurable here (JSON null, text "n/a")            */
    double value;
    bool has_u;       /* an uncertainty was estimated (analyzer/uncertainty.h)         */
    double u;         /* half-width of its 95 % interval, in the metric's unit          */
    ml_bound bound;   /* valid only: whether value bounds the true value                */
    char qualifier[ML_REPORT_WHY_LEN]; /* valid only: how to read it; "" none                  */
    char reason[ML_REPORT_WHY_LEN];    /* !valid only: why it was not measured; "" not given  */
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
    bool pass;        /* valid and within both limits (a bound: wholly within them)    */
    bool undecided;   /* a bound that reaches beyond a limit (an upper bound above a max,
                         a lower bound below a min): neither pass nor fail; pass false  */
    double margin;    /* distance to the nearest limit, positive inside (0 if !valid)   */
} ml_check;

/* A series of points measured one after the other (a sweep's steps): each point carries its own
 * figures, each an ml_metric named by its leaf ("thd_pct") with the states of a report's metrics
 * (measured, bound, not measured with a reason, qualifier), the span of the input it was measured
 * on, and its checks (metric = the figure's leaf). Every point has the same figures in the same
 * order. Where they appear:
 *   JSON  an array at the series' dotted path ("sweep.points"), one object per point: its figures
 *         (null when not measured), "start_s" and "duration_s", and "verdict" ("pass", "fail", or
 *         null without checks); "reasons", "qualifiers" and "bounds" hold an array at the same path
 *         with one object per point (empty when it has none); "checks" lists the point checks too,
 *         as "sweep.points[3].relative_db";
 *   CSV   one "metric" row per figure, named "sweep.points[3].thd_pct", whose start_s and duration_s
 *         are the point's span and whose limit columns are its check's;
 *   text  a table, one line per point, marks "[k]" beside values with a bound, qualifier or
 *         reason (explained under it), and the result of the point's checks;
 *   PDF   as text.
 * The report's verdict counts the point checks with the others. */
#define ML_REPORT_POINT_FIGURES 12
#define ML_REPORT_POINT_CHECKS 4

typedef struct {
    double start_s, duration_s;  /* the span measured, in seconds of the input                 */
    size_t nfigures;
    ml_metric figures[ML_REPORT_POINT_FIGURES];
    size_t nchecks;
    ml_check checks[ML_REPORT_POINT_CHECKS];
} ml_report_point;

typedef struct {
    char path[64];               /* dotted path of the JSON array, e.g. "sweep.points"          */
    char title[64];              /* heading in the text report                                   */
    size_t npoints, cap;
    ml_report_point *points;     /* cap entries, owned by the caller (ml_report_series_alloc)    */
} ml_report_series;

typedef struct {
    /* input */
    char path[ML_REPORT_PATH_LEN];
    char kind[16];           /* "audio", "if", "iq"                                       */
    char kind_reason[384];   /* why that kind                                              */
    char format[64];
    double sample_rate_hz;
    int channels;
    int channel;             /* 1-based channel analysed                                  */
    int64_t frames;
    double duration_s;
    double start_s, analysed_s;
    char limits_path[ML_REPORT_PATH_LEN]; /* "" when none                                   */
    char analysis[512];      /* method summary: window, nfft, segments                     */
    char settings[ML_REPORT_SETTINGS_LEN]; /* settings and calibration in force ("" none):
                                * printed in every format when set (ml_report_settings)     */
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
    /* the sound card's own floor (analyzer/bench.h): with a card profile in force, the figures
     * within 10 dB of what the card itself resolves (each also qualified "card-limited")      */
    bool card_checked;       /* a card profile was in force: JSON "card_limited" is written  */
    size_t ncard_limited;
    char card_limited[ML_REPORT_MAX_CARD][64];
    ml_report_series *series; /* points measured one by one (a sweep), or NULL               */
} ml_report;

typedef enum { ML_FORMAT_TEXT = 0, ML_FORMAT_JSON, ML_FORMAT_CSV } ml_report_format;

/* Appends a metric; returns a pointer to it (NULL when full). value NaN/inf marks it invalid
 * (not measured, no reason given: prefer ml_report_add_missing_why). */
ml_metric *ml_report_add(ml_report *r, const char *name, const char *unit, int decimals, double value);
/* Appends a metric that could not be measured. */
ml_metric *ml_report_add_missing(ml_report *r, const char *name, const char *unit, int decimals);
/* Appends a metric that could not be measured, with the reason (a short phrase, e.g. "capture
 * shorter than 0.4 s: the mains line is not resolved"; cut to ML_REPORT_WHY_LEN - 1 bytes;
 * NULL or "" gives none). NULL when the report is full. */
ml_metric *ml_report_add_missing_why(ml_report *r, const char *name, const char *unit, int decimals,
                                     const char *reason);
/* Withdraws the metric of this exact dotted name: it becomes not measured (value, uncertainty,
 * bound and qualifier dropped) with the reason printf(fmt, ...). Call it before the limits are
 * applied, so that a check sees the metric as not measured. NULL when there is no such metric. */
ml_metric *ml_report_unmeasured(ml_report *r, const char *name, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
/* Sets the qualifier of the measured metric of this exact dotted name to printf(fmt, ...) (e.g.
 * "noise-limited: the harmonics are not above the noise"); the bound is left as it is. NULL when
 * there is no such metric or it is not measured. */
ml_metric *ml_report_qualify(ml_report *r, const char *name, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
/* Makes the measured metric of this exact dotted name a bound (ML_BOUND_UPPER: the true value is
 * at most value; ML_BOUND_LOWER: at least) and sets its qualifier to printf(fmt, ...) (fmt NULL
 * keeps the qualifier). NULL when there is no such metric or it is not measured. */
ml_metric *ml_report_bound(ml_report *r, const char *name, ml_bound bound, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
/* Marks the measured metric of this exact dotted name as limited by the sound card (its value
 * lies within reach of the card's own floor): it is listed in r->card_limited (JSON
 * "card_limited": a list of metric names) and printf(fmt, ...) is added to its qualifier (after
 * "; " when it has one: a text mark and a note). Sets r->card_checked. NULL when there is no such
 * metric, it is not measured, or the list is full. */
ml_metric *ml_report_card_limited(ml_report *r, const char *name, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
/* Sets the settings and calibration in force (printf(fmt, ...); "" clears it). */
void ml_report_settings(ml_report *r, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* Appends a text-valued field (JSON string at the dotted name; a line in the text header). */
void ml_report_add_text(ml_report *r, const char *name, const char *value);
/* Finds a metric by dotted name, or by its last component when that is unique; NULL if absent. */
const ml_metric *ml_report_find(const ml_report *r, const char *name);
/* Appends a note (a warning or remark shown to the user). */
void ml_report_note(ml_report *r, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* "fail" when a check failed, else "undecided" when a check is undecided (a bound beyond its
 * limit), else "pass" when every check passed; "unchecked" without checks (the series' point
 * checks counted with the others). */
const char *ml_report_verdict(const ml_report *r);
/* The checks of r, the series' point checks included: *total, *failed (failed and not undecided)
 * and *undecided. */
void ml_report_check_counts(const ml_report *r, size_t *total, size_t *failed, size_t *undecided);

/* A series of cap points at path ("sweep.points") with its title: the points are allocated
 * (zeroed), npoints 0. ML_ENOMEM, ML_EINVAL (cap 0 or above 1e6). Free with ml_report_series_free. */
ml_status ml_report_series_alloc(ml_report_series *s, const char *path, const char *title, size_t cap);
void ml_report_series_free(ml_report_series *s); /* frees the points and empties s */
/* The next point (zeroed) of s, its span set; NULL when s is full. */
ml_report_point *ml_report_series_add(ml_report_series *s, double start_s, double duration_s);
/* Appends the figure leaf (e.g. "thd_pct") to point p; value NaN/inf: not measured. NULL when full. */
ml_metric *ml_report_point_add(ml_report_point *p, const char *leaf, const char *unit, int decimals,
                               double value);
/* The figure of point p named leaf, or NULL. */
ml_metric *ml_report_point_find(ml_report_point *p, const char *leaf);
/* "pass" / "fail" / "undecided" for a point with checks, NULL without. */
const char *ml_report_point_verdict(const ml_report_point *p);
/* What a metric's mark says as the metric model's calls set it, usable on any ml_metric (a report's
 * or a point's): not measured with a reason, or a bound and/or a qualifier. Each returns m. */
ml_metric *ml_metric_missing(ml_metric *m, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
ml_metric *ml_metric_bound(ml_metric *m, ml_bound bound, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
ml_metric *ml_metric_qualify(ml_metric *m, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* "upper", "lower" or "" for a bound. */
const char *ml_report_bound_name(ml_bound b);

/* v printed with `decimals` digits after the point ("%.*f") into buf[len], except that a value
 * that rounds to zero at that precision prints without a sign ("0.00", never "-0.00"). plus: a
 * '+' before positive values (as "%+.*f", zero still unsigned). A value that is not finite gives
 * "". Every writer prints its numbers through this. */
void ml_report_number(char *buf, size_t len, double v, int decimals, bool plus);
/* A bound's number at decimals, rounded outward (an upper bound up, a lower bound down) so that
 * the printed bound still holds; with ML_BOUND_NONE as ml_report_number. */
void ml_report_bound_number(char *buf, size_t len, double v, int decimals, ml_bound bound);

ml_status ml_report_write(FILE *f, const ml_report *r, ml_report_format fmt);
/* The CSV header line (ML_REPORT_CSV_COLUMNS and a newline), for the one header of a table made
 * of many CSV reports. ML_EIO when f fails. */
ml_status ml_report_write_csv_header(FILE *f);

#endif
