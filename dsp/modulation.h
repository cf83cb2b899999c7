/* The modulation analysis of an IF or I/Q capture: the one definition of every carrier and
 * modulation figure, whichever command shows it (measure, live, compare, watch, log).
 * SPDX-License-Identifier: MIT
 *
 * A span of samples (a whole recording, a live window, a log interval) is pushed through the
 * demodulator (dsp/am.h: mixer to 0 Hz at the carrier, channel filter of one-sided bandwidth B,
 * envelope E, its 20 ms blocks classed unmodulated or modulated, peak histograms, overmodulation
 * events), the spectrum of the captured signal and the spectrum of the demodulated audio; at the
 * end of the span the figures below are computed once. The carrier is found beforehand with
 * dsp/carrier.h (its frequency and amplitude go into the configuration).
 *
 * C, the unmodulated carrier amplitude (47 CFR 73.14 defines percentage modulation against it),
 * in order of preference (c_source says which):
 *   ML_C_REFERENCE  a value set with ml_modulation_set_reference (a capture of the unmodulated
 *                   carrier with the same set-up);
 *   ML_C_QUIET      the mean envelope over this span's unmodulated blocks, when they last at
 *                   least quiet_min_s (0.1 s);
 *   ML_C_LATCHED    with cfg.latch, the C of the latest earlier span that had one of its own
 *                   (ML_C_QUIET): watch and log learn C from an unmodulated stretch they hear and
 *                   keep it until reset with ml_modulation_set_reference(q, NAN) or replaced by a
 *                   later one;
 *   ML_C_MEAN       the mean envelope over the whole span (peaks then fold in any carrier shift,
 *                   and carrier shift is not measured).
 *
 * Figures (README "Modulation" repeats them for users). The demodulator (dsp/am.h) gives the
 * envelope E, the coherent envelope S (signed: negative where the carrier is reversed), the
 * noise sigma (r.m.s. of the quadrature component) and the reading (E, or S where S < -rev);
 * Emax and Emin are the held readings: the levels the reading exceeds, and stays under, for a
 * share peak_hold_s per second of the modulated blocks' time (peaks of frequent recurrence:
 * 47 CFR 73.1570(b)(1) leaves "frequent" undefined; the default 5 ms per second is the project's
 * judgement, README "Modulation"); Etop is the highest oversampled envelope at any time:
 *   carrier_hz, carrier_level_dbfs  the carrier line in the captured spectrum (phase-advance
 *                   frequency; 20 lg A of its amplitude A: the mean coherent envelope under
 *                   modulation);
 *   unmodulated_dbfs = 20 lg C;
 *   cnr_db = 10 lg(P_car / (nd 2B / bin)): the carrier line's power over the noise in the channel
 *                   carrier +- B, nd the mean density over the channel's bins outside the lobes
 *                   of the carrier, the tone's sidebands and hum sidebands (ml_rf_cnr_db);
 *   index = (Emax - Emin) / (Emax + Emin) (above 1 for a reversed carrier: Emin < 0);
 *   index_spectral = (U + L) / A for the demodulated tone's sidebands U, L;
 *   positive_peak_pct = 100 (Etop - C) / C: the positive peak at any time (a true peak);
 *   positive_peak_held_pct = 100 (Emax - C) / C;
 *   negative_peak_pct = 100 (C - Emin) / C: the negative peak of frequent recurrence, beyond 100
 *                   where the carrier reversed (a pinched-off carrier reads at most 100: its
 *                   overmodulation is the carrier-off time);
 *                   a peak that would be negative (the envelope never crosses C on that side) is
 *                   NAN with a reason (positive_peak_why, negative_peak_why);
 *   carrier_shift_pct = 100 (Emod - C) / C, Emod the mean envelope of the modulated blocks, or
 *                   with phase-reversal events the mean coherent envelope there (the carrier
 *                   line: the mean of E folds the reversed stretches up; shift_from_line); NAN
 *                   when C is the mean envelope;
 *   carrier_off_pct = 100 x the carrier-off time of the pinch-off troughs / the modulated time;
 *   overmodulation_pct = 100 x (carrier-off time + reversed time) / the modulated time;
 *   pinch_events, reversal_events: troughs judged so (dsp/am.h), one event per trough;
 *   positive_over: crests whose highest value exceeds (1 + positive_limit_pct / 100) C;
 *   noise_pct = 100 sigma / C; floor_pct, reversal_pct: the levels F and rev in % of C;
 *   held_noise_pct = 100 z sigma / C (z: the standard normal's 1 - hold quantile, 2.58 at
 *                   5 ms/s): about how far noise moves the held peaks and the index (x 1/100);
 *   top_noise_pct = 100 sqrt(2 ln N) sigma / C, N the independent noise samples of the span
 *                   (2 B per second): about how far noise lifts the true peak;
 *   peaks_noise_biased: the envelope index exceeds the spectral one by more than its uncertainty
 *                   (the blocks' 95 % interval, at least 0.002) and by no more than 1.5 x
 *                   held_noise_pct / 100: the peaks and the index read noise, the spectral index
 *                   does not;
 *   sideband_asymmetry_db = 20 lg(U / L);
 *   trapezoid_deviation_pct = 100 x RMS deviation of E from its line against the reference
 *                   channel, / C;
 *   occupied_bandwidth_hz  the 99 % power bandwidth (ITU-R SM.328) of the captured spectrum;
 *   audio           the demodulated audio's figures (dsp/figures.h): the envelope's AC part in
 *                   units of C, so 0 dBFS is 100 % modulation.
 * A carrier whose line stands less than ML_MODULATION_MIN_PROMINENCE_DB out of the spectrum
 * around it (ml_rf_line_prominence_db) is no carrier: the span's figures are then not measured
 * and finish returns ML_ENOSIGNAL with no_carrier saying why.
 * Blocks without carrier (dsp/am.h: their mean below 10 % of the provisional C) enter no figure;
 * absent_s says how long they lasted, and a span of nothing else has no carrier (no_carrier).
 * With both unmodulated (or carrier-less) and modulated blocks in the span, both spectra average
 * only the FFT segments lying wholly in modulated blocks (spectra_modulated_only).
 *
 * Threads: ml_modulation_push and ml_modulation_finish run everything on the calling thread. A
 * pipeline may instead split the work in two halves that run on two threads: the demodulation
 * half (ml_modulation_demodulate, ml_modulation_demodulate_end) and the feed half
 * (ml_modulation_feed: spectra, uncertainty blocks, envelope hook), handing batches over in
 * order (each batch fed exactly once, in the order demodulated). The two halves share no state,
 * so the figures never depend on timing.
 */
