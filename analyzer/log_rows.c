/* The log's output files (names, checks, rotation, continuation) and its rows.
 * SPDX-License-Identifier: MIT
 *
 * A row's modulation and quasi-peak columns carry measure's figures of the interval under the
 * registry's names (analyzer/values.h, values and decimals as in the reports); the other columns
 * are the log's own (README "Logging noise and interference" defines each). Every field is
 * written through io/csv.h (RFC 4180 quoting).
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>
#include <sys/stat.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/log_internal.h"
#include "analyzer/values.h"
#include "dsp/figures.h"
#include "dsp/mmnoise.h"
#include "dsp/noisefloor.h"
#include "dsp/order.h"
#include "io/csv.h"

#define MAINS_CHANGE_S 60.0 /* the other mains must win every vote this long to change a decided one */

/* The columns before the modulation figures. */
static const char LEAD_HEADER[] =
    "start_utc,start_local,offset_s,duration_s,rms_dbfs,peak_dbfs,a_weighted_dbfs,crest_db,mains_hz,hum_dbfs,"
    "hum_h1_dbfs,hum_h2_dbfs,hum_h3_dbfs,hum_h4_dbfs,hum_h5_dbfs,hum_h6_dbfs,noise_floor_dbfs_hz,impulses,"
    "lost_s";
static const char EVENT_HEADER[] =
    "start_utc,start_local,start_offset_s,end_offset_s,kind,peak_dbfs,rise_db,rate_hz,detail";

/* Registered figures of a row: the quasi-peak readings (if/iq), then after the absolute noise the
 * modulation figures (if/iq): measure's definitions, applied to the interval. carrier_reference
 * (the source of C) follows unmodulated_dbfs. */
static const char *const QP_COLUMNS[] = {"interference.qp_dbfs", "interference.av_dbfs"};
static const char *const MOD_COLUMNS[] = {
    "carrier.frequency_hz", "carrier.level_dbfs", "carrier.unmodulated_dbfs", "carrier.cnr_db",
    "modulation.index", "modulation.positive_peak_pct", "modulation.negative_peak_pct",
    "modulation.carrier_shift_pct", "modulation.envelope_thd_pct", "modulation.hum_db",
    "modulation.pinch_off_events",
};
#define NMOD (sizeof MOD_COLUMNS / sizeof *MOD_COLUMNS)

const char *ml_log_rows_header(const ml_analysis_opts *an)
{
    static char h[1024];
    if (h[0] == '\0') {
        size_t n = (size_t)snprintf(h, sizeof h, "%s", LEAD_HEADER);
        for (size_t i = 0; i < 2; i++)
            n += (size_t)snprintf(h + n, sizeof h - n, ",%s", ml_values_short_name(QP_COLUMNS[i]));
        n += (size_t)snprintf(h + n, sizeof h - n, ",fa_db,noise_environment,environment_distance_db");
        for (size_t i = 0; i < NMOD; i++) {
            n += (size_t)snprintf(h + n, sizeof h - n, ",%s", ml_values_short_name(MOD_COLUMNS[i]));
            if (i == 2)
                n += (size_t)snprintf(h + n, sizeof h - n, ",carrier_reference");
        }
        snprintf(h + n, sizeof h - n, ",note");
    }
    return ml_bench_log_header(an, h); /* with a calibration: the level columns in dBu */
}

const char *ml_log_events_header(void)
{
    return EVENT_HEADER;
}

char *ml_log_head(const ml_logger *L, bool events)
{
    const char *h = events ? EVENT_HEADER : ml_log_rows_header(&L->o->an);
    const size_t n = strlen(L->meta) + strlen(h) + 3;
    char *s = malloc(n);
    if (s)
        snprintf(s, n, "%s\n%s\n", L->meta, h);
    return s;
}

/* ---- times ------------------------------------------------------------------------------------- */

/* Whole seconds and milliseconds of t, rounded to the millisecond. */
static time_t split_ms(double t, long *ms)
{
    double whole = floor(t);
    *ms = lround((t - whole) * 1000.0);
    if (*ms >= 1000) {
        whole += 1;
        *ms = 0;
    }
    return (time_t)whole;
}

