/* The log's events (impulses merged, buzz, level changes, the mains, gaps, the end of the input)
 * and the summary.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analyzer/cli.h"
#include "analyzer/log_internal.h"
#include "io/csv.h"

#define IMPULSE_MERGE_S 0.5      /* impulses closer than this merge into one event */
#define IMPULSE_MERGE_MAX_S 10.0 /* longest merged impulse event                  */

const char *const ml_log_kind_name[ML_LOG_KINDS] = {"impulse", "buzz",  "hum", "noise",    "carrier-loss",
                                                    "level",   "mains", "gap", "input-end"};

int64_t ml_log_step_pos(const ml_logger *L, int64_t g)
{
    const int64_t k = (int64_t)L->steps_per_ival;
    return L->origin + (g / k) * L->ival_frames + (g % k) * L->step_len;
}

/* True when the run this one continues already wrote this event. */
static bool already_written(const ml_logger *L, int kind, double s)
{
    if (L->nseen > 0) {
        char st[32];
        snprintf(st, sizeof st, "%.3f", s);
        for (size_t i = 0; i < L->nseen; i++)
            if (L->seen[i].kind == kind && strcmp(L->seen[i].start, st) == 0)
                return true;
        return false;
    }
    return kind != ML_LOG_END && s <= L->skip_events_until;
}

/* Keeps the event among the summary's worst (largest change from baseline). */
static void rank(ml_logger *L, int kind, double s, double e, double peak_dbfs, double rise_db)
{
    if (kind == ML_LOG_GAP || kind == ML_LOG_END || kind == ML_LOG_MAINS || !isfinite(rise_db))
        return;
    ml_log_summary_event se = {kind, s, e, peak_dbfs, rise_db, L->start_utc + s};
    size_t at = L->nworst;
    if (L->nworst < ML_LOG_WORST_N)
        L->nworst++;
    else if (fabs(rise_db) <= fabs(L->worst[ML_LOG_WORST_N - 1].rise_db))
        return;
    else
        at = ML_LOG_WORST_N - 1;
    while (at > 0 && fabs(L->worst[at - 1].rise_db) < fabs(rise_db)) {
        L->worst[at] = L->worst[at - 1];
        at--;
    }
    L->worst[at] = se;
}

int ml_log_write_event_at(ml_logger *L, int kind, double s, double e, double peak_dbfs, double rise_db,
                          double rate_hz, const char *detail)
{
    if (already_written(L, kind, s))
        return 0;
    const size_t n = ML_LOGFILE_LINE_MAX + 1;
    char line[ML_LOGFILE_LINE_MAX + 1], t[48];
    size_t k = 0;
    ml_log_format_utc(L->start_utc + s, t, sizeof t);
    ml_csv_append(line, n, &k, t);
    ml_log_format_local(L->start_utc + s, t, sizeof t);
    ml_csv_append(line, n, &k, t);
    const double v[2] = {s, e};
    for (int i = 0; i < 2; i++) {
        ml_log_fmt_num(t, sizeof t, v[i], 3);
        ml_csv_append(line, n, &k, t);
    }
    ml_csv_append(line, n, &k, ml_log_kind_name[kind]);
    ml_log_fmt_num(t, sizeof t, peak_dbfs, 2);
    ml_csv_append(line, n, &k, t);
    ml_log_fmt_num(t, sizeof t, rise_db, 2);
    ml_csv_append(line, n, &k, t);
    ml_log_fmt_num(t, sizeof t, rate_hz, 3);
    ml_csv_append(line, n, &k, t);
    if (!ml_csv_append(line, n, &k, detail ? detail : ""))
        ml_csv_append(line, n, &k, "(detail too long)");
    if (ml_logfile_write_line(L->events, line) != ML_OK) {
        L->wrote_error = true;
        return ml_cli_error("%s: cannot write: %s", L->events_path, strerror(errno));
    }
    L->count[kind]++;
    time_t tt = (time_t)floor(L->start_utc + s);
    struct tm tm;
    gmtime_r(&tt, &tm);
    L->per_hour[tm.tm_hour]++;
    localtime_r(&tt, &tm);
    L->per_local_hour[tm.tm_hour]++;
    rank(L, kind, s, e, peak_dbfs, rise_db);
    return 0;
}

int ml_log_write_event(ml_logger *L, int kind, int64_t start_pos, int64_t end_pos, double peak_dbfs,
                       double rise_db, const char *detail)
{
    return ml_log_write_event_at(L, kind, ml_log_offset_of(L, start_pos), ml_log_offset_of(L, end_pos), peak_dbfs,
                                 rise_db, NAN, detail);
}

