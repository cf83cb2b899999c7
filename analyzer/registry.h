/* The registry of every metric modlens can report: name, unit, precision, direction.
 * SPDX-License-Identifier: MIT
 *
 * Limits profiles, reports and comparisons all look metrics up here, so a new metric is added
 * in one place (see DEVELOPERS.md "Adding a metric").
 */
#ifndef ML_ANALYZER_REGISTRY_H
#define ML_ANALYZER_REGISTRY_H

typedef enum {
    ML_BETTER_NONE = 0, /* informational: no better or worse                              */
    ML_BETTER_LOWER,    /* lower is better (THD, noise)                                   */
    ML_BETTER_HIGHER,   /* higher is better (SNR, SINAD)                                  */
} ml_direction;

typedef struct {
    const char *name;   /* dotted JSON path, e.g. "audio.thd_pct"                          */
    const char *unit;   /* display unit                                                    */
    int decimals;       /* display precision                                               */
    ml_direction better;
} ml_metric_def;

/* By dotted name, or by the last component when that is unique among all metrics.
 * NULL when unknown or ambiguous; *ambiguous (may be NULL) tells which. */
const ml_metric_def *ml_registry_lookup(const char *name, int *ambiguous);

/* All metrics, for listing; *count gets the number. */
const ml_metric_def *ml_registry_all(size_t *count);

#endif