/* t in UTC or local time: *tm, the date and time to the second in day ("2026-12-05T03:14:38"),
 * the milliseconds in *ms. */
static void day_and_ms(double t, bool local, struct tm *tm, char day[32], long *ms)
{
    const time_t tt = split_ms(t, ms);
    if (local)
        localtime_r(&tt, tm);
    else
        gmtime_r(&tt, tm);
    strftime(day, 32, "%Y-%m-%dT%H:%M:%S", tm);
}

void ml_log_format_utc(double t, char *b, size_t n)
{
    long ms;
    struct tm tm;
    char day[32];
    day_and_ms(t, false, &tm, day, &ms);
    snprintf(b, n, "%s.%03ldZ", day, ms);
}

void ml_log_format_local(double t, char *b, size_t n)
{
    long ms;
    struct tm tm;
    char day[32];
    day_and_ms(t, true, &tm, day, &ms);
    const long off = tm.tm_gmtoff, a = labs(off);
    if (a % 60 != 0)
        snprintf(b, n, "%s.%03ld%c%02ld:%02ld:%02ld", day, ms, off < 0 ? '-' : '+', a / 3600, a / 60 % 60, a % 60);
    else
        snprintf(b, n, "%s.%03ld%c%02ld:%02ld", day, ms, off < 0 ? '-' : '+', a / 3600, a / 60 % 60);
}

/* ---- files ------------------------------------------------------------------------------------- */

int64_t ml_log_period_of(const ml_log_opts *o, double utc)
{
    return o->rotate_h > 0 ? (int64_t)floor(utc / (o->rotate_h * 3600.0)) : 0;
}

/* "dir/name.csv" + ins -> "dir/name<ins>.csv" (inserted before the extension), allocated. */
static char *insert_before_ext(const char *path, const char *ins)
{
    const char *slash = strrchr(path, '/'), *dot = strrchr(path, '.');
    const size_t n = strlen(path) + strlen(ins) + 1;
    char *out = malloc(n);
    if (out == NULL)
        return NULL;
    if (dot == NULL || (slash && dot < slash) || dot == (slash ? slash + 1 : path))
        snprintf(out, n, "%s%s", path, ins);
    else
        snprintf(out, n, "%.*s%s%s", (int)(dot - path), path, ins, dot);
    return out;
}

/* "-YYYYMMDDTHHMMSSZ" of a rotation period, or "" without rotation. */
static void stamp_of(const ml_log_opts *o, int64_t period, char *b, size_t n)
{
    if (o->rotate_h <= 0) {
        b[0] = '\0';
        return;
    }
    char iso[40];
    ml_log_format_utc((double)period * o->rotate_h * 3600.0, iso, sizeof iso);
    /* 2026-12-02T13:00:00.000Z -> -20261202T130000Z */
    size_t k = 0;
    b[k++] = '-';
    for (const char *p = iso; *p && *p != '.' && k + 2 < n; p++)
        if (*p != '-' && *p != ':')
            b[k++] = *p;
    b[k++] = 'Z';
    b[k] = '\0';
}

char *ml_log_rows_path(const ml_logger *L, int64_t period)
{
    char st[48], ins[80];
    stamp_of(L->o, period, st, sizeof st);
    snprintf(ins, sizeof ins, "%s%s", L->suffix, st);
    return insert_before_ext(L->o->out, ins);
}

char *ml_log_events_path(const ml_logger *L, int64_t period)
{
    char st[48], ins[80];
    stamp_of(L->o, period, st, sizeof st);
    snprintf(ins, sizeof ins, "%s%s%s", L->suffix, st, L->o->events ? "" : "-events");
    return insert_before_ext(L->o->events ? L->o->events : L->o->out, ins);
}

char *ml_log_state_path(const ml_logger *L)
{
    char *base = insert_before_ext(L->o->out, L->suffix);
    if (base == NULL)
        return NULL;
    const size_t n = strlen(base) + 8;
    char *s = malloc(n);
    if (s)
        snprintf(s, n, "%s.state", base);
    free(base);
    return s;
}

/* Registers the files the log reads and writes: the input and the carrier reference, the rows,
 * events and state files (never begun in this set: they are appended to or replaced elsewhere),
 * and --plot. */
