/* Stepped-tone segmentation (streamed, bounded memory) and the step plan shared by tone and sweep.
 * SPDX-License-Identifier: MIT
 *
 * Segmentation. The input is cut into frames of frame_s seconds every hop = frame / 2 (frame k
 * covers samples [k hop, k hop + frame)). Each frame, less its mean, is Hann-windowed and
 * transformed with zero padding to nfft >= 2 frame. Its tone is the strongest bin above DC's lobe:
 *  - tone power Pt = 2 sum_{+-lobe} |X_k|^2 / (nfft sum w^2) over the +-(2 nfft/frame + 1) bins
 *    around the peak (Parseval: a sine of amplitude A gives A^2 / 2), frame power Pf likewise over all
 *    bins above DC; level = 10 lg(Pt / 0.5) dBFS (the fundamental only, harmonics excluded);
 *  - frequency: parabolic interpolation of ln |X_k|^2 around the peak;
 *  - the frame is TONAL when its level >= min_level_dbfs and its tone is a spectral line: either it
 *    holds the frame's power (Pt >= 10^(tonal_db/10) (Pf - Pt)), or the mean bin power over the
 *    lobe stands at least line_db above the median bin power above DC's lobe (the noise floor per
 *    bin: a line far below broadband noise in power is still seen); else it is a pause. No level
 *    rule relative to other steps: a step 80 dB below the others (a response's stop band) is a
 *    step like any other. White noise alone puts the lobe's mean about 2 dB (1 / ln 2) over the
 *    median, its largest bin about ln(nfft / 2) times the mean (~10 dB), a lobe around it less:
 *    line_db 15 keeps clear of it, and a run needs 3 frames agreeing in frequency and level.
 * A step is a run of tonal frames each within max(freq_tol_pct % , freq_tol_hz) in frequency and
 * level_tol_db in level of the run's running mean; a pause or a frame outside those ends it. A run
 * whose frames span [start, end) gives measure_start = start + edge_s, measure_end = end - edge_s
 * (settling edges cut); it becomes a step when measure_end - measure_start >= min_step_s. A run of
 * at least ML_STEPS_SKIP_FRAMES frames that is too short for that is a SKIPPED run (a steady tone
 * too short to measure, not the one or two frames that straddle a change): its start, end, mean
 * interpolated frequency and mean level are kept (the last ML_STEPS_MAX_SKIPPED) so the caller can
 * name it.
 * Step figures over the frames lying wholly inside [measure_start, measure_end):
 *  - level_dbfs: 10 lg of the mean tone power / 0.5; level_spread_db: highest minus lowest frame;
 *  - frequency_hz: from the phase advance of the peak bin between consecutive frames (arg of the
 *    summed products X_i conj X_{i-1} = 2 pi f hop / rate, the turn count taken from the mean
 *    interpolated frequency), accurate to a small fraction of a bin; the mean interpolated frequency
 *    when fewer than two frames share the peak bin.
 * Steps of tone --step files (a pause is a step of 0 Hz) and of a step plan are found without being
 * told the plan. Two consecutive steps without a pause between them must differ by more than the
 * tolerances. Frequencies below about 4 / frame_s Hz are not seen (the DC lobe); a hum (or any
 * steady line) alone in a pause is a tone to this definition and is reported as a step: the
 * caller decides what it is. A frame whose strongest line lies on a mains multiple (m x 50 or
 * 60 Hz, m <= ML_STEPS_HUM_ORDERS, within 1 % or a lobe) more than ML_STEPS_HUM_DB below the loudest
 * tonal frame so far takes instead the strongest line clear of every mains multiple and of that
 * line's harmonics 2..10, when it stands out of the noise by line_db: a stop-band step weaker than
 * the hum is still a step.
 * Memory: the frame buffers and a ring of the last max_steps steps, fixed at create.
 *
 * Plan: frequencies x levels, each tone step_s long and followed by pause_s of silence (none when
 * 0); levels are the outer loop (one frequency sweep per level). ml_step_plan_to_synth gives the
 * sequence as dsp/synth.h steps (a pause = frequency 0), ml_step_plan_schedule the expected frames.
 */
#ifndef ML_DSP_STEPS_H
#define ML_DSP_STEPS_H

#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"
#include "dsp/synth.h"

typedef struct ml_steps ml_steps;

typedef struct {
    double rate_hz;        /* 8000 .. 1e6                                                   */
    double frame_s;        /* 0.01 .. 2 (default 0.2: steps from 20 Hz)                     */
    double edge_s;         /* 0 .. 10, cut from each end of a step (default 0.1)            */
    double min_step_s;     /* > 0 .. 3600, shortest measured part reported (default 0.3)    */
    double freq_tol_pct;   /* 0.01 .. 50 (default 2)                                        */
    double freq_tol_hz;    /* 0 .. 1000 (default 2)                                         */
    double level_tol_db;   /* 0.01 .. 40 (default 0.5)                                      */
    double tonal_db;       /* 0 .. 60 (default 10: the tone holds >= 91 % of the power)     */
    double line_db;        /* 3 .. 100 (default 15): a line over the median bin              */
    double min_level_dbfs; /* -200 .. 0 (default -200: no level rule)                       */
    size_t max_steps;      /* 1 .. 1e6: steps kept for get (default 4096)                   */
} ml_steps_config;

