/* The watch command: a live modulation and distortion meter in the terminal.
 * SPDX-License-Identifier: MIT
 *
 * Captures as live does, pushes every update's frames (a tenth of a second) into a sliding
 * window (dsp/monitor.h) that is re-analysed with the measure command's dsp code, keeps the
 * peak-hold markers (dsp/peakhold.h) and the latched overmodulation warning, and shows them on
 * a full-screen display (analyzer/screen.c) or, with --plain, as one line of name=value pairs
 * per update.
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/watch.h"

#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/input.h"
#include "analyzer/commands.h"
#include "analyzer/measure.h"
#include "analyzer/registry.h"
#include "analyzer/values.h"
#include "dsp/channels.h"
#include "dsp/figures.h"
#include "dsp/peakhold.h"
#include "dsp/stats.h"
#include "io/audio.h"
#include "io/printable.h"
#include "io/report.h"

#define UPDATE_S 0.1          /* analysis and display period                                 */
#define DEFAULT_WINDOW_S 1.0
#define DETECT_S 1.0          /* opening capture looked at by --kind auto for one channel     */

static void watch_usage(FILE *f)
{
    fprintf(f,
            "usage: modlens watch [--plain] [--window-s S] [capture options] [analysis options]\n"
            "\n"
            "A live meter: captures from a sound-card input and shows modulation (if/iq) or distortion\n"
            "(audio) figures, re-analysed every %.0f ms over a sliding window with the same code as\n"
            "'modlens measure'.\n"
            "\n"
            "  --plain                 one line of name=value pairs per update instead of the full-screen\n"
            "                          display (also when standard output is not a terminal or TERM is\n"
            "                          dumb)\n"
            "  --window-s S            length of the analysed window, 0.1..10 s (default %.1f)\n"
            "  --seconds S             stop after S seconds (default: run until q or Ctrl-C)\n"
            "  --device, --rate, --channels   as for 'modlens live'\n"
            "  --kind, --channel, --swap-iq, --carrier, --bandwidth, --band, --tone, --no-tone,\n"
            "  --with-tone, --harmonics, --mains, --window, --peak-hold-ms, --carrier-reference,\n"
            "  --limits, --full-scale-dbu, --calibration, --card, --no-settings\n"
            "                         as for 'modlens measure'\n"
            "\n"
            "C, the unmodulated carrier, is latched from an unmodulated stretch the window holds (or\n"
            "taken from --carrier-reference) and kept until the r key.\n"
            "Peak-hold markers hold a peak for %.0f s, then fall by %.0f %% of modulation per second.\n"
            "The overmodulation warning latches when the negative peak goes beyond the profile's limit\n"
            "(100 %% without one: a reversed carrier), the carrier is off for more than the profile's\n"
            "carrier_off_pct_max of the window (0.5 %% without one: pinch-off), or the positive peak\n"
            "exceeds the profile's limit (125 %% without one), until reset. A window without a carrier\n"
            "line shows 'no carrier' and latches nothing; audio shows the input level with a latched\n"
            "clip mark.\n"
            "keys: q quit, r reset holds, counters and clip mark, space freeze, s readings/spectrum.\n\n%s",
            1000 * UPDATE_S, DEFAULT_WINDOW_S, ML_WATCH_HOLD_S, ML_WATCH_DECAY_PCT_S, ml_cli_safety);
}

static ml_source *volatile g_src;

static void on_stop(int sig)
{
    (void)sig;
    ml_source_stop(g_src);
}

/* The registered metrics a plain line shows, in order (names, units and decimals from the
 * registry, values from analyzer/values.h: the same as measure's report). */
