/* The log command: hours-long noise and interference logging, one CSV row per interval plus events.
 * SPDX-License-Identifier: MIT
 *
 * argv -> options -> one input (open_input: a file or a live device) -> streamed
 * per-interval measurements and event detection -> append-safe CSV files -> summary (and plot).
 * Everything after open_input works on any ml_source: unknown length (frames == -1), lost frames
 * (ml_source_lost_frames before/after each read: a marked gap) and a read error mid-stream (the
 * log ends cleanly with the reason).
 */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/log.h"
#include "analyzer/measure.h"
#include "analyzer/output.h"
#include "dsp/am.h"
#include "dsp/aweight.h"
#include "dsp/carrier.h"
#include "dsp/channels.h"
#include "dsp/detect.h"
#include "dsp/history.h"
#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"
#include "io/audio.h"
#include "io/logfile.h"
#include "io/logplot.h"
#include "io/source.h"

#define HUM_N 6       /* hum columns: mains fundamental and harmonics 2..6 */
#define WORST_N 5     /* worst events kept for the summary                 */
#define EV_CAP 1024   /* events returned by one detector push               */
#define SG_ROWS 128   /* spectrogram bands                                   */
#define IMPULSE_MERGE_S 0.5      /* impulses closer than this merge into one event */
#define IMPULSE_MERGE_MAX_S 10.0 /* longest merged impulse event                  */

static const char ROW_HEADER[] =
    "start_utc,offset_s,duration_s,rms_dbfs,peak_dbfs,a_weighted_dbfs,crest_db,mains_hz,hum_dbfs,"
    "hum_h1_dbfs,hum_h2_dbfs,hum_h3_dbfs,hum_h4_dbfs,hum_h5_dbfs,hum_h6_dbfs,noise_floor_dbfs_hz,impulses,"
    "lost_s,carrier_dbfs,cnr_db,mod_pos_peak_pct,mod_neg_peak_pct,note";
static const char EVENT_HEADER[] = "start_utc,start_offset_s,end_offset_s,kind,peak_dbfs,rise_db,detail";

enum { K_IMPULSE, K_HUM, K_NOISE, K_CARRIER, K_GAP, K_END, K_COUNT };
static const char *const KIND_NAME[K_COUNT] = {"impulse", "hum", "noise", "carrier-loss", "gap", "input-end"};


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
            "interval (written and flushed as soon as it is complete) and one line per event.\n"
            "\n"
            "input:\n"
            "  FILE                    an audio file of any length (streamed)\n"
            "  --device NAME|INDEX     live input (--rate HZ, --channels N)\n"
            "  --kind audio|if|iq      what the input holds (default audio)\n"
            "  --channel N             channel to log, 1-based (for iq the I channel; default 1)\n"
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
            "  --mains 50|60           mains frequency (default: chosen from the first interval)\n"
            "  --carrier HZ            carrier frequency for if/iq (default: strongest component)\n"
            "  --bandwidth HZ          one-sided channel bandwidth for if/iq (default: up to 5000)\n"
            "testing:\n"
            "  --pace X                read a file at X times real time (to test interruption)\n"
            "\n"
            "SIGINT/SIGTERM end the log cleanly and print the summary. Exit status: 0 ended normally,\n"
            "1 the input failed mid-way (the log ends with the reason), 2 usage or input error.\n\n%s",
            ml_cli_safety);
}

/* "YYYY-MM-DDTHH:MM:SS[.fff]Z" -> seconds since 1970 UTC. */
static bool parse_utc(const char *s, double *t)
{
    int y, mo, d, h, mi, n = 0;
    double sec;
    if (sscanf(s, "%4d-%2d-%2dT%2d:%2d:%lf%n", &y, &mo, &d, &h, &mi, &sec, &n) != 6 || strcmp(s + n, "Z") != 0
        || mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59 || !(sec >= 0 && sec < 61) || y < 1970)
        return false;
    struct tm tm = {.tm_year = y - 1900, .tm_mon = mo - 1, .tm_mday = d, .tm_hour = h, .tm_min = mi};
    *t = (double)timegm(&tm) + sec;
    return true;
}

static void format_utc(double t, char *b, size_t n)
{
    double whole = floor(t);
    long ms = lround((t - whole) * 1000.0);
    if (ms == 1000) {
        whole += 1;
        ms = 0;
    }
    time_t tt = (time_t)whole;
    struct tm tm;
    gmtime_r(&tt, &tm);
    char day[32];
    strftime(day, sizeof day, "%Y-%m-%dT%H:%M:%S", &tm);
    snprintf(b, n, "%s.%03ldZ", day, ms % 1000);
}