#define BUZZ_CLAIM_S 4.0 /* the buzz detector's window + the run that starts a buzz + its step and delay */

static int write_impulses(ml_logger *L, const ml_log_impulses *m)
{
    char det[64];
    snprintf(det, sizeof det, "%ld impulse%s", m->n, m->n == 1 ? "" : "s");
    return ml_log_write_event(L, ML_LOG_IMPULSE, m->start, m->end, m->peak_dbfs, m->rise_db, det);
}

/* Takes the oldest held group of impulses off the list and writes it. */
static int write_oldest_held(ml_logger *L)
{
    const ml_log_impulses m = L->held[0];
    memmove(L->held, L->held + 1, (L->nheld - 1) * sizeof *L->held);
    L->nheld--;
    return write_impulses(L, &m);
}

int ml_log_release_held(ml_logger *L, bool force)
{
    const int64_t hold = (int64_t)llround(BUZZ_CLAIM_S * L->rate);
    while (L->nheld > 0 && (force || L->imp_judged - L->held[0].end > hold)) {
        int rc = write_oldest_held(L);
        if (rc != 0)
            return rc;
    }
    return 0;
}

int ml_log_flush_impulses(ml_logger *L)
{
    if (L->mi.n == 0)
        return 0;
    if (L->nheld == sizeof L->held / sizeof *L->held) {
        int rc = write_oldest_held(L);
        if (rc != 0)
            return rc;
    }
    L->held[L->nheld++] = L->mi;
    L->mi.n = 0;
    return ml_log_release_held(L, false);
}

void ml_log_absorb_impulses(ml_logger *L, double start_off)
{
    const double from = start_off - IMPULSE_MERGE_S;
    size_t k = 0;
    for (size_t i = 0; i < L->nheld; i++) {
        const ml_log_impulses *m = &L->held[i];
        if (ml_log_offset_of(L, m->start) >= from) {
            L->buzz_peak_dbfs = isfinite(L->buzz_peak_dbfs) ? fmax(L->buzz_peak_dbfs, m->peak_dbfs) : m->peak_dbfs;
            L->buzz_rise_db = isfinite(L->buzz_rise_db) ? fmax(L->buzz_rise_db, m->rise_db) : m->rise_db;
        } else {
            L->held[k++] = *m;
        }
    }
    L->nheld = k;
    if (L->mi.n > 0 && ml_log_offset_of(L, L->mi.start) >= from) {
        L->buzz_peak_dbfs = isfinite(L->buzz_peak_dbfs) ? fmax(L->buzz_peak_dbfs, L->mi.peak_dbfs) : L->mi.peak_dbfs;
        L->buzz_rise_db = isfinite(L->buzz_rise_db) ? fmax(L->buzz_rise_db, L->mi.rise_db) : L->mi.rise_db;
        L->mi.n = 0;
    }
}

/* Impulses from the detector: each counts in its interval's row; impulses following each other
 * within IMPULSE_MERGE_S merge into one event (up to IMPULSE_MERGE_MAX_S long). While a buzz is
 * under way its impulses belong to it (one buzz event, not one line per impulse). */
