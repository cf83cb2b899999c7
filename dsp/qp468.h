/* ITU-R BS.468-4 quasi-peak noise meter: weighting filter and quasi-peak detector, streamed.
 * SPDX-License-Identifier: MIT
 *
 * Chain: input -> 468 weighting filter (optional) -> full-wave rectifier -> two detector stages ->
 * reading. Calibration (BS.468-4 clause 2.6, docs/references.md 2.3): a steady 1 kHz sine reads its
 * r.m.s. value, so a full-scale 1 kHz sine reads 1/sqrt(2) (0 dBFS with the dBFS rule of
 * dsp/levels.h: reading_dbfs = 20 lg(reading sqrt 2)).
 *
 * Weighting filter (docs/references.md 2.2: analogue prototype with one zero at 0 Hz and six poles)
 * discretised at the input rate as follows: poles by the matched z-transform (z = e^{sT}, exact pole
 * positions), the zero at z = 1 plus one zero at z = -1, then a zero-phase cosine-series FIR
 * correction sum_k a_k cos(k w) (K = 8 terms below 64 kHz, 3 from 64 kHz; 2K - 1 taps, delay K - 1
 * samples) fitted by linear least squares to the ratio analogue / digital magnitude on 400
 * log-spaced frequencies from 20 Hz to min(0.46 rate, 24 kHz), relative errors weighted by the inverse
 * of BS.468-4 Table 1's tolerance (0.05 dB where the table says 0). Gain: 0 dB at 1 kHz, as Table 1.
 * The matched transform alone misses the table by up to 13 dB at 20 kHz at 48 kHz (aliasing), the
 * bilinear one by 40 dB (frequency warping); the corrected filter stays within 0.33 of each
 * tolerance at 44.1, 48 and 96 kHz (tests/unit/test_dsp_qp468.c; design study with scipy).
 * Rates 32 kHz .. 384 kHz are accepted; Table 1 points at or above 0.46 rate are not met.
 *
 * Detector (discrete time, per sample at rate fs, r = |weighted x|):
 *     stage 1 (charge/discharge):  y1 += a1 max(r - y1, 0) - b1 y1
 *     stage 2 (meter integration): y2 += c2 (y1 - y2)
 *     reading = k y2,  a = 1 - exp(-1 / (tau fs)) for each time constant,
 * with tau_a1 = 1.485 ms, tau_r1 = 290.6 ms, tau_2 = 140.2 ms. These constants are NOT taken from
 * the standard (its values are not in docs/references.md): they were fitted by least squares (log
 * error over each row's half tolerance width) to the reference column of BS.468-4 Tables 2 and 3
 * (docs/references.md 2.3: 5 kHz single bursts of 1 .. 200 ms, and 5 ms bursts at 2, 10 and 100 per
 * second, as % of the steady 5 kHz reading, reading = highest value of the output). The structure
 * (full-wave rectifier, fast-charge slow-discharge stage, then a meter stage) is common practice,
 * recalled from memory. Fitted readings at 48 kHz: 16.9, 26.7, 40.3, 47.9, 52.7, 58.7, 66.9, 80.4 %
 * (single) and 48.2, 76.3, 97.6 % (trains), all within the tables' limits. k is set at create by
 * running a 1 kHz sine through the whole chain for 3 s (highest output in the last 0.5 s).
 */
#ifndef ML_DSP_QP468_H
#define ML_DSP_QP468_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

typedef struct ml_qp468 ml_qp468;

typedef struct {
    double rate_hz;  /* 32000 .. 384000                                                    */
    bool weighted;   /* 468 weighting in front (default true); false: detector alone     */
    double settle_s; /* 0 .. 3600: output not counted in max/mean for this long after
                        create/reset (filter start transients; default 0.5)              */
} ml_qp468_config;

typedef struct {
    double reading;      /* current output, r.m.s.-calibrated (full-scale units)           */
    double max_reading;  /* highest output after settle_s (0 before)                       */
    double mean_reading; /* time average of the output after settle_s (0 before)           */
    double reading_dbfs, max_dbfs, mean_dbfs; /* 20 lg(x sqrt 2); NAN when x = 0           */
    uint64_t frames;     /* pushed since create/reset                                      */
} ml_qp468_result;

ml_qp468_config ml_qp468_config_default(double rate_hz);

/* Designs the filter and calibrates the detector. ML_EINVAL for a bad config (*out NULL), ML_ENOMEM. */
ml_status ml_qp468_create(const ml_qp468_config *cfg, ml_qp468 **out);
void ml_qp468_destroy(ml_qp468 *q); /* NULL is a no-op */
void ml_qp468_reset(ml_qp468 *q);   /* as just created; no allocation */

/* Feeds n samples (any n; x may be NULL only when n == 0). Never allocates. ML_EINVAL; ML_ERANGE for a
 * non-finite sample (the state is then unchanged from that sample on: the rest of the block is
 * not processed). */
ml_status ml_qp468_push(ml_qp468 *q, const float *x, size_t n);

ml_status ml_qp468_get(const ml_qp468 *q, ml_qp468_result *out);

/* Magnitude response of the digital weighting filter at f_hz (0 < f < rate/2), dB re its 1 kHz
 * gain (= 0 dB by design), from the coefficients. NAN for a bad f_hz or an unweighted meter. */
double ml_qp468_get_response_db(const ml_qp468 *q, double f_hz);

#endif
