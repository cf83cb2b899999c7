/* The user's settings file (see settings.h).
 * SPDX-License-Identifier: MIT
 *
 * References: the XDG Base Directory Specification 0.8 ($XDG_CONFIG_HOME, default $HOME/.config;
 * a relative value is to be ignored).
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/settings.h"

#include <errno.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/printable.h"
#include "io/smallfile.h"

typedef struct {
    int line;
    const char *dir;
    ml_settings *s;
    char *err;
    size_t errlen;
} ctx;

static ml_status fail(ctx *c, const char *fmt, const char *a, const char *b)
{
    char msg[512], line[600];
    snprintf(msg, sizeof msg, fmt, a, b);
    snprintf(line, sizeof line, "line %d: %s", c->line, msg);
    ml_printable(c->err, c->errlen, line); /* keys and values may hold any byte */
    return ML_EFORMAT;
}

static char *join(const char *a, const char *b)
{
    const size_t n = strlen(a) + strlen(b) + 2;
    char *p = malloc(n);
    if (p)
        snprintf(p, n, "%s/%s", a, b);
    return p;
}

ml_status ml_settings_path(char **path)
{
    *path = NULL;
    const char *x = getenv("XDG_CONFIG_HOME"), *home = getenv("HOME");
    char *base = NULL;
    if (x && x[0] == '/')
        base = strdup(x);
    else if (home && home[0] == '/')
        base = join(home, ".config");
    else
        return ML_OK;
    if (base == NULL)
        return ML_ENOMEM;
    *path = join(base, "modlens/settings.ini");
    free(base);
    return *path ? ML_OK : ML_ENOMEM;
}

void ml_settings_free(ml_settings *s)
{
    free(s->path);
    free(s->device);
    free(s->output_device);
    free(s->card);
    free(s->calibration);
    free(s->limits);
    *s = (ml_settings){.full_scale_dbu = NAN};
}

/* A file named in the settings: absolute, "~/..." in the home folder, else in dir. */
static char *resolve(const char *dir, const char *v)
{
    const char *home = getenv("HOME");
    if (v[0] == '/')
        return strdup(v);
    if (strncmp(v, "~/", 2) == 0 && home && home[0] == '/')
        return join(home, v + 2);
    return join(dir, v);
}

static ml_status set_text(ctx *c, const char *key, const char *value, bool is_file, char **slot)
{
    if (*slot != NULL)
        return fail(c, "key '%s': given twice%s", key, "");
    if (value[0] == '\0')
        return fail(c, "key '%s': no value%s", key, "");
    if (strlen(value) >= 4096)
        return fail(c, "key '%s': longer than %s bytes", key, "4095");
    *slot = is_file ? resolve(c->dir, value) : strdup(value);
    return *slot ? ML_OK : ML_ENOMEM;
}

static ml_status handle(ctx *c, const char *key, const char *value)
{
    ml_settings *s = c->s;
    if (strcmp(key, "device") == 0)
        return set_text(c, key, value, false, &s->device);
    if (strcmp(key, "output_device") == 0)
        return set_text(c, key, value, false, &s->output_device);
    if (strcmp(key, "card") == 0)
        return set_text(c, key, value, true, &s->card);
    if (strcmp(key, "limits") == 0)
        return set_text(c, key, value, true, &s->limits);
    if (strcmp(key, "calibration") == 0) {
        if (!isnan(s->full_scale_dbu))
            return fail(c, "key '%s': give calibration or full_scale_dbu, not both%s", key, "");
        return set_text(c, key, value, true, &s->calibration);
    }
    if (strcmp(key, "full_scale_dbu") == 0 || strcmp(key, "mains") == 0) {
        const bool fs = key[0] == 'f';
        if (fs ? !isnan(s->full_scale_dbu) : s->mains_hz != 0)
            return fail(c, "key '%s': given twice%s", key, "");
        if (fs && s->calibration)
            return fail(c, "key '%s': give calibration or full_scale_dbu, not both%s", key, "");
        char *end = NULL;
        errno = 0;
        const double v = strtod(value, &end);
        if (end == value || *end != '\0' || errno != 0 || !isfinite(v))
            return fail(c, "key '%s': '%s' is not a number", key, value);
        if (fs && (v < -60 || v > 60))
            return fail(c, "key '%s': '%s' is out of range -60..+60 dBu", key, value);
        if (!fs && v != 50 && v != 60)
            return fail(c, "key '%s': '%s' is not 50 or 60", key, value);
        *(fs ? &s->full_scale_dbu : &s->mains_hz) = v;
        return ML_OK;
    }
    return fail(c,
                "key '%s': unknown (expected device, output_device, card, calibration, full_scale_dbu, "
                "mains or limits)%s",
                key, "");
}

/* One line (NUL-terminated, no newline): a comment, blank, or key = value. */
static ml_status parse_line(ctx *c, char *line)
{
    line = ml_smallfile_line(line, c->line == 1);
    if (line == NULL)
        return ML_OK;
    if (*line == '[')
        return fail(c, "'%.100s': the settings file has no sections%s", line, "");
    char *value = ml_smallfile_key_value(line);
    if (value == NULL)
        return fail(c, "'%.100s' is not a 'key = value' line%s", line, "");
    return handle(c, line, value);
}

ml_status ml_settings_parse(const char *data, size_t len, const char *dir, ml_settings *s, char *err,
                            size_t errlen)
{
    *s = (ml_settings){.full_scale_dbu = NAN};
    if (err && errlen)
        err[0] = '\0';
    if (data == NULL && len > 0)
        return ML_EINVAL;
    ctx c = {.dir = dir ? dir : ".", .s = s, .err = err, .errlen = errlen};
    if (len > ML_SETTINGS_MAX_BYTES) {
        snprintf(err, errlen, "larger than 64 KiB: not a settings file");
        return ML_EFORMAT;
    }
    if (data && memchr(data, '\0', len) != NULL) {
        snprintf(err, errlen, "holds a NUL byte: not a text file");
        return ML_EFORMAT;
    }
    char *buf = malloc(len + 1);
    if (buf == NULL)
        return ML_ENOMEM;
    if (len)
        memcpy(buf, data, len);
    buf[len] = '\0';
    ml_status st = ML_OK;
    for (char *p = buf, *end = buf + len; st == ML_OK && p < end;) {
        char *nl = memchr(p, '\n', (size_t)(end - p));
        if (nl)
            *nl = '\0';
        c.line++;
        st = parse_line(&c, p);
        p = nl ? nl + 1 : end;
    }
    free(buf);
    return st;
}

ml_status ml_settings_read(const char *path, ml_settings *s, char *err, size_t errlen)
{
    *s = (ml_settings){.full_scale_dbu = NAN};
    int fd;
    size_t size;
    const ml_status opened = ml_smallfile_open(path, "settings file", ML_SETTINGS_MAX_BYTES, "64 KiB", true, &fd,
                                               &size, err, errlen);
    if (opened != ML_OK)
        return opened;
    if (fd < 0)
        return ML_OK; /* no settings */
    char *buf;
    size_t got;
    if (ml_smallfile_read(fd, size, &buf, &got) != ML_OK)
        return ML_ENOMEM;
    char *dir = strdup(path);
    char *slash = dir ? strrchr(dir, '/') : NULL;
    if (slash)
        *slash = '\0';
    ml_status r =
        dir ? ml_settings_parse(buf, got, slash ? (dir[0] ? dir : "/") : ".", s, err, errlen) : ML_ENOMEM;
    free(dir);
    free(buf);
    if (r == ML_OK && (s->path = strdup(path)) == NULL)
        r = ML_ENOMEM;
    return r;
}
