/* The one mapping from the dsp results to the registry's metric names (analyzer/registry.h).
 * SPDX-License-Identifier: MIT
 *
 * measure, live and compare put these values into their reports, watch writes them on its
 * --plain lines and log in its rows, all under the same names, units and decimals: a figure is
 * named once here, and computed once in dsp/ (dsp/figures.h, dsp/modulation.h). A value the
 * analysis could not measure is NAN and says why; a bound says which way it bounds (ml_value).
 */
#ifndef ML_ANALYZER_VALUES_H
#define ML_ANALYZER_VALUES_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/benchfig.h"
#include "dsp/card.h"
#include "dsp/figures.h"
#include "dsp/modulation.h"
#include "io/report.h"

/* One named figure. state and why say how to read value (the zero value: a plain reading):
 *   ML_FIG_MEASURED  value is the reading (NAN: not measured, no reason known); why, when not
 *                    NULL or "", qualifies it (JSON qualifiers, text mark and note, CSV qualifier);
 *   ML_FIG_UPPER     the true value is at most value ("< value"), why the qualifier;
 *   ML_FIG_LOWER     at least value ("> value");
 *   ML_FIG_NONE      not measurable: null / n/a / an empty cell, why the reason.
 * why is static text (ml_audio_why_text) or NULL. */
typedef struct {
    const char *name;  /* registered dotted name, e.g. "audio.thd_pct" */
    double value;
    ml_fig_state state;
    const char *why;
} ml_value;

#define ML_VALUES_MAX 64

/* A figure of the reportable range: |value| of a dB, dBFS or dBc figure below
 * ML_FIGURE_DB_LIMIT, ENOB inside 0..ML_ENOB_MAX_BITS (dsp/metrics.h). ml_values_report holds
 * every figure to it, whatever its source: a value beyond becomes a bound at the edge. */
bool ml_values_in_range(const char *name, double value);

/* audio.fundamental_hz .. hum.level_dbc and audio.noise_nohum_dbfs (14 values, report order) with
 * their states and reasons (dsp/figures.h) into out[]; returns the count. */
size_t ml_values_audio(const ml_audio_plain_figures *f, ml_value *out);

/* The demodulated audio's figures that if/iq reports under modulation names (3 values):
 * modulation.envelope_thd_pct = audio.thd_pct, modulation.hum_db = hum.level_dbfs and
 * modulation.noise_db = audio.noise_dbfs (the demodulated audio's full scale is 100 %
 * modulation, so its dBFS are dB re 100 % modulation). */
size_t ml_values_envelope(const ml_audio_plain_figures *f, ml_value *out);

/* The level figures in report order (4 values): for group "audio" audio.rms_dbfs, .peak_dbfs,
 * .dc_offset_pct, .clipped_samples; for "capture" (the captured if/iq channels)
 * audio.clipped_samples, capture.rms_dbfs, .peak_dbfs, .dc_offset_pct. */
size_t ml_values_level(const ml_level_figures *f, const char *group, ml_value *out);

/* The carrier and modulation figures in report order, carrier.frequency_hz ..
 * spectrum.occupied_bandwidth_hz (the demodulated audio's envelope_thd_pct, hum_db, noise_db
 * among them): carrier.offset_hz is the carrier's offset from nominal_hz (NAN: none given);
 * modulation.trapezoid_deviation_pct only with_trapezoid (a reference channel was given). */
size_t ml_values_modulation(const ml_modulation_result *r, double nominal_hz, bool with_trapezoid,
                            ml_value *out);
/* The 95 % half-widths the modulation analysis estimates, under the same names (NAN: none). */
size_t ml_values_modulation_u(const ml_modulation_uncertainty *u, ml_value *out);
/* Where C came from, as the report's modulation.carrier_reference text, into buf[len]. */
const char *ml_values_c_source(const ml_modulation_result *r, const char *reference_path, char *buf,
                               size_t len);
/* Where C came from in one word, for a log column or a --plain field named carrier_reference:
 * reference, unmodulated (this span's own stretches), latched, mean; NULL for no result. */
const char *ml_values_c_word(const ml_modulation_result *r);
/* modulation.overmodulation_kind: the kind of event seen most ("none" without events). */
const char *ml_values_overmodulation_kind(const ml_modulation_result *r);