static const char *const PLAIN_MOD[] = {
    "carrier.frequency_hz", "carrier.offset_hz", "carrier.level_dbfs", "carrier.unmodulated_dbfs",
    "carrier.cnr_db", "modulation.index", "modulation.positive_peak_pct", "modulation.negative_peak_pct",
    "modulation.carrier_shift_pct", "modulation.envelope_thd_pct", "modulation.hum_db",
    "modulation.pinch_off_events", "modulation.positive_peak_held_pct", "modulation.carrier_off_pct",
};
#define PLAIN_MOD_C 3     /* carrier_reference follows the fourth name                      */
#define PLAIN_MOD_HOLDS 7 /* the holds follow the eighth                                    */
static const char *const PLAIN_AUDIO[] = {
    "audio.rms_dbfs", "audio.fundamental_hz", "audio.fundamental_dbfs", "audio.thd_pct", "audio.thdn_pct",
    "audio.snr_db", "audio.sinad_db", "hum.level_dbfs", "hum.level_dbc", "audio.peak_dbfs",
};
/* below one 24-bit LSB (2^-23): nothing but zeros (or denormals) in the window */
#define SILENCE_DBFS (-138.5)

/* " name=value" under the short name (analyzer/values.h), the value empty when not measured. */
static void pv(FILE *f, const char *name, double v, int decimals)
{
    fprintf(f, " %s=", ml_values_short_name(name));
    if (isfinite(v)) {
        char buf[64];
        ml_report_number(buf, sizeof buf, v, decimals, false); /* never "-0.00" */
        fputs(buf, f);
    }
}

/* A registered metric's value from v[n] as a cell (ml_values_cell: empty when not measured, "<x"
 * or ">x" for a bound). */
static void pv_registered(FILE *f, const char *name, const ml_value *v, size_t n, bool have)
{
    const ml_value *x = have ? ml_values_get(v, n, name) : NULL;
    char cell[64] = "";
    if (x != NULL)
        ml_values_cell(x, cell, sizeof cell);
    fprintf(f, " %s=%s", ml_values_short_name(name), cell);
}

/* The bench figures of an audio window (analyzer/bench.h): weighted noise; with a calibration the
 * tone's and the window's level in dBu; with a card profile the figures it limits. */
static void plain_bench(FILE *f, const ml_watch_view *v)
{
    const ml_analysis_opts *an = v->an;
    const bool volts = an && !isnan(an->full_scale_dbu);
    ml_volt_figures vf;
    if (volts) {
        const ml_level_cal cal = {.full_scale_dbu = an->full_scale_dbu};
        ml_bench_volts(&cal, 0, 0, &v->res.audio, &v->res.noise, v->res.rms_dbfs, &vf);
    }
    ml_value vals[ML_VALUES_MAX];
    const size_t n = ml_values_bench(&v->res.noise, &vf, volts, false, vals);
    static const char *const shown[] = {"audio.noise_a_dbfs", "audio.snr_a_db", "audio.fundamental_dbu",
                                        "audio.rms_dbu"};
    for (size_t i = 0; i < sizeof shown / sizeof *shown; i++)
        if (i < 2 || volts)
            pv_registered(f, shown[i], vals, n, v->have);
    if (an && an->card) {
        char names[256] = "";
        if (v->have)
            ml_bench_card_limited_names(an, v->channel, &v->res.audio, &v->res.noise, names, sizeof names);
        fprintf(f, " card_limited=%s", names[0] ? names : "none");
    }
}

