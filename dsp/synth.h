/* Deterministic test-signal generator: tones, two-tone, stepped tones, silence and AM (real IF or
 * I/Q), with harmonic distortion, mains hum and white Gaussian noise, produced in blocks.
 * SPDX-License-Identifier: MIT
 *
 * Level rule (AES17-2015 3.12.1, docs/references.md section 5): a full-scale sine reads 0 dBFS, so a tone
 * of level L dBFS has amplitude 10^(L/20) and r.m.s. 10^(L/20)/sqrt(2). Noise of level L dBFS has
 * the same r.m.s. as that sine: sigma = 10^(L/20)/sqrt(2) per channel, white over the full band
 * 0 .. rate/2 (for I/Q: independent noise of that sigma in I and in Q).
 *
 * Every periodic component is a sine of zero phase at frame 0: a tone of amplitude A at f Hz is
 * A sin(2 pi f n / rate), its harmonic k at c dBc is A 10^(c/20) sin(2 pi k f n / rate).
 *
 * AM (docs/references.md section 6, [haykin:2001] sec. 3.1): s(n) = A g(e(n)) cos(2 pi fc n / rate) for a
 * real IF (one channel), or I + jQ = A g(e(n)) exp(j 2 pi fc n / rate) for I/Q (two channels, I then
 * Q; fc may be zero or negative). A = 10^(L/20) is the peak of the unmodulated carrier (for a real
 * IF its level is L dBFS by the rule above; for I/Q |I + jQ| = A). The envelope is
 *     e(n) = 1 + d(x(n)) x(n) + h(n),   d = depth_pos where x >= 0, depth_neg where x < 0,
 * where x(n) = sin(2 pi fm n' / rate) + sum_k 10^(c_k/20) sin(2 pi k fm n' / rate) is the modulating
 * tone with its harmonics, n' = n - lead-in frames (x = 0 during the lead-in), and h(n) is the hum
 * modulation (below). With no harmonics and equal depths m, the side frequencies at fc +- fm have
 * amplitude m A / 2 each and the mean power is (A^2/2)(1 + m^2/2) for a real IF. Depths act on the
 * fundamental of x: harmonics add to the peaks. Beyond 100 % (e < 0) g is either pinch-off,
 * g(e) = max(0, e) (carrier cut off), or phase reversal, g(e) = e (magnitude |e|, carrier phase
 * flipped by 180 degrees). Such envelopes have unlimited bandwidth and alias like any sampled signal.
 *
 * Hum at hum_hz: additive, h_add(n) = 10^(Lh/20) [sin(2 pi fh n / rate) + sum_k a_k sin(...k...)] on
 * every channel; and for AM, envelope modulation h(n) = 10^(Dh/20) [same waveform], Dh in dB
 * relative to 100 % modulation (-40 dB = 1 % hum modulation).
 *
 * For AM, noise may instead be set by the carrier-to-noise ratio: CNR = carrier power / noise power
 * in the full Nyquist band. Real IF: (A^2/2) / sigma^2; I/Q: A^2 / (2 sigma^2) over -rate/2..rate/2.
 * Both give sigma = A / sqrt(2 * 10^(CNR/10)) per channel.
 *
 * Noise comes from xoshiro256** [blackman:2018] seeded through splitmix64 [steele:2014], turned
 * into Gaussian values by the Box-Muller transform [box:1958]; the same seed gives the same file.
 *
 * References:
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley, 2001, sec. 3.1.
 * [blackman:2018] D. Blackman, S. Vigna, "Scrambled linear pseudorandom number generators",
 *     arXiv:1805.01407, 2018 (xoshiro256**).
 * [steele:2014] G. L. Steele, D. Lea, C. H. Flood, "Fast splittable pseudorandom number
 *     generators", OOPSLA 2014 (splitmix64).
 * [box:1958] G. E. P. Box, M. E. Muller, "A note on the generation of random normal deviates",
 *     Ann. Math. Statist. 29(2):610-611, 1958.
 */
#ifndef ML_DSP_SYNTH_H
#define ML_DSP_SYNTH_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

#define ML_SYNTH_MAX_HARMONICS 16 /* entries in each harmonic list                  */
#define ML_SYNTH_MAX_ORDER 64     /* highest harmonic order                          */
#define ML_SYNTH_MAX_STEPS 256    /* entries in a stepped sequence                   */

typedef struct ml_synth ml_synth;

typedef enum {
    ML_SYNTH_SINE = 0, /* one tone with optional harmonics                           */
    ML_SYNTH_TWO_TONE, /* two tones                                                  */
    ML_SYNTH_STEPS,    /* a sequence of tones, repeated cyclically                   */
    ML_SYNTH_SILENCE,  /* zero (plus any hum and noise)                              */
    ML_SYNTH_AM,       /* amplitude-modulated carrier, real IF or I/Q                */
    ML_SYNTH_KIND_COUNT
} ml_synth_kind;

typedef enum {
    ML_OVERMOD_PINCH = 0, /* g(e) = max(0, e): carrier pinch-off                      */
    ML_OVERMOD_REVERSE,   /* g(e) = e: phase reversal, magnitude |e|                  */
    ML_OVERMOD_COUNT
} ml_synth_overmod;

typedef struct {
    int order;        /* 2 .. ML_SYNTH_MAX_ORDER; each order at most once per list       */
    double level_dbc; /* relative to the fundamental: -300 .. +40 dB                      */
} ml_synth_harmonic;

