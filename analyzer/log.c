/* The log command: hours-long noise and interference logging, one CSV row per interval plus events.
 * SPDX-License-Identifier: MIT
 *
 * argv -> options (the input, analysis and the log's own groups) -> the input step
 * (analyzer/input.h: a file or a live device, its kind and channels) -> the start-up: every
 * output checked (io/output.h) and every existing log file looked at before anything is written
 * (analyzer/log_rows.c), what is logged compared with what the files hold (analyzer/log_state.c),
 * the saved detectors' state read back -> the time grid (analyzer/log_grid.c: per-interval
 * levels, spectra, detectors and, for if/iq, measure's modulation figures of each interval) and
 * what the listener hears (analyzer/log_listen.c: impulses, buzz, quasi-peak) -> events
 * (analyzer/log_events.c) and append-safe CSV rows -> summary (and plot). ml_log_run works on any
 * ml_source: unknown length (frames == -1), lost frames (ml_source_lost_frames before/after each
 * read: a marked gap) and a read error mid-stream (the log ends cleanly with the reason).
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <getopt.h>
#include <limits.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/input.h"
#include "analyzer/log_internal.h"
#include "dsp/mmnoise.h"
#include "io/csv.h"
#include "io/logplot.h"
#include "io/plot.h"

#define MAX_LEVEL 1e30f   /* largest sample magnitude logged as it is                               */
#define DEVICE_LOOK_S 1.0 /* opening capture looked at by --kind auto and for the carrier (live) */
#define MAX_PACE 1e6      /* --pace: fastest speed-up                                            */
#define MAX_NEW_LOGS 999  /* --new-log: NAME-2 .. NAME-999                                       */

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
            "interval (written as soon as it is complete) and one line per event; for an IF or I/Q input\n"
            "each row also carries the quasi-peak reading and measure's carrier and modulation figures of\n"
            "its interval. Impulses are found in what the listener hears (the audio, or the demodulated\n"
            "envelope of an IF or I/Q input); periodic impulses are one buzz event with their rate.\n"
            "\n"
            "input:\n"
            "  FILE                    an audio file of any length (streamed)\n"
            "  --device NAME|INDEX     live input (--rate HZ, --channels N)\n"
            "  --kind auto|audio|if|iq what the input holds (default auto, decided as 'modlens measure'\n"
            "                          does)\n"
            "  --channel N, --swap-iq  channel to log, 1-based (for iq the I channel; default 1)\n"
            "  --start-time ISO        UTC time of a file's start, YYYY-MM-DDTHH:MM:SS[.fff]Z (default:\n"
            "                          the file's modification time minus its duration; a continued log\n"
            "                          keeps the start it recorded)\n"
            "  --seconds S             stop after S seconds (default: end of input or Ctrl-C)\n"
            "output:\n"
            "  --out FILE              interval rows (CSV); an existing log of the same input and settings\n"
            "                          is continued (never overwritten); anything else is refused\n"
            "  --events FILE           events (CSV; default: --out with -events before the extension)\n"
            "  --new-log               when --out holds a log of something else, start a new log beside it\n"
            "                          (NAME-2.csv, NAME-3.csv, ...)\n"
            "  --interval S            row interval in seconds, 0.05 .. 86400 (default 1)\n"
            "  --rotate-hours H        new files every H hours of UTC time (NAME-YYYYMMDDTHHMMSSZ.csv),\n"
            "                          at least --interval and 1 s, at most 8760\n"
            "  --timezone NAME         time zone of the local-time columns (default: the system's; a zone\n"
            "                          name such as Europe/Berlin, UTC, or a POSIX TZ rule)\n"
            "  --plot FILE             at the end, draw the level history with events and a spectrogram\n"
            "                          (.png, .svg or .pdf)\n"
            "detection:\n"
            "  --impulse-db DB         impulse: 1 ms level above the median of the last second (20)\n"
            "  --hum-db DB             hum event: hum-over-floor rise above its baseline (10)\n"
            "  --noise-db DB           noise event: noise-floor rise above its baseline (6)\n"
            "  --level-db DB           level event: broadband level rise above its baseline (6)\n"
            "  --carrier-loss-db DB    carrier-loss event (if/iq): carrier fall below its baseline (10)\n"
            "absolute noise (if/iq):\n"
            "  --fullscale-dbm DBM     calibration: the input power (dBm) of a full-scale sine (IF) or\n"
            "                          full-scale complex tone (I/Q), -200 .. 100\n"
            "  --rf-hz HZ              the receive frequency, 0.3e6 .. 30e6 (with --fullscale-dbm: Fa and\n"
            "                          the nearest ITU-R P.372 man-made noise environment per row)\n"
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
    O_PACE,
    O_TZ,
    O_NEWLOG,
    O_FSDBM,
    O_RFHZ,
    O_IMP,
    O_HUM,
    O_NOISE,
    O_LOSS,
    O_LEVEL,
};

