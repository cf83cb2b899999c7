/* The one mapping from the dsp results to the registry's metric names.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/values.h"

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <string.h>

#include "analyzer/registry.h"

size_t ml_values_audio(const ml_audio_plain_figures *f, ml_value *out)
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

size_t ml_values_envelope(const ml_audio_plain_figures *f, ml_value *out)
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

size_t ml_values_modulation(const ml_modulation_result *r, double nominal_hz, bool with_trapezoid,
                            ml_value *out)
{
    size_t n = 0;
    out[n++] = (ml_value){"carrier.frequency_hz", r->carrier_hz};
    out[n++] = (ml_value){"carrier.offset_hz", isnan(nominal_hz) ? NAN : r->carrier_hz - nominal_hz};
    out[n++] = (ml_value){"carrier.level_dbfs", r->carrier_level_dbfs};
    out[n++] = (ml_value){"carrier.unmodulated_dbfs", r->unmodulated_dbfs};
    out[n++] = (ml_value){"carrier.cnr_db", r->cnr_db};
    out[n++] = (ml_value){"carrier.cnr_bandwidth_hz", r->cnr_bandwidth_hz};
    out[n++] = (ml_value){"modulation.index", r->index};
    out[n++] = (ml_value){"modulation.index_spectral", r->index_spectral};
    out[n++] = (ml_value){"modulation.positive_peak_pct", r->positive_peak_pct};
    out[n++] = (ml_value){"modulation.positive_peak_held_pct", r->positive_peak_held_pct};
    out[n++] = (ml_value){"modulation.negative_peak_pct", r->negative_peak_pct};
    out[n++] = (ml_value){"modulation.carrier_shift_pct", r->carrier_shift_pct};
    out[n++] = (ml_value){"modulation.overmodulation_pct", r->overmodulation_pct};
    out[n++] = (ml_value){"modulation.carrier_off_pct", r->carrier_off_pct};
    out[n++] = (ml_value){"modulation.pinch_off_events", (double)(r->pinch_events + r->reversal_events)};
    out[n++] = (ml_value){"modulation.carrier_pinch_events", (double)r->pinch_events};
    out[n++] = (ml_value){"modulation.phase_reversal_events", (double)r->reversal_events};
    out[n++] = (ml_value){"modulation.positive_peaks_over_limit", (double)r->positive_over};
    out[n++] = (ml_value){"modulation.sideband_asymmetry_db", r->sideband_asymmetry_db};
    out[n++] = (ml_value){"modulation.noise_pct", r->noise_pct};
    out[n++] = (ml_value){"modulation.pinch_floor_pct", r->floor_pct};
    n += ml_values_envelope(&r->audio, out + n);
    if (with_trapezoid)
        out[n++] = (ml_value){"modulation.trapezoid_deviation_pct", r->trapezoid_deviation_pct};
    out[n++] = (ml_value){"spectrum.occupied_bandwidth_hz", r->occupied_bandwidth_hz};
    return n;
}

size_t ml_values_modulation_u(const ml_modulation_uncertainty *u, ml_value *out)
{
    size_t n = 0;
    out[n++] = (ml_value){"modulation.index", u->index};
    out[n++] = (ml_value){"modulation.positive_peak_held_pct", u->positive_peak_held_pct};
    out[n++] = (ml_value){"modulation.negative_peak_pct", u->negative_peak_pct};
    n += ml_values_envelope(&u->audio, out + n);
    n += ml_values_audio(&u->audio, out + n);
    return n;
}

const char *ml_values_c_source(const ml_modulation_result *r, const char *reference_path, char *buf,
                               size_t len)
{
    switch (r->c_source) {
    case ML_C_REFERENCE:
        snprintf(buf, len, "carrier reference file %s", reference_path ? reference_path : "");
        break;
    case ML_C_QUIET:
        snprintf(buf, len, "unmodulated stretches of this capture (%.2f s)", r->c_quiet_s);
        break;
    case ML_C_LATCHED: snprintf(buf, len, "unmodulated carrier heard earlier (%.2f s)", r->c_quiet_s); break;
    default: snprintf(buf, len, "mean envelope (no unmodulated carrier found)"); break;
    }
    return buf;
}

const char *ml_values_c_word(const ml_modulation_result *r)
{
    static const char *const word[] = {"reference", "unmodulated", "latched", "mean"};
    return r && r->c_source <= ML_C_MEAN ? word[r->c_source] : NULL;
}

const char *ml_values_overmodulation_kind(const ml_modulation_result *r)
{
    return r->reversal_events > r->pinch_events ? "phase reversal"
           : r->pinch_events > 0                ? "carrier pinch-off"
                                                : "none";
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
