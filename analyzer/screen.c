/* Full-screen terminal display of the watch command (ncurses).
 * SPDX-License-Identifier: MIT
 *
 * Readings view (if/iq): two horizontal bars on a 0..150 % scale, negative peak above positive
 * peak, each with its hold marker 'H' and the profile's limit '|'; the latched overmodulation
 * banner, or "no carrier" when the window holds none; carrier and envelope figures. Audio: the
 * input level bar (peak and r.m.s. dBFS over -60..0 dBFS) with its latched clip mark, then level,
 * distortion, noise and hum figures. The
 * spectrum view draws one column per character cell. The status line and the key line are at the
 * bottom. Everything is laid out from the current terminal size (at least 80 x 24).
 */
#include <curses.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/watch.h"

#define MIN_COLS 80
#define MIN_ROWS 24
#define BAR_MAX_PCT 150.0

struct ml_screen {
    SCREEN *scr;
    bool color;
};

ml_screen *ml_screen_open(void)
{
    ml_screen *s = calloc(1, sizeof *s);
    if (s == NULL)
        return NULL;
    s->scr = newterm(NULL, stdout, stdin);
    if (s->scr == NULL) {
        free(s);
        return NULL;
    }
    set_term(s->scr);
    cbreak();
    noecho();
    nodelay(stdscr, TRUE);
    keypad(stdscr, TRUE);
    curs_set(0);
    if (has_colors()) {
        start_color();
        use_default_colors();
        init_pair(1, COLOR_WHITE, COLOR_RED);
        init_pair(2, COLOR_GREEN, -1);
        init_pair(3, COLOR_YELLOW, -1);
        s->color = true;
    }
    return s;
}

void ml_screen_close(ml_screen *s)
{
    if (s == NULL)
        return;
    endwin();
    delscreen(s->scr);
    free(s);
}

int ml_screen_key(ml_screen *s)
{
    (void)s;
    int ch = getch();
    return ch == ERR ? -1 : ch;
}

size_t ml_screen_columns(const ml_screen *s)
{
    (void)s;
    int w = COLS - 8;
    if (w < 1)
        w = 1;
    return (size_t)w < ML_WATCH_MAX_COLS ? (size_t)w : ML_WATCH_MAX_COLS;
}

static void num(char *buf, size_t n, const char *fmt, double v)
{
    if (isfinite(v))
        snprintf(buf, n, fmt, v);
    else
        snprintf(buf, n, "n/a");
}

/* One bar: row y, label, value, hold and limit, scaled 0..BAR_MAX_PCT over the width. */
static void bar(const ml_screen *s, int y, const char *label, double pct, double hold, double limit)
{
    char v[32], h[32];
    num(v, sizeof v, "%6.1f %%", pct);
    num(h, sizeof h, "%6.1f %%", hold);
    mvprintw(y, 1, "%-14s %s   hold %s", label, v, h);
    const int x0 = 8, w = COLS - x0 - 2;
    mvaddch(y + 1, x0 - 1, '[');
    mvaddch(y + 1, x0 + w, ']');
    const int fill = isfinite(pct) ? (int)lround(fmin(fmax(pct, 0), BAR_MAX_PCT) / BAR_MAX_PCT * w) : 0;
    const int over = isfinite(limit) ? (int)lround(fmin(limit, BAR_MAX_PCT) / BAR_MAX_PCT * w) : w + 1;
    for (int i = 0; i < w; i++) {
        bool beyond = i >= over;
        if (s->color && i < fill)
            attron(COLOR_PAIR(beyond ? 3 : 2));
        mvaddch(y + 1, x0 + i, i < fill ? (beyond ? '%' : '#') : '.');
        if (s->color && i < fill)
            attroff(COLOR_PAIR(beyond ? 3 : 2));
    }
    if (isfinite(limit) && over < w)
        mvaddch(y + 1, x0 + over, '|' | A_BOLD);
    if (isfinite(hold)) {
        int hx = (int)lround(fmin(fmax(hold, 0), BAR_MAX_PCT) / BAR_MAX_PCT * w);
        if (hx >= w)
            hx = w - 1;
        mvaddch(y + 1, x0 + hx, 'H' | A_BOLD);
    }
}

