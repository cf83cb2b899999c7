/* Qualifying a sound card: the loopback test signal, its analysis into a card profile, and what
 * the profile says about a later measurement (which figures lie at the card's own floor).
 * SPDX-License-Identifier: MIT
 *
 * The test signal (two channels, docs/references.md 14 "loopback qualification", common practice)
 * is a fixed schedule of segments, each sine starting at zero phase at its segment's start:
 *   lead      0.5 s  silence
 *   level     4 s    997 Hz at -1 dBFS on both channels (residual THD and THD+N near full scale,
 *                    the channels' gain difference, the sample-rate error; its onset marks t = 0
 *                    of the schedule for the analysis)
 *   silence   4 s    idle noise floor and hum of each channel
 *   left      2 s    997 Hz at -1 dBFS on channel 1 only (crosstalk 1 -> 2)
 *   right     2 s    the same on channel 2 only (crosstalk 2 -> 1)
 *   steps     0.5 s each: the ISO 266 third-octave frequencies 20 Hz .. 20 kHz (and on to 40 kHz
 *                    at high rates) below 0.45 x rate, at -20 dBFS on both channels (response)
 *   tail      0.5 s  silence
 * 997 Hz is the digital alignment frequency (docs/references.md 14); -20 dBFS is where the common
 * loopback practice reads the response ripple. Every sample carries TPDF dither of dither_bits
 * (two uniform values of +-1/2 LSB added, LSB = 2^(1 - bits) re full scale: variance LSB^2 / 6),
 * so even a bit-exact path has a floor that is stated: 10 lg((LSB^2 / 6) / 0.5) dBFS over the
 * whole band (24 bits: -143.25 dBFS).
 *
 * The analysis (ml_cardan) streams a recording of that signal through a loopback:
 *  - onset: the opening 50 ms give the noise's peak P; the first frame whose magnitude on any
 *    channel exceeds max(4 P, -60 dBFS) is the level segment's, and t = 0 is that frame minus the
 *    samples the -1 dBFS sine needs to exceed the threshold (exact for a linear path);
 *  - each segment is analysed from 0.1 s after its start to 0.1 s before its end (guards for the
 *    onset's uncertainty, the card's settling and a clock difference of up to 2500 ppm);
 *  - sample-rate error: the 997 Hz tone's frequency on channel 1 from the phase advance of 20 ms
 *    Hann-windowed blocks (least-squares slope of the unwrapped phase), f_meas;
 *    rate_error_ppm = 10^6 (f_nom / f_meas - 1): how much faster the capturing clock runs than the
 *    playing one (0 when one clock drives both, as in a single card's loopback). Later segments'
 *    times and frequencies are scaled by f_nom / f_meas;
 *  - per channel over the level segment: the audio analysis of dsp/metrics.h (tone at f_meas,
 *    harmonics 2..10, band 20 Hz .. min(20 kHz, rate/2)): level_dbfs (the tone), thd_db, thdn_db
 *    with the state of their figures (an upper bound when the harmonics are in the noise);
 *    gain_difference_db = level of channel 2 - level of channel 1;
 *  - per channel over the silence: the analysis without a tone (hum lines), then the weighted
 *    residual noise of dsp/weighting.h with the hum lines taken out: noise_dbfs, noise_a_dbfs,
 *    noise_468_dbfs (NAN for digital silence); hum_dbfs the mains lines that stand above the noise
 *    (dsp/metrics.h figures.hum; NAN when none does);
 *  - crosstalk into channel c: 10 lg(P_c / P_d) over the segment that drives the other channel d
 *    only, both powers the tone's (forced at f_meas); an upper bound when the line does not stand
 *    clear of channel c's noise (it is then that noise);
 *  - response: per step and channel the amplitude A of the step's frequency (scaled) by a
 *    Hann-windowed DFT over the analysed part, A = 2 |sum w x e^(-j w n)| / sum w; response_db =
 *    20 lg(A / A_1kHz) of the same channel (the 1 kHz step is the reference).
 * Memory is fixed at create (two spectra per channel and segment kind); push never allocates.
 */
#ifndef ML_DSP_CARD_H
#define ML_DSP_CARD_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/metrics.h"
#include "dsp/status.h"