ml_status ml_log_register(const ml_logger *L, ml_output_set *set, const char *rows, const char *events,
                          ml_output **plot)
{
    ml_output *unused;
    ml_status st = ml_output_set_input(set, L->o->in.live ? NULL : L->o->in.path, "the input");
    if (st == ML_OK)
        st = ml_output_set_input(set, L->o->an.carrier_reference, "the carrier reference");
    if (st == ML_OK)
        st = ml_output_set_add(set, rows, "--out", 0, &unused);
    if (st == ML_OK)
        st = ml_output_set_add(set, events, "--events", 0, &unused);
    if (st == ML_OK)
        st = ml_output_set_add(set, L->state_path, "the log's state", 0, &unused);
    if (st == ML_OK)
        st = ml_output_set_add(set, L->o->plot, "--plot", 0, plot);
    return st;
}

/* A file whose name the log made (the events file beside --out, a rotated period's file, a new
 * log's "-N"): never written through a symbolic link, as the state is not. */
static int derived_not_link(const char *path, const char *given)
{
    struct stat sb;
    if (given && strcmp(path, given) == 0)
        return 0; /* named by the user: io/output.h's rules (a link to a regular file is followed) */
    if (lstat(path, &sb) == 0 && S_ISLNK(sb.st_mode))
        return ml_cli_error("%s: is a symbolic link, and a log never writes a file it named itself through a link; "
                            "nothing was changed: remove it or choose another --out",
                            path);
    return 0;
}

int ml_log_check_paths(ml_logger *L, const char *rows, const char *events)
{
    int rc = derived_not_link(rows, L->o->out);
    if (rc == 0)
        rc = derived_not_link(events, L->o->events);
    if (rc != 0)
        return rc;
    ml_output_set *set = NULL;
    ml_output *plot = NULL;
    const char *bad = rows;
    char err[512] = "";
    ml_status st = ml_output_set_create(&set);
    if (st == ML_OK)
        st = ml_log_register(L, set, rows, events, &plot);
    if (st == ML_OK)
        st = ml_output_set_check(set, &bad, err, sizeof err);
    ml_output_set_destroy(set);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", bad ? bad : rows, err[0] ? err : ml_strerror(st));
    return 0;
}

/* Why an existing file cannot be continued, as one error. */
static int refuse(const ml_logger *L, const ml_logfile *f, bool events)
{
    const char *what = events ? "--events" : "--out";
    const char *path = ml_logfile_path(f);
    if (ml_logfile_get_match(f) == ML_LOGFILE_FOREIGN)
        return ml_cli_error("%s: holds something other than a modlens log (its first line is not '%s ...'); "
                            "nothing was changed: choose another %s",
                            path, ML_LOG_PREFIX, what);
    char why[400];
    ml_log_meta_diff(L, ml_logfile_line(f, 0), why, sizeof why);
    const char *cols = events ? EVENT_HEADER : ml_log_rows_header(&L->o->an);
    if (why[0] == '\0' && strcmp(ml_logfile_line(f, 1), cols) != 0)
        snprintf(why, sizeof why, "it has other columns");
    return ml_cli_error("%s: holds a log of something else (%s); nothing was changed: choose another %s%s", path,
                        why[0] ? why : "its start differs", what, L->o->new_log ? "" : " or give --new-log");
}

