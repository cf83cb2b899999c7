/* Measurement uncertainty of the audio figures from their spread across blocks of a recording.
 * SPDX-License-Identifier: MIT
 *
 * The samples that feed the whole-recording spectrum are fed here too. A second spectrum of the
 * same configuration collects `segments` consecutive Welch segments (the very segments the whole
 * spectrum averages: the overlap carries over from one block to the next), then the block's audio
 * figures are computed (dsp/metrics.h) and pushed into running accumulators (dsp/uncert.h), and
 * the block spectrum starts again. Every whole segment therefore belongs to exactly one block, so
 * the whole recording's power spectrum is the mean of the blocks' and the spread of the block
 * figures gives the 95 % interval of the whole figure: u = t(0.975, n - 1) s / sqrt(n) (README
 * "Measurement uncertainty"). Memory: one spectrum and nfft samples, whatever the length.
 */
#ifndef ML_ANALYZER_UNCERTAINTY_H
#define ML_ANALYZER_UNCERTAINTY_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "io/report.h"

typedef struct ml_blocks ml_blocks;

/* Welch segments per block. */
#define ML_BLOCK_SEGMENTS 2

/* sc: the whole spectrum's configuration (real input); cfg: its audio analysis. Only spectral
 * figures get an interval: time statistics of a block (RMS, DC) also carry the tone's partial
 * period at the block's ends, which the whole recording averages away.
 * NULL on allocation or planning failure. */
ml_blocks *ml_blocks_create(const ml_spectrum_config *sc, const ml_audio_config *cfg);
void ml_blocks_destroy(ml_blocks *q);

/* n samples; tag[i] == 0 marks a sample that must not enter a block estimate (a block holding
 * one is left out); tag NULL: every sample counts. */
void ml_blocks_push(ml_blocks *q, const double *x, const unsigned char *tag, size_t n);
void ml_blocks_push_float(ml_blocks *q, const float *x, size_t n);

/* A gain applied to the whole recording afterwards (ml_spectrum_scale) shifts every block's levels
 * alike, so the spread and u do not change: nothing to correct. */

/* Sets the uncertainty of every valid metric of r that the blocks estimate (modulation aliases
 * included) and records the method in r; blocks used in *nblocks (may be NULL). */
void ml_blocks_report(const ml_blocks *q, ml_report *r, size_t *nblocks);

/* if/iq: also estimates the peak readings per block, with hold share hold_share (0 .. 0.5) of
 * the samples beyond each reading, as dsp/am.h defines them. ML_EINVAL, ML_ENOMEM. */
ml_status ml_blocks_set_peaks(ml_blocks *q, double hold_share);
/* Sets the uncertainties of modulation.positive_peak_pct and negative_peak_pct (block spread of
 * the readings in pushed units times pct_per_unit: 100 C_prov / C) and of modulation.index. */
void ml_blocks_report_peaks(const ml_blocks *q, ml_report *r, double pct_per_unit);

#endif
