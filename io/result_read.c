/* Reading a saved measurement back (see result_read.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "io/result_read.h"

#include <errno.h>
#include <jansson.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "io/internal.h"

struct ml_result {
    size_t n, cap;
    ml_result_item *items;
    char verdict[16];
};

typedef struct {
    ml_result *r;
    char *err;
    size_t errlen;
} ctx;

/* The reason, as one printable line: names and jansson's token excerpts may hold any byte. */
static ml_status fail(ctx *c, const char *fmt, ...)
{
    if (c->err != NULL && c->errlen > 0) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(c->err, c->errlen, fmt, ap);
        va_end(ap);
        for (char *p = c->err; *p; p++)
            if ((unsigned char)*p < 0x20 || (unsigned char)*p == 0x7f)
                *p = '?';
    }
    return ML_EFORMAT;
}

static ml_status add(ctx *c, const char *name, ml_result_type type, double value, const char *text)
{
    ml_result *r = c->r;
    if (r->n == ML_RESULT_MAX_ITEMS)
        return fail(c, "more than %d values", ML_RESULT_MAX_ITEMS);
    for (size_t i = 0; i < r->n; i++)
        if (strcmp(r->items[i].name, name) == 0)
            return fail(c, "'%s' appears twice", name);
    if (r->n == r->cap) {
        size_t cap = r->cap ? 2 * r->cap : 64;
        ml_result_item *p = realloc(r->items, cap * sizeof *p);
        if (p == NULL)
            return ML_ENOMEM;
        r->items = p;
        r->cap = cap;
    }
    ml_result_item *it = &r->items[r->n++];
    memset(it, 0, sizeof *it);
    snprintf(it->name, sizeof it->name, "%s", name);
    it->type = type;
    it->value = type == ML_RESULT_NUMBER ? value : 0.0;
    if (type == ML_RESULT_TEXT)
        snprintf(it->text, sizeof it->text, "%s", text);
    return ML_OK;
}

/* prefix + "." + key into out; false when too long or the key is empty or holds a dot */
static bool join(char *out, const char *prefix, const char *key)
{
    if (key[0] == '\0' || strchr(key, '.') != NULL)
        return false;
    int n = prefix[0] ? snprintf(out, ML_RESULT_NAME_MAX, "%s.%s", prefix, key)
                      : snprintf(out, ML_RESULT_NAME_MAX, "%s", key);
    return n > 0 && n < ML_RESULT_NAME_MAX;
}

/* A number within +-ML_RESULT_MAX_MAGNITUDE (a 2^63 or 1e300 "count" is not one). */
static bool finite_number(const json_t *v, double *x)
{
    if (!json_is_number(v))
        return false;
    *x = json_number_value(v);
    return isfinite(*x) && fabs(*x) <= ML_RESULT_MAX_MAGNITUDE;
}

/* A whole number lo..hi (as JSON integer or real: 3.0 is 3), for fields read into integers. */
static bool whole_number(const json_t *v, double lo, double hi)
{
    double x;
    return finite_number(v, &x) && x == floor(x) && x >= lo && x <= hi;
}

/* a table: an array of objects whose members are numbers, text or null (a sweep's points carry
 * their verdict, and the reasons, qualifiers and bounds of a series hold text per point) */
static ml_status check_table(ctx *c, const char *name, const json_t *arr)
{
    size_t i;
    const json_t *row;
    json_array_foreach(arr, i, row) {
        if (!json_is_object(row))
            return fail(c, "'%s' row %zu is not an object", name, i + 1);
        const char *k;
        const json_t *v;
        double x;
        json_object_foreach((json_t *)row, k, v) {
            if (!json_is_null(v) && !json_is_string(v) && !finite_number(v, &x))
                return fail(c, "'%s' row %zu: '%.40s' is not a number within +-1e15, text or null", name, i + 1,
                            k);
        }
    }
    return ML_OK;
}

/* members of a metric group (depth 1) or of an object nested in it (depth 2) */
static ml_status walk_group(ctx *c, const char *prefix, const json_t *obj, int depth, size_t *metrics)
{
    const char *k;
    const json_t *v;
    json_object_foreach((json_t *)obj, k, v) {
        char name[ML_RESULT_NAME_MAX];
        if (!join(name, prefix, k))
            return fail(c, "bad or too long name under '%s'", prefix);
        ml_status st = ML_OK;
        double x;
        if (json_is_null(v)) {
            st = add(c, name, ML_RESULT_NULL, 0, NULL);
            ++*metrics;
        } else if (json_is_number(v)) {
            if (!finite_number(v, &x))
                return fail(c, "'%s' is not a finite number within +-1e15", name);
            if (strcmp(name, "uncertainty_method.blocks") == 0 && !whole_number(v, 0, ML_RESULT_MAX_MAGNITUDE))
                return fail(c, "'%s' is not a whole number >= 0", name);
            st = add(c, name, ML_RESULT_NUMBER, x, NULL);
            ++*metrics;
        } else if (json_is_string(v)) {
            st = add(c, name, ML_RESULT_TEXT, 0, json_string_value(v));
        } else if (json_is_array(v)) {
            st = check_table(c, name, v);
        } else if (json_is_object(v) && depth < 2) {
            st = walk_group(c, name, v, depth + 1, metrics);
        } else {
            return fail(c, "'%s' is not a number, null, text or table", name);
        }
        if (st != ML_OK)
            return st;
    }
    return ML_OK;
}

