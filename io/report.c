/* Report model helpers and writer dispatch.
 * SPDX-License-Identifier: MIT
 */
#include "io/report.h"

#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "io/report_internal.h"

ml_metric *ml_report_add(ml_report *r, const char *name, const char *unit, int decimals, double value)
{
    if (r->nmetrics >= ML_REPORT_MAX_METRICS)
        return NULL;
    ml_metric *m = &r->metrics[r->nmetrics++];
    snprintf(m->name, sizeof m->name, "%s", name);
    m->unit = unit;
    m->decimals = decimals;
    m->valid = isfinite(value);
    m->value = m->valid ? value : 0.0;
    return m;
}

ml_metric *ml_report_add_missing(ml_report *r, const char *name, const char *unit, int decimals)
{
    return ml_report_add(r, name, unit, decimals, NAN);
}

ml_metric *ml_report_add_missing_why(ml_report *r, const char *name, const char *unit, int decimals,
                                     const char *reason)
{
    ml_metric *m = ml_report_add(r, name, unit, decimals, NAN);
    if (m && reason)
        snprintf(m->reason, sizeof m->reason, "%s", reason);
    return m;
}

/* The metric of this exact dotted name, or NULL. */
static ml_metric *exact(ml_report *r, const char *name)
{
    for (size_t i = 0; name && i < r->nmetrics; i++)
        if (strcmp(r->metrics[i].name, name) == 0)
            return &r->metrics[i];
    return NULL;
}

/* The setters below, by metric and by name, share these three: each takes the format's
 * arguments as a va_list, and a NULL format leaves the text empty (missing, qualify) or as it
 * is (bound). */

/* Marks m not measured: no value, uncertainty, bound or qualifier; the reason from fmt. */
static ml_metric *metric_missing_v(ml_metric *m, const char *fmt, va_list ap)
{
    if (m == NULL)
        return NULL;
    m->valid = false;
    m->value = 0.0;
    m->has_u = false;
    m->u = 0.0;
    m->bound = ML_BOUND_NONE;
    m->qualifier[0] = m->reason[0] = '\0';
    if (fmt)
        vsnprintf(m->reason, sizeof m->reason, fmt, ap);
    return m;
}

/* Sets a measured m's bound, and its qualifier from fmt when fmt is given. */
static ml_metric *metric_bound_v(ml_metric *m, ml_bound bound, const char *fmt, va_list ap)
{
    if (m == NULL || !m->valid)
        return NULL;
    m->bound = bound;
    if (fmt)
        vsnprintf(m->qualifier, sizeof m->qualifier, fmt, ap);
    return m;
}

/* Replaces a measured m's qualifier with fmt (empty when fmt is NULL). */
static ml_metric *metric_qualify_v(ml_metric *m, const char *fmt, va_list ap)
{
    if (m == NULL || !m->valid)
        return NULL;
    m->qualifier[0] = '\0';
    if (fmt)
        vsnprintf(m->qualifier, sizeof m->qualifier, fmt, ap);
    return m;
}

ml_metric *ml_report_unmeasured(ml_report *r, const char *name, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    ml_metric *m = metric_missing_v(exact(r, name), fmt, ap);
    va_end(ap);
    return m;
}

ml_metric *ml_report_qualify(ml_report *r, const char *name, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    ml_metric *m = metric_qualify_v(exact(r, name), fmt, ap);
    va_end(ap);
    return m;
}

ml_metric *ml_report_bound(ml_report *r, const char *name, ml_bound bound, const char *fmt, ...)
{
    if (bound != ML_BOUND_NONE && bound != ML_BOUND_UPPER && bound != ML_BOUND_LOWER)
        return NULL;
    va_list ap;
    va_start(ap, fmt);
    ml_metric *m = metric_bound_v(exact(r, name), bound, fmt, ap);
    va_end(ap);
    return m;
}

ml_metric *ml_report_card_limited(ml_report *r, const char *name, const char *fmt, ...)
{
    r->card_checked = true;
    ml_metric *m = exact(r, name);
    if (m == NULL || !m->valid || r->ncard_limited >= ML_REPORT_MAX_CARD)
        return NULL;
    for (size_t i = 0; i < r->ncard_limited; i++)
        if (strcmp(r->card_limited[i], m->name) == 0)
            return m;
    snprintf(r->card_limited[r->ncard_limited++], sizeof r->card_limited[0], "%s", m->name);
    /* the qualifier it has, then "; " and this one, cut to the qualifier's size */
    char q[2 * ML_REPORT_WHY_LEN + 2];
    size_t n = strlen(m->qualifier);
    memcpy(q, m->qualifier, n);
    if (n > 0) {
        memcpy(q + n, "; ", 2);
        n += 2;
    }
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(q + n, sizeof q - n, fmt, ap);
    va_end(ap);
    q[sizeof m->qualifier - 1] = '\0';
    memcpy(m->qualifier, q, sizeof m->qualifier);
    return m;
}

