/* Card profiles and calibrations as JSON files (see io/cardfile.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "io/cardfile.h"

#include <jansson.h>
#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "io/printable.h"
#include "io/smallfile.h"

/* ---- writing ------------------------------------------------------------------------------ */

/* A number rounded to `decimals` places, null for NAN */
static json_t *num(double v, int decimals)
{
    if (!isfinite(v))
        return json_null();
    const double s = pow(10.0, decimals);
    const double r = round(v * s) / s;
    return json_real(isfinite(r) ? (r == 0 ? 0.0 : r) : v);
}

static const char *bound_text(ml_fig_state s, double v)
{
    return !isfinite(v) ? "" : s == ML_FIG_UPPER ? "upper" : s == ML_FIG_LOWER ? "lower" : "";
}

static ml_status dump(FILE *f, json_t *root)
{
    if (root == NULL)
        return ML_ENOMEM;
    const int rc = json_dumpf(root, f, JSON_INDENT(2) | JSON_REAL_PRECISION(12));
    json_decref(root);
    if (rc != 0 || fputc('\n', f) == EOF || ferror(f))
        return ML_EIO;
    return ML_OK;
}

ml_status ml_card_profile_write(FILE *f, const ml_card_profile *p, const char *recording)
{
    if (f == NULL || p == NULL)
        return ML_EINVAL;
    json_t *root = json_object();
    json_object_set_new(root, "modlens_card_profile", json_integer(1));
    json_object_set_new(root, "recording", json_string(recording ? recording : ""));
    json_object_set_new(root, "sample_rate_hz", num(p->rate_hz, 3));
    json_object_set_new(root, "channels", json_integer(p->channels));
    json_object_set_new(root, "test_tone_hz", num(p->test_hz, 3));
    json_object_set_new(root, "test_level_dbfs", num(p->test_level_dbfs, 3));
    json_object_set_new(root, "response_level_dbfs", num(p->response_level_dbfs, 3));
    json_object_set_new(root, "band_lo_hz", num(p->band_lo_hz, 3));
    json_object_set_new(root, "band_hi_hz", num(p->band_hi_hz, 3));
    json_object_set_new(root, "rate_error_ppm", num(p->rate_error_ppm, 3));
    json_object_set_new(root, "gain_difference_db", num(p->gain_difference_db, 4));
    json_t *hz = json_array(), *chans = json_array();
    for (size_t k = 0; k < p->npoints; k++)
        json_array_append_new(hz, num(p->response_hz[k], 3));
    json_object_set_new(root, "response_hz", hz);
    for (int c = 0; c < p->channels && c < ML_CARD_MAX_CHANNELS; c++) {
        const ml_card_channel *ch = &p->ch[c];
        json_t *o = json_object(), *r = json_array();
        json_object_set_new(o, "level_dbfs", num(ch->level_dbfs, 3));
        json_object_set_new(o, "thd_db", num(ch->thd_db, 2));
        json_object_set_new(o, "thd_bound", json_string(bound_text(ch->thd_state, ch->thd_db)));
        json_object_set_new(o, "thdn_db", num(ch->thdn_db, 2));
        json_object_set_new(o, "thdn_bound", json_string(bound_text(ch->thdn_state, ch->thdn_db)));
        json_object_set_new(o, "noise_dbfs", num(ch->noise_dbfs, 2));
        json_object_set_new(o, "noise_a_dbfs", num(ch->noise_a_dbfs, 2));
        json_object_set_new(o, "noise_468_dbfs", num(ch->noise_468_dbfs, 2));
        json_object_set_new(o, "hum_dbfs", num(ch->hum_dbfs, 2));
        json_object_set_new(o, "crosstalk_db", num(ch->crosstalk_db, 2));
        json_object_set_new(o, "crosstalk_bound",
                            json_string(bound_text(ch->crosstalk_state, ch->crosstalk_db)));
        for (size_t k = 0; k < p->npoints; k++)
            json_array_append_new(r, num(ch->response_db[k], 4));
        json_object_set_new(o, "response_db", r);
        json_array_append_new(chans, o);
    }
    json_object_set_new(root, "channel", chans);
    return dump(f, root);
}

