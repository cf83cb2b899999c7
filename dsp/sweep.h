/* A frequency sweep's points: groups, reference, band edges, and the transform of one step
 * (pure functions).
 * SPDX-License-Identifier: MIT
 *
 * A sweep is a sequence of steady tone steps (dsp/steps.h), possibly at several levels, each
 * measured on its own (the level of its fundamental, its distortion). These functions turn the
 * steps' frequencies and levels into the figures of a response:
 *  - groups: the steps of one frequency run at one level. Levels are the outer loop of a step
 *    plan (dsp/steps.h), so a new group starts at the first step whose frequency lies within
 *    max(tol_pct % of it, tol_hz) of a frequency already in the current group (the run starts
 *    again). Steps in any order of frequency are grouped this way, as long as one run does not
 *    visit a frequency twice;
 *  - reference: in each group, the point nearest the reference frequency (1 kHz by default, AES17's
 *    997 Hz counts as 1 kHz) on a logarithmic scale, |lg(f / f_ref)| smallest (the lower frequency
 *    on a tie), among the points whose level was measured; relative level = level - the
 *    reference's level (dB);
 *  - band edges: going outward from the reference over the group's points sorted by frequency,
 *    the first pair of neighbouring measured points between which the relative level falls from
 *    above -drop_db to at or below it; the edge is where the straight line between them, level in
 *    dB against lg f, crosses -drop_db (the classic -3 dB points of a response with drop_db 3).
 *    When no point falls that far, the response holds to the last point measured: the edge lies
 *    beyond it (the caller reports a bound).
 *  - the transform of one step (ml_sweep_step_transform): the largest power of two nfft with
 *    nfft + nfft/8 <= the step's frames (at most ml_spectrum_config_default's nfft, at least 256),
 *    hop the smaller of nfft/4 and frames - nfft (at least two segments: the finest resolution a
 *    short step allows, which low tones need more than averaging), and the window: the preferred one, or
 *    when the tone lies less than 2 lobe + 1 bins above 0 Hz (lobe = the window's terms + 1,
 *    dsp/metrics.h: then its harmonics' lobes overlap its own and its own reaches DC's), the next
 *    window of fewer terms that resolves it (HFT248D, HFT144D, Blackman-Harris, Hann), else Hann.
 */
#ifndef ML_DSP_SWEEP_H
#define ML_DSP_SWEEP_H

#include <stddef.h>
#include <stdint.h>

#include "dsp/spectrum.h"
#include "dsp/status.h"
#include "dsp/window.h"

/* The group of each of the n points (freq_hz[n] > 0, in the order measured) into group[n] (0, 1,
 * ...); returns the number of groups (0 for n == 0). tol_pct >= 0, tol_hz >= 0. */
size_t ml_sweep_group(const double *freq_hz, size_t n, double tol_pct, double tol_hz, size_t *group);

/* The reference among the n points (see above): the index of the point nearest ref_hz (> 0) on a
 * log scale whose level_db is finite; SIZE_MAX when none is. */
size_t ml_sweep_reference(const double *freq_hz, const double *level_db, size_t n, double ref_hz);

/* The band edge below (direction -1) or above (+1) the reference point ref of the n points
 * sorted by ascending frequency, rel_db their levels re the reference (NAN: not measured, skipped),
 * drop_db > 0 (see above). ML_OK with *edge_hz the crossing; ML_ENOSIGNAL when the response does
 * not fall that far: *edge_hz is then the frequency of the farthest measured point in that
 * direction (the edge lies beyond it), or NAN when there is none beyond the reference; ML_EINVAL
 * for bad arguments (ref >= n, rel_db[ref] not finite, direction not +-1, frequencies not
 * ascending and positive). */
ml_status ml_sweep_edge(const double *freq_hz, const double *rel_db, size_t n, size_t ref, int direction,
                        double drop_db, double *edge_hz);

/* The spectrum for a step of nframes frames at rate_hz holding a tone of tone_hz (see above):
 * cfg ready for ml_spectrum_create (remove_dc as the default config has it). ML_EINVAL for bad
 * arguments; ML_ENOSIGNAL when nframes < 288 (256 + 32: no two segments). */
ml_status ml_sweep_step_transform(double rate_hz, int64_t nframes, double tone_hz, ml_window_type preferred,
                                  ml_spectrum_config *cfg);

/* The window for a tone tone_bins bins above 0 Hz: the preferred one, or the next of fewer terms
 * whose lobe resolves the tone (tone_bins >= 2 (terms + 1) + 1, see above), else Hann. A preferred
 * type that is no window (RECT, out of range) counts as HFT248D. */
ml_window_type ml_sweep_window(double tone_bins, ml_window_type preferred);

#endif