typedef struct {
    uint64_t index;                      /* 0, 1, ... in the order found                */
    uint64_t start, end;                 /* frames of the steady tone, [start, end)     */
    uint64_t measure_start, measure_end; /* with the settling edges cut                 */
    double frequency_hz;
    double level_dbfs;                   /* fundamental, mean over the measured frames   */
    double level_spread_db;              /* highest - lowest measured frame level        */
    size_t nframes;                      /* analysis frames measured                     */
} ml_step;

ml_steps_config ml_steps_config_default(double rate_hz);

/* Allocates the frame buffers, the FFT plan and the step ring. ML_EINVAL (*out NULL), ML_ENOMEM,
 * ML_EFFT. Not thread-safe (FFTW planner). */
ml_status ml_steps_create(const ml_steps_config *cfg, ml_steps **out);
void ml_steps_destroy(ml_steps *q); /* NULL is a no-op */
void ml_steps_reset(ml_steps *q);   /* as just created (steps forgotten); no allocation */

/* Feeds n samples (any n; x NULL only with n == 0). Never allocates. ML_ERANGE for a non-finite
 * sample (that sample and the rest of the block are not processed). */
ml_status ml_steps_push(ml_steps *q, const float *x, size_t n);
/* End of input: closes a step still open (a partial last frame is not analysed). push after
 * finish continues as if the input had paused. */
ml_status ml_steps_finish(ml_steps *q);

/* Steps found so far (total, including those no longer kept). */
uint64_t ml_steps_count(const ml_steps *q);
/* Step number i (0 .. count - 1). ML_EINVAL for i >= count, ML_ENOSIGNAL when it has left the ring
 * (i < count - max_steps). */
ml_status ml_steps_get(const ml_steps *q, uint64_t i, ml_step *out);
#define ML_STEPS_SKIP_FRAMES 3   /* a run this long that is no step is a skipped run */
#define ML_STEPS_HUM_DB 30.0     /* a mains line this far below the loudest step is hum  */
#define ML_STEPS_HUM_ORDERS 6    /* the mains multiples m x 50 / 60 Hz taken for hum     */
#define ML_STEPS_MAX_SKIPPED 64  /* skipped runs kept for get */
/* Skipped runs found so far, and number i of them (index, start, end, frequency_hz, level_dbfs
 * and nframes = the run's frames set; the measured fields 0). ML_EINVAL for i >= count,
 * ML_ENOSIGNAL when it has left the ring. */
uint64_t ml_steps_skipped_count(const ml_steps *q);
ml_status ml_steps_get_skipped(const ml_steps *q, uint64_t i, ml_step *out);
/* Samples between a step's end and the moment push reports it: at most frame + hop frames. */
size_t ml_steps_latency(const ml_steps *q);

#define ML_STEP_PLAN_MAX_FREQS 64
#define ML_STEP_PLAN_MAX_LEVELS 8

typedef struct {
    size_t nfreqs;                                 /* 1 .. ML_STEP_PLAN_MAX_FREQS              */
    double freqs_hz[ML_STEP_PLAN_MAX_FREQS];       /* each > 0 and < rate / 2                  */
    size_t nlevels;                                /* 1 .. ML_STEP_PLAN_MAX_LEVELS             */
    double levels_dbfs[ML_STEP_PLAN_MAX_LEVELS];   /* each -200 .. 0                           */
    double step_s;                                 /* 0.05 .. 3600 (default 1)                 */
    double pause_s;                                /* 0 .. 3600 (default 0.25)                 */
} ml_step_plan;

/* One expected tone step of a plan. */
typedef struct {
    size_t freq_index, level_index;
    double frequency_hz, level_dbfs;
    uint64_t start, end; /* frames [start, end) as dsp/synth.h places them                        */
} ml_step_expect;

/* 1 kHz at -20 dBFS, 1 s steps, 0.25 s pauses. */
ml_step_plan ml_step_plan_default(void);
/* Entries in the synth sequence: nfreqs * nlevels tones, each followed by a pause when pause_s > 0. */
size_t ml_step_plan_entries(const ml_step_plan *p);
/* Writes the sequence into steps[cap]; *n = entries. ML_EINVAL for a bad plan (rate_hz is used to
 * check the frequencies) or cap < entries (nothing written). */
ml_status ml_step_plan_to_synth(const ml_step_plan *p, double rate_hz, ml_synth_step *steps, size_t cap,
                                size_t *n);
/* Expected tone steps (pauses left out) with their frames at rate_hz: step i of the synth sequence
 * starts at round(rate * sum of the earlier seconds). out[cap]; *n = nfreqs * nlevels. ML_EINVAL. */
ml_status ml_step_plan_schedule(const ml_step_plan *p, double rate_hz, ml_step_expect *out, size_t cap,
                                size_t *n);

#endif