static void plain_line(FILE *f, const ml_watch_view *v)
{
    /* signal: 1 a carrier (if/iq) or a signal (audio) in the window, 0 none, empty before it is full */
    fprintf(f, "elapsed_s=%.2f window_s=%.2f signal=%s", v->elapsed_s, v->window_s,
            v->kind != ML_MONITOR_AUDIO && !v->filled ? "" : v->no_signal ? "0" : "1");
    ml_value vals[ML_VALUES_MAX];
    size_t n = 0;
    if (v->kind == ML_MONITOR_AUDIO) {
        /* the window's levels under measure's names; the meter's own over the update */
        ml_level_figures lv = {.rms_dbfs = v->res.rms_dbfs, .peak_dbfs = v->res.peak_dbfs, .dc_offset_pct = NAN,
                               .peak_mark = {ML_FIG_NONE, ML_WHY_OK}};
        n = ml_values_level(&lv, "audio", vals);
        n += ml_values_audio(&v->res.audio, vals + n);
        for (size_t i = 0; i < sizeof PLAIN_AUDIO / sizeof *PLAIN_AUDIO; i++)
            pv_registered(f, PLAIN_AUDIO[i], vals, n, v->have);
        pv(f, "input_peak_dbfs", v->level_peak_dbfs, 2);
        pv(f, "input_rms_dbfs", v->level_rms_dbfs, 2);
        fprintf(f, " clip=%d", v->clip ? 1 : 0);
        plain_bench(f, v);
    } else {
        const ml_modulation_result *m = &v->res.modulation;
        n = ml_values_modulation(m, v->nominal_hz, false, vals);
        for (size_t i = 0; i < sizeof PLAIN_MOD / sizeof *PLAIN_MOD; i++) {
            pv_registered(f, PLAIN_MOD[i], vals, n, v->have);
            if (i == PLAIN_MOD_C) /* where C comes from, as in log's rows */
                fprintf(f, " carrier_reference=%s",
                        v->have && ml_values_c_word(m) ? ml_values_c_word(m) : "");
            if (i == PLAIN_MOD_HOLDS) { /* the holds beside the peaks; decimals as the peaks' */
                pv(f, "positive_peak_hold_pct", v->pos_hold_pct, 2);
                pv(f, "negative_peak_hold_pct", v->neg_hold_pct, 2);
            }
        }
        fprintf(f, " overmodulation=%d overmodulated_updates=%llu", v->overmod ? 1 : 0,
                (unsigned long long)v->overmod_updates);
    }
    fprintf(f, " overflows=%llu lost_frames=%llu\n", (unsigned long long)v->overflows,
            (unsigned long long)v->lost_frames);
    fflush(f);
}

/* Own options out of argv (into *plain, *window_s, *seconds_given); the rest goes to measure's
 * parser. 0, -1 after --help, or an exit status. */
static int own_options(int argc, char **argv, char **rest, int *nrest, bool *plain, double *window_s,
                       bool *seconds_given)
{
    *nrest = 0;
    for (int i = 0; i < argc; i++) {
        const char *a = argv[i];
        if (i > 0 && (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0)) {
            watch_usage(stdout);
            return -1;
        }
        if (i > 0 && strcmp(a, "--plain") == 0) {
            *plain = true;
            continue;
        }
        if (i > 0 && (strcmp(a, "--window-s") == 0 || strncmp(a, "--window-s=", 11) == 0)) {
            const char *val = a[10] == '=' ? a + 11 : (i + 1 < argc ? argv[++i] : NULL);
            if (val == NULL)
                return ml_cli_error("--window-s needs a value (try 'modlens watch --help')");
            if (!ml_cli_number(val, window_s) || !(*window_s >= 0.1 && *window_s <= 10))
                return ml_cli_error("--window-s: '%s' is not a time in seconds, 0.1..10", val);
            continue;
        }
        if (i > 0 && (strcmp(a, "--seconds") == 0 || strncmp(a, "--seconds=", 10) == 0))
            *seconds_given = true;
        rest[(*nrest)++] = argv[i];
    }
    rest[*nrest] = NULL;
    return 0;
}

/* The profile's max for metric, NAN when it has none. */
static double profile_max(const ml_limits *l, const char *metric)
{
    for (size_t i = 0; l && i < l->n; i++)
        if (strcmp(l->items[i].metric, metric) == 0 && l->items[i].has_max)
            return l->items[i].max;
    return NAN;
}

static bool want_plain(bool asked)
{
    const char *term = getenv("TERM");
    return asked || !isatty(STDOUT_FILENO) || term == NULL || term[0] == '\0' || strcmp(term, "dumb") == 0;
}

