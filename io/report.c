/* Report model helpers and writer dispatch.
 * SPDX-License-Identifier: MIT
 */
#include "io/report.h"

#include <math.h>
#include <stdarg.h>
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

const char *ml_report_verdict(const ml_report *r)
{
    if (r->nchecks == 0)
        return "unchecked";
    for (size_t i = 0; i < r->nchecks; i++)
        if (!r->checks[i].pass)
            return "fail";
    return "pass";
}

void ml_report_limit_text(const ml_check *c, char *buf, size_t len)
{
    if (c->has_min && c->has_max)
        snprintf(buf, len, "%.*f..%.*f", c->decimals, c->min, c->decimals, c->max);
    else if (c->has_min)
        snprintf(buf, len, ">= %.*f", c->decimals, c->min);
    else if (c->has_max)
        snprintf(buf, len, "<= %.*f", c->decimals, c->max);
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
