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
#include <sys/stat.h>

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
    if (s != NULL) {
        rd->line++;
        /* inih would read an indented line as the continuation of the previous value */
        size_t lead = strspn(s, " \t");
        if (lead > 0)
            memmove(s, s + lead, strlen(s + lead) + 1);
    }
    return s;
}

/* Line n of f without its end-of-line (for error messages); "" when absent. */
static void nth_line(FILE *f, int n, char *buf, size_t len)
{
    buf[0] = '\0';
    rewind(f);
    for (int i = 1; i <= n && fgets(buf, (int)len, f) != NULL; i++)
        if (i == n) {
            buf[strcspn(buf, "\r\n")] = '\0';
            return;
        }
    buf[0] = '\0';
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

/* "OFFSET:DBC, OFFSET:DBC, ..." with ascending offsets >= 0. */
static bool parse_mask_points(parse_ctx *c, const char *name, const char *value)
{
    ml_mask *m = &c->out->mask;
    char buf[512];
    snprintf(buf, sizeof buf, "%s", value);
    m->npoints = 0;
    for (char *save = NULL, *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
        while (*tok == ' ' || *tok == '\t')
            tok++;
        char *colon = strchr(tok, ':');
        double off, dbc;
        if (colon == NULL) {
            fail(c, "key '%s': '%s' is not OFFSET_HZ:DBC", name, tok);
            return false;
        }
        *colon = '\0';
        if (!parse_number(tok, &off) || !parse_number(colon + 1, &dbc) || off < 0) {
            fail(c, "key '%s': '%s' is not OFFSET_HZ:DBC with OFFSET_HZ >= 0", name, tok);
            return false;
        }
        if (m->npoints >= ML_MASK_MAX_POINTS) {
            fail(c, "key '%s': more than 32 points%s", name, "");
            return false;
        }
        if (m->npoints > 0 && off < m->offset_hz[m->npoints - 1]) {
            fail(c, "key '%s': offsets must not decrease (%s Hz)", name, tok);
            return false;
        }
        m->offset_hz[m->npoints] = off;
        m->dbc[m->npoints] = dbc;
        m->npoints++;
    }
    if (m->npoints == 0) {
        fail(c, "key '%s': no points%s", name, "");
        return false;
    }
    c->out->has_mask = true;
    return true;
}

static int handler(void *user, const char *section, const char *name, const char *value)
{
    parse_ctx *c = user;
    if (strcmp(section, "mask") == 0) {
        if (strcmp(name, "points") == 0)
            return parse_mask_points(c, name, value) ? 1 : 0;
        if (strcmp(name, "rbw_hz") == 0) {
            double v;
            if (!parse_number(value, &v) || v <= 0) {
                fail(c, "key '%s': '%s' is not a bandwidth in Hz > 0", name, value);
                return 0;
            }
            c->out->mask.rbw_hz = v;
            return 1;
        }
        fail(c, "key '%s': unknown key in [mask] (expected points or rbw_hz)%s", name, "");
        return 0;
    }
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
    struct stat st;
    if (stat(path, &st) == 0 && S_ISDIR(st.st_mode)) {
        snprintf(err, errlen, "is a directory, not a limits profile");
        return ML_EIO;
    }
    if (stat(path, &st) == 0 && !S_ISREG(st.st_mode)) { /* a FIFO or device could block forever */
        snprintf(err, errlen, "not a regular file");
        return ML_EIO;
    }
    FILE *f = fopen(path, "r");
    if (f == NULL) {
        snprintf(err, errlen, "%s", strerror(errno));
        return ML_EIO;
    }
    parse_ctx c = {.rd = {f, 0}, .out = out, .err = err, .errlen = errlen};
    int rc = ini_parse_stream(read_line, &c.rd, handler, &c);
    if (ferror(f) != 0) {
        fclose(f);
        snprintf(err, errlen, "read error");
        return ML_EIO;
    }
    if (c.failed) {
        fclose(f);
        return ML_EFORMAT;
    }
    if (rc != 0) {
        char line[160];
        nth_line(f, rc, line, sizeof line);
        for (char *ch = line; *ch; ch++) /* one printable line, whatever the file holds */
            if ((unsigned char)*ch < 0x20 || (unsigned char)*ch >= 0x7f)
                *ch = '?';
        fclose(f);
        snprintf(err, errlen, "line %d: '%.100s' is not a 'key = value' line or a [section] header", rc, line);
        return ML_EFORMAT;
    }
    fclose(f);
    if (out->mask.rbw_hz == 0)
        out->mask.rbw_hz = 300.0; /* 47 CFR 73.44(a): 300 Hz resolution bandwidth */
    if (out->mask.rbw_hz > 0 && !out->has_mask && out->n == 0) {
        snprintf(err, errlen, "no limits in the file");
        return ML_EFORMAT;
    }
    if (out->has_mask) {
        bool given = false;
        for (size_t i = 0; i < out->n; i++)
            given = given || strcmp(out->items[i].metric, "spectrum.mask_margin_db") == 0;
        if (!given && out->n < ML_MAX_LIMITS) {
            ml_limit *l = &out->items[out->n++];
            memset(l, 0, sizeof *l);
            snprintf(l->metric, sizeof l->metric, "spectrum.mask_margin_db");
            l->has_min = true;
            l->min = 0.0;
        }
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