/* The meter's state between its steps. */
typedef struct {
    ml_measure_opts o;
    bool plain, seconds_given;
    double window_s;
    ml_segment seg;
    double rate;
    ml_kind kind;
    ml_channels ch;
    double ref_c;                    /* C from --carrier-reference, or NAN                     */
    ml_monitor *mon;
    ml_peakhold *hold_pos, *hold_neg;
    ml_watch_view *v;
    ml_screen *scr;
    size_t upd;                      /* frames per update                                       */
    float *buf, *re, *im;
    ml_live_stats ls;
    uint64_t base_over, base_lost, frames;
    struct sigaction old_int, old_term, old_hup;
} watcher;

/* Options: watch's own, then measure's groups; refuses what belongs to live. 0, -1 after --help,
 * or an exit status. */
static int parse(int argc, char **argv, watcher *w)
{
    char **rest = calloc((size_t)argc + 1, sizeof *rest);
    if (rest == NULL)
        return ml_cli_error("out of memory");
    w->window_s = DEFAULT_WINDOW_S;
    int nrest = 0;
    int rc = own_options(argc, argv, rest, &nrest, &w->plain, &w->window_s, &w->seconds_given);
    if (rc == 0)
        rc = ml_measure_parse(nrest, rest, &w->o, 0);
    free(rest);
    const ml_measure_opts *o = &w->o;
    if (rc == 0
        && (o->in.play || o->in.save_path || o->out.plot_path || o->out.report_path || o->out.output_path
            || o->in.reference_channel > 0 || o->in.start_s > 0 || o->in.duration_s > 0 || o->an.imd_given))
        return ml_cli_error("watch does not take --play-tone, --save, --plot, --report, --output, "
                            "--reference-channel, --start, --duration or --imd (see 'modlens live')");
    return rc;
}

/* The input step: the device, its kind and channels (as measure decides them, from the opening
 * second), C's reference. Ctrl-C, SIGTERM and SIGHUP stop the capture from here on. */
static int open_input(watcher *w)
{
    ml_live_config lc = ml_live_config_default();
    lc.head_s = DETECT_S + 1.0; /* the auto-kind look at the opening second seeks back into it */
    int rc = ml_input_open_device(&w->o.in, &lc, &w->seg);
    if (rc != 0)
        return rc;
    w->rate = w->seg.info->rate_hz;
    g_src = w->seg.src;
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_stop;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, &w->old_int);
    sigaction(SIGTERM, &sa, &w->old_term);
    sigaction(SIGHUP, &sa, &w->old_hup); /* the terminal went away: stop cleanly, as for Ctrl-C */
    double carrier_hz;
    char reason[384];
    w->seg.nframes = (int64_t)llround(DETECT_S * w->rate); /* the look ahead's limit */
    rc = ml_input_kind(&w->o.in, &w->o.an, &w->seg, DETECT_S, &w->kind, &carrier_hz, reason, sizeof reason);
    if (rc == 0)
        rc = ml_input_channels(&w->o.in, &w->seg, w->kind, &w->ch);
    w->ref_c = NAN; /* C from --carrier-reference: near --carrier, else its strongest component */
    if (rc == 0 && w->o.an.carrier_reference && w->kind != ML_KIND_AUDIO)
        rc = ml_input_reference_carrier(w->o.an.carrier_reference, &w->o.in, w->kind == ML_KIND_IQ, w->rate,
                                        w->o.an.carrier_hz, &w->ref_c);
    return rc;
}

