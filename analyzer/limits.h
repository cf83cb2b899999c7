/* Limits profiles: INI files of <metric>_min / <metric>_max keys, checked against a report.
 * SPDX-License-Identifier: MIT
 *
 * Syntax: "key = value" lines, [section] headers, comment lines starting with ";" or "#", and
 * inline comments after " ;" (a ";" that follows a blank). Lines may be of any length (the file
 * at most 1 MiB); blanks around keys, values and section names are ignored.
 *  - Outside a section, or in [limits], a key names a metric by its dotted name
 *    ("audio.thd_pct_max") or by its short name when unique ("thd_pct_max").
 *  - In a section named after a metric group ([audio], [hum], ...) the short name is taken
 *    within that group ("level_dbc_max" in [hum] is hum.level_dbc).
 *  - [profile] holds free-text "name" (at most 127 bytes) and "description" keys.
 *  - [mask] gives an emission mask for if/iq captures: "points = OFFSET_HZ:DBC, ..." (offsets
 *    ascending from the carrier, 0..1e9 Hz, levels in dB re the unmodulated carrier, |DBC| <=
 *    1000; a repeated offset makes a step) and "rbw_hz" (resolution bandwidth the levels refer
 *    to, 0 < rbw_hz <= 1e9, default 300). A mask adds the check spectrum.mask_margin_db >= 0
 *    unless the profile limits that metric itself.
 * Every other key, a line that is neither, a value that is not a finite number or is beyond
 * +-1e15, a key repeated in any section (a limit counts once whatever its spelling), or min > max
 * for one metric is an error naming the file, line and key.
 */
#ifndef ML_ANALYZER_LIMITS_H
#define ML_ANALYZER_LIMITS_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/rf.h"
#include "dsp/status.h"
#include "io/report.h"

#define ML_MAX_LIMITS 64

typedef struct {
    char metric[64]; /* full dotted name                                          */
    bool has_min, has_max;
    double min, max;
} ml_limit;

typedef struct {
    char name[128];
    size_t n;
    ml_limit items[ML_MAX_LIMITS];
    bool has_mask;
    ml_mask mask;
} ml_limits;

/* Loads and validates path. On error returns ML_EIO (unreadable) or ML_EFORMAT (content) and
 * writes "line N: key 'k': problem" (or the system error) to err[errlen]. */
ml_status ml_limits_load(const char *path, ml_limits *out, char *err, size_t errlen);

/* Adds one check per limited metric to r (a metric missing from r, or not measured, is a failed,
 * invalid check). A metric that is a bound (io/report.h) passes only when the whole range it
 * allows lies within the limits (an upper bound at or below a max, a lower bound at or above a
 * min), fails when none of it does (an upper bound below a min, a lower bound above a max), and
 * is otherwise undecided (ml_check.undecided: neither pass nor fail). */
void ml_limits_apply(const ml_limits *l, ml_report *r);

#endif