int ml_log_open_outputs(ml_logger *L, int64_t period, char *last_row, size_t last_len)
{
    ml_logfile_close(L->rows);
    ml_logfile_close(L->events);
    L->rows = L->events = NULL;
    free(L->rows_path);
    free(L->events_path);
    L->rows_path = ml_log_rows_path(L, period);
    L->events_path = ml_log_events_path(L, period);
    char *hr = ml_log_head(L, false), *he = ml_log_head(L, true);
    int rc = 0;
    char err[512];
    if (!L->rows_path || !L->events_path || !hr || !he)
        rc = ml_cli_error("%s: out of memory", L->name);
    if (rc == 0)
        rc = ml_log_check_paths(L, L->rows_path, L->events_path);
    if (rc == 0 && ml_logfile_attach(L->rows_path, hr, ML_LOG_PREFIX, &L->rows, err, sizeof err) != ML_OK)
        rc = ml_cli_error("%s: %s", L->rows_path, err);
    if (rc == 0 && ml_logfile_attach(L->events_path, he, ML_LOG_PREFIX, &L->events, err, sizeof err) != ML_OK)
        rc = ml_cli_error("%s: %s", L->events_path, err);
    free(hr);
    free(he);
    if (rc != 0)
        return rc;
    const ml_logfile_match mr = ml_logfile_get_match(L->rows), me = ml_logfile_get_match(L->events);
    const ml_logfile *kin = mr == ML_LOGFILE_KIN ? L->rows : me == ML_LOGFILE_KIN ? L->events : NULL;
    if (kin && !L->o->in.live) {
        /* the same recording and settings, logged from another start: the log keeps its start */
        char why[400];
        ml_log_meta_diff(L, ml_logfile_line(kin, 0), why, sizeof why);
        const double t = ml_log_meta_start(ml_logfile_line(kin, 0));
        const bool cols =
            strcmp(ml_logfile_line(kin, 1), kin == L->rows ? ml_log_rows_header(&L->o->an) : EVENT_HEADER) == 0;
        if (why[0] == '\0' && cols && isfinite(t)) {
            char a[40], b[40];
            ml_log_format_utc(t, a, sizeof a);
            ml_log_format_utc(L->o->start_utc, b, sizeof b);
            if (L->o->have_start)
                return ml_cli_error("%s: holds this recording's log from a start of %s; --start-time says %s", ml_logfile_path(kin), a, b);
            L->start_utc = t;
            return ML_LOG_ADOPT_START;
        }
    }
    if ((mr == ML_LOGFILE_KIN || mr == ML_LOGFILE_FOREIGN || me == ML_LOGFILE_KIN) && L->o->new_log)
        return ML_LOG_TAKEN;
    if (mr == ML_LOGFILE_KIN || mr == ML_LOGFILE_FOREIGN)
        return refuse(L, L->rows, false);
    if (me == ML_LOGFILE_KIN || me == ML_LOGFILE_FOREIGN)
        return refuse(L, L->events, true);
    if ((rc = ml_log_check_state(L)) != 0)
        return rc;
    L->period = period;
    snprintf(last_row, last_len, "%s", ml_logfile_last(L->rows));
    return 0;
}

/* Begins the attached files: the events file first; the rows file only once it is good (a rows
 * file that cannot begin takes back an events file this run created). */
