/* Measurement uncertainty of the audio figures (and peak readings) from their spread across
 * blocks of a recording.
 * SPDX-License-Identifier: MIT
 *
 * The whole-recording spectrum hands each of its Welch segments over as it transforms them
 * (ml_spectrum_on_segment): a block spectrum collects `segments` consecutive segments (the
 * overlap carries over from one block to the next), then the block's audio figures are computed
 * (dsp/metrics.h) and pushed into running accumulators (dsp/uncert.h), and the block spectrum
 * starts again. Every whole segment therefore belongs to exactly one block, so the whole
 * recording's power spectrum is the mean of the blocks' and the spread of the block figures gives
 * the 95 % interval of the whole figure: u = t(0.975, n - 1) s / sqrt(n) (README "Measurement
 * uncertainty"). No segment is transformed twice. Memory: one spectrum, whatever the length.
 * The figures of a block are the plain estimates of dsp/figures.h (ml_figures_audio_raw): a block
 * is too short to judge its lines against the noise, and only the spread across blocks is used.
 * The caller gives the blocks the whole recording's decisions (cfg: tone_mode ML_TONE_FORCE at its
 * tone_hz, or ML_TONE_NONE; its mains_hz), so that every block measures the same lines; a
 * reported interval belongs only to a figure the whole recording measured (not a bound).
 */
#ifndef ML_DSP_BLOCKS_H
#define ML_DSP_BLOCKS_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/figures.h"
#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/status.h"

typedef struct ml_blocks ml_blocks;

/* Welch segments per block. */
#define ML_BLOCK_SEGMENTS 2

/* whole: the whole-recording spectrum (real input), sc its configuration, cfg its audio analysis.
 * The blocks follow whole's segments from now on (whole must outlive them and not get another
 * hook); tagged: a segment not wholly tagged (dsp/spectrum.h) leaves its block out. Only
 * spectral figures get an interval: time statistics of a block (RMS, DC) also carry the tone's
 * partial period at the block's ends, which the whole recording averages away.
 * ML_EINVAL on a mismatched configuration, ML_ENOMEM, ML_EFFT (*out NULL then). */
ml_status ml_blocks_create(ml_spectrum *whole, const ml_spectrum_config *sc, const ml_audio_config *cfg,
                           bool tagged, ml_blocks **out);
void ml_blocks_destroy(ml_blocks *q);
/* Forgets every block (with the whole spectrum's reset: a new recording). NULL is a no-op. */
void ml_blocks_reset(ml_blocks *q);

/* Peak readings only (ml_blocks_set_peaks; otherwise a no-op): the n samples that were pushed to
 * the whole spectrum, with the same tags (tag[i] == 0 leaves the sample's block out; NULL: every
 * sample counts). */
void ml_blocks_push(ml_blocks *q, const double *x, const unsigned char *tag, size_t n);

/* A gain applied to the whole recording afterwards (ml_spectrum_scale) shifts every block's levels
 * alike, so the spread and u do not change: nothing to correct. */

/* The 95 % half-widths of the audio figures over the blocks so far (NAN for the mains
 * frequency, which is chosen, not measured, and for every figure with fewer than 3 blocks). */
void ml_blocks_get_audio(const ml_blocks *q, ml_audio_plain_figures *u);
/* Blocks that gave figures, and the length of one block in seconds. */
size_t ml_blocks_count(const ml_blocks *q);
double ml_blocks_block_s(const ml_blocks *q);

/* if/iq: also estimates the peak readings per block, with hold share hold_share (0 .. 0.5) of
 * the samples beyond each reading, as dsp/am.h defines them, from samples pushed at `per` (1 ..
 * 64) times the whole spectrum's rate (the envelope at its full rate when the audio spectrum
 * takes every per-th sample): the blocks then span per times as many pushed samples. Call before
 * the first push. ML_EINVAL, ML_ENOMEM. */
ml_status ml_blocks_set_peaks(ml_blocks *q, double hold_share, size_t per);
/* The 95 % half-widths of the peak readings Emax and Emin (in the pushed samples' units) and of
 * the index (Emax - Emin)/(Emax + Emin) over the blocks; NAN without ml_blocks_set_peaks or with
 * fewer than 3 blocks. */
void ml_blocks_get_peaks(const ml_blocks *q, double *emax_u, double *emin_u, double *index_u);

#endif
