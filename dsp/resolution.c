/* The FFT length of a Welch spectrum over a span (see dsp/resolution.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/resolution.h"

#include "dsp/spectrum.h"

size_t ml_resolution_nfft(double rate_hz, int64_t nframes, ml_resolution kind)
{
    size_t nfft = ml_spectrum_config_default(rate_hz).nfft;
    if (kind == ML_RESOLUTION_WINDOW) {
        while (nfft > 256 && (int64_t)(nfft + nfft / 4) > nframes)
            nfft /= 2;
        return (int64_t)(nfft + nfft / 4) <= nframes ? nfft : 0;
    }
    /* at least three half-overlapping segments, so the frequency comes from phase advances */
    while (nfft > 256 && 2 * (int64_t)nfft > nframes)
        nfft /= 2;
    return (int64_t)nfft > nframes ? 0 : nfft;
}

size_t ml_resolution_hop(size_t nfft, ml_resolution kind)
{
    return kind == ML_RESOLUTION_WINDOW ? nfft / 4 : nfft / 2;
}
