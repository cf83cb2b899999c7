/* Welch-averaged power spectrum of a real or complex signal, streamed in blocks of any size.
 * SPDX-License-Identifier: MIT
 *
 * Real input: psd[k], k = 0..nfft/2, is the mean over segments of 2|X_k|^2 / (sum w)^2 (half that
 * at k = 0 and k = nfft/2), so a sine of amplitude A centred in bin k reads A^2/2 there, and the
 * power of any band is sum(psd[k] over the band) / enbw_bins. Full-scale sine = power 0.5.
 * Complex input (I/Q): psd[k], k = 0..nfft-1 in FFT order (k >= nfft/2 are the negative
 * frequencies (k - nfft) * rate / nfft), is |X_k|^2 / (sum w)^2, so a complex exponential of
 * amplitude A reads A^2; a full-scale exponential (|z| = 1) has power 1.
 * The object also accumulates the cross-spectrum of consecutive segments, whose phase at a
 * tone's bin gives the tone's frequency to a small fraction of a bin (see get_frequency).
 */
#ifndef ML_DSP_SPECTRUM_H
#define ML_DSP_SPECTRUM_H

#include <stddef.h>

#include "dsp/status.h"
#include "dsp/window.h"

typedef struct ml_spectrum ml_spectrum;

typedef struct {
    size_t nfft;           /* transform length: a power of two, 16 .. 2^24              */
    size_t hop;            /* frames between segment starts: 1 .. nfft                   */
    ml_window_type window; /* default ML_WINDOW_HFT248D                                   */
    double rate_hz;        /* sample rate: > 0                                            */
    int complex_input;     /* 0: real samples (push, push_double); 1: I/Q (push_complex)  */
    int single_precision;  /* complex input only: keep the samples and transform in float
                              (about twice as fast; its rounding floor lies some 150 dB below
                              a strong tone's bin, tests/unit/test_dsp_spectrum.c),
                              accumulate in double; the segment hook is then not called      */
    int remove_dc;         /* real input only: 1 removes each segment's window-weighted mean
                              m = sum(w x) / sum(w) before the transform (the windowed segment is
                              w (x - m)), so a DC offset leaves nothing in bins 0..K (K the
                              window's terms) and a line needs only to clear its own lobe, not
                              DC's as well (ml_spectrum_clears_dc). Default 0                 */
} ml_spectrum_config;

/* nfft: the power of two giving bins of about 0.75 Hz at rate_hz (at most 2^18); hop nfft/2. */
ml_spectrum_config ml_spectrum_config_default(double rate_hz);

/* Allocates and plans everything. ML_EINVAL | ML_ENOMEM | ML_EFFT leave *out NULL.
 * Not thread-safe (FFTW planner). */
ml_status ml_spectrum_create(const ml_spectrum_config *cfg, ml_spectrum **out);
void ml_spectrum_destroy(ml_spectrum *q); /* NULL is a no-op */
void ml_spectrum_reset(ml_spectrum *q);   /* as just created; no allocation */

/* Appends n samples (any n, including 0). Never allocates. x may be NULL only when n == 0. */
ml_status ml_spectrum_push(ml_spectrum *q, const float *x, size_t n);
ml_status ml_spectrum_push_double(ml_spectrum *q, const double *x, size_t n);
/* Complex input only (ML_EINVAL otherwise): n samples z[0..n-1]. */
ml_status ml_spectrum_push_complex(ml_spectrum *q, const double _Complex *z, size_t n);

/* Tagged variants: tag[i] != 0 marks sample i as belonging to a selected class (for example
 * "modulated"). Every segment is accumulated as usual; a segment whose samples are all tagged is
 * also accumulated separately, and ml_spectrum_use_selected() switches every getter to those.
 * tag may be NULL (no sample tagged). */
ml_status ml_spectrum_push_tagged(ml_spectrum *q, const double *x, const unsigned char *tag, size_t n);
ml_status ml_spectrum_push_complex_tagged(ml_spectrum *q, const double _Complex *z, const unsigned char *tag,
                                          size_t n);
/* Samples as read from a file: n real values (real input), or n (re, im) pairs of 2n floats
 * (complex input only; ML_EINVAL otherwise). */
ml_status ml_spectrum_push_float_tagged(ml_spectrum *q, const float *x, const unsigned char *tag, size_t n);
ml_status ml_spectrum_push_complex_float_tagged(ml_spectrum *q, const float *iq, const unsigned char *tag,
                                                size_t n);
/* Getters read the selected-only accumulators (on != 0) or all segments (on == 0, the default).
 * ML_ENOSIGNAL (and no switch) when on and no segment was wholly tagged. */
