/* Reads back a JSON measurement report (io/report_json.c writes it) for comparisons, through the
 * strict saved-result reader (io/result_read.h, the one that is fuzzed): the metrics with their
 * uncertainties, reasons, qualifiers and bounds, and the settings in force.
 * SPDX-License-Identifier: MIT
 */
#include <string.h>

#include "io/compare.h"
#include "io/result_read.h"

/* Copies src into dst[n], cut to fit. */
static void copy(char *dst, size_t n, const char *src)
{
    size_t k = strlen(src);
    if (k >= n)
        k = n - 1;
    memcpy(dst, src, k);
    dst[k] = '\0';
}

static bool starts(const char *s, const char *prefix)
{
    return strncmp(s, prefix, strlen(prefix)) == 0;
}

ml_status ml_report_read_json(const char *path, ml_report *r, char *err, size_t errlen)
{
    memset(r, 0, sizeof *r);
    ml_result *res = NULL;
    ml_status st = ml_result_read_file(path, &res, err, errlen);
    if (st != ML_OK)
        return st;
    copy(r->path, sizeof r->path, path);
    const size_t n = ml_result_count(res);
    for (size_t i = 0; i < n; i++) { /* the input description and the metrics */
        const ml_result_item *it = ml_result_item_at(res, i);
        const char *name = it->name;
        const double v = it->value;
        if (starts(name, "input.")) {
            const char *k = name + strlen("input.");
            if (it->type == ML_RESULT_TEXT) {
                if (strcmp(k, "path") == 0) copy(r->path, sizeof r->path, it->text);
                else if (strcmp(k, "kind") == 0) copy(r->kind, sizeof r->kind, it->text);
                else if (strcmp(k, "kind_reason") == 0) copy(r->kind_reason, sizeof r->kind_reason, it->text);
                else if (strcmp(k, "format") == 0) copy(r->format, sizeof r->format, it->text);
            } else if (it->type == ML_RESULT_NUMBER) {
                if (strcmp(k, "sample_rate_hz") == 0) r->sample_rate_hz = v;
                else if (strcmp(k, "channels") == 0) r->channels = (int)v;
                else if (strcmp(k, "channel") == 0) r->channel = (int)v;
                else if (strcmp(k, "frames") == 0) r->frames = (int64_t)v;
                else if (strcmp(k, "duration_s") == 0) r->duration_s = v;
                else if (strcmp(k, "start_s") == 0) r->start_s = v;
                else if (strcmp(k, "analysed_s") == 0) r->analysed_s = v;
            }
        } else if (starts(name, "uncertainty_method.")) {
            if (strcmp(name, "uncertainty_method.blocks") == 0) r->u_blocks = (size_t)v;
            else if (strcmp(name, "uncertainty_method.block_s") == 0) r->u_block_s = v;
        } else if (strcmp(name, "settings.in_force") == 0 && it->type == ML_RESULT_TEXT) {
            copy(r->settings, sizeof r->settings, it->text);
        } else if (starts(name, "card_limited.")) {
            r->card_checked = true;
            if (it->type == ML_RESULT_TEXT && r->ncard_limited < ML_REPORT_MAX_CARD)
                copy(r->card_limited[r->ncard_limited++], sizeof r->card_limited[0], it->text);
        } else if (!starts(name, "uncertainty.") && !starts(name, "reasons.") && !starts(name, "qualifiers.")
                   && !starts(name, "bounds.") && !starts(name, "settings.")
                   && strlen(name) < sizeof r->metrics[0].name) {
            if (it->type == ML_RESULT_NUMBER) ml_report_add(r, name, "", 3, v);
            else if (it->type == ML_RESULT_NULL) ml_report_add_missing(r, name, "", 3);
            else ml_report_add_text(r, name, it->text);
        }
    }
    for (size_t i = 0; i < r->nmetrics; i++) { /* then each metric's interval and why, where saved */
        ml_metric *m = &r->metrics[i];
        char key[ML_RESULT_NAME_MAX];
        snprintf(key, sizeof key, "uncertainty.%s", m->name);
        const ml_result_item *u = ml_result_find(res, key);
        if (u && u->type == ML_RESULT_NUMBER) {
            m->has_u = true;
            m->u = u->value;
        }
        snprintf(key, sizeof key, "reasons.%s", m->name);
        if ((u = ml_result_find(res, key)) != NULL && u->type == ML_RESULT_TEXT && !m->valid)
            copy(m->reason, sizeof m->reason, u->text);
        snprintf(key, sizeof key, "qualifiers.%s", m->name);
        if ((u = ml_result_find(res, key)) != NULL && u->type == ML_RESULT_TEXT && m->valid)
            copy(m->qualifier, sizeof m->qualifier, u->text);
        snprintf(key, sizeof key, "bounds.%s", m->name);
        if ((u = ml_result_find(res, key)) != NULL && u->type == ML_RESULT_TEXT && m->valid)
            m->bound = strcmp(u->text, "upper") == 0 ? ML_BOUND_UPPER
                       : strcmp(u->text, "lower") == 0 ? ML_BOUND_LOWER
                                                       : ML_BOUND_NONE;
    }
    ml_result_destroy(res);
    return ML_OK;
}
