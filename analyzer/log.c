/* The log command: hours-long noise and interference logging, one CSV row per interval plus events.
 * SPDX-License-Identifier: MIT
 *
 * argv -> options (the input, analysis and the log's own groups) -> the input step
 * (analyzer/input.h: a file or a live device, its kind and channels) -> the time grid
 * (analyzer/log_grid.c: per-interval levels, spectra, detectors and, for if/iq, measure's
 * modulation figures of each interval) -> events (analyzer/log_events.c) and append-safe CSV
 * rows (analyzer/log_rows.c) -> summary (and plot). ml_log_run works on any ml_source: unknown
 * length (frames == -1), lost frames (ml_source_lost_frames before/after each read: a marked gap)
 * and a read error mid-stream (the log ends cleanly with the reason).
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/input.h"
#include "analyzer/log_internal.h"
#include "io/logplot.h"

#define MAX_LEVEL 1e30f    /* largest sample magnitude logged as it is                               */
#define DEVICE_LOOK_S 1.0 /* opening capture looked at by --kind auto and for the carrier (live) */

static volatile sig_atomic_t g_stop = 0;

static void on_signal(int sig)
{
    g_stop = sig;
}

static void log_usage(FILE *f)
{
    fprintf(f,
            "usage: modlens log [options] --out FILE.csv (FILE | --device NAME|INDEX)\n"
            "\n"
            "Logs level, hum, noise floor and interference events for hours or days, one CSV row per\n"
            "interval (written and flushed as soon as it is complete) and one line per event; for an IF\n"
            "or I/Q input each row also carries measure's carrier and modulation figures of its interval.\n"
            "\n"
            "input:\n"
            "  FILE                    an audio file of any length (streamed)\n"
            "  --device NAME|INDEX     live input (--rate HZ, --channels N)\n"
            "  --kind auto|audio|if|iq what the input holds (default auto, decided as 'modlens measure'\n"
            "                          does)\n"
            "  --channel N, --swap-iq  channel to log, 1-based (for iq the I channel; default 1)\n"
            "  --start-time ISO        UTC time of a file's start, YYYY-MM-DDTHH:MM:SS[.fff]Z (default:\n"
            "                          the file's modification time minus its duration)\n"
            "  --seconds S             stop after S seconds (default: end of input or Ctrl-C)\n"
            "output:\n"
            "  --out FILE              interval rows (CSV); an existing log is continued, not overwritten\n"
            "  --events FILE           events (CSV; default: --out with -events before the extension)\n"
            "  --interval S            row interval in seconds, 0.05 .. 86400 (default 1)\n"
            "  --rotate-hours H        new files every H hours of UTC time (NAME-YYYYMMDDTHHMMSSZ.csv)\n"
            "  --plot FILE.png         at the end, draw the level history with events and a spectrogram\n"
            "detection:\n"
            "  --impulse-db DB         impulse: 1 ms level above the median of the last second (20)\n"
            "  --hum-db DB             hum event: hum-over-floor rise above its baseline (10)\n"
            "  --noise-db DB           noise event: noise-floor rise above its baseline (6)\n"
            "  --carrier-loss-db DB    carrier-loss event (if/iq): carrier fall below its baseline (10)\n"
            "analysis: --mains, --band, --tone, --harmonics, --window, --carrier, --bandwidth,\n"
            "  --carrier-reference, --peak-hold-ms as for 'modlens measure' (C is latched from an\n"
            "  unmodulated stretch the log hears, or taken from --carrier-reference)\n"
            "  --full-scale-dbu DB, --calibration FILE, --no-settings   as for 'modlens measure':\n"
            "  with a calibration the level columns are rms_dbu, peak_dbu and a_weighted_dbu\n"
            "testing:\n"
            "  --pace X                read a file at X times real time (to test interruption)\n"
            "\n"
            "SIGINT/SIGTERM end the log cleanly and print the summary. Exit status: 0 ended normally,\n"
            "1 the input failed mid-way (the log ends with the reason), 2 usage or input error.\n\n%s",
            ml_cli_safety);
}

