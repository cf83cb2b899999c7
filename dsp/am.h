/* AM demodulation and envelope statistics, streamed in blocks with constant memory.
 * SPDX-License-Identifier: MIT
 *
 * The input (a real IF signal, or complex I/Q) is mixed to 0 Hz with carrier_hz, channel-filtered
 * by a linear-phase low-pass of one-sided width bandwidth_hz (dsp/cfir.h), and its magnitude is
 * the envelope e[n] (for real input the mixer output is doubled, so e equals the carrier's
 * amplitude). A carrier offset left by the mixer only rotates the baseband, so e does not depend on
 * it. The carrier's phase is followed through the input (measured at each block's end from the
 * block's mean baseband, which is the carrier line's phasor, with its turning rate; see dsp/am.c)
 * and splits the baseband into the coherent envelope S (its in-phase, signed part: S = e while the
 * carrier keeps its phase, S < 0 where it is reversed) and the quadrature component Q, which
 * holds the noise of the channel (as much of it as adds to the envelope) and any incidental phase
 * modulation. sigma, the noise, is the r.m.s. of Q over the quiet blocks when there are any, else
 * over all blocks so far (before the first block ends, over the part of it seen). The object
 * keeps, over the whole input:
 *  - sums for the mean envelope and the mean coherent envelope, over all samples and separately
 *    over "quiet" and "modulated" blocks: the envelope is cut into blocks of block_s; a block is
 *    quiet (unmodulated carrier) when the envelope's spread beyond the noise is small,
 *    var(e) - var(Q) < (quiet_rel mean)^2 + allowance (three standard deviations of that
 *    difference for Gaussian noise: 6 var(Q) / sqrt(independent samples of the block)), its noise
 *    is below 10 % of its mean, and its mean is above 5 % of carrier_ref (a missing carrier is not
 *    a quiet carrier). Without noise this is std(e) < quiet_rel mean. A block whose mean is below
 *    10 % of carrier_ref holds no carrier (no modulation from 20 Hz up brings a 20 ms block's mean
 *    that low): it enters no figure, is tagged 0 like a quiet one, and a trough that runs into
 *    it is not judged (the carrier was gone, not modulated away);
 *  - histograms of the *reading*, 4-times oversampled by cubic (Catmull-Rom) interpolation of the
 *    complex baseband so that peaks between samples are not lost, over all blocks and over
 *    modulated blocks, from -0.5 to 3.5 * carrier_ref in 65536 bins; the reading is the envelope
 *    e, except where the coherent envelope lies below -rev (a carrier reversed beyond any doubt
 *    from noise), where it is S; peak readings are quantiles of these (see get_result);
 *  - troughs and crests: a trough is a stretch where the envelope falls below (1 - h) carrier_ref
 *    until it is back at or above carrier_ref, a crest one above (1 + h) carrier_ref until it is
 *    back at or below. Each trough is judged once, when it ends (one cut by either end of the
 *    input is not judged: the carrier may be coming on or going off there): the carrier was
 *    *off* (a pinch-off event) when the oversampled envelope stayed below the floor F for more
 *    than a share of the time it spent below 4 F (60 % when the noise is far below F, growing to
 *    70 % when F is set by the noise: the noise blurs the time below F), judged on at least 8
 *    oversampled values (2 samples) below 4 F (a trough that merely touches zero smoothly stays
 *    below F for half the time it is below 4 F, whatever its width and F); otherwise the carrier *reversed* (a phase-reversal event)
 *    when the coherent envelope went below -rev. The noise-aware levels, in units of
 *    carrier_ref: F = max(pinch_rel, 4 sigma), rev = max(0.02, 5 sigma), h = max(0.02,
 *    3 sigma). The time below F of the pinch-off troughs is the carrier-off time, the time with
 *    S < 0 of the reversal troughs the reversed time. The crests' highest values go into a
 *    histogram, so that crests above any level can be counted at the end;
 *  - with a reference channel (the modulating audio a[n], delayed internally to line up with the
 *    envelope): the least-squares line e = intercept + slope * a and its RMS residual (the
 *    trapezoid's straightness).
 * The first and the last edge() = (ntaps - 1) / 2 input samples (half the channel filter) produce
 * no envelope: there the filter's window reaches beyond the input, so its output is a start-up or
 * ending transient that no statistic should see. An input of n samples therefore gives
 * n - 2 edge() envelope samples, belonging to inputs edge() .. n - edge() - 1; all but the last
 * latency() - edge() of them come out of the pushes, the rest out of finish.
 *
 * Output: envelope samples come out a block at a time, once their block is classified, together
 * with the input sample each one belongs to (delayed to line up) and the block's class (1 =
 * modulated, 0 = quiet), so that the caller can analyse modulated and unmodulated stretches apart.
 */
#ifndef ML_DSP_AM_H
#define ML_DSP_AM_H

#include <complex.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/channels.h"
#include "dsp/status.h"

