/* Quasi-peak, average and peak readings of the channel around a carrier: a streaming model of a
 * CISPR 16-1-1 Band B measuring receiver (docs/references.md 11) on a real IF or an I/Q capture.
 * SPDX-License-Identifier: MIT
 *
 * The chain, per input frame:
 *  1. Channel. Real input: the analytic signal (only the positive frequencies, doubled, so that a
 *     cosine of amplitude A becomes a complex exponential of magnitude A): the input is shifted by
 *     -rate/4 (multiplied by (-j)^n), low-pass filtered by dsp/cfir.h (passband edge
 *     rate/4 - transition_hz, stopband from rate/4 at 80 dB) and doubled. The band from
 *     transition_hz to rate/2 - transition_hz passes within +-0.01 dB; 0 Hz (a sound card's offset)
 *     and rate/2 are stopped. I/Q input (I + jQ) is used as it is.
 *  2. IF filter: Gaussian, centred on centre_hz, with amplitude response
 *         H(f) = 2^-((2 (f - centre_hz) / bandwidth_hz)^2),
 *     i.e. -6.02 dB at +-bandwidth_hz/2 (9 kHz: docs/references.md 11) and -24.1 dB at
 *     +-bandwidth_hz; impulse bandwidth (integral of H) sqrt(pi / ln 2) / 2 * bandwidth_hz =
 *     1.064 bandwidth_hz. Realised as a complex band-pass FIR: sampled Gaussian impulse response,
 *     sigma = sqrt(2 ln 2) / (pi bandwidth_hz) seconds, truncated at +-6 sigma, normalised to unit
 *     gain at centre_hz. For a real input part of the channel may lie below 0 Hz: that part is the
 *     mirror of the positive frequencies and is not part of the analytic signal.
 *  3. Envelope E = |IF output|: a carrier of amplitude A (real: A cos, the level 20 lg A dBFS;
 *     I/Q: |I + jQ| = A) at centre_hz gives E = A.
 *  4. Quasi-peak detector: a capacitor charged through an ideal diode by the half-wave rectified IF
 *     carrier and discharged through a resistor. The IF carrier is far faster than its envelope, so
 *     the diode current is its mean over one carrier cycle, and the detector voltage v obeys
 *         dv/dt = g(E, v) / tau_c - v / discharge_s,
 *         g(E, v) = (sqrt(E^2 - v^2) - v acos(v / E)) / pi   for E > v, else 0
 *     (the mean of max(E cos(phi) - v, 0) over phi). The standard defines the time constants by
 *     the detector's response (docs/references.md 11): after a constant sine is applied, the
 *     output reaches 63 % (1 - 1/e) of its steady state in charge_s; after it is removed, it falls
 *     to 37 % in discharge_s. The second holds by construction; create solves tau_c (the electrical
 *     charge constant, 0.254 ms for 1 ms / 160 ms) so that the first holds. A constant sine leaves
 *     v at a fixed share k of E (0.9703 for Band B); the detector output is v / k, so an
 *     unmodulated carrier at L dBFS reads L. Integration: one classical Runge-Kutta step per
 *     sample with E held over the sample.
 *  5. Meters: critically damped, meter_s^2 a'' + 2 meter_s a' + a = input (docs/references.md 11;
 *     meter_s is the free period / 2 pi), i.e. two cascaded first-order sections of meter_s, each
 *     discretised step-invariantly. The QP meter is driven by the detector output, the average
 *     (AV) meter by the envelope E itself (the linear mean of the envelope through the same meter).
 *
 * Readings (in dBFS, 20 lg of the value, full-scale units as in step 3):
 *  - qp_dbfs: the highest deflection of the QP meter (the quasi-peak reading);
 *  - av_dbfs: the highest deflection of the AV meter (the average reading);
 *  - peak_dbfs: the highest envelope (peak detector), refined between samples at each local
 *    maximum by the parabola through the logarithms of the three samples around it (exact for the
 *    Gaussian pulse an impulse leaves at the IF output; bounded by 1/8 of the neighbours' dB
 *    difference above the highest sample otherwise);
 *  - mean_dbfs: 20 lg of the linear mean of the envelope over the frames (the running average,
 *    without the meter's memory).
 * For an unmodulated carrier at L dBFS all four read L (after settling). For pulses of equal area
 * the quasi-peak reading follows the standard's pulse-response table within its tolerances (see
 * tests/unit/test_dsp_qpeak.c: 1000 Hz +4.49, 20 Hz -6.62, 10 Hz -10.61, 2 Hz -21.18, 1 Hz
 * -23.49 dB re 100 Hz for a real IF at 48 kHz, Band B; within 0.03 dB of that at 96 and 192 kHz
 * and for I/Q), and the average reading is proportional to the repetition rate.
 *
 * The meters start at rest after create and reset: their readings settle within
 * ml_qpeak_get_settle_frames() frames (latency plus 8 meter_s: a step is then within 0.3 % =
 * 0.03 dB of its final deflection). The frames are counted at the input: a reading's frames run
 * latency frames behind the input frames pushed (ml_qpeak_latency).
 */
#ifndef ML_DSP_QPEAK_H
#define ML_DSP_QPEAK_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

