/* The carrier search (see dsp/carrier.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/carrier.h"

#include <math.h>
#include <stddef.h>

#include "dsp/rf.h"

#define CAPTURE_HZ 200.0 /* capture range around a nominal carrier                            */
#define MIN_REL 1e-3     /* a carrier is at most 60 dB below the strongest component            */

ml_carrier_config ml_carrier_config_default(double rate_hz, bool complex_input, double nominal_hz)
{
    const double nyq = rate_hz / 2;
    return (ml_carrier_config){.nominal_hz = nominal_hz, .capture_hz = CAPTURE_HZ, .min_rel = MIN_REL,
                               .lo_hz = complex_input ? -nyq : 20.0, .hi_hz = nyq};
}

ml_status ml_carrier_find(const ml_spectrum *s, const ml_carrier_config *cfg, ml_carrier *out)
{
    if (s == NULL || cfg == NULL || out == NULL || !(cfg->capture_hz > 0)
        || !(cfg->min_rel >= 0 && cfg->min_rel <= 1) || !(cfg->lo_hz <= cfg->hi_hz))
        return ML_EINVAL;
    *out = (ml_carrier){0};
    double f_top = 0, a_top = 0;
    ml_status st = ml_rf_find_peak(s, cfg->lo_hz, cfg->hi_hz, &f_top, &a_top);
    if (st != ML_OK)
        return st;
    out->strongest_hz = f_top;
    out->strongest_amplitude = a_top;
    if (!(a_top > 0))
        return ML_ENOSIGNAL;
    if (isnan(cfg->nominal_hz)) {
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
    out->frequency_hz = fc;
    out->amplitude = ac;
    return ML_OK;
}