int ml_log_parse(int argc, char **argv, ml_log_opts *o)
{
    enum { O_DEVICE = 256, O_RATE, O_CHANNELS, O_KIND, O_CHANNEL, O_START, O_SECONDS, O_OUT, O_EVENTS,
           O_INTERVAL, O_ROTATE, O_PLOT, O_IMP, O_HUM, O_NOISE, O_LOSS, O_MAINS, O_CARRIER, O_BW, O_PACE };
    static const struct option longopts[] = {
        {"device", required_argument, NULL, O_DEVICE}, {"rate", required_argument, NULL, O_RATE},
        {"channels", required_argument, NULL, O_CHANNELS}, {"kind", required_argument, NULL, O_KIND},
        {"channel", required_argument, NULL, O_CHANNEL}, {"start-time", required_argument, NULL, O_START},
        {"seconds", required_argument, NULL, O_SECONDS}, {"out", required_argument, NULL, O_OUT},
        {"events", required_argument, NULL, O_EVENTS}, {"interval", required_argument, NULL, O_INTERVAL},
        {"rotate-hours", required_argument, NULL, O_ROTATE}, {"plot", required_argument, NULL, O_PLOT},
        {"impulse-db", required_argument, NULL, O_IMP}, {"hum-db", required_argument, NULL, O_HUM},
        {"noise-db", required_argument, NULL, O_NOISE}, {"carrier-loss-db", required_argument, NULL, O_LOSS},
        {"mains", required_argument, NULL, O_MAINS}, {"carrier", required_argument, NULL, O_CARRIER},
        {"bandwidth", required_argument, NULL, O_BW}, {"pace", required_argument, NULL, O_PACE},
        {"help", no_argument, NULL, 'h'}, {NULL, 0, NULL, 0},
    };
    memset(o, 0, sizeof *o);
    o->interval_s = 1.0;
    o->kind = ML_KIND_AUDIO;
    o->channel = 1;
    o->carrier_hz = NAN;
    o->impulse_db = 20.0;
    o->hum_db = 10.0;
    o->noise_db = 6.0;
    o->loss_db = 10.0;
    opterr = 0;
    optind = 1;
    int ch, rc;
    double v;
    long n;
    while ((ch = getopt_long(argc, argv, ":h", longopts, NULL)) != -1) {
        switch (ch) {
        case O_DEVICE: o->device = optarg; break;
        case O_RATE:
            if (!ml_cli_number(optarg, &v) || v < 1000 || v > 1e6)
                return ml_cli_error("--rate: '%s' is not a sample rate in Hz, 1000 .. 1000000", optarg);
            o->device_rate_hz = v;
            break;
        case O_CHANNELS:
            if (!ml_cli_int(optarg, &n) || n < 1 || n > ML_MAX_CHANNELS)
                return ml_cli_error("--channels: '%s' is not a channel count 1..%d", optarg, ML_MAX_CHANNELS);
            o->device_channels = n;
            break;
        case O_KIND:
            if (strcmp(optarg, "audio") == 0) o->kind = ML_KIND_AUDIO;
            else if (strcmp(optarg, "if") == 0) o->kind = ML_KIND_IF;
            else if (strcmp(optarg, "iq") == 0) o->kind = ML_KIND_IQ;
            else return ml_cli_error("--kind: '%s' is not audio, if or iq", optarg);
            break;
        case O_CHANNEL:
            if (!ml_cli_int(optarg, &n) || n < 1 || n > ML_MAX_CHANNELS)
                return ml_cli_error("--channel: '%s' is not a channel number 1..%d", optarg, ML_MAX_CHANNELS);
            o->channel = n;
            break;
        case O_START:
            if (!parse_utc(optarg, &o->start_utc))
                return ml_cli_error("--start-time: '%s' is not a UTC time YYYY-MM-DDTHH:MM:SS[.fff]Z",
                                    optarg);
            o->have_start = true;
            break;
        case O_SECONDS:
            if (!ml_cli_number(optarg, &v) || v <= 0)
                return ml_cli_error("--seconds: '%s' is not a time in seconds > 0", optarg);
            o->seconds = v;
            break;
        case O_OUT: o->out = optarg; break;
        case O_EVENTS: o->events = optarg; break;
        case O_PLOT: o->plot = optarg; break;
        case O_INTERVAL:
            if (!ml_cli_number(optarg, &v) || v < 0.05 || v > 86400)
                return ml_cli_error("--interval: '%s' is not a time in seconds, 0.05 .. 86400", optarg);
            o->interval_s = v;
            break;
        case O_ROTATE:
            if (!ml_cli_number(optarg, &v) || v <= 0 || v > 8760)
                return ml_cli_error("--rotate-hours: '%s' is not a number of hours, 0 < H <= 8760", optarg);
            o->rotate_h = v;
            break;
        case O_IMP: case O_HUM: case O_NOISE: case O_LOSS:
            if (!ml_cli_number(optarg, &v) || v <= 0 || v > 200)
                return ml_cli_error("%s: '%s' is not a level in dB, 0 < DB <= 200", argv[optind - 1], optarg);
            *(ch == O_IMP     ? &o->impulse_db
              : ch == O_HUM   ? &o->hum_db
              : ch == O_NOISE ? &o->noise_db
                              : &o->loss_db) = v;
            break;
        case O_MAINS:
            if ((rc = ml_cli_mains(optarg, &o->mains_hz)) != 0)
                return rc;
            break;
        case O_CARRIER:
            if ((rc = ml_cli_carrier(optarg, &o->carrier_hz)) != 0)
                return rc;
            break;
        case O_BW:
            if ((rc = ml_cli_bandwidth(optarg, &o->bandwidth_hz)) != 0)
                return rc;
            break;
        case O_PACE:
            if (!ml_cli_number(optarg, &v) || v <= 0)
                return ml_cli_error("--pace: '%s' is not a speed factor > 0", optarg);
            o->pace = v;
            break;
        case 'h': log_usage(stdout); return -1;
        case ':': return ml_cli_error("%s needs a value (try 'modlens log --help')", argv[optind - 1]);
        default: return ml_cli_error("unknown option '%s' (try 'modlens log --help')", argv[optind - 1]);
        }
    }
    if (optind < argc - 1)
        return ml_cli_error("log takes one input FILE; extra argument '%s'", argv[optind + 1]);
    if (optind == argc - 1)
        o->input = argv[optind];
    if (o->input && o->device)
        return ml_cli_error("log takes either an input FILE or --device, not both");
    if (!o->input && !o->device)
        return ml_cli_error("log needs an input FILE or --device (try 'modlens log --help')");
    if (!o->device && (o->device_rate_hz > 0 || o->device_channels > 0))
        return ml_cli_error("--rate and --channels apply to --device input only");
    if (o->out == NULL)
        return ml_cli_error("log needs --out FILE.csv");
    return 0;
}

/* The one place that turns options into an input; everything after works on any ml_source.
 * *start_utc: UTC of the input's first frame. 0 or an exit status (error printed). */
