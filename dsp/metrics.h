/* Audio distortion and noise metrics from a Welch power spectrum (a pure function).
 * SPDX-License-Identifier: MIT
 *
 * Definitions (README "Metric definitions" repeats them for users). All powers are mean squares
 * in full-scale units (a full-scale sine has power 0.5 = 0 dBFS). Bins are counted in the
 * spectrum's nfft; "lobe" is the window's main-lobe half-width plus one bin; a component's lobe
 * is the 2 lobe + 1 bins centred on it.
 *  - fundamental: with a test tone (see "tone or no tone" below), the tone's bin: the strongest
 *    bin in the band that is not a mains line, or the strongest near tone_hz; power P1 = sum of its
 *    lobe's bins / ENBW (the noise inside the lobe is part of it, and so are lobe bins outside the
 *    band or in DC's lobe). A line whose centre lies just below the band's first bin (a tone at
 *    the band's edge) is taken at its own bin.
 *  - harmonic h (2..harmonics, while h*f1 <= band_hi and < Nyquist): the same, around h*f1;
 *    `power` of a harmonic buried in noise therefore reads the noise power of its lobe. When f1
 *    is less than 2 lobe + 1 bins, the harmonics' lobes overlap the fundamental's: they are
 *    listed but never above_noise, and THD is not measurable (ML_WHY_HARMONICS_UNRESOLVED).
 *  - noise density nd: the mean power per bin over the band's bins that are neither DC (bins
 *    below lobe), the fundamental nor a harmonic. Noise N = nd * (band bins above DC) / ENBW: the
 *    excluded bins are filled in at the same density. Hum counts as noise in N; N_nohum is the
 *    same with the lobes of the hum lines that stand above the noise excluded as well.
 *  - residual R: the power of the band's bins (above DC) outside the fundamental's lobe, plus the
 *    parts of harmonic lobes beyond the band; B = P1 + R (so B - P1 >= 0 whatever the tone's place,
 *    a 20 Hz tone whose lobe reaches below the band included). THD+N = sqrt(R/P1).
 *  - D = sum of harmonic powers; THD = sqrt(D/P1); SINAD = 10 lg(P1/R); SNR = 10 lg(P1/N);
 *    ENOB = (SINAD - 1.7609)/6.0206 (IEEE Std 1241-2000 eq. 94 and 102, full-scale sine).
 *  - hum: components at m * mains_hz (m = 1..hum_harmonics) that do not overlap the fundamental,
 *    a harmonic or the previous multiple, and whose lobe clears DC (ml_spectrum_clears_dc), each
 *    measured like a harmonic; hum_power = the sum of their `power`.
 *  Without a test tone (tone_present false) the fields above that current callers read as tone
 *  figures -- fundamental_hz, fundamental_power, harmonics, distortion_power, band_power,
 *  noise_power, noise_density -- describe the band's strongest line (or the strongest near
 *  tone_hz) as they did before tone decisions existed; residual_power, noise_nohum_power, hum[],
 *  hum_power and the figures are the no-tone analysis, where all of the band is noise or hum.
 *  Report from the figures.
 *
 * Honest readings. Every line (harmonic, hum component) also carries the noise expected in its
 * lobe (the local noise density: the mean over the noise bins within 4 lobes on either side,
 * widened until 4 lobes' worth are found, times the lobe's bins / ENBW),
 * and a verdict: it stands above the noise when its power exceeds that noise by more than the
 * 1 - 3e-5 quantile of the ratio of two noise-only estimates (an F distribution with the degrees
 * of freedom of ml_spectrum_dof for the lobe and for the density's bins; ml_f_quantile). A line
 * that does not is not measured: its `upper_power` is a 99 % upper bound on its power instead.
 * The figures of ml_audio_figures are built from these verdicts and carry their state (measured,
 * upper or lower bound, not measurable) and the reason:
 *  - THD: D_m / P1 with D_m the sum of line_power over the harmonics above the noise; when the
 *    others could hide more than 0.5 dB of it -- their joint 99 % bound U (their power beyond
 *    the noise expected in their lobes plus the F-quantile margin on that noise, their degrees of
 *    freedom added) exceeds 0.122 D_m -- the upper bound (D_m + U) / P1 (noise-limited);
 *  - the analysis floor: what the analysis itself puts into the band's noise bins -- the window
 *    leakage of the band's strongest line and of DC (exact, ml_window_leakage, averaged over
 *    sampled noise bins) plus the transform's rounding (1e-28 of the strongest line per bin per
 *    4096 points, 10 dB above what a bin-centred double tone shows); a noise or residual within
 *    6 dB of that floor is no measurement: it becomes an upper bound (and SNR, SINAD, ENOB lower
 *    bounds), never a floor value;
 *  - hum: the sum of line_power of the mains lines above the noise; a lower bound when not every
 *    multiple was resolved (from DC or from each other); with no mains line above the noise the
 *    joint 99 % bound of the slots (the larger of 50 and 60 Hz when the mains was not given).
 * Their values never lie beyond +-ML_FIGURE_DB_LIMIT dB (power ratios, and powers re full scale),
 * and ENOB stays in 0..32 bits: a value that would is replaced by a bound at the limit with reason
 * ML_WHY_OUT_OF_RANGE (a bound that says nothing inside the range becomes not measurable).
 *
 * Tone or no tone (cfg.tone_mode ML_TONE_AUTO):
 *  1. mains lines: among the multiples m = 1..hum_harmonics of 50 and of 60 Hz (or of mains_hz)
 *     that stand above the noise within 1 % of m * mains (frequency from the phase advance
 *     between segments, read at a bin where that estimate is unambiguous), the base -- the
 *     stronger of the two lowest orders that clear DC (50 and 100 Hz: the mains itself and the
 *     rectifier ripple, in practice always where hum is strongest) -- and the higher orders whose
 *     frequency is their order times the base's (half a bin or 0.2 %) and that are less than 6 dB
 *     above the base (stronger, they are a tone at a mains multiple). No base, no mains lines: a
 *     lone line at 250 Hz is no hum. Lines at the strongest line's harmonics are skipped unless
 *     that line is itself a mains line. mains_hz 0 takes the family whose lines hold more power
 *     (multiples of 300 Hz, common to both, count only when nothing else decides), or none.
 *  2. candidate: the strongest bin of the band outside the lobes of those mains lines (with
 *     tone_hz, the strongest within a lobe of it).
 *  3. the candidate is a test tone when it is clear: its power exceeds the noise in its lobe by
 *     more than the 1 - 1e-7 quantile of noise alone (it was picked as the strongest of
 *     thousands of lobes), and it is at least ML_TONE_CLEAR_DB above the noise in the third of an
 *     octave around it (the ear's critical band is about a third of an octave wide: common
 *     practice): the noise density there is the median of the noise bins near the candidate (the
 *     bins the local density averages), scaled to a mean for the chi-square spread of one bin
 *     (median / mean = (1 - 2/(9 nu))^3, nu = ml_spectrum_dof of one bin), times the third
 *     octave's bins; the mean would take other lines among those bins -- strong hum, a carrier's
 *     sidebands, another tone, the splatter beside them -- for noise, the median does not while
 *     they hold fewer than half of the bins; for a candidate
 *     whose lobe does not clear DC's (ml_spectrum_clears_dc) only the lobe's bins beyond DC's
 *     lobe count (DC's leakage is no line: an offset, an unmodulated carrier's envelope). A
 *     candidate at a higher multiple of the mains (order > hum_harmonics, within a bin or 0.05 Hz
 *     per order of the measured mains) must also be 6 dB above the base line, or it is taken for
 *     hum when a neighbouring multiple (order - 1 or order + 1) stands above the noise too (a
 *     buzz's lines come in rows; a lone line on a multiple, 6 kHz beside 50 Hz hum, is a tone). A test
 *     tone at a low multiple of the mains (100 or 150 Hz on 50 Hz mains) needs tone_hz.
 *  ML_TONE_FORCE takes the candidate as the tone whatever its clarity; ML_TONE_NONE has no tone.
 */
