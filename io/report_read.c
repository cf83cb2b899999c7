/* Reads back a JSON measurement report (io/report_json.c writes it) for comparisons.
 * SPDX-License-Identifier: MIT
 */
#include <errno.h>
#include <jansson.h>
#include <string.h>

#include "io/compare.h"

static bool skipped(const char *key)
{
    return strcmp(key, "input") == 0 || strcmp(key, "checks") == 0 || strcmp(key, "uncertainty") == 0
           || strcmp(key, "uncertainty_method") == 0 || strcmp(key, "notes") == 0;
}

/* Every number or null below obj becomes a metric named prefix.key... */
static void walk(json_t *obj, const char *prefix, ml_report *r)
{
    const char *key;
    json_t *v;
    json_object_foreach(obj, key, v)
    {
        if (prefix[0] == '\0' && skipped(key))
            continue;
        char name[64];
        if (snprintf(name, sizeof name, "%s%s%s", prefix, prefix[0] ? "." : "", key) >= (int)sizeof name)
            continue;
        if (json_is_object(v))
            walk(v, name, r);
        else if (json_is_number(v))
            ml_report_add(r, name, "", 3, json_number_value(v));
        else if (json_is_null(v))
            ml_report_add_missing(r, name, "", 3);
        else if (json_is_string(v) && prefix[0])
            ml_report_add_text(r, name, json_string_value(v));
    }
}

static json_t *at(json_t *root, const char *dotted)
{
    char buf[64];
    snprintf(buf, sizeof buf, "%s", dotted);
    json_t *v = root;
    for (char *tok = strtok(buf, "."); tok && v; tok = strtok(NULL, "."))
        v = json_object_get(v, tok);
    return v;
}

ml_status ml_report_read_json(const char *path, ml_report *r, char *err, size_t errlen)
{
    memset(r, 0, sizeof *r);
    FILE *f = fopen(path, "r");
    if (f == NULL) {
        snprintf(err, errlen, "%s", strerror(errno));
        return ML_EIO;
    }
    json_error_t je;
    json_t *root = json_loadf(f, 0, &je);
    fclose(f);
    if (root == NULL) {
        snprintf(err, errlen, "not a JSON report: line %d: %s", je.line, je.text);
        return ML_EFORMAT;
    }
    json_t *in = json_object_get(root, "input");
    if (!json_is_object(root) || !json_is_object(in) || !json_is_string(json_object_get(in, "kind"))) {
        json_decref(root);
        snprintf(err, errlen, "not a modlens measurement report (no input description)");
        return ML_EFORMAT;
    }
    const char *s = json_string_value(json_object_get(in, "path"));
    snprintf(r->path, sizeof r->path, "%s", s ? s : path);
    snprintf(r->kind, sizeof r->kind, "%s", json_string_value(json_object_get(in, "kind")));
    s = json_string_value(json_object_get(in, "kind_reason"));
    snprintf(r->kind_reason, sizeof r->kind_reason, "%s", s ? s : "");
    s = json_string_value(json_object_get(in, "format"));
    snprintf(r->format, sizeof r->format, "%s", s ? s : "");
    s = json_string_value(json_object_get(root, "analysis"));
    snprintf(r->analysis, sizeof r->analysis, "%s", s ? s : "");
    r->sample_rate_hz = json_number_value(json_object_get(in, "sample_rate_hz"));
    r->channels = (int)json_integer_value(json_object_get(in, "channels"));
    r->channel = (int)json_integer_value(json_object_get(in, "channel"));
    r->frames = json_integer_value(json_object_get(in, "frames"));
    r->duration_s = json_number_value(json_object_get(in, "duration_s"));
    r->start_s = json_number_value(json_object_get(in, "start_s"));
    r->analysed_s = json_number_value(json_object_get(in, "analysed_s"));
    walk(root, "", r);
    json_t *uroot = json_object_get(root, "uncertainty");
    for (size_t i = 0; json_is_object(uroot) && i < r->nmetrics; i++) {
        json_t *u = at(uroot, r->metrics[i].name);
        if (json_is_number(u)) {
            r->metrics[i].has_u = true;
            r->metrics[i].u = json_number_value(u);
        }
    }
    json_t *um = json_object_get(root, "uncertainty_method");
    if (json_is_object(um)) {
        r->u_blocks = (size_t)json_integer_value(json_object_get(um, "blocks"));
        r->u_block_s = json_number_value(json_object_get(um, "block_s"));
    }
    json_decref(root);
    return ML_OK;
}
