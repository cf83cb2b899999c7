/* Saved reports read back (see saved.h).
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/saved.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analyzer/registry.h"
#include "io/compare.h"
#include "io/printable.h"

static ml_status refuse(char *err, size_t errlen, const char *name, const char *problem)
{
    char shown[ML_RESULT_NAME_MAX * 4];
    ml_printable(shown, sizeof shown, name);
    snprintf(err, errlen, "key '%s': %s", shown, problem);
    return ML_EFORMAT;
}

ml_status ml_saved_check(const ml_result *r, char *err, size_t errlen)
{
    const size_t n = ml_result_count(r);
    for (size_t i = 0; i < n; i++) {
        const ml_result_item *it = ml_result_item_at(r, i);
        const char *name = it->name;
        if (strncmp(name, "uncertainty.", 12) == 0) {
            if (it->type == ML_RESULT_TEXT || (it->type == ML_RESULT_NUMBER && !(it->value >= 0)))
                return refuse(err, errlen, name, "an uncertainty is a number >= 0 or null");
            continue;
        }
        const ml_metric_def *d = ml_registry_lookup(name, NULL);
        if (d == NULL || strcmp(d->name, name) != 0)
            continue; /* text fields, input, and metrics this version does not know */
        if (it->type == ML_RESULT_TEXT)
            return refuse(err, errlen, name, "text where the metric is a number (or null)");
        const bool count = d->unit[0] == '\0' && d->decimals == 0;
        if (count && it->type == ML_RESULT_NUMBER && !(it->value >= 0 && it->value == floor(it->value)))
            return refuse(err, errlen, name, "a count must be a whole number >= 0");
    }
    return ML_OK;
}

ml_status ml_saved_read(const char *path, ml_report *rep, char *err, size_t errlen)
{
    ml_result *res = NULL;
    ml_status st = ml_result_read_file(path, &res, err, errlen);
    if (st != ML_OK)
        return st;
    st = ml_saved_check(res, err, errlen);
    ml_result_destroy(res);
    if (st != ML_OK)
        return st;
    if ((st = ml_report_read_json(path, rep, err, errlen)) != ML_OK)
        return st;
    /* the saved texts come from a file: printable from here on (io/printable.h) */
    char tmp[sizeof rep->path];
    ml_printable(tmp, sizeof tmp, rep->path);
    memcpy(rep->path, tmp, sizeof tmp);
    ml_printable(tmp, sizeof rep->kind_reason, rep->kind_reason);
    memcpy(rep->kind_reason, tmp, sizeof rep->kind_reason);
    ml_printable(tmp, sizeof rep->format, rep->format);
    memcpy(rep->format, tmp, sizeof rep->format);
    for (size_t i = 0; i < rep->ntexts; i++) {
        ml_printable(tmp, sizeof rep->texts[i].value, rep->texts[i].value);
        memcpy(rep->texts[i].value, tmp, sizeof rep->texts[i].value);
    }
    for (size_t i = 0; i < rep->nmetrics; i++) {
        const ml_metric_def *d = ml_registry_lookup(rep->metrics[i].name, NULL);
        if (d && strcmp(d->name, rep->metrics[i].name) == 0) {
            rep->metrics[i].unit = d->unit;
            rep->metrics[i].decimals = d->decimals;
        }
    }
    return ML_OK;
}
