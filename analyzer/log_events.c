/* The log's events (impulses merged, level changes, gaps, the end of the input) and the summary.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "analyzer/cli.h"
#include "analyzer/log_internal.h"

#define IMPULSE_MERGE_S 0.5      /* impulses closer than this merge into one event */
#define IMPULSE_MERGE_MAX_S 10.0 /* longest merged impulse event                  */

const char *const ml_log_kind_name[ML_LOG_KINDS] = {"impulse",      "hum", "noise",
                                                    "carrier-loss", "gap", "input-end"};

/* pos of global step g (its start). */
static int64_t step_pos(const ml_logger *L, int64_t g)
{
    const int64_t k = (int64_t)L->steps_per_ival;
    return L->origin + (g / k) * L->ival_frames + (g % k) * L->step_len;
}

int ml_log_write_event(ml_logger *L, int kind, int64_t start_pos, int64_t end_pos, double peak_dbfs,
                       double rise_db, const char *detail)
{
    const double s = ml_log_offset_of(L, start_pos), e = ml_log_offset_of(L, end_pos);
    if (kind != ML_LOG_END && s <= L->skip_events_until)
        return 0; /* written by the run this one continues */
    char utc[40], pk[32], rs[32], line[512], det[200];
    ml_log_format_utc(L->start_utc + s, utc, sizeof utc);
    ml_log_fmt_num(pk, sizeof pk, peak_dbfs, 2);
    ml_log_fmt_num(rs, sizeof rs, rise_db, 2);
    snprintf(det, sizeof det, "%s", detail ? detail : "");
    for (char *p = det; *p; p++)
        if (*p == ',' || *p == '\n' || *p == '"')
            *p = ';';
    snprintf(line, sizeof line, "%s,%.3f,%.3f,%s,%s,%s,%s", utc, s, e, ml_log_kind_name[kind], pk, rs, det);
    if (ml_logfile_write_line(L->events, line) != ML_OK) {
        L->wrote_error = true;
        return ml_cli_error("%s: cannot write: %s", L->events_path, strerror(errno));
    }
    L->count[kind]++;
    time_t tt = (time_t)floor(L->start_utc + s);
    struct tm tm;
    gmtime_r(&tt, &tm);
    L->per_hour[tm.tm_hour]++;
    if (kind <= ML_LOG_CARRIER && isfinite(rise_db)) {
        ml_log_summary_event se = {kind, s, e, peak_dbfs, rise_db, L->start_utc + s};
        size_t at = L->nworst;
        if (L->nworst < ML_LOG_WORST_N)
            L->nworst++;
        else if (fabs(rise_db) <= fabs(L->worst[ML_LOG_WORST_N - 1].rise_db))
            at = ML_LOG_WORST_N;
        else
            at = ML_LOG_WORST_N - 1;
        if (at < ML_LOG_WORST_N) {
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
int ml_log_flush_impulses(ml_logger *L)
{
    if (L->mi.n == 0)
        return 0;
    char det[64];
    snprintf(det, sizeof det, "%ld impulse%s", L->mi.n, L->mi.n == 1 ? "" : "s");
    L->mi.n = 0;
    return ml_log_write_event(L, ML_LOG_IMPULSE, L->mi.start, L->mi.end, L->mi.peak_dbfs, L->mi.rise_db, det);
}

/* Impulses from the detector: each counts in its interval's row; impulses following each other
 * within IMPULSE_MERGE_S merge into one event (up to IMPULSE_MERGE_MAX_S long), so a buzzing
 * dimmer makes one event per few seconds, not a hundred lines per second. */
int ml_log_impulse_events(ml_logger *L, size_t n)
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
        int rc = ml_log_flush_impulses(L);
        if (rc != 0)
            return rc;
        L->mi = (ml_log_impulses){sp, ep, pk, e->rise_db, 1};
    }
    /* a merged event is written once no impulse can join it any more */
    if (L->mi.n > 0 && L->pos - L->mi.end > merge)
        return ml_log_flush_impulses(L);
    return 0;
}


int ml_log_change_events(ml_logger *L, int which, size_t n)
{
    static const int kind[3] = {ML_LOG_HUM, ML_LOG_NOISE, ML_LOG_CARRIER};
    static const char *const what[3] = {"hum over floor", "noise floor", "carrier"};
    for (size_t i = 0; i < n; i++) {
        const ml_event *e = &L->ev[i];
        char det[120];
        snprintf(det, sizeof det, "%s %.1f dB from baseline %.1f dB", what[which], e->rise_db,
                 e->baseline_db);
        int rc = ml_log_write_event(L, kind[which], step_pos(L, e->start), step_pos(L, e->end),
                                    L->chg_peak[which], e->rise_db, det);
        if (rc != 0)
            return rc;
    }
    return 0;
}

/* Pushes one value per change detector; level[] is what peak_dbfs reports: the extreme level seen
 * while the value was out of the detector's band (highest, or lowest for carrier loss). */
int ml_log_push_changes(ml_logger *L, const double value[3], const double level[3])
{
    const double thr[3] = {L->o->hum_db, L->o->noise_db, L->o->loss_db};
    for (int w = 0; w < 3; w++) {
        if (L->chg[w] == NULL)
            continue;
        const int dir = w == 2 ? -1 : 1;
        const double base = ml_change_get_baseline(L->chg[w]);
        const bool out = isfinite(value[w]) && isfinite(base) && dir * (value[w] - base) >= thr[w];
        size_t n = 0;
        ml_change_push(L->chg[w], &value[w], 1, L->ev, ML_LOG_EV_CAP, &n);
        if (n > 0) {
            int rc = ml_log_change_events(L, w, n);
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

void ml_log_print_summary(const ml_logger *L, FILE *f, const char *why)
{
    fprintf(f, "log: %ld rows written (%s); rows in %s, events in %s\n", L->rows_written, why, L->rows_path,
            L->events_path);
    fprintf(f, "events:");
    for (int k = 0; k < ML_LOG_KINDS; k++)
        fprintf(f, " %s %ld%s", ml_log_kind_name[k], L->count[k], k + 1 < ML_LOG_KINDS ? "," : "\n");
    if (L->nworst > 0) {
        fprintf(f, "worst events (largest change from baseline):\n");
        for (size_t i = 0; i < L->nworst; i++) {
            char utc[40];
            ml_log_format_utc(L->worst[i].start_utc, utc, sizeof utc);
            fprintf(f, "  %s  offset %10.3f s  %-12s  %+7.1f dB  peak %7.1f dBFS  %.3f s\n", utc,
                    L->worst[i].start_off, ml_log_kind_name[L->worst[i].kind], L->worst[i].rise_db,
                    L->worst[i].peak_dbfs, L->worst[i].end_off - L->worst[i].start_off);
        }
    }
    fprintf(f, "events per UTC hour:");
    for (int h = 0; h < 24; h++)
        fprintf(f, "%s%02d:%ld", h % 12 == 0 ? "\n  " : "  ", h, L->per_hour[h]);
    fprintf(f, "\n");
}

