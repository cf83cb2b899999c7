/* The uncertainty blocks' intervals (dsp/blocks.h) put into a report under the metric names.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_UNCERTAINTY_H
#define ML_ANALYZER_UNCERTAINTY_H

#include "dsp/blocks.h"
#include "io/report.h"

/* Sets the uncertainty of every valid audio metric of r that the blocks estimate (for if/iq also
 * under the modulation names, analyzer/values.h) and records the method in r. */
void ml_uncertainty_report(const ml_blocks *q, ml_report *r);

#endif