void ml_report_settings(ml_report *r, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(r->settings, sizeof r->settings, fmt, ap);
    va_end(ap);
}

const char *ml_report_bound_name(ml_bound b)
{
    return b == ML_BOUND_UPPER ? "upper" : b == ML_BOUND_LOWER ? "lower" : "";
}

void ml_report_number(char *buf, size_t len, double v, int decimals, bool plus)
{
    if (len == 0)
        return;
    if (!isfinite(v)) {
        buf[0] = '\0';
        return;
    }
    if (decimals < 0)
        decimals = 0;
    snprintf(buf, len, plus ? "%+.*f" : "%.*f", decimals, v);
    /* all digits zero: print the zero of that precision without a sign */
    if (buf[0] == '-' || buf[0] == '+') {
        bool zero = true;
        for (const char *p = buf + 1; *p && zero; p++)
            zero = *p == '0' || *p == '.';
        if (zero)
            memmove(buf, buf + 1, strlen(buf));
    }
}

void ml_report_bound_number(char *buf, size_t len, double v, int decimals, ml_bound bound)
{
    if (isfinite(v) && bound != ML_BOUND_NONE && decimals >= 0 && decimals <= 12) {
        /* outward to the printed resolution, so the printed bound still holds: an upper bound of
         * 2e-7 % at 4 decimals is "< 0.0001", never "< 0.0000" */
        const double scale = pow(10.0, decimals), x = v * scale, r = nearbyint(x);
        if (fabs(x - r) > 1e-9 * fmax(1.0, fabs(x)))
            v = (bound == ML_BOUND_UPPER ? ceil(x) : floor(x)) / scale;
    }
    ml_report_number(buf, len, v, decimals, false);
}

void ml_report_unsign_zeros(char *dst, size_t len, const char *src)
{
    if (len == 0)
        return;
    size_t o = 0;
    for (size_t i = 0; src[i] && o + 1 < len; i++) {
        /* "-0", "-0.0", "-0.000" standing alone (after a space, '=', '(' ... and not before a
         * digit) is a negative zero: drop the sign. Names such as "take-0.wav" are left alone. */
        if (src[i] == '-' && src[i + 1] == '0' && (i == 0 || strchr(" =(:,[<>~\t", src[i - 1]) != NULL)) {
            size_t j = i + 2;
            if (src[j] == '.')
                for (j++; src[j] == '0'; j++)
                    ;
            const unsigned char next = (unsigned char)src[j];
            if (src[j - 1] != '.' && !isalnum(next) && next != '_' && next != '.' && next != '-') {
                continue; /* skip the '-' */
            }
        }
        dst[o++] = src[i];
    }
    dst[o] = '\0';
}

void ml_report_add_text(ml_report *r, const char *name, const char *value)
{
    if (r->ntexts >= ML_REPORT_MAX_TEXTS)
        return;
    ml_text *t = &r->texts[r->ntexts++];
    snprintf(t->name, sizeof t->name, "%s", name);
    snprintf(t->value, sizeof t->value, "%s", value);
}

const ml_metric *ml_report_find(const ml_report *r, const char *name)
{
    for (size_t i = 0; i < r->nmetrics; i++)
        if (strcmp(r->metrics[i].name, name) == 0)
            return &r->metrics[i];
    const ml_metric *found = NULL;
    for (size_t i = 0; i < r->nmetrics; i++) {
        const char *dot = strrchr(r->metrics[i].name, '.');
        if (dot && strcmp(dot + 1, name) == 0) {
            if (found)
                return NULL;
            found = &r->metrics[i];
        }
    }
    return found;
}

void ml_report_note(ml_report *r, const char *fmt, ...)
{
    if (r->nnotes >= ML_REPORT_MAX_NOTES)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(r->notes[r->nnotes++], sizeof r->notes[0], fmt, ap);
    va_end(ap);
}

void ml_report_check_counts(const ml_report *r, size_t *total, size_t *failed, size_t *undecided)
{
    size_t n = r->nchecks, f = 0, u = 0;
    for (size_t i = 0; i < r->nchecks; i++) {
        f += !r->checks[i].pass && !r->checks[i].undecided;
        u += r->checks[i].undecided;
    }
    const ml_report_series *s = r->series;
    for (size_t p = 0; s && p < s->npoints; p++) {
        n += s->points[p].nchecks;
        for (size_t i = 0; i < s->points[p].nchecks; i++) {
            f += !s->points[p].checks[i].pass && !s->points[p].checks[i].undecided;
            u += s->points[p].checks[i].undecided;
        }
    }
    *total = n;
    *failed = f;
    *undecided = u;
}

