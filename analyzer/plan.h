/* The step plan's options, shared by tone (which writes the steps) and sweep (which plays them
 * with --device): the same names, values and defaults, so a file made by 'tone --freqs ...' is the
 * signal 'sweep --device ... --freqs ...' plays, and sweep reads either back without options.
 * SPDX-License-Identifier: MIT
 *
 *   --freqs LIST|octaves|thirds|proof   frequencies in Hz, comma-separated (at most 64), or a set:
 *        octaves  31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000 Hz (ISO 266 octave
 *                 centres; common practice for a quick response);
 *        thirds   the 31 ISO 266 third-octave centres 20 Hz .. 20 kHz;
 *        proof    50, 100, 400, 1000, 5000, 7500, 10000 Hz (the frequencies of the former US AM
 *                 audio proof of performance, docs/references.md 8 and 13: from memory);
 *      a set's frequencies at or above half the sample rate are left out (ml_plan_finish);
 *   --levels LIST                       levels in dBFS, comma-separated (at most 8), each -200..0;
 *                                       one sweep of the frequencies per level (default -20, the
 *                                       AES17 response level, docs/references.md 12);
 *   --step-seconds S                    each tone's length, 0.05 .. 3600 (default 1);
 *   --pause-seconds S                   the silence after each tone, 0 .. 3600 (default 0.25).
 */
#ifndef ML_ANALYZER_PLAN_H
#define ML_ANALYZER_PLAN_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/steps.h"

typedef struct {
    ml_step_plan plan;
    bool given;          /* any plan option was given                                     */
    bool freqs_given;
    bool named_set;      /* the frequencies are a named set (trimmed to the rate)         */
} ml_plan_opts;

/* Defaults: ml_step_plan_default's 1 s steps and 0.25 s pauses at -20 dBFS, frequencies the
 * octaves set. */
ml_plan_opts ml_plan_opts_default(void);

/* Whether name (an option's long name without "--") is a plan option. */
bool ml_plan_is_option(const char *name);

/* Applies plan option name with its argument: 0, or an exit status after a printed usage error. */
int ml_plan_apply(ml_plan_opts *p, const char *name, const char *arg);

/* Checks the plan against rate_hz (a named set loses its frequencies at or above rate/2; a listed
 * one there is an error): 0 or an exit status (error printed). *dropped gets the count left out
 * (may be NULL). */
int ml_plan_finish(ml_plan_opts *p, double rate_hz, size_t *dropped);

#endif
