/* The FFT length of a Welch spectrum over a span of samples: the one rule for every command.
 * SPDX-License-Identifier: MIT
 *
 * The length is the largest power of two up to the default resolution (ml_spectrum_config_default:
 * bins of about 0.75 Hz) that leaves enough segments in the span for the phase-advance frequency
 * estimate (dsp/spectrum.h):
 *  - ML_RESOLUTION_SPAN (a whole recording): hop nfft/2, at least three segments (2 nfft <= n),
 *    down to 256 points, where one segment is enough;
 *  - ML_RESOLUTION_WINDOW (a live window or a log interval, re-analysed as a whole): hop nfft/4,
 *    at least two segments (nfft + nfft/4 <= n), so that a 1 s window at 48 kHz keeps 32768
 *    points (1.5 Hz bins) and 50 Hz hum clear of the flat-top window's DC lobe.
 */
#ifndef ML_DSP_RESOLUTION_H
#define ML_DSP_RESOLUTION_H

#include <stddef.h>
#include <stdint.h>

typedef enum { ML_RESOLUTION_SPAN, ML_RESOLUTION_WINDOW } ml_resolution;

/* The FFT length for nframes at rate_hz (see above); 0 when nframes is too short. */
size_t ml_resolution_nfft(double rate_hz, int64_t nframes, ml_resolution kind);

/* The hop between segments for that length: nfft/2 or nfft/4. */
size_t ml_resolution_hop(size_t nfft, ml_resolution kind);

#endif
