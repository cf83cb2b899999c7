/* The watch command's display state, shared by the command (analyzer/watch.c) and its
 * full-screen terminal display (analyzer/screen.c).
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_WATCH_H
#define ML_ANALYZER_WATCH_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "analyzer/options.h"
#include "dsp/monitor.h"

#define ML_WATCH_HOLD_S 2.0          /* peak-hold marker: held this long ...                    */
#define ML_WATCH_DECAY_PCT_S 20.0    /* ... then falls by this many % of modulation per second  */
#define ML_WATCH_MAX_COLS 512        /* spectrum columns at most                                */

typedef struct {
    ml_monitor_kind kind;
    const char *kind_name;          /* "audio", "if", "iq"                                       */
    char device[128];
    double rate_hz;
    double elapsed_s;
    double window_s;
    uint64_t overflows, lost_frames; /* since the last reset                                     */
    bool have;                      /* res holds an analysis                                     */
    bool filled;                    /* the window was full at the last update                    */
    bool no_signal;                 /* ... and held no carrier, or not throughout (if/iq), or the
                                       update was digital silence (audio)                         */
    double absent_s;                /* if/iq: how long the carrier was absent from a window that
                                       held it for a while (NAN when it held none)                */
    ml_monitor_result res;
    double nominal_hz;              /* --carrier (NAN: none; the offset is then not shown)         */
    double pos_hold_pct, neg_hold_pct; /* peak-hold markers (NAN before the first reading)       */
    double pos_limit_pct, neg_limit_pct; /* the profile's limits (NAN when none)                  */
    double latch_limit_pct;         /* positive peak above this latches the warning              */
    double neg_latch_pct;           /* negative peak beyond this latches it (the limit, or 100)    */
    double off_latch_pct;           /* carrier off longer than this share latches it (the
                                       profile's carrier_off_pct_max, or 0.5: 5 ms per second)    */
    double level_peak_dbfs, level_rms_dbfs; /* audio: the window's input level (NAN: none yet)   */
    bool clip;                      /* audio: latched clip mark                                  */
    double clip_at_s;               /* elapsed time when it latched                              */
    bool overmod;                   /* latched overmodulation warning                            */
    double overmod_at_s;            /* elapsed time when it latched                              */
    char overmod_why[64];
    uint64_t overmod_updates;       /* updates whose window was overmodulated, since reset       */
    bool frozen;
    bool spectrum;                  /* show the live spectrum instead of the readings            */
    size_t ncols;                   /* spectrum columns filled                                   */
    double col_db[ML_WATCH_MAX_COLS];
    double col_lo_hz, col_hi_hz;
    const ml_analysis_opts *an;     /* calibration and card profile (analyzer/bench.h)          */
    int channel;                    /* the analysed channel, 1-based                             */
} ml_watch_view;

typedef struct ml_screen ml_screen;

/* Takes over the terminal (ncurses on standard output); NULL when it cannot. */
ml_screen *ml_screen_open(void);
/* Gives the terminal back; NULL is a no-op. */
void ml_screen_close(ml_screen *s);
/* Next key pressed, or -1 when none (never waits). */
int ml_screen_key(ml_screen *s);
/* Spectrum columns the current terminal width gives room for. */
size_t ml_screen_columns(const ml_screen *s);
/* Redraws everything from v (follows the terminal's size). */
void ml_screen_draw(ml_screen *s, const ml_watch_view *v);

#endif
