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
 *     >= 10 dB, and every other line passes the mirror test below; or (no such line) the
 *     asymmetry is >= 10 dB: a quadrature relation. ML_PAIR_MIRRORED when the strongest line
 *     passes and another line fails: a quadrature relation at one frequency only, which a copy of
 *     one signal delayed (or filtered) between the channels has: a delay tau puts 360 f tau
 *     degrees between the channels at f, near 90 at some line (its image low) but not at the
 *     others (the 2nd harmonic of a tone at 90 degrees sits at 180: image 0 dB). A true I/Q pair's
 *     gain and phase errors hardly depend on frequency: every line's image lies about as far
 *     below it as the strongest's, and a receiver's image rejection is 25-40 dB (common
 *     practice, uncorrected sound-card I/Q receivers at the low end).
 *     The mirror test: a line of z is a local maximum (over +-lobe bins) whose peak bin stands
 *     10 dB above the noise density there (the median bin of a block of 8 lobes' bins, scaled to
 *     the mean, the largest of the block and its neighbours: with Gaussian noise averaged over
 *     the 3 or more segments the analysis takes, a bin 10 dB above the mean is less than 1e-9
 *     likely) and within 60 dB of the strongest line's peak bin (a copy's harmonics at 0.1 %
 *     and its hum count), its peak bin outside DC's lobe (an SDR's DC offset is its own mirror;
 *     the flat-top window's side lobes lie 200 dB down, so a line beyond the lobe is clear of
 *     it), away from Nyquist and farther than 2 lobes from the strongest line and its mirror,
 *     tested from the stronger side of the pair f, -f (peak bins: the window holds a line's
 *     power there whatever its offset, and a real signal's mirror has the mirrored offset). It
 *     fails when the peak bin at -f also stands 10 dB above the noise and less than R dB below
 *     the line's, R = the strongest line's image ratio less 6 dB, kept within 15..20 dB (15 dB:
 *     the least image rejection granted any line; 20 dB: 5 dB inside the 25 dB of the poorest
 *     receivers), unless both f and -f are sidebands of the strongest line (each has a
 *     counterpart 2 fmax - f clear of the noise within 3 dB of it: modulation products of a
 *     carrier near 0 Hz that cross to the other side). A line too weak to show its mirror above
 *     the noise cannot fail. Mains hum at baseband counts like any line: a copy delayed by tau
 *     keeps its hum nearly symmetric (360 x 50 tau degrees), and so does hum a sound card picks
 *     up on both inputs of an I/Q receiver: such a capture with hum within 60 dB of its carrier
 *     reads as ML_PAIR_MIRRORED (give --kind iq; read alone, its I channel is the IF at |fc|).
 *     A single line with no other line clear of the noise cannot be told from a delayed copy of
 *     one pure tone: it stays ML_PAIR_IQ on its own image ratio (10 dB); give --kind to
 *     override. Two stations at +f and -f of one I/Q capture read as ML_PAIR_MIRRORED too;
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
 *  1b. a baseband line about as strong as fc: the strongest bin of 20 Hz .. 3 kHz (its lobe
 *     clear of DC's and of fc's), a line above the noise and the floor whose line power is no
 *     more than 3 dB below fc's, and no member of a symmetric pair around fc (its counterpart
 *     2 fc - f within 3 dB: a sideband of fc): audio. An AM signal's carrier is its strongest
 *     line (each sideband is (m/2)^2 of it, -6.02 dBc at m = 1, docs/references.md 6) and an IF
 *     holds no baseband content near its carrier's level, so fc is then the weaker tone of an
 *     audio signal: the high tone of a SMPTE/DIN two-tone test (docs/references.md 12: fl 12 dB
 *     above fh; 1:1 variants), whose low tone on a mains frequency the tone decision passes over
 *     (its odd-order products fh +- 2 fl look like hum sidebands, rule 3);
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
 *  6. another line of consequence: the strongest line of the band (20 Hz up) outside the lobes of
 *     fc, of DC and of the mains multiples k mains (k = 1..6, 1 % tolerance) stands clear of the
 *     noise as a tone candidate must (its lobe's power over the noise expected there beyond the
 *     1 - 1e-7 F quantile: it is the strongest of many lobes), lies within 40 dB of fc (common
 *     practice: test signals put a second tone within 12 dB -- twin tones, SMPTE and DIN 4:1,
 *     docs/references.md 12 --, pickup and converter spurs lie lower), and is no
 *     member of a symmetric pair around fc (its mirror 2 fc - f above the noise and within 3 dB:
 *     modulation; such a pair is passed over and the next strongest line taken, up to 8 times):
 *     audio (two tones, a tone among other lines: an AM channel holds one carrier and its
 *     sidebands). A carrier whose strongest sidebands differ by more than 3 dB (incidental phase
 *     modulation), or with a neighbouring station's carrier within 40 dB, reads as audio: give
 *     the kind. When the search passed over a pair (sidebands farther than rule 2's +-10 kHz)
 *     and found nothing else, that pair decides as in rule 2;
 *  7. otherwise (a lone line above 3 kHz, perhaps in noise, with no other line within 40 dB):
 *     IF, an unmodulated carrier.
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
    ML_PAIR_MIRRORED,      /* the strongest line one-sided, another line with its mirror (a
                              delayed copy): read one channel                                 */
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
    size_t lines_tested;         /* lines whose mirror rule 3 tested (0: none, or no line)  */
    double mirror_hz;            /* the strongest line whose mirror is too close (NAN: none) */
    double mirror_db;            /* its power over its mirror's, dB (NAN: none)            */
    double mirror_required_db;   /* what rule 3 asked of it, dB (NAN: none)                */
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
    ML_IFW_LONE_CARRIER,        /* rule 7: IF                                                  */
    ML_IFW_NOISE,               /* rule 0: audio, no line stands clear of the noise             */
    ML_IFW_OTHER_LINE,          /* rule 6: audio, another line of consequence in the band       */
    ML_IFW_BASEBAND_STRONGER,   /* rule 1b: audio, a baseband line about as strong as fc or more */
} ml_if_why;

typedef struct {
    ml_channel_verdict verdict;
    ml_if_why why;
    double carrier_hz;     /* fc (0 without signal)                                        */
    double sideband_hz;    /* fm of the sideband pair found (rules 2, 3), else 0           */
    double sideband_dbc;   /* the stronger sideband re fc, dB (NAN: none)                   */
    double baseband_dbc;   /* the line at fm (rule 2) or k mains (rule 3, 5) re fc (NAN)    */
    double harmonic_dbc;   /* the strongest harmonic above the noise re fc (NAN: none)       */
    double other_hz;       /* the other line of rule 6 or 1b, else 0                        */
    double other_dbc;      /* its line power re fc, dB (NAN: none)                          */
} ml_if_evidence_result;

/* The evidence that the real channel whose Welch spectrum is spec (real input, at least one
 * segment) holds an AM IF signal or audio (header). mains_hz: 50, 60 or 0 (either). Allocates
 * temporaries (a few bytes per bin, freed before return). ML_EINVAL, ML_ENOMEM; ML_OK with
 * ML_CHANNEL_UNDECIDED when the band holds nothing. */
ml_status ml_if_evidence(const ml_spectrum *spec, double mains_hz, ml_if_evidence_result *r);
/* One line saying why into buf[n], as ml_pair_reason. Returns buf. */
char *ml_if_evidence_reason(const ml_if_evidence_result *r, char *buf, size_t n);

#endif
