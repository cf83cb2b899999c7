/* The metric registry.
 * SPDX-License-Identifier: MIT
 */
#include <stddef.h>
#include <string.h>

#include "analyzer/registry.h"

static const ml_metric_def defs[] = {
    {"audio.fundamental_hz", "Hz", 4, ML_BETTER_NONE},
    {"audio.fundamental_dbfs", "dBFS", 2, ML_BETTER_NONE},
    {"audio.rms_dbfs", "dBFS", 2, ML_BETTER_NONE},
    {"audio.peak_dbfs", "dBFS", 2, ML_BETTER_NONE},
    {"audio.thd_pct", "%", 4, ML_BETTER_LOWER},
    {"audio.thd_db", "dB", 2, ML_BETTER_LOWER},
    {"audio.thdn_pct", "%", 4, ML_BETTER_LOWER},
    {"audio.thdn_db", "dB", 2, ML_BETTER_LOWER},
    {"audio.sinad_db", "dB", 2, ML_BETTER_HIGHER},
    {"audio.snr_db", "dB", 2, ML_BETTER_HIGHER},
    {"audio.enob_bits", "bits", 2, ML_BETTER_HIGHER},
    {"audio.noise_dbfs", "dBFS", 2, ML_BETTER_LOWER},
    {"audio.noise_nohum_dbfs", "dBFS", 2, ML_BETTER_LOWER},
    {"audio.dc_offset_pct", "%", 4, ML_BETTER_NONE},
    {"audio.clipped_samples", "", 0, ML_BETTER_LOWER},
    {"capture.rms_dbfs", "dBFS", 2, ML_BETTER_NONE},
    {"capture.peak_dbfs", "dBFS", 2, ML_BETTER_NONE},
    {"capture.dc_offset_pct", "%", 4, ML_BETTER_NONE},
    {"live.lost_frames", "", 0, ML_BETTER_LOWER},
    {"live.overflows", "", 0, ML_BETTER_LOWER},
    {"live.latency_ms", "ms", 3, ML_BETTER_NONE},
    {"live.latency_frames", "", 0, ML_BETTER_NONE},
    {"carrier.frequency_hz", "Hz", 3, ML_BETTER_NONE},
    {"carrier.offset_hz", "Hz", 3, ML_BETTER_NONE},
    {"carrier.level_dbfs", "dBFS", 2, ML_BETTER_NONE},
    {"carrier.unmodulated_dbfs", "dBFS", 2, ML_BETTER_NONE},
    {"carrier.cnr_db", "dB", 2, ML_BETTER_HIGHER},
    {"carrier.cnr_bandwidth_hz", "Hz", 0, ML_BETTER_NONE},
    {"modulation.index", "", 4, ML_BETTER_NONE},
    {"modulation.index_spectral", "", 4, ML_BETTER_NONE},
    {"modulation.positive_peak_pct", "%", 2, ML_BETTER_NONE},
    {"modulation.positive_peak_held_pct", "%", 2, ML_BETTER_NONE},
    {"modulation.negative_peak_pct", "%", 2, ML_BETTER_NONE},
    {"modulation.carrier_shift_pct", "%", 3, ML_BETTER_LOWER},
    {"modulation.overmodulation_pct", "%", 3, ML_BETTER_LOWER},
    {"modulation.carrier_off_pct", "%", 3, ML_BETTER_LOWER},
    {"modulation.pinch_off_events", "", 0, ML_BETTER_LOWER},
    {"modulation.carrier_pinch_events", "", 0, ML_BETTER_LOWER},
    {"modulation.phase_reversal_events", "", 0, ML_BETTER_LOWER},
    {"modulation.positive_peaks_over_limit", "", 0, ML_BETTER_LOWER},
    {"modulation.sideband_asymmetry_db", "dB", 2, ML_BETTER_NONE},
    {"modulation.envelope_thd_pct", "%", 3, ML_BETTER_LOWER},
    {"modulation.hum_db", "dB", 2, ML_BETTER_LOWER},
    {"modulation.noise_db", "dB", 2, ML_BETTER_LOWER},
    {"modulation.trapezoid_deviation_pct", "%", 3, ML_BETTER_LOWER},
    {"modulation.noise_pct", "%", 3, ML_BETTER_LOWER},
    {"modulation.pinch_floor_pct", "%", 2, ML_BETTER_NONE},
    {"spectrum.occupied_bandwidth_hz", "Hz", 1, ML_BETTER_NONE},
    {"spectrum.mask_margin_db", "dB", 2, ML_BETTER_HIGHER},
    {"spectrum.mask_worst_offset_hz", "Hz", 1, ML_BETTER_NONE},
    {"hum.mains_hz", "Hz", 0, ML_BETTER_NONE},
    {"hum.level_dbfs", "dBFS", 2, ML_BETTER_LOWER},
    {"hum.level_dbc", "dBc", 2, ML_BETTER_LOWER},
    {"audio.noise_a_dbfs", "dBFS", 2, ML_BETTER_LOWER},
    {"audio.snr_a_db", "dB", 2, ML_BETTER_HIGHER},
    {"audio.noise_468_dbfs", "dBFS", 2, ML_BETTER_LOWER},
    {"audio.noise_468_qp_dbfs", "dBFS", 2, ML_BETTER_LOWER},
    {"audio.fundamental_dbu", "dBu", 2, ML_BETTER_NONE},
    {"audio.fundamental_dbv", "dBV", 2, ML_BETTER_NONE},
    {"audio.fundamental_vrms", "V", 6, ML_BETTER_NONE},
    {"audio.fundamental_w", "W", 6, ML_BETTER_NONE},
    {"audio.rms_dbu", "dBu", 2, ML_BETTER_NONE},
    {"audio.noise_dbu", "dBu", 2, ML_BETTER_LOWER},
    {"audio.noise_a_dbu", "dBu", 2, ML_BETTER_LOWER},
    {"hum.level_dbu", "dBu", 2, ML_BETTER_LOWER},
    {"carrier.level_dbu", "dBu", 2, ML_BETTER_NONE},
    {"capture.rms_dbu", "dBu", 2, ML_BETTER_NONE},
    {"sweep.steps", "", 0, ML_BETTER_NONE},
    {"sweep.reference_hz", "Hz", 2, ML_BETTER_NONE},
    {"sweep.lower_3db_hz", "Hz", 1, ML_BETTER_LOWER},
    {"sweep.upper_3db_hz", "Hz", 1, ML_BETTER_HIGHER},
    {"sweep.thd_max_pct", "%", 4, ML_BETTER_LOWER},
    {"imd.f1_hz", "Hz", 2, ML_BETTER_NONE},
    {"imd.f2_hz", "Hz", 2, ML_BETTER_NONE},
    {"imd.ratio_db", "dB", 2, ML_BETTER_NONE},
    {"imd.smpte_pct", "%", 4, ML_BETTER_LOWER},
    {"imd.smpte_d2_pct", "%", 4, ML_BETTER_LOWER},
    {"imd.smpte_d3_pct", "%", 4, ML_BETTER_LOWER},
    {"imd.dfd2_pct", "%", 4, ML_BETTER_LOWER},
    {"imd.dfd3_pct", "%", 4, ML_BETTER_LOWER},
    {"interference.qp_dbfs", "dBFS", 2, ML_BETTER_LOWER},
    {"interference.av_dbfs", "dBFS", 2, ML_BETTER_LOWER},
};

const ml_metric_def *ml_registry_all(size_t *count)
{
    *count = sizeof defs / sizeof defs[0];
    return defs;
}

const ml_metric_def *ml_registry_lookup(const char *name, int *ambiguous)
{
    size_t n = sizeof defs / sizeof defs[0];
    if (ambiguous)
        *ambiguous = 0;
    for (size_t i = 0; i < n; i++)
        if (strcmp(defs[i].name, name) == 0)
            return &defs[i];
    const ml_metric_def *found = NULL;
    for (size_t i = 0; i < n; i++) {
        const char *dot = strrchr(defs[i].name, '.');
        if (dot && strcmp(dot + 1, name) == 0) {
            if (found) {
                if (ambiguous)
                    *ambiguous = 1;
                return NULL;
            }
            found = &defs[i];
        }
    }
    return found;
}
