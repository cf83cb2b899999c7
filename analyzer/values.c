/* The one mapping from the dsp results to the registry's metric names.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/values.h"

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <string.h>

#include "analyzer/registry.h"

/* A plain reading (NAN: not measured). */
static ml_value plain(const char *name, double value)
{
    return (ml_value){name, value, ML_FIG_MEASURED, NULL};
}

/* A figure of dsp/figures.h with its mark. */
static ml_value val(const char *name, double value, ml_fig_mark m)
{
    return (ml_value){name, value, m.state, m.why != ML_WHY_OK ? ml_audio_why_text(m.why) : NULL};
}

size_t ml_values_audio(const ml_audio_plain_figures *f, ml_value *out)
{
    const ml_value v[] = {
        val("audio.fundamental_hz", f->fundamental_hz, f->mark.fundamental_hz),
        val("audio.fundamental_dbfs", f->fundamental_dbfs, f->mark.fundamental_dbfs),
        val("audio.thd_pct", f->thd_pct, f->mark.thd_pct),
        val("audio.thd_db", f->thd_db, f->mark.thd_db),
        val("audio.thdn_pct", f->thdn_pct, f->mark.thdn_pct),
        val("audio.thdn_db", f->thdn_db, f->mark.thdn_db),
        val("audio.sinad_db", f->sinad_db, f->mark.sinad_db),
        val("audio.snr_db", f->snr_db, f->mark.snr_db),
        val("audio.enob_bits", f->enob_bits, f->mark.enob_bits),
        val("audio.noise_dbfs", f->noise_dbfs, f->mark.noise_dbfs),
        val("hum.mains_hz", f->mains_hz, f->mark.mains_hz),
        val("hum.level_dbfs", f->hum_dbfs, f->mark.hum_dbfs),
        val("hum.level_dbc", f->hum_dbc, f->mark.hum_dbc),
        val("audio.noise_nohum_dbfs", f->noise_nohum_dbfs, f->mark.noise_nohum_dbfs),
    };
    memcpy(out, v, sizeof v);
    return sizeof v / sizeof v[0];
}

size_t ml_values_envelope(const ml_audio_plain_figures *f, ml_value *out)
{
    const ml_value v[] = {
        val("modulation.envelope_thd_pct", f->thd_pct, f->mark.thd_pct),
        val("modulation.hum_db", f->hum_dbfs, f->mark.hum_dbfs),
        val("modulation.noise_db", f->noise_dbfs, f->mark.noise_dbfs),
    };
    memcpy(out, v, sizeof v);
    return sizeof v / sizeof v[0];
}

size_t ml_values_level(const ml_level_figures *f, const char *group, ml_value *out)
{
    /* the clipped samples of the captured channel(s) keep the audio group's name for if/iq too */
    const ml_value clipped = plain("audio.clipped_samples", (double)f->clipped);
    size_t n = 0;
    if (strcmp(group, "audio") == 0) {
        out[n++] = val("audio.rms_dbfs", f->rms_dbfs, f->rms_mark);
        out[n++] = val("audio.peak_dbfs", f->peak_dbfs, f->peak_mark);
        out[n++] = plain("audio.dc_offset_pct", f->dc_offset_pct);
        out[n++] = clipped;
    } else {
        out[n++] = clipped;
        out[n++] = val("capture.rms_dbfs", f->rms_dbfs, f->rms_mark);
        out[n++] = val("capture.peak_dbfs", f->peak_dbfs, f->peak_mark);
        out[n++] = plain("capture.dc_offset_pct", f->dc_offset_pct);
    }
    return n;
}