#define ML_CARD_TEST_HZ 997.0
#define ML_CARD_LEVEL_DBFS (-1.0)
#define ML_CARD_RESPONSE_DBFS (-20.0)
#define ML_CARD_MAX_POINTS 40     /* response frequencies at most                           */
#define ML_CARD_MAX_CHANNELS 2
#define ML_CARD_MARGIN_DB 10.0    /* a figure within this of the card's own is card-limited  */
#define ML_CARD_MIN_RATE_HZ 8000.0
#define ML_CARD_MAX_RATE_HZ 768000.0

typedef enum {
    ML_CARD_SEG_LEAD = 0,
    ML_CARD_SEG_LEVEL,
    ML_CARD_SEG_SILENCE,
    ML_CARD_SEG_LEFT,
    ML_CARD_SEG_RIGHT,
    ML_CARD_SEG_STEP,
    ML_CARD_SEG_TAIL,
} ml_card_seg_kind;

typedef struct {
    ml_card_seg_kind kind;
    double start_s, seconds; /* from the schedule's start (the lead's start)                */
    double freq_hz;          /* the sine's frequency; 0 for silence                         */
    double level_dbfs;       /* its level (AES17: a full-scale sine is 0 dBFS)               */
    unsigned channels;       /* bit 0: channel 1 carries it, bit 1: channel 2                */
} ml_card_segment;

#define ML_CARD_MAX_SEGMENTS (6 + ML_CARD_MAX_POINTS)

/* The schedule at rate_hz (ML_CARD_MIN_RATE_HZ .. ML_CARD_MAX_RATE_HZ) into seg[cap]; returns the
 * number of segments (0 for a bad rate or too small a cap). Pure. */
size_t ml_card_schedule(double rate_hz, ml_card_segment *seg, size_t cap);
/* Length of the whole signal in seconds (lead to tail) at rate_hz; 0 for a bad rate. */
double ml_card_schedule_seconds(double rate_hz);

/* ---- the test signal ------------------------------------------------------------------ */

typedef struct ml_cardgen ml_cardgen;

typedef struct {
    double rate_hz;   /* ML_CARD_MIN_RATE_HZ .. ML_CARD_MAX_RATE_HZ                              */
    int dither_bits;  /* 0: none; 8 .. 32: TPDF dither for that word length (default 24)        */
    uint64_t seed;    /* dither generator seed (default 1); the same seed gives the same signal */
} ml_cardgen_config;

ml_cardgen_config ml_cardgen_config_default(double rate_hz);
/* ML_EINVAL for a bad config or ML_ENOMEM leave *out NULL. */
ml_status ml_cardgen_create(const ml_cardgen_config *cfg, ml_cardgen **out);
void ml_cardgen_destroy(ml_cardgen *q); /* NULL is a no-op */
/* The next nframes two-channel frames into out[2 nframes] (interleaved), silence (dithered) after
 * the tail. The concatenated output does not depend on how it is split into calls. Never
 * allocates. ML_EINVAL for NULL q, or NULL out with nframes > 0. */
ml_status ml_cardgen_generate(ml_cardgen *q, float *out, size_t nframes);
/* Frames of the whole schedule (lead to tail). */
uint64_t ml_cardgen_frames(const ml_cardgen *q);

/* ---- the profile ---------------------------------------------------------------------- */

typedef struct {
    double level_dbfs;          /* the level segment's tone as captured                        */
    double thd_db, thdn_db;     /* residual THD and THD+N at that level; NAN: not measured      */
    ml_fig_state thd_state, thdn_state; /* ML_FIG_MEASURED or ML_FIG_UPPER                      */
    double noise_dbfs, noise_a_dbfs, noise_468_dbfs; /* idle residual noise; NAN: none (digital
                                   silence)                                                    */
    double hum_dbfs;            /* idle hum; NAN: no mains line above the noise                 */
    double crosstalk_db;        /* from the other channel into this one; NAN: one channel       */
    ml_fig_state crosstalk_state;
    double response_db[ML_CARD_MAX_POINTS]; /* re the 1 kHz step; NAN: not measured            */
} ml_card_channel;