static void scale(int y)
{
    const int x0 = 8, w = COLS - x0 - 2;
    for (int p = 0; p <= (int)BAR_MAX_PCT; p += 25) {
        int x = x0 + (int)lround(p / BAR_MAX_PCT * w);
        if (x > x0 + w - 3)
            x = x0 + w - 3;
        mvprintw(y, x, "%d", p);
    }
    mvprintw(y, 1, "%%");
}

/* A banner across row y in the warning's colours. */
static void banner(const ml_screen *s, int y, const char *text)
{
    if (s->color)
        attron(COLOR_PAIR(1));
    attron(A_BOLD | A_REVERSE);
    mvprintw(y, 1, "%-*s", COLS - 2, "");
    mvprintw(y, 2, "%s", text);
    attroff(A_BOLD | A_REVERSE);
    if (s->color)
        attroff(COLOR_PAIR(1));
}

static void readings_mod(const ml_screen *s, const ml_watch_view *v)
{
    const ml_modulation_result *r = &v->res.modulation;
    bar(s, 2, "negative peak", v->have ? r->negative_peak_pct : NAN, v->neg_hold_pct, v->neg_limit_pct);
    bar(s, 5, "positive peak", v->have ? r->positive_peak_pct : NAN, v->pos_hold_pct, v->pos_limit_pct);
    scale(7);
    if (v->no_signal) { /* before the latch: a warning latched earlier is still shown below */
        char t[160], why[64];
        if (isfinite(v->absent_s))
            snprintf(why, sizeof why, "the signal is gone for %.2f s of the window", v->absent_s);
        else
            snprintf(why, sizeof why, "the window holds no carrier line");
        snprintf(t, sizeof t, "no carrier / no signal: %s%s", why,
                 v->overmod ? " (overmodulation latched earlier; r clears)" : "");
        banner(s, 8, t);
    }
    if (v->overmod) {
        if (s->color)
            attron(COLOR_PAIR(1));
        attron(A_BOLD | A_REVERSE);
        mvprintw(9, 1, "%-*s", COLS - 2, "");
        mvprintw(9, 2, "*** OVERMODULATION *** %.48s at %.1f s (r clears)", v->overmod_why, v->overmod_at_s);
        attroff(A_BOLD | A_REVERSE);
        if (s->color)
            attroff(COLOR_PAIR(1));
    } else {
        mvprintw(9, 2, "no overmodulation (latches beyond %.0f %% negative, carrier off over %.1f %%, or %.0f %% "
                 "positive)", v->neg_latch_pct, v->off_latch_pct, v->latch_limit_pct);
    }
    char a[32], b[32], c[32];
    num(a, sizeof a, "%.3f Hz", v->have ? r->carrier_hz : NAN);
    num(b, sizeof b, "%+.3f Hz", v->have ? r->carrier_hz - v->nominal_hz : NAN);
    num(c, sizeof c, "%.2f dBFS", v->have ? r->carrier_level_dbfs : NAN);
    mvprintw(11, 2, "carrier     %-16s offset %-14s level %s", a, b, c);
    num(a, sizeof a, "%.3f", v->have ? r->index : NAN);
    num(b, sizeof b, "%.2f %%", v->have ? r->audio.thd_pct : NAN);
    mvprintw(12, 2, "index       %-16s envelope THD %s", a, b);
    num(a, sizeof a, "%.1f dB", v->have ? r->cnr_db : NAN);
    num(b, sizeof b, "%.1f dB", v->have ? r->audio.hum_dbfs : NAN);
    num(c, sizeof c, "%.0f Hz", v->have ? 2 * r->bandwidth_hz : NAN);
    mvprintw(13, 2, "CNR         %-16s hum %-10s (re 100 %%)  in %s", a, b, c);
    num(a, sizeof a, "%.1f Hz", v->have ? r->audio.fundamental_hz : NAN);
    mvprintw(14, 2, "tone        %-16s overmodulated updates %llu", a,
             (unsigned long long)v->overmod_updates);
    num(a, sizeof a, "%.1f %%", v->have ? r->positive_peak_held_pct : NAN);
    num(b, sizeof b, "%.2f %%", v->have ? r->carrier_off_pct : NAN);
    mvprintw(16, 2, "held peak   %-16s carrier off %s", a, b);
    num(a, sizeof a, "%.2f dBFS", v->have ? r->unmodulated_dbfs : NAN);
    num(b, sizeof b, "%+.2f %%", v->have ? r->carrier_shift_pct : NAN);
    static const char *const from[] = {"reference file", "unmodulated stretch", "latched", "mean envelope"};
    mvprintw(15, 2, "C           %-16s shift  %-14s from %s", a, b,
             v->have && r->c_source <= ML_C_MEAN ? from[r->c_source] : "-");
}