#ifndef ML_DSP_METRICS_H
#define ML_DSP_METRICS_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"

#define ML_MAX_HARMONICS 64
#define ML_MAX_HUM 16
#define ML_FIGURE_DB_LIMIT 290.0 /* |10 lg| of every figure's ratio or full-scale power stays below */
#define ML_ENOB_MAX_BITS 32.0    /* ENOB figures stay in 0..32 bits                                 */
#define ML_TONE_CLEAR_DB 10.0    /* a clear tone: this far above the noise in its third octave       */

typedef enum {
    ML_TONE_AUTO = 0, /* decide from the spectrum (the rules above); the default              */
    ML_TONE_FORCE,    /* there is a test tone: the candidate is the fundamental, clear or not  */
    ML_TONE_NONE,     /* there is none: hum and noise only (a carrier hum-and-noise test)      */
} ml_tone_mode;

/* Why a tone was or was not taken, why a figure is not measurable or is a bound. Text:
 * ml_audio_why_text. */
typedef enum {
    ML_WHY_OK = 0,              /* a plain reading                                                 */
    ML_WHY_TONE_CLEAR,          /* auto: a line stands clear of the noise                          */
    ML_WHY_TONE_FORCED,         /* the configuration says there is a tone                          */
    ML_WHY_TONE_OFF,            /* the configuration says there is none                             */
    ML_WHY_TONE_ONLY_HUM,       /* auto: the lines that stand clear of the noise are mains lines    */
    ML_WHY_TONE_NOT_CLEAR,      /* auto: no line stands clear of the noise                          */
    ML_WHY_TONE_NOT_AT_HZ,      /* auto with tone_hz: nothing clear of the noise there              */
    ML_WHY_TONE_WEAK,           /* forced tone that is not clear of the noise (qualifier)           */
    ML_WHY_TONE_DC,             /* the tone's lobe reaches DC's: its level includes DC (qualifier)  */
    ML_WHY_NO_HARMONIC_IN_BAND, /* THD: not even the 2nd harmonic lies inside the band              */
    ML_WHY_HARMONICS_UNRESOLVED,/* THD: the tone is too low for the resolution: its harmonics' lobes
                                   overlap its own (segments too short)                             */
    ML_WHY_HARMONICS_IN_NOISE,  /* THD: harmonics do not stand above the noise: upper bound         */
    ML_WHY_AT_FLOOR,            /* noise within 6 dB of the analysis' own floor: a bound            */
    ML_WHY_OUT_OF_RANGE,        /* beyond ML_FIGURE_DB_LIMIT or 0..32 bits: a bound at the limit    */
    ML_WHY_HUM_UNRESOLVED,      /* no mains multiple clears DC: the segments are too short          */
    ML_WHY_HUM_UNDER_TONE,      /* every mains multiple falls on the tone or a harmonic             */
    ML_WHY_HUM_PARTIAL,         /* the mains fundamental is not resolved: a lower bound             */
    ML_WHY_HUM_IN_NOISE,        /* no mains line stands above the noise: an upper bound             */
    ML_WHY_MAINS_NONE,          /* no mains line stands above the noise: mains "none"               */
    ML_WHY_MAINS_GIVEN,         /* mains frequency from the configuration (qualifier)               */
    ML_WHY_NO_SIGNAL,           /* the analysis found no signal in the band (dsp/figures.h)         */
    ML_WHY_SILENT,              /* every sample is zero (dsp/figures.h)                             */
    ML_WHY_COUNT
} ml_audio_why;

