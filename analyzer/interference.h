/* measure's quasi-peak readings of an if/iq capture (interference.qp_dbfs, interference.av_dbfs):
 * the CISPR 16-1-1 Band B chain of dsp/qpeak.h on the channel around the carrier, fed with every
 * frame of the segment, read over the frames after the meters have settled.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_INTERFERENCE_H
#define ML_ANALYZER_INTERFERENCE_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/channels.h"
#include "io/report.h"

typedef struct ml_qp_pass ml_qp_pass;

/* A pass for a capture at rate_hz (iq: I/Q) with its carrier at carrier_hz (for iq re the
 * centre). Never NULL unless out of memory; when the chain cannot be set up (the rate is below
 * 36 kHz, or the 9 kHz channel does not fit around the carrier) the pass only remembers why. */
ml_qp_pass *ml_qp_pass_create(double rate_hz, bool iq, double carrier_hz);
/* n interleaved frames in the layout ch describes (the captured column(s)): copied, and run through
 * the chain on a thread of the pass's own (in order; frames is free again on return). */
void ml_qp_pass_push(ml_qp_pass *p, const float *frames, size_t n, const ml_channels *ch);
/* The readings into the report (null with the reason when not measurable). */
void ml_qp_pass_report(ml_qp_pass *p, ml_report *rep);
void ml_qp_pass_destroy(ml_qp_pass *p); /* NULL is a no-op */

#endif
