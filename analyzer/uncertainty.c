/* The uncertainty blocks' intervals put into a report.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/uncertainty.h"

#include "analyzer/values.h"

void ml_uncertainty_report(const ml_blocks *q, ml_report *r)
{
    ml_audio_plain_figures u;
    ml_value v[ML_VALUES_MAX];
    ml_blocks_get_audio(q, &u);
    ml_values_report_u(r, v, ml_values_audio(&u, v));
    ml_values_report_u(r, v, ml_values_envelope(&u, v));
    r->u_blocks = ml_blocks_count(q);
    r->u_block_s = ml_blocks_block_s(q);
}
