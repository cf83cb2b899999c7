/* Private to io/: the individual report writers.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_IO_REPORT_INTERNAL_H
#define ML_IO_REPORT_INTERNAL_H

#include "io/report.h"

ml_status ml_report_write_text(FILE *f, const ml_report *r);
ml_status ml_report_write_json(FILE *f, const ml_report *r);
ml_status ml_report_write_csv(FILE *f, const ml_report *r);

/* "<= 1.00", ">= 50.0", "10.0..20.0" or "" for a check. */
void ml_report_limit_text(const ml_check *c, char *buf, size_t len);
/* The check on metric (exact dotted name), or NULL. */
const ml_check *ml_report_check_for(const ml_report *r, const char *metric);

/* The end of every JSON document we write: root gains "notes" (nnotes strings), then it is
 * written indented, in insertion order, with a newline, and released. ML_EIO when f fails. */
struct json_t;
ml_status ml_report_json_finish(FILE *f, struct json_t *root, const char (*notes)[ML_REPORT_NOTE_LEN],
                                size_t nnotes);

#endif
