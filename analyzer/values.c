/* The one mapping from the dsp results to the registry's metric names.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/values.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analyzer/registry.h"

size_t ml_values_audio(const ml_audio_figures *f, ml_value *out)
{
    const ml_value v[] = {
        {"audio.fundamental_hz", f->fundamental_hz}, {"audio.fundamental_dbfs", f->fundamental_dbfs},
        {"audio.thd_pct", f->thd_pct},               {"audio.thd_db", f->thd_db},
        {"audio.thdn_pct", f->thdn_pct},             {"audio.thdn_db", f->thdn_db},
        {"audio.sinad_db", f->sinad_db},             {"audio.snr_db", f->snr_db},
        {"audio.enob_bits", f->enob_bits},           {"audio.noise_dbfs", f->noise_dbfs},
        {"hum.mains_hz", f->mains_hz},               {"hum.level_dbfs", f->hum_dbfs},
        {"hum.level_dbc", f->hum_dbc},
    };
    memcpy(out, v, sizeof v);
    return sizeof v / sizeof v[0];
}

size_t ml_values_envelope(const ml_audio_figures *f, ml_value *out)
{
    const ml_value v[] = {
        {"modulation.envelope_thd_pct", f->thd_pct},
        {"modulation.hum_db", f->hum_dbfs},
        {"modulation.noise_db", f->noise_dbfs},
    };
    memcpy(out, v, sizeof v);
    return sizeof v / sizeof v[0];
}

size_t ml_values_level(const ml_level_figures *f, const char *group, ml_value *out)
{
    /* the clipped samples of the captured channel(s) keep the audio group's name for if/iq too */
    const ml_value clipped = {"audio.clipped_samples", (double)f->clipped};
    size_t n = 0;
    if (strcmp(group, "audio") == 0) {
        out[n++] = (ml_value){"audio.rms_dbfs", f->rms_dbfs};
        out[n++] = (ml_value){"audio.peak_dbfs", f->peak_dbfs};
        out[n++] = (ml_value){"audio.dc_offset_pct", f->dc_offset_pct};
        out[n++] = clipped;
    } else {
        out[n++] = clipped;
        out[n++] = (ml_value){"capture.rms_dbfs", f->rms_dbfs};
        out[n++] = (ml_value){"capture.peak_dbfs", f->peak_dbfs};
        out[n++] = (ml_value){"capture.dc_offset_pct", f->dc_offset_pct};
    }
    return n;
}

double ml_values_find(const ml_value *v, size_t n, const char *name)
{
    for (size_t i = 0; i < n; i++)
        if (strcmp(v[i].name, name) == 0)
            return v[i].value;
    return NAN;
}

void ml_values_report(ml_report *r, const ml_value *v, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        const ml_metric_def *d = ml_registry_lookup(v[i].name, NULL);
        ml_report_add(r, v[i].name, d ? d->unit : "", d ? d->decimals : 3, v[i].value);
    }
}

void ml_values_report_u(ml_report *r, const ml_value *u, size_t n)
{
    for (size_t k = 0; k < n; k++) {
        if (!isfinite(u[k].value))
            continue;
        for (size_t i = 0; i < r->nmetrics; i++) {
            ml_metric *m = &r->metrics[i];
            if (m->valid && strcmp(m->name, u[k].name) == 0) {
                m->has_u = true;
                m->u = u[k].value;
            }
        }
    }
}

char *ml_values_format(const char *name, double value, char *buf, size_t len)
{
    const ml_metric_def *d = ml_registry_lookup(name, NULL);
    if (d == NULL || !isfinite(value))
        buf[0] = '\0';
    else
        snprintf(buf, len, "%.*f", d->decimals, value);
    return buf;
}

const char *ml_values_short_name(const char *full)
{
    const char *dot = strrchr(full, '.');
    int amb = 0;
    if (dot == NULL || strncmp(full, "hum.", 4) == 0)
        return full;
    return ml_registry_lookup(dot + 1, &amb) != NULL && !amb ? dot + 1 : full;
}
