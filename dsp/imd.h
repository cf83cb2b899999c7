/* Intermodulation distortion from a Welch spectrum: SMPTE RP120 / DIN 45403 and difference-frequency.
 * SPDX-License-Identifier: MIT
 *
 * Test signals (docs/references.md 5 and 12):
 *  - SMPTE / DIN ("modulation" IMD): a low tone fl (SMPTE 60 Hz, DIN/IEC 250 Hz) and a high tone fh
 *    (7 kHz, 8 kHz) at about 4:1 amplitude (fh 12 dB below fl). Products are the sidebands fh +- n fl.
 *  - difference-frequency (DFD, CCIF/IEC twin tone): two tones f1 < f2 of about equal level close
 *    together (19 + 20 kHz, 13 + 14 kHz).
 * Automatic detection (method ML_IMD_AUTO): the two strongest components whose lobes do not overlap,
 * each standing more than ML_IMD_CLEAR_DB above the noise a lobe holds at the median density of
 * the bins above DC's lobe (so that two peaks of noise or hum are no test signal); SMPTE when the
 * lower lies below 500 Hz, the upper above 3 kHz and the lower is 6 to 18 dB stronger (4:1 = 12 dB,
 * +-6 dB); DFD when they lie within 3 dB of each other and f2 - f1 <= f2 / 4; else no
 * IMD signal (ML_ENOSIGNAL). A forced method uses those two components (or the ones nearest to the
 * given frequencies) whatever their levels.
 *
 * Amplitudes: a component at f reads U(f) = sqrt(2 P), P = the power in the +-lobe bins around the
 * bin nearest f divided by the window's ENBW (as in dsp/metrics.h: noise in the lobe included), so
 * a full-scale sine reads 1.0. Tone frequencies are refined with ml_spectrum_get_frequency.
 * Figures (all in %, ratios of amplitudes x 100):
 *  - smpte_pct = sqrt(sum_{n=1..N} U(fh - n fl)^2 + U(fh + n fl)^2) / U(fh), N = smpte_orders
 *    (the analyser r.s.s. convention of SMPTE RP120; docs/references.md 5);
 *  - smpte_d2_pct = [U(fh - fl) + U(fh + fl)] / U(fh), smpte_d3_pct = [U(fh - 2 fl) + U(fh + 2 fl)]
 *    / U(fh) (IEC 60268-3 14.12.7: arithmetic sums per order);
 *  - dfd2_pct = U(f2 - f1) / (2 U(f2)), dfd3_pct = [U(2 f1 - f2) + U(2 f2 - f1)] / (2 U(f2))
 *    (IEC 60268-3 14.12.8.1).
 * The two conventions differ for the same spectrum (docs/references.md 10 item 9): both are given.
 * Noise limit: each product's noise reference is the mean power per bin of the bins within
 * +-8 lobes of it that belong to no tone or product lobe, times (2 lobe + 1) / ENBW. A product whose
 * lobe power is not more than noise_margin_db above that is below the noise: its U is an upper
 * bound, not a value (upper_bound; also a product of zero power where the noise is zero). A figure
 * is an upper bound when such products carry more than half of it (of the power for smpte_pct, of
 * the amplitude sum for the others), or when it is zero (a noiseless spectrum with no products).
 * A product outside 0 < f < Nyquist (its lobe clear of DC and Nyquist) is left out of the sums and
 * counted in nskipped.
 * References: [rp120] SMPTE RP120; [iec60268-3] IEC 60268-3 14.12.7, 14.12.8; [din45403] DIN 45403.
 */
#ifndef ML_DSP_IMD_H
#define ML_DSP_IMD_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"

#define ML_IMD_MAX_ORDER 10
#define ML_IMD_CLEAR_DB 30.0 /* auto: each tone this far above the median noise (a lobe's worth) */

typedef enum {
    ML_IMD_AUTO = 0, /* detect from the spectrum (config only)                    */
    ML_IMD_SMPTE,    /* low + high tone, sidebands fh +- n fl                      */
    ML_IMD_DFD,      /* two close tones of equal level                             */
    ML_IMD_METHOD_COUNT
} ml_imd_method;

typedef struct {
    ml_imd_method method;   /* default ML_IMD_AUTO                                                */
    double f1_hz, f2_hz;    /* 0: detect; else both > 0 and f1 < f2 (SMPTE: fl, fh; DFD: f1, f2),
                               the tones are then searched within +-lobe bins of these            */
    int smpte_orders;       /* N, 1 .. ML_IMD_MAX_ORDER (default 3: orders 2 to 4)                */
    double noise_margin_db; /* 0 .. 40 (default 6)                                                */
} ml_imd_config;

typedef struct {
    double frequency_hz; /* nominal, from the refined tone frequencies               */
    int n;               /* SMPTE: -n for fh - n fl, +n for fh + n fl; DFD: 2 for f2 - f1,
                            -3 for 2 f1 - f2, +3 for 2 f2 - f1                        */
    double amplitude;    /* U, full-scale sine = 1                                   */
    double noise_amplitude; /* U the noise alone would read in this lobe             */
    bool upper_bound;    /* below the noise (see above)                              */
} ml_imd_product;

typedef struct {
    ml_imd_method method;         /* the method measured (never AUTO)                             */
    bool detected;                /* the method was chosen from the spectrum                      */
    double f1_hz, f2_hz;          /* tones (SMPTE: fl, fh), refined                               */
    double u1, u2;                /* their amplitudes                                             */
    double ratio_db;              /* 20 lg(u1 / u2)                                               */
    int smpte_orders;             /* N used                                                       */
    double smpte_pct, smpte_d2_pct, smpte_d3_pct; /* NAN unless SMPTE                               */
    bool smpte_upper_bound, smpte_d2_upper_bound, smpte_d3_upper_bound;
    double dfd2_pct, dfd3_pct;    /* NAN unless DFD                                               */
    bool dfd2_upper_bound, dfd3_upper_bound;
    size_t nproducts;
    ml_imd_product products[2 * ML_IMD_MAX_ORDER];
    size_t nskipped;              /* products outside the usable band                             */
} ml_imd_result;

ml_imd_config ml_imd_config_default(void);

/* Intermodulation of the real spectrum spec. ML_EINVAL for NULL arguments, a complex spectrum or a
 * bad config (method, orders, margin out of range; frequencies negative, unordered or not below
 * Nyquist); ML_ENOSIGNAL when no segment is complete, fewer than two tones are found, or (AUTO) the
 * two strongest tones form no IMD test signal; ML_ENOMEM when the temporary copy of the spectrum
 * (8 bytes per bin, twice for AUTO; freed before return) cannot be allocated. */
ml_status ml_imd_analyze(const ml_spectrum *spec, const ml_imd_config *cfg, ml_imd_result *out);

const char *ml_imd_method_name(ml_imd_method m); /* "auto", "smpte", "dfd"; "unknown" */

#endif