typedef struct ml_am ml_am;

typedef struct {
    double rate_hz;            /* sample rate: > 0                                               */
    bool complex_input;        /* false: real IF samples; true: I/Q                                */
    double carrier_hz;         /* mixing frequency; |carrier_hz| < rate_hz / 2 (>= 0 for real)   */
    double bandwidth_hz;       /* one-sided channel (audio) bandwidth: > 0                         */
    double transition_hz;      /* channel filter transition width: > 0; for real input create
                                  narrows it to D - 2 bandwidth_hz when wider (the mixer's image
                                  in the stop band, see ml_am_default_bandwidth), and rejects a
                                  bandwidth with 2 bandwidth_hz >= D                              */
    double carrier_ref;        /* provisional unmodulated carrier amplitude: > 0 (thresholds,
                                  histogram range); the caller refines C afterwards                */
    double hold_s;             /* peak hold: 0 < hold_s < 0.5 (default 0.001)                      */
    double block_s;            /* quiet/modulated classification block (default 0.02)             */
    double quiet_rel;          /* quiet when std/mean < quiet_rel (default 0.02)                   */
    double pinch_rel;          /* pinch-off floor F at least this, fraction of carrier_ref (0.02) */
    double positive_limit_pct; /* result.positive_over counts crests above it (default 125)         */
    bool has_reference;        /* a reference channel is pushed alongside                         */
    bool single_precision;     /* channel filter transforms in float (dsp/cfir.h: about half the
                                  time, rounding some 140 dB below the signal); default false      */
} ml_am_config;

typedef struct {
    uint64_t samples;          /* envelope samples produced                                       */
    double mean_all;           /* mean envelope over all blocks with carrier                      */
    double mean_modulated;     /* over modulated blocks (0 when none)                             */
    double mean_quiet;         /* over quiet blocks (0 when none)                                 */
    double coherent_all;       /* mean coherent envelope S over the blocks with carrier: the line */
    double coherent_modulated; /* ... over modulated blocks (0 when none)                         */
    uint64_t modulated_samples, quiet_samples;
    uint64_t absent_samples;   /* in blocks without carrier (mean below 10 % of carrier_ref): in
                                  no figure; ML_ENOSIGNAL when every block was such              */
    double emax, emin;         /* peak readings: the levels the reading exceeds (emax) and stays
                                  under (emin) for a share hold_s per second of the modulated
                                  blocks (all blocks when none is modulated); emin is negative
                                  where the carrier was reversed beyond -rev                       */
    double emax_abs, emin_abs; /* absolute extremes of the oversampled envelope                   */
    uint64_t pinch_events;     /* troughs in which the carrier was off                            */
    uint64_t reversal_events;  /* troughs in which it reversed (one per trough)                   */
    uint64_t troughs, crests;  /* all troughs and crests                                          */
    uint64_t positive_over;    /* crests above (1 + positive_limit_pct / 100) carrier_ref         */
    double off_samples;        /* carrier-off time, in samples                                    */
    double reversed_samples;   /* reversed time, in samples                                       */
    double noise_rms;          /* sigma, envelope units (NAN before the first block ended)        */
    double floor_rel, reversal_rel; /* F and rev at the end, units of carrier_ref                 */
    bool floor_from_noise;     /* F was set by the noise (4 sigma above pinch_rel)                */
    bool has_trapezoid;        /* reference given and it varied                                   */
    double trap_slope, trap_intercept, trap_residual_rms, trap_ref_rms;
} ml_am_result;

ml_am_config ml_am_config_default(double rate_hz, bool complex_input, double carrier_hz,
                                  double bandwidth_hz, double carrier_ref);

/* The channel's room (docs/references.md 6: a tone fm on the carrier puts side frequencies at
 * fc +- fm). Mixing a real IF by exp(-2 pi i fc t) moves its positive-frequency half to 0 Hz and
 * its negative-frequency half, the mixer's image, to -2 fc, which the sampling folds to fs - 2 fc:
 * the image's carrier lies D = min(2 fc, fs - 2 fc) from 0 Hz (ml_am_image_distance_hz), the
 * nearer for a carrier below fs / 4 being 2 fc, above it fs - 2 fc. The image's side
 * frequencies reach to D - fm. The channel filter passes |f| <= B and stops |f| >= B + t; the
 * image stays out (in the stop band, 100 dB down) whatever the modulation in the channel
 * (fm <= B) when
 *     B + t + B <= D,  i.e.  2 B + t <= D.
 * That also keeps the channel clear of 0 Hz and the Nyquist frequency in the IF (fc - B > 0 and
 * fc + B < fs / 2). An I/Q capture has no image; its channel must lie within the band edge:
 * B <= fs / 2 - |fc| and B + t <= fs / 2. */

/* The narrowest channel the default choice gives (one-sided): the low end of a telephone-grade
 * voice channel (300-3400 Hz, common practice). A carrier with less room than this has no useful
 * channel: ml_am_default_bandwidth returns 0. */
