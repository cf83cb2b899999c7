/* Sliding-window analysis for a live meter: the last window_s seconds of input, re-analysed on
 * demand by the same dsp objects that define the figures for a whole recording.
 * SPDX-License-Identifier: MIT
 *
 * push appends samples to a ring that holds the latest window_s seconds. analyse runs over the
 * ring's contents, as one span:
 *  - audio: the Welch spectrum (dsp/spectrum.h), ml_audio_analyze and the figures of
 *    dsp/figures.h;
 *  - if/iq: the modulation analysis (dsp/modulation.h), which defines every carrier and
 *    modulation figure. The carrier is found with dsp/carrier.h (the strongest component, or the
 *    one near a nominal carrier with its capture range and level check) at the first analysis and
 *    again whenever it moves by more than refind_hz or its level by more than 6 dB. C is latched
 *    from an unmodulated stretch the window holds (at least 0.1 s) until ml_monitor_reset, a
 *    carrier re-find or a later unmodulated stretch replaces it; a reference set with
 *    ml_monitor_set_reference overrides it.
 * The FFT lengths follow ML_RESOLUTION_WINDOW (dsp/resolution.h: 1 s at 48 kHz gets 32768
 * points). create allocates and plans everything for the audio kind; for if/iq finding the
 * carrier creates the modulation analysis (a few ms, allocating), which happens at the first
 * analysis and on a re-find only.
 */
#ifndef ML_DSP_MONITOR_H
#define ML_DSP_MONITOR_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/benchfig.h"
#include "dsp/figures.h"
#include "dsp/metrics.h"
#include "dsp/modulation.h"
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
    double bandwidth_hz;       /* if/iq: channel filter width, 0 = the widest that fits (default;
                                  a wider request is held to the widest)                          */
    double peak_hold_s;        /* peak readings need this share per second (default 0.005)         */
    double positive_limit_pct; /* excursions counted above this positive peak (default 125)        */
    double refind_hz;          /* re-find the carrier when it moves more than this (default 50)   */
} ml_monitor_config;

typedef struct {
    double window_s;           /* seconds analysed                                                 */
    uint64_t analysed_frames;  /* frames pushed in total when this analysis ran                    */
    /* audio kind: the input's figures; if/iq: the demodulated audio's (modulation.audio)         */
    bool audio_ok;             /* the audio analysis succeeded (otherwise its figures are NAN)    */
    double rms_dbfs;           /* audio kind: RMS level of the window (dsp/figures.h)              */
    double peak_dbfs;          /* audio kind: its peak level (dsp/figures.h)                       */
    uint64_t clipped;          /* audio kind: its clipped samples (dsp/figures.h, 24-bit LSB)      */
    ml_audio_plain_figures audio;
    ml_noise_figures noise;    /* audio kind: the weighted noise of the window (dsp/benchfig.h; no
                                  quasi-peak reading); NAN for if/iq                              */
    /* if/iq (everything NAN for audio)                                                          */
    bool carrier_ok;           /* a carrier line was found in the window                           */
    double gap_s;              /* if/iq: time in 20 ms blocks of the window more than 20 dB below
                                  its strongest block, plus a block's time for each of its first
                                  and last 5 ms more than 30 dB below it (per frame): the signal
                                  comes or goes (then the window is not analysed: ML_ENOSIGNAL,
                                  carrier_ok false)                                               */
    ml_modulation_result modulation;
    unsigned carrier_finds;    /* times the carrier was found since create/reset                   */
} ml_monitor_result;

ml_monitor_config ml_monitor_config_default(double rate_hz, ml_monitor_kind kind);

/* Validates, allocates the ring and scratch buffers and plans the window's spectrum.
 * ML_EINVAL | ML_ENOMEM | ML_EFFT leave *out NULL. Not thread-safe (FFTW planner). */
ml_status ml_monitor_create(const ml_monitor_config *cfg, ml_monitor **out);
void ml_monitor_destroy(ml_monitor *q); /* NULL is a no-op */
/* Empties the ring, forgets the carrier and a latched C (not a reference); no allocation. */
void ml_monitor_reset(ml_monitor *q);
/* if/iq: C (> 0) for every later analysis, e.g. from a capture of the unmodulated carrier;
 * NAN: none (C then comes from the window, dsp/modulation.h). ML_EINVAL otherwise. */
ml_status ml_monitor_set_reference(ml_monitor *q, double c);

/* Frames the ring holds when full (the window), and how many it holds now. */
size_t ml_monitor_window_frames(const ml_monitor *q);
size_t ml_monitor_fill(const ml_monitor *q);

/* Appends n samples: re[n] and, for iq, im[n] (else NULL). Never allocates. */
ml_status ml_monitor_push(ml_monitor *q, const float *re, const float *im, size_t n);

/* Analyses the ring. ML_ENOSIGNAL until the ring is full, and for if/iq when no carrier is found
 * or it vanishes (out->carrier_ok false): the strongest component, or the one near the nominal
 * carrier, must stand ML_MODULATION_MIN_PROMINENCE_DB out of the noise (dsp/carrier.h), and the
 * window's carrier line too (dsp/modulation.h); after a window without one the carrier is
 * searched afresh (and C forgotten, as on a re-find). A window whose 20 ms blocks differ in power
 * by more than 20 dB, or whose first or last 5 ms lie 30 dB below its strongest block (gap_s > 0:
 * the signal comes or goes, which no modulation does) is not
 * analysed, nor searched for a carrier (the line of a carrier present in part would understate
 * it); ML_ENOMEM / ML_EFFT when creating the modulation
 * analysis after a carrier (re-)find fails. Allocates only when it (re-)finds the carrier and
 * inside the temporaries of ml_audio_analyze and ml_bench_noise. */
ml_status ml_monitor_analyse(ml_monitor *q, ml_monitor_result *out);

/* Coarse spectrum of the latest analysis for display: ncols column maxima (>= 1) in db[ncols].
 * audio: dBFS per bin over the band on a logarithmic axis; if/iq: dB re the carrier line over
 * carrier +- bandwidth, linear axis. *lo_hz, *hi_hz get the span. ML_ENOSIGNAL before the first
 * successful analysis. Never allocates. */
ml_status ml_monitor_get_columns(const ml_monitor *q, double *db, size_t ncols, double *lo_hz, double *hi_hz);

#endif
