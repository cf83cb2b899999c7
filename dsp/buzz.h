/* Periodic impulsive interference ("buzz"): impulses that repeat at a steady rate recognised as one
 * event with its repetition rate, and the rate's relation to the mains frequency.
 * SPDX-License-Identifier: MIT
 *
 * Input: the times of impulses (seconds since the start of the stream, not decreasing), e.g.
 * the starts of dsp/detect.h ml_impulse events, and the time up to which the stream has been
 * judged (now_s). Every step_s of stream time (at e = step_s, 2 step_s, ...; carried out once
 * now_s >= e + delay_s, so impulses reported up to delay_s late still count) the impulses of the
 * window (e - window_s, e] are tested for periodicity:
 *  1. P0 = the median interval between consecutive impulses; it must lie in
 *     [1 / max_rate_hz, 1 / min_rate_hz]. Refined twice: the median of d / round(d / P0) over the
 *     intervals d of 1 to 3 periods (with impulses missing the plain median lies above the
 *     period).
 *  2. Each impulse gets a grid index: k_0 = 0, k_i = k_(i-1) + max(1, round((t_i - t_(i-1)) / P0))
 *     (a missed impulse skips an index).
 *  3. Least-squares line t = a + P k; impulses within +-tolerance P of it are on the grid; the line
 *     is fitted again to those (once).
 *  4. The window is periodic when at least min_share of its impulses, and at least min_impulses,
 *     lie on the grid and the grid spans at least half the window. Its rate is 1 / P, its jitter
 *     the r.m.s. deviation of the impulses on the grid from the line.
 * A buzz starts when min_s of consecutive evaluations are periodic (its start: the first impulse on
 * the grid of the first of them) and ends when hold_s of consecutive evaluations are not (its end:
 * the last impulse on the grid of the last periodic one). Its rate is the mean of the periodic
 * evaluations' rates; a window whose rate differs from the buzz's by more than 5 % (another
 * source) counts as not periodic for it. Isolated clicks, and clicks at random times, are not
 * periodic (fewer than min_impulses in a window, or off any grid).
 *
 * Mains relation (ml_buzz_tie_to_mains): the rate is tied to the mains when it lies within 2 % of
 * k times the mains frequency (50 or 60 Hz; both are tried when the mains is unknown), for
 * k = 1 .. 40. Source classes as common practice has them (docs/references.md 15, practitioners'
 * reports, not a standard): twice mains -- phase-control (triac) dimmers and similar chopping
 * controls, two bursts per mains cycle; the mains rate -- a device firing once per cycle
 * (half-wave control); a higher multiple -- rectifier or commutation noise modulated by the mains
 * (e.g. universal motors, recalled). A comb of spectral lines at a switching frequency (switch-mode
 * supplies) is a different signature, found in a spectrum by ml_buzz_find_comb.
 */
#ifndef ML_DSP_BUZZ_H
#define ML_DSP_BUZZ_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

typedef enum {
    ML_BUZZ_UNTIED = 0,    /* not a multiple of the mains frequency                          */
    ML_BUZZ_MAINS,         /* at the mains frequency                                          */
    ML_BUZZ_TWICE_MAINS,   /* at twice the mains frequency                                    */
    ML_BUZZ_MAINS_MULTIPLE, /* at k times the mains frequency, k >= 3                         */
    ML_BUZZ_TIE_COUNT
} ml_buzz_tie;

/* Short key of a tie ("untied", "mains", "twice-mains", "mains-multiple"); never NULL. */
const char *ml_buzz_tie_name(ml_buzz_tie t);
/* One line naming the likely source class (see the header comment); never NULL. */
const char *ml_buzz_tie_hint(ml_buzz_tie t);

/* Relation of rate_hz to the mains: mains_hz 50 or 60, or 0 when unknown (then 50 and 60 are
 * tried, the nearer multiple in relative terms wins, 50 on a tie). Writes the tie, the mains
 * frequency it refers to (0 when untied) and k (0 when untied); any out pointer may be NULL.
 * ML_EINVAL for a rate that is not finite and > 0 or another mains_hz. */
ml_status ml_buzz_tie_to_mains(double rate_hz, double mains_hz, ml_buzz_tie *tie, double *tied_mains_hz,
                               int *multiple);

typedef struct {
    double start_s, end_s;     /* first and last impulse on the grid                           */
    double rate_hz;            /* repetition rate: mean over the periodic evaluations           */
    double rate_min_hz;        /* lowest and highest evaluation rate                            */
    double rate_max_hz;
    double jitter_s;           /* mean of the evaluations' r.m.s. deviation from the grid       */
    uint64_t impulses;         /* impulses in its periodic windows (each counted once)          */
    ml_buzz_tie tie;           /* relation to the mains (ml_buzz_tie_to_mains of rate_hz)       */
    double mains_hz;           /* the mains frequency of the tie, 0 when untied                 */
    int multiple;              /* rate / mains, 0 when untied                                   */
} ml_buzz_event;

