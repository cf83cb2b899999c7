/* Kind evidence: whether two channels are an I/Q pair, and whether one real channel holds an AM IF
 * signal or audio. Pure computation; the analyzer decides and reports.
 * SPDX-License-Identifier: MIT
 *
 * Two channels (ml_pair, streamed, bounded memory). With x and y the two channels and
 * z = x + j y (y taken as Q):
 *  - principal fraction: the share of the pair's power (means removed) in its principal
 *    component, lambda_max / (lambda_1 + lambda_2) of the 2x2 covariance: 1 for two copies of one
 *    signal at any gains (or polarity), 0.5 for a balanced quadrature pair;
 *  - correlation: the correlation coefficient of x and y (sign of the relation);
 *  - image ratio: for the strongest line of z's spectrum (Welch, complex input), the power of the
 *    line at +f over the power at -f (its mirror); for two real signals |Z(f)| = |Z(-f)| up to the
 *    quadrature part of their cross-spectrum, which only a quadrature pair has, so a real I/Q
 *    capture of a carrier shows a one-sided spectrum (the image far below the line) and any two
 *    real signals (copies, or different programmes) a mirror-symmetric one;
 *  - asymmetry: total power at positive over negative frequencies (DC's lobe left out).
 * Verdict (first that applies):
 *  1. ML_PAIR_SILENT: a channel holds nothing (mean square 0, or 100 dB below the other);
 *  2. ML_PAIR_COPIES: principal fraction >= 0.9 (correlation about 0.8 or more at equal gains):
 *     one signal on both channels (a stereo recording of one source, a real IF saved as stereo) --
 *     never an I/Q pair;
 *  3. ML_PAIR_IQ: the strongest line lies off DC (farther than its lobe) and its image ratio is
 *     >= 10 dB, or (no such line) the asymmetry is >= 10 dB: a quadrature relation;
 *  4. ML_PAIR_TWO_SIGNALS: otherwise: a mirror-symmetric spectrum, two real signals.
 * A pair whose carrier lies within a lobe of 0 Hz carries the same waveform on I and Q up to the
 * carrier phase: it cannot be told from two copies and is read as ML_PAIR_COPIES. So is a pair
 * with more than about 53 degrees of phase error (its principal fraction (1 + |sin phi|)/2
 * reaches 0.9). Two copies each with independent noise 10 dB below the common signal have a
 * principal fraction of 0.95; with equal noise and signal, 0.75, then read (rule 4) as two signals.
 *
 * One real channel (ml_if_evidence, from its Welch spectrum): fc is the band's strongest line (the
 * tone decision of dsp/metrics.h with a tone forced). Every line below counts only when it also
 * stands above the analysis' own floor (ml_audio_result.floor_density: window leakage and
 * rounding, with the 6 dB margin of dsp/metrics.h) and lies less than 200 dB below fc (float
 * samples round about 150 dB down, dsp/figures.h): the residue of a synthetic or float capture
 * is no sideband, harmonic or hum. Verdict (first that applies):
 *  0. fc below -ML_FIGURE_DB_LIMIT dBFS or not above the floor: undecided (no signal); fc not
 *     clear of the noise (ml_audio_result.tone_clear, dsp/metrics.h): audio (noise, or hum and
 *     noise: no carrier);
 *  1. fc below 3 kHz: audio (an IF carrier sits above the audio it carries);
 *  2. a symmetric pair of sidebands at fc +- fm (the strongest component within +-10 kHz of fc,
 *     outside its lobe, and its mirror both stand above the noise, within 3 dB of each other):
 *     audio when the band also holds a line at fm itself at least as strong as the sidebands (they
 *     are then intermodulation of the tone with that line, which in audio is always weaker than
 *     its cause), else IF (a carrier with its modulation);
 *  3. hum sidebands: the pair fc +- k mains (k = 1, 2, 3, mains 50 or 60 Hz) above the noise and
 *     within 3 dB: audio when the baseband hum line at k mains is at least as strong, else IF (a
 *     carrier with hum modulation; a tone whose amplitude is modulated by hum, with no hum of its
 *     own at baseband, looks the same and is read as IF: give the kind to override);
 *  4. harmonics of fc above the noise (2 fc below Nyquist): audio (an AM channel holds nothing at
 *     twice its carrier);
 *  5. mains hum at baseband above the noise (and none on fc): audio;
 *  6. otherwise (a lone line above 3 kHz, perhaps in noise): IF, an unmodulated carrier.
 */
#ifndef ML_DSP_KIND_H
#define ML_DSP_KIND_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"

typedef enum {
    ML_PAIR_UNDECIDED = 0, /* nothing pushed yet (no complete segment)                      */
    ML_PAIR_IQ,            /* a quadrature pair: read as I/Q                                 */
    ML_PAIR_COPIES,        /* one signal on both channels: read one channel                  */
    ML_PAIR_TWO_SIGNALS,   /* two real signals, mirror-symmetric: read one channel           */
    ML_PAIR_SILENT,        /* a channel is silent: read the other                            */
} ml_pair_verdict;

