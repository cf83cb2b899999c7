/* Sliding-window analysis for a live meter: the last window_s seconds of input, re-analysed on
 * demand with the same dsp code as a whole-file measurement.
 * SPDX-License-Identifier: MIT
 *
 * push appends samples to a ring that holds the latest window_s seconds. analyse runs, over the
 * ring's contents, exactly what the measure command runs over a file:
 *  - audio: the Welch spectrum (dsp/spectrum.h) and ml_audio_analyze (dsp/metrics.h);
 *  - if/iq: the carrier is the strongest component of the window's spectrum (or the strongest
 *    within +-200 Hz of a nominal carrier), found at the first analysis and again whenever it
 *    moves by more than refind_hz or its level by more than 6 dB; the channel filter and envelope
 *    (dsp/am.h) give the peak readings, the index and the envelope's spectrum (envelope THD, hum);
 *    C is the mean envelope of the window's unmodulated stretches when they last 0.1 s, else the
 *    mean envelope; the CNR comes from ml_rf_cnr_db (dsp/rf.h).
 * The FFT length is the largest power of two up to the default resolution with at least two
 * segments, a quarter of it apart, in the window (1 s at 48 kHz: 32768 points, 1.46 Hz bins). create allocates and plans everything for the audio
 * kind; for if/iq finding the carrier creates the demodulator and the envelope's spectrum (a
 * few ms, allocating), which happens at the first analysis and on a re-find only.
 */
#ifndef ML_DSP_MONITOR_H
#define ML_DSP_MONITOR_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/metrics.h"
#include "dsp/status.h"
#include "dsp/window.h"

typedef struct ml_monitor ml_monitor;

typedef enum { ML_MONITOR_AUDIO, ML_MONITOR_IF, ML_MONITOR_IQ } ml_monitor_kind;

typedef struct {
    double rate_hz;            /* sample rate: > 0                                                */
    ml_monitor_kind kind;
    double window_s;           /* analysed window: 0.1 .. 10 s, at least 1024 samples (default 1) */
    ml_window_type window;     /* spectral window (default ML_WINDOW_HFT248D)                     */
    ml_audio_config audio;     /* band, tone, harmonics, mains (ml_audio_config_default)          */
    double carrier_hz;         /* if/iq: nominal carrier, NAN = the strongest component (default)  */
    double max_bandwidth_hz;   /* if/iq: widest channel filter (default 10000)                    */
    double bandwidth_hz;       /* if/iq: channel filter width, 0 = the widest that fits (default)  */
    double peak_hold_s;        /* peak readings need this share per second (default 0.005)         */
    double positive_limit_pct; /* excursions counted above this positive peak (default 125)        */
    double refind_hz;          /* re-find the carrier when it moves more than this (default 50)   */
} ml_monitor_config;

typedef struct {
    double window_s;           /* seconds analysed                                                 */
    uint64_t analysed_frames;  /* frames pushed in total when this analysis ran                    */
    /* audio kind: the input; if/iq: the demodulated audio (envelope in units of C)             */
    bool audio_ok;             /* ml_audio_analyze succeeded (otherwise its figures are NAN)       */
    double rms_dbfs;           /* audio kind: RMS level of the window                              */
    double fundamental_hz, fundamental_dbfs, thd_pct, thdn_pct, sinad_db, snr_db;
    double hum_dbfs, hum_dbc;  /* hum power re full scale and re the fundamental                   */
    /* if/iq (NAN for audio)                                                                    */
    bool carrier_ok;
    double carrier_hz;         /* measured carrier frequency                                       */
    double carrier_offset_hz;  /* from the nominal carrier, or from the one found at the start     */
    double carrier_dbfs;       /* carrier line's level                                             */
    double bandwidth_hz;       /* one-sided channel filter width in use                            */
    double cnr_db;
    double index;              /* (Emax - Emin) / (Emax + Emin) of the peak readings               */
    double positive_peak_pct;  /* 100 (Emax - C) / C                                               */
    double negative_peak_pct;  /* 100 (C - Emin) / C; 100 when the carrier pinched off             */
    double envelope_thd_pct;   /* THD of the envelope's audio                                      */
    double mod_hum_db;         /* hum of the envelope re 100 % modulation                          */
    uint64_t pinch_events;     /* pinch-off and phase-reversal events in the window                */
    uint64_t positive_over;    /* excursions above positive_limit_pct in the window                */
    unsigned carrier_finds;    /* times the carrier was found since create/reset                   */
} ml_monitor_result;

ml_monitor_config ml_monitor_config_default(double rate_hz, ml_monitor_kind kind);

/* Validates, allocates the ring and scratch buffers and plans the window's spectrum.
 * ML_EINVAL | ML_ENOMEM | ML_EFFT leave *out NULL. Not thread-safe (FFTW planner). */
ml_status ml_monitor_create(const ml_monitor_config *cfg, ml_monitor **out);
void ml_monitor_destroy(ml_monitor *q); /* NULL is a no-op */
/* Empties the ring and forgets the carrier; no allocation. */
void ml_monitor_reset(ml_monitor *q);

/* Frames the ring holds when full (the window), and how many it holds now. */
size_t ml_monitor_window_frames(const ml_monitor *q);
size_t ml_monitor_fill(const ml_monitor *q);

/* Appends n samples: re[n] and, for iq, im[n] (else NULL). Never allocates. */
ml_status ml_monitor_push(ml_monitor *q, const float *re, const float *im, size_t n);

/* Analyses the ring. ML_ENOSIGNAL until the ring is full, and for if/iq when no carrier is found
 * or it vanishes (out->carrier_ok false); ML_ENOMEM / ML_EFFT when creating the demodulator
 * after a carrier (re-)find fails. Allocates only when it (re-)finds the carrier and inside
 * ml_audio_analyze's temporaries. */
ml_status ml_monitor_analyse(ml_monitor *q, ml_monitor_result *out);

/* Coarse spectrum of the latest analysis for display: ncols column maxima (>= 1) in db[ncols].
 * audio: dBFS per bin over the band on a logarithmic axis; if/iq: dB re the carrier line over
 * carrier +- bandwidth, linear axis. *lo_hz, *hi_hz get the span. ML_ENOSIGNAL before the first
 * successful analysis. Never allocates. */
ml_status ml_monitor_get_columns(const ml_monitor *q, double *db, size_t ncols, double *lo_hz, double *hi_hz);

#endif