/* One line, lower case, no final period, never NULL ("" for ML_WHY_OK; "unknown" out of range). */
const char *ml_audio_why_text(ml_audio_why why);

typedef enum {
    ML_FIG_MEASURED = 0, /* value is the reading                                                */
    ML_FIG_UPPER,        /* the true value is at most value: print "< value"                     */
    ML_FIG_LOWER,        /* the true value is at least value: print "> value"                    */
    ML_FIG_NONE,         /* not measurable: value is NAN, why says why                           */
} ml_fig_state;

typedef struct {
    ml_fig_state state;
    double value;     /* in the unit its field names; NAN when state is ML_FIG_NONE           */
    ml_audio_why why; /* ML_WHY_OK for a plain reading, else the reason or the qualifier      */
} ml_figure;

/* The report's audio figures, each with its state. Powers are mean squares re full scale
 * (dBFS = 10 lg(power / 0.5), ml_power_dbfs); ratios are power ratios (dB = 10 lg, percent =
 * 100 sqrt). A bound's direction is the figure's own: a noise upper bound gives SNR a lower bound. */
typedef struct {
    ml_figure fundamental_hz; /* Hz                                                            */
    ml_figure fundamental;    /* P1, power                                                     */
    ml_figure thd;            /* D/P1 over the harmonics that stand above the noise; an upper
                                 bound with the 99 % bounds of the others when they could add
                                 more than 0.5 dB                                               */
    ml_figure thdn;           /* R/P1                                                          */
    ml_figure sinad;          /* P1/R                                                          */
    ml_figure snr;            /* P1/N                                                          */
    ml_figure enob;           /* bits, from sinad                                              */
    ml_figure noise;          /* N, power (hum counted as noise; without a tone: all the band)  */
    ml_figure noise_nohum;    /* N_nohum, power                                                */
    ml_figure hum;            /* sum of line_power of the mains lines above the noise, power   */
    ml_figure hum_rel;        /* that over P1                                                  */
    ml_figure mains_hz;       /* 50 or 60 Hz; none when no mains line stands above the noise  */
} ml_audio_figures;

