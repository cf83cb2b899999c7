/* The comparison model (A against B, metric by metric) and its writers (text, JSON, CSV), and
 * the reader of a saved JSON measurement report.
 * SPDX-License-Identifier: MIT
 *
 * The analyzer fills the rows (values, difference, uncertainty and verdict come from it); the
 * writers only lay them out. Writers never exit; they return ML_EIO when the stream fails.
 *
 * CSV (ML_FORMAT_CSV): like the measurement's, no header row, fixed columns in the order of
 * ML_COMPARE_CSV_COLUMNS (new ones only ever appended), RFC 4180 quoting, LF line ends. Every
 * row carries both files and their kinds, then row_kind: "metric" (one compared figure: the
 * values, b - a, its uncertainty, the verdict, whether it counts for the exit status ("yes" /
 * "no"), the limits and each side's margin and pass/fail where a limit applies; bound_a, bound_b
 * "upper" or "lower" for a side that is only a bound), "note" (in the text column) and one
 * "verdict" row ("worse" or "not worse", in the text column).
 */
#ifndef ML_IO_COMPARE_H
#define ML_IO_COMPARE_H

#include <stdbool.h>
#include <stdio.h>

#include "dsp/status.h"
#include "io/report.h"

#define ML_COMPARE_CSV_COLUMNS                                                                        \
    "file_a,file_b,kind_a,kind_b,row_kind,metric,unit,a,b,difference,uncertainty,verdict,counted,"   \
    "lower_limit,upper_limit,margin_a,margin_b,pass_a,pass_b,text,bound_a,bound_b"

typedef struct {
    char metric[64];     /* dotted name                                                   */
    const char *unit;
    int decimals;
    bool a_valid, b_valid;
    double a, b;         /* values (meaningful when valid)                                 */
    ml_bound a_bound, b_bound; /* a value that is only a bound (io/report.h): "< 0.30"     */
    double difference;   /* b - a (both valid)                                             */
    double uncertainty;  /* 95 % half-width of the difference, tolerance included           */
    const char *verdict; /* "better", "worse", "same", "changed" (no direction), "n/a",
                            "undecided" (a bound on either side leaves the order open)    */
    bool counted;        /* takes part in the exit status                                  */
    bool has_limit;      /* a limit applies: a_pass and b_pass are meaningful              */
    char limit[48];      /* "<= 1.0000", ... or ""                                         */
    bool a_pass, b_pass;
} ml_compare_row;

typedef struct {
    const ml_report *a, *b; /* the two reports (input description, checks, notes)           */
    char limits_path[ML_REPORT_PATH_LEN];
    size_t nrows;
    ml_compare_row rows[ML_REPORT_MAX_METRICS];
    size_t nworse;          /* counted rows whose verdict is "worse"                        */
    size_t nnotes;
    char notes[ML_REPORT_MAX_NOTES][ML_REPORT_NOTE_LEN];
} ml_comparison;

ml_status ml_compare_write(FILE *f, const ml_comparison *c, ml_report_format fmt);
/* The comparison CSV's header line (ML_COMPARE_CSV_COLUMNS and a newline). ML_EIO when f fails. */
ml_status ml_compare_write_csv_header(FILE *f);

/* Reads a JSON report written by measure: the input description, every number under a
 * dotted path outside "input", "checks", "uncertainty" and arrays (unit "" and 3 decimals: the
 * caller sets them), their "uncertainty" entries, checks are not read. ML_EIO when unreadable,
 * ML_EFORMAT (with a reason in err) when it is not such a report. */
ml_status ml_report_read_json(const char *path, ml_report *r, char *err, size_t errlen);

#endif