static int open_input(const ml_log_opts *o, ml_source **src, double *start_utc)
{
    *src = NULL;
    if (o->device) {
        ml_live_config lc = ml_live_config_default();
        lc.device = strcmp(o->device, "default") == 0 ? NULL : o->device;
        lc.rate_hz = o->device_rate_hz;
        lc.channels = (int)(o->device_channels > 0 ? o->device_channels
                                                   : o->channel + (o->kind == ML_KIND_IQ ? 1 : 0));
        lc.head_s = 0; /* the logger reads straight through */
        char err[512] = "";
        ml_status st = ml_source_open_live(&lc, src, err, sizeof err);
        if (st != ML_OK)
            return ml_cli_error("%s: %s", o->device, err);
        struct timespec now;
        clock_gettime(CLOCK_REALTIME, &now);
        *start_utc = (double)now.tv_sec + 1e-9 * (double)now.tv_nsec;
        return 0;
    }
    char err[512] = "";
    ml_status st = ml_source_open_file(o->input, src, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s%s%s", o->input, ml_strerror(st), err[0] ? ": " : "", err);
    const ml_source_info *info = ml_source_get_info(*src);
    if (info->frames == 0)
        return ml_cli_error("%s: the file holds no audio frames", o->input);
    if (info->channels > ML_MAX_CHANNELS)
        return ml_cli_error("%s: %d channels; at most %d are supported", o->input, info->channels,
                            ML_MAX_CHANNELS);
    if (o->have_start) {
        *start_utc = o->start_utc;
    } else {
        struct stat sb;
        if (stat(o->input, &sb) != 0)
            return ml_cli_error("%s: cannot inspect: %s", o->input, strerror(errno));
        const double dur = info->frames > 0 ? (double)info->frames / info->rate_hz : 0.0;
        *start_utc = (double)sb.st_mtim.tv_sec + 1e-9 * (double)sb.st_mtim.tv_nsec - dur;
    }
    return 0;
}

/* ---- the logger ---------------------------------------------------------------------------- */

typedef struct {
    int kind;
    double start_off, end_off, peak_dbfs, rise_db, start_utc;
} summary_event;

typedef struct {
    int64_t start, end;       /* pos of the first impulse's start, the last one's end          */
    double peak_dbfs, rise_db; /* largest of the merged impulses                              */
    long n;                   /* impulses merged; 0 = none pending                             */
} merged_impulses;

typedef struct {
    const ml_log_opts *o;
    ml_source *src;
    const ml_source_info *info;
    double rate, start_utc, offset0_s; /* offset_s = offset0_s + pos / rate                 */
    bool is_complex, is_if;
    size_t nch;
    ml_channels ch;        /* the analysed column(s) of the frames                           */

    /* time grid */
    int64_t pos;           /* frames since the input's start, lost frames included          */
    int64_t origin;        /* pos of the first interval's start                              */
    int64_t ival_frames, step_len;
    int64_t ipos;          /* frames into the current interval                               */
    size_t steps_per_ival; /* K                                                              */

    /* objects */
    ml_aweight *aw;
    ml_impulse *imp;
    int64_t imp_base;      /* pos of the impulse detector's frame 0                          */
    int64_t imp_counted;   /* pos of an open impulse already counted in a written row, or -1 */
    merged_impulses mi;    /* impulse event still open to merging                            */
    ml_change *chg[3];     /* hum, noise, carrier-loss                                       */
    double chg_peak[3];
    ml_spectrum *spec;
    ml_am *am;
    ml_am_output amo;
    size_t nbins, lobe;
    double enbw, bin_hz, fs_power;

    /* interval accumulators */
    ml_stats st;
    double asum, peak;
    int64_t data_frames, lost_frames;
    long impulses;
    double *psd, *psd_sum, *scratch;
    size_t nspectra;
    double env_max, env_min, env_sum;
    uint64_t env_n;
    char note[160];

    /* step accumulators */
    double step_sumsq;
    int64_t step_n;

    /* carrier */
    double carrier_hz;
    long carrier_bin;
    double bandwidth_hz;
    double mains_hz;

    /* buffers */
    float *buf, *mono;
    double *aout;
    double complex *z;
    ml_event *ev;

    /* output */
    ml_logfile *rows, *events;
    char rows_path[1100], events_path[1100];
    int64_t period;        /* rotation period of the open files                              */
    double skip_events_until; /* events starting at or before this offset are already written */
    bool wrote_error;

    /* summary */
    long count[K_COUNT];
    long per_hour[24];
    summary_event worst[WORST_N];
    size_t nworst;
    long rows_written;

    ml_history *sgram;     /* --plot: bounded spectrogram of the interval spectra          */
    double band_hz[SG_ROWS], sg_col[SG_ROWS];
} logger;

static double offset_of(const logger *L, int64_t pos)
{
    return L->offset0_s + (double)pos / L->rate;
}

/* ---- output files ---------------------------------------------------------------------------- */

/* "dir/name.csv" + "-events" -> "dir/name-events.csv" (inserted before the extension). */
static void insert_before_ext(const char *path, const char *ins, char *out, size_t n)
{
    const char *slash = strrchr(path, '/'), *dot = strrchr(path, '.');
    if (dot == NULL || (slash && dot < slash) || dot == (slash ? slash + 1 : path))
        snprintf(out, n, "%s%s", path, ins);
    else
        snprintf(out, n, "%.*s%s%s", (int)(dot - path), path, ins, dot);
}

static int64_t period_of(const ml_log_opts *o, double utc)
{
    return o->rotate_h > 0 ? (int64_t)floor(utc / (o->rotate_h * 3600.0)) : 0;
}

static void paths_for(const ml_log_opts *o, int64_t period, char *rows, char *events, size_t n)
{
    char base[1100];
    if (o->rotate_h > 0) {
        char stamp[40], iso[40];
        format_utc((double)period * o->rotate_h * 3600.0, iso, sizeof iso);
        /* 2026-12-02T13:00:00.000Z -> 20261202T130000Z */
        size_t k = 0;
        for (const char *p = iso; *p && *p != '.' && k + 1 < sizeof stamp; p++)
            if (*p != '-' && *p != ':')
                stamp[k++] = *p;
        stamp[k++] = 'Z';
        stamp[k] = '\0';
        char ins[48];
        snprintf(ins, sizeof ins, "-%s", stamp);
        insert_before_ext(o->out, ins, base, sizeof base);
    } else {
        snprintf(base, sizeof base, "%s", o->out);
    }
    snprintf(rows, n, "%s", base);
    if (o->events && o->rotate_h <= 0)
        snprintf(events, n, "%s", o->events);
    else if (o->events) {
        char ins[48];
        const char *dash = strrchr(base, '-');
        snprintf(ins, sizeof ins, "%.*s", dash ? (int)strcspn(dash, ".") : 0, dash ? dash : "");
        insert_before_ext(o->events, ins, events, n);
    } else
        insert_before_ext(base, "-events", events, n);
}

/* Field i (0-based) of a CSV line into b; false when missing. */
static bool csv_field(const char *line, int i, char *b, size_t n)
{
    for (; i > 0; i--) {
        line = strchr(line, ',');
        if (line == NULL)
            return false;
        line++;
    }
    size_t len = strcspn(line, ",");
    if (len >= n)
        len = n - 1;
    memcpy(b, line, len);
    b[len] = '\0';
    return true;
}

/* Opens the rows and events files of a period; last_row gets the last complete row. */
static int open_outputs(logger *L, int64_t period, char *last_row, size_t last_len)
{
    char err[512], last_ev[4096];
    ml_logfile_close(L->rows);
    ml_logfile_close(L->events);
    L->rows = L->events = NULL;
    paths_for(L->o, period, L->rows_path, L->events_path, sizeof L->rows_path);
    if (strcmp(L->rows_path, L->events_path) == 0 || ml_same_file(L->rows_path, L->events_path))
        return ml_cli_error("%s: --out and --events name the same file", L->rows_path);
    if (L->o->input && (ml_same_file(L->rows_path, L->o->input) || ml_same_file(L->events_path, L->o->input)))
        return ml_cli_error("%s: refusing to write the log over the input file", L->rows_path);
    ml_status st = ml_logfile_open(L->rows_path, ROW_HEADER, &L->rows, last_row, last_len, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", L->rows_path, err);
    st = ml_logfile_open(L->events_path, EVENT_HEADER, &L->events, last_ev, sizeof last_ev, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", L->events_path, err);
    /* events are written when they end, so not in start order: the latest start of any line */
    double v;
    if (last_ev[0] && ml_logfile_max_field(L->events_path, 1, &v) == ML_OK && v > L->skip_events_until)
        L->skip_events_until = v;
    L->period = period;
    return 0;
}

/* ---- events and summary ---------------------------------------------------------------------- */

static void fmt_num(char *b, size_t n, double v, int decimals)
{
    if (isfinite(v))
        snprintf(b, n, "%.*f", decimals, v);
    else
        b[0] = '\0';
}

static int write_event(logger *L, int kind, int64_t start_pos, int64_t end_pos, double peak_dbfs,
                       double rise_db, const char *detail)
{
    const double s = offset_of(L, start_pos), e = offset_of(L, end_pos);
    if (kind != K_END && s <= L->skip_events_until)
        return 0; /* written by the run this one continues */
    char utc[40], pk[32], rs[32], line[512], det[200];
    format_utc(L->start_utc + s, utc, sizeof utc);
    fmt_num(pk, sizeof pk, peak_dbfs, 2);
    fmt_num(rs, sizeof rs, rise_db, 2);
    snprintf(det, sizeof det, "%s", detail ? detail : "");
    for (char *p = det; *p; p++)
        if (*p == ',' || *p == '\n' || *p == '"')
            *p = ';';
    snprintf(line, sizeof line, "%s,%.3f,%.3f,%s,%s,%s,%s", utc, s, e, KIND_NAME[kind], pk, rs, det);
    if (ml_logfile_write_line(L->events, line) != ML_OK) {
        L->wrote_error = true;
        return ml_cli_error("%s: cannot write: %s", L->events_path, strerror(errno));
    }
    L->count[kind]++;
    time_t tt = (time_t)floor(L->start_utc + s);
    struct tm tm;
    gmtime_r(&tt, &tm);
    L->per_hour[tm.tm_hour]++;
    if (kind <= K_CARRIER && isfinite(rise_db)) {
        summary_event se = {kind, s, e, peak_dbfs, rise_db, L->start_utc + s};
        size_t at = L->nworst;
        if (L->nworst < WORST_N)
            L->nworst++;
        else if (fabs(rise_db) <= fabs(L->worst[WORST_N - 1].rise_db))
            at = WORST_N;
        else
            at = WORST_N - 1;
        if (at < WORST_N) {
            while (at > 0 && fabs(L->worst[at - 1].rise_db) < fabs(rise_db)) {
                L->worst[at] = L->worst[at - 1];
                at--;
            }
            L->worst[at] = se;
        }
    }
    return 0;
}

/* Writes the merged impulse event and forgets it. */
static int flush_impulses(logger *L)
{
    if (L->mi.n == 0)
        return 0;
    char det[64];
    snprintf(det, sizeof det, "%ld impulse%s", L->mi.n, L->mi.n == 1 ? "" : "s");
    L->mi.n = 0;
    return write_event(L, K_IMPULSE, L->mi.start, L->mi.end, L->mi.peak_dbfs, L->mi.rise_db, det);
}

/* Impulses from the detector: each counts in its interval's row; impulses following each other
 * within IMPULSE_MERGE_S merge into one event (up to IMPULSE_MERGE_MAX_S long), so a buzzing
 * dimmer makes one event per few seconds, not a hundred lines per second. */
static int impulse_events(logger *L, size_t n)
{
    const int64_t fr = (int64_t)ml_impulse_frame_samples(L->imp);
    const int64_t merge = (int64_t)llround(IMPULSE_MERGE_S * L->rate);
    const int64_t cap = (int64_t)llround(IMPULSE_MERGE_MAX_S * L->rate);
    for (size_t i = 0; i < n; i++) {
        const ml_event *e = &L->ev[i];
        const int64_t sp = L->imp_base + e->start * fr, ep = L->imp_base + e->end * fr;
        if (sp == L->imp_counted)
            L->imp_counted = -1; /* counted when the row of the interval it started in was written */
        else
            L->impulses++;
        const double pk = 20.0 * log10(e->peak_abs);
        if (L->mi.n > 0 && sp - L->mi.end <= merge && ep - L->mi.start <= cap) {
            L->mi.end = ep;
            L->mi.n++;
            L->mi.peak_dbfs = fmax(L->mi.peak_dbfs, pk);
            L->mi.rise_db = fmax(L->mi.rise_db, e->rise_db);
            continue;
        }
        int rc = flush_impulses(L);
        if (rc != 0)
            return rc;
        L->mi = (merged_impulses){sp, ep, pk, e->rise_db, 1};
    }
    /* a merged event is written once no impulse can join it any more */
    if (L->mi.n > 0 && L->pos - L->mi.end > merge)
        return flush_impulses(L);
    return 0;
}

/* pos of global step g (its start). */
static int64_t step_pos(const logger *L, int64_t g)
{
    const int64_t k = (int64_t)L->steps_per_ival;
    return L->origin + (g / k) * L->ival_frames + (g % k) * L->step_len;
}

static int change_events(logger *L, int which, size_t n)
{
    static const int kind[3] = {K_HUM, K_NOISE, K_CARRIER};
    static const char *const what[3] = {"hum over floor", "noise floor", "carrier"};
    for (size_t i = 0; i < n; i++) {
        const ml_event *e = &L->ev[i];
        char det[120];
        snprintf(det, sizeof det, "%s %.1f dB from baseline %.1f dB", what[which], e->rise_db,
                 e->baseline_db);
        int rc = write_event(L, kind[which], step_pos(L, e->start), step_pos(L, e->end), L->chg_peak[which],
                             e->rise_db, det);
        if (rc != 0)
            return rc;
    }
    return 0;
}

/* Pushes one value per change detector; level[] is what peak_dbfs reports: the extreme level seen
 * while the value was out of the detector's band (highest, or lowest for carrier loss). */
static int push_changes(logger *L, const double value[3], const double level[3])
{
    const double thr[3] = {L->o->hum_db, L->o->noise_db, L->o->loss_db};
    for (int w = 0; w < 3; w++) {
        if (L->chg[w] == NULL)
            continue;
        const int dir = w == 2 ? -1 : 1;
        const double base = ml_change_get_baseline(L->chg[w]);
        const bool out = isfinite(value[w]) && isfinite(base) && dir * (value[w] - base) >= thr[w];
        size_t n = 0;
        ml_change_push(L->chg[w], &value[w], 1, L->ev, EV_CAP, &n);
        if (n > 0) {
            int rc = change_events(L, w, n);
            if (rc != 0)
                return rc;
            L->chg_peak[w] = NAN;
        }
        if (ml_change_get_state(L->chg[w]) == 0)
            L->chg_peak[w] = NAN;
        else if (out && isfinite(level[w])
                 && (!isfinite(L->chg_peak[w]) || dir * (level[w] - L->chg_peak[w]) > 0))
            L->chg_peak[w] = level[w];
    }
    return 0;
}

/* ---- spectra --------------------------------------------------------------------------------- */

/* The k-th smallest of x[n] (0-based), reordering x: Hoare's selection, O(n) on average. */
static double select_kth(double *x, size_t n, size_t k)
{
    size_t lo = 0, hi = n - 1;
    while (lo < hi) {
        const double pivot = x[lo + (hi - lo) / 2];
        size_t i = lo, j = hi;
        while (i <= j) {
            while (x[i] < pivot)
                i++;
            while (x[j] > pivot)
                j--;
            if (i <= j) {
                const double t = x[i];
                x[i] = x[j];
                x[j] = t;
                i++;
                if (j == 0)
                    break;
                j--;
            }
        }
        if (k <= j)
            hi = j;
        else if (k >= i)
            lo = i;
        else
            return x[k];
    }
    return x[k];
}

/* Median of x[n] (reorders x); NAN for n == 0. */
static double median(double *x, size_t n)
{
    if (n == 0)
        return NAN;
    const double upper = select_kth(x, n, n / 2);
    if (n % 2)
        return upper;
    double lower = x[0]; /* after selection every x[i < n/2] <= upper: the largest of them */
    for (size_t i = 1; i < n / 2; i++)
        if (x[i] > lower)
            lower = x[i];
    return 0.5 * (lower + upper);
}

/* Median of psd[] over bins lo..hi (inclusive), as a density in dBFS/Hz. */
static double floor_dbfs_hz(logger *L, const double *psd, size_t lo, size_t hi)
{
    size_t n = 0;
    for (size_t k = lo; k <= hi && k < L->nbins; k++)
        L->scratch[n++] = psd[k];
    const double m = median(L->scratch, n);
    return 10.0 * log10(fmax(m / L->enbw / L->bin_hz / L->fs_power, 1e-300));
}

/* Band used for the noise floor: above DC's lobe up to 20 kHz (audio, if) or every bin but DC (iq). */
static void floor_band(const logger *L, size_t *lo, size_t *hi)
{
    *lo = L->lobe;
    *hi = L->is_complex ? L->nbins - 1 - L->lobe : (size_t)fmin((double)(L->nbins - 1), 20000.0 / L->bin_hz);
}

static double lobe_power(const logger *L, const double *psd, long c)
{
    double s = 0;
    for (long k = c - (long)L->lobe; k <= c + (long)L->lobe; k++)
        if (k >= 0 && k < (long)L->nbins)
            s += psd[k];
    return s / L->enbw;
}

/* Finds the carrier from the first spectrum when not given and creates the envelope detector. */
static void setup_carrier(logger *L, const double *psd)
{
    if (L->carrier_bin >= 0)
        return;
    const double nyq = L->rate / 2;
    if (isnan(L->carrier_hz)) {
        const ml_carrier_config cc = ml_carrier_config_default(L->rate, L->is_complex, NAN);
        ml_carrier car;
        if (ml_carrier_find(L->spec, &cc, &car) != ML_OK)
            return;
        L->carrier_hz = car.frequency_hz;
    }
    double f = L->carrier_hz;
    long k = lround(f / L->bin_hz);
    if (k < 0)
        k += (long)ml_spectrum_nfft(L->spec);
    if (k < 0 || k >= (long)L->nbins)
        return;
    L->carrier_bin = k;
    const double tr = 1000.0; /* ml_am_config_default's transition width */
    double room = L->is_complex ? nyq - fabs(f) : fmin(f, nyq - f);
    double bw = L->o->bandwidth_hz > 0 ? L->o->bandwidth_hz : fmin(5000.0, room - tr - 100.0);
    if (bw > room - tr)
        bw = room - tr;
    L->bandwidth_hz = bw;
    if (bw < 100)
        return;
    const double amp = sqrt(lobe_power(L, psd, k) / L->fs_power);
    ml_am_config c = ml_am_config_default(L->rate, L->is_complex, f, bw, amp > 0 ? amp : 1e-3);
    if (ml_am_create(&c, &L->am) != ML_OK) {
        L->am = NULL;
        return;
    }
    L->amo.cap = ml_am_output_cap(L->am, ML_BLOCK_FRAMES);
    L->amo.env = malloc(L->amo.cap * sizeof *L->amo.env);
    L->amo.in = malloc(L->amo.cap * sizeof *L->amo.in);
    L->amo.modulated = malloc(L->amo.cap);
    if (!L->amo.env || !L->amo.in || !L->amo.modulated) {
        ml_am_destroy(L->am);
        L->am = NULL;
    }
}

/* End of a step: one value per change detector (NaN without a complete spectrum). */
static int step_done(logger *L)
{
    double value[3] = {NAN, NAN, NAN}, level[3] = {NAN, NAN, NAN};
    if (L->spec && ml_spectrum_segments(L->spec) > 0
        && ml_spectrum_get_psd(L->spec, L->psd, L->nbins) == ML_OK) {
        for (size_t k = 0; k < L->nbins; k++)
            L->psd_sum[k] += L->psd[k];
        L->nspectra++;
        size_t lo, hi;
        floor_band(L, &lo, &hi);
        const double fl = floor_dbfs_hz(L, L->psd, lo, hi);
        value[1] = fl;
        level[1] = L->step_n > 0 ? ml_power_dbfs(L->step_sumsq / (double)L->step_n) : NAN;
        if (!L->is_complex) {
            /* hum over floor: the hum power against what the floor alone puts in its lobes; until
             * the mains frequency is known, the larger of the 50 and 60 Hz figures */
            const double cand[2] = {50.0, 60.0};
            for (int j = 0; j < 2; j++) {
                if (L->mains_hz > 0 && cand[j] != L->mains_hz)
                    continue;
                ml_audio_result hr;
                if (ml_hum_analyze_psd(L->spec, L->psd, L->nbins, cand[j], HUM_N, &hr) != ML_OK || hr.nhum == 0)
                    continue;
                const double floor_lobes = pow(10.0, fl / 10.0) * L->fs_power * L->bin_hz
                                           * (double)(2 * L->lobe + 1) * (double)hr.nhum;
                const double r = 10.0 * log10(fmax(hr.hum_power, 1e-300) / fmax(floor_lobes, 1e-300));
                if (isnan(value[0]) || r > value[0]) {
                    value[0] = r;
                    level[0] = ml_power_dbfs(hr.hum_power);
                }
            }
        }
        if (L->is_if || L->is_complex) {
            setup_carrier(L, L->psd);
            if (L->carrier_bin >= 0) {
                value[2] = 10.0 * log10(fmax(lobe_power(L, L->psd, L->carrier_bin) / L->fs_power, 1e-300));
                level[2] = value[2];
            }
        }
    }
    if (L->spec)
        ml_spectrum_reset(L->spec);
    L->step_sumsq = 0;
    L->step_n = 0;
    return push_changes(L, value, level);
}

/* ---- spectrogram for --plot ------------------------------------------------------------------ */

/* Band centres: log-spaced from the first bin clear of DC to Nyquist (real input) or linear over
 * -Nyquist..Nyquist (I/Q). */
static void sgram_bands(logger *L)
{
    const double nyq = L->rate / 2;
    const double flo = fmax(20.0, (double)(L->lobe + 1) * L->bin_hz);
    for (size_t b = 0; b < SG_ROWS; b++)
        L->band_hz[b] = L->is_complex ? -nyq + (b + 0.5) * (2 * nyq) / SG_ROWS
                                      : flo * pow(nyq / flo, (b + 0.5) / SG_ROWS);
}

/* Mean power density of each band from the interval's mean spectrum L->psd. */
static void sgram_push(logger *L, double t0, double t1)
{
    const double nfft = (double)ml_spectrum_nfft(L->spec);
    for (size_t b = 0; b < SG_ROWS; b++) {
        const double half = L->is_complex ? L->rate / SG_ROWS / 2 : 0;
        /* band edges: halfway (geometrically for log bands) to the neighbouring centres */
        const double lo_c = b == 0 ? L->band_hz[0] : L->band_hz[b - 1];
        const double hi_c = b + 1 == SG_ROWS ? L->rate / 2 : L->band_hz[b + 1];
        const double fa = L->is_complex ? L->band_hz[b] - half : (b == 0 ? lo_c : sqrt(lo_c * L->band_hz[b]));
        const double fb = L->is_complex ? L->band_hz[b] + half
                                        : (b + 1 == SG_ROWS ? hi_c : sqrt(L->band_hz[b] * hi_c));
        long ka = lround(fa / L->bin_hz), kb = lround(fb / L->bin_hz);
        if (kb < ka)
            kb = ka;
        double sum = 0;
        long n = 0;
        for (long k = ka; k <= kb; k++) {
            long kk = k < 0 ? k + (long)nfft : k;
            if (kk >= 0 && kk < (long)L->nbins) {
                sum += L->psd[kk];
                n++;
            }
        }
        L->sg_col[b] = n > 0 ? sum / (double)n / L->enbw / L->bin_hz : 0.0;
    }
    ml_history_push(L->sgram, t0, t1, L->sg_col);
}

/* ---- rows ------------------------------------------------------------------------------------ */

static void reset_interval(logger *L)
{
    ml_stats_reset(&L->st);
    L->asum = L->peak = 0;
    L->data_frames = L->lost_frames = 0;
    L->impulses = 0;
    memset(L->psd_sum, 0, L->nbins * sizeof *L->psd_sum);
    L->nspectra = 0;
    L->env_max = -INFINITY;
    L->env_min = INFINITY;
    L->env_sum = 0;
    L->env_n = 0;
    L->note[0] = '\0';
}

static int write_row(logger *L)
{
    const int64_t start = L->pos - L->ipos;
    /* An impulse is confirmed up to 5 ms (gap) after it ends: one still open that started in this
     * interval is counted here, and not again when it closes. (Should it then grow beyond 0.2 s it
     * is dropped as a level change, leaving this count one too high: rare by construction.) */
    int64_t open_frame;
    if (ml_impulse_get_open(L->imp, &open_frame)) {
        const int64_t sp = L->imp_base + open_frame * (int64_t)ml_impulse_frame_samples(L->imp);
        if (sp >= start && sp != L->imp_counted) {
            L->impulses++;
            L->imp_counted = sp;
        }
    }
    const double off = offset_of(L, start), dur = (double)L->ipos / L->rate, utc = L->start_utc + off;
    /* rotation: the row's start time chooses the file */
    int64_t p = period_of(L->o, utc);
    if (p != L->period) {
        char last[16];
        int rc = open_outputs(L, p, last, sizeof last);
        if (rc != 0)
            return rc;
    }
    double row_mains = NAN;
    double rms = NAN, pk = NAN, aw = NAN, crest = NAN, hum = NAN, h[HUM_N], fl = NAN, car = NAN, cnr = NAN,
           mpos = NAN, mneg = NAN;
    for (int i = 0; i < HUM_N; i++)
        h[i] = NAN;
    if (L->data_frames > 0) {
        const double ms = L->st.sumsq / (double)L->st.count;
        rms = ml_power_dbfs(ms);
        pk = L->peak > 0 ? 20.0 * log10(L->peak) : -300.0;
        aw = ml_power_dbfs(L->asum / (double)L->data_frames);
        crest = ms > 0 && L->peak > 0 ? 20.0 * log10(L->peak / sqrt(ms)) : NAN;
    }
    if (L->nspectra > 0) {
        for (size_t k = 0; k < L->nbins; k++)
            L->psd[k] = L->psd_sum[k] / (double)L->nspectra;
        size_t lo, hi;
        floor_band(L, &lo, &hi);
        if (!L->is_complex) {
            ml_audio_result hr;
            double mains = L->mains_hz;
            if (mains == 0) {
                /* not given: the frequency whose first four multiples hold more power in this
                 * interval; fixed for the rest of the log once one leads by 6 dB */
                ml_audio_result h50, h60;
                if (ml_hum_analyze_psd(L->spec, L->psd, L->nbins, 50, 4, &h50) == ML_OK
                    && ml_hum_analyze_psd(L->spec, L->psd, L->nbins, 60, 4, &h60) == ML_OK) {
                    mains = h60.hum_power > h50.hum_power ? 60.0 : 50.0;
                    if (h50.hum_power > 4.0 * h60.hum_power || h60.hum_power > 4.0 * h50.hum_power)
                        L->mains_hz = mains;
                }
            }
            row_mains = mains;
            if (mains > 0 && ml_hum_analyze_psd(L->spec, L->psd, L->nbins, mains, HUM_N, &hr) == ML_OK) {
                hum = ml_power_dbfs(hr.hum_power);
                for (size_t i = 0; i < hr.nhum; i++)
                    if (hr.hum[i].order >= 1 && hr.hum[i].order <= HUM_N)
                        h[hr.hum[i].order - 1] = ml_power_dbfs(hr.hum[i].power);
            }
        }
        if (L->sgram)
            sgram_push(L, off, off + dur);
        fl = floor_dbfs_hz(L, L->psd, lo, hi);
        if (L->carrier_bin >= 0) {
            const double pc = lobe_power(L, L->psd, L->carrier_bin);
            car = 10.0 * log10(fmax(pc / L->fs_power, 1e-300));
            /* noise in the channel: median bin power over carrier +- bandwidth, lobe excluded */
            const long half = lround(L->bandwidth_hz / L->bin_hz);
            size_t n = 0;
            for (long k = L->carrier_bin - half; k <= L->carrier_bin + half; k++) {
                long kk = L->is_complex ? (k % (long)L->nbins + (long)L->nbins) % (long)L->nbins : k;
                if (labs(k - L->carrier_bin) > (long)L->lobe && kk >= (long)L->lobe && kk < (long)L->nbins)
                    L->scratch[n++] = L->psd[kk];
            }
            if (n > 0 && half > 0) {
                const double nd = median(L->scratch, n) / L->enbw;
                cnr = 10.0 * log10(fmax(pc, 1e-300) / fmax(nd * (double)(2 * half + 1), 1e-300));
            }
        }
    }
    if (L->env_n > 0) {
        const double c = L->env_sum / (double)L->env_n;
        if (c > 0) {
            mpos = 100.0 * (L->env_max - c) / c;
            mneg = 100.0 * (c - L->env_min) / c;
        }
    }
    char utcs[40], c[12][24], hs[HUM_N][24], line[1024];
    format_utc(utc, utcs, sizeof utcs);
    fmt_num(c[0], 24, rms, 2);
    fmt_num(c[1], 24, pk, 2);
    fmt_num(c[2], 24, aw, 2);
    fmt_num(c[3], 24, crest, 2);
    fmt_num(c[4], 24, row_mains, 0);
    fmt_num(c[5], 24, hum, 2);
    fmt_num(c[6], 24, fl, 2);
    fmt_num(c[7], 24, car, 2);
    fmt_num(c[8], 24, cnr, 2);
    fmt_num(c[9], 24, mpos, 2);
    fmt_num(c[10], 24, mneg, 2);
    for (int i = 0; i < HUM_N; i++)
        fmt_num(hs[i], 24, h[i], 2);
    snprintf(line, sizeof line, "%s,%.3f,%.3f,%s,%s,%s,%s,%s,%s,%s,%s,%s,%s,%s,%s,%s,%ld,%.3f,%s,%s,%s,%s,%s",
             utcs, off, dur, c[0], c[1], c[2], c[3], c[4], c[5], hs[0], hs[1], hs[2], hs[3], hs[4], hs[5],
             c[6], L->impulses, (double)L->lost_frames / L->rate, c[7], c[8], c[9], c[10], L->note);
    if (ml_logfile_write_line(L->rows, line) != ML_OK) {
        L->wrote_error = true;
        return ml_cli_error("%s: cannot write: %s", L->rows_path, strerror(errno));
    }
    L->rows_written++;
    return 0;
}

/* ---- the stream ------------------------------------------------------------------------------ */

/* Feeds n frames of data (buf interleaved; NULL: n lost frames, a gap) through the grid. */
static int advance(logger *L, const float *buf, size_t n)
{
    size_t done = 0;
    while (done < n) {
        /* the chunk ends at the next step or interval boundary */
        const int64_t j = L->ipos / L->step_len;
        int64_t next = (size_t)j < L->steps_per_ival ? (j + 1) * L->step_len : L->ival_frames;
        if (next > L->ival_frames)
            next = L->ival_frames;
        size_t m = (size_t)(next - L->ipos);
        if (m > n - done)
            m = n - done;
        if (buf != NULL) {
            const float *b = buf + done * L->nch;
            ml_channels_split(&L->ch, b, m, L->mono, NULL);
            ml_stats_push(&L->st, L->mono, m);
            ml_aweight_push(L->aw, L->mono, L->aout, m);
            for (size_t i = 0; i < m; i++) {
                L->asum += L->aout[i] * L->aout[i];
                L->step_sumsq += (double)L->mono[i] * L->mono[i];
                if (fabsf(L->mono[i]) > L->peak)
                    L->peak = fabsf(L->mono[i]);
            }
            L->step_n += (int64_t)m;
            size_t nev = 0;
            ml_impulse_push(L->imp, L->mono, m, L->ev, EV_CAP, &nev);
            int rc = impulse_events(L, nev);
            if (rc != 0)
                return rc;
            if (L->is_complex) {
                ml_channels_split_complex(&L->ch, b, m, L->z);
                ml_spectrum_push_complex(L->spec, L->z, m);
            } else {
                ml_spectrum_push(L->spec, L->mono, m);
                if (L->am)
                    for (size_t i = 0; i < m; i++)
                        L->z[i] = L->mono[i];
            }
            if (L->am) {
                size_t cnt = 0;
                if (ml_am_push(L->am, L->z, NULL, m, &L->amo, &cnt) == ML_OK)
                    for (size_t i = 0; i < cnt; i++) {
                        const double e = L->amo.env[i];
                        L->env_sum += e;
                        L->env_n++;
                        if (e > L->env_max) L->env_max = e;
                        if (e < L->env_min) L->env_min = e;
                    }
            }
            L->data_frames += (int64_t)m;
        } else {
            L->lost_frames += (int64_t)m;
            /* no spectrum, filter or envelope spans a gap */
            ml_spectrum_reset(L->spec);
            ml_aweight_reset(L->aw);
            if (L->am)
                ml_am_reset(L->am);
        }
        L->pos += (int64_t)m;
        L->ipos += (int64_t)m;
        done += m;
        if ((size_t)j < L->steps_per_ival && L->ipos == (j + 1) * L->step_len) {
            int rc = step_done(L);
            if (rc != 0)
                return rc;
        }
        if (L->ipos == L->ival_frames) {
            int rc = write_row(L);
            if (rc != 0)
                return rc;
            L->ipos = 0;
            reset_interval(L);
            if (L->spec)
                ml_spectrum_reset(L->spec);
        }
    }
    return 0;
}

/* Closes open events and writes the last partial row. */
static int finish(logger *L, const char *end_note)
{
    size_t nev = 0;
    int rc = 0;
    ml_impulse_finish(L->imp, L->ev, EV_CAP, &nev);
    rc = impulse_events(L, nev);
    if (rc == 0)
        rc = flush_impulses(L);
    for (int w = 0; w < 3 && rc == 0; w++)
        if (L->chg[w]) {
            ml_change_finish(L->chg[w], L->ev, EV_CAP, &nev);
            rc = change_events(L, w, nev);
        }
    if (end_note)
        snprintf(L->note, sizeof L->note, "%s", end_note);
    if (rc == 0 && L->ipos > 0)
        rc = write_row(L);
    return rc;
}

static void print_summary(const logger *L, FILE *f, const char *why)
{
    fprintf(f, "log: %ld rows written (%s); rows in %s, events in %s\n", L->rows_written, why, L->rows_path,
            L->events_path);
    fprintf(f, "events:");
    for (int k = 0; k < K_COUNT; k++)
        fprintf(f, " %s %ld%s", KIND_NAME[k], L->count[k], k + 1 < K_COUNT ? "," : "\n");
    if (L->nworst > 0) {
        fprintf(f, "worst events (largest change from baseline):\n");
        for (size_t i = 0; i < L->nworst; i++) {
            char utc[40];
            format_utc(L->worst[i].start_utc, utc, sizeof utc);
            fprintf(f, "  %s  offset %10.3f s  %-12s  %+7.1f dB  peak %7.1f dBFS  %.3f s\n", utc,
                    L->worst[i].start_off, KIND_NAME[L->worst[i].kind], L->worst[i].rise_db,
                    L->worst[i].peak_dbfs, L->worst[i].end_off - L->worst[i].start_off);
        }
    }
    fprintf(f, "events per UTC hour:");
    for (int h = 0; h < 24; h++)
        fprintf(f, "%s%02d:%ld", h % 12 == 0 ? "\n  " : "  ", h, L->per_hour[h]);
    fprintf(f, "\n");
}

/* Reads an existing log's last row and resumes after it: a file input continues at that offset,
 * a live one keeps counting offsets from the first run's start. */
static int resume(logger *L, const char *last)
{
    char f[64];
    double off, dur;
    if (!csv_field(last, 1, f, sizeof f) || !ml_cli_number(f, &off) || !csv_field(last, 2, f, sizeof f)
        || !ml_cli_number(f, &dur) || off < 0 || dur < 0)
        return ml_cli_error("%s: the last row cannot be read; choose another --out", L->rows_path);
    if (L->o->input) {
        const int64_t at = (int64_t)llround((off + dur) * L->rate);
        if (L->info->frames >= 0 && at >= L->info->frames)
            return 1; /* already complete */
        if (ml_source_seek(L->src, at) != ML_OK)
            return ml_cli_error("%s: cannot continue at %.3f s: %s", L->o->input, off + dur,
                                ml_source_detail(L->src));
        L->pos = L->origin = at;
    } else {
        char u[64];
        double t0;
        if (csv_field(last, 0, u, sizeof u) && parse_utc(u, &t0)) {
            L->offset0_s = (t0 - off) > 0 ? L->start_utc - (t0 - off) : off + dur;
            if (L->offset0_s < off + dur)
                L->offset0_s = off + dur; /* a clock set back must not make offsets overlap */
            L->start_utc -= L->offset0_s;
        }
    }
    return 0;
}

static ml_status make_objects(logger *L)
{
    const double rate = L->rate;
    ml_aweight_config ac = ml_aweight_config_default(rate);
    ml_status st = ml_aweight_create(&ac, &L->aw);
    if (st != ML_OK)
        return st;
    ml_impulse_config ic = ml_impulse_config_default(rate);
    ic.threshold_db = L->o->impulse_db;
    if ((st = ml_impulse_create(&ic, &L->imp)) != ML_OK)
        return st;
    /* steps: the power of two <= rate/5 and <= the interval; K steps tile each interval */
    size_t nfft = 256;
    while ((double)(nfft * 2) <= rate / 5 && (int64_t)(nfft * 2) <= L->ival_frames)
        nfft *= 2;
    if ((int64_t)nfft > L->ival_frames)
        return ML_EINVAL;
    L->steps_per_ival = (size_t)(L->ival_frames / (int64_t)nfft);
    L->step_len = L->ival_frames / (int64_t)L->steps_per_ival;
    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    sc.nfft = nfft;
    sc.hop = nfft / 2;
    sc.window = ML_WINDOW_HANN; /* narrow lobe: 50 Hz hum resolved with a short step */
    sc.complex_input = L->is_complex;
    if ((st = ml_spectrum_create(&sc, &L->spec)) != ML_OK)
        return st;
    L->nbins = ml_spectrum_nbins(L->spec);
    L->lobe = ml_spectrum_lobe_bins(L->spec);
    L->enbw = ml_spectrum_enbw_bins(L->spec);
    L->bin_hz = rate / (double)nfft;
    L->fs_power = ml_spectrum_full_scale_power(L->spec);
    const double step_rate = (double)L->steps_per_ival / L->o->interval_s;
    const double thr[3] = {L->o->hum_db, L->o->noise_db, L->o->loss_db};
    for (int w = 0; w < 3; w++) {
        if ((w == 0 && L->is_complex) || (w == 2 && !L->is_if && !L->is_complex))
            continue;
        ml_change_config cc = ml_change_config_default(step_rate, w == 2 ? -1 : 1, thr[w]);
        cc.min_s = w == 2 ? 0.5 : 1.0;
        if (cc.baseline_s * step_rate < 1)
            cc.baseline_s = 1.0 / step_rate;
        if (cc.warmup_s > cc.baseline_s)
            cc.warmup_s = cc.baseline_s;
        if ((st = ml_change_create(&cc, &L->chg[w])) != ML_OK)
            return st;
        L->chg_peak[w] = NAN;
    }
    ml_stats_init(&L->st, L->info->bits >= 2 && L->info->bits <= 32 ? L->info->bits : 24);
    L->psd = calloc(L->nbins, sizeof *L->psd);
    L->psd_sum = calloc(L->nbins, sizeof *L->psd_sum);
    L->scratch = calloc(L->nbins, sizeof *L->scratch);
    L->buf = malloc(ML_BLOCK_FRAMES * L->nch * sizeof *L->buf);
    L->mono = malloc(ML_BLOCK_FRAMES * sizeof *L->mono);
    L->aout = malloc(ML_BLOCK_FRAMES * sizeof *L->aout);
    L->z = malloc(ML_BLOCK_FRAMES * sizeof *L->z);
    L->ev = malloc(EV_CAP * sizeof *L->ev);
    if (!L->psd || !L->psd_sum || !L->scratch || !L->buf || !L->mono || !L->aout || !L->z || !L->ev)
        return ML_ENOMEM;
    return ML_OK;
}

static void free_objects(logger *L)
{
    ml_aweight_destroy(L->aw);
    ml_impulse_destroy(L->imp);
    for (int w = 0; w < 3; w++)
        ml_change_destroy(L->chg[w]);
    ml_spectrum_destroy(L->spec);
    ml_am_destroy(L->am);
    free(L->amo.env);
    free(L->amo.in);
    free(L->amo.modulated);
    free(L->psd);
    free(L->psd_sum);
    free(L->scratch);
    free(L->buf);
    free(L->mono);
    free(L->aout);
    free(L->z);
    free(L->ev);
    ml_logfile_close(L->rows);
    ml_logfile_close(L->events);
    ml_history_destroy(L->sgram);
}

static void pace(const logger *L, const struct timespec *t0, int64_t frames)
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

int ml_cmd_log(int argc, char **argv)
{
    ml_log_opts o;
    int rc = ml_log_parse(argc, argv, &o);
    if (rc != 0)
        return rc < 0 ? ML_EXIT_OK : rc;
    ml_source *src = NULL;
    double start_utc = 0;
    rc = open_input(&o, &src, &start_utc);
    if (rc == 0)
        rc = ml_log_run(&o, src, start_utc);
    ml_source_close(src);
    return rc;
}

int ml_log_run(const ml_log_opts *opts, ml_source *src, double start_utc)
{
    const ml_log_opts o = *opts;
    int rc = 0;
    static logger L;
    memset(&L, 0, sizeof L);
    g_stop = 0;
    /* from the start, so that a signal during set-up also ends the log cleanly */
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    L.o = &o;
    L.src = src;
    L.start_utc = start_utc;
    L.carrier_bin = -1;
    L.carrier_hz = o.carrier_hz;
    L.mains_hz = o.mains_hz;
    L.skip_events_until = -INFINITY;
    L.imp_counted = -1;
    L.info = ml_source_get_info(L.src);
    L.rate = L.info->rate_hz;
    L.nch = (size_t)L.info->channels;
    L.is_complex = o.kind == ML_KIND_IQ;
    L.is_if = o.kind == ML_KIND_IF;
    const char *name = o.input ? o.input : o.device;
    if (ml_channels_map((int)L.nch, o.channel, L.is_complex, false, 0, &L.ch) != ML_OK) {
        rc = ml_cli_error("%s: --channel %ld%s but the input has %zu channel%s", name, o.channel,
                          L.is_complex ? " (and the next, for iq)" : "", L.nch, L.nch == 1 ? "" : "s");
        goto done;
    }
    if (L.is_complex || L.is_if) {
        if (!isnan(o.carrier_hz)
            && !(fabs(o.carrier_hz) < L.rate / 2 && (L.is_complex || o.carrier_hz > 0))) {
            rc = ml_cli_error("--carrier %.1f Hz is outside the input's band (rate %.0f Hz)", o.carrier_hz,
                              L.rate);
            goto done;
        }
    }
    L.ival_frames = (int64_t)llround(o.interval_s * L.rate);
    if (L.ival_frames < 256) {
        rc = ml_cli_error("%s: --interval %.3f s is only %lld frames at %.0f Hz (at least 256 needed)", name,
                          o.interval_s, (long long)L.ival_frames, L.rate);
        goto done;
    }
    ml_status st = make_objects(&L);
    if (st != ML_OK) {
        rc = ml_cli_error("%s: %s", name, ml_strerror(st));
        goto done;
    }
    if (o.plot) {
        ml_history_config hc = ml_history_config_default();
        hc.nrows = SG_ROWS;
        if (ml_history_create(&hc, &L.sgram) != ML_OK) {
            rc = ml_cli_error("%s: out of memory", o.plot);
            goto done;
        }
        sgram_bands(&L);
    }
    reset_interval(&L);

    /* find the files this run continues: follow rotation while the period's file has rows */
    char last[4096];
    int64_t period = period_of(&o, L.start_utc);
    for (int hop = 0;; hop++) {
        rc = open_outputs(&L, period, last, sizeof last);
        if (rc != 0)
            goto done;
        if (last[0] == '\0')
            break;
        rc = resume(&L, last);
        if (rc == 1) {
            printf("log: %s already holds the whole input\n", L.rows_path);
            rc = 0;
            goto done;
        }
        if (rc != 0)
            goto done;
        const int64_t p2 = period_of(&o, L.start_utc + offset_of(&L, L.pos));
        if (p2 == period || hop > 100000 || !o.input)
            break;
        char rp[1100], ep[1100];
        paths_for(&o, p2, rp, ep, sizeof rp);
        period = p2;
        if (!ml_logfile_has_rows(rp)) {
            rc = open_outputs(&L, period, last, sizeof last);
            if (rc != 0)
                goto done;
            break;
        }
    }
    L.imp_base = L.pos;

    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    const int64_t first = L.pos;
    const int64_t limit = o.seconds > 0 ? (int64_t)llround(o.seconds * L.rate) : INT64_MAX;
    const char *why = "end of input";
    char reason[400] = "";
    rc = 0;
    while (rc == 0) {
        if (g_stop) {
            why = g_stop == SIGINT ? "interrupted (SIGINT)" : "terminated (SIGTERM)";
            break;
        }
        if (L.pos - first >= limit) {
            why = "--seconds reached";
            break;
        }
        size_t want = ML_BLOCK_FRAMES;
        if (o.pace > 0 && want > (size_t)(L.rate / 20))
            want = (size_t)(L.rate / 20); /* finer steps keep a paced run responsive */
        if ((int64_t)want > limit - (L.pos - first))
            want = (size_t)(limit - (L.pos - first));
        const uint64_t lost0 = ml_source_lost_frames(L.src);
        size_t got = 0;
        st = ml_source_read(L.src, L.buf, want, &got);
        const uint64_t lost = ml_source_lost_frames(L.src) - lost0;
        if (lost > 0) {
            /* the input fell behind: a marked gap, and the detectors start afresh after it */
            size_t nev = 0;
            ml_impulse_finish(L.imp, L.ev, EV_CAP, &nev);
            rc = impulse_events(&L, nev);
            if (rc == 0)
                rc = flush_impulses(&L);
            char det[80];
            snprintf(det, sizeof det, "%llu frames lost (input overflow)", (unsigned long long)lost);
            if (rc == 0)
                rc = write_event(&L, K_GAP, L.pos, L.pos + (int64_t)lost, NAN, NAN, det);
            snprintf(L.note, sizeof L.note, "gap");
            if (rc == 0)
                rc = advance(&L, NULL, (size_t)lost);
            ml_impulse_reset(L.imp);
            L.imp_base = L.pos;
            if (rc != 0)
                break;
        }
        if (st != ML_OK) {
            snprintf(reason, sizeof reason, "input failed: %s%s%s", ml_strerror(st),
                     ml_source_detail(L.src)[0] ? ": " : "", ml_source_detail(L.src));
            why = reason;
            break;
        }
        for (size_t i = 0; i < got * L.nch; i++)
            if (!isfinite(L.buf[i])) {
                L.buf[i] = 0.0f; /* a non-finite sample would poison every sum: logged as silence */
                snprintf(L.note, sizeof L.note, "non-finite samples set to 0");
            }
        rc = advance(&L, L.buf, got);
        if (rc != 0)
            break;
        if (got < want)
            break; /* end of the input */
        if (o.pace > 0)
            pace(&L, &t0, L.pos - first);
    }
    if (rc == 0) {
        if (reason[0]) {
            int64_t at = L.pos;
            rc = write_event(&L, K_END, at, at, NAN, NAN, reason);
        }
        if (rc == 0)
            rc = finish(&L, reason[0] ? reason : (g_stop ? why : NULL));
    }
    if (rc == 0 || !L.wrote_error) {
        print_summary(&L, stdout, why);
        fflush(stdout);
    }
    if (rc == 0 && o.plot) {
        char err[512], title[1200];
        snprintf(title, sizeof title, "%s: level history (this file) and spectrogram (this run)", name);
        const ml_logplot_spec ps = {L.sgram, L.band_hz, !L.is_complex, L.fs_power, title};
        if (ml_logplot_write(o.plot, L.rows_path, L.events_path, &ps, err, sizeof err) != ML_OK)
            rc = ml_cli_error("%s: %s", o.plot, err);
    }
    if (rc == 0 && reason[0]) {
        fprintf(stderr, "modlens: %s: %s\n", name, reason);
        rc = ML_EXIT_FAIL;
    }
done:
    free_objects(&L);
    return rc;
}