#define ML_AM_MIN_BANDWIDTH_HZ 300.0

/* D = min(2 |carrier_hz|, rate_hz - 2 |carrier_hz|) in Hz: the distance from 0 Hz of the mixer's
 * image of a real IF's carrier (see above). rate_hz > 0, |carrier_hz| < rate_hz / 2 (else the
 * value means nothing). Pure; no allocation. */
double ml_am_image_distance_hz(double rate_hz, double carrier_hz);

/* The transition width in Hz for a channel of bandwidth_hz (B > 0) around carrier_hz sampled at
 * rate_hz (fs): min(1000, B / 4, fs / 2 - B), for real input also at most D - 2 B (the image's
 * sidebands in the stop band). 0 when no transition is left (B too wide for the carrier). Pure;
 * no allocation. */
double ml_am_transition(double rate_hz, bool complex_input, double carrier_hz, double bandwidth_hz);

/* The widest channel filter that fits around a carrier at carrier_hz sampled at rate_hz, at most
 * max_hz. Real input: B = min(max_hz, (D - t0) / 2) with t0 = min(1000, D / 40), the transition
 * taking a fortieth of the image's room (B is then 97.5 % of the D / 2 the image allows; a
 * sideband between B and D / 2 cannot be told from the image's own with any filter). I/Q:
 * B = min(max_hz, fs / 2 - |fc|), lowered until B + min(1000, B / 4) <= fs / 2. *transition_hz
 * gets ml_am_transition(B) (t0 unless max_hz bounds B). Returns the one-sided bandwidth, or 0
 * (and *transition_hz 0) when less than ML_AM_MIN_BANDWIDTH_HZ fits. */
double ml_am_default_bandwidth(double rate_hz, bool complex_input, double carrier_hz, double max_hz,
                               double *transition_hz);

/* Designs the channel filter and allocates everything. ML_EINVAL | ML_ENOMEM | ML_EFFT.
 * Not thread-safe (FFTW planner). */
ml_status ml_am_create(const ml_am_config *cfg, ml_am **out);
void ml_am_destroy(ml_am *q);
void ml_am_reset(ml_am *q);
/* Delay in samples from an input sample to its envelope sample (the channel filter's latency,
 * dsp/cfir.h); 0 for NULL. */
size_t ml_am_latency(const ml_am *q);
/* Input samples at each end that produce no envelope (see above); 0 for NULL. */
size_t ml_am_edge(const ml_am *q);

/* Output arrays of one push or finish: env[cap] envelope, in[cap] the input sample it belongs
 * to, modulated[cap] its block's class; *count gets the number written. in may be NULL when the
 * caller does not need the inputs (then they are not delayed at all); it must then be NULL in
 * every push and finish since the create or the last reset. */
typedef struct {
    double *env;
    double complex *in;
    unsigned char *modulated;
    size_t cap;
} ml_am_output;

/* Capacity an output needs for a push of n samples: n plus one block plus latency() - edge()
 * (what finish flushes); finish needs ml_am_output_cap(q, 0). */
size_t ml_am_output_cap(const ml_am *q, size_t n);

/* Pushes n input samples z[n] (for real input the imaginary parts must be 0) and, when
 * has_reference, ref[n] (else NULL). Writes the samples whose block completed to out and their
 * count to *count. ML_EINVAL when out->cap < ml_am_output_cap(q, n). Never allocates. */
ml_status ml_am_push(ml_am *q, const double complex *z, const float *ref, size_t n, const ml_am_output *out,
                     size_t *count);

/* The same for n interleaved float frames as read from a file or device (dsp/channels.h): the
 * real part from column c->re, for complex input the imaginary part from c->im, and with
 * has_reference the reference from c->ref (c->has_ref must then be set). Gives exactly what
 * ml_am_push gives for the same values, without the caller splitting the columns first.
 * ML_EINVAL as ml_am_push, or for a map that does not fit. */
ml_status ml_am_push_frames(ml_am *q, const float *frames, const ml_channels *c, size_t n,
                            const ml_am_output *out, size_t *count);

/* Flushes the channel filter, classifies and releases the last partial block. Call once at the
 * end, before get_result; afterwards push and finish return ML_EINVAL until reset.
 * out->cap must be at least ml_am_output_cap(q, 0). */
ml_status ml_am_finish(ml_am *q, const ml_am_output *out, size_t *count);

ml_status ml_am_get_result(const ml_am *q, ml_am_result *out);

/* Share (0..1) of all envelope time whose reading lies below level (same units as the envelope). */
double ml_am_fraction_below(const ml_am *q, double level);

/* Crests whose highest oversampled envelope exceeds level (same units as the envelope; resolved to
 * the histogram's bins of 6e-5 carrier_ref). */
uint64_t ml_am_crests_above(const ml_am *q, double level);

#endif