int ml_log_begin_outputs(ml_logger *L)
{
    char err[512];
    const bool ev_new = ml_logfile_get_match(L->events) == ML_LOGFILE_ABSENT;
    if (ml_logfile_begin(L->events, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", L->events_path, err);
    if (ml_logfile_begin(L->rows, err, sizeof err) != ML_OK) {
        if (ev_new)
            unlink(L->events_path);
        return ml_cli_error("%s: %s", L->rows_path, err);
    }
    return 0;
}

/* ---- rows -------------------------------------------------------------------------------------- */

void ml_log_fmt_num(char *b, size_t n, double v, int decimals)
{
    if (isfinite(v))
        snprintf(b, n, "%.*f", decimals, v);
    else
        b[0] = '\0';
}

/* A level cell in dBFS: empty (NAN) beyond the reportable range (analyzer/values.h), where a
 * reading is a floor value (-300 for silence), never a measurement. */
static double level_db(double v)
{
    return ml_values_in_range("audio.rms_dbfs", v) ? v : NAN;
}

/* Appends a number cell. */
static void num_cell(char *b, size_t n, size_t *k, double v, int decimals)
{
    char c[40];
    ml_log_fmt_num(c, sizeof c, v, decimals);
    ml_csv_append(b, n, k, c);
}

/* The level columns of the interval: rms, peak, A-weighted, crest (dsp/figures.h). */
static void level_cells(const ml_logger *L, char *b, size_t n, size_t *k)
{
    double rms = NAN, pk = NAN, aw = NAN, crest = NAN;
    if (L->data_frames > 0) {
        ml_level_figures lv;
        ml_figures_level(&L->st, 1, &lv);
        rms = level_db(lv.rms_dbfs);
        pk = level_db(lv.peak_dbfs);
        aw = L->asum > 0 ? level_db(ml_power_dbfs(L->asum / (double)L->data_frames)) : NAN;
        /* 20 lg(peak / sqrt(mean square)); rms_dbfs is 10 lg(mean square / 0.5); NAN when either is */
        crest = pk - rms + 10 * log10(2.0);
        ml_bench_log_levels(&L->o->an, &rms, &pk, &aw);
    }
    num_cell(b, n, k, rms, 2);
    num_cell(b, n, k, pk, 2);
    num_cell(b, n, k, aw, 2);
    num_cell(b, n, k, crest, 2);
}

/* The interval's vote for the mains: measure's definition (dsp/metrics.h, "tone or no tone" rule
 * 1 and figures.mains_hz) applied to the interval on measure's transform for its length
 * (ml_audio_plan_transform, L->mspec): 50 or 60 when a mains line stands above the noise (a lone
 * line on the mains itself is hum), 0 for none or when the interval holds too few segments. */
static double mains_vote(const ml_logger *L)
{
    if (L->mspec == NULL || ml_spectrum_segments(L->mspec) < 2)
        return 0;
    ml_audio_config ac = L->o->an.audio;
    ac.mains_hz = 0;
    ml_audio_result ar;
    if (ml_audio_analyze(L->mspec, &ac, &ar) != ML_OK || ar.figures.mains_hz.state != ML_FIG_MEASURED)
        return 0;
    const double f = ar.figures.mains_hz.value;
    return f == 50 || f == 60 ? f : 0;
}

/* The mains frequency: decided by the first interval's vote (mains_vote), then held; the other
 * frequency must win every vote for MAINS_CHANGE_S to change it, which is
 * logged as a mains event. Intervals without a vote do not count either way. */
static int decide_mains(ml_logger *L, double off, double dur)
{
    if (L->mains_given)
        return 0;
    const double lead = mains_vote(L);
    if (lead == 0)
        return 0;
    if (lead == L->mains_hz) {
        L->mains_votes = 0;
        return 0;
    }
    if (L->mains_votes > 0 && L->mains_vote == lead) {
        L->mains_votes++;
    } else {
        L->mains_vote = lead;
        L->mains_votes = 1;
        L->mains_vote_s = off;
    }
    const double held = off + dur - L->mains_vote_s;
    if (L->mains_hz == 0) { /* the first interval with a vote decides */
        L->mains_hz = lead;
        L->mains_votes = 0;
    } else if (L->mains_hz > 0 && held >= fmax(MAINS_CHANGE_S, dur) - 1e-9) {
        char det[160];
        snprintf(det, sizeof det, "mains %.0f -> %.0f Hz: the hum's lines lay at multiples of %.0f Hz for %.0f s",
                 L->mains_hz, lead, lead, held);
        L->mains_hz = lead;
        L->mains_votes = 0;
        return ml_log_write_event_at(L, ML_LOG_MAINS, L->mains_vote_s, off + dur, NAN, NAN, NAN, det);
    }
    return 0;
}

/* The hum and floor columns from the interval's mean spectrum (L->psd): mains, hum, its six
 * components and the noise floor; the floor density in *floor_dbfs_hz. */
static int spectral_cells(ml_logger *L, double off, double dur, char *b, size_t n, size_t *k,
                          double *floor_dbfs_hz)
{
    double mains = NAN, hum = NAN, h[ML_LOG_HUM_N], fl = NAN;
    for (int i = 0; i < ML_LOG_HUM_N; i++)
        h[i] = NAN;
    int rc = 0;
    if (L->nspectra > 0) {
        for (size_t j = 0; j < L->nbins; j++)
            L->psd[j] = L->psd_sum[j] / (double)L->nspectra;
        if (!L->is_complex) {
            rc = decide_mains(L, off, dur);
            ml_audio_result hr;
            if (L->mains_hz > 0
                && ml_hum_analyze_psd(L->spec, L->psd, L->nbins, L->mains_hz, ML_LOG_HUM_N, &hr) == ML_OK) {
                mains = L->mains_hz;
                hum = ml_power_dbfs(hr.hum_power);
                for (size_t i = 0; i < hr.nhum; i++)
                    if (hr.hum[i].order >= 1 && hr.hum[i].order <= ML_LOG_HUM_N)
                        h[hr.hum[i].order - 1] = ml_power_dbfs(hr.hum[i].power);
            }
        }
        size_t lo, hi;
        ml_noisefloor_band(L->spec, &lo, &hi);
        fl = ml_noisefloor_dbfs_hz(L->spec, L->psd, lo, hi, L->scratch);
    }
    num_cell(b, n, k, mains, 0);
    num_cell(b, n, k, level_db(hum), 2);
    for (int i = 0; i < ML_LOG_HUM_N; i++)
        num_cell(b, n, k, level_db(h[i]), 2);
    num_cell(b, n, k, level_db(fl), 2);
    *floor_dbfs_hz = fl;
    return rc;
}

/* The absolute noise (if/iq with a calibration): Fa and the nearest P.372 environment
 * (dsp/mmnoise.h) of the floor density. The floor is a median of averaged periodograms; the mean
 * density lies above it by the median of chi-square(nu)/nu, nu = 2 x the periodograms averaged
 * (Wilson-Hilferty: (1 - 2/(9 nu))^3; 0.29 dB for nu = 10). */
static void noise_cells(ml_logger *L, double floor_dbfs_hz, char *b, size_t n, size_t *k)
{
    double fa = NAN, dist = NAN;
    const char *env = "";
    if (L->o->have_cal && (L->is_if || L->is_complex) && isfinite(floor_dbfs_hz) && L->nsegments > 0) {
        const double nu = 2.0 * (double)L->nsegments, med = pow(1.0 - 2.0 / (9.0 * nu), 3.0);
        ml_mmnoise_result r;
        if (ml_mmnoise_assess(floor_dbfs_hz - 10 * log10(med), L->o->fullscale_dbm, L->o->rf_hz, &r) == ML_OK) {
            fa = r.fa_db;
            dist = r.distance_db;
            env = ml_mmnoise_env_name(r.nearest);
            const long bin = lround((fa + 100.0) * 10.0);
            if (bin >= 0 && bin < (long)(sizeof L->fa_hist / sizeof *L->fa_hist))
                L->fa_hist[bin]++;
        }
    }
    num_cell(b, n, k, fa, 1);
    ml_csv_append(b, n, k, env);
    num_cell(b, n, k, dist, 1);
}

/* The registered figures: quasi-peak, then (after the noise cells) the modulation figures. */
static void registered_cells(const char *const *names, size_t count, const double *v, char *b, size_t n,
                             size_t *k)
{
    for (size_t i = 0; i < count; i++) {
        char cell[32];
        ml_values_format(names[i], v[i], cell, sizeof cell);
        ml_csv_append(b, n, k, cell);
    }
}

static void modulation_cells(const ml_logger *L, const ml_modulation_result *m, char *b, size_t n, size_t *k)
{
    ml_value v[ML_VALUES_MAX];
    const size_t nv = m ? ml_values_modulation(m, L->o->an.carrier_hz, false, v) : 0;
    for (size_t i = 0; i < NMOD; i++) {
        const double x = ml_values_find(v, nv, MOD_COLUMNS[i]);
        registered_cells(MOD_COLUMNS + i, 1, &x, b, n, k);
        if (i == 2)
            ml_csv_append(b, n, k, m ? ml_values_c_word(m) : "");
    }
}

int ml_log_row(ml_logger *L, const ml_modulation_result *mres)
{
    int rc = ml_log_release_row(L, true);
    if (rc != 0)
        return rc;
    const int64_t start = L->pos - L->ipos;
    const double off = ml_log_offset_of(L, start), dur = (double)L->ipos / L->rate, utc = L->start_utc + off;
    const size_t n = ML_LOGFILE_LINE_MAX + 1;
    if ((L->row_a == NULL && (L->row_a = malloc(n)) == NULL) || (L->row_b == NULL && (L->row_b = malloc(n)) == NULL))
        return ml_cli_error("%s: out of memory", L->name);
    char t[48], *a = L->row_a, *b = L->row_b;
    size_t k = 0;
    ml_log_format_utc(utc, t, sizeof t);
    ml_csv_append(a, n, &k, t);
    ml_log_format_local(utc, t, sizeof t);
    ml_csv_append(a, n, &k, t);
    num_cell(a, n, &k, off, 3);
    num_cell(a, n, &k, dur, 3);
    level_cells(L, a, n, &k);
    double fl;
    if ((rc = spectral_cells(L, off, dur, a, n, &k, &fl)) != 0)
        return rc;
    k = 0;
    num_cell(b, n, &k, (double)L->lost_frames / L->rate, 3);
    double qp[2];
    ml_log_listen_span(L, &qp[0], &qp[1]);
    registered_cells(QP_COLUMNS, 2, qp, b, n, &k);
    noise_cells(L, fl, b, n, &k);
    modulation_cells(L, mres, b, n, &k);
    if (L->resume_note[0] && off >= L->skip_rows_until - 0.5 / L->rate) {
        char note[sizeof L->resume_note + sizeof L->note + 4];
        snprintf(note, sizeof note, "%s%s%s", L->resume_note, L->note[0] ? "; " : "", L->note);
        ml_csv_append(b, n, &k, note);
        L->resume_note[0] = '\0';
    } else {
        ml_csv_append(b, n, &k, L->note);
    }
    if (L->sgram && L->nspectra > 0) {
        ml_log_sgram_column(L);
        ml_history_push(L->sgram, off, off + dur, L->sg_col);
    }
    L->row_pending = true;
    L->row_start = start;
    L->row_end = L->pos;
    L->row_utc = utc;
    L->row_impulses = L->impulses;
    return ml_log_release_row(L, false);
}

int ml_log_release_row(ml_logger *L, bool force)
{
    if (!L->row_pending || (!force && L->imp_judged < L->row_end))
        return 0;
    /* An impulse is confirmed up to 5 ms (gap) after it ends: one still open that started in this
     * interval is counted here, and not again when it closes. (Should it then grow beyond 0.2 s it
     * is dropped as a level change, leaving this count one too high: rare by construction.) */
    int64_t open_frame;
    if (ml_impulse_get_open(L->imp, &open_frame)) {
        const int64_t sp = L->imp_base + open_frame * (int64_t)ml_impulse_frame_samples(L->imp);
        if (sp >= L->row_start && sp < L->row_end && sp != L->imp_counted) {
            L->row_impulses++;
            L->imp_counted = sp;
        }
    }
    L->row_pending = false;
    if (ml_log_offset_of(L, L->row_start) < L->skip_rows_until - 0.5 / L->rate)
        return 0; /* written by the run this one continues */
    /* rotation: the row's start time chooses the file */
    const int64_t p = ml_log_period_of(L->o, L->row_utc);
    if (p != L->period) {
        char last[16];
        int rc = ml_log_open_outputs(L, p, last, sizeof last);
        if (rc == 0)
            rc = ml_log_begin_outputs(L);
        if (rc != 0)
            return rc;
    }
    const size_t n = ML_LOGFILE_LINE_MAX + 1;
    char *line = malloc(n), cnt[24];
    if (line == NULL)
        return ml_cli_error("%s: out of memory", L->name);
    snprintf(cnt, sizeof cnt, "%ld", L->row_impulses);
    size_t k = 0;
    snprintf(line, n, "%s", L->row_a);
    k = strlen(line);
    ml_csv_append(line, n, &k, cnt);
    if (k + 1 + strlen(L->row_b) < n) {
        line[k++] = ',';
        memcpy(line + k, L->row_b, strlen(L->row_b) + 1);
    }
    const ml_status st = ml_logfile_write_line(L->rows, line);
    free(line);
    if (st != ML_OK) {
        L->wrote_error = true;
        return ml_cli_error("%s: cannot write: %s", L->rows_path, strerror(errno));
    }
    L->rows_written++;
    if (L->snap_len > 0 && L->snap_row_end <= L->row_end && ml_log_offset_of(L, L->row_end) > L->skip_rows_until)
        return ml_log_save_state(L);
    return 0;
}
