/* Event detectors for interference logging: short impulses in a sample stream, and sustained
 * changes of a level sequence against its running baseline.
 * SPDX-License-Identifier: MIT
 *
 * Impulse detector (ml_impulse). The detector looks at the order-th difference of the input
 * (order 2 by default: d[n] = x[n] - 2 x[n-1] + x[n-2], a high-pass whose power gain is
 * (2 sin(pi f / fs))^4: -35 dB at 1 kHz and -69 dB at 50 Hz at 48 kHz, 7.8 dB for white noise),
 * so a click stands out of programme audio and hum that would hide it in the plain level. That
 * signal is cut into frames of frame_s; a frame's level is its mean square in dBFS
 * (10 lg(ms / 0.5), full-scale sine = 0 dBFS). The floor is the median of the
 * last floor_s of frame levels (dsp/floor.h), so bursts occupying less than half of that window do
 * not raise it. A frame is hot when its level exceeds floor + threshold_db and min_level_dbfs.
 * Hot frames separated by fewer than gap_s of quiet frames form one burst. A burst no longer than
 * max_s is an impulse; longer ones are level changes, not impulses, and are dropped. The detector
 * waits until it holds floor_s / 2 of frames before judging any (no floor yet). Start and end are
 * frame indices since reset, so the time resolution is frame_s.
 *
 * Change detector (ml_change). The input is a sequence of levels (dB) at rate_hz values per
 * second (one per analysis step). The baseline is the median of the last baseline_s of values; it
 * is frozen while a change is pending or active, so a lasting change is measured against the level
 * before it. With direction +1 a value is out when value - baseline >= threshold_db (direction -1:
 * baseline - value >= threshold_db). A change starts at the first of a run of out values lasting
 * min_s, and ends at the first of a run of in values lasting min_s (or after max_s, when the
 * baseline restarts from the new level). Nothing is judged before warmup_s of values.
 */
#ifndef ML_DSP_DETECT_H
#define ML_DSP_DETECT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

typedef struct {
    int64_t start;      /* first frame / value of the event (index since reset)              */
    int64_t end;        /* one past its last frame / value                                    */
    double peak_abs;    /* impulses: largest |input sample| in the burst (full scale 1)        */
    double peak_db;     /* impulses: highest frame level of the differenced signal (dBFS);
                           changes: most extreme value                                        */
    double baseline_db; /* the floor or baseline it was judged against                        */
    double rise_db;     /* peak_db - baseline_db (negative for a fall)                        */
} ml_event;

typedef struct ml_impulse ml_impulse;

typedef struct {
    double rate_hz;        /* sample rate: > 0                                               */
    double frame_s;        /* frame length: at least 1 sample, at most 0.1 s (0.001)           */
    double floor_s;        /* floor window: >= 10 frames (1.0)                                 */
    double threshold_db;   /* hot when above floor + threshold: > 0 (20)                       */
    double min_level_dbfs; /* and above this absolute level (-100)                             */
    double gap_s;          /* quiet time that ends a burst: >= 0 (0.005)                      */
    double max_s;          /* longest impulse: >= frame_s (0.2)                                */
    int order;             /* difference order before framing: 0 (none), 1 or 2 (2)            */
} ml_impulse_config;

ml_impulse_config ml_impulse_config_default(double rate_hz);
/* ML_EINVAL | ML_ENOMEM */
ml_status ml_impulse_create(const ml_impulse_config *cfg, ml_impulse **out);
void ml_impulse_destroy(ml_impulse *q);
void ml_impulse_reset(ml_impulse *q);
/* Frame length in samples (the time resolution of starts and ends). */
size_t ml_impulse_frame_samples(const ml_impulse *q);
/* Pushes n samples x[n]; impulses that ended are written to ev[cap] (in time order), their
 * number to *nev. An impulse ends gap_s after its last hot frame, so cap = n / frame + 1 always
 * suffices. ML_EINVAL when cap is too small for what ended (those impulses are then lost).
 * Never allocates. */
