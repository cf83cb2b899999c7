/* Limits profiles: parsing and checking.
 * SPDX-License-Identifier: MIT
 *
 * The reader is our own (it replaced inih, whose lines stop at 199 bytes: a longer line was
 * split, and the tail of a long comment became a key). Lines may be of any length; the file is
 * refused above 1 MiB.
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/limits.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/registry.h"
#include "io/printable.h"
#include "io/smallfile.h"

#define MAX_BYTES ((size_t)1 << 20) /* a profile is a few hundred bytes; larger files are refused */
#define MAX_LIMIT 1e15             /* |limit| in the metric's unit: counts stay exact integers  */
#define MAX_OFFSET_HZ 1e9
#define MAX_DBC 1000.0

typedef struct {
    int line;
    ml_limits *out;
    char *err;
    size_t errlen;
    bool failed;
    bool seen_points, seen_rbw, seen_name, seen_description; /* keys that may appear once */
    bool seen_range, seen_window, seen_thd;
} parse_ctx;

static void fail(parse_ctx *c, const char *fmt, const char *a, const char *b)
{
    if (c->failed)
        return;
    c->failed = true;
    char msg[512], line[600];
    snprintf(msg, sizeof msg, fmt, a, b);
    snprintf(line, sizeof line, "line %d: %s", c->line, msg);
    ml_printable(c->err, c->errlen, line); /* keys and values may hold any byte */
}

/* A finite number with nothing after it but blanks, and |v| <= max; a reason for the error
 * message otherwise. */
static const char *parse_number(const char *s, double max, double *v)
{
    char *end = NULL;
    errno = 0;
    *v = strtod(s, &end);
    if (end == s || errno == ERANGE || !isfinite(*v))
        return "is not a number";
    while (*end == ' ' || *end == '\t')
        end++;
    if (*end != '\0')
        return "is not a number";
    if (fabs(*v) > max)
        return "is out of range";
    return NULL;
}