/* ---- time zones ------------------------------------------------------------------------------ */

/* A POSIX TZ name part: 3+ letters, or <...> of letters, digits, + and -. */
static const char *tz_name(const char *p)
{
    const char *s = p;
    if (*p == '<') {
        for (p++; (*p >= 'A' && *p <= 'Z') || (*p >= 'a' && *p <= 'z') || (*p >= '0' && *p <= '9') || *p == '+'
                  || *p == '-';
             p++)
            ;
        return *p == '>' && p - s >= 4 ? p + 1 : NULL;
    }
    while ((*p >= 'A' && *p <= 'Z') || (*p >= 'a' && *p <= 'z'))
        p++;
    return p - s >= 3 ? p : NULL;
}

/* [+-]hh[:mm[:ss]] (hh up to 24, or 167 in a rule's time). */
static const char *tz_offset(const char *p, int max_h)
{
    if (*p == '+' || *p == '-')
        p++;
    int h = 0, n = 0;
    for (; *p >= '0' && *p <= '9' && n < 3; p++, n++)
        h = h * 10 + (*p - '0');
    if (n == 0 || h > max_h)
        return NULL;
    for (int part = 0; part < 2 && *p == ':'; part++) {
        if (!(p[1] >= '0' && p[1] <= '5' && p[2] >= '0' && p[2] <= '9'))
            return NULL;
        p += 3;
    }
    return p;
}

/* ,Mm.w.d[/time] or ,Jn or ,n rule of a POSIX TZ string. */
static const char *tz_rule(const char *p)
{
    if (*p == 'M') {
        int m = 0, w = 0, d = 0;
        if (sscanf(p, "M%d.%d.%d", &m, &w, &d) != 3 || m < 1 || m > 12 || w < 1 || w > 5 || d < 0 || d > 6)
            return NULL;
        while (*p && *p != ',' && *p != '/')
            p++;
    } else {
        if (*p == 'J')
            p++;
        const char *s = p;
        while (*p >= '0' && *p <= '9')
            p++;
        if (p == s || p - s > 3)
            return NULL;
    }
    return *p == '/' ? tz_offset(p + 1, 167) : p;
}

/* A POSIX TZ rule such as "CET-1CEST,M3.5.0,M10.5.0/3" or "EST5". */
static bool tz_posix(const char *p)
{
    if ((p = tz_name(p)) == NULL || (p = tz_offset(p, 24)) == NULL)
        return false;
    if (*p == '\0')
        return true;
    if ((p = tz_name(p)) == NULL)
        return false;
    if (*p != ',' && *p != '\0' && (p = tz_offset(p, 24)) == NULL)
        return false;
    if (*p == '\0')
        return true;
    if (*p != ',' || (p = tz_rule(p + 1)) == NULL || *p != ',' || (p = tz_rule(p + 1)) == NULL)
        return false;
    return *p == '\0';
}

