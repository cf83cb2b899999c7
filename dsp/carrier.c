/* The carrier search (see dsp/carrier.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/carrier.h"

#include <math.h>
#include <stddef.h>

#include "dsp/rf.h"

#define CAPTURE_HZ 200.0 /* capture range around a nominal carrier                            */
#define MIN_REL 1e-3     /* a carrier is at most 60 dB below the strongest component            */
#define MIN_PROMINENCE_DB 10.0 /* a nominal carrier stands 10 dB out of the spectrum around it     */
#define CHANNEL_HZ 10000.0 /* the widest channel (dsp/modulation.h)                               */
#define STRONGER 1.4142135623730951 /* 3 dB in amplitude                                          */

ml_carrier_config ml_carrier_config_default(double rate_hz, bool complex_input, double nominal_hz)
{
    const double nyq = rate_hz / 2;
    return (ml_carrier_config){.nominal_hz = nominal_hz, .capture_hz = CAPTURE_HZ, .min_rel = MIN_REL,
                               .min_prominence_db = isnan(nominal_hz) ? -INFINITY : MIN_PROMINENCE_DB,
                               .channel_hz = CHANNEL_HZ, .lo_hz = complex_input ? -nyq : 20.0, .hi_hz = nyq};
}

ml_status ml_carrier_find(const ml_spectrum *s, const ml_carrier_config *cfg, ml_carrier *out)
{
    if (s == NULL || cfg == NULL || out == NULL || !(cfg->capture_hz > 0)
        || !(cfg->min_rel >= 0 && cfg->min_rel <= 1) || !(cfg->lo_hz <= cfg->hi_hz)
        || isnan(cfg->min_prominence_db) || !(cfg->channel_hz >= 0))
        return ML_EINVAL;
    *out = (ml_carrier){.prominence_db = NAN};
    double f_top = 0, a_top = 0;
    ml_status st = ml_rf_find_peak(s, cfg->lo_hz, cfg->hi_hz, &f_top, &a_top);
    if (st != ML_OK)
        return st;
    out->strongest_hz = f_top;
    out->strongest_amplitude = a_top;
    if (!(a_top > 0))
        return ML_ENOSIGNAL;
    if (isnan(cfg->nominal_hz)) {
        if (isfinite(cfg->min_prominence_db)) {
            out->prominence_db = ml_rf_line_prominence_db(s, f_top);
            if (!(out->prominence_db >= cfg->min_prominence_db))
                return ML_ENOSIGNAL;
        }
        out->frequency_hz = f_top;
        out->amplitude = a_top;
        return ML_OK;
    }
    const double lobe_hz =
        (double)ml_spectrum_lobe_bins(s) * ml_spectrum_rate_hz(s) / (double)ml_spectrum_nfft(s);
    const double range = fmax(cfg->capture_hz, lobe_hz);
    out->range_hz = range;
    double fc = 0, ac = 0;
    st = ml_rf_find_peak(s, fmax(cfg->nominal_hz - range, cfg->lo_hz),
                         fmin(cfg->nominal_hz + range, cfg->hi_hz), &fc, &ac);
    if (st == ML_EINVAL) /* the capture range lies outside the search band */
        return ML_ENOSIGNAL;
    if (st != ML_OK)
        return st;
    if (!(ac > 0) || !(ac >= cfg->min_rel * a_top))
        return ML_ENOSIGNAL;
    if (isfinite(cfg->min_prominence_db)) {
        out->prominence_db = ml_rf_line_prominence_db(s, fc);
        if (!(out->prominence_db >= cfg->min_prominence_db))
            return ML_ENOSIGNAL;
    }
    double f_ch = 0, a_ch = 0;
    if (cfg->channel_hz > 0
        && ml_rf_find_peak(s, fmax(fc - cfg->channel_hz, cfg->lo_hz), fmin(fc + cfg->channel_hz, cfg->hi_hz), &f_ch,
                           &a_ch) == ML_OK
        && a_ch > STRONGER * ac && fabs(f_ch - fc) > lobe_hz) {
        /* a sideband of that carrier when its mirror image about it is there too, within 3 dB */
        const double a_mirror = ml_rf_amplitude(s, 2.0 * f_ch - fc);
        if (a_mirror > ac / STRONGER && a_mirror < ac * STRONGER) {
            out->stronger_hz = f_ch;
            return ML_ENOSIGNAL;
        }
    }
    out->frequency_hz = fc;
    out->amplitude = ac;
    return ML_OK;
}