#ifndef ML_DSP_MODULATION_H
#define ML_DSP_MODULATION_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/channels.h"
#include "dsp/figures.h"
#include "dsp/metrics.h"
#include "dsp/resolution.h"
#include "dsp/rf.h"
#include "dsp/spectrum.h"
#include "dsp/status.h"
#include "dsp/window.h"

typedef struct ml_modulation ml_modulation;
typedef struct ml_modulation_batch ml_modulation_batch;

typedef enum { ML_C_REFERENCE, ML_C_QUIET, ML_C_LATCHED, ML_C_MEAN } ml_c_source;

/* A carrier line must stand this far out of the spectrum around it (dsp/rf.h) */
#define ML_MODULATION_MIN_PROMINENCE_DB 10.0

typedef struct {
    double rate_hz;            /* sample rate: > 0                                                */
    ml_channels channels;      /* the pushed frames' layout; complex_input: I/Q, else a real IF   */
    double carrier_hz;         /* the carrier (dsp/carrier.h): |f| < rate/2, > 0 for a real IF     */
    double carrier_amplitude;  /* its amplitude, the provisional C (thresholds, histogram range): > 0 */
    double bandwidth_hz;       /* one-sided channel bandwidth B; 0: the widest that fits (default)  */
    double max_bandwidth_hz;   /* the widest B chosen when bandwidth_hz is 0 (default 10000)       */
    double peak_hold_s;        /* peak readings' share of time per second: 0 .. 0.5 (0.005)        */
    double positive_limit_pct; /* crests counted above this positive peak (default 125)            */
    ml_window_type window;     /* spectral window (default HFT248D)                               */
    ml_audio_config audio;     /* the demodulated audio's analysis (band clipped to B)             */
    int64_t span_frames;       /* frames a span holds (chooses the FFT lengths): > 0              */
    ml_resolution resolution;  /* how the FFT lengths follow the span (dsp/resolution.h)          */
    double quiet_min_s;        /* unmodulated time needed before C is taken from it (0.1)         */
    bool latch;                /* keep C from unmodulated stretches for later spans (false)       */
    bool single_precision;     /* float transforms for the channel filter and an I/Q spectrum
                                  (dsp/cfir.h, dsp/spectrum.h); then samples beyond +-1e30 are
                                  not allowed (default false)                                     */
    bool uncertainty;          /* block estimates of the 95 % intervals (dsp/blocks.h; false)     */
    size_t max_batch_frames;   /* most frames in one push or batch (default 32768)               */
} ml_modulation_config;

