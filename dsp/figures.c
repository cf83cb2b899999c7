/* The reported figures derived from the analyses' results (see dsp/figures.h).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [ieee1241:2000] IEEE Std 1241-2000: SINAD eq. 94, ENOB eq. 102 (via ml_enob_bits).
 * [aes17:2015] AES17-2015: 0 dBFS is the RMS of a full-scale sine.
 */
#include "dsp/figures.h"

#include <math.h>

void ml_figures_audio_none(ml_audio_plain_figures *out)
{
    const double n = NAN;
    *out = (ml_audio_plain_figures){n, n, n, n, n, n, n, n, n, n, n, n, n};
}

void ml_figures_audio(const ml_audio_result *a, bool valid, ml_audio_plain_figures *out)
{
    if (!valid || a == NULL) {
        ml_figures_audio_none(out);
        return;
    }
    const double p1 = a->fundamental_power, rest = a->band_power - p1;
    const double sinad = ml_ratio_db(p1, rest);
    out->fundamental_hz = a->fundamental_hz;
    out->fundamental_dbfs = ml_power_dbfs(p1);
    out->thd_pct = ml_ratio_pct(a->distortion_power, p1);
    out->thd_db = ml_ratio_db(a->distortion_power, p1);
    out->thdn_pct = ml_ratio_pct(rest, p1);
    out->thdn_db = -sinad;
    out->sinad_db = sinad;
    out->snr_db = ml_ratio_db(p1, a->noise_power);
    out->enob_bits = ml_enob_bits(sinad);
    out->noise_dbfs = ml_power_dbfs(a->noise_power);
    out->mains_hz = a->mains_hz;
    out->hum_dbfs = ml_power_dbfs(a->hum_power);
    out->hum_dbc = ml_ratio_db(a->hum_power, p1);
}

void ml_figures_level(const ml_stats *s, size_t n, ml_level_figures *out)
{
    double sumsq = 0, peak = 0;
    uint64_t count = 0, clipped = 0;
    for (size_t i = 0; i < n; i++) {
        sumsq += s[i].sumsq;
        count += s[i].count;
        clipped += s[i].clipped;
        peak = fmax(peak, fmax(fabs(s[i].min), fabs(s[i].max)));
    }
    out->rms_dbfs = sumsq > 0 && count > 0 ? ml_power_dbfs(sumsq / (double)count) : NAN;
    out->peak_dbfs = peak > 0 ? 20.0 * log10(peak) : NAN;
    out->dc_offset_pct = n > 0 ? 100.0 * ml_stats_mean(&s[0]) : NAN;
    out->clipped = clipped;
}

const char *ml_figures_no_signal(const ml_audio_result *a, double total_power)
{
    /* Float samples carry a 24-bit mantissa (rounding about 150 dB below the signal) and the
     * flat-top window leaks 248 dB down: a band more than 200 dB below the whole input's power
     * holds only rounding residue and leakage (DC alone, or an unmodulated carrier). */
    if (!(a->band_power > 1e-20 * total_power))
        return "nothing but rounding residue, more than 200 dB below the input's power";
    /* the reports' levels stop at -300 dB (ml_power_dbfs): below that a figure would be wrong */
    if (!(a->fundamental_power > 1e-30 * 0.5))
        return "the strongest component lies below -300 dBFS, the lowest level reported";
    return NULL;
}
