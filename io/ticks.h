/* Round-number ticks for plot axes: linear (1, 2, 5 x 10^n), time (round seconds, minutes, hours,
 * days) and logarithmic frequency (1, 2, 5 x 10^n Hz), with their labels. Pure functions.
 * SPDX-License-Identifier: MIT
 *
 * Rules (common practice for instrument displays):
 *  - linear: the step is the smallest of 1, 2, 5 x 10^n giving at most max_count ticks in
 *    [lo, hi]; ticks are the multiples of the step inside (both ends included, within 1e-9 of a
 *    step). Labels in plain decimals, as many as the step needs ("0.002", "15", "-5", "0.0"
 *    beside "0.5"), never "-0";
 *  - time (seconds from the start of a recording, lo >= 0): the step is the smallest of 1, 2, 5,
 *    10, 15, 20, 30 s, 1, 2, 5, 10, 15, 20, 30 min, 1, 2, 3, 6, 12 h, 1, 2, 7 d (then 14, 35,
 *    70 d ...: 7 d x 2, 5, 10 x 10^n) giving at most max_count ticks; when 1 s steps already fit,
 *    the linear rule (steps of 1, 2, 5 x 10^n s, also below 1 s).
 *    Labels by unit: "s" while hi < 60 s or the step is below 1 s ("45 s", "0.5 s"); "m:ss" while
 *    hi < 1 h ("10:00" = ten minutes); from 1 h: "h:mm" for whole-minute steps ("1:30"),
 *    "h:mm:ss" for shorter ones, "h" for whole-hour steps ("6 h") and "d" for whole-day steps
 *    ("2 d"). Never values such as 374, 449 or 524 s;
 *  - logarithmic frequency (lo > 0): the values 1, 2, 5 x 10^n Hz inside; when there are more than
 *    max_count, only the decades 10^n, and when those are still too many, every k-th decade
 *    (10^n with n divisible by k, the smallest k that fits). When fewer than 2 of 1, 2, 5 x 10^n
 *    fall inside (a narrow span), the linear rule. Labels: "50", "100", "1k", "2.5k", "10k",
 *    "1M" (k = 10^3, M = 10^6). Never values such as 24, 129 or 730 Hz.
 */
#ifndef ML_IO_TICKS_H
#define ML_IO_TICKS_H

#include <stddef.h>

#include "dsp/status.h"

#define ML_TICKS_MAX 32
#define ML_TICK_LABEL 24 /* bytes of a label, with its terminating NUL */

typedef struct {
    double value;
    char label[ML_TICK_LABEL];
} ml_tick;

typedef struct {
    size_t n;                  /* ticks in tick[]                                               */
    double step;               /* linear and time: the step; log: 0                             */
    char unit[8];              /* time: "s", "m:ss", "h:mm", "h:mm:ss", "h" or "d"; else ""      */
    ml_tick tick[ML_TICKS_MAX];
} ml_ticks;

/* Each fills *out. lo < hi, both finite (time: lo >= 0; log: lo > 0; spans below 1e-12 of their
 * magnitude are refused); 2 <= max_count <= ML_TICKS_MAX. ML_EINVAL otherwise (out then holds no
 * ticks). n is at least 1 except, rarely, with max_count = 2 (e.g. time 8 .. 12 d: 2 d gives 3
 * ticks, 7 d none); a caller then draws the axis without ticks. No allocation. */
ml_status ml_ticks_linear(double lo, double hi, size_t max_count, ml_ticks *out);
ml_status ml_ticks_time(double lo_s, double hi_s, size_t max_count, ml_ticks *out);
ml_status ml_ticks_log_hz(double lo_hz, double hi_hz, size_t max_count, ml_ticks *out);

#endif