typedef struct {
    double rate_hz; /* > 0                                                               */
    size_t nfft;    /* the complex spectrum's transform: a power of two 16..2^20 (bins of
                       about 3 Hz: 16384 at 48 kHz); hop nfft/2, window HFT248D        */
} ml_pair_config;

typedef struct {
    ml_pair_verdict verdict;
    double power_x, power_y;     /* mean squares, means removed                          */
    double correlation;          /* -1..1; NAN when a channel is constant                */
    double principal_fraction;   /* 0.5..1; NAN when both are constant                   */
    double line_hz;              /* strongest line of x + j y (NAN: none off DC)         */
    double image_db;             /* its power over its mirror's, dB (NAN: no line)       */
    double asymmetry_db;         /* power at f > 0 over f < 0, dB (NAN: no power)         */
    size_t silent_channel;       /* 1 or 2 when ML_PAIR_SILENT, else 0                    */
} ml_pair_result;

typedef struct ml_pair ml_pair;

ml_pair_config ml_pair_config_default(double rate_hz);
/* Allocates everything (the complex spectrum). ML_EINVAL | ML_ENOMEM | ML_EFFT leave *out NULL.
 * Not thread-safe (FFTW planner). */
ml_status ml_pair_create(const ml_pair_config *cfg, ml_pair **out);
void ml_pair_destroy(ml_pair *q); /* NULL is a no-op */
void ml_pair_reset(ml_pair *q);   /* as just created; no allocation */
/* Appends nframes interleaved frames of `channels` samples; ch_x and ch_y (0-based, different,
 * < channels) are the two channels (x as I, y as Q). Any nframes; never allocates; the result
 * does not depend on how the frames are split into calls. */
ml_status ml_pair_push(ml_pair *q, const float *frames, size_t nframes, size_t channels, size_t ch_x, size_t ch_y);
/* The evidence so far (header). ML_EINVAL for NULL. */
ml_status ml_pair_get(const ml_pair *q, ml_pair_result *r);
/* One line saying why (no final period, e.g. "the channels carry one signal (principal fraction
 * 0.9998, correlation 0.9997, levels 0.0 dB apart): not an I/Q pair") into buf[n] (truncated to
 * fit, always terminated when n > 0). Returns buf. */
char *ml_pair_reason(const ml_pair_result *r, char *buf, size_t n);

typedef enum {
    ML_CHANNEL_UNDECIDED = 0, /* no signal in the band                                        */
    ML_CHANNEL_AUDIO,
    ML_CHANNEL_IF,
} ml_channel_verdict;

typedef enum {
    ML_IFW_NONE = 0,            /* no signal                                                   */
    ML_IFW_LOW,                 /* rule 1: below 3 kHz                                         */
    ML_IFW_SIDEBANDS,           /* rule 2: IF, symmetric sidebands                             */
    ML_IFW_SIDEBANDS_IMD,       /* rule 2: audio, the sidebands' cause is in the band          */
    ML_IFW_HUM_SIDEBANDS,       /* rule 3: IF, hum sidebands                                   */
    ML_IFW_HUM_IMD,             /* rule 3: audio, hum at baseband at least as strong           */
    ML_IFW_HARMONICS,           /* rule 4: audio                                               */
    ML_IFW_BASEBAND_HUM,        /* rule 5: audio                                               */
    ML_IFW_LONE_CARRIER,        /* rule 6: IF                                                  */
    ML_IFW_NOISE,               /* rule 0: audio, no line stands clear of the noise             */
} ml_if_why;

typedef struct {
    ml_channel_verdict verdict;
    ml_if_why why;
    double carrier_hz;     /* fc (0 without signal)                                        */
    double sideband_hz;    /* fm of the sideband pair found (rules 2, 3), else 0           */
    double sideband_dbc;   /* the stronger sideband re fc, dB (NAN: none)                   */
    double baseband_dbc;   /* the line at fm (rule 2) or k mains (rule 3, 5) re fc (NAN)    */
    double harmonic_dbc;   /* the strongest harmonic above the noise re fc (NAN: none)       */
} ml_if_evidence_result;

/* The evidence that the real channel whose Welch spectrum is spec (real input, at least one
 * segment) holds an AM IF signal or audio (header). mains_hz: 50, 60 or 0 (either). Allocates
 * temporaries (a few bytes per bin, freed before return). ML_EINVAL, ML_ENOMEM; ML_OK with
 * ML_CHANNEL_UNDECIDED when the band holds nothing. */
ml_status ml_if_evidence(const ml_spectrum *spec, double mains_hz, ml_if_evidence_result *r);
/* One line saying why into buf[n], as ml_pair_reason. Returns buf. */
char *ml_if_evidence_reason(const ml_if_evidence_result *r, char *buf, size_t n);

#endif
