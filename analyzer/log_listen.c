/* What the listener hears: impulses on the audio itself (audio) or on the demodulated envelope
 * (if/iq: a demodulator of the log's own, dsp/am.h, on the carrier found), each against its own
 * recent background (dsp/detect.h); periodic impulses as one buzz (dsp/buzz.h); the CISPR 16-1-1
 * Band B quasi-peak chain on the channel around the carrier (dsp/qpeak.h).
 * SPDX-License-Identifier: MIT
 *
 * Two impulse detectors see the same samples: the one whose impulses become events and row
 * counts (--impulse-db), and a more sensitive one (BUZZ_IMPULSE_DB) whose impulses only feed the
 * buzz detector, which keeps nothing that is not periodic. The envelope's samples come out of the
 * demodulator a block later than their input (dsp/am.h), so the impulse detector runs a little
 * behind the grid; a row waits for it (ml_log_release_row).
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/log_internal.h"

#define BUZZ_IMPULSE_DB 12.0   /* the buzz detector's impulses: 12 dB over the floor (a dimmer's
                                  bursts stand ~19 dB over a differenced noise floor; 20 dB finds
                                  few of them, tests/unit/test_dsp_buzz.c)                       */
#define MAX_BANDWIDTH_HZ 10000.0 /* the listener's channel, as measure's default                  */
#define BUZZ_EV_CAP 64

void ml_log_hf_push(ml_logger *L, const float *x, size_t n)
{
    double x1 = L->hf_x1, x2 = L->hf_x2, sum = 0;
    size_t i = 0;
    for (; i < n && L->hf_prime > 0; i++, L->hf_prime--) {
        x2 = x1;
        x1 = x[i];
    }
    for (; i < n; i++) {
        const double d = x[i] - 2.0 * x1 + x2;
        sum += d * d;
        L->hf_n++;
        x2 = x1;
        x1 = x[i];
    }
    L->hf_sum += sum;
    L->hf_x1 = x1;
    L->hf_x2 = x2;
}

/* Impulses the two detectors reported in a push of n samples (L->ev for events; the buzz
 * detector's as times). */
static int impulses(ml_logger *L, const float *x, size_t n)
{
    size_t nev = 0;
    ml_impulse_push(L->imp, x, n, L->ev, ML_LOG_EV_CAP, &nev);
    int rc = ml_log_impulse_events(L, nev);
    if (rc != 0)
        return rc;
    ml_impulse_push(L->imp_buzz, x, n, L->ev, ML_LOG_EV_CAP, &nev);
    const int64_t fr = (int64_t)ml_impulse_frame_samples(L->imp_buzz);
    for (size_t i = 0; i < nev && L->nimp_times < ML_LOG_EV_CAP; i++)
        L->imp_times[L->nimp_times++] = ml_log_offset_of(L, L->imp_base + L->ev[i].start * fr);
    return 0;
}

int ml_log_buzz_advance(ml_logger *L)
{
    const bool was = ml_buzz_get_active(L->buzz, NULL);
    double now = ml_log_offset_of(L, L->imp_judged);
    size_t n = 0;
    /* times are offsets: a live log resumed later jumps ahead (evaluations of an empty window) */
    if (ml_buzz_push(L->buzz, L->imp_times, L->nimp_times, now, L->bev, BUZZ_EV_CAP, &n) != ML_OK)
        n = 0; /* times out of order (cannot happen: starts come in order and never after now) */
    L->nimp_times = 0;
    ml_buzz_event b;
    if (!was && ml_buzz_get_active(L->buzz, &b))
        ml_log_absorb_impulses(L, b.start_s);
    int rc = ml_log_buzz_events(L, n, NULL);
    if (rc == 0)
        rc = ml_log_release_held(L, false);
    return rc;
}

/* The quasi-peak chain centred on the carrier (if), or on it or --carrier or the capture's centre
 * (iq); none when the rate or the carrier's place does not allow it. */
static void make_qpeak(ml_logger *L)
{
    double centre = L->carrier_hz;
    if (isnan(centre))
        centre = L->o->an.carrier_hz;
    if (isnan(centre) && L->is_complex)
        centre = 0;
    if (isnan(centre) || (L->qp && fabs(centre - L->qp_centre_hz) < 1.0))
        return;
    ml_qpeak_destroy(L->qp);
    L->qp = NULL;
    const ml_qpeak_config c = ml_qpeak_config_default(L->rate, L->is_complex, centre);
    if (ml_qpeak_create(&c, &L->qp) != ML_OK)
        return;
    L->qp_centre_hz = centre;
    L->qp_frames = 0;
    L->qp_span_ok = false;
}