/* The sliding-window analysis, the peak holds, the buffers and the display's state. */
static int make_meter(watcher *w)
{
    const ml_measure_opts *o = &w->o;
    ml_monitor_config mc = ml_monitor_config_default(w->rate, w->kind == ML_KIND_IQ   ? ML_MONITOR_IQ
                                                              : w->kind == ML_KIND_IF ? ML_MONITOR_IF
                                                                                      : ML_MONITOR_AUDIO);
    mc.window_s = w->window_s;
    mc.window = o->an.window;
    mc.audio = o->an.audio;
    mc.carrier_hz = o->an.carrier_hz;
    mc.bandwidth_hz = o->an.bandwidth_hz;
    mc.peak_hold_s = o->an.peak_hold_ms / 1000.0;
    ml_watch_view *v = w->v;
    v->pos_limit_pct = profile_max(o->out.limits, "modulation.positive_peak_pct");
    v->neg_limit_pct = profile_max(o->out.limits, "modulation.negative_peak_pct");
    v->latch_limit_pct = isfinite(v->pos_limit_pct) ? v->pos_limit_pct : mc.positive_limit_pct;
    v->neg_latch_pct = isfinite(v->neg_limit_pct) ? v->neg_limit_pct : 100.0;
    v->off_latch_pct = profile_max(o->out.limits, "modulation.carrier_off_pct");
    if (!isfinite(v->off_latch_pct))
        v->off_latch_pct = 0.5;
    v->level_peak_dbfs = v->level_rms_dbfs = NAN;
    mc.positive_limit_pct = v->latch_limit_pct;
    const ml_peakhold_config hc = {.hold_s = ML_WATCH_HOLD_S, .decay_per_s = ML_WATCH_DECAY_PCT_S};
    w->upd = (size_t)llround(UPDATE_S * w->rate);
    w->buf = malloc(w->upd * w->ch.stride * sizeof *w->buf);
    w->re = malloc(w->upd * sizeof *w->re);
    w->im = malloc(w->upd * sizeof *w->im);
    if (w->buf == NULL || w->re == NULL || w->im == NULL)
        return ml_cli_error("out of memory");
    ml_status st;
    if ((st = ml_monitor_create(&mc, &w->mon)) != ML_OK
        || (st = ml_peakhold_create(&hc, &w->hold_pos)) != ML_OK
        || (st = ml_peakhold_create(&hc, &w->hold_neg)) != ML_OK)
        return ml_cli_error("watch: cannot set up the analysis: %s%s", ml_strerror(st),
                            st == ML_EINVAL ? " (--window-s too short for the sample rate?)" : "");
    ml_monitor_set_reference(w->mon, w->ref_c);
    ml_source_live_stats(w->seg.src, &w->ls);
    v->kind = mc.kind;
    v->kind_name = w->kind == ML_KIND_IQ ? "iq" : w->kind == ML_KIND_IF ? "if" : "audio";
    ml_printable(v->device, sizeof v->device, w->ls.device_name);
    v->rate_hz = w->rate;
    v->window_s = (double)ml_monitor_window_frames(w->mon) / w->rate;
    v->pos_hold_pct = v->neg_hold_pct = NAN;
    v->nominal_hz = o->an.carrier_hz;
    v->an = &o->an;
    v->channel = (int)o->in.channel;
    char settings[ML_REPORT_SETTINGS_LEN];
    ml_bench_settings_text(&o->an, settings, sizeof settings);
    if (settings[0]) /* before the screen takes the terminal */
        fprintf(stderr, "modlens: watch: %s\n", settings);
    return 0;
}

/* The latched overmodulation warning, on the figures of a window that holds a carrier: negative
 * peaks beyond the limit (a reversed carrier), the carrier off longer than its share (pinch-off),
 * or a positive peak over the limit: the checks of the profile (profiles/am-broadcast-us.ini). */
static void overmodulation(watcher *w, const ml_modulation_result *m)
{
    ml_watch_view *v = w->v;
    const bool neg = m->negative_peak_pct > v->neg_latch_pct;
    const bool off = m->carrier_off_pct > v->off_latch_pct;
    const bool high = m->positive_peak_pct > v->latch_limit_pct;
    if (!neg && !off && !high)
        return;
    v->overmod_updates++;
    if (!v->overmod) {
        v->overmod = true;
        v->overmod_at_s = (double)w->frames / w->rate;
        snprintf(v->overmod_why, sizeof v->overmod_why, "%s",
                 off   ? "carrier pinch-off"
                 : neg ? "phase reversal: negative peak beyond the limit"
                       : "positive peak over the limit");
    }
}