size_t ml_values_modulation(const ml_modulation_result *r, double nominal_hz, bool with_trapezoid,
                            ml_value *out)
{
    size_t n = 0;
    out[n++] = plain("carrier.frequency_hz", r->carrier_hz);
    out[n++] = plain("carrier.offset_hz", isnan(nominal_hz) ? NAN : r->carrier_hz - nominal_hz);
    out[n++] = plain("carrier.level_dbfs", r->carrier_level_dbfs);
    out[n++] = plain("carrier.unmodulated_dbfs", r->unmodulated_dbfs);
    out[n++] = plain("carrier.cnr_db", r->cnr_db);
    out[n++] = plain("carrier.cnr_bandwidth_hz", r->cnr_bandwidth_hz);
    out[n++] = plain("modulation.index", r->index);
    out[n++] = plain("modulation.index_spectral", r->index_spectral);
    out[n++] = plain("modulation.positive_peak_pct", r->positive_peak_pct);
    out[n++] = plain("modulation.positive_peak_held_pct", r->positive_peak_held_pct);
    out[n++] = plain("modulation.negative_peak_pct", r->negative_peak_pct);
    out[n++] = plain("modulation.carrier_shift_pct", r->carrier_shift_pct);
    out[n++] = plain("modulation.overmodulation_pct", r->overmodulation_pct);
    out[n++] = plain("modulation.carrier_off_pct", r->carrier_off_pct);
    out[n++] = plain("modulation.pinch_off_events", (double)(r->pinch_events + r->reversal_events));
    out[n++] = plain("modulation.carrier_pinch_events", (double)r->pinch_events);
    out[n++] = plain("modulation.phase_reversal_events", (double)r->reversal_events);
    out[n++] = plain("modulation.positive_peaks_over_limit", (double)r->positive_over);
    out[n++] = plain("modulation.sideband_asymmetry_db", r->sideband_asymmetry_db);
    out[n++] = plain("modulation.noise_pct", r->noise_pct);
    out[n++] = plain("modulation.pinch_floor_pct", r->floor_pct);
    n += ml_values_envelope(&r->audio, out + n);
    if (with_trapezoid)
        out[n++] = plain("modulation.trapezoid_deviation_pct", r->trapezoid_deviation_pct);
    out[n++] = plain("spectrum.occupied_bandwidth_hz", r->occupied_bandwidth_hz);
    for (size_t i = 0; i < n; i++) /* a figure not measured says why */
        if (!isfinite(out[i].value) && out[i].why == NULL)
            out[i].why = strcmp(out[i].name, "carrier.offset_hz") == 0
                             ? "no nominal carrier given (--carrier)"
                         : strcmp(out[i].name, "modulation.carrier_shift_pct") == 0
                             ? "no unmodulated carrier in the capture: C is the mean envelope"
                         : strncmp(out[i].name, "modulation.", 11) == 0 && !r->audio_result.tone_present
                             ? "no modulating tone in the demodulated audio"
                             : "not measurable on this capture";
    return n;
}