ml_status ml_calibration_write(FILE *f, const ml_calibration *c)
{
    if (f == NULL || c == NULL)
        return ML_EINVAL;
    json_t *root = json_object();
    json_object_set_new(root, "modlens_calibration", json_integer(1));
    json_object_set_new(root, "full_scale_dbu", num(c->cal.full_scale_dbu, 4));
    json_object_set_new(root, "tone_vrms", num(c->tone_vrms, 9));
    json_object_set_new(root, "tone_dbfs", num(c->tone_dbfs, 4));
    json_object_set_new(root, "tone_hz", num(c->tone_hz, 3));
    json_object_set_new(root, "channel", json_integer(c->channel));
    json_object_set_new(root, "recording", json_string(c->recording));
    return dump(f, root);
}

/* ---- reading ------------------------------------------------------------------------------ */

typedef struct {
    char *err;
    size_t errlen;
} rd;

/* One printable line into err. */
static ml_status fail(rd *r, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static ml_status fail(rd *r, const char *fmt, ...)
{
    if (r->err != NULL && r->errlen > 0) {
        char line[640];
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(line, sizeof line, fmt, ap);
        va_end(ap);
        ml_printable(r->err, r->errlen, line);
    }
    return ML_EFORMAT;
}

/* The members of o are exactly names[n] (each present once: jansson refuses duplicates). */
static ml_status members(rd *r, const json_t *o, const char *where, const char *const *names, size_t n)
{
    const char *k;
    const json_t *v;
    json_object_foreach((json_t *)o, k, v)
    {
        size_t i = 0;
        while (i < n && strcmp(k, names[i]) != 0)
            i++;
        if (i == n)
            return fail(r, "key '%s%.60s': not a member of this file", where, k);
    }
    for (size_t i = 0; i < n; i++)
        if (json_object_get(o, names[i]) == NULL)
            return fail(r, "key '%s%s': missing", where, names[i]);
    return ML_OK;
}

/* A number lo..hi (or null when nullable: NAN) at o[key]. */
static ml_status number(rd *r, const json_t *o, const char *where, const char *key, double lo, double hi,
                        bool nullable, double *out)
{
    const json_t *v = json_object_get(o, key);
    if (nullable && json_is_null(v)) {
        *out = NAN;
        return ML_OK;
    }
    if (!json_is_number(v))
        return fail(r, "key '%s%s': not a number%s", where, key, nullable ? " or null" : "");
    const double x = json_number_value(v);
    if (!isfinite(x) || x < lo || x > hi)
        return fail(r, "key '%s%s': %.6g is out of range %g..%g", where, key, x, lo, hi);
    *out = x;
    return ML_OK;
}

static ml_status integer(rd *r, const json_t *o, const char *key, long lo, long hi, long *out)
{
    const json_t *v = json_object_get(o, key);
    if (!json_is_integer(v) || json_integer_value(v) < lo || json_integer_value(v) > hi)
        return fail(r, "key '%s': not an integer %ld..%ld", key, lo, hi);
    *out = (long)json_integer_value(v);
    return ML_OK;
}

static ml_status text(rd *r, const json_t *o, const char *key, char *out, size_t len)
{
    const json_t *v = json_object_get(o, key);
    if (!json_is_string(v))
        return fail(r, "key '%s': not text", key);
    if (json_string_length(v) >= ML_CARDFILE_TEXT_MAX
        || memchr(json_string_value(v), '\0', json_string_length(v)))
        return fail(r, "key '%s': longer than %d bytes or holding a NUL", key, ML_CARDFILE_TEXT_MAX - 1);
    if (out != NULL && len > 0)
        snprintf(out, len, "%s", json_string_value(v));
    return ML_OK;
}

/* A bound text; "" is required when the value is NAN. */
static ml_status bound(rd *r, const json_t *o, const char *where, const char *key, double value,
                       ml_fig_state *s)
{
    const char *t = json_string_value(json_object_get(o, key));
    if (t == NULL || (strcmp(t, "") != 0 && strcmp(t, "upper") != 0 && strcmp(t, "lower") != 0))
        return fail(r, "key '%s%s': not \"\", \"upper\" or \"lower\"", where, key);
    if (isnan(value) && t[0] != '\0')
        return fail(r, "key '%s%s': a bound of a value that is null", where, key);
    *s = isnan(value)  ? ML_FIG_NONE
         : t[0] == 'u' ? ML_FIG_UPPER
         : t[0] == 'l' ? ML_FIG_LOWER
                       : ML_FIG_MEASURED;
    return ML_OK;
}

static ml_status channel(rd *r, const json_t *o, int c, size_t npoints, ml_card_channel *ch)
{
    static const char *const names[] = {"level_dbfs", "thd_db",       "thd_bound",       "thdn_db",
                                        "thdn_bound", "noise_dbfs",   "noise_a_dbfs",    "noise_468_dbfs",
                                        "hum_dbfs",   "crosstalk_db", "crosstalk_bound", "response_db"};
    char where[32];
    snprintf(where, sizeof where, "channel[%d].", c + 1);
    if (!json_is_object(o))
        return fail(r, "key 'channel[%d]': not an object", c + 1);
    ml_status st = members(r, o, where, names, sizeof names / sizeof *names);
    const struct {
        const char *key;
        double hi;
        double *out;
    } levels[] = {
        {"level_dbfs", 20, &ch->level_dbfs},     {"noise_dbfs", 20, &ch->noise_dbfs},
        {"noise_a_dbfs", 20, &ch->noise_a_dbfs}, {"noise_468_dbfs", 20, &ch->noise_468_dbfs},
        {"hum_dbfs", 20, &ch->hum_dbfs},         {"thd_db", 100, &ch->thd_db},
        {"thdn_db", 100, &ch->thdn_db},          {"crosstalk_db", 100, &ch->crosstalk_db},
    };
    for (size_t i = 0; i < sizeof levels / sizeof *levels && st == ML_OK; i++)
        st = number(r, o, where, levels[i].key, -400, levels[i].hi, true, levels[i].out);
    if (st == ML_OK)
        st = bound(r, o, where, "thd_bound", ch->thd_db, &ch->thd_state);
    if (st == ML_OK)
        st = bound(r, o, where, "thdn_bound", ch->thdn_db, &ch->thdn_state);
    if (st == ML_OK)
        st = bound(r, o, where, "crosstalk_bound", ch->crosstalk_db, &ch->crosstalk_state);
    if (st != ML_OK)
        return st;
    const json_t *a = json_object_get(o, "response_db");
    if (!json_is_array(a) || json_array_size(a) != npoints)
        return fail(r, "key '%sresponse_db': not an array of %zu entries (one per response_hz)", where,
                    npoints);
    for (size_t k = 0; k < npoints; k++) {
        const json_t *v = json_array_get(a, k);
        const double x = json_is_number(v) ? json_number_value(v) : NAN;
        if (json_is_null(v)) {
            ch->response_db[k] = NAN;
            continue;
        }
        if (!json_is_number(v) || !(x >= -200 && x <= 200))
            return fail(r, "key '%sresponse_db[%zu]': not a number -200..200 or null", where, k + 1);
        ch->response_db[k] = x;
    }
    for (size_t k = npoints; k < ML_CARD_MAX_POINTS; k++)
        ch->response_db[k] = NAN;
    return ML_OK;
}

static ml_status profile(rd *r, const json_t *root, ml_card_profile *p, char *recording, size_t reclen)
{
    static const char *const names[] = {
        "modlens_card_profile", "recording",           "sample_rate_hz", "channels",   "test_tone_hz",
        "test_level_dbfs",      "response_level_dbfs", "band_lo_hz",     "band_hi_hz", "rate_error_ppm",
        "gain_difference_db",   "response_hz",         "channel"};
    if (!json_is_object(root))
        return fail(r, "not a card profile (a JSON object)");
    long version, channels;
    ml_status st = members(r, root, "", names, sizeof names / sizeof *names);
    if (st == ML_OK && (st = integer(r, root, "modlens_card_profile", 1, 1, &version)) == ML_OK)
        st = text(r, root, "recording", recording, reclen);
    if (st == ML_OK)
        st = number(r, root, "", "sample_rate_hz", ML_CARD_MIN_RATE_HZ, ML_CARD_MAX_RATE_HZ, false,
                    &p->rate_hz);
    if (st == ML_OK && (st = integer(r, root, "channels", 1, ML_CARD_MAX_CHANNELS, &channels)) == ML_OK)
        p->channels = (int)channels;
    const double nyq = p->rate_hz / 2;
    if (st == ML_OK)
        st = number(r, root, "", "test_tone_hz", 1e-3, nyq, false, &p->test_hz);
    if (st == ML_OK)
        st = number(r, root, "", "test_level_dbfs", -200, 0, false, &p->test_level_dbfs);
    if (st == ML_OK)
        st = number(r, root, "", "response_level_dbfs", -200, 0, false, &p->response_level_dbfs);
    if (st == ML_OK)
        st = number(r, root, "", "band_lo_hz", 0, nyq, false, &p->band_lo_hz);
    if (st == ML_OK)
        st = number(r, root, "", "band_hi_hz", 0, nyq, false, &p->band_hi_hz);
    if (st == ML_OK && !(p->band_hi_hz > p->band_lo_hz))
        return fail(r, "key 'band_hi_hz': not above band_lo_hz");
    if (st == ML_OK)
        st = number(r, root, "", "rate_error_ppm", -1e5, 1e5, true, &p->rate_error_ppm);
    if (st == ML_OK)
        st = number(r, root, "", "gain_difference_db", -200, 200, true, &p->gain_difference_db);
    if (st != ML_OK)
        return st;
    const json_t *hz = json_object_get(root, "response_hz");
    if (!json_is_array(hz) || json_array_size(hz) > ML_CARD_MAX_POINTS)
        return fail(r, "key 'response_hz': not an array of at most %d frequencies", ML_CARD_MAX_POINTS);
    p->npoints = json_array_size(hz);
    for (size_t k = 0; k < p->npoints; k++) {
        const json_t *v = json_array_get(hz, k);
        const double x = json_is_number(v) ? json_number_value(v) : NAN;
        if (!(x > 0 && x < nyq) || (k > 0 && !(x > p->response_hz[k - 1])))
            return fail(r, "key 'response_hz[%zu]': not a frequency 0 < f < %g Hz above the one before",
                        k + 1, nyq);
        p->response_hz[k] = x;
    }
    const json_t *chans = json_object_get(root, "channel");
    if (!json_is_array(chans) || json_array_size(chans) != (size_t)p->channels)
        return fail(r, "key 'channel': not an array of %d objects (one per channel)", p->channels);
    for (int c = 0; c < p->channels && st == ML_OK; c++)
        st = channel(r, json_array_get(chans, (size_t)c), c, p->npoints, &p->ch[c]);
    return st;
}

static ml_status calibration(rd *r, const json_t *root, ml_calibration *c)
{
    static const char *const names[] = {
        "modlens_calibration", "full_scale_dbu", "tone_vrms", "tone_dbfs", "tone_hz", "channel", "recording"};
    if (!json_is_object(root))
        return fail(r, "not a calibration (a JSON object)");
    long version, channel;
    ml_status st = members(r, root, "", names, sizeof names / sizeof *names);
    if (st == ML_OK)
        st = integer(r, root, "modlens_calibration", 1, 1, &version);
    if (st == ML_OK)
        st = number(r, root, "", "full_scale_dbu", ML_LEVEL_CAL_MIN_DBU, ML_LEVEL_CAL_MAX_DBU, false,
                    &c->cal.full_scale_dbu);
    if (st == ML_OK)
        st = number(r, root, "", "tone_vrms", 1e-12, 1000, false, &c->tone_vrms);
    if (st == ML_OK)
        st = number(r, root, "", "tone_dbfs", -200, 20, false, &c->tone_dbfs);
    if (st == ML_OK)
        st = number(r, root, "", "tone_hz", 1e-6, 1e6, false, &c->tone_hz);
    if (st == ML_OK && (st = integer(r, root, "channel", 1, 64, &channel)) == ML_OK)
        c->channel = (int)channel;
    if (st == ML_OK)
        st = text(r, root, "recording", c->recording, sizeof c->recording);
    if (st != ML_OK)
        return st;
    /* dsp/levels.h: full scale = 20 lg(V / V0) - L */
    if (fabs(c->cal.full_scale_dbu - (ml_vrms_to_dbu(c->tone_vrms) - c->tone_dbfs)) > 0.01)
        return fail(r, "key 'full_scale_dbu': %.4f does not follow from tone_vrms and tone_dbfs (%.4f)",
                    c->cal.full_scale_dbu, ml_vrms_to_dbu(c->tone_vrms) - c->tone_dbfs);
    return ML_OK;
}

/* Parses with jansson (no duplicate keys), then checks through fn. */
static ml_status parse(const char *data, size_t len, char *err, size_t errlen, void *out, int which,
                       char *recording, size_t reclen)
{
    rd r = {err, errlen};
    if (err != NULL && errlen > 0)
        err[0] = '\0';
    if (data == NULL && len > 0)
        return ML_EINVAL;
    json_error_t je;
    json_t *root = json_loadb(data ? data : "", len, JSON_REJECT_DUPLICATES, &je);
    if (root == NULL)
        return fail(&r, "not JSON: line %d, column %d: %s", je.line, je.column, je.text);
    const ml_status st = which == 0 ? profile(&r, root, out, recording, reclen) : calibration(&r, root, out);
    json_decref(root);
    return st;
}

ml_status ml_card_profile_parse(const char *data, size_t len, ml_card_profile *p, char *recording,
                                size_t reclen, char *err, size_t errlen)
{
    if (p == NULL)
        return ML_EINVAL;
    memset(p, 0, sizeof *p);
    const ml_status st = parse(data, len, err, errlen, p, 0, recording, reclen);
    if (st != ML_OK)
        memset(p, 0, sizeof *p);
    return st;
}

ml_status ml_calibration_parse(const char *data, size_t len, ml_calibration *c, char *err, size_t errlen)
{
    if (c == NULL)
        return ML_EINVAL;
    memset(c, 0, sizeof *c);
    return parse(data, len, err, errlen, c, 1, NULL, 0);
}

/* The whole file into a new buffer (*data, *len): a regular file of 1 .. MAX bytes. */
static ml_status slurp(const char *path, const char *what, char **data, size_t *len, char *err, size_t errlen)
{
    rd r = {err, errlen};
    *data = NULL;
    int fd;
    size_t size;
    ml_status s = ml_smallfile_open(path, what, ML_CARDFILE_MAX_BYTES, "1 MiB", false, &fd, &size, err, errlen);
    if (s == ML_OK && size == 0) {
        close(fd);
        s = fail(&r, "the file is empty: not a %s", what);
    }
    if (s != ML_OK)
        return s;
    return ml_smallfile_read(fd, size, data, len);
}

ml_status ml_card_profile_read(const char *path, ml_card_profile *p, char *recording, size_t reclen,
                               char *err, size_t errlen)
{
    if (path == NULL || p == NULL)
        return ML_EINVAL;
    char *data;
    size_t len;
    ml_status st = slurp(path, "card profile", &data, &len, err, errlen);
    if (st == ML_OK)
        st = ml_card_profile_parse(data, len, p, recording, reclen, err, errlen);
    free(data);
    return st;
}

ml_status ml_calibration_read(const char *path, ml_calibration *c, char *err, size_t errlen)
{
    if (path == NULL || c == NULL)
        return ML_EINVAL;
    char *data;
    size_t len;
    ml_status st = slurp(path, "calibration", &data, &len, err, errlen);
    if (st == ML_OK)
        st = ml_calibration_parse(data, len, c, err, errlen);
    free(data);
    return st;
}
