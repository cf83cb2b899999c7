/* Figures on the bench's terms: the weighted residual noise of an audio analysis and the levels in
 * dBu, dBV, volts r.m.s. and watts under a calibration (pure functions).
 * SPDX-License-Identifier: MIT
 *
 * Every command that reports these (measure, live, compare, watch) calls the functions below, so
 * each figure has one definition; analyzer/values.c names them. A figure that cannot be measured
 * is NAN (null in JSON, n/a in text), never a floor value.
 *
 * Weighted noise (ml_bench_noise), from the Welch spectrum an ml_audio_result a was measured on:
 *  - the residual noise is that of dsp/weighting.h (ml_weighted_noise) over a's band: with a test
 *    tone (a->tone_present) the tone and its harmonics are taken out, and in every case the mains
 *    lines that a lists (a->hum[]) are taken out as well and filled in from the neighbouring bins
 *    (the hum is stated apart: hum_removed_dbfs, the sum of the lines taken out);
 *  - noise_dbfs, noise_a_dbfs, noise_468_dbfs: 10 lg(N_w / 0.5), N_w the residual unweighted,
 *    A-weighted (IEC 61672-1, docs/references.md 1) and 468-weighted (ITU-R BS.468-4 curve, 0 dB
 *    at 1 kHz, r.m.s. reading, docs/references.md 2) noise powers;
 *  - snr_a_db = 10 lg(P1 / N_A), snr_468_db = 10 lg(P1 / N_468): the tone's unweighted power
 *    over the weighted noise (the tone sits at about 1 kHz, where both weightings are 0 dB); NAN
 *    without a test tone;
 *  - noise_468_qp_dbfs: the BS.468-4 quasi-peak meter (dsp/qp468.h) read over the analysed
 *    capture: 20 lg(sqrt 2 x mean deflection after its settling time), so a steady sine reads its
 *    level. The meter sees the whole signal, so it reads the noise only when there is no test tone
 *    (a noise measurement: the input terminated or the generator off); with a tone it is NAN. Its
 *    detector's time constants were fitted to the standard's tone-burst tables (dsp/qp468.h).
 *
 * Levels under a calibration cal (dsp/levels.h: dBu = dBFS + cal->full_scale_dbu), with an
 * optional correction c (dB, the sound card's own response at the tone's frequency; 0 for none)
 * that is taken off the tone's level only:
 *  - fundamental_dbu = fundamental_dbfs - c + full_scale_dbu, fundamental_dbv = that - 2.2185 dB,
 *    fundamental_vrms = 0.7746 V x 10^(fundamental_dbu / 20);
 *  - fundamental_w = fundamental_vrms^2 / load_ohms (the tone's power into a resistive load);
 *    NAN without a load (load_ohms <= 0);
 *  - rms_dbu, noise_dbu, hum_dbu (from the capture's level and the plain figures of
 *    dsp/figures.h: noise_dbfs, hum_dbfs) and noise_a_dbu (from noise_a_dbfs above): the dBFS
 *    figure plus full_scale_dbu.
 * A full-scale sine has power 0.5 = 0 dBFS (AES17); 0 dBu = sqrt(0.6) V (docs/references.md 14).
 */
#ifndef ML_DSP_BENCHFIG_H
#define ML_DSP_BENCHFIG_H

#include <stdbool.h>

#include "dsp/figures.h"
#include "dsp/levels.h"
#include "dsp/metrics.h"
#include "dsp/qp468.h"
#include "dsp/spectrum.h"
#include "dsp/status.h"

typedef struct {
    double noise_dbfs;        /* residual, unweighted (hum taken out)                     */
    double noise_a_dbfs, snr_a_db;
    double noise_468_dbfs, snr_468_db;
    double noise_468_qp_dbfs; /* the quasi-peak meter's reading; NAN with a tone          */
    double hum_removed_dbfs;  /* the mains lines taken out, together; NAN when none       */
    double mains_hz;          /* the mains of those lines (a->mains_hz); NAN when none     */
    unsigned hum_lines;       /* how many                                                 */
} ml_noise_figures;

typedef struct {
    double fundamental_dbu, fundamental_dbv, fundamental_vrms, fundamental_w;
    double rms_dbu, noise_dbu, noise_a_dbu, hum_dbu;
} ml_volt_figures;

/* Every noise figure NAN. */
void ml_bench_noise_none(ml_noise_figures *out);

/* The weighted noise figures of the spectrum spec that a was measured on (see above). qp: the
 * quasi-peak meter that saw the analysed samples, or NULL (the QP reading is then NAN). ML_EINVAL
 * for NULL arguments or a spectrum that is not a's; ML_ENOSIGNAL when no bin of the band is left
 * to estimate the noise from; ML_ENOMEM (ml_weighted_noise's temporary). On any error *out holds
 * NANs. */
ml_status ml_bench_noise(const ml_spectrum *spec, const ml_audio_result *a, const ml_qp468 *qp,
                         ml_noise_figures *out);

/* The levels under cal (see above): f the plain audio figures, n the noise figures, rms_dbfs the
 * capture's r.m.s. level, load_ohms > 0 for fundamental_w (else NAN), response_db the correction
 * (finite; 0 for none). Figures whose inputs are NAN are NAN. Never fails; cal must not be NULL. */
void ml_bench_volts(const ml_level_cal *cal, double load_ohms, double response_db,
                    const ml_audio_plain_figures *f, const ml_noise_figures *n, double rms_dbfs,
                    ml_volt_figures *out);

#endif