/* The audio input's level over the update's n frames x[n] (dsp/figures.h: peak and r.m.s. dBFS,
 * samples within one 24-bit LSB of full scale clipped) and its latched clip mark: every captured
 * sample is looked at once. */
static void input_level(watcher *w, const float *x, size_t n)
{
    ml_watch_view *v = w->v;
    if (n == 0)
        return;
    ml_stats st;
    ml_stats_init(&st, 24);
    ml_stats_push(&st, x, n);
    ml_level_figures lv;
    ml_figures_level(&st, 1, &lv);
    v->level_peak_dbfs = lv.peak_dbfs;
    v->level_rms_dbfs = lv.rms_dbfs;
    if (lv.clipped > 0 && !v->clip) {
        v->clip = true;
        v->clip_at_s = (double)w->frames / w->rate;
    }
}

/* The display's state after an update (not while frozen). */
static void show(watcher *w, const ml_monitor_result *r, bool have, bool filled)
{
    ml_watch_view *v = w->v;
    if (v->frozen)
        return;
    v->elapsed_s = (double)w->frames / w->rate;
    v->overflows = w->ls.overflow_events - w->base_over;
    v->lost_frames = w->ls.lost_frames - w->base_lost;
    v->have = have;
    v->filled = filled;
    v->no_signal = v->kind == ML_MONITOR_AUDIO ? !(v->level_peak_dbfs >= SILENCE_DBFS)
                                               : filled && (!r->carrier_ok || r->modulation.absent_s > 0);
    v->absent_s = v->kind == ML_MONITOR_AUDIO ? NAN
                  : r->gap_s > 0          ? r->gap_s
                  : r->carrier_ok         ? r->modulation.absent_s
                                          : NAN;
    if (have)
        v->res = *r;
    v->pos_hold_pct = ml_peakhold_get_value(w->hold_pos);
    v->neg_hold_pct = ml_peakhold_get_value(w->hold_neg);
    v->ncols = 0;
    if (v->spectrum && w->scr) {
        size_t nc = ml_screen_columns(w->scr);
        if (ml_monitor_get_columns(w->mon, v->col_db, nc, &v->col_lo_hz, &v->col_hi_hz) == ML_OK)
            v->ncols = nc;
    }
}

/* The keys pressed since the last update; true when q quits. */
static bool keys(watcher *w)
{
    ml_watch_view *v = w->v;
    bool quit = false;
    for (int key; (key = ml_screen_key(w->scr)) != -1;) {
        if (key == 'q' || key == 'Q') {
            quit = true;
        } else if (key == 'r' || key == 'R') {
            ml_peakhold_reset(w->hold_pos);
            ml_peakhold_reset(w->hold_neg);
            ml_monitor_set_reference(w->mon, w->ref_c); /* forgets a latched C */
            v->pos_hold_pct = v->neg_hold_pct = NAN;
            v->overmod = false;
            v->clip = false;
            v->overmod_updates = 0;
            w->base_over = w->ls.overflow_events;
            w->base_lost = w->ls.lost_frames;
            v->overflows = v->lost_frames = 0;
        } else if (key == ' ') {
            v->frozen = !v->frozen;
        } else if (key == 's' || key == 'S' || key == '\t') {
            v->spectrum = !v->spectrum;
            v->ncols = 0;
            size_t nc = ml_screen_columns(w->scr);
            if (v->spectrum
                && ml_monitor_get_columns(w->mon, v->col_db, nc, &v->col_lo_hz, &v->col_hi_hz) == ML_OK)
                v->ncols = nc;
        }
    }
    return quit;
}

#define STOP (-1) /* update's "the end, Ctrl-C or q" */

/* One update: a tenth of a second in, the window analysed, holds and warning, the display. 0 to
 * go on, STOP, or an exit status (error printed). */