#define LEVEL_MIN_DBFS (-60.0)

/* The input level bar: '#' up to the r.m.s. level, '=' on to the peak, over -60..0 dBFS. */
static void level_bar(const ml_screen *s, const ml_watch_view *v, int y)
{
    char a[32], b[32];
    num(a, sizeof a, "%6.1f dBFS", v->level_peak_dbfs);
    num(b, sizeof b, "%6.1f dBFS", v->level_rms_dbfs);
    mvprintw(y, 1, "input level    peak %s   r.m.s. %s", a, b);
    if (v->clip) {
        char t[64];
        snprintf(t, sizeof t, " CLIP at %.1f s (r clears) ", v->clip_at_s);
        if (s->color)
            attron(COLOR_PAIR(1));
        attron(A_BOLD | A_REVERSE);
        mvprintw(y, COLS - (int)strlen(t) - 2, "%s", t);
        attroff(A_BOLD | A_REVERSE);
        if (s->color)
            attroff(COLOR_PAIR(1));
    }
    const int x0 = 8, w = COLS - x0 - 2;
    const double span = -LEVEL_MIN_DBFS;
    const int pk = isfinite(v->level_peak_dbfs)
                       ? (int)lround(fmin(fmax(v->level_peak_dbfs - LEVEL_MIN_DBFS, 0), span) / span * w) : 0;
    const int rm = isfinite(v->level_rms_dbfs)
                       ? (int)lround(fmin(fmax(v->level_rms_dbfs - LEVEL_MIN_DBFS, 0), span) / span * w) : 0;
    mvaddch(y + 1, x0 - 1, '[');
    mvaddch(y + 1, x0 + w, ']');
    for (int i = 0; i < w; i++)
        mvaddch(y + 1, x0 + i, i < rm ? '#' : i < pk ? '=' : '.');
    for (int d = (int)LEVEL_MIN_DBFS; d <= 0; d += 10) {
        int x = x0 + (int)lround((d - LEVEL_MIN_DBFS) / span * w);
        if (x > x0 + w - 3)
            x = x0 + w - 3;
        mvprintw(y + 2, x, "%d", d);
    }
    mvprintw(y + 2, 1, "dBFS");
}

