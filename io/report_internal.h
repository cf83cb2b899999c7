/* Private to io/: the individual report writers.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_IO_REPORT_INTERNAL_H
#define ML_IO_REPORT_INTERNAL_H

#include "io/report.h"

struct json_t;

ml_status ml_report_write_text(FILE *f, const ml_report *r);
ml_status ml_report_write_json(FILE *f, const ml_report *r);
ml_status ml_report_write_csv(FILE *f, const ml_report *r);

/* src into dst[len] with every free-standing negative zero ("-0", "-0.00" after a space, '=',
 * '(' ... and not followed by a digit or a letter) printed without its sign. For free text
 * (notes, the analysis line, text fields), never for paths. */
void ml_report_unsign_zeros(char *dst, size_t len, const char *src);
/* One CSV field, quoted as RFC 4180 asks when it holds a comma, a double quote, CR or LF; sep
 * (',' or '\n' or 0 for none) after it. */
void ml_csv_field(FILE *f, const char *s, char sep);
/* The 1-based mark of metric i in the text and PDF reports ("[n]": it has a qualifier, a bound
 * or a reason), 0 when it has none. */
int ml_report_mark(const ml_report *r, size_t i);
/* Whether a metric shows a mark: a bound, a qualifier, or (not measured) a reason. */
bool ml_metric_has_mark(const ml_metric *m);
/* The marks of the series' figures continue the metric table's numbering, point by point: this
 * is the number of marks in the metric table, the last number before the series' first. */
int ml_report_metric_marks(const ml_report *r);
/* A series cell: the figure's value text, then " [n]" when it has a mark, n being ++*mark. */
void ml_report_cell_text(const ml_metric *m, int *mark, char *buf, size_t len);
/* The line that explains mark k of the metric or figure m shown as name: "[k] name: why". */
void ml_report_mark_line(int k, const char *name, const ml_metric *m, char *buf, size_t len);
/* Calls each(ctx, line) with the mark line of every marked figure of r's series, point by point,
 * the marks numbered from first_mark + 1 (the series' figures named "sweep.points[3].thd_pct"). */
void ml_report_series_marks(const ml_report *r, int first_mark, void (*each)(void *ctx, const char *line),
                            void *ctx);
/* The name a point's figure has outside its point: "sweep.points[3].thd_pct", into buf[len]. */
void ml_report_point_name(const ml_report *r, size_t p, const char *leaf, char *buf, size_t len);
/* The explanation behind a mark: "noise-limited: upper bound", "not measured: <reason>". */
void ml_report_why_text(const ml_metric *m, char *buf, size_t len);
/* The value of a metric as the text and PDF reports show it: "0.786", "< 0.300", "n/a". */
void ml_report_value_text(const ml_metric *m, char *buf, size_t len);

/* A metric's uncertainty as the text and PDF reports show it, one digit finer than the value:
 * "+- 0.0021", "+- <0.00001" when it rounds to zero there, "" when it has none. */
void ml_report_u_text(const ml_metric *m, char *buf, size_t len);

/* "<= 1.00", ">= 50.0", "10.0..20.0" or "" for a check. */
void ml_report_limit_text(const ml_check *c, char *buf, size_t len);
/* The check on metric (exact dotted name), or NULL. */
const ml_check *ml_report_check_for(const ml_report *r, const char *metric);

/* v rounded to decimals + 3 digits (an integer when decimals <= 0), null when not finite, 0 for a
 * value that rounds to zero (never -0). */
struct json_t *ml_report_json_number(double v, int decimals);

/* The end of every JSON document we write: root gains "notes" (nnotes strings), then it is
 * written indented, in insertion order, with a newline, and released. ML_EIO when f fails. */
ml_status ml_report_json_finish(FILE *f, struct json_t *root, const char (*notes)[ML_REPORT_NOTE_LEN],
                                size_t nnotes);

#endif