typedef struct ml_qpeak ml_qpeak;

typedef struct {
    double rate_hz;       /* sample rate: finite, >= 4 bandwidth_hz                                   */
    bool complex_input;   /* false: one real channel (IF); true: I/Q                                  */
    double centre_hz;     /* frequency the receiver is tuned to. Real: the carrier, with
                           * transition_hz <= centre_hz and centre_hz + bandwidth_hz / 2 <=
                           * rate_hz / 2 - transition_hz. I/Q: re the capture's centre (0 = the
                           * centre; may be negative), |centre_hz| + bandwidth_hz / 2 <= rate_hz / 2 */
    double bandwidth_hz;  /* IF bandwidth at -6 dB: > 0 (9000, Band B), rate_hz <= 1000 bandwidth_hz
                           * (the IF filter then has at most 4499 taps)                               */
    double charge_s;      /* TC: > 0, at least 8 samples (0.001)                                      */
    double discharge_s;   /* TD: > 2 charge_s, <= 1e4 (0.160)                                         */
    double meter_s;       /* TM: > 0, <= 1e4 (0.160)                                                  */
    double transition_hz; /* real input: the analytic filter's transition width: > 0 and
                           * <= rate_hz / 8 (250)                                                     */
} ml_qpeak_config;

/* CISPR 16-1-1 Band B (docs/references.md 11): bandwidth 9 kHz, TC 1 ms, TD 160 ms, TM 160 ms;
 * transition 250 Hz. */
ml_qpeak_config ml_qpeak_config_default(double rate_hz, bool complex_input, double centre_hz);

/* Readings over a set of input frames (see the header comment). Each dBFS figure is NAN when no
 * frame was counted or the value is 0 (no signal at all). */
typedef struct {
    uint64_t frames;  /* frames counted                                                   */
    double qp_dbfs;   /* highest QP meter deflection                                      */
    double av_dbfs;   /* highest AV meter deflection                                      */
    double peak_dbfs; /* highest envelope, interpolated                                    */
    double mean_dbfs; /* 20 lg (mean envelope)                                             */
} ml_qpeak_reading;

/* The chain's present state, linear, in full-scale units (for a live display and for tests). */
typedef struct {
    double envelope; /* E of the latest frame                                               */
    double detector; /* QP detector output v / k (reads A for a settled carrier of amplitude A) */
    double qp_meter; /* QP meter deflection                                                  */
    double av_meter; /* AV meter deflection                                                  */
} ml_qpeak_state;

/* Designs the filters (the analytic filter only for real input), solves tau_c and allocates all.
 * ML_EINVAL (NULL or out-of-range cfg) | ML_ENOMEM | ML_EFFT leave *out NULL; out must not be
 * NULL. Not thread-safe (FFTW planner). */
ml_status ml_qpeak_create(const ml_qpeak_config *cfg, ml_qpeak **out);
void ml_qpeak_destroy(ml_qpeak *q); /* NULL is a no-op */
/* As just created: filters, detector and meters at rest, all readings empty. No allocation. */
void ml_qpeak_reset(ml_qpeak *q);

/* Frames from an input frame to its envelope sample: the analytic filter's latency (real input)
 * plus the IF filter's group delay. 0 for NULL. */
size_t ml_qpeak_latency(const ml_qpeak *q);
/* Frames after create or reset until the meters have settled: latency + ceil(8 meter_s rate_hz).
 * 0 for NULL. */
uint64_t ml_qpeak_get_settle_frames(const ml_qpeak *q);

/* Pushes nframes frames of interleaved float samples: frame i holds the real part (real input:
 * the sample) at data[i * stride + re] and, for I/Q, the imaginary part at data[i * stride + im]
 * (im is ignored for real input). Columns must be < stride. When blk is not NULL it receives the
 * readings over just these frames (the meters' deflections during them). Results do not depend
 * on how the input is split into pushes (bit-identical). Non-finite samples are not checked: the
 * caller refuses them. ML_EINVAL for NULL q, NULL data with nframes > 0, or a bad column. Never
 * allocates. */
ml_status ml_qpeak_push(ml_qpeak *q, const float *data, size_t nframes, size_t stride, size_t re, size_t im,
                        ml_qpeak_reading *blk);

/* Readings since the last ml_qpeak_restart_span (or create/reset): one log interval. */
ml_status ml_qpeak_get_span(const ml_qpeak *q, ml_qpeak_reading *r);
/* Starts a new span; the chain (filters, detector, meters) goes on undisturbed. */
void ml_qpeak_restart_span(ml_qpeak *q);
/* Readings since create or reset (a whole recording). */
ml_status ml_qpeak_get_total(const ml_qpeak *q, ml_qpeak_reading *r);
/* The present state (see ml_qpeak_state). */
ml_status ml_qpeak_get_state(const ml_qpeak *q, ml_qpeak_state *s);
/* The detector's electrical charge constant tau_c (s) and steady share k solved at create (see
 * step 4); either pointer may be NULL. ML_EINVAL for NULL q. */
ml_status ml_qpeak_get_detector(const ml_qpeak *q, double *tau_c_s, double *k);

#endif