ml_status ml_spectrum_use_selected(ml_spectrum *q, int on);
/* Segments accumulated as selected. */
size_t ml_spectrum_selected_segments(const ml_spectrum *q);

/* Called after each segment's transform with its spectrum x (nbins values, unscaled FFT output of
 * the windowed segment), the previous segment's (NULL for the first since reset) and whether every
 * sample of the segment was tagged. The arrays are valid during the call only. */
typedef void (*ml_spectrum_segment_fn)(void *ctx, const double _Complex *x, const double _Complex *prev,
                                       int selected);
/* Sets (fn NULL: clears) the hook; it survives reset. */
void ml_spectrum_on_segment(ml_spectrum *q, ml_spectrum_segment_fn fn, void *ctx);
/* Accumulates one segment's spectrum x (and its cross-spectrum with prev, when not NULL) as if q
 * had transformed it itself, as unselected: q must have the configuration of the spectrum that
 * produced x. Lets one transform feed several accumulations (for example per-block spectra). */
ml_status ml_spectrum_add_segment(ml_spectrum *q, const double _Complex *x, const double _Complex *prev);

/* Multiplies everything accumulated so far by gain^2, as if the input had been scaled by gain. */
void ml_spectrum_scale(ml_spectrum *q, double gain);

/* Number of complete segments transformed so far. */
size_t ml_spectrum_segments(const ml_spectrum *q);
size_t ml_spectrum_nfft(const ml_spectrum *q);
size_t ml_spectrum_nbins(const ml_spectrum *q); /* nfft/2 + 1 (real) or nfft (complex) */
int ml_spectrum_is_complex(const ml_spectrum *q);
/* Power of a full-scale tone: 0.5 (real sine of amplitude 1) or 1 (complex exponential). */
double ml_spectrum_full_scale_power(const ml_spectrum *q);
/* Frequency of bin k in Hz: k * rate / nfft, or (k - nfft) * rate / nfft for complex k >= nfft/2. */
double ml_spectrum_bin_hz(const ml_spectrum *q, size_t k);
double ml_spectrum_rate_hz(const ml_spectrum *q);
double ml_spectrum_enbw_bins(const ml_spectrum *q);
size_t ml_spectrum_lobe_bins(const ml_spectrum *q); /* half-width that holds a tone: terms + 1 */
ml_window_type ml_spectrum_window(const ml_spectrum *q);
int ml_spectrum_removes_dc(const ml_spectrum *q); /* the config's remove_dc (0 for NULL)          */

/* Whether a line whose lobe is centred on bin c (c >= 0) can be measured apart from DC: its
 * +-lobe bins (ml_spectrum_lobe_bins) must not reach DC's lobe (c >= 2 lobe) or, with remove_dc,
 * must not reach bin 0, where the line's own mirror image lies (c >= lobe + 1). Real input. */
int ml_spectrum_clears_dc(const ml_spectrum *q, size_t c);

/* Equivalent degrees of freedom nu of the accumulated power summed over nb adjacent bins (away
 * from DC and Nyquist) when the input is Gaussian noise: the sum then has mean S and variance
 * 2 S^2 / nu, and nu S_hat / S is approximately chi-square with nu degrees of freedom. Accounts
 * for the window's correlation of neighbouring bins (|G(d)|^2 of the squared window's transform,
 * exact for the cosine windows) and for the overlap of consecutive segments (the squared overlap
 * correlation of the window at each lag that is a multiple of hop, for up to 1024 lags). One
 * segment and one bin: 2. 0 when no segment is complete or nb == 0. Never allocates. */
double ml_spectrum_dof(const ml_spectrum *q, size_t nb);

/* Mean power per bin since reset (scaling above); psd holds nbins values.
 * ML_ENOSIGNAL when no segment is complete yet. */
ml_status ml_spectrum_get_psd(const ml_spectrum *q, double *psd, size_t nbins);

/* Read-only view of the accumulated (summed, not averaged) power per bin; nbins values. */
const double *ml_spectrum_sum(const ml_spectrum *q);

/* Frequency (Hz) of the tone whose main lobe peaks in bin k (0 < k < nbins - 1; any k for
 * complex input, negative frequencies included), from the phase
 * advance between consecutive segments; accurate to far below a bin for a stable tone.
 * With fewer than two segments it falls back to interpolating the averaged power.
 * ML_EINVAL for a bad k, ML_ENOSIGNAL when no segment is complete. */
ml_status ml_spectrum_get_frequency(const ml_spectrum *q, size_t k, double *hz);

#endif
