/* Saved reports read back (see saved.h).
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/saved.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analyzer/registry.h"
#include "analyzer/values.h"
#include "dsp/levels.h"
#include "dsp/metrics.h"
#include "io/compare.h"
#include "io/printable.h"

/* A calibrated level (dBu, dBV) is a full-scale figure plus the full-scale level (at most
 * +-ML_LEVEL_CAL_MAX_DBU dBu; dBV lies 2.2 dB below dBu). */
#define CAL_DB (ML_LEVEL_CAL_MAX_DBU + 3.0)

/* Figures in % or Hz that may be negative: a signed offset or shift. */
static bool is_signed(const char *name)
{
    static const char *const names[] = {"audio.dc_offset_pct", "capture.dc_offset_pct",
                                        "modulation.carrier_shift_pct", "carrier.offset_hz",
                                        "spectrum.mask_worst_offset_hz", "carrier.frequency_hz"};
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++)
        if (strcmp(name, names[i]) == 0)
            return true;
    return false;
}

/* Why value v of the registered figure d cannot be (NULL when it can): the reportable range of
 * dB and ENOB figures (analyzer/values.h), the sign of ratios, times, frequencies, voltages and
 * powers, 100 % for a share of time. rate_hz: the input's sample rate (0: unknown). */
static const char *impossible(const ml_metric_def *d, double v, double rate_hz)
{
    const char *u = d->unit;
    if (!ml_values_in_range(d->name, v))
        return strcmp(u, "bits") == 0 ? "outside 0..32 bits, the range of an ENOB"
                                      : "beyond +-290 dB, the reportable range of a level or ratio";
    if ((strcmp(u, "dBu") == 0 || strcmp(u, "dBV") == 0) && !(fabs(v) <= ML_FIGURE_DB_LIMIT + CAL_DB))
        return "beyond the reportable range of a calibrated level";
    if (is_signed(d->name))
        return NULL;
    const bool nonneg = strcmp(u, "%") == 0 || strcmp(u, "Hz") == 0 || strcmp(u, "ms") == 0
                        || strcmp(u, "V") == 0 || strcmp(u, "W") == 0 || strcmp(d->name, "modulation.index") == 0
                        || strcmp(d->name, "modulation.index_spectral") == 0;
    if (nonneg && v < 0)
        return strcmp(u, "%") == 0    ? "negative: this percentage is a ratio or a share, never below 0"
               : strcmp(u, "Hz") == 0 ? "a negative frequency"
                                      : "negative, which this figure cannot be";
    if ((strcmp(d->name, "modulation.overmodulation_pct") == 0 || strcmp(d->name, "modulation.carrier_off_pct") == 0)
        && v > 100)
        return "over 100 %: a share of the modulated time";
    if (strcmp(u, "Hz") == 0 && rate_hz > 0 && v > rate_hz)
        return "above the recording's sample rate";
    return NULL;
}

/* The sections a report of its kind holds (measure and live: the audio figures and hum always, if
 * and iq also the carrier and the modulation; sweep: its own); NULL-terminated. */
static const char *const *sections_of(const ml_result *r)
{
    static const char *const sweep[] = {"sweep", NULL};
    static const char *const audio[] = {"audio", "hum", NULL};
    static const char *const mod[] = {"carrier", "modulation", "audio", "hum", NULL};
    const ml_result_item *kind = ml_result_find(r, "input.kind");
    for (size_t i = 0; i < ml_result_count(r); i++)
        if (strncmp(ml_result_item_at(r, i)->name, "sweep.", 6) == 0)
            return sweep;
    return kind && strcmp(kind->text, "audio") == 0 ? audio : mod;
}

static bool has_section(const ml_result *r, const char *group)
{
    const size_t n = strlen(group);
    for (size_t i = 0; i < ml_result_count(r); i++) {
        const char *name = ml_result_item_at(r, i)->name;
        if (strncmp(name, group, n) == 0 && name[n] == '.')
            return true;
    }
    return false;
}

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
    const ml_result_item *rate = ml_result_find(r, "input.sample_rate_hz");
    if (rate && rate->type != ML_RESULT_NUMBER)
        rate = NULL;
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
        const char *why = it->type == ML_RESULT_NUMBER ? impossible(d, it->value, rate ? rate->value : 0) : NULL;
        if (why != NULL) {
            char problem[160];
            snprintf(problem, sizeof problem, "%.10g%s%s is impossible: %s", it->value, d->unit[0] ? " " : "",
                     d->unit, why);
            return refuse(err, errlen, name, problem);
        }
    }
    /* the sections its kind always has: a report without them would compare as "not worse" */
    const char *const *need = sections_of(r);
    const ml_result_item *kind = ml_result_find(r, "input.kind");
    char list[96] = "";
    for (size_t i = 0; need[i] != NULL; i++) {
        const size_t k = strlen(list);
        snprintf(list + k, sizeof list - k, "%s%s", i ? ", " : "", need[i]);
    }
    for (size_t i = 0; need[i] != NULL; i++)
        if (!has_section(r, need[i])) {
            snprintf(err, errlen, "no \"%s\" section: a saved %s report always has %s", need[i],
                     strcmp(need[0], "sweep") == 0 ? "sweep" : kind ? kind->text : "measurement", list);
            return ML_EFORMAT;
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