static int update(watcher *w, uint64_t stop_at)
{
    size_t want = w->upd, got = 0;
    if (stop_at - w->frames < want)
        want = (size_t)(stop_at - w->frames);
    ml_status st = ml_source_read(w->seg.src, w->buf, want, &got);
    ml_channels_split(&w->ch, w->buf, got, w->re, w->im);
    ml_monitor_push(w->mon, w->re, w->im, got);
    w->frames += got;
    if (st != ML_OK)
        return ml_cli_error("%s: %s", w->ls.device_name, ml_source_detail(w->seg.src));
    if (got < want) /* Ctrl-C or the end */
        return STOP;
    ml_monitor_result r;
    st = ml_monitor_analyse(w->mon, &r);
    if (st == ML_ENOMEM || st == ML_EFFT)
        return ml_cli_error("watch: analysis failed: %s", ml_strerror(st));
    /* if/iq: ML_OK only for a window with a carrier line; a window where it is absent for a while
     * (blocks without carrier, dsp/modulation.h) is shown as without carrier too: the signal is
     * going or coming, and nothing latches then */
    const bool have = st == ML_OK && !(w->kind != ML_KIND_AUDIO && r.modulation.absent_s > 0);
    const bool filled = ml_monitor_fill(w->mon) == ml_monitor_window_frames(w->mon);
    const double dt = (double)got / w->rate;
    ml_peakhold_push(w->hold_pos, dt, have ? r.modulation.positive_peak_pct : NAN);
    ml_peakhold_push(w->hold_neg, dt, have ? r.modulation.negative_peak_pct : NAN);
    if (have && w->kind != ML_KIND_AUDIO)
        overmodulation(w, &r.modulation);
    if (w->kind == ML_KIND_AUDIO)
        input_level(w, w->re, got);
    ml_source_live_stats(w->seg.src, &w->ls);
    show(w, &r, have, filled);
    if (w->scr == NULL) {
        if (!w->v->frozen)
            plain_line(stdout, w->v);
        return 0;
    }
    const bool quit = keys(w);
    ml_screen_draw(w->scr, w->v);
    return quit ? STOP : 0;
}

int ml_cmd_watch(int argc, char **argv)
{
    static watcher w;
    static ml_watch_view view;
    memset(&w, 0, sizeof w);
    memset(&view, 0, sizeof view);
    w.v = &view;
    w.ch.stride = 1;
    int rc = parse(argc, argv, &w);
    if (rc != 0)
        return rc < 0 ? ML_EXIT_OK : rc;
    static ml_limits limits;
    ml_finish_files files; /* watch writes no file: only the checks and the profile */
    rc = ml_measure_prepare(&w.o, &limits, &files);
    if (rc != 0)
        return rc;
    ml_finish_files_free(&files);
    rc = open_input(&w);
    if (rc == 0)
        rc = make_meter(&w);
    if (rc == 0 && !want_plain(w.plain) && (w.scr = ml_screen_open()) == NULL)
        w.plain = true;
    const uint64_t stop_at = w.seconds_given ? (uint64_t)llround(w.o.in.seconds * w.rate) : UINT64_MAX;
    while (rc == 0 && w.frames < stop_at) {
        rc = update(&w, stop_at);
        if (rc != 0 && w.scr) { /* an error line must not vanish with the screen */
            ml_screen_close(w.scr);
            w.scr = NULL;
        }
    }
    if (rc == STOP)
        rc = 0;
    ml_screen_close(w.scr);
    if (w.seg.src) {
        ml_source_stop(w.seg.src);
        sigaction(SIGINT, &w.old_int, NULL);
        sigaction(SIGTERM, &w.old_term, NULL);
        sigaction(SIGHUP, &w.old_hup, NULL);
    }
    g_src = NULL;
    ml_source_close(w.seg.src);
    ml_monitor_destroy(w.mon);
    ml_peakhold_destroy(w.hold_pos);
    ml_peakhold_destroy(w.hold_neg);
    free(w.buf);
    free(w.re);
    free(w.im);
    return rc;
}