typedef struct {
    /* the analysis */
    double bandwidth_hz, transition_hz; /* channel filter in use                                  */
    size_t filter_taps, edge;  /* its length, and the samples of settling left out at each end   */
    size_t rf_nfft;            /* the captured spectrum's FFT length                              */
    bool spectra_modulated_only;
    uint64_t samples, modulated_samples, quiet_samples; /* envelope samples                        */
    double absent_s;           /* time in blocks without carrier (dsp/am.h), in no figure         */
    /* carrier */
    double carrier_hz, carrier_amplitude, carrier_level_dbfs;
    double c;                  /* C (see above) and where it comes from                           */
    ml_c_source c_source;
    double c_quiet_s;          /* the unmodulated time C was taken from (QUIET, LATCHED; else 0)   */
    double unmodulated_dbfs;
    double cnr_db, cnr_bandwidth_hz;
    double carrier_prominence_db; /* the carrier line out of the spectrum around it          */
    const char *no_carrier;    /* why the span has no carrier (static text), or NULL             */
    /* modulation */
    double index, index_spectral, positive_peak_pct, positive_peak_held_pct, negative_peak_pct;
    const char *positive_peak_why, *negative_peak_why; /* why NAN (static text), or NULL       */
    double carrier_shift_pct;
    bool shift_from_line;      /* carrier shift from the carrier line (phase reversal)           */
    double overmodulation_pct, carrier_off_pct;
    uint64_t pinch_events, reversal_events, positive_over;
    double noise_pct, floor_pct, reversal_pct, held_noise_pct, top_noise_pct;
    bool floor_from_noise;     /* the floor F was set by the noise, not by the 1 % least          */
    bool peaks_noise_biased;
    double sideband_asymmetry_db;
    bool has_trapezoid;        /* a reference channel that varied                                 */
    double trapezoid_deviation_pct;
    double occupied_bandwidth_hz;
    double emax_rel, emin_rel; /* the held readings / C                                           */
    double pinch_rel;          /* pinch-off floor F / C                                           */
    /* the demodulated audio (units of C) */
    bool audio_valid;
    const char *audio_no_signal; /* why not valid when the band holds nothing (static text) or NULL */
    ml_audio_result audio_result;
    ml_audio_plain_figures audio;
} ml_modulation_result;

/* 95 % half-widths (dsp/blocks.h) where the blocks estimate them; NAN elsewhere. The blocks read
 * held peaks: positive_peak_held_pct's interval (the true peak has none). */
typedef struct {
    double index, positive_peak_held_pct, negative_peak_pct;
    ml_audio_plain_figures audio;
    size_t blocks;
    double block_s;
} ml_modulation_uncertainty;

ml_modulation_config ml_modulation_config_default(double rate_hz, const ml_channels *channels,
                                                  double carrier_hz, double carrier_amplitude,
                                                  int64_t span_frames);

/* The channel filter around carrier_hz: requested_hz, or when it is 0 the widest that fits
 * (ml_am_default_bandwidth, at most max_hz); *transition_hz its transition width
 * (ml_am_transition: a real IF's mixer image and its sidebands stay in the stop band, dsp/am.h).
 * ML_EINVAL when less than ML_AM_MIN_BANDWIDTH_HZ fits (*bandwidth_hz 0) or requested_hz exceeds
 * the widest (*bandwidth_hz gets the widest). */
ml_status ml_modulation_channel(double rate_hz, bool complex_input, double carrier_hz, double requested_hz,
                                double max_hz, double *bandwidth_hz, double *transition_hz);

/* Validates, designs the channel filter and allocates everything (FFT plans included).
 * ML_EINVAL (also when the channel does not fit, see above), ML_ENOSIGNAL (span_frames too few
 * for the channel filter and the spectra), ML_ENOMEM, ML_EFFT leave *out NULL. Not thread-safe
 * (FFTW planner). */
