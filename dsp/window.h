/* Spectral-analysis windows and their figures of merit.
 * SPDX-License-Identifier: MIT
 *
 * Windows are DFT-even ("periodic"): w[n] = sum_k (-1)^k c_k cos(2 pi k n / N), n = 0..N-1,
 * as used for spectral analysis [harris:1978] and listed in [heinzel:2002].
 */
#ifndef ML_DSP_WINDOW_H
#define ML_DSP_WINDOW_H

#include <stddef.h>

#include "dsp/status.h"

typedef enum {
    ML_WINDOW_RECT = 0,        /* rectangular, c = {1}                                    */
    ML_WINDOW_HANN,            /* c = {0.5, 0.5}                                          */
    ML_WINDOW_BLACKMAN_HARRIS, /* 4-term, -92 dB sidelobes [harris:1978]                  */
    ML_WINDOW_HFT144D,         /* flat top, -144 dB sidelobes [heinzel:2002]              */
    ML_WINDOW_HFT248D,         /* flat top, -248 dB sidelobes [heinzel:2002]; the default  */
    ML_WINDOW_COUNT
} ml_window_type;

#define ML_MAX_WINDOW_TERMS 11 /* the most cosine terms of any window above (HFT248D)               */

/* Fills w[0..n-1] with the window. n >= 2. Returns ML_EINVAL for a bad type, n or NULL w. */
ml_status ml_window_fill(ml_window_type type, double *w, size_t n);

/* Number of cosine terms K of the window: its main lobe spans +-K bins. 0 for a bad type. */
size_t ml_window_terms(ml_window_type type);

/* Short lower-case name ("hft248d"); "unknown" for a bad type. */
const char *ml_window_name(ml_window_type type);

/* The window's coefficients c_k of the definition above: copies min(terms, max) of them to c and
 * returns the number of terms K (0 for a bad type or NULL c). */
size_t ml_window_coefficients(ml_window_type type, double *c, size_t max);

/* Leakage of the n-point periodic window at offset_bins from a tone: |W(offset)|^2 / |W(0)|^2,
 * where W(nu) = sum_j w[j] exp(-2 pi i nu j / n) is the window's transform at nu bins (any real nu,
 * not only whole bins). It is the power a tone of power P puts into a bin offset_bins away, over P.
 * Evaluated in closed form as a sum of K shifted Dirichlet kernels, so it costs O(K), not O(n),
 * and stays accurate far below the sidelobes (about 1e-16 of each kernel term, under -300 dB for
 * the flat tops at any offset). 0 for a bad type or n < 2; 1 at offset 0. */
double ml_window_leakage(ml_window_type type, size_t n, double offset_bins);

/* The largest ml_window_leakage within half a bin of offset_bins (sampled at quarter bins): the
 * sidelobes' envelope, for a line whose position is known to a fraction of a bin, so that its
 * leakage is never under-counted between two sidelobes. */
double ml_window_leakage_envelope(ml_window_type type, size_t n, double offset_bins);

/* Coherent gain sum(w)/n [harris:1978]. n >= 1. */
double ml_window_coherent_gain(const double *w, size_t n);

/* Equivalent noise bandwidth in bins, n*sum(w^2)/sum(w)^2 [harris:1978]. n >= 1. */
double ml_window_enbw_bins(const double *w, size_t n);

#endif