int ml_log_impulse_events(ml_logger *L, size_t n)
{
    const int64_t fr = (int64_t)ml_impulse_frame_samples(L->imp);
    const int64_t merge = (int64_t)llround(IMPULSE_MERGE_S * L->rate);
    const int64_t cap = (int64_t)llround(IMPULSE_MERGE_MAX_S * L->rate);
    const bool buzzing = ml_buzz_get_active(L->buzz, NULL);
    for (size_t i = 0; i < n; i++) {
        const ml_event *e = &L->ev[i];
        const int64_t sp = L->imp_base + e->start * fr, ep = L->imp_base + e->end * fr;
        if (sp == L->imp_counted)
            L->imp_counted = -1; /* counted when the row of the interval it started in was written */
        else if (L->row_pending && sp < L->row_end)
            L->row_impulses++;
        else
            L->impulses++;
        const double pk = 20.0 * log10(e->peak_abs);
        if (buzzing) {
            L->buzz_peak_dbfs = isfinite(L->buzz_peak_dbfs) ? fmax(L->buzz_peak_dbfs, pk) : pk;
            L->buzz_rise_db = isfinite(L->buzz_rise_db) ? fmax(L->buzz_rise_db, e->rise_db) : e->rise_db;
            continue;
        }
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
    /* a merged event ends once no impulse can join it any more */
    if (L->mi.n > 0 && L->imp_judged - L->mi.end > merge)
        return ml_log_flush_impulses(L);
    return ml_log_release_held(L, false);
}

int ml_log_buzz_events(ml_logger *L, size_t n, const char *why)
{
    for (size_t i = 0; i < n; i++) {
        const ml_buzz_event *b = &L->bev[i];
        ml_buzz_tie tie = ML_BUZZ_UNTIED;
        double mains = 0;
        int mult = 0;
        ml_buzz_tie_to_mains(b->rate_hz, L->mains_hz, &tie, &mains, &mult);
        char det[400];
        int k = snprintf(det, sizeof det, "%llu impulses at %.2f Hz (%.2f .. %.2f Hz, jitter %.2f ms)",
                         (unsigned long long)b->impulses, b->rate_hz, b->rate_min_hz, b->rate_max_hz,
                         1e3 * b->jitter_s);
        if (tie != ML_BUZZ_UNTIED && k > 0 && (size_t)k < sizeof det)
            k += snprintf(det + k, sizeof det - (size_t)k, "; %d x %.0f Hz mains: %s", mult, mains,
                          ml_buzz_tie_hint(tie));
        if (why && k > 0 && (size_t)k < sizeof det)
            snprintf(det + k, sizeof det - (size_t)k, "; open at %s", why);
        const int rc = ml_log_write_event_at(L, ML_LOG_BUZZ, b->start_s, b->end_s, L->buzz_peak_dbfs,
                                             L->buzz_rise_db, b->rate_hz, det);
        L->buzz_last_s = b->start_s;
        L->buzz_last_e = b->end_s;
        L->buzz_last_hz = b->rate_hz;
        L->buzz_peak_dbfs = L->buzz_rise_db = NAN;
        if (rc != 0)
            return rc;
    }
    return 0;
}

/* The offset of change detector w's value index g (a negative one lies before a restore: its
 * offset was kept). */
static double change_off(const ml_logger *L, int w, int64_t g, bool end)
{
    if (g < 0) {
        const double v = end ? L->chg_old_in[w] : L->chg_old_start[w];
        return isfinite(v) ? v : ml_log_offset_of(L, L->origin);
    }
    return ml_log_offset_of(L, ml_log_step_pos(L, g));
}

static const int CHG_KIND[ML_LOG_NCHG] = {ML_LOG_HUM, ML_LOG_NOISE, ML_LOG_CARRIER, ML_LOG_LEVEL};

/* Change events of detector `which` in L->ev[n]; why: the stop that closed them (or NULL). */
static int change_events(ml_logger *L, int which, size_t n, const char *why)
{
    static const char *const what[ML_LOG_NCHG] = {"hum over floor", "noise floor", "carrier", "broadband level"};
    for (size_t i = 0; i < n; i++) {
        const ml_event *e = &L->ev[i];
        char det[300];
        const double s0 = change_off(L, which, e->start, false);
        const double s1 = why ? ml_log_offset_of(L, L->pos) : change_off(L, which, e->end, true);
        int k = snprintf(det, sizeof det, "%s %+.1f dB from baseline %.1f dB", what[which], e->rise_db,
                         e->baseline_db);
        /* a buzz at a multiple of the mains puts its lines where the hum is measured */
        ml_buzz_event b;
        double bs = L->buzz_last_s, be = L->buzz_last_e, bhz = L->buzz_last_hz;
        if (ml_buzz_get_active(L->buzz, &b)) {
            bs = b.start_s;
            be = ml_log_offset_of(L, L->imp_judged);
            bhz = b.rate_hz;
        }
        if (which == ML_CHG_HUM && isfinite(bs) && fmin(be, s1) - fmax(bs, s0) > 0.5 * (s1 - s0) && k > 0
            && (size_t)k < sizeof det)
            k += snprintf(det + k, sizeof det - (size_t)k, "; during a buzz at %.2f Hz (its lines lie on the hum's)",
                          bhz);
        if (why && k > 0 && (size_t)k < sizeof det)
            snprintf(det + k, sizeof det - (size_t)k, "; open at %s", why);
        int rc = ml_log_write_event_at(L, CHG_KIND[which], s0, s1, L->chg_peak[which], e->rise_db, NAN, det);
        if (rc != 0)
            return rc;
    }
    return 0;
}

int ml_log_change_events(ml_logger *L, int which, size_t n)
{
    return change_events(L, which, n, NULL);
}

/* Pushes one value per change detector; level[] is what peak_dbfs reports: the extreme level seen
 * while the value was out of the detector's band (highest, or lowest for carrier loss). */
int ml_log_push_changes(ml_logger *L, const double value[ML_LOG_NCHG], const double level[ML_LOG_NCHG])
{
    const double thr[ML_LOG_NCHG] = {L->o->hum_db, L->o->noise_db, L->o->loss_db, L->o->level_db};
    for (int w = 0; w < ML_LOG_NCHG; w++) {
        if (L->chg[w] == NULL)
            continue;
        const int dir = w == ML_CHG_CARRIER ? -1 : 1;
        const double base = ml_change_get_baseline(L->chg[w]);
        /* a rise of the noise floor is a noise event: the broadband level then waits (it is for the
         * rises the floor's median misses, such as periodic impulses) */
        const double v = w == ML_CHG_LEVEL && L->chg[ML_CHG_NOISE] && ml_change_get_state(L->chg[ML_CHG_NOISE]) != 0
                             ? NAN
                             : value[w];
        const bool out = isfinite(v) && isfinite(base) && dir * (v - base) >= thr[w];
        size_t n = 0;
        ml_change_push(L->chg[w], &v, 1, L->ev, ML_LOG_EV_CAP, &n);
        if (n > 0) {
            int rc = ml_log_change_events(L, w, n);
            if (rc != 0)
                return rc;
            L->chg_peak[w] = NAN;
            L->chg_old_start[w] = L->chg_old_in[w] = NAN;
        }
        if (ml_change_get_state(L->chg[w]) == 0)
            L->chg_peak[w] = NAN;
        else if (out && isfinite(level[w])
                 && (!isfinite(L->chg_peak[w]) || dir * (level[w] - L->chg_peak[w]) > 0))
            L->chg_peak[w] = level[w];
    }
    return 0;
}

int ml_log_close_events(ml_logger *L, const char *why)
{
    int rc = ml_log_listen_finish(L, why);
    size_t nev = 0;
    for (int w = 0; w < ML_LOG_NCHG && rc == 0; w++)
        if (L->chg[w]) {
            const bool open = ml_change_get_state(L->chg[w]) == 2;
            ml_change_finish(L->chg[w], L->ev, ML_LOG_EV_CAP, &nev);
            rc = change_events(L, w, nev, open ? why : NULL);
            L->chg_peak[w] = L->chg_old_start[w] = L->chg_old_in[w] = NAN;
        }
    return rc;
}

void ml_log_print_summary(const ml_logger *L, FILE *f, const char *why)
{
    fprintf(f, "log: %ld rows written (%s); rows in %s, events in %s\n", L->rows_written, why,
            L->rows_path ? L->rows_path : "-", L->events_path ? L->events_path : "-");
    fprintf(f, "events:");
    for (int k = 0; k < ML_LOG_KINDS; k++)
        fprintf(f, " %s %ld%s", ml_log_kind_name[k], L->count[k], k + 1 < ML_LOG_KINDS ? "," : "\n");
    if (L->nworst > 0) {
        fprintf(f, "worst events (largest change from baseline):\n");
        for (size_t i = 0; i < L->nworst; i++) {
            char utc[40], loc[48];
            ml_log_format_utc(L->worst[i].start_utc, utc, sizeof utc);
            ml_log_format_local(L->worst[i].start_utc, loc, sizeof loc);
            fprintf(f, "  %s  %s  offset %10.3f s  %-12s  %+7.1f dB  peak %7.1f dBFS  %.3f s\n", utc, loc,
                    L->worst[i].start_off, ml_log_kind_name[L->worst[i].kind], L->worst[i].rise_db,
                    L->worst[i].peak_dbfs, L->worst[i].end_off - L->worst[i].start_off);
        }
    }
    long nfa = 0;
    const size_t nb = sizeof L->fa_hist / sizeof *L->fa_hist;
    for (size_t i = 0; i < nb; i++)
        nfa += L->fa_hist[i];
    if (nfa > 0) {
        long acc = 0;
        size_t i = 0;
        for (; i < nb; i++) {
            acc += L->fa_hist[i];
            if (2 * acc >= nfa)
                break;
        }
        fprintf(f, "noise: Fa median %.1f dB above kT0b over %ld rows (at %.6g MHz)\n", (double)i / 10.0 - 100.0,
                nfa, L->o->rf_hz / 1e6);
    }
    const char *title[2] = {"events per UTC hour:", "events per local hour"};
    for (int t = 0; t < 2; t++) {
        const long *c = t ? L->per_local_hour : L->per_hour;
        if (t)
            fprintf(f, "%s (%s):", title[t], L->tz);
        else
            fprintf(f, "%s", title[t]);
        for (int h = 0; h < 24; h++)
            fprintf(f, "%s%02d:%ld", h % 12 == 0 ? "\n  " : "  ", h, c[h]);
        fprintf(f, "\n");
    }
}