enum {
    O_START = ML_OPT_ID_OWN,
    O_OUT,
    O_EVENTS,
    O_INTERVAL,
    O_ROTATE,
    O_PLOT,
    O_IMP,
    O_HUM,
    O_NOISE,
    O_LOSS,
    O_PACE
};

/* The log's own options; 0 or an exit status. */
static int own_option(int ch, const char *arg, const char *name, ml_log_opts *o)
{
    double v;
    switch (ch) {
    case O_START: /* a real calendar date (analyzer/cli.h) */
        if (!ml_cli_utc(arg, &o->start_utc))
            return ml_cli_error("--start-time: '%s' is not a UTC time YYYY-MM-DDTHH:MM:SS[.fff]Z", arg);
        o->have_start = true;
        return 0;
    case O_OUT: o->out = arg; return 0;
    case O_EVENTS: o->events = arg; return 0;
    case O_PLOT: o->plot = arg; return 0;
    case O_INTERVAL:
        if (!ml_cli_number(arg, &v) || v < 0.05 || v > 86400)
            return ml_cli_error("--interval: '%s' is not a time in seconds, 0.05 .. 86400", arg);
        o->interval_s = v;
        return 0;
    case O_ROTATE:
        if (!ml_cli_number(arg, &v) || v <= 0 || v > 8760)
            return ml_cli_error("--rotate-hours: '%s' is not a number of hours, 0 < H <= 8760", arg);
        o->rotate_h = v;
        return 0;
    case O_PACE:
        if (!ml_cli_number(arg, &v) || v <= 0)
            return ml_cli_error("--pace: '%s' is not a speed factor > 0", arg);
        o->pace = v;
        return 0;
    default: /* the detection thresholds */
        if (!ml_cli_number(arg, &v) || v <= 0 || v > 200)
            return ml_cli_error("%s: '%s' is not a level in dB, 0 < DB <= 200", name, arg);
        *(ch == O_IMP     ? &o->impulse_db
          : ch == O_HUM   ? &o->hum_db
          : ch == O_NOISE ? &o->noise_db
                          : &o->loss_db) = v;
        return 0;
    }
}

/* The input and output named on the command line fit together. */
static int check_inputs(const ml_log_opts *o)
{
    if (o->in.path && o->in.device)
        return ml_cli_error("log takes either an input FILE or --device, not both");
    if (!o->in.path && !o->in.device)
        return ml_cli_error("log needs an input FILE or --device (try 'modlens log --help')");
    if (!o->in.device && (o->in.rate_hz > 0 || o->in.channels > 0))
        return ml_cli_error("--rate and --channels apply to --device input only");
    if (o->out == NULL)
        return ml_cli_error("log needs --out FILE.csv");
    return 0;
}

int ml_log_parse(int argc, char **argv, ml_log_opts *o)
{
    static const struct option own[] = {
        {"start-time", required_argument, NULL, O_START}, {"out", required_argument, NULL, O_OUT},
        {"events", required_argument, NULL, O_EVENTS}, {"interval", required_argument, NULL, O_INTERVAL},
        {"rotate-hours", required_argument, NULL, O_ROTATE}, {"plot", required_argument, NULL, O_PLOT},
        {"impulse-db", required_argument, NULL, O_IMP}, {"hum-db", required_argument, NULL, O_HUM},
        {"noise-db", required_argument, NULL, O_NOISE}, {"carrier-loss-db", required_argument, NULL, O_LOSS},
        {"pace", required_argument, NULL, O_PACE}, {"help", no_argument, NULL, 'h'}, {NULL, 0, NULL, 0},
    };
    struct option longopts[64];
    ml_options_table(ML_OPTS_SOURCE | ML_OPTS_DEVICE | ML_OPTS_AUDIO | ML_OPTS_MODULATION | ML_OPTS_LEVELS,
                     own, longopts, sizeof longopts / sizeof *longopts);
    memset(o, 0, sizeof *o);
    o->in = ml_input_opts_default();
    o->in.seconds = 0; /* no limit */
    o->an = ml_analysis_opts_default();
    ml_output_opts unused = ml_output_opts_default();
    o->interval_s = 1.0;
    o->impulse_db = 20.0;
    o->hum_db = 10.0;
    o->noise_db = 6.0;
    o->loss_db = 10.0;
    opterr = 0;
    optind = 1;
    int ch, rc, li;
    while ((li = -1, ch = getopt_long(argc, argv, ":h", longopts, &li)) != -1) {
        if ((rc = ml_options_apply(ch, optarg, &o->in, &o->an, &unused)) > 0)
            return rc;
        if (rc == 0)
            continue;
        switch (ch) {
        case 'h': log_usage(stdout); return -1;
        case ':': case '?': return ml_cli_bad_option(ch, argv, "log");
        default: { /* named from the table: argv[optind - 1] may be the value */
            char name[40];
            snprintf(name, sizeof name, "--%s", li >= 0 ? longopts[li].name : "?");
            if ((rc = own_option(ch, optarg, name, o)) != 0)
                return rc;
        }
        }
    }
    if (optind < argc - 1)
        return ml_cli_error("log takes one input FILE; extra argument '%s'", argv[optind + 1]);
    if (optind == argc - 1)
        o->in.path = argv[optind];
    o->in.live = o->in.device != NULL;
    return (rc = check_inputs(o)) != 0 ? rc
                                       : ml_bench_setup(ML_BENCH_MAINS | ML_BENCH_CAL, &o->in, &o->an, NULL);
}