size_t ml_values_modulation_u(const ml_modulation_uncertainty *u, ml_value *out)
{
    size_t n = 0;
    out[n++] = plain("modulation.index", u->index);
    out[n++] = plain("modulation.positive_peak_held_pct", u->positive_peak_held_pct);
    out[n++] = plain("modulation.negative_peak_pct", u->negative_peak_pct);
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

size_t ml_values_bench(const ml_noise_figures *n, const ml_volt_figures *v, bool volts, bool watts,
                       ml_value *out)
{
    size_t k = 0;
    out[k++] = plain("audio.noise_a_dbfs", n->noise_a_dbfs);
    out[k++] = plain("audio.snr_a_db", n->snr_a_db);
    out[k++] = plain("audio.noise_468_dbfs", n->noise_468_dbfs);
    out[k++] = plain("audio.noise_468_qp_dbfs", n->noise_468_qp_dbfs);
    if (!volts)
        return k;
    out[k++] = plain("audio.fundamental_dbu", v->fundamental_dbu);
    out[k++] = plain("audio.fundamental_dbv", v->fundamental_dbv);
    out[k++] = plain("audio.fundamental_vrms", v->fundamental_vrms);
    if (watts)
        out[k++] = plain("audio.fundamental_w", v->fundamental_w);
    out[k++] = plain("audio.rms_dbu", v->rms_dbu);
    out[k++] = plain("audio.noise_dbu", v->noise_dbu);
    out[k++] = plain("audio.noise_a_dbu", v->noise_a_dbu);
    out[k++] = plain("hum.level_dbu", v->hum_dbu);
    return k;
}

size_t ml_values_capture_volts(double carrier_dbu, double rms_dbu, bool iq, ml_value *out)
{
    size_t k = 0;
    if (!iq)
        out[k++] = plain("carrier.level_dbu", carrier_dbu);
    out[k++] = plain("capture.rms_dbu", rms_dbu);
    return k;
}

size_t ml_values_card_limited(const ml_card_reach *r, const char **names, double *card_db, size_t cap)
{
    const struct {
        bool on;
        double card;
        const char *name[4];
    } map[] = {
        {r->thd, r->card_thd_db, {"audio.thd_pct", "audio.thd_db"}},
        {r->thdn, r->card_thdn_db, {"audio.thdn_pct", "audio.thdn_db", "audio.sinad_db", "audio.enob_bits"}},
        {r->snr, r->card_snr_db, {"audio.snr_db"}},
        {r->snr_a, r->card_snr_a_db, {"audio.snr_a_db"}},
        {r->noise, r->card_noise_dbfs, {"audio.noise_dbfs", "audio.noise_dbu"}},
        {r->noise_a, r->card_noise_a_dbfs, {"audio.noise_a_dbfs", "audio.noise_a_dbu"}},
        {r->noise_468, r->card_noise_468_dbfs, {"audio.noise_468_dbfs"}},
        {r->hum, r->card_hum_dbfs, {"hum.level_dbfs", "hum.level_dbc", "hum.level_dbu"}},
    };
    size_t n = 0;
    for (size_t i = 0; i < sizeof map / sizeof *map; i++)
        for (size_t j = 0; map[i].on && j < 4 && map[i].name[j] && n < cap; j++) {
            card_db[n] = map[i].card;
            names[n++] = map[i].name[j];
        }
    return n;
}

double ml_values_find(const ml_value *v, size_t n, const char *name)
{
    const ml_value *x = ml_values_get(v, n, name);
    return x ? x->value : NAN;
}

const ml_value *ml_values_get(const ml_value *v, size_t n, const char *name)
{
    for (size_t i = 0; i < n; i++)
        if (strcmp(v[i].name, name) == 0)
            return &v[i];
    return NULL;
}

/* The reportable range of a figure by its unit: [*lo, *hi]; false when it has none. */
static bool range_of(const ml_metric_def *d, double *lo, double *hi)
{
    if (d == NULL)
        return false;
    if (strcmp(d->unit, "bits") == 0) {
        *lo = 0.0;
        *hi = ML_ENOB_MAX_BITS;
        return true;
    }
    if (strcmp(d->unit, "dB") == 0 || strcmp(d->unit, "dBFS") == 0 || strcmp(d->unit, "dBc") == 0) {
        *lo = -ML_FIGURE_DB_LIMIT;
        *hi = ML_FIGURE_DB_LIMIT;
        return true;
    }
    return false;
}

bool ml_values_in_range(const char *name, double value)
{
    double lo, hi;
    return !range_of(ml_registry_lookup(name, NULL), &lo, &hi) || (value >= lo && value <= hi);
}

/* v held to its reportable range (ml_values_in_range), as dsp/metrics.h holds its own figures: a
 * reading beyond becomes a bound at the edge, a bound that says nothing inside becomes none. */
static ml_value in_range(const ml_value *v, const ml_metric_def *d)
{
    ml_value x = *v;
    double lo, hi;
    if (x.state == ML_FIG_NONE || !isfinite(x.value) || !range_of(d, &lo, &hi))
        return x;
    const char *why = ml_audio_why_text(ML_WHY_OUT_OF_RANGE);
    if (x.value < lo)
        x = x.state == ML_FIG_LOWER ? (ml_value){x.name, NAN, ML_FIG_NONE, why}
                                    : (ml_value){x.name, lo, ML_FIG_UPPER, why};
    else if (x.value > hi)
        x = x.state == ML_FIG_UPPER ? (ml_value){x.name, NAN, ML_FIG_NONE, why}
                                    : (ml_value){x.name, hi, ML_FIG_LOWER, why};
    return x;
}

/* The figure in dBFS a level in other units (dBu, dBV, V, W) is derived from (NULL: none). */
static const char *level_source(const char *name)
{
    static const char *const map[][2] = {
        {"audio.fundamental_dbu", "audio.fundamental_dbfs"}, {"audio.fundamental_dbv", "audio.fundamental_dbfs"},
        {"audio.fundamental_vrms", "audio.fundamental_dbfs"}, {"audio.fundamental_w", "audio.fundamental_dbfs"},
        {"audio.rms_dbu", "audio.rms_dbfs"},                  {"audio.noise_dbu", "audio.noise_dbfs"},
        {"audio.noise_a_dbu", "audio.noise_a_dbfs"},          {"hum.level_dbu", "hum.level_dbfs"},
        {"carrier.level_dbu", "carrier.level_dbfs"},          {"capture.rms_dbu", "capture.rms_dbfs"},
    };
    for (size_t i = 0; i < sizeof map / sizeof *map; i++)
        if (strcmp(map[i][0], name) == 0)
            return map[i][1];
    return NULL;
}

/* A derived level takes its source figure's state, as reported in r: not measured (with its
 * reason) or a bound in the same direction (every derived unit grows with the dBFS level). */
static ml_value derived_state(const ml_report *r, const ml_value *v, const char **why_buf)
{
    ml_value x = *v;
    const char *src = level_source(v->name);
    const ml_metric *m = src ? ml_report_find(r, src) : NULL;
    if (m == NULL || x.state == ML_FIG_NONE)
        return x;
    if (!m->valid) {
        x.state = ML_FIG_NONE;
        x.value = NAN;
        x.why = m->reason[0] ? (*why_buf = m->reason) : x.why;
    } else if (m->bound != ML_BOUND_NONE && isfinite(x.value)) {
        x.state = m->bound == ML_BOUND_UPPER ? ML_FIG_UPPER : ML_FIG_LOWER;
        x.why = m->qualifier[0] ? (*why_buf = m->qualifier) : x.why;
    }
    return x;
}

void ml_values_report(ml_report *r, const ml_value *v, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        const ml_metric_def *d = ml_registry_lookup(v[i].name, NULL);
        const char *unit = d ? d->unit : "";
        const int dec = d ? d->decimals : 3;
        const char *src_why = NULL;
        ml_value dv = derived_state(r, &v[i], &src_why);
        char why[ML_REPORT_WHY_LEN];
        if (src_why) { /* a copy: adding to the report may move its metrics */
            snprintf(why, sizeof why, "%s", src_why);
            dv.why = why;
        }
        const ml_value x = in_range(&dv, d);
        const bool said = x.why != NULL && x.why[0] != '\0';
        if (x.state == ML_FIG_NONE || !isfinite(x.value)) {
            ml_report_add_missing_why(r, x.name, unit, dec, said ? x.why : NULL);
            continue;
        }
        ml_report_add(r, x.name, unit, dec, x.value);
        if (x.state == ML_FIG_UPPER || x.state == ML_FIG_LOWER)
            ml_report_bound(r, x.name, x.state == ML_FIG_UPPER ? ML_BOUND_UPPER : ML_BOUND_LOWER, "%s",
                            said ? x.why : x.state == ML_FIG_UPPER ? "upper bound" : "lower bound");
        else if (said)
            ml_report_qualify(r, x.name, "%s", x.why);
    }
}