static ml_status walk_input(ctx *c, const json_t *in)
{
    if (!json_is_object(in))
        return fail(c, "no \"input\" object");
    const json_t *path = json_object_get(in, "path"), *kind = json_object_get(in, "kind");
    const json_t *rate = json_object_get(in, "sample_rate_hz"), *ch = json_object_get(in, "channels");
    const json_t *fr = json_object_get(in, "frames");
    double x;
    if (!json_is_string(path))
        return fail(c, "input.path is not a string");
    const char *ks = json_string_value(kind);
    if (ks == NULL || (strcmp(ks, "audio") != 0 && strcmp(ks, "if") != 0 && strcmp(ks, "iq") != 0))
        return fail(c, "input.kind is not audio, if or iq");
    const json_t *one = json_object_get(in, "channel");
    if (!finite_number(rate, &x) || !(x > 0) || x > 2147483647.0)
        return fail(c, "input.sample_rate_hz is not a rate in Hz, 0 < rate <= 2147483647");
    if (!json_is_integer(ch) || !whole_number(ch, 1, 65535))
        return fail(c, "input.channels is not an integer 1..65535");
    if (!json_is_integer(fr) || !whole_number(fr, 0, ML_RESULT_MAX_MAGNITUDE))
        return fail(c, "input.frames is not an integer 0..1e15");
    if (one != NULL && !whole_number(one, 1, (double)json_integer_value(ch)))
        return fail(c, "input.channel is not a channel number 1..input.channels");
    const char *k;
    const json_t *v;
    json_object_foreach((json_t *)in, k, v) {
        char name[ML_RESULT_NAME_MAX];
        if (!join(name, "input", k))
            return fail(c, "bad or too long name in input");
        ml_status st;
        if (json_is_string(v))
            st = add(c, name, ML_RESULT_TEXT, 0, json_string_value(v));
        else if (finite_number(v, &x))
            st = add(c, name, ML_RESULT_NUMBER, x, NULL);
        else if (json_is_null(v))
            st = add(c, name, ML_RESULT_NULL, 0, NULL);
        else
            return fail(c, "'%s' is not a number within +-1e15, text or null", name);
        if (st != ML_OK)
            return st;
    }
    return ML_OK;
}

static ml_status walk(ctx *c, const json_t *root)
{
    if (!json_is_object(root))
        return fail(c, "not a modlens JSON report: the JSON text is %s, not an object",
                    json_is_array(root) ? "an array" : "a single value");
    ml_status st = walk_input(c, json_object_get(root, "input"));
    if (st != ML_OK)
        return st;
    size_t metrics = 0;
    const char *k;
    const json_t *v;
    json_object_foreach((json_t *)root, k, v) {
        if (strcmp(k, "input") == 0)
            continue;
        if (strcmp(k, "analysis") == 0 || strcmp(k, "limits") == 0) {
            if (!json_is_string(v))
                return fail(c, "\"%s\" is not text", k);
        } else if (strcmp(k, "notes") == 0) {
            size_t i;
            const json_t *n;
            if (!json_is_array(v))
                return fail(c, "\"notes\" is not an array");
            json_array_foreach(v, i, n) {
                if (!json_is_string(n))
                    return fail(c, "note %zu is not text", i + 1);
            }
        } else if (strcmp(k, "checks") == 0) {
            size_t i;
            const json_t *ck;
            if (!json_is_array(v))
                return fail(c, "\"checks\" is not an array");
            json_array_foreach(v, i, ck) {
                if (!json_is_object(ck) || !json_is_string(json_object_get(ck, "metric"))
                    || !json_is_boolean(json_object_get(ck, "pass")))
                    return fail(c, "check %zu has no metric name or pass/fail", i + 1);
            }
        } else if (strcmp(k, "card_limited") == 0) {
            /* the names of the figures a card profile limits: card_limited.1, .2, ... as text */
            size_t i;
            const json_t *n;
            if (!json_is_array(v))
                return fail(c, "\"card_limited\" is not an array");
            json_array_foreach(v, i, n) {
                char name[ML_RESULT_NAME_MAX];
                const char *t = json_string_value(n);
                if (t == NULL || json_string_length(n) == 0 || json_string_length(n) >= 64
                    || strlen(t) != json_string_length(n))
                    return fail(c, "card_limited entry %zu is not a metric name", i + 1);
                snprintf(name, sizeof name, "card_limited.%zu", i + 1);
                if ((st = add(c, name, ML_RESULT_TEXT, 0, t)) != ML_OK)
                    return st;
            }
        } else if (strcmp(k, "verdict") == 0) {
            const char *s = json_string_value(v);
            if (s == NULL
                || (strcmp(s, "pass") != 0 && strcmp(s, "fail") != 0 && strcmp(s, "unchecked") != 0
                    && strcmp(s, "undecided") != 0))
                return fail(c, "\"verdict\" is not pass, fail, undecided or unchecked");
            snprintf(c->r->verdict, sizeof c->r->verdict, "%s", s);
        } else if (json_is_object(v)) {
            if ((st = walk_group(c, k, v, 1, &metrics)) != ML_OK)
                return st;
        } else {
            char name[ML_RESULT_NAME_MAX];
            return fail(c, "top-level \"%s\" is not a metric group", join(name, "", k) ? name : "?");
        }
    }
    if (metrics == 0)
        return fail(c, "no metrics in the report");
    return ML_OK;
}