/* The bench figures (dsp/benchfig.h) in report order: audio.noise_a_dbfs, audio.snr_a_db,
 * audio.noise_468_dbfs, audio.noise_468_qp_dbfs (the reports leave it out with a test tone, when
 * the meter does not read the noise alone); with volts (a calibration) then
 * audio.fundamental_dbu, .fundamental_dbv, .fundamental_vrms, with watts (a load)
 * .fundamental_w, then audio.rms_dbu, .noise_dbu, .noise_a_dbu, hum.level_dbu. */
size_t ml_values_bench(const ml_noise_figures *n, const ml_volt_figures *v, bool volts, bool watts,
                       ml_value *out);

/* The captured levels in volts of an if/iq capture: carrier.level_dbu (a real IF only: an I/Q
 * pair has no one voltage) and capture.rms_dbu. */
size_t ml_values_capture_volts(double carrier_dbu, double rms_dbu, bool iq, ml_value *out);

/* The names of the figures a card profile limits (dsp/card.h ml_card_reach) into names[cap]:
 * thd -> audio.thd_pct, audio.thd_db; thdn -> audio.thdn_pct, audio.thdn_db, audio.sinad_db,
 * audio.enob_bits; snr -> audio.snr_db; snr_a -> audio.snr_a_db; noise -> audio.noise_dbfs,
 * audio.noise_dbu; noise_a -> audio.noise_a_dbfs, audio.noise_a_dbu; noise_468 ->
 * audio.noise_468_dbfs; hum -> hum.level_dbfs, hum.level_dbc, hum.level_dbu. With each name, in
 * card_db[], the card's own figure it was compared with (dB or dBFS). Returns the count. */
size_t ml_values_card_limited(const ml_card_reach *r, const char **names, double *card_db, size_t cap);
/* The figures of one point of a sweep (sweep.points[], analyzer/sweep.c), by their leaf names:
 * group, frequency_hz, level_dbfs, level_pct, relative_db, index, carrier_shift_pct, thd_pct,
 * envelope_thd_pct, thdn_pct. They are not registry metrics: a limits profile checks them in its
 * [response] section (analyzer/limits.h). */
typedef struct {
    const char *leaf, *unit;
    int decimals;
} ml_point_def;

/* The definition of the point figure leaf, or NULL. */
const ml_point_def *ml_values_point_def(const char *leaf);

/* The value named name among v[n] (full dotted name); NAN when absent. */
double ml_values_find(const ml_value *v, size_t n, const char *name);

/* The value named name among v[n] with its state and reason; NULL when absent. */
const ml_value *ml_values_get(const ml_value *v, size_t n, const char *name);

/* Adds v[n] to the report (unit and decimals from the registry) with their states (above): a
 * bound through ml_report_bound, a reason through ml_report_add_missing_why, a qualifier through
 * ml_report_qualify (io/report.h). A value outside the reportable range (ml_values_in_range)
 * becomes a bound at the range's edge ("beyond the reportable range"), or not measurable when a
 * bound beyond it says nothing. */
void ml_values_report(ml_report *r, const ml_value *v, size_t n);

/* Sets the uncertainty (95 % half-width) u[i].value of every measured metric of r named
 * u[i].name that is not a bound; non-finite values leave the metric without one. */
void ml_values_report_u(ml_report *r, const ml_value *u, size_t n);

/* The value formatted with the registry's decimals for name into buf[len]; "" for a non-finite
 * value or an unknown name. Returns buf. */
char *ml_values_format(const char *name, double value, char *buf, size_t len);

/* One value as a cell of a line or a row (watch --plain, log): "" when not measurable (or outside
 * the reportable range with nothing to bound), "<x" for an upper bound and ">x" for a lower one,
 * the number otherwise (registry decimals). Returns buf. */
char *ml_values_cell(const ml_value *v, char *buf, size_t len);

/* The name a line or a log column uses for a registered metric: its last component when that
 * is unique in the registry (as a limits profile accepts it), else the full dotted name; the hum
 * group keeps its full name (hum.level_dbfs: "level" alone would say nothing). */
const char *ml_values_short_name(const char *full);

#endif