const char *ml_report_verdict(const ml_report *r)
{
    size_t n, failed, undecided;
    ml_report_check_counts(r, &n, &failed, &undecided);
    return n == 0 ? "unchecked" : failed > 0 ? "fail" : undecided > 0 ? "undecided" : "pass";
}

/* ---- series of points ---- */

ml_status ml_report_series_alloc(ml_report_series *s, const char *path, const char *title, size_t cap)
{
    memset(s, 0, sizeof *s);
    if (cap == 0 || cap > 1000000)
        return ML_EINVAL;
    s->points = calloc(cap, sizeof *s->points);
    if (s->points == NULL)
        return ML_ENOMEM;
    s->cap = cap;
    snprintf(s->path, sizeof s->path, "%s", path);
    snprintf(s->title, sizeof s->title, "%s", title);
    return ML_OK;
}

void ml_report_series_free(ml_report_series *s)
{
    if (s == NULL)
        return;
    free(s->points);
    memset(s, 0, sizeof *s);
}

ml_report_point *ml_report_series_add(ml_report_series *s, double start_s, double duration_s)
{
    if (s->npoints >= s->cap)
        return NULL;
    ml_report_point *p = &s->points[s->npoints++];
    memset(p, 0, sizeof *p);
    p->start_s = start_s;
    p->duration_s = duration_s;
    return p;
}

ml_metric *ml_report_point_add(ml_report_point *p, const char *leaf, const char *unit, int decimals,
                               double value)
{
    if (p->nfigures >= ML_REPORT_POINT_FIGURES)
        return NULL;
    ml_metric *m = &p->figures[p->nfigures++];
    memset(m, 0, sizeof *m);
    snprintf(m->name, sizeof m->name, "%s", leaf);
    m->unit = unit;
    m->decimals = decimals;
    m->valid = isfinite(value);
    m->value = m->valid ? value : 0.0;
    return m;
}

ml_metric *ml_report_point_find(ml_report_point *p, const char *leaf)
{
    for (size_t i = 0; i < p->nfigures; i++)
        if (strcmp(p->figures[i].name, leaf) == 0)
            return &p->figures[i];
    return NULL;
}

const char *ml_report_point_verdict(const ml_report_point *p)
{
    if (p->nchecks == 0)
        return NULL;
    bool undecided = false;
    for (size_t i = 0; i < p->nchecks; i++) {
        if (!p->checks[i].pass && !p->checks[i].undecided)
            return "fail";
        undecided = undecided || p->checks[i].undecided;
    }
    return undecided ? "undecided" : "pass";
}

ml_metric *ml_metric_missing(ml_metric *m, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    m = metric_missing_v(m, fmt, ap);
    va_end(ap);
    return m;
}

ml_metric *ml_metric_bound(ml_metric *m, ml_bound bound, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    m = metric_bound_v(m, bound, fmt, ap);
    va_end(ap);
    return m;
}

ml_metric *ml_metric_qualify(ml_metric *m, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    m = metric_qualify_v(m, fmt, ap);
    va_end(ap);
    return m;
}

void ml_report_limit_text(const ml_check *c, char *buf, size_t len)
{
    char lo[40], hi[40];
    ml_report_number(lo, sizeof lo, c->min, c->decimals, false);
    ml_report_number(hi, sizeof hi, c->max, c->decimals, false);
    if (c->has_min && c->has_max)
        snprintf(buf, len, "%s..%s", lo, hi);
    else if (c->has_min)
        snprintf(buf, len, ">= %s", lo);
    else if (c->has_max)
        snprintf(buf, len, "<= %s", hi);
    else
        buf[0] = '\0';
}

const ml_check *ml_report_check_for(const ml_report *r, const char *metric)
{
    for (size_t i = 0; i < r->nchecks; i++)
        if (strcmp(r->checks[i].metric, metric) == 0)
            return &r->checks[i];
    return NULL;
}

ml_status ml_report_write(FILE *f, const ml_report *r, ml_report_format fmt)
{
    if (f == NULL || r == NULL)
        return ML_EINVAL;
    ml_status st;
    switch (fmt) {
    case ML_FORMAT_TEXT: st = ml_report_write_text(f, r); break;
    case ML_FORMAT_JSON: st = ml_report_write_json(f, r); break;
    case ML_FORMAT_CSV: st = ml_report_write_csv(f, r); break;
    default: return ML_EINVAL;
    }
    if (st == ML_OK && (fflush(f) != 0 || ferror(f)))
        st = ML_EIO;
    return st;
}