typedef struct {
    double freq_hz;    /* 0 <= f < rate/2; 0 gives a silent step                          */
    double level_dbfs; /* -300 .. +40                                                     */
    double seconds;    /* > 0; the step lasts at least one frame after rounding          */
} ml_synth_step;

typedef struct {
    ml_synth_kind kind;
    double rate_hz; /* frames per second: 1 .. 1e8                                      */
    /* SINE and TWO_TONE: first tone. AM: the carrier (A = 10^(level_dbfs/20)).           */
    double freq_hz;    /* SINE, TWO_TONE: 0 < f < rate/2                                  */
    double level_dbfs; /* SINE, TWO_TONE, AM: -300 .. +40                                 */
    double freq2_hz;   /* TWO_TONE: 0 < f < rate/2, != freq_hz                            */
    double level2_dbfs;
    /* Harmonics of the tone (SINE, STEPS) or of the modulating tone x (AM). Each k f < rate/2. */
    size_t nharmonics; /* 0 .. ML_SYNTH_MAX_HARMONICS                                      */
    ml_synth_harmonic harmonics[ML_SYNTH_MAX_HARMONICS];
    /* STEPS: steps in order; the sequence repeats after the last one. Step i starts at frame
     * round(rate * sum_{j<i} seconds_j); the phase runs on without a jump between steps.        */
    size_t nsteps; /* 1 .. ML_SYNTH_MAX_STEPS                                              */
    ml_synth_step steps[ML_SYNTH_MAX_STEPS];
    /* AM (see the header comment)                                                            */
    double carrier_hz;    /* real IF: 0 < fc < rate/2; I/Q: |fc| < rate/2                      */
    double mod_freq_hz;   /* 0 < fm < rate/2                                                 */
    double depth_pos;     /* depth for x >= 0: 0 .. 10 (1.0 = 100 %)                          */
    double depth_neg;     /* depth for x < 0:  0 .. 10                                        */
    ml_synth_overmod overmod;
    bool iq;              /* two channels I, Q instead of one real IF channel                 */
    double lead_in_s;     /* unmodulated carrier first: 0 .. 1e6 s (x = 0, hum and noise stay) */
    /* Impairments, on every kind                                                              */
    double noise_dbfs;     /* white Gaussian noise level; -INFINITY: none; else -300 .. +40     */
    double cnr_db;         /* AM only, instead of noise_dbfs; +INFINITY: none; else -100 .. 300 */
    double hum_hz;         /* 0: no hum; else 0 < fh < rate/2                                  */
    double hum_level_dbfs; /* additive hum; -INFINITY: none; else -300 .. +40                   */
    double hum_depth_db;   /* AM only: envelope hum re 100 % modulation; -INFINITY: none; else
                              -300 .. 0                                                          */
    size_t nhum_harmonics; /* 0 .. ML_SYNTH_MAX_HARMONICS; each k fh < rate/2                    */
    ml_synth_harmonic hum_harmonics[ML_SYNTH_MAX_HARMONICS];
    uint64_t seed; /* noise generator seed; any value                                        */
} ml_synth_config;

/* A 1 kHz sine at -20 dBFS at rate_hz, no harmonics, no hum, no noise, seed 1; AM fields preset
 * to a 1 kHz tone at 50 % depth, pinch-off, real IF, no lead-in (carrier_hz 0 must be set). */
ml_synth_config ml_synth_config_default(double rate_hz);

/* Validates cfg (every range above) and allocates the generator. ML_EINVAL or ML_ENOMEM leave
 * *out NULL. The generator is independent of any other; one generator must not be used from
 * two threads at once. */
ml_status ml_synth_create(const ml_synth_config *cfg, ml_synth **out);
void ml_synth_destroy(ml_synth *q); /* NULL is a no-op */
void ml_synth_reset(ml_synth *q);   /* back to frame 0 and the seed's first noise value; no allocation */

/* Writes the next nframes frames into out[nframes * channels] (interleaved; I then Q for I/Q).
 * The concatenated output does not depend on how it is split into calls. Never allocates.
 * ML_EINVAL for a NULL q, or NULL out with nframes > 0. */
ml_status ml_synth_generate(ml_synth *q, float *out, size_t nframes);

size_t ml_synth_channels(const ml_synth *q);        /* 1, or 2 for AM I/Q                      */
uint64_t ml_synth_position(const ml_synth *q);      /* frames generated since create or reset  */
uint64_t ml_synth_cycle_frames(const ml_synth *q);  /* STEPS: frames in one pass; else 0       */
uint64_t ml_synth_lead_in_frames(const ml_synth *q); /* AM: round(lead_in_s * rate); else 0    */
double ml_synth_noise_sigma(const ml_synth *q);     /* noise r.m.s. per channel (0 for none)   */

/* Upper bound of |sample| without the noise (full scale = 1): the sum of the tone, harmonic and
 * additive-hum amplitudes; for AM, A * max|g(e)| with |x| bounded by 1 + sum of its harmonic
 * amplitudes, plus the additive hum. It is exact for pure tones and pure AM. */
double ml_synth_peak(const ml_synth *q);
/* AM: the bound of max|g(e)| alone (for A = 1); 0 for other kinds. */
double ml_synth_envelope_peak(const ml_synth *q);

#endif
