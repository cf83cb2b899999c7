/* The demodulator's overmodulation events (carrier pinch-off, phase reversal) and positive
 * excursions over the limit.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley 2001, ch. 3 (envelope of
 *     A_c[1 + mu m(t)] cos(2 pi f_c t); over-modulation and phase reversal).
 */
#include <math.h>

#include "dsp/am_internal.h"

void ml_am_events_init(ml_am_events *ev, double carrier_ref, double pinch_rel, double positive_limit_pct)
{
    ev->half = 0.5 * carrier_ref;
    ev->thr_in = pinch_rel * carrier_ref;
    ev->thr_good = 0.1 * carrier_ref;
    ev->thr_pos_in = (1.0 + positive_limit_pct / 100.0) * carrier_ref;
    ev->thr_pos_out = ev->thr_pos_in - ev->thr_in; /* hysteresis of pinch_rel * C */
    ml_am_events_reset(ev);
}

void ml_am_events_reset(ml_am_events *ev)
{
    ev->in_low = ev->in_pos = ev->have_prev = false;
    ev->low_min = ev->prev_env = 0;
    ev->y_before = ev->prev_y = 0;
    ev->pinch_events = ev->reversal_events = ev->positive_over = 0;
}

/* Whether |phase(y) - phase(y0)|, wrapped into [0, pi], exceeds pi/2: the same as
 * cos(phase(y) - phase(y0)) < 0, i.e. Re(y conj(y0)) < 0, with no arctangent. A zero sample has
 * phase 0 (as carg(0) = 0), so it stands in as 1. */
static bool phase_reversed(double complex y, double complex y0)
{
    if (y == 0)
        y = 1;
    if (y0 == 0)
        y0 = 1;
    return creal(y) * creal(y0) + cimag(y) * cimag(y0) < 0;
}

/* A "low run" is a stretch below 10 % of C. When it ends, a carrier phase that differs by more
 * than 90 degrees from before the run means the envelope passed through zero with a phase
 * reversal; otherwise a run that reached below pinch_rel * C is a carrier pinch-off. A reversal
 * so fast that no sample falls in a run shows as a phase jump of more than 90 degrees between two
 * consecutive samples below 50 % of C [haykin:2001]. */
void ml_am_events_push(ml_am_events *ev, const double complex *y, const double *e, const double *low,
                       size_t n)
{
    /* the state in locals for the loop: stores through ev could alias the arrays read */
    const double half = ev->half, thr_good = ev->thr_good, thr_in = ev->thr_in;
    const double thr_pos_in = ev->thr_pos_in, thr_pos_out = ev->thr_pos_out;
    bool in_low = ev->in_low, in_pos = ev->in_pos, have_prev = ev->have_prev;
    double low_min = ev->low_min, prev_env = ev->prev_env;
    double complex y_before = ev->y_before, prev_y = ev->prev_y;
    uint64_t reversals = 0, pinches = 0, over = 0;
    for (size_t i = 0; i < n; i++) {
        if (!in_low && have_prev) {
            /* A run of samples at or above half the carrier that leave the positive excursion
             * state as it is changes nothing but the previous sample: passed over in one scan. */
            const double top = in_pos ? INFINITY : thr_pos_in,
                         bottom = in_pos ? fmax(half, thr_pos_out) : half;
            size_t j = i;
            while (j < n && e[j] >= bottom && e[j] <= top)
                j++;
            if (j > i) {
                prev_env = e[j - 1];
                prev_y = y[j - 1];
                i = j - 1;
                continue;
            }
        }
        if (e[i] < thr_good) {
            if (!in_low) {
                in_low = true;
                low_min = INFINITY;
                y_before = have_prev ? prev_y : y[i];
            }
            if (low[i] < low_min)
                low_min = low[i];
        } else if (in_low) {
            if (phase_reversed(y[i], y_before))
                reversals++;
            else if (low_min < thr_in)
                pinches++;
            in_low = false;
        } else if (have_prev && prev_env < half && e[i] < half && phase_reversed(y[i], prev_y)) {
            reversals++;
        }
        prev_env = e[i];
        prev_y = y[i];
        have_prev = true;
        if (!in_pos && e[i] > thr_pos_in) {
            in_pos = true;
            over++;
        } else if (in_pos && e[i] < thr_pos_out) {
            in_pos = false;
        }
    }
    ev->in_low = in_low;
    ev->in_pos = in_pos;
    ev->have_prev = have_prev;
    ev->low_min = low_min;
    ev->prev_env = prev_env;
    ev->y_before = y_before;
    ev->prev_y = prev_y;
    ev->reversal_events += reversals;
    ev->pinch_events += pinches;
    ev->positive_over += over;
}