ml_status ml_report_write_csv_header(FILE *f)
{
    if (f == NULL)
        return ML_EINVAL;
    fputs(ML_REPORT_CSV_COLUMNS "\n", f);
    return fflush(f) == 0 && !ferror(f) ? ML_OK : ML_EIO;
}

void ml_csv_field(FILE *f, const char *s, char sep)
{
    if (s[strcspn(s, ",\"\r\n")] != '\0') {
        fputc('"', f);
        for (const char *p = s; *p; p++) {
            if (*p == '"')
                fputc('"', f);
            fputc(*p, f);
        }
        fputc('"', f);
    } else {
        fputs(s, f);
    }
    if (sep)
        fputc(sep, f);
}

bool ml_metric_has_mark(const ml_metric *m)
{
    return m->valid ? (m->bound != ML_BOUND_NONE || m->qualifier[0]) : m->reason[0] != '\0';
}

int ml_report_mark(const ml_report *r, size_t i)
{
    if (i >= r->nmetrics || !ml_metric_has_mark(&r->metrics[i]))
        return 0;
    int n = 0;
    for (size_t k = 0; k <= i; k++)
        n += ml_metric_has_mark(&r->metrics[k]);
    return n;
}

int ml_report_metric_marks(const ml_report *r)
{
    int n = 0;
    for (size_t i = 0; i < r->nmetrics; i++)
        n += ml_metric_has_mark(&r->metrics[i]);
    return n;
}

void ml_report_cell_text(const ml_metric *m, int *mark, char *buf, size_t len)
{
    char val[64];
    ml_report_value_text(m, val, sizeof val);
    if (ml_metric_has_mark(m))
        snprintf(buf, len, "%s [%d]", val, ++*mark);
    else
        snprintf(buf, len, "%s", val);
}

void ml_report_mark_line(int k, const char *name, const ml_metric *m, char *buf, size_t len)
{
    char why[ML_REPORT_WHY_LEN + 32];
    ml_report_why_text(m, why, sizeof why);
    snprintf(buf, len, "[%d] %s: %s", k, name, why);
}

void ml_report_series_marks(const ml_report *r, int first_mark, void (*each)(void *ctx, const char *line),
                            void *ctx)
{
    const ml_report_series *sr = r->series;
    int mark = first_mark;
    for (size_t k = 0; sr && k < sr->npoints; k++)
        for (size_t i = 0; i < sr->points[k].nfigures; i++) {
            const ml_metric *m = &sr->points[k].figures[i];
            if (!ml_metric_has_mark(m))
                continue;
            char name[160], line[ML_REPORT_WHY_LEN + 256];
            ml_report_point_name(r, k, m->name, name, sizeof name);
            ml_report_mark_line(++mark, name, m, line, sizeof line);
            each(ctx, line);
        }
}

void ml_report_why_text(const ml_metric *m, char *buf, size_t len)
{
    char t[ML_REPORT_WHY_LEN];
    if (!m->valid) {
        ml_report_unsign_zeros(t, sizeof t, m->reason);
        snprintf(buf, len, "not measured: %s", t);
        return;
    }
    ml_report_unsign_zeros(t, sizeof t, m->qualifier);
    const char *b = m->bound == ML_BOUND_UPPER ? "upper bound" : m->bound == ML_BOUND_LOWER ? "lower bound" : "";
    if (t[0] && b[0] && strstr(t, b) == NULL)
        snprintf(buf, len, "%s (%s)", t, b);
    else
        snprintf(buf, len, "%s", t[0] ? t : b);
}

void ml_report_value_text(const ml_metric *m, char *buf, size_t len)
{
    if (!m->valid) {
        snprintf(buf, len, "n/a");
        return;
    }
    char v[48];
    ml_report_bound_number(v, sizeof v, m->value, m->decimals, m->bound);
    snprintf(buf, len, "%s%s", m->bound == ML_BOUND_UPPER ? "< " : m->bound == ML_BOUND_LOWER ? "> " : "", v);
}

void ml_report_u_text(const ml_metric *m, char *buf, size_t len)
{
    if (len == 0)
        return;
    buf[0] = '\0';
    if (!m->valid || !m->has_u || !isfinite(m->u))
        return;
    const int d = (m->decimals < 0 ? 0 : m->decimals) + 1;
    char n[48];
    ml_report_number(n, sizeof n, m->u, d, false);
    if (strspn(n, "0.") == strlen(n)) /* below the printed precision: say so, not "+- 0.000" */
        snprintf(buf, len, "+- <%.*f", d, pow(10.0, -d));
    else
        snprintf(buf, len, "+- %s", n);
}

void ml_report_point_name(const ml_report *r, size_t p, const char *leaf, char *buf, size_t len)
{
    snprintf(buf, len, "%s[%zu].%s", r->series ? r->series->path : "points", p, leaf);
}
