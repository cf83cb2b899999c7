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
 *  - [response] checks each point of a sweep (analyzer/sweep.c: sweep.points[]) against a window
 *    and THD ceilings: "range_hz = LO:HI" (0 < LO < HI <= 1e9; default every point) with
 *    "window_db = D" (the level re the reference within +-D dB, 0 < D <= 1000) or "window_db =
 *    MIN:MAX" (-1000 <= MIN <= 0 <= MAX <= 1000, MIN < MAX: the reference itself is 0 dB), and
 *    "thd_max_pct = LO:HI:PCT, ..." (THD at most PCT % for points from LO to HI Hz, both
 *    included; 0 < PCT <= 1000; up to 16 bands, ascending, touching but not overlapping; a point
 *    on a shared edge is held to the lower ceiling). The edges of range_hz and of the bands take
 *    in points within ML_RESPONSE_EDGE_TOL of them (a step played at 50 Hz measures 49.9998 Hz
 *    and still belongs to a band from 50 Hz). A point gets one check per figure:
 *    relative_db (inside range_hz) and thd_pct (inside a band); a figure not measured fails
 *    its check. range_hz needs window_db. Other reports (measure, live) have no points: the
 *    section does not apply to them.
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

#define ML_RESPONSE_MAX_BANDS 16
#define ML_RESPONSE_EDGE_TOL 1e-3 /* 0.1 % of an edge's frequency */

/* The [response] section (see above). */
typedef struct {
    bool has_range, has_window;
    double range_lo_hz, range_hi_hz;
    double window_min_db, window_max_db;
    size_t nbands;
    double band_lo_hz[ML_RESPONSE_MAX_BANDS], band_hi_hz[ML_RESPONSE_MAX_BANDS];
    double band_max_pct[ML_RESPONSE_MAX_BANDS];
} ml_response_limits;

typedef struct {
    char name[128];
    size_t n;
    ml_limit items[ML_MAX_LIMITS];
    bool has_mask;
    ml_mask mask;
    bool has_response;
    ml_response_limits response;
} ml_limits;

/* Loads and validates path. On error returns ML_EIO (unreadable) or ML_EFORMAT (content) and
 * writes "line N: key 'k': problem" (or the system error) to err[errlen]. */
ml_status ml_limits_load(const char *path, ml_limits *out, char *err, size_t errlen);

/* Adds one check per limited metric to r (a metric missing from r, or not measured, is a failed,
 * invalid check), and with a [response] section the checks of each point of r's series (see
 * above). A metric that is a bound (io/report.h) passes only when the whole range it allows lies
 * within the limits (an upper bound at or below a max, a lower bound at or above a min), fails
 * when none of it does (an upper bound below a min, a lower bound above a max), and is otherwise
 * undecided (ml_check.undecided: neither pass nor fail). */
void ml_limits_apply(const ml_limits *l, ml_report *r);

/* The THD ceiling of [response] for a point at f_hz: the lowest PCT of the bands holding it;
 * NAN when none does. */
double ml_limits_response_thd_max(const ml_response_limits *rl, double f_hz);

#endif