/* The input step for a file: open it, its start in UTC, its kind. */
static int open_file(ml_log_opts *o, ml_segment *seg, double *start_utc, char *reason, size_t len)
{
    int rc = ml_input_open_file(&o->in, seg);
    if (rc != 0)
        return rc;
    if (o->have_start) {
        *start_utc = o->start_utc;
    } else {
        struct stat sb;
        if (stat(o->in.path, &sb) != 0)
            return ml_cli_error("%s: cannot inspect: %s", o->in.path, strerror(errno));
        const double dur = (double)seg->info->frames / seg->info->rate_hz;
        *start_utc = (double)sb.st_mtim.tv_sec + 1e-9 * (double)sb.st_mtim.tv_nsec - dur;
    }
    double carrier;
    return ml_input_kind(&o->in, &o->an, seg, ML_INPUT_LOOK_S, &o->in.kind, &carrier, reason, len);
}

/* The input step for a device: open it (keeping its opening seconds for the look-ahead), the wall
 * clock as its start, its kind. */
static int open_device(ml_log_opts *o, ml_segment *seg, double *start_utc, char *reason, size_t len)
{
    ml_live_config lc = ml_live_config_default();
    lc.head_s = DEVICE_LOOK_S + 1.0; /* the look-ahead seeks back into the opening capture */
    ml_input_opts in = o->in;
    if (in.device && strcmp(in.device, "default") == 0)
        in.device = NULL;
    int rc = ml_input_open_device(&in, &lc, seg);
    if (rc != 0)
        return rc;
    struct timespec now;
    clock_gettime(CLOCK_REALTIME, &now);
    *start_utc = (double)now.tv_sec + 1e-9 * (double)now.tv_nsec;
    seg->nframes = (int64_t)llround(DEVICE_LOOK_S * seg->info->rate_hz);
    double carrier;
    return ml_input_kind(&o->in, &o->an, seg, DEVICE_LOOK_S, &o->in.kind, &carrier, reason, len);
}

int ml_cmd_log(int argc, char **argv)
{
    ml_log_opts o;
    int rc = ml_log_parse(argc, argv, &o);
    if (rc != 0)
        return rc < 0 ? ML_EXIT_OK : rc;
    ml_segment seg;
    memset(&seg, 0, sizeof seg);
    double start_utc = 0;
    char reason[200];
    rc = o.in.live ? open_device(&o, &seg, &start_utc, reason, sizeof reason)
                   : open_file(&o, &seg, &start_utc, reason, sizeof reason);
    if (rc == 0)
        rc = ml_log_run(&o, seg.src, start_utc);
    ml_source_close(seg.src);
    return rc;
}

/* ---- the run --------------------------------------------------------------------------------- */

/* Reads an existing log's last row and resumes after it: a file input continues at that offset,
 * a live one keeps counting offsets from the first run's start. 1: the file is already logged. */
