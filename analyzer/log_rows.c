/* The log's output files (names, rotation, continuation) and its rows.
 * SPDX-License-Identifier: MIT
 *
 * A row's modulation columns carry measure's figures of the interval under the registry's names
 * (analyzer/values.h, values and decimals as in the reports); the other columns are the log's own
 * (README "Logging noise and interference" defines each).
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/log_internal.h"
#include "analyzer/values.h"
#include "dsp/figures.h"
#include "dsp/noisefloor.h"
#include "io/output.h"

/* The columns before and after the modulation figures. */
static const char LEAD_HEADER[] =
    "start_utc,offset_s,duration_s,rms_dbfs,peak_dbfs,a_weighted_dbfs,crest_db,mains_hz,hum_dbfs,"
    "hum_h1_dbfs,hum_h2_dbfs,hum_h3_dbfs,hum_h4_dbfs,hum_h5_dbfs,hum_h6_dbfs,noise_floor_dbfs_hz,impulses,"
    "lost_s";
static const char EVENT_HEADER[] = "start_utc,start_offset_s,end_offset_s,kind,peak_dbfs,rise_db,detail";

/* The modulation figures of a row (if/iq), registered names: measure's definitions, applied to
 * the interval. carrier_reference (the source of C) follows unmodulated_dbfs. */
static const char *const MOD_COLUMNS[] = {
    "carrier.frequency_hz", "carrier.level_dbfs", "carrier.unmodulated_dbfs", "carrier.cnr_db",
    "modulation.index", "modulation.positive_peak_pct", "modulation.negative_peak_pct",
    "modulation.carrier_shift_pct", "modulation.envelope_thd_pct", "modulation.hum_db",
    "modulation.pinch_off_events",
};
#define NMOD (sizeof MOD_COLUMNS / sizeof *MOD_COLUMNS)

/* The rows' header: the lead columns, the modulation columns under their short names, note. */
static const char *row_header(void)
{
    static char h[1024];
    if (h[0] == '\0') {
        size_t n = (size_t)snprintf(h, sizeof h, "%s", LEAD_HEADER);
        for (size_t i = 0; i < NMOD; i++) {
            n += (size_t)snprintf(h + n, sizeof h - n, ",%s", ml_values_short_name(MOD_COLUMNS[i]));
            if (i == 2)
                n += (size_t)snprintf(h + n, sizeof h - n, ",carrier_reference");
        }
        snprintf(h + n, sizeof h - n, ",note");
    }
    return h;
}

void ml_log_format_utc(double t, char *b, size_t n)
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

/* "dir/name.csv" + "-events" -> "dir/name-events.csv" (inserted before the extension). */
static void insert_before_ext(const char *path, const char *ins, char *out, size_t n)
{
    const char *slash = strrchr(path, '/'), *dot = strrchr(path, '.');
    if (dot == NULL || (slash && dot < slash) || dot == (slash ? slash + 1 : path))
        snprintf(out, n, "%s%s", path, ins);
    else
        snprintf(out, n, "%.*s%s%s", (int)(dot - path), path, ins, dot);
}

int64_t ml_log_period_of(const ml_log_opts *o, double utc)
{
    return o->rotate_h > 0 ? (int64_t)floor(utc / (o->rotate_h * 3600.0)) : 0;
}