/* A zone of the time-zone database (a TZif file under $TZDIR or /usr/share/zoneinfo). */
static bool tz_file(const char *name)
{
    if (name[0] == '\0' || name[0] == '/' || strstr(name, "..") || strlen(name) > 200)
        return false;
    for (const char *p = name; *p; p++)
        if (!((*p >= 'A' && *p <= 'Z') || (*p >= 'a' && *p <= 'z') || (*p >= '0' && *p <= '9')
              || strchr("/_+-", *p)))
            return false;
    const char *dir = getenv("TZDIR");
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir && dir[0] ? dir : "/usr/share/zoneinfo", name);
    FILE *f = fopen(path, "rb");
    char magic[4] = {0};
    const bool ok = f && fread(magic, 1, 4, f) == 4 && memcmp(magic, "TZif", 4) == 0;
    if (f)
        fclose(f);
    return ok;
}

static bool tz_ok(const char *s)
{
    if (s[0] == ':')
        s++;
    return strcmp(s, "UTC") == 0 || tz_file(s) || tz_posix(s);
}

/* The time zone of the local times: --timezone (set as the process's TZ), else TZ, else the
 * system's zone (the link /etc/localtime names). */
static int apply_timezone(const ml_log_opts *o, char *name, size_t n)
{
    if (o->timezone) {
        setenv("TZ", o->timezone, 1);
        snprintf(name, n, "%s", o->timezone[0] == ':' ? o->timezone + 1 : o->timezone);
    } else {
        const char *tz = getenv("TZ");
        char link[4096];
        ssize_t k;
        if (tz && tz[0]) {
            if (!tz_ok(tz))
                return ml_cli_error("TZ=%s is not a time zone this system knows; give --timezone NAME", tz);
            snprintf(name, n, "%s", tz[0] == ':' ? tz + 1 : tz);
        } else if ((k = readlink("/etc/localtime", link, sizeof link - 1)) > 0) {
            link[k] = '\0';
            const char *z = strstr(link, "zoneinfo/");
            snprintf(name, n, "%.*s", (int)(n - 1), z ? z + 9 : link);
        } else {
            snprintf(name, n, "%s", access("/etc/localtime", R_OK) == 0 ? "localtime" : "UTC");
        }
    }
    tzset();
    return 0;
}

/* ---- options --------------------------------------------------------------------------------- */

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
    case O_NEWLOG: o->new_log = true; return 0;
    case O_TZ:
        if (!tz_ok(arg))
            return ml_cli_error("--timezone: '%s' is not a time zone (a zone name such as Europe/Berlin, UTC, "
                                "or a POSIX TZ rule such as CET-1CEST,M3.5.0,M10.5.0/3)", arg);
        o->timezone = arg;
        return 0;
    case O_INTERVAL:
        if (!ml_cli_number(arg, &v) || v < 0.05 || v > 86400)
            return ml_cli_error("--interval: '%s' is not a time in seconds, 0.05 .. 86400", arg);
        o->interval_s = v;
        return 0;
    case O_ROTATE:
        if (!ml_cli_number(arg, &v) || v < 1.0 / 3600 || v > 8760)
            return ml_cli_error("--rotate-hours: '%s' is not a number of hours, 1/3600 (1 s) .. 8760", arg);
        o->rotate_h = v;
        return 0;
    case O_PACE:
        if (!ml_cli_number(arg, &v) || v <= 0 || v > MAX_PACE)
            return ml_cli_error("--pace: '%s' is not a speed factor, 0 < X <= %.0f", arg, MAX_PACE);
        o->pace = v;
        return 0;
    case O_FSDBM:
        if (!ml_cli_number(arg, &v) || v < -200 || v > 100)
            return ml_cli_error("--fullscale-dbm: '%s' is not a power in dBm, -200 .. 100", arg);
        o->fullscale_dbm = v;
        return 0;
    case O_RFHZ:
        if (!ml_cli_number(arg, &v) || v < ML_MMNOISE_MIN_HZ || v > ML_MMNOISE_MAX_HZ)
            return ml_cli_error("--rf-hz: '%s' is not a frequency of the noise model, %.0f .. %.0f Hz", arg,
                                ML_MMNOISE_MIN_HZ, ML_MMNOISE_MAX_HZ);
        o->rf_hz = v;
        return 0;
    default: /* the detection thresholds */
        if (!ml_cli_number(arg, &v) || v <= 0 || v > 200)
            return ml_cli_error("%s: '%s' is not a level in dB, 0 < DB <= 200", name, arg);
        *(ch == O_IMP     ? &o->impulse_db
          : ch == O_HUM   ? &o->hum_db
          : ch == O_NOISE ? &o->noise_db
          : ch == O_LEVEL ? &o->level_db
                          : &o->loss_db) = v;
        return 0;
    }
}