static int resume(ml_logger *L, const char *last)
{
    char f[64];
    double off, dur;
    if (!ml_log_csv_field(last, 1, f, sizeof f) || !ml_cli_number(f, &off)
        || !ml_log_csv_field(last, 2, f, sizeof f) || !ml_cli_number(f, &dur) || off < 0 || dur < 0)
        return ml_cli_error("%s: the last row cannot be read; choose another --out", L->rows_path);
    if (!L->o->in.live) {
        const int64_t at = (int64_t)llround((off + dur) * L->rate);
        if (L->info->frames >= 0 && at >= L->info->frames)
            return 1; /* already complete */
        if (ml_source_seek(L->src, at) != ML_OK)
            return ml_cli_error("%s: cannot continue at %.3f s: %s", L->o->in.path, off + dur,
                                ml_source_detail(L->src));
        L->pos = L->origin = at;
    } else {
        char u[64];
        double t0;
        if (ml_log_csv_field(last, 0, u, sizeof u) && ml_cli_utc(u, &t0)) {
            L->offset0_s = (t0 - off) > 0 ? L->start_utc - (t0 - off) : off + dur;
            if (L->offset0_s < off + dur)
                L->offset0_s = off + dur; /* a clock set back must not make offsets overlap */
            L->start_utc -= L->offset0_s;
        }
    }
    return 0;
}

/* Finds the files this run continues: follows rotation while the period's file has rows.
 * 1: the input is already logged. */
static int continue_files(ml_logger *L)
{
    const ml_log_opts *o = L->o;
    char last[4096];
    int64_t period = ml_log_period_of(o, L->start_utc);
    for (int hop = 0;; hop++) {
        int rc = ml_log_open_outputs(L, period, last, sizeof last);
        if (rc != 0 || last[0] == '\0')
            return rc;
        if ((rc = resume(L, last)) != 0)
            return rc;
        const int64_t p2 = ml_log_period_of(o, L->start_utc + ml_log_offset_of(L, L->pos));
        if (p2 == period || hop > 100000 || o->in.live)
            return 0;
        char rp[1100], ep[1100];
        ml_log_paths_for(o, p2, rp, ep, sizeof rp);
        period = p2;
        if (!ml_logfile_has_rows(rp))
            return ml_log_open_outputs(L, period, last, sizeof last);
    }
}

/* if/iq: the carrier (the opening seconds from where the log starts, then back) and C's
 * reference; without a carrier there yet, the steps keep looking (analyzer/log_grid.c). */
static int setup_carrier(ml_logger *L)
{
    const ml_log_opts *o = L->o;
    if (!L->is_if && !L->is_complex)
        return 0;
    const double look = o->in.live ? DEVICE_LOOK_S : ML_INPUT_LOOK_S;
    ml_segment seg = {.src = L->src, .info = L->info, .first = L->pos, .live = o->in.live};
    seg.nframes = (int64_t)(look * L->rate);
    if (L->info->frames >= 0 && seg.nframes > L->info->frames - L->pos)
        seg.nframes = L->info->frames - L->pos;
    const char *name = o->in.live ? o->in.device : o->in.path;
    ml_spectrum *s = NULL;
    if (seg.nframes >= 256) {
        const int rc = ml_input_look_ahead(name, &seg, &L->ch, seg.nframes, &s);
        if (rc != 0)
            return rc;
        const ml_carrier_config cc = ml_carrier_config_default(L->rate, L->is_complex, o->an.carrier_hz);
        ml_carrier car;
        if (ml_carrier_find(s, &cc, &car) == ML_OK) /* else not yet: a transmitter may come on later */
            ml_log_set_carrier(L, car.frequency_hz, car.amplitude);
        ml_spectrum_destroy(s);
    }
    if (o->an.carrier_reference) {
        const double near = isnan(L->carrier_hz) ? o->an.carrier_hz : L->carrier_hz;
        const int rc = ml_input_reference_carrier(o->an.carrier_reference, &o->in, L->is_complex, L->rate,
                                                  near, &L->reference_c);
        if (rc != 0)
            return rc;
    }
    ml_log_start_modulation(L);
    return 0;
}

