/* Audio distortion and noise metrics from a Welch power spectrum (a pure function).
 * SPDX-License-Identifier: MIT
 *
 * Definitions (README "Metric definitions" repeats them for users). All powers are mean squares
 * in full-scale units (a full-scale sine has power 0.5 = 0 dBFS). Bins are counted in the
 * spectrum's nfft; "lobe" is the window's main-lobe half-width plus one bin.
 *  - fundamental: the strongest bin in the band (or the bin nearest tone_hz, searched +-lobe);
 *    power P1 = sum of the +-lobe bins / ENBW (the noise inside the lobe is part of it).
 *  - harmonic h (2..harmonics, while h*f1 <= band_hi and < Nyquist): the same, around h*f1;
 *    a harmonic buried in noise therefore reads the noise power of its lobe.
 *  - noise density nd: the mean power per bin over the band's bins that are neither DC (bins
 *    below lobe), the fundamental nor a harmonic. Noise N = nd * (band bins above DC) / ENBW: the
 *    excluded bins are filled in at the same density.
 *  - D = sum of harmonic powers; THD = sqrt(D/P1); THD+N = sqrt((B - P1)/P1), where B is the
 *    power of the band's bins above DC; SINAD = 10 lg(P1/(B - P1)); SNR = 10 lg(P1/N);
 *    ENOB = (SINAD - 1.7609)/6.0206 (IEEE Std 1241-2000 eq. 94 and 102, full-scale sine).
 *  - hum: components at m * mains_hz (m = 1..hum_harmonics) that do not overlap the fundamental
 *    or a harmonic, each measured like a harmonic; hum power = their sum.
 */
#ifndef ML_DSP_METRICS_H
#define ML_DSP_METRICS_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"

#define ML_MAX_HARMONICS 64
#define ML_MAX_HUM 16

typedef struct {
    double band_lo_hz;    /* lower band edge: >= 0 (default 20)                         */
    double band_hi_hz;    /* upper band edge: > band_lo_hz; clipped to Nyquist (20000)  */
    double tone_hz;       /* expected fundamental, 0 = strongest component in band      */
    int harmonics;        /* highest harmonic order in THD: 2..ML_MAX_HARMONICS (10)    */
    double mains_hz;      /* 50 or 60; 0 = decide from the spectrum (default)           */
    int hum_harmonics;    /* mains multiples measured: 1..ML_MAX_HUM (default 6)        */
} ml_audio_config;

typedef struct {
    int order;            /* 2.. for harmonics, 1.. (multiple of mains) for hum         */
    double frequency_hz;  /* nominal: order * fundamental (or * mains)                  */
    double power;         /* mean square in the component's lobe, >= 0                  */
} ml_component;

typedef struct {
    double band_lo_hz, band_hi_hz; /* band actually used (after clipping to Nyquist)    */
    double fundamental_hz;
    double fundamental_power;      /* P1                                                */
    double distortion_power;       /* D                                                 */
    double noise_power;            /* N                                                 */
    double band_power;             /* B                                                 */
    double noise_density;          /* nd / ENBW: noise power per bin                    */
    size_t nharmonics;
    ml_component harmonics[ML_MAX_HARMONICS];
    double mains_hz;
    bool mains_detected;           /* true when mains_hz was chosen from the spectrum    */
    double hum_power;
    size_t nhum;
    ml_component hum[ML_MAX_HUM];
    double bin_hz;                 /* spectral resolution used                          */
} ml_audio_result;

ml_audio_config ml_audio_config_default(void);

/* Measures the spectrum accumulated in spec. ML_EINVAL for a bad config (band empty after
 * clipping, tone outside the band, orders out of range); ML_ENOSIGNAL when no segment is
 * complete or the band holds no power at all; ML_ENOMEM when its temporary per-bin buffers
 * (about 9 bytes per bin, freed before return) cannot be allocated. */
ml_status ml_audio_analyze(const ml_spectrum *spec, const ml_audio_config *cfg, ml_audio_result *out);

/* Hum alone, for a spectrum without a test tone: psd[nbins] from ml_spectrum_get_psd(spec) (real
 * input). Components at m * mains_hz (m = 1..hum_harmonics) whose lobe clears DC, each measured as
 * above (noise in its lobe included); mains_hz 0 chooses 50 or 60 as above. Fills only bin_hz,
 * mains_hz, mains_detected, nhum, hum[] and hum_power of out. Never allocates. ML_EINVAL. */
ml_status ml_hum_analyze_psd(const ml_spectrum *spec, const double *psd, size_t nbins, double mains_hz,
                             int hum_harmonics, ml_audio_result *out);

/* Derived figures, all finite for positive inputs (ratios of powers). */
double ml_ratio_pct(double num_power, double den_power);  /* 100 sqrt(num/den) */
double ml_ratio_db(double num_power, double den_power);   /* 10 lg(num/den), >= -300 */
double ml_power_dbfs(double power);                        /* 10 lg(power/0.5), >= -300 */
double ml_enob_bits(double sinad_db);                      /* (SINAD - 1.7609)/6.0206 */

#endif