/* The input and output named on the command line fit together. */
static int check_inputs(ml_log_opts *o)
{
    if (o->in.path && o->in.device)
        return ml_cli_error("log takes either an input FILE or --device, not both");
    if (!o->in.path && !o->in.device)
        return ml_cli_error("log needs an input FILE or --device (try 'modlens log --help')");
    if (!o->in.device && (o->in.rate_hz > 0 || o->in.channels > 0))
        return ml_cli_error("--rate and --channels apply to --device input only");
    if (o->out == NULL)
        return ml_cli_error("log needs --out FILE.csv");
    if (o->rotate_h > 0 && o->rotate_h * 3600.0 < o->interval_s)
        return ml_cli_error("--rotate-hours: %g h is shorter than --interval %g s", o->rotate_h, o->interval_s);
    if (isnan(o->fullscale_dbm) != isnan(o->rf_hz))
        return ml_cli_error("%s needs %s too (the calibration and the receive frequency)",
                            isnan(o->rf_hz) ? "--fullscale-dbm" : "--rf-hz",
                            isnan(o->rf_hz) ? "--rf-hz" : "--fullscale-dbm");
    o->have_cal = !isnan(o->fullscale_dbm);
    if (o->plot && ml_plot_type(o->plot) < 0)
        return ml_cli_error("--plot: '%s' names no picture type: end it in .png, .svg or .pdf", o->plot);
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
        {"level-db", required_argument, NULL, O_LEVEL}, {"timezone", required_argument, NULL, O_TZ},
        {"new-log", no_argument, NULL, O_NEWLOG}, {"fullscale-dbm", required_argument, NULL, O_FSDBM},
        {"rf-hz", required_argument, NULL, O_RFHZ}, {"pace", required_argument, NULL, O_PACE},
        {"help", no_argument, NULL, 'h'}, {NULL, 0, NULL, 0},
    };
    struct option longopts[80];
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
    o->level_db = 6.0;
    o->fullscale_dbm = o->rf_hz = NAN;
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

/* ---- the start-up ------------------------------------------------------------------------------ */

/* The end of the rows file's last row, and the first run's start (live). */
typedef struct {
    bool have;
    double end_off;   /* offset_s + duration_s                          */
    double t0;        /* its start_utc - offset_s: the log's first start */
} last_row;

static int read_last(const ml_logger *L, const char *last, last_row *r)
{
    char f[64], u[64];
    double off, dur;
    r->have = last[0] != '\0';
    if (!r->have)
        return 0;
    if (!ml_csv_get_field(last, 2, f, sizeof f) || !ml_cli_number(f, &off) || !ml_csv_get_field(last, 3, f, sizeof f)
        || !ml_cli_number(f, &dur) || off < 0 || dur < 0 || !ml_csv_get_field(last, 0, u, sizeof u)
        || !ml_cli_utc(u, &r->t0))
        return ml_cli_error("%s: the last row cannot be read; choose another --out", L->rows_path);
    r->end_off = off + dur;
    r->t0 -= off;
    return 0;
}

