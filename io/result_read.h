/* Reading a saved measurement back: the JSON report of `modlens measure --format json`.
 * SPDX-License-Identifier: MIT
 *
 * The report is flattened into a list of items in document order:
 *  - every metric, by its dotted name ("audio.thd_pct", "carrier.cnr_db"): a finite number, or
 *    null (not measured);
 *  - every text field of a metric group ("modulation.overmodulation_kind"), as text;
 *  - every scalar of the "input" object ("input.path", "input.kind", "input.sample_rate_hz",
 *    "input.frames", ...), numbers as numbers and strings as text.
 * Tables (arrays such as audio.harmonics), "checks", "notes", "analysis" and "limits" are
 * validated but not listed; "verdict" goes to ml_result.verdict; "card_limited", an array of
 * metric names (1..63 bytes each), is listed as text items "card_limited.1", "card_limited.2", ...
 *
 * Validation is strict: the text must be one JSON object without duplicate keys; "input" must be
 * an object with a string "path", a "kind" of audio, if or iq, a "sample_rate_hz" in
 * 0 < x <= 2147483647, integer "channels" 1..65535 and "frames" 0..1e15, and when present a
 * whole "channel" 1..channels; every other member except the listed ones must be an
 * object (a metric group) whose members are numbers, null, strings, arrays of objects of numbers
 * and null, or such objects nested once more; every number anywhere is finite and within
 * +-ML_RESULT_MAX_MAGNITUDE (so that it converts to any count or frame position without
 * overflow); "uncertainty_method.blocks", when present, is a whole number >= 0; names are at
 * most ML_RESULT_NAME_MAX - 1 bytes when dotted; "verdict", when present, is "pass", "fail" or
 * "unchecked"; at least one metric. Which names must be numbers (the metric registry) is the
 * caller's check (analyzer/saved.h).
 * Anything else is ML_EFORMAT with a one-line reason in err (with line and column for JSON syntax);
 * text that is no JSON object at all (bad syntax, an array, too deeply nested) is reported as
 * "not a modlens JSON report: why".
 */
#ifndef ML_IO_RESULT_READ_H
#define ML_IO_RESULT_READ_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/status.h"

#define ML_RESULT_NAME_MAX 96
#define ML_RESULT_TEXT_MAX 1024
#define ML_RESULT_MAX_ITEMS 512
#define ML_RESULT_MAX_BYTES ((size_t)16 << 20) /* larger files are refused */
#define ML_RESULT_MAX_MAGNITUDE 1e15           /* |number| bound: exact in a double      */

typedef enum { ML_RESULT_NUMBER, ML_RESULT_NULL, ML_RESULT_TEXT } ml_result_type;

typedef struct {
    char name[ML_RESULT_NAME_MAX]; /* dotted name                                            */
    ml_result_type type;
    double value;                  /* ML_RESULT_NUMBER: finite; else 0                         */
    char text[ML_RESULT_TEXT_MAX]; /* ML_RESULT_TEXT: the string (cut at TEXT_MAX - 1 bytes)   */
} ml_result_item;

typedef struct ml_result ml_result;

/* Parses len bytes of JSON text (need not be NUL-terminated). On success *out is a new result
 * (free with ml_result_destroy). On failure *out is NULL, the status is ML_EFORMAT (content),
 * ML_ENOMEM, or ML_EINVAL (NULL arguments), and err[errlen] holds the reason. */
ml_status ml_result_parse(const char *data, size_t len, ml_result **out, char *err, size_t errlen);

/* Reads and parses a file: as ml_result_parse, plus ML_EIO when it cannot be read (a directory,
 * not a regular file, missing, unreadable) and ML_EFORMAT when it is empty or larger than
 * ML_RESULT_MAX_BYTES. */
ml_status ml_result_read_file(const char *path, ml_result **out, char *err, size_t errlen);

void ml_result_destroy(ml_result *r);

/* Number of items, and item i (0 <= i < count; NULL out of range). */
size_t ml_result_count(const ml_result *r);
const ml_result_item *ml_result_item_at(const ml_result *r, size_t i);

/* The item with this dotted name, or NULL. */
const ml_result_item *ml_result_find(const ml_result *r, const char *name);

/* "pass", "fail", "unchecked", or "" when the report has no verdict. */
const char *ml_result_verdict(const ml_result *r);

#endif
