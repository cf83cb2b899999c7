/* The broadband noise floor of a power spectrum, and hum over it (pure functions over an
 * ml_spectrum and its psd, dsp/spectrum.h). The log command's per-step detectors use them.
 * SPDX-License-Identifier: MIT
 *
 * Definitions (README "Logging noise and interference" repeats them):
 *  - floor band: the bins above the DC lobe up to 20 kHz (real input), or every bin but the DC
 *    lobe (complex input);
 *  - noise floor: the median of the band's bins as a power density,
 *    10 lg(median / ENBW / bin width / full-scale power) dBFS/Hz (a tone or hum barely moves a
 *    median, a broadband impulse does);
 *  - hum over floor: 10 lg(H / F) with H the hum power at the mains frequency and its multiples
 *    (ml_hum_analyze_psd, lobe powers) and F what the floor density alone puts into those lobes.
 */
#ifndef ML_DSP_NOISEFLOOR_H
#define ML_DSP_NOISEFLOOR_H

#include <stddef.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"

/* The floor band of s: bins lo .. hi (inclusive). */
void ml_noisefloor_band(const ml_spectrum *s, size_t *lo, size_t *hi);

/* The noise floor (above) of psd[lo .. hi] in dBFS/Hz, using scratch[hi - lo + 1]; NAN for an
 * empty band or a zero median (silence). */
double ml_noisefloor_dbfs_hz(const ml_spectrum *s, const double *psd, size_t lo, size_t hi, double *scratch);

/* Hum over the floor (above) in dB for mains_hz (50 or 60) and its multiples up to hum_harmonics,
 * with the floor floor_dbfs_hz; *hum_dbfs the hum power in dBFS. ML_ENOSIGNAL when no hum
 * component can be measured (every multiple overlaps DC or lies beyond Nyquist), ML_EINVAL. */
ml_status ml_noisefloor_hum_over(const ml_spectrum *s, const double *psd, size_t nbins, double mains_hz,
                                 int hum_harmonics, double floor_dbfs_hz, double *over_db, double *hum_dbfs);

#endif