/* Finds the files this run continues (--new-log: the first name free for it), follows rotation
 * while the next period's file has rows; nothing is written. r: the last row written. */
static int continue_files(ml_logger *L, last_row *r)
{
    const ml_log_opts *o = L->o;
    char *last = malloc(ML_LOGFILE_LINE_MAX + 1);
    if (last == NULL)
        return ml_cli_error("%s: out of memory", L->name);
    int rc = 0, adopted = 0, n = 1;
    int64_t period = ml_log_period_of(o, L->start_utc);
    for (int hop = 0;; hop++) {
        free(L->state_path);
        if ((L->state_path = ml_log_state_path(L)) == NULL) {
            rc = ml_cli_error("%s: out of memory", L->name);
            break;
        }
        rc = ml_log_open_outputs(L, period, last, ML_LOGFILE_LINE_MAX + 1);
        if (rc == ML_LOG_ADOPT_START && hop == 0 && !adopted++) { /* the log keeps the start it recorded */
            if ((rc = ml_log_make_meta(L)) != 0)
                break;
            period = ml_log_period_of(o, L->start_utc);
            hop = -1;
            continue;
        }
        if (rc == ML_LOG_TAKEN && hop == 0 && n < MAX_NEW_LOGS) { /* --new-log: the next name */
            snprintf(L->suffix, sizeof L->suffix, "-%d", ++n);
            hop = -1;
            continue;
        }
        if (rc == ML_LOG_TAKEN || rc == ML_LOG_ADOPT_START)
            rc = ml_cli_error("%s: no free name for a new log beside it", o->out);
        if (rc != 0 || (rc = read_last(L, last, r)) != 0 || !r->have || o->in.live)
            break;
        const int64_t p2 = ml_log_period_of(o, L->start_utc + r->end_off);
        if (p2 == period || hop > 100000)
            break;
        /* the next period's file: continue there when it has rows (or is new) */
        char *rp = ml_log_rows_path(L, p2);
        struct stat sb;
        const bool exists = rp && stat(rp, &sb) == 0;
        free(rp);
        period = p2;
        if (!exists) {
            rc = ml_log_open_outputs(L, period, last, ML_LOGFILE_LINE_MAX + 1);
            break;
        }
    }
    free(last);
    return rc;
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
    ml_spectrum *s = NULL;
    if (isnan(L->carrier_hz) && seg.nframes >= 256) {
        const int rc = ml_input_look_ahead(L->name, &seg, &L->ch, seg.nframes, &s);
        if (rc != 0)
            return rc;
        const ml_carrier_config cc = ml_carrier_config_default(L->rate, L->is_complex, o->an.carrier_hz);
        ml_carrier car;
        if (ml_carrier_find(s, &cc, &car) == ML_OK) { /* else not yet: a transmitter may come on later */
            L->carrier_hz = car.frequency_hz;
            L->carrier_amp = car.amplitude;
        }
        ml_spectrum_destroy(s);
    }
    if (o->an.carrier_reference) {
        const double near = isnan(L->carrier_hz) ? o->an.carrier_hz : L->carrier_hz;
        const int rc = ml_input_reference_carrier(o->an.carrier_reference, &o->in, L->is_complex, L->rate,
                                                  near, &L->reference_c);
        if (rc != 0)
            return rc;
    }
    return 0;
}

/* --plot: checked with every file the log reads or writes (ml_log_check_paths did so for each
 * period's files); written at the end. */