typedef struct ml_buzz ml_buzz;

typedef struct {
    double window_s;     /* analysis window: > 0, <= 60 (2.0)                                 */
    double step_s;       /* evaluation step: > 0, <= window_s (0.5)                           */
    double delay_s;      /* how late impulses may be reported: >= 0, <= 60 (0.25)             */
    double min_rate_hz;  /* slowest rate: > 0 (5), and at least 3 periods per window          */
    double max_rate_hz;  /* fastest rate: > min_rate_hz, window_s * max_rate_hz <= 1e5 (500)  */
    double tolerance;    /* on the grid within +-tolerance periods: > 0, < 0.5 (0.25)         */
    double min_share;    /* share of the window's impulses on the grid: 0 < x <= 1 (0.8)      */
    size_t min_impulses; /* impulses on the grid: >= 3 (8)                                    */
    double min_s;        /* periodic this long to start: >= 0 (1.0)                           */
    double hold_s;       /* not periodic this long to end: >= 0 (1.0)                         */
    double mains_hz;     /* 50, 60, or 0 = unknown (0)                                        */
} ml_buzz_config;

ml_buzz_config ml_buzz_config_default(double mains_hz);
/* ML_EINVAL | ML_ENOMEM. Memory: window_s * max_rate_hz impulse times (older ones in a full
 * window are dropped) and work arrays of that size. */
ml_status ml_buzz_create(const ml_buzz_config *cfg, ml_buzz **out);
void ml_buzz_destroy(ml_buzz *q); /* NULL is a no-op */
void ml_buzz_reset(ml_buzz *q);   /* as just created; no allocation */

/* Pushes n impulse times t_s[n] (not decreasing, >= every time pushed before, finite, >= 0) and
 * advances the judged time to now_s (not decreasing, >= the last time). Evaluations due by then
 * run; buzzes that ended go to ev[cap] in time order, their number to *nev. Each evaluation ends
 * at most one buzz, so cap >= (now_s - previous now_s) / step_s + 1 suffices. ML_EINVAL for bad
 * arguments or too small a cap (the buzzes that did not fit are lost). Never allocates. The
 * results depend only on the times, not on how they are split into pushes, as long as every
 * impulse is pushed by now_s = its time + delay_s. */
ml_status ml_buzz_push(ml_buzz *q, const double *t_s, size_t n, double now_s, ml_buzz_event *ev, size_t cap,
                       size_t *nev);
/* End of stream: a buzz in progress is closed (at most one goes to ev[cap]). */
ml_status ml_buzz_finish(ml_buzz *q, ml_buzz_event *ev, size_t cap, size_t *nev);
/* True while a buzz is in progress; *e (may be NULL) gets it as it stands. */
bool ml_buzz_get_active(const ml_buzz *q, ml_buzz_event *e);

/* The state as numbers, to continue it in another process (a log resumed after a kill): save
 * writes it into s[cap] and returns the count it needs (s NULL: only sizes; nothing written when
 * cap is smaller): fixed values and the impulse times held. restore puts it back into a detector
 * created with the same config (reset first); the times go on where they were. ML_EINVAL when s
 * is not such a state (the detector is then left alone). */
size_t ml_buzz_save(const ml_buzz *q, double *s, size_t cap);
ml_status ml_buzz_restore(ml_buzz *q, const double *s, size_t n);

/* Comb of lines in a power spectrum: psd[nbins] (any power unit, bin k at k * bin_hz, from 0 Hz).
 * A bin is a line when it is a local maximum standing at least threshold_db above the median of
 * the bins within +-32 bins of it. The comb is the spacing s in [lo_hz, hi_hz] for which the most
 * lines lie within +-1.5 bins of s, 2 s, 3 s, ... (up to the last bin), with the line at s itself
 * present; s is refined as the least-squares slope of those lines' frequencies against their
 * order. A comb needs at least min_lines lines. *spacing_hz gets s (0 when there is no comb),
 * *lines their number. ML_EINVAL for bad arguments (nbins < 16, bin_hz or the range not finite
 * and > 0, lo_hz > hi_hz, min_lines < 2, threshold_db <= 0). Allocates nothing: the median works
 * on a stack window of 65 bins. */
ml_status ml_buzz_find_comb(const double *psd, size_t nbins, double bin_hz, double lo_hz, double hi_hz,
                            double threshold_db, size_t min_lines, double *spacing_hz, size_t *lines);

#endif