void ml_log_listen_setup(ml_logger *L)
{
    if (!L->is_if && !L->is_complex)
        return;
    make_qpeak(L);
    if (L->lam || isnan(L->carrier_hz))
        return;
    double trans = 0, bw = L->o->an.bandwidth_hz;
    const double widest = ml_am_default_bandwidth(L->rate, L->is_complex, L->carrier_hz, MAX_BANDWIDTH_HZ, &trans);
    if (!(bw > 0) || bw > widest)
        bw = widest;
    if (!(bw > 0))
        return;
    ml_am_config ac = ml_am_config_default(L->rate, L->is_complex, L->carrier_hz, bw,
                                           L->carrier_amp > 0 ? L->carrier_amp : 1.0);
    ac.transition_hz = fmin(1000.0, bw / 4);
    if (ml_am_create(&ac, &L->lam) != ML_OK) {
        L->lam = NULL;
        return;
    }
    L->lcap = ml_am_output_cap(L->lam, ML_LOG_BLOCK);
    L->lenv = malloc(L->lcap * sizeof *L->lenv);
    L->lenvf = malloc(L->lcap * sizeof *L->lenvf);
    L->lmod = malloc(L->lcap);
    if (L->lenv == NULL || L->lenvf == NULL || L->lmod == NULL) {
        ml_am_destroy(L->lam);
        L->lam = NULL;
        return;
    }
    /* impulses from now on are heard on the envelope: what the raw samples' detectors had is
     * closed first (nothing, when the carrier was known from the start) */
    size_t nev = 0;
    ml_impulse_finish(L->imp, L->ev, ML_LOG_EV_CAP, &nev);
    ml_log_impulse_events(L, nev);
    ml_impulse_reset(L->imp);
    ml_impulse_reset(L->imp_buzz);
    L->lam_base = L->pos;
    L->lam_out = 0;
    L->imp_base = L->imp_judged = L->pos + (int64_t)ml_am_edge(L->lam);
    L->hf_prime = 2;
}

/* The envelope samples of an output: to float, into the impulse detectors. */
static int envelope(ml_logger *L, size_t count)
{
    for (size_t i = 0; i < count; i++)
        L->lenvf[i] = (float)L->lenv[i];
    ml_log_hf_push(L, L->lenvf, count);
    int rc = impulses(L, L->lenvf, count);
    L->lam_out += count;
    L->imp_judged = L->lam_base + (int64_t)ml_am_edge(L->lam) + (int64_t)L->lam_out;
    return rc;
}

int ml_log_listen_push(ml_logger *L, const float *b, size_t m)
{
    int rc = 0;
    if (L->lam) {
        for (size_t done = 0; done < m && rc == 0;) {
            const size_t k = m - done < ML_LOG_BLOCK ? m - done : ML_LOG_BLOCK;
            ml_am_output out = {L->lenv, NULL, L->lmod, L->lcap};
            size_t count = 0;
            if (ml_am_push_frames(L->lam, b + done * L->ch.stride, &L->ch, k, &out, &count) == ML_OK)
                rc = envelope(L, count);
            done += k;
        }
    } else {
        ml_log_hf_push(L, L->mono, m);
        rc = impulses(L, L->mono, m);
        L->imp_judged = L->pos + (int64_t)m;
    }
    if (L->qp) {
        ml_qpeak_push(L->qp, b, m, L->ch.stride, L->ch.re, L->is_complex ? L->ch.im : L->ch.re, NULL);
        L->qp_frames += m;
    }
    if (rc == 0)
        rc = ml_log_buzz_advance(L);
    if (rc == 0)
        rc = ml_log_release_row(L, false);
    return rc;
}

void ml_log_listen_span(ml_logger *L, double *qp_dbfs, double *av_dbfs)
{
    *qp_dbfs = *av_dbfs = NAN;
    if (L->qp == NULL)
        return;
    ml_qpeak_reading r;
    if (L->qp_span_ok && ml_qpeak_get_span(L->qp, &r) == ML_OK) {
        *qp_dbfs = r.qp_dbfs;
        *av_dbfs = r.av_dbfs;
    }
    ml_qpeak_restart_span(L->qp);
    L->qp_span_ok = L->qp_frames >= ml_qpeak_get_settle_frames(L->qp);
}

