/* The broadband noise floor of a power spectrum, and hum over it (see dsp/noisefloor.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/noisefloor.h"

#include <math.h>

#include "dsp/metrics.h"
#include "dsp/order.h"

void ml_noisefloor_band(const ml_spectrum *s, size_t *lo, size_t *hi)
{
    const size_t nbins = ml_spectrum_nbins(s), lobe = ml_spectrum_lobe_bins(s);
    const double bin_hz = ml_spectrum_rate_hz(s) / (double)ml_spectrum_nfft(s);
    *lo = lobe;
    *hi = ml_spectrum_is_complex(s) ? nbins - 1 - lobe : (size_t)fmin((double)(nbins - 1), 20000.0 / bin_hz);
}

double ml_noisefloor_dbfs_hz(const ml_spectrum *s, const double *psd, size_t lo, size_t hi, double *scratch)
{
    const size_t nbins = ml_spectrum_nbins(s);
    size_t n = 0;
    for (size_t k = lo; k <= hi && k < nbins; k++)
        scratch[n++] = psd[k];
    const double m = ml_order_median(scratch, n);
    const double bin_hz = ml_spectrum_rate_hz(s) / (double)ml_spectrum_nfft(s);
    const double d = m / ml_spectrum_enbw_bins(s) / bin_hz / ml_spectrum_full_scale_power(s);
    return d > 0 ? 10.0 * log10(d) : NAN;
}

ml_status ml_noisefloor_hum_over(const ml_spectrum *s, const double *psd, size_t nbins, double mains_hz,
                                 int hum_harmonics, double floor_dbfs_hz, double *over_db, double *hum_dbfs)
{
    ml_audio_result hr;
    ml_status st = ml_hum_analyze_psd(s, psd, nbins, mains_hz, hum_harmonics, &hr);
    if (st != ML_OK)
        return st;
    if (hr.nhum == 0)
        return ML_ENOSIGNAL;
    const double bin_hz = ml_spectrum_rate_hz(s) / (double)ml_spectrum_nfft(s);
    const double lobe = (double)ml_spectrum_lobe_bins(s);
    /* the floor's power in the components' lobes: density x bin width x lobe bins x components */
    const double floor_power = isfinite(floor_dbfs_hz)
                                   ? pow(10.0, floor_dbfs_hz / 10.0) * ml_spectrum_full_scale_power(s)
                                         * bin_hz * (2 * lobe + 1) * (double)hr.nhum
                                   : 0.0;
    *over_db = 10.0 * log10(fmax(hr.hum_power, 1e-300) / fmax(floor_power, 1e-300));
    *hum_dbfs = ml_power_dbfs(hr.hum_power);
    return ML_OK;
}