/* Sets up the logger for src: channels, carrier checks, objects, output files. 1: the input is
 * already logged; else 0 or an exit status. */
static int setup(ml_logger *L, const ml_log_opts *o, ml_source *src, double start_utc)
{
    L->o = o;
    L->src = src;
    L->start_utc = start_utc;
    L->carrier_hz = L->reference_c = NAN;
    L->mains_hz = o->an.audio.mains_hz;
    L->skip_events_until = -INFINITY;
    L->imp_counted = -1;
    L->info = ml_source_get_info(src);
    L->rate = L->info->rate_hz;
    L->is_complex = o->in.kind == ML_KIND_IQ;
    L->is_if = o->in.kind == ML_KIND_IF;
    const char *name = o->in.live ? o->in.device : o->in.path;
    if (ml_channels_map(L->info->channels, o->in.channel, L->is_complex, o->in.swap_iq, 0, &L->ch) != ML_OK)
        return ml_cli_error("%s: --channel %ld%s but the input has %d channel%s", name, o->in.channel,
                            L->is_complex ? " (and the next, for iq)" : "", L->info->channels,
                            L->info->channels == 1 ? "" : "s");
    if ((L->is_complex || L->is_if) && !isnan(o->an.carrier_hz)
        && !(fabs(o->an.carrier_hz) < L->rate / 2 && (L->is_complex || o->an.carrier_hz > 0)))
        return ml_cli_error("--carrier %.1f Hz is outside the input's band (rate %.0f Hz)", o->an.carrier_hz,
                            L->rate);
    L->ival_frames = (int64_t)llround(o->interval_s * L->rate);
    if (L->ival_frames < 256)
        return ml_cli_error("%s: --interval %.3f s is only %lld frames at %.0f Hz (at least 256 needed)",
                            name, o->interval_s, (long long)L->ival_frames, L->rate);
    ml_status st = ml_log_make_objects(L);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", name, ml_strerror(st));
    if (o->plot) {
        ml_history_config hc = ml_history_config_default();
        hc.nrows = ML_LOG_SG_ROWS;
        if (ml_history_create(&hc, &L->sgram) != ML_OK)
            return ml_cli_error("%s: out of memory", o->plot);
        ml_log_sgram_bands(L);
    }
    ml_log_reset_interval(L);
    int rc = continue_files(L);
    if (rc == 0)
        rc = setup_carrier(L);
    L->imp_base = L->pos;
    return rc;
}

static void pace(const ml_logger *L, const struct timespec *t0, int64_t frames)
{
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    const double elapsed = (double)(now.tv_sec - t0->tv_sec) + 1e-9 * (double)(now.tv_nsec - t0->tv_nsec);
    const double want = (double)frames / L->rate / L->o->pace;
    if (want > elapsed) {
        const double d = want - elapsed;
        struct timespec ts = {(time_t)d, (long)((d - floor(d)) * 1e9)};
        nanosleep(&ts, NULL);
    }
}

/* Frames the input lost (live overflow): a marked gap, and the detectors start afresh after it. */
static int gap(ml_logger *L, uint64_t lost)
{
    size_t nev = 0;
    ml_impulse_finish(L->imp, L->ev, ML_LOG_EV_CAP, &nev);
    int rc = ml_log_impulse_events(L, nev);
    if (rc == 0)
        rc = ml_log_flush_impulses(L);
    char det[80];
    snprintf(det, sizeof det, "%llu frames lost (input overflow)", (unsigned long long)lost);
    if (rc == 0)
        rc = ml_log_write_event(L, ML_LOG_GAP, L->pos, L->pos + (int64_t)lost, NAN, NAN, det);
    snprintf(L->note, sizeof L->note, "gap");
    if (rc == 0)
        rc = ml_log_advance(L, NULL, (size_t)lost);
    ml_impulse_reset(L->imp);
    L->imp_base = L->pos;
    return rc;
}

/* Reads and logs until the end, --seconds, a signal or a read error; *why says which, reason[]
 * the failure. */