ml_status ml_impulse_push(ml_impulse *q, const float *x, size_t n, ml_event *ev, size_t cap, size_t *nev);
/* True while a burst is open (not yet closed or dropped), with its first frame in *start_frame
 * (may be NULL). A burst already longer than max_s is not reported (it cannot be an impulse). */
bool ml_impulse_get_open(const ml_impulse *q, int64_t *start_frame);
/* End of input: an impulse still open is closed (at most one goes to ev[cap]). */
ml_status ml_impulse_finish(ml_impulse *q, ml_event *ev, size_t cap, size_t *nev);

typedef struct ml_change ml_change;

typedef struct {
    double rate_hz;      /* values per second: > 0                                           */
    int direction;       /* +1 rises, -1 falls                                               */
    double threshold_db; /* > 0 (10)                                                         */
    double min_s;        /* duration of a run that starts or ends a change: >= 0 (1.0)       */
    double baseline_s;   /* baseline window: at least one value (60)                         */
    double warmup_s;     /* values needed before judging: 0 .. baseline_s (5)                */
    double max_s;        /* longest change before the baseline restarts; 0 = no limit (0)    */
} ml_change_config;

ml_change_config ml_change_config_default(double rate_hz, int direction, double threshold_db);
/* ML_EINVAL | ML_ENOMEM */
ml_status ml_change_create(const ml_change_config *cfg, ml_change **out);
void ml_change_destroy(ml_change *q);
void ml_change_reset(ml_change *q);
/* Pushes n values v[n] (dB; NaN values count as "in" and do not enter the baseline). Changes
 * that ended go to ev[cap]; a push ends at most n changes. ML_EINVAL when cap is too small.
 * Never allocates. */
ml_status ml_change_push(ml_change *q, const double *v, size_t n, ml_event *ev, size_t cap, size_t *nev);
/* End of input: a change still active is closed at the last value (at most one). */
ml_status ml_change_finish(ml_change *q, ml_event *ev, size_t cap, size_t *nev);
/* 0 idle, 1 a change is pending (out values, not yet min_s), 2 a change is active. */
int ml_change_get_state(const ml_change *q);
/* Current baseline (dB), NAN before the first value. */
double ml_change_get_baseline(const ml_change *q);
/* True while a change is pending or active: *start its first value's index, *in_run whether a
 * run of in values is under way and *in_start that run's first index (any pointer may be NULL). */
bool ml_change_get_open(const ml_change *q, int64_t *start, bool *in_run, int64_t *in_start);

/* ---- state as numbers: a detector continued in another process (a log resumed after a kill) ----
 *
 * save writes the detector's state into s[cap] and returns the number of values it needs (call
 * with s NULL to size; nothing is written when cap is smaller): a few fixed values and the
 * floor's or baseline's window (at most its length). restore puts a state back into a detector
 * created with the same config (it is reset first). ML_EINVAL when s is not such a state (wrong
 * tag or count, a value out of range or not finite); the detector is then left alone.
 *
 * ml_impulse_restore with continuous true continues exactly (the next sample pushed follows the
 * last one before the save: frame indices go on); with continuous false only the floor is kept
 * and the input starts afresh (frame 0, no open burst; the first `order` samples only fill the
 * difference's history, so the step from silence to the signal is not an impulse), and judging
 * starts at once when the floor holds enough values.
 *
 * ml_change_restore with rebase false continues the value indices; with rebase true the next value
 * pushed gets index 0, so an open change's start (and the start of its run of in values) become
 * negative indices of values before the restore. */
size_t ml_impulse_save(const ml_impulse *q, double *s, size_t cap);
ml_status ml_impulse_restore(ml_impulse *q, const double *s, size_t n, bool continuous);
size_t ml_change_save(const ml_change *q, double *s, size_t cap);
ml_status ml_change_restore(ml_change *q, const double *s, size_t n, bool rebase);

#endif