typedef struct {
    double band_lo_hz;    /* lower band edge: >= 0 (default 20)                         */
    double band_hi_hz;    /* upper band edge: > band_lo_hz; clipped to Nyquist (20000)  */
    double tone_hz;       /* expected fundamental, 0 = strongest component in band      */
    int harmonics;        /* highest harmonic order in THD: 2..ML_MAX_HARMONICS (10)    */
    double mains_hz;      /* 50 or 60; 0 = decide from the spectrum (default)           */
    int hum_harmonics;    /* mains multiples measured: 1..ML_MAX_HUM (default 6)        */
    ml_tone_mode tone_mode; /* ML_TONE_AUTO (default), ML_TONE_FORCE, ML_TONE_NONE      */
} ml_audio_config;

typedef struct {
    int order;            /* 2.. for harmonics, 1.. (multiple of mains) for hum         */
    double frequency_hz;  /* nominal: order * fundamental (or * mains)                  */
    double power;         /* mean square in the component's lobe, >= 0 (noise included) */
    double noise_power;   /* the noise expected in its lobe (local density), >= 0       */
    double line_power;    /* power - noise_power, >= 0: the line alone                  */
    double upper_power;   /* 99 % upper bound on the line's power, >= line_power;
                             INFINITY when the noise estimate has too few degrees of
                             freedom for any bound (a handful of noise bins)            */
    bool above_noise;     /* the line stands above the noise (header): a measurement;
                             otherwise report at most "< upper_power", never power      */
} ml_component;

typedef struct {
    double band_lo_hz, band_hi_hz; /* band actually used (after clipping to Nyquist)    */
    double fundamental_hz;         /* the tone's; without one, the strongest line's (header) */
    double fundamental_power;      /* P1; likewise                                      */
    double distortion_power;       /* D                                                 */
    double noise_power;            /* N                                                 */
    double band_power;             /* B = P1 + R                                        */
    double noise_density;          /* nd / ENBW: noise power per bin                    */
    size_t nharmonics;
    ml_component harmonics[ML_MAX_HARMONICS];
    double mains_hz;               /* 50 or 60: as configured, the detected family, or
                                      (none detected) the one whose first four multiples
                                      hold more power -- see figures.mains_hz          */
    bool mains_detected;           /* true when mains_hz was chosen from the spectrum    */
    double hum_power;
    size_t nhum;
    ml_component hum[ML_MAX_HUM];
    double bin_hz;                 /* spectral resolution used                          */

    /* tone or no tone (header) */
    bool tone_present;             /* a test tone was taken: the tone figures exist      */
    bool tone_clear;               /* the candidate stands clear of the noise            */
    ml_audio_why tone_why;         /* ML_WHY_TONE_*: why there is or is not a tone       */
    double candidate_hz;           /* the candidate's frequency; 0 when the band had none */
    double candidate_margin_db;    /* its power over the noise in its third octave, dB
                                      (NAN without a candidate or without noise)         */
    /* noise and floor */
    double residual_power;         /* R (summed directly: no cancellation in B - P1);
                                      without a tone, all of the band                  */
    double noise_nohum_power;      /* N_nohum                                            */
    double floor_density;          /* the analysis' own floor per bin (/ ENBW): window
                                      leakage of the strongest line and of DC (exact,
                                      ml_window_leakage) plus the transform's rounding   */
    bool hum_fundamental_resolved; /* the mains fundamental's lobe clears DC             */
    ml_audio_figures figures;      /* the report's figures with state and reason        */
} ml_audio_result;

ml_audio_config ml_audio_config_default(void);

/* Measures the spectrum accumulated in spec (real input). ML_EINVAL for a bad config (band
 * empty after clipping, tone outside the band, orders or tone_mode out of range); ML_ENOSIGNAL
 * when no segment is complete or the band holds no power at all; ML_ENOMEM when its temporary
 * per-bin buffers (about 9 bytes per bin, freed before return) cannot be allocated. ML_OK also
 * when there is no test tone: tone_present then says so and the tone figures are not measurable. */
ml_status ml_audio_analyze(const ml_spectrum *spec, const ml_audio_config *cfg, ml_audio_result *out);

/* Hum alone, for a spectrum without a test tone: psd[nbins] from ml_spectrum_get_psd(spec) (real
 * input). Components at m * mains_hz (m = 1..hum_harmonics) whose lobe clears DC, each measured as
 * above (noise in its lobe included, the verdict and bounds against the band's noise outside
 * every mains multiple); mains_hz 0 chooses 50 or 60 by the larger power in the first four
 * multiples. Fills only bin_hz, mains_hz, mains_detected, nhum, hum[] and hum_power of out.
 * Never allocates. ML_EINVAL. */
