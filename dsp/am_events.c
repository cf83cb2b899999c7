/* The demodulator's troughs and crests: carrier pinch-off and phase-reversal events, one per
 * trough, and the crests' highest values.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley 2001, ch. 3 (envelope of
 *     A_c[1 + mu m(t)] cos(2 pi f_c t); over-modulation and phase reversal).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/am_internal.h"

ml_status ml_am_events_init(ml_am_events *ev)
{
    memset(ev, 0, sizeof *ev);
    ev->crest_hist = malloc(ML_AM_HIST_BINS * sizeof *ev->crest_hist);
    if (ev->crest_hist == NULL)
        return ML_ENOMEM;
    ml_am_events_reset(ev);
    return ML_OK;
}

void ml_am_events_free(ml_am_events *ev)
{
    free(ev->crest_hist);
    ev->crest_hist = NULL;
}

void ml_am_events_reset(ml_am_events *ev)
{
    ev->state = 0;
    ev->t_lo = ev->t_slo = ev->c_hi = 0;
    ev->t_floor = ev->t_floor4 = ev->t_neg = 0;
    ev->pinch_events = ev->reversal_events = ev->troughs = ev->crests = ev->absent_troughs = 0;
    ev->t_absent = false;
    ev->seen = false;
    ev->off_values = ev->reversed_values = 0;
    memset(ev->crest_hist, 0, ML_AM_HIST_BINS * sizeof *ev->crest_hist);
}

/* A trough ends: one judgement. The carrier was off (pinch-off) when the envelope stayed below
 * the floor F for more than the share lv->share (60 to 70 %) of the time it spent below 4 F: a
 * trough that only touches zero, smoothly (a parabola e = a t^2, as an exactly 100 % modulated
 * tone), stays below F for sqrt(F / 4F) = half that time whatever its width and F; a V-shaped
 * zero crossing (a reversal seen in the magnitude) a quarter; a carrier that sits at the floor
 * longer. Otherwise
 * the carrier reversed when the coherent reading went below -rev, beyond what the noise reaches
 * [haykin:2001]. */
static void trough_end(ml_am_events *ev, const ml_am_levels *lv)
{
    if (ev->t_absent) { /* the carrier was gone, not modulated away */
        ev->absent_troughs++;
        ev->state = 0;
        return;
    }
    ev->troughs++;
    if (ev->t_floor4 >= ML_AM_PINCH_MIN4 && (double)ev->t_floor > lv->share * (double)ev->t_floor4) {
        ev->pinch_events++;
        ev->off_values += ev->t_floor;
    } else if (ev->t_slo < -lv->rev) {
        ev->reversal_events++;
        ev->reversed_values += ev->t_neg;
    }
    ev->state = 0;
}

static void crest_end(ml_am_events *ev)
{
    const float b = ev->c_hi * (float)(ML_AM_HIST_BINS / ML_AM_HIST_RANGE);
    ev->crest_hist[(size_t)(b > 0 ? (b < ML_AM_HIST_BINS - 1 ? b : ML_AM_HIST_BINS - 1) : 0)]++;
    ev->crests++;
    ev->state = 0;
}

void ml_am_events_push(ml_am_events *ev, const ml_am_levels *lv, const double *er, const ml_am_marks *mk,
                       size_t n)
{
    const float hyst = lv->hyst;
    for (size_t i = 0; i < n; i++) {
        if (ev->state == 0) {
            if (mk->lo[i] < 1.0f - hyst) {
                ev->state = -1;
                ev->t_absent = !ev->seen; /* cut by the start: the carrier may be coming on */
                ev->t_lo = ev->t_slo = INFINITY;
                ev->t_floor = ev->t_floor4 = ev->t_neg = 0;
            } else if (mk->hi[i] > 1.0f + hyst) {
                ev->state = 1;
                ev->c_hi = 0;
            } else {
                ev->seen = true;
                continue;
            }
        }
        ev->seen = true;
        if (ev->state < 0) {
            ev->t_lo = mk->lo[i] < ev->t_lo ? mk->lo[i] : ev->t_lo;
            ev->t_slo = mk->slo[i] < ev->t_slo ? mk->slo[i] : ev->t_slo;
            ev->t_floor += mk->n_floor[i];
            ev->t_floor4 += mk->n_floor4[i];
            ev->t_neg += mk->n_neg[i];
            if (mk->lo[i] >= 1.0f && er[i] >= 1.0) {
                trough_end(ev, lv);
                if (mk->hi[i] > 1.0f + hyst) { /* straight on into a crest */
                    ev->state = 1;
                    ev->c_hi = mk->hi[i];
                }
            }
        } else {
            ev->c_hi = mk->hi[i] > ev->c_hi ? mk->hi[i] : ev->c_hi;
            if (mk->hi[i] <= 1.0f && er[i] <= 1.0) {
                crest_end(ev);
                if (mk->lo[i] < 1.0f - hyst) { /* straight on into a trough */
                    ev->state = -1;
                    ev->t_absent = false;
                    ev->t_lo = mk->lo[i];
                    ev->t_slo = mk->slo[i];
                    ev->t_floor = mk->n_floor[i];
                    ev->t_floor4 = mk->n_floor4[i];
                    ev->t_neg = mk->n_neg[i];
                }
            }
        }
    }
}

void ml_am_events_end(ml_am_events *ev, const ml_am_levels *lv)
{
    if (ev->state < 0) { /* cut by the end: the carrier may be going off */
        ev->t_absent = true;
        trough_end(ev, lv);
    } else if (ev->state > 0) {
        crest_end(ev);
    }
}

uint64_t ml_am_events_crests_above(const ml_am_events *ev, double level)
{
    /* a bin counts when its centre lies above the level */
    const double v = level * (ML_AM_HIST_BINS / ML_AM_HIST_RANGE) - 0.5;
    size_t k = v < 0 ? 0 : v >= ML_AM_HIST_BINS ? ML_AM_HIST_BINS : (size_t)floor(v) + 1;
    uint64_t n = 0;
    for (; k < ML_AM_HIST_BINS; k++)
        n += ev->crest_hist[k];
    return n;
}