ml_status ml_result_parse(const char *data, size_t len, ml_result **out, char *err, size_t errlen)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (err != NULL && errlen > 0)
        err[0] = '\0';
    if (data == NULL && len > 0)
        return ML_EINVAL;
    ml_result *r = calloc(1, sizeof *r);
    if (r == NULL)
        return ML_ENOMEM;
    ctx c = {r, err, errlen};
    json_error_t je;
    /* JSON_DECODE_INT_AS_REAL is not used: frames and channels must stay integers */
    json_t *root = json_loadb(data ? data : "", len, JSON_REJECT_DUPLICATES, &je);
    ml_status st;
    if (root == NULL)
        st = fail(&c, "not a modlens JSON report: line %d, column %d: %s", je.line, je.column, je.text);
    else
        st = walk(&c, root);
    json_decref(root);
    if (st != ML_OK) {
        if (st == ML_ENOMEM)
            ml_say(err, errlen, "out of memory");
        ml_result_destroy(r);
        return st;
    }
    *out = r;
    return ML_OK;
}

ml_status ml_result_read_file(const char *path, ml_result **out, char *err, size_t errlen)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (path == NULL)
        return ML_EINVAL;
    struct stat st;
    if (stat(path, &st) != 0) {
        ml_say(err, errlen, "%s", strerror(errno));
        return ML_EIO;
    }
    if (S_ISDIR(st.st_mode)) {
        ml_say(err, errlen, "is a directory");
        return ML_EIO;
    }
    if (!S_ISREG(st.st_mode)) {
        ml_say(err, errlen, "not a regular file");
        return ML_EIO;
    }
    if (st.st_size == 0) {
        ml_say(err, errlen, "the file is empty");
        return ML_EFORMAT;
    }
    if ((uintmax_t)st.st_size > ML_RESULT_MAX_BYTES) {
        ml_say(err, errlen, "larger than %zu MiB: not a saved report", ML_RESULT_MAX_BYTES >> 20);
        return ML_EFORMAT;
    }
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        ml_say(err, errlen, "%s", strerror(errno));
        return ML_EIO;
    }
    size_t n = (size_t)st.st_size;
    char *buf = malloc(n);
    if (buf == NULL) {
        fclose(f);
        ml_say(err, errlen, "out of memory");
        return ML_ENOMEM;
    }
    size_t got = fread(buf, 1, n, f);
    bool bad = ferror(f) != 0;
    fclose(f);
    if (bad) {
        free(buf);
        ml_say(err, errlen, "read error");
        return ML_EIO;
    }
    ml_status s = ml_result_parse(buf, got, out, err, errlen);
    free(buf);
    return s;
}

void ml_result_destroy(ml_result *r)
{
    if (r == NULL)
        return;
    free(r->items);
    free(r);
}

size_t ml_result_count(const ml_result *r)
{
    return r ? r->n : 0;
}

const ml_result_item *ml_result_item_at(const ml_result *r, size_t i)
{
    return r && i < r->n ? &r->items[i] : NULL;
}

const ml_result_item *ml_result_find(const ml_result *r, const char *name)
{
    for (size_t i = 0; r && name && i < r->n; i++)
        if (strcmp(r->items[i].name, name) == 0)
            return &r->items[i];
    return NULL;
}

const char *ml_result_verdict(const ml_result *r)
{
    return r ? r->verdict : "";
}
