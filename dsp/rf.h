/* Measurements on the spectrum of the captured signal itself (IF or I/Q): carrier, discrete
 * components, occupied bandwidth, emission mask, noise in the channel. Pure functions over an
 * ml_spectrum (dsp/spectrum.h); frequencies are signed for complex spectra.
 * SPDX-License-Identifier: MIT
 *
 * A component's power is the sum of the bins within +-lobe of its nearest bin divided by the
 * ENBW (as in dsp/metrics.h); its amplitude is sqrt(power / full-scale power), i.e. the peak of a
 * real sine or the magnitude of a complex exponential, in full-scale units.
 */
#ifndef ML_DSP_RF_H
#define ML_DSP_RF_H

#include <stddef.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"

#define ML_MASK_MAX_POINTS 32

typedef struct {
    size_t npoints;
    double offset_hz[ML_MASK_MAX_POINTS]; /* ascending, >= 0: distance from the carrier            */
    double dbc[ML_MASK_MAX_POINTS];       /* highest allowed level there, dB re the carrier        */
    double rbw_hz;                        /* resolution bandwidth the levels refer to (e.g. 300)   */
} ml_mask;

/* Strongest component with frequency in [lo_hz, hi_hz]: its precise frequency (phase advance,
 * see ml_spectrum_get_frequency) and amplitude. ML_ENOSIGNAL when the range holds no power,
 * ML_EINVAL for an empty range. */
ml_status ml_rf_find_peak(const ml_spectrum *s, double lo_hz, double hi_hz, double *hz, double *amplitude);

/* Amplitude of the component nearest f_hz (see above); 0 when f_hz is outside the spectrum. */
double ml_rf_amplitude(const ml_spectrum *s, double f_hz);

/* Power (mean square) of all bins with frequency in [lo_hz, hi_hz] divided by the ENBW. */
double ml_rf_band_power(const ml_spectrum *s, double lo_hz, double hi_hz);

/* Occupied bandwidth [ITU-R SM.328]: the band outside which beta/2 of the total power lies on
 * each side (beta = 1 - fraction, fraction 0.99 for the 99 % bandwidth). Bins below the DC lobe
 * of a real spectrum are left out (sound-card offset). Edges are interpolated within a bin.
 * ML_ENOSIGNAL without power; ML_EINVAL for fraction outside (0, 1). */
ml_status ml_rf_occupied_bandwidth(const ml_spectrum *s, double fraction, double *lo_hz, double *hi_hz);

/* Worst margin of the spectrum against mask around carrier_hz: at every bin at an offset between
 * the first and last mask point (both sides), the power in rbw_hz centred there, in dB re
 * carrier_power, is compared with the mask (linear in dB between points; at a repeated offset the
 * later point holds beyond it). margin = limit - level: positive means inside the mask.
 * *worst_offset_hz gets the signed offset of the worst point. ML_ENOSIGNAL when no bin is in
 * range (the capture is too narrow for the mask). */
ml_status ml_rf_mask_margin(const ml_spectrum *s, double carrier_hz, double carrier_power,
                            const ml_mask *mask, double *margin_db, double *worst_offset_hz);

/* Mean noise power per bin (divided by ENBW) in [lo_hz, hi_hz], leaving out the +-lobe bins of
 * each frequency in exclude[nexclude] (carrier, sidebands, hum lines). Multiply by the bins of a
 * band to get its noise power. ML_ENOSIGNAL when no bin is left. */
ml_status ml_rf_noise_density(const ml_spectrum *s, double lo_hz, double hi_hz, const double *exclude,
                              size_t nexclude, double *per_bin);

/* How far the component at f_hz stands out of the spectrum around it: 10 lg(P / (m (2 lobe + 1))),
 * P the component's power (its +-lobe bins) and m the median power per bin of the
 * ML_RF_PROMINENCE_BINS bins on each side beyond its lobe (bins outside the spectrum, and a real
 * spectrum's DC lobe, left out). A line of power P reads 10 lg(P / (density x lobe width)); the
 * strongest component of white noise a few dB (the median of a Welch average sits up to 1.6 dB
 * below the mean). NAN when no bin is left or the median is 0 with P 0; +inf over a median of 0. */
#define ML_RF_PROMINENCE_BINS 512
double ml_rf_line_prominence_db(const ml_spectrum *s, double f_hz);

/* Carrier-to-noise ratio in the channel f_car_hz +- bw_hz: 10 lg(p_car / (nd * 2 bw_hz / bin)),
 * where p_car is the carrier's power and nd the noise density (ml_rf_noise_density over the
 * channel) with the lines of the carrier, of the tone's sidebands f_car +- h fm_hz (h = 1 ..
 * harmonics while h fm_hz <= bw_hz; none when fm_hz <= 0) and of hum f_car +- h mains_hz (h = 1 ..
 * hum_harmonics; none when mains_hz <= 0) left out. NAN when no noise can be measured. */
double ml_rf_cnr_db(const ml_spectrum *s, double f_car_hz, double p_car, double bw_hz, double fm_hz, int harmonics,
                    double mains_hz, int hum_harmonics);

#endif