typedef struct {
    double rate_hz;             /* of the recording                                             */
    int channels;               /* 1 or 2                                                       */
    double test_hz, test_level_dbfs, response_level_dbfs;
    double band_lo_hz, band_hi_hz; /* of the noise and distortion figures                      */
    double rate_error_ppm;      /* NAN: not measured                                            */
    double gain_difference_db;  /* channel 2 - channel 1; NAN for one channel                  */
    size_t npoints;
    double response_hz[ML_CARD_MAX_POINTS]; /* ascending                                        */
    ml_card_channel ch[ML_CARD_MAX_CHANNELS];
} ml_card_profile;

/* The card's response of channel (0-based) at f_hz in dB re 1 kHz: linear in lg f between the
 * profile's points; NAN outside them, for a bad channel or a point not measured. */
double ml_card_response_at(const ml_card_profile *p, int channel, double f_hz);

/* ---- the analysis ---------------------------------------------------------------------- */

typedef struct ml_cardan ml_cardan;

typedef struct {
    double rate_hz;   /* of the recording: ML_CARD_MIN_RATE_HZ .. ML_CARD_MAX_RATE_HZ          */
    int channels;     /* 1 or 2                                                                */
} ml_cardan_config;

/* Plans the spectra and accumulators. ML_EINVAL, ML_ENOMEM, ML_EFFT leave *out NULL. */
ml_status ml_cardan_create(const ml_cardan_config *cfg, ml_cardan **out);
void ml_cardan_destroy(ml_cardan *q);
/* Interleaved frames of the recording, in order, any n. Never allocates. ML_EINVAL for a
 * non-finite sample. */
ml_status ml_cardan_push(ml_cardan *q, const float *frames, size_t n);
/* True once every segment has been seen (frames after that are ignored). */
bool ml_cardan_done(const ml_cardan *q);
/* The recording frame where the level segment's tone begins, once found; -1 before. */
int64_t ml_cardan_onset(const ml_cardan *q);

typedef enum {
    ML_CARDAN_OK = 0,
    ML_CARDAN_NO_LEAD,        /* the recording starts loud: no silence before the test signal */
    ML_CARDAN_NOT_FOUND,      /* no onset of the test signal                                  */
    ML_CARDAN_SHORT,          /* the recording ends before the schedule does                  */
    ML_CARDAN_NOT_TEST,       /* the level segment holds no 997 Hz tone near -1 dBFS          */
} ml_cardan_why;

/* Computes the profile (allocates temporaries for the audio analyses). ML_ENOSIGNAL with *why
 * for a recording that does not hold the test signal; ML_ENOMEM. */
ml_status ml_cardan_finish(ml_cardan *q, ml_card_profile *out, ml_cardan_why *why);
/* One line for a why, never NULL. */
const char *ml_cardan_why_text(ml_cardan_why why);

/* ---- what the profile says about a measurement ------------------------------------------ */

/* The measured figures of a device under test that the card can limit (NAN: not measured). */
typedef struct {
    double fundamental_dbfs, thd_db, thdn_db, snr_db, snr_a_db;
    double noise_dbfs, noise_a_dbfs, noise_468_dbfs, hum_dbfs; /* noise: residual, hum out     */
} ml_card_dut;

/* The card's own figure for each, and whether the measurement lies within ML_CARD_MARGIN_DB of
 * it (card-limited):
 *  - thd: card thd_db (its THD+N when THD was not measured); limited when dut thd_db < it + M;
 *  - thdn (THD+N, SINAD, ENOB): the card's at the dut's level L = fundamental_dbfs,
 *    10 lg(10^(T/10) + 10^((N - L)/10)) with T its thd_db (else thdn_db) and N its noise_dbfs
 *    (T alone for digital silence); limited when dut thdn_db < it + M;
 *  - noise, noise_a, noise_468, hum: limited when the dut's lies less than M above the card's;
 *  - snr, snr_a: the card's at L is L - N (L - N_A); limited when the dut's is more than it - M.
 * A comparison with a NAN on either side never limits. */
typedef struct {
    bool thd, thdn, snr, snr_a, noise, noise_a, noise_468, hum;
    double card_thd_db, card_thdn_db, card_snr_db, card_snr_a_db;
    double card_noise_dbfs, card_noise_a_dbfs, card_noise_468_dbfs, card_hum_dbfs;
} ml_card_reach;

/* The reach of channel (0-based; a channel beyond the profile's uses channel 0) for d. */
void ml_card_reach_of(const ml_card_profile *p, int channel, const ml_card_dut *d, ml_card_reach *out);

#endif