static void readings_audio(const ml_screen *s, const ml_watch_view *v)
{
    const ml_audio_plain_figures *r = &v->res.audio;
    char a[32], b[32];
    level_bar(s, v, 2);
    if (v->no_signal)
        banner(s, 5, "no signal: the input is digital silence");
    num(a, sizeof a, "%.2f dBFS", v->have ? v->res.rms_dbfs : NAN);
    num(b, sizeof b, "%.2f dBFS", v->have ? r->fundamental_dbfs : NAN);
    mvprintw(7, 2, "level (RMS)      %-16s tone level  %s", a, b);
    num(a, sizeof a, "%.3f Hz", v->have ? r->fundamental_hz : NAN);
    mvprintw(9, 2, "tone frequency   %s", a);
    num(a, sizeof a, "%.4f %%", v->have ? r->thd_pct : NAN);
    num(b, sizeof b, "%.4f %%", v->have ? r->thdn_pct : NAN);
    mvprintw(11, 2, "THD              %-16s THD+N       %s", a, b);
    num(a, sizeof a, "%.2f dB", v->have ? r->snr_db : NAN);
    num(b, sizeof b, "%.2f dB", v->have ? r->sinad_db : NAN);
    mvprintw(13, 2, "SNR              %-16s SINAD       %s", a, b);
    num(a, sizeof a, "%.2f dBFS", v->have ? r->hum_dbfs : NAN);
    num(b, sizeof b, "%.2f dBc", v->have ? r->hum_dbc : NAN);
    mvprintw(15, 2, "hum              %-16s re tone     %s", a, b);
}

static void spectrum(const ml_watch_view *v, int top, int bottom)
{
    const bool mod = v->kind != ML_MONITOR_AUDIO;
    const double db_top = 0, db_bot = mod ? -100.0 : -140.0;
    const int h = bottom - top;
    if (h < 3 || v->ncols == 0) {
        mvprintw(top, 2, "(no spectrum yet)");
        return;
    }
    for (int row = 0; row < h; row++) {
        const double level = db_top - (db_top - db_bot) * (row + 0.5) / h;
        if (row % 4 == 0)
            mvprintw(top + row, 1, "%5.0f", db_top - (db_top - db_bot) * row / h);
        for (size_t c = 0; c < v->ncols && (int)c + 7 < COLS; c++)
            if (v->col_db[c] >= level)
                mvaddch(top + row, 7 + (int)c, '|');
    }
    mvprintw(bottom, 2, "%s %.0f Hz .. %.0f Hz (%s axis), %s", mod ? "dBc re carrier" : "dBFS per bin",
             v->col_lo_hz, v->col_hi_hz, mod ? "linear" : "logarithmic", mod ? "captured signal" : "input");
}

void ml_screen_draw(ml_screen *s, const ml_watch_view *v)
{
    erase();
    if (COLS < MIN_COLS || LINES < MIN_ROWS) {
        mvprintw(0, 0, "modlens watch: the terminal is %dx%d; make it at least %dx%d (q quits)", COLS, LINES,
                 MIN_COLS, MIN_ROWS);
        refresh();
        return;
    }
    attron(A_BOLD);
    mvprintw(0, 1, "modlens watch  %s  %s", v->kind == ML_MONITOR_AUDIO ? "audio distortion" : "modulation",
             v->spectrum ? "- spectrum" : "- readings");
    attroff(A_BOLD);
    mvprintw(0, COLS - 30, "window %.2f s %s", v->window_s,
             v->frozen ? " [FROZEN]" : v->no_signal ? " [no signal]" : v->filled ? "" : " [filling]");
    if (v->spectrum)
        spectrum(v, 2, LINES - 4);
    else if (v->kind == ML_MONITOR_AUDIO)
        readings_audio(s, v);
    else
        readings_mod(s, v);
    if (v->spectrum && v->overmod) {
        attron(A_BOLD | A_REVERSE);
        mvprintw(1, 1, "*** OVERMODULATION *** (latched; r clears)");
        attroff(A_BOLD | A_REVERSE);
    }
    mvhline(LINES - 3, 0, '-', COLS);
    mvprintw(LINES - 2, 1, "device %.30s | %.0f Hz | %s | elapsed %.1f s | overflows %llu | lost %llu",
             v->device, v->rate_hz, v->kind_name, v->elapsed_s, (unsigned long long)v->overflows,
             (unsigned long long)v->lost_frames);
    mvprintw(LINES - 1, 1, "keys: q quit   r reset holds/counters   space freeze   s readings/spectrum");
    refresh();
}