void ml_values_report_u(ml_report *r, const ml_value *u, size_t n)
{
    for (size_t k = 0; k < n; k++) {
        if (!isfinite(u[k].value))
            continue;
        for (size_t i = 0; i < r->nmetrics; i++) {
            ml_metric *m = &r->metrics[i];
            if (m->valid && m->bound == ML_BOUND_NONE && strcmp(m->name, u[k].name) == 0) {
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

char *ml_values_cell(const ml_value *v, char *buf, size_t len)
{
    const ml_metric_def *d = ml_registry_lookup(v->name, NULL);
    const ml_value x = in_range(v, d);
    char num[64];
    if (x.state == ML_FIG_NONE || !isfinite(x.value) || len == 0) {
        if (len > 0)
            buf[0] = '\0';
        return buf;
    }
    ml_report_bound_number(num, sizeof num, x.value, d ? d->decimals : 3,
                           x.state == ML_FIG_UPPER   ? ML_BOUND_UPPER
                           : x.state == ML_FIG_LOWER ? ML_BOUND_LOWER
                                                     : ML_BOUND_NONE);
    snprintf(buf, len, "%s%s", x.state == ML_FIG_UPPER ? "<" : x.state == ML_FIG_LOWER ? ">" : "", num);
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

const ml_point_def *ml_values_point_def(const char *leaf)
{
    static const ml_point_def defs[] = {
        {"group", "", 0},
        {"frequency_hz", "Hz", 3},
        {"level_dbfs", "dBFS", 3},
        {"level_pct", "%", 3},
        {"relative_db", "dB", 3},
        {"index", "", 4},
        {"carrier_shift_pct", "%", 3},
        {"thd_pct", "%", 4},
        {"envelope_thd_pct", "%", 4},
        {"thdn_pct", "%", 4},
    };
    for (size_t i = 0; i < sizeof defs / sizeof defs[0]; i++)
        if (strcmp(defs[i].leaf, leaf) == 0)
            return &defs[i];
    return NULL;
}