int ml_log_listen_finish(ml_logger *L, const char *why)
{
    int rc = 0;
    if (L->lam) {
        ml_am_output out = {L->lenv, NULL, L->lmod, L->lcap};
        size_t count = 0;
        if (ml_am_finish(L->lam, &out, &count) == ML_OK)
            rc = envelope(L, count);
        ml_am_reset(L->lam); /* finish ends its stream: ready for more after a gap */
        L->lam_base = L->pos;
        L->lam_out = 0;
    }
    size_t nev = 0;
    if (rc == 0) {
        ml_impulse_finish(L->imp, L->ev, ML_LOG_EV_CAP, &nev);
        rc = ml_log_impulse_events(L, nev);
    }
    if (rc == 0) {
        ml_impulse_finish(L->imp_buzz, L->ev, ML_LOG_EV_CAP, &nev);
        const int64_t fr = (int64_t)ml_impulse_frame_samples(L->imp_buzz);
        for (size_t i = 0; i < nev && L->nimp_times < ML_LOG_EV_CAP; i++)
            L->imp_times[L->nimp_times++] = ml_log_offset_of(L, L->imp_base + L->ev[i].start * fr);
    }
    L->imp_judged = L->pos;
    if (rc == 0)
        rc = ml_log_buzz_advance(L);
    if (rc == 0)
        rc = ml_log_flush_impulses(L);
    if (rc == 0) {
        ml_buzz_finish(L->buzz, L->bev, BUZZ_EV_CAP, &nev);
        rc = ml_log_buzz_events(L, nev, why);
    }
    if (rc == 0)
        rc = ml_log_release_held(L, true);
    if (rc == 0)
        rc = ml_log_release_row(L, true);
    return rc;
}

void ml_log_listen_gap(ml_logger *L)
{
    L->hf_prime = 2;
    ml_impulse_reset(L->imp);
    ml_impulse_reset(L->imp_buzz);
    if (L->lam) {
        ml_am_reset(L->lam);
        L->lam_base = L->pos;
        L->lam_out = 0;
        L->imp_base = L->imp_judged = L->pos + (int64_t)ml_am_edge(L->lam);
    } else {
        L->imp_base = L->imp_judged = L->pos;
    }
    if (L->qp) {
        ml_qpeak_reset(L->qp);
        L->qp_frames = 0;
        L->qp_span_ok = false;
    }
}

/* The listener's objects: the impulse detectors and the buzz detector (the demodulator and the
 * quasi-peak chain come with the carrier). */
ml_status ml_log_listen_create(ml_logger *L)
{
    ml_impulse_config ic = ml_impulse_config_default(L->rate);
    ic.threshold_db = L->o->impulse_db;
    ml_status st = ml_impulse_create(&ic, &L->imp);
    ic.threshold_db = fmin(L->o->impulse_db, BUZZ_IMPULSE_DB);
    if (st == ML_OK)
        st = ml_impulse_create(&ic, &L->imp_buzz);
    const ml_buzz_config bc = ml_buzz_config_default(0.0); /* the tie is made with the log's mains */
    if (st == ML_OK)
        st = ml_buzz_create(&bc, &L->buzz);
    if (st == ML_OK && ((L->imp_times = malloc(ML_LOG_EV_CAP * sizeof *L->imp_times)) == NULL
                        || (L->bev = malloc(BUZZ_EV_CAP * sizeof *L->bev)) == NULL))
        st = ML_ENOMEM;
    L->buzz_peak_dbfs = L->buzz_rise_db = NAN;
    L->buzz_last_s = L->buzz_last_e = L->buzz_last_hz = NAN;
    L->hf_prime = 2;
    return st;
}

void ml_log_listen_destroy(ml_logger *L)
{
    ml_impulse_destroy(L->imp);
    ml_impulse_destroy(L->imp_buzz);
    ml_buzz_destroy(L->buzz);
    ml_am_destroy(L->lam);
    ml_qpeak_destroy(L->qp);
    free(L->lenv);
    free(L->lenvf);
    free(L->lmod);
    free(L->imp_times);
    free(L->bev);
}