static int stream(ml_logger *L, const char **why, char *reason, size_t rlen)
{
    const ml_log_opts *o = L->o;
    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    const int64_t first = L->pos;
    const int64_t limit = o->in.seconds > 0 ? (int64_t)llround(o->in.seconds * L->rate) : INT64_MAX;
    *why = "end of input";
    int rc = 0;
    while (rc == 0) {
        if (g_stop) {
            *why = g_stop == SIGINT ? "interrupted (SIGINT)" : "terminated (SIGTERM)";
            break;
        }
        if (L->pos - first >= limit) {
            *why = "--seconds reached";
            break;
        }
        size_t want = ML_LOG_BLOCK;
        if (o->pace > 0 && want > (size_t)(L->rate / 20))
            want = (size_t)(L->rate / 20); /* finer steps keep a paced run responsive */
        if ((int64_t)want > limit - (L->pos - first))
            want = (size_t)(limit - (L->pos - first));
        const uint64_t lost0 = ml_source_lost_frames(L->src);
        size_t got = 0;
        const ml_status st = ml_source_read(L->src, L->buf, want, &got);
        const uint64_t lost = ml_source_lost_frames(L->src) - lost0;
        if (lost > 0 && (rc = gap(L, lost)) != 0)
            break;
        if (st != ML_OK) {
            snprintf(reason, rlen, "input failed: %s%s%s", ml_strerror(st),
                     ml_source_detail(L->src)[0] ? ": " : "", ml_source_detail(L->src));
            *why = reason;
            break;
        }
        for (size_t i = 0; i < got * L->ch.stride; i++)
            if (!(fabsf(L->buf[i]) <= MAX_LEVEL)) {
                /* a non-finite sample would poison every sum, and the modulation analysis computes
                 * in single precision as measure's does (it refuses samples beyond +-1e30, 600 dB
                 * above full scale): logged as silence */
                L->buf[i] = 0.0f;
                snprintf(L->note, sizeof L->note, "non-finite or out-of-range samples set to 0");
            }
        if ((rc = ml_log_advance(L, L->buf, got)) != 0 || got < want)
            break; /* an error, or the end of the input */
        if (o->pace > 0)
            pace(L, &t0, L->pos - first);
    }
    return rc;
}

/* The end: the input-end event, the last row, the summary and the picture. */
static int conclude(ml_logger *L, int rc, const char *why, const char *reason)
{
    const ml_log_opts *o = L->o;
    const char *name = o->in.live ? o->in.device : o->in.path;
    if (rc == 0 && reason[0])
        rc = ml_log_write_event(L, ML_LOG_END, L->pos, L->pos, NAN, NAN, reason);
    if (rc == 0)
        rc = ml_log_finish(L, reason[0] ? reason : (g_stop ? why : NULL));
    if (rc == 0 || !L->wrote_error) {
        ml_log_print_summary(L, stdout, why);
        fflush(stdout);
    }
    if (rc == 0 && o->plot) {
        char err[512], title[1200];
        snprintf(title, sizeof title, "%s: level history (this file) and spectrogram (this run)", name);
        const ml_logplot_spec ps = {L->sgram, L->band_hz, !L->is_complex,
                                    ml_spectrum_full_scale_power(L->spec), title};
        if (ml_logplot_write(o->plot, L->rows_path, L->events_path, &ps, err, sizeof err) != ML_OK)
            rc = ml_cli_error("%s: %s", o->plot, err);
    }
    if (rc == 0 && reason[0]) {
        fprintf(stderr, "modlens: %s: %s\n", name, reason);
        rc = ML_EXIT_FAIL;
    }
    return rc;
}

int ml_log_run(const ml_log_opts *opts, ml_source *src, double start_utc)
{
    const ml_log_opts o = *opts;
    static ml_logger L;
    memset(&L, 0, sizeof L);
    g_stop = 0;
    /* from the start, so that a signal during set-up also ends the log cleanly */
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    int rc = setup(&L, &o, src, start_utc);
    if (rc == 1) {
        printf("log: %s already holds the whole input\n", L.rows_path);
        rc = 0;
    } else if (rc == 0) {
        const char *why = NULL;
        char reason[400] = "";
        rc = stream(&L, &why, reason, sizeof reason);
        rc = conclude(&L, rc, why, reason);
    }
    ml_log_free_objects(&L);
    return rc;
}