static int check_plot(ml_logger *L)
{
    const ml_log_opts *o = L->o;
    if (o->plot == NULL)
        return 0;
    const char *bad = o->plot;
    char err[512] = "";
    ml_status st = ml_output_set_create(&L->plot_set);
    if (st == ML_OK)
        st = ml_log_register(L, L->plot_set, L->rows_path, L->events_path, &L->plot_out);
    if (st == ML_OK)
        st = ml_output_set_check(L->plot_set, &bad, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", bad ? bad : o->plot, err[0] ? err : ml_strerror(st));
    ml_history_config hc = ml_history_config_default();
    hc.nrows = ML_LOG_SG_ROWS;
    if (ml_history_create(&hc, &L->sgram) != ML_OK)
        return ml_cli_error("%s: out of memory", o->plot);
    ml_log_sgram_bands(L);
    return 0;
}

/* Where this run starts: after the last row written (a live log keeps counting offsets from the
 * first run's start), or back at the saved state (a file log replays from there, writing nothing
 * twice). 1: the file is already logged. */
static int resume(ml_logger *L, const last_row *r)
{
    if (!r->have)
        return 0;
    L->skip_rows_until = r->end_off;
    if (L->o->in.live) {
        if (r->t0 > 0) {
            L->offset0_s = L->start_utc - r->t0;
            if (L->offset0_s < r->end_off)
                L->offset0_s = r->end_off; /* a clock set back must not make offsets overlap */
            L->start_utc -= L->offset0_s;
        }
    } else if (L->info->frames >= 0 && llround(r->end_off * L->rate) >= L->info->frames) {
        return 1; /* already complete */
    }
    char why[200];
    int64_t pos = 0, origin = 0;
    const int st = ml_log_load_state(L, &pos, &origin, why, sizeof why);
    if (st > 1)
        return st;
    if (st == 1 && !L->o->in.live && ml_log_offset_of(L, pos) <= r->end_off + 0.5 / L->rate) {
        L->pos = pos;
        L->origin = origin;
    } else {
        if (st == 1) { /* a state that lies after the rows (cannot happen: it follows them) */
            free(L->state_text);
            L->state_text = NULL;
        }
        if (!L->o->in.live)
            L->pos = L->origin = llround(r->end_off * L->rate);
        if (L->state_text == NULL) {
            L->resumed_fresh = true;
            snprintf(L->resume_note, sizeof L->resume_note, "detectors started afresh (%.150s)",
                     why[0] ? why : "no saved state");
            /* events are written when they end, so not in start order: the latest start of any line */
            double v;
            if (ml_logfile_max_field(L->events_path, 2, 2, &v) == ML_OK)
                L->skip_events_until = v;
        }
    }
    if (!L->o->in.live && L->pos > 0 && ml_source_seek(L->src, L->pos) != ML_OK)
        return ml_cli_error("%s: cannot continue at %.3f s: %s", L->name, (double)L->pos / L->rate,
                            ml_source_detail(L->src));
    return 0;
}

/* The basics of the input, every check, the objects, the files (looked at, not yet written). */
static int setup(ml_logger *L, const ml_log_opts *o, ml_source *src, double start_utc)
{
    L->o = o;
    L->src = src;
    L->start_utc = start_utc;
    L->carrier_hz = L->reference_c = L->carrier_amp = NAN;
    L->mains_given = o->an.audio.mains_hz > 0;
    L->mains_hz = o->an.audio.mains_hz;
    L->skip_events_until = L->skip_rows_until = -INFINITY;
    L->imp_counted = -1;
    L->info = ml_source_get_info(src);
    L->rate = L->info->rate_hz;
    L->is_complex = o->in.kind == ML_KIND_IQ;
    L->is_if = o->in.kind == ML_KIND_IF;
    L->name = o->in.live ? (o->in.device ? o->in.device : "default") : o->in.path;
    if (ml_channels_map(L->info->channels, o->in.channel, L->is_complex, o->in.swap_iq, 0, &L->ch) != ML_OK)
        return ml_cli_error("%s: --channel %ld%s but the input has %d channel%s", L->name, o->in.channel,
                            L->is_complex ? " (and the next, for iq)" : "", L->info->channels,
                            L->info->channels == 1 ? "" : "s");
    if ((L->is_complex || L->is_if) && !isnan(o->an.carrier_hz)
        && !(fabs(o->an.carrier_hz) < L->rate / 2 && (L->is_complex || o->an.carrier_hz > 0)))
        return ml_cli_error("--carrier %.1f Hz is outside the input's band (rate %.0f Hz)", o->an.carrier_hz,
                            L->rate);
    if (o->have_cal && !L->is_complex && !L->is_if)
        return ml_cli_error("%s: --fullscale-dbm and --rf-hz apply to an IF or I/Q input (this one is audio)",
                            L->name);
    L->ival_frames = (int64_t)llround(o->interval_s * L->rate);
    if (L->ival_frames < 256)
        return ml_cli_error("%s: --interval %.3f s is only %lld frames at %.0f Hz (at least 256 needed)",
                            L->name, o->interval_s, (long long)L->ival_frames, L->rate);
    int rc = apply_timezone(o, L->tz, sizeof L->tz);
    if (rc != 0)
        return rc;
    ml_status st = ml_log_make_objects(L);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", L->name, ml_strerror(st));
    if ((rc = ml_log_make_meta(L)) != 0)
        return rc;
    last_row r = {0};
    if ((rc = continue_files(L, &r)) != 0 || (rc = check_plot(L)) != 0)
        return rc;
    ml_log_reset_interval(L);
    if ((rc = resume(L, &r)) != 0)
        return rc;
    if ((rc = setup_carrier(L)) != 0)
        return rc;
    L->imp_base = L->imp_judged = L->pos;
    ml_log_listen_setup(L);
    if ((rc = ml_log_restore_state(L)) != 0)
        return rc;
    ml_log_start_modulation(L);
    return ml_log_begin_outputs(L);
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
    int rc = ml_log_listen_finish(L, NULL);
    char det[80];
    snprintf(det, sizeof det, "%llu frames lost (input overflow)", (unsigned long long)lost);
    if (rc == 0)
        rc = ml_log_write_event(L, ML_LOG_GAP, L->pos, L->pos + (int64_t)lost, NAN, NAN, det);
    snprintf(L->note, sizeof L->note, "gap");
    if (rc == 0)
        rc = ml_log_advance(L, NULL, (size_t)lost);
    ml_log_listen_gap(L);
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

/* The picture into the output checked at the start, published alone. */
static int write_plot(ml_logger *L)
{
    const ml_log_opts *o = L->o;
    char err[512], title[1200];
    const char *bad = o->plot;
    FILE *f = NULL;
    snprintf(title, sizeof title, "%s: level history (this file) and spectrogram (this run)", L->name);
    const ml_logplot_spec ps = {L->sgram, L->band_hz, !L->is_complex, ml_spectrum_full_scale_power(L->spec), title};
    ml_status st = ml_output_begin(L->plot_out, &f, err, sizeof err);
    if (st == ML_OK && (st = ml_logplot_write(f, o->plot, L->rows_path, L->events_path, &ps, err, sizeof err)) != ML_OK)
        ml_output_discard(L->plot_out);
    else if (st == ML_OK)
        st = ml_output_end(L->plot_out, err, sizeof err);
    if (st == ML_OK)
        st = ml_output_set_commit(L->plot_set, &bad, err, sizeof err);
    return st == ML_OK ? 0 : ml_cli_error("%s: %s", bad ? bad : o->plot, err);
}

/* The end: the input-end event, the last row, the summary and the picture. */
static int conclude(ml_logger *L, int rc, const char *why, const char *reason)
{
    if (rc == 0 && reason[0])
        rc = ml_log_write_event(L, ML_LOG_END, L->pos, L->pos, NAN, NAN, reason);
    if (rc == 0)
        rc = ml_log_finish(L, reason[0] ? reason : (g_stop ? why : NULL), why);
    if (rc == 0 || !L->wrote_error) {
        ml_log_print_summary(L, stdout, why);
        fflush(stdout);
    }
    if (rc == 0 && L->o->plot)
        rc = write_plot(L);
    if (rc == 0 && reason[0]) {
        ml_cli_error("%s: %s", L->name, reason);
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