void ml_log_paths_for(const ml_log_opts *o, int64_t period, char *rows, char *events, size_t n)
{
    char base[1100];
    if (o->rotate_h > 0) {
        char stamp[40], iso[40];
        ml_log_format_utc((double)period * o->rotate_h * 3600.0, iso, sizeof iso);
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

bool ml_log_csv_field(const char *line, int i, char *b, size_t n)
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

int ml_log_open_outputs(ml_logger *L, int64_t period, char *last_row, size_t last_len)
{
    char err[512], last_ev[4096];
    ml_logfile_close(L->rows);
    ml_logfile_close(L->events);
    L->rows = L->events = NULL;
    ml_log_paths_for(L->o, period, L->rows_path, L->events_path, sizeof L->rows_path);
    if (strcmp(L->rows_path, L->events_path) == 0 || ml_same_file(L->rows_path, L->events_path))
        return ml_cli_error("%s: --out and --events name the same file", L->rows_path);
    const char *in = L->o->in.live ? NULL : L->o->in.path;
    if (in && (ml_same_file(L->rows_path, in) || ml_same_file(L->events_path, in)))
        return ml_cli_error("%s: refusing to write the log over the input file", L->rows_path);
    ml_status st = ml_logfile_open(L->rows_path, ml_bench_log_header(&L->o->an, row_header()), &L->rows,
                                   last_row, last_len, err, sizeof err);
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

/* The level columns of the interval: rms, peak, A-weighted, crest (dsp/figures.h). */
static size_t level_cells(const ml_logger *L, char *b, size_t n)
{
    double rms = NAN, pk = NAN, aw = NAN, crest = NAN;
    if (L->data_frames > 0) {
        ml_level_figures lv;
        ml_figures_level(&L->st, 1, &lv);
        rms = lv.rms_dbfs;
        pk = lv.peak_dbfs;
        aw = L->asum > 0 ? ml_power_dbfs(L->asum / (double)L->data_frames) : NAN;
        /* 20 lg(peak / sqrt(mean square)); rms_dbfs is 10 lg(mean square / 0.5); NAN when either is */
        crest = pk - rms + 10 * log10(2.0);
        ml_bench_log_levels(&L->o->an, &rms, &pk, &aw);
    }
    char c[4][24];
    ml_log_fmt_num(c[0], 24, level_db(rms), 2);
    ml_log_fmt_num(c[1], 24, level_db(pk), 2);
    ml_log_fmt_num(c[2], 24, level_db(aw), 2);
    ml_log_fmt_num(c[3], 24, crest, 2);
    return (size_t)snprintf(b, n, "%s,%s,%s,%s", c[0], c[1], c[2], c[3]);
}

/* The hum and floor columns from the interval's mean spectrum (L->psd): mains, hum, its six
 * components and the noise floor. */
static size_t spectral_cells(ml_logger *L, char *b, size_t n)
{
    double mains = NAN, hum = NAN, h[ML_LOG_HUM_N], fl = NAN;
    for (int i = 0; i < ML_LOG_HUM_N; i++)
        h[i] = NAN;
    if (L->nspectra > 0) {
        for (size_t k = 0; k < L->nbins; k++)
            L->psd[k] = L->psd_sum[k] / (double)L->nspectra;
        if (!L->is_complex) {
            ml_audio_result hr;
            mains = L->mains_hz;
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
            if (mains > 0
                && ml_hum_analyze_psd(L->spec, L->psd, L->nbins, mains, ML_LOG_HUM_N, &hr) == ML_OK) {
                hum = ml_power_dbfs(hr.hum_power);
                for (size_t i = 0; i < hr.nhum; i++)
                    if (hr.hum[i].order >= 1 && hr.hum[i].order <= ML_LOG_HUM_N)
                        h[hr.hum[i].order - 1] = ml_power_dbfs(hr.hum[i].power);
            }
            if (mains == 0)
                mains = NAN;
        }
        size_t lo, hi;
        ml_noisefloor_band(L->spec, &lo, &hi);
        fl = ml_noisefloor_dbfs_hz(L->spec, L->psd, lo, hi, L->scratch);
    }
    char c[3][24], hs[ML_LOG_HUM_N][24];
    ml_log_fmt_num(c[0], 24, mains, 0);
    ml_log_fmt_num(c[1], 24, level_db(hum), 2);
    ml_log_fmt_num(c[2], 24, level_db(fl), 2);
    for (int i = 0; i < ML_LOG_HUM_N; i++)
        ml_log_fmt_num(hs[i], 24, level_db(h[i]), 2);
    return (size_t)snprintf(b, n, "%s,%s,%s,%s,%s,%s,%s,%s,%s", c[0], c[1], hs[0], hs[1], hs[2], hs[3], hs[4],
                            hs[5], c[2]);
}

/* The modulation columns: measure's figures of the interval (empty without them). */
static size_t modulation_cells(const ml_logger *L, const ml_modulation_result *m, char *b, size_t n)
{
    ml_value v[ML_VALUES_MAX];
    const size_t nv = m ? ml_values_modulation(m, L->o->an.carrier_hz, false, v) : 0;
    size_t k = 0;
    for (size_t i = 0; i < NMOD; i++) {
        char cell[32];
        ml_values_format(MOD_COLUMNS[i], ml_values_find(v, nv, MOD_COLUMNS[i]), cell, sizeof cell);
        k += (size_t)snprintf(b + k, n - k, "%s%s", i ? "," : "", cell);
        if (i == 2)
            k += (size_t)snprintf(b + k, n - k, ",%s", m ? ml_values_c_word(m) : "");
    }
    return k;
}

int ml_log_write_row(ml_logger *L, const ml_modulation_result *mres)
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
    const double off = ml_log_offset_of(L, start), dur = (double)L->ipos / L->rate, utc = L->start_utc + off;
    /* rotation: the row's start time chooses the file */
    const int64_t p = ml_log_period_of(L->o, utc);
    if (p != L->period) {
        char last[16];
        int rc = ml_log_open_outputs(L, p, last, sizeof last);
        if (rc != 0)
            return rc;
    }
    char line[1536], utcs[40];
    ml_log_format_utc(utc, utcs, sizeof utcs);
    size_t k = (size_t)snprintf(line, sizeof line, "%s,%.3f,%.3f,", utcs, off, dur);
    k += level_cells(L, line + k, sizeof line - k);
    line[k++] = ',';
    k += spectral_cells(L, line + k, sizeof line - k);
    k += (size_t)snprintf(line + k, sizeof line - k, ",%ld,%.3f,", L->impulses,
                          (double)L->lost_frames / L->rate);
    k += modulation_cells(L, mres, line + k, sizeof line - k);
    snprintf(line + k, sizeof line - k, ",%s", L->note);
    if (L->sgram && L->nspectra > 0) {
        ml_log_sgram_column(L);
        ml_history_push(L->sgram, off, off + dur, L->sg_col);
    }
    if (ml_logfile_write_line(L->rows, line) != ML_OK) {
        L->wrote_error = true;
        return ml_cli_error("%s: cannot write: %s", L->rows_path, strerror(errno));
    }
    L->rows_written++;
    return 0;
}
