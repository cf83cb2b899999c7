/* Limits profiles: parsing (inih) and checking.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/limits.h"

#include <errno.h>
#include <ini.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/registry.h"

typedef struct {
    FILE *f;
    int line;
} line_reader;

typedef struct {
    line_reader rd;
    ml_limits *out;
    char *err;
    size_t errlen;
    bool failed;
} parse_ctx;

/* fgets-like reader that counts lines, so the handler knows the line it is given. */
static char *read_line(char *str, int num, void *stream)
{
    line_reader *rd = stream;
    char *s = fgets(str, num, rd->f);
    if (s != NULL)
        rd->line++;
    return s;
}

static void fail(parse_ctx *c, const char *fmt, const char *a, const char *b)
{
    if (c->failed)
        return;
    c->failed = true;
    char msg[256];
    snprintf(msg, sizeof msg, fmt, a, b);
    snprintf(c->err, c->errlen, "line %d: %s", c->rd.line, msg);
}

static bool parse_number(const char *s, double *v)
{
    char *end = NULL;
    errno = 0;
    *v = strtod(s, &end);
    if (end == s || errno != 0 || !isfinite(*v))
        return false;
    while (*end == ' ' || *end == '\t')
        end++;
    return *end == '\0';
}

static int handler(void *user, const char *section, const char *name, const char *value)
{
    parse_ctx *c = user;
    if (strcmp(section, "profile") == 0) {
        if (strcmp(name, "name") == 0) {
            snprintf(c->out->name, sizeof c->out->name, "%s", value);
            return 1;
        }
        if (strcmp(name, "description") == 0)
            return 1;
        fail(c, "key '%s': unknown key in [profile] (expected name or description)%s", name, "");
        return 0;
    }
    size_t len = strlen(name);
    bool is_min = len > 4 && strcmp(name + len - 4, "_min") == 0;
    bool is_max = len > 4 && strcmp(name + len - 4, "_max") == 0;
    if (!is_min && !is_max) {
        fail(c, "key '%s': a limit key must end in _min or _max%s", name, "");
        return 0;
    }
    char base[128];
    if (section[0] != '\0' && strcmp(section, "limits") != 0)
        snprintf(base, sizeof base, "%s.%.*s", section, (int)(len - 4), name);
    else
        snprintf(base, sizeof base, "%.*s", (int)(len - 4), name);
    int ambiguous = 0;
    const ml_metric_def *def = ml_registry_lookup(base, &ambiguous);
    if (def == NULL) {
        if (ambiguous)
            fail(c, "key '%s': '%s' names more than one metric; use its group, e.g. [hum]", name, base);
        else
            fail(c, "key '%s': unknown metric '%s'", name, base);
        return 0;
    }
    double v;
    if (!parse_number(value, &v)) {
        fail(c, "key '%s': '%s' is not a number", name, value);
        return 0;
    }
    ml_limit *l = NULL;
    for (size_t i = 0; i < c->out->n; i++)
        if (strcmp(c->out->items[i].metric, def->name) == 0)
            l = &c->out->items[i];
    if (l == NULL) {
        if (c->out->n >= ML_MAX_LIMITS) {
            fail(c, "key '%s': too many limits%s", name, "");
            return 0;
        }
        l = &c->out->items[c->out->n++];
        memset(l, 0, sizeof *l);
        snprintf(l->metric, sizeof l->metric, "%s", def->name);
    }
    if ((is_min && l->has_min) || (is_max && l->has_max)) {
        fail(c, "key '%s': given twice%s", name, "");
        return 0;
    }
    if (is_min) {
        l->has_min = true;
        l->min = v;
    } else {
        l->has_max = true;
        l->max = v;
    }
    if (l->has_min && l->has_max && l->min > l->max) {
        fail(c, "key '%s': the minimum is above the maximum for %s", name, def->name);
        return 0;
    }
    return 1;
}

ml_status ml_limits_load(const char *path, ml_limits *out, char *err, size_t errlen)
{
    memset(out, 0, sizeof *out);
    snprintf(out->path, sizeof out->path, "%s", path);
    FILE *f = fopen(path, "r");
    if (f == NULL) {
        snprintf(err, errlen, "%s", strerror(errno));
        return ML_EIO;
    }
    parse_ctx c = {.rd = {f, 0}, .out = out, .err = err, .errlen = errlen};
    int rc = ini_parse_stream(read_line, &c.rd, handler, &c);
    bool read_error = ferror(f) != 0;
    fclose(f);
    if (read_error) {
        snprintf(err, errlen, "read error");
        return ML_EIO;
    }
    if (c.failed)
        return ML_EFORMAT;
    if (rc != 0) {
        snprintf(err, errlen, "line %d: not a 'key = value' line or [section] header", rc);
        return ML_EFORMAT;
    }
    if (out->n == 0) {
        snprintf(err, errlen, "no limits in the file");
        return ML_EFORMAT;
    }
    return ML_OK;
}

void ml_limits_apply(const ml_limits *l, ml_report *r)
{
    for (size_t i = 0; i < l->n && r->nchecks < ML_REPORT_MAX_CHECKS; i++) {
        const ml_limit *lim = &l->items[i];
        ml_check *c = &r->checks[r->nchecks++];
        memset(c, 0, sizeof *c);
        snprintf(c->metric, sizeof c->metric, "%s", lim->metric);
        c->has_min = lim->has_min;
        c->has_max = lim->has_max;
        c->min = lim->min;
        c->max = lim->max;
        const ml_metric *m = ml_report_find(r, lim->metric);
        const ml_metric_def *def = ml_registry_lookup(lim->metric, NULL);
        c->unit = def ? def->unit : "";
        c->decimals = def ? def->decimals : 3;
        if (m == NULL || !m->valid) {
            c->valid = false;
            c->pass = false;
            continue;
        }
        c->valid = true;
        c->value = m->value;
        double margin = INFINITY;
        if (lim->has_min && m->value - lim->min < margin)
            margin = m->value - lim->min;
        if (lim->has_max && lim->max - m->value < margin)
            margin = lim->max - m->value;
        c->margin = margin;
        c->pass = margin >= 0;
    }
}