/* "OFFSET:DBC, OFFSET:DBC, ..." with ascending offsets >= 0. */
static bool mask_points(parse_ctx *c, const char *name, char *buf)
{
    ml_mask *m = &c->out->mask;
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
        if (parse_number(tok, MAX_OFFSET_HZ, &off) != NULL || parse_number(colon + 1, MAX_DBC, &dbc) != NULL
            || off < 0) {
            fail(c, "key '%s': '%s' is not OFFSET_HZ:DBC with 0 <= OFFSET_HZ <= 1e9 and |DBC| <= 1000", name, tok);
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

static bool parse_mask_points(parse_ctx *c, const char *name, const char *value)
{
    char *buf = strdup(value); /* a line of any length */
    if (buf == NULL) {
        fail(c, "out of memory%s%s", "", "");
        return false;
    }
    const bool ok = mask_points(c, name, buf);
    free(buf);
    return ok;
}

/* A key that may appear once in its section: false (error set) the second time. */
static bool once(parse_ctx *c, bool *seen, const char *section, const char *name)
{
    if (*seen) {
        fail(c, "key '%s': given twice in [%s]", name, section);
        return false;
    }
    *seen = true;
    return true;
}

/* "A:B[:C]" into v[n] (n 2 or 3), each through parse_number with max; false for another shape. */
static bool colon_numbers(const char *text, double *v, int n, double max)
{
    char buf[160];
    if (snprintf(buf, sizeof buf, "%s", text) >= (int)sizeof buf)
        return false;
    char *p = buf;
    for (int i = 0; i < n; i++) {
        char *colon = strchr(p, ':');
        if ((colon == NULL) != (i == n - 1))
            return false;
        if (colon)
            *colon = '\0';
        while (*p == ' ' || *p == '\t')
            p++;
        if (parse_number(p, max, &v[i]) != NULL)
            return false;
        p = colon ? colon + 1 : p;
    }
    return true;
}

/* "LO:HI:PCT, ..." of [response]. */
static bool response_bands(parse_ctx *c, const char *name, const char *value)
{
    ml_response_limits *rl = &c->out->response;
    char *buf = strdup(value);
    if (buf == NULL) {
        fail(c, "out of memory%s%s", "", "");
        return false;
    }
    bool ok = true;
    rl->nbands = 0;
    for (char *save = NULL, *tok = strtok_r(buf, ",", &save); ok && tok; tok = strtok_r(NULL, ",", &save)) {
        double v[3];
        if (!colon_numbers(tok, v, 3, MAX_OFFSET_HZ) || !(v[0] > 0) || !(v[1] > v[0]) || !(v[2] > 0)
            || v[2] > 1000) {
            fail(c, "key '%s': '%s' is not LO:HI:PCT with 0 < LO < HI <= 1e9 Hz and 0 < PCT <= 1000", name,
                 tok);
            ok = false;
        } else if (rl->nbands >= ML_RESPONSE_MAX_BANDS) {
            fail(c, "key '%s': more than 16 bands%s", name, "");
            ok = false;
        } else if (rl->nbands > 0 && v[0] < rl->band_hi_hz[rl->nbands - 1]) {
            fail(c, "key '%s': band '%s' overlaps the one before (bands ascend and may only touch)", name,
                 tok);
            ok = false;
        } else {
            rl->band_lo_hz[rl->nbands] = v[0];
            rl->band_hi_hz[rl->nbands] = v[1];
            rl->band_max_pct[rl->nbands] = v[2];
            rl->nbands++;
        }
    }
    free(buf);
    if (ok && rl->nbands == 0) {
        fail(c, "key '%s': no bands%s", name, "");
        ok = false;
    }
    return ok;
}

/* One key of [response]. */
static int response_key(parse_ctx *c, const char *name, const char *value)
{
    ml_response_limits *rl = &c->out->response;
    double v[2];
    if (strcmp(name, "range_hz") == 0) {
        if (!once(c, &c->seen_range, "response", name))
            return 0;
        if (!colon_numbers(value, v, 2, MAX_OFFSET_HZ) || !(v[0] > 0) || !(v[1] > v[0])) {
            fail(c, "key '%s': '%s' is not LO:HI with 0 < LO < HI <= 1e9 Hz", name, value);
            return 0;
        }
        rl->has_range = true;
        rl->range_lo_hz = v[0];
        rl->range_hi_hz = v[1];
    } else if (strcmp(name, "window_db") == 0) {
        if (!once(c, &c->seen_window, "response", name))
            return 0;
        if (strchr(value, ':') == NULL) {
            if (parse_number(value, MAX_DBC, &v[0]) != NULL || !(v[0] > 0)) {
                fail(c, "key '%s': '%s' is not a window in dB, 0 < D <= 1000 (or MIN:MAX)", name, value);
                return 0;
            }
            v[1] = v[0];
            v[0] = -v[0];
        } else if (!colon_numbers(value, v, 2, MAX_DBC) || v[0] > 0 || v[1] < 0 || !(v[0] < v[1])) {
            fail(c, "key '%s': '%s' is not MIN:MAX in dB with -1000 <= MIN <= 0 <= MAX <= 1000 and MIN < MAX",
                 name, value);
            return 0;
        }
        rl->has_window = true;
        rl->window_min_db = v[0];
        rl->window_max_db = v[1];
    } else if (strcmp(name, "thd_max_pct") == 0) {
        if (!once(c, &c->seen_thd, "response", name) || !response_bands(c, name, value))
            return 0;
    } else {
        fail(c, "key '%s': unknown key in [response] (expected range_hz, window_db or thd_max_pct)%s", name,
             "");
        return 0;
    }
    c->out->has_response = true;
    return 1;
}

static int handler(void *user, const char *section, const char *name, const char *value)
{
    parse_ctx *c = user;
    if (strcmp(section, "response") == 0)
        return response_key(c, name, value);
    if (strcmp(section, "mask") == 0) {
        if (strcmp(name, "points") == 0)
            return once(c, &c->seen_points, section, name) && parse_mask_points(c, name, value) ? 1 : 0;
        if (strcmp(name, "rbw_hz") == 0) {
            double v;
            if (!once(c, &c->seen_rbw, section, name))
                return 0;
            if (parse_number(value, MAX_OFFSET_HZ, &v) != NULL || v <= 0) {
                fail(c, "key '%s': '%s' is not a bandwidth in Hz, 0 < rbw_hz <= 1e9", name, value);
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
            if (!once(c, &c->seen_name, section, name))
                return 0;
            if (strlen(value) >= sizeof c->out->name) {
                fail(c, "key '%s': longer than %s bytes", name, "127");
                return 0;
            }
            snprintf(c->out->name, sizeof c->out->name, "%s", value);
            return 1;
        }
        if (strcmp(name, "description") == 0)
            return once(c, &c->seen_description, section, name) ? 1 : 0;
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
    const int bn = section[0] != '\0' && strcmp(section, "limits") != 0
                       ? snprintf(base, sizeof base, "%s.%.*s", section, (int)(len - 4), name)
                       : snprintf(base, sizeof base, "%.*s", (int)(len - 4), name);
    if (bn < 0 || bn >= (int)sizeof base) { /* no metric name is that long */
        fail(c, "key '%s': unknown metric (the name is too long)%s", name, "");
        return 0;
    }
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
    const char *why = parse_number(value, MAX_LIMIT, &v);
    if (why != NULL) {
        fail(c, strcmp(why, "is out of range") == 0 ? "key '%s': '%s' is out of range (|limit| <= 1e15)"
                                                    : "key '%s': '%s' is not a number",
             name, value);
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

/* One line of the profile (len bytes with its newline, of any length): a comment, a [section] header
 * or a key = value line. A value ends at " ;" (an inline comment); ";" and "#" at the start of a
 * line begin a comment line. false when parsing must stop (the error is set). */
static bool parse_line(parse_ctx *c, char *line, size_t len, char *section, size_t seclen)
{
    if (memchr(line, '\0', len) != NULL) {
        fail(c, "holds a NUL byte: not a text line%s%s", "", "");
        return false;
    }
    line = ml_smallfile_line(line, c->line == 1);
    if (line == NULL)
        return true;
    if (*line == '[') {
        char *end = strchr(line, ']');
        const char *rest = end ? ml_smallfile_trim(end + 1) : NULL;
        if (end == NULL || (*rest != '\0' && *rest != ';' && *rest != '#')) {
            fail(c, "'%.100s' is not a 'key = value' line or a [section] header%s", line, "");
            return false;
        }
        *end = '\0';
        const char *name = ml_smallfile_trim(line + 1);
        if (strlen(name) >= seclen) {
            fail(c, "section [%.100s] is not known%s", name, "");
            return false;
        }
        snprintf(section, seclen, "%s", name);
        return true;
    }
    char *value = ml_smallfile_key_value(line);
    if (value == NULL) {
        fail(c, "'%.100s' is not a 'key = value' line or a [section] header%s", line, "");
        return false;
    }
    return handler(c, section, line, value) == 1;
}

ml_status ml_limits_load(const char *path, ml_limits *out, char *err, size_t errlen)
{
    memset(out, 0, sizeof *out);
    int fd;
    size_t size;
    const ml_status opened = ml_smallfile_open(path, "limits profile", MAX_BYTES, "1 MiB", false, &fd, &size, err,
                                               errlen);
    if (opened != ML_OK)
        return opened;
    FILE *f = fdopen(fd, "r");
    if (f == NULL) {
        snprintf(err, errlen, "%s", strerror(errno));
        close(fd);
        return ML_EIO;
    }
    parse_ctx c = {.out = out, .err = err, .errlen = errlen};
    char section[64] = "";
    char *line = NULL;
    size_t cap = 0;
    ssize_t n;
    while (!c.failed && (n = getline(&line, &cap, f)) >= 0) {
        c.line++;
        if (!parse_line(&c, line, (size_t)n, section, sizeof section))
            break;
    }
    free(line);
    if (ferror(f) != 0) {
        fclose(f);
        snprintf(err, errlen, "read error");
        return ML_EIO;
    }
    if (c.failed) {
        fclose(f);
        return ML_EFORMAT;
    }
    fclose(f);
    if (out->mask.rbw_hz == 0)
        out->mask.rbw_hz = 300.0; /* 47 CFR 73.44(a): 300 Hz resolution bandwidth */
    if (out->mask.rbw_hz > 0 && !out->has_mask && out->n == 0 && !out->has_response) {
        snprintf(err, errlen, "no limits in the file");
        return ML_EFORMAT;
    }
    if (out->response.has_range && !out->response.has_window) {
        snprintf(err, errlen, "[response]: range_hz needs window_db");
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

/* f inside [lo, hi], the edges widened by ML_RESPONSE_EDGE_TOL of themselves. */
static bool inside(double f, double lo, double hi)
{
    return f >= lo * (1 - ML_RESPONSE_EDGE_TOL) && f <= hi * (1 + ML_RESPONSE_EDGE_TOL);
}

double ml_limits_response_thd_max(const ml_response_limits *rl, double f_hz)
{
    double m = NAN;
    for (size_t i = 0; i < rl->nbands; i++)
        if (inside(f_hz, rl->band_lo_hz[i], rl->band_hi_hz[i]) && !(rl->band_max_pct[i] >= m))
            m = rl->band_max_pct[i];
    return m;
}

/* A check of point figure leaf against [lo, hi] (either may be infinite: no such limit). */
static void point_check(ml_report_point *p, const char *leaf, double lo, double hi)
{
    if (p->nchecks >= ML_REPORT_POINT_CHECKS)
        return;
    ml_check *c = &p->checks[p->nchecks++];
    memset(c, 0, sizeof *c);
    snprintf(c->metric, sizeof c->metric, "%s", leaf);
    c->has_min = isfinite(lo);
    c->has_max = isfinite(hi);
    c->min = c->has_min ? lo : 0;
    c->max = c->has_max ? hi : 0;
    const ml_metric *m = ml_report_point_find(p, leaf);
    c->unit = m ? m->unit : "";
    c->decimals = m ? m->decimals : 3;
    if (m == NULL || !m->valid)
        return; /* not measured: a failed check */
    c->valid = true;
    c->value = m->value;
    c->margin = fmin(c->has_min ? m->value - lo : INFINITY, c->has_max ? hi - m->value : INFINITY);
    c->pass = c->margin >= 0;
}

/* The [response] checks of every point of r's series. */
static void apply_response(const ml_response_limits *rl, ml_report *r)
{
    ml_report_series *s = r->series;
    for (size_t k = 0; s && k < s->npoints; k++) {
        ml_report_point *p = &s->points[k];
        p->nchecks = 0;
        const ml_metric *f = ml_report_point_find(p, "frequency_hz");
        if (f == NULL || !f->valid)
            continue;
        if (rl->has_window && (!rl->has_range || inside(f->value, rl->range_lo_hz, rl->range_hi_hz)))
            point_check(p, "relative_db", rl->window_min_db, rl->window_max_db);
        const double thd = ml_limits_response_thd_max(rl, f->value);
        if (isfinite(thd))
            point_check(p, "thd_pct", -INFINITY, thd);
    }
}

void ml_limits_apply(const ml_limits *l, ml_report *r)
{
    if (l->has_response)
        apply_response(&l->response, r);
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
        /* a bound: the true value lies on one side of it. An upper bound at or below a max passes
         * it, one below a min fails it for sure; otherwise nothing is known (and likewise for a
         * lower bound with min and max swapped) */
        if (m->bound != ML_BOUND_NONE) {
            const bool up = m->bound == ML_BOUND_UPPER;
            const bool fails = (up && lim->has_min && m->value < lim->min)
                               || (!up && lim->has_max && m->value > lim->max);
            const bool open = (up && lim->has_max && m->value > lim->max) || (up && lim->has_min && !fails)
                              || (!up && lim->has_min && m->value < lim->min)
                              || (!up && lim->has_max && !fails);
            c->pass = !fails && !open;
            c->undecided = !fails && open;
        }
    }
}