ml_status ml_hum_analyze_psd(const ml_spectrum *spec, const double *psd, size_t nbins, double mains_hz,
                             int hum_harmonics, ml_audio_result *out);

/* One line against the noise near it, as harmonics and hum are measured (header): the component
 * whose lobe is centred on bin c of psd[nbins] (ml_spectrum_get_psd(spec), real input), the noise
 * density taken over the bins within 4 lobes (widened as needed) that lie in no lobe of c or of
 * the nexcl other line centres excl (bins, may be NULL when nexcl is 0) and above DC's lobe.
 * Fills power, noise_power, line_power, upper_power, above_noise and frequency_hz (c's bin
 * frequency); order 0. ML_EINVAL for bad arguments (c must clear DC and lie a lobe below
 * Nyquist, nexcl <= 64). Never allocates. */
ml_status ml_line_measure(const ml_spectrum *spec, const double *psd, size_t nbins, size_t c, const size_t *excl,
                          size_t nexcl, ml_component *out);

/* The analysis transform for a capture of nframes frames at rate_hz (the audio measurement's
 * spectrum), such that the mains lines are resolved: the fundamental's lobe clears DC (with DC
 * removal: ml_spectrum_clears_dc) and the multiples' lobes each other (mains at least 2 lobe + 1
 * bins), with at least two segments (the frequency estimate needs the phase advance between
 * two) and hop <= nfft/2.
 *  - First choice, as for long captures: the preferred window, the largest power of two up to
 *    ml_spectrum_config_default's nfft with three half-overlapping segments (2 nfft <= nframes),
 *    at least 256; kept when it resolves the mains lines.
 *  - Otherwise the preferred window, then each window of fewer terms (HFT144D, Blackman-Harris,
 *    Hann: narrower lobes, more leakage), at the smallest nfft that resolves them, if
 *    nframes >= nfft + 1; hop = min(nfft/2, (nframes - nfft)/2), at least 1 (three segments when
 *    the capture allows).
 *  - Otherwise the same search for the fundamental alone (hum_resolved false,
 *    hum_fundamental_resolved true: every other multiple is left out, hum is a lower bound).
 *  - Otherwise the first choice, with both false: hum is not measurable on this capture.
 * hum_min_frames: when not hum_resolved, the shortest capture on which it would be (with the
 * narrowest window). mains_hz: 50, 60 or 0 (either: 50 Hz, the lower, must be resolved).
 * remove_dc is set in the config. ML_EINVAL for bad arguments; ML_ENOSIGNAL when nframes < 256
 * (too few to analyse). Never allocates. */
typedef struct {
    ml_spectrum_config spectrum;   /* ready for ml_spectrum_create                         */
    bool hum_resolved;             /* every mains line is resolved with this transform     */
    bool hum_fundamental_resolved; /* at least the fundamental clears DC                   */
    int64_t hum_min_frames;        /* shortest capture that resolves them (0 when resolved) */
} ml_audio_plan;

ml_status ml_audio_plan_transform(double rate_hz, int64_t nframes, ml_window_type preferred, double mains_hz,
                                  ml_audio_plan *out);

/* The upper (1 - alpha) quantile of the F distribution with a and b degrees of freedom (> 0), for
 * the standard normal quantile z of 1 - alpha (z > 0): Paulson's cube-root approximation, solved
 * for F. Against scipy's exact quantiles it lies 0 to 3 % above them (more conservative, never
 * below) for a >= 10, b >= 50 and z up to 5.2, the range the analysis uses, and up to 15 % above for
 * fewer degrees of freedom (tests/unit/test_dsp_metrics.c). b = INFINITY gives the chi-square
 * quantile / a (Wilson-Hilferty). NAN for a, b or z not > 0; INFINITY when b is too small for z. */
double ml_f_quantile(double a, double b, double z);

/* Derived figures, all finite for positive inputs (ratios of powers). */
double ml_ratio_pct(double num_power, double den_power);  /* 100 sqrt(num/den) */
double ml_ratio_db(double num_power, double den_power);   /* 10 lg(num/den), >= -300 */
double ml_power_dbfs(double power);                        /* 10 lg(power/0.5), >= -300 */
double ml_enob_bits(double sinad_db);                      /* (SINAD - 1.7609)/6.0206 */

#endif