ml_status ml_modulation_create(const ml_modulation_config *cfg, ml_modulation **out);
void ml_modulation_destroy(ml_modulation *q); /* NULL is a no-op */
/* Starts a new span: everything accumulated is forgotten except C set by set_reference or
 * latched. No allocation. */
void ml_modulation_reset(ml_modulation *q);
/* Fixes C (> 0) for this and later spans (ML_C_REFERENCE); NAN forgets it and a latched C. */
ml_status ml_modulation_set_reference(ml_modulation *q, double c);

/* Input samples at each end of a span that produce no envelope (half the channel filter,
 * dsp/am.h); 0 for NULL. */
size_t ml_modulation_edge(const ml_modulation *q);

/* Pushes n <= max_batch_frames frames (layout cfg.channels) through both halves on this thread.
 * ML_EINVAL after finish (until reset). Never allocates. */
ml_status ml_modulation_push(ml_modulation *q, const float *frames, size_t n);
/* Ends the span: flushes the filter, feeds the rest and computes the figures. ML_ENOSIGNAL when
 * the span gave no envelope or its carrier vanished (C not > 0); the result then holds what
 * could be measured. */
ml_status ml_modulation_finish(ml_modulation *q);

/* The two halves. A batch holds room for max_batch_frames frames (read into
 * ml_modulation_batch_frames) and the demodulator's output for them. */
ml_status ml_modulation_batch_create(const ml_modulation *q, ml_modulation_batch **out);
void ml_modulation_batch_destroy(ml_modulation_batch *b);
float *ml_modulation_batch_frames(ml_modulation_batch *b);
/* Demodulation half: the batch's first n frames through the demodulator into the batch. */
ml_status ml_modulation_demodulate(ml_modulation *q, ml_modulation_batch *b, size_t n);
/* Demodulation half, at the span's end: flushes the demodulator into b (which holds no frames
 * then) and marks it the last batch. */
ml_status ml_modulation_demodulate_end(ml_modulation *q, ml_modulation_batch *b);
/* Feed half: the batch's captured samples and envelope to the spectra, the uncertainty blocks
 * and the envelope hook; for the last batch, also computes the figures (as finish). */
ml_status ml_modulation_feed(ml_modulation *q, ml_modulation_batch *b);

/* Called by the feed half with every n envelope samples in units of the provisional C
 * (cfg.carrier_amplitude), in order (for pictures). fn NULL clears it. */
typedef void (*ml_modulation_envelope_fn)(void *ctx, const double *env, size_t n);
void ml_modulation_on_envelope(ml_modulation *q, ml_modulation_envelope_fn fn, void *ctx);

/* The figures of the last finished span. ML_ENOSIGNAL before the first finish. */
ml_status ml_modulation_get_result(const ml_modulation *q, ml_modulation_result *out);
/* Their uncertainties (cfg.uncertainty; otherwise all NAN). */
ml_status ml_modulation_get_uncertainty(const ml_modulation *q, ml_modulation_uncertainty *out);
/* The captured signal's spectrum of the last finished span (for pictures and the mask). */
const ml_spectrum *ml_modulation_get_spectrum(const ml_modulation *q);
/* The Welch spectrum of the demodulated audio (units of C: a 100 % sine is amplitude 1) that
 * ml_modulation_result.audio_result was measured on (NULL for NULL q). */
const ml_spectrum *ml_modulation_get_audio_spectrum(const ml_modulation *q);
/* That spectrum's transform (at the rate over the decimation it takes) and whether it resolves the
 * mains lines: for ML_RESOLUTION_SPAN the audio measurement's plan (ml_audio_plan_transform, on
 * the envelope samples of the span); for ML_RESOLUTION_WINDOW the window's transform, resolved
 * taken as true. NULL for NULL q. */
const ml_audio_plan *ml_modulation_get_audio_plan(const ml_modulation *q);
/* Worst margin of the captured spectrum against an emission mask referred to C's power
 * (ml_rf_mask_margin). ML_ENOSIGNAL when the mask lies outside the captured band. */
ml_status ml_modulation_get_mask_margin(const ml_modulation *q, const ml_mask *mask, double *margin_db,
                                        double *worst_offset_hz);

#endif
