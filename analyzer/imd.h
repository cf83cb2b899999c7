/* Intermodulation in measure (and live, compare): the imd.* figures of the analysed audio, or of
 * the demodulated audio of an IF or I/Q capture, found from the signal by dsp/imd.h or forced with
 * --imd; and what the single-tone figures mean then.
 * SPDX-License-Identifier: MIT
 *
 * When the signal is an IMD test signal (two tones: SMPTE/DIN low + high tone at about 4:1, or
 * two close tones of equal level), THD is not measurable: THD is the harmonics of ONE tone over
 * that tone, and a second tone (with its products) sits in the band that THD+N, SINAD, SNR, ENOB
 * and the noise figures take for noise. Those figures become null with the reason "two-tone IMD
 * signal: ...", and the harmonics table goes; hum figures go too when a tone lies on a mains
 * multiple (SMPTE's 60 Hz tone does), since the hum analysis would read the tone as hum. The
 * imd.* figures replace them: the tones (imd.f1_hz, imd.f2_hz, imd.ratio_db = 20 lg(U1/U2)) and
 * SMPTE/DIN imd.smpte_pct (r.s.s. of fh +- n fl, n = 1..3, over U(fh)), imd.smpte_d2_pct and
 * imd.smpte_d3_pct (IEC 60268-3 arithmetic sums per order), or difference-frequency imd.dfd2_pct,
 * imd.dfd3_pct (IEC 60268-3 14.12.8.1, over 2 U(f2)); definitions in dsp/imd.h, docs/references.md
 * 5 and 12. A figure carried mostly by products below the noise is an upper bound.
 */
#ifndef ML_ANALYZER_IMD_H
#define ML_ANALYZER_IMD_H

#include <stdbool.h>
#include <stdint.h>

#include "analyzer/options.h"
#include "dsp/modulation.h"
#include "dsp/spectrum.h"
#include "io/report.h"

/* The imd.* figures of spec (the audio's Welch spectrum) into rep, after its audio figures: with
 * an IMD signal (found, or forced by --imd), the single-tone figures withdrawn (see above). With
 * --imd off, or auto and no IMD signal, nothing. tone: the audio analysis found a line standing
 * clear of the noise (ml_audio_result.tone_present); auto looks for two tones only then, so that
 * noise (whose strongest bins are no tones) is never read as an IMD signal. */
void ml_imd_report(ml_report *rep, const ml_spectrum *spec, const ml_analysis_opts *an, bool tone);

/* The demodulated audio's spectrum for IMD in the if/iq pass, fed from the modulation analysis'
 * envelope hook (which it passes on to next(next_ctx) when next is not NULL). */
typedef struct ml_imd_envelope ml_imd_envelope;

/* For an envelope at rate_hz of about frames samples, in a channel of bandwidth_hz with
 * transition_hz: every second sample when the audio lies below a quarter of the rate (as the
 * modulation analysis' own audio spectrum), ml_resolution_nfft points, no overlap; without a
 * spectrum (the hook only passes on) with --imd off or when frames are too few. ML_ENOMEM,
 * ML_EFFT. */
ml_status ml_imd_envelope_create(const ml_analysis_opts *an, double rate_hz, int64_t frames,
                                 double bandwidth_hz, double transition_hz, ml_modulation_envelope_fn next,
                                 void *next_ctx, ml_imd_envelope **out);
void ml_imd_envelope_destroy(ml_imd_envelope *e); /* NULL is a no-op */
/* The envelope hook (ctx: the ml_imd_envelope): into the spectrum, then to next. */
void ml_imd_envelope_hook(void *ctx, const double *env, size_t n);
/* ml_imd_report on the demodulated audio's spectrum (e NULL: nothing). */
void ml_imd_envelope_report(const ml_imd_envelope *e, ml_report *rep, const ml_analysis_opts *an, bool tone);

#endif
