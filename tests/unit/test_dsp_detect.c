/* Unit tests for dsp/detect: impulse detector and level-change detector.
 * SPDX-License-Identifier: MIT
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/detect.h"
#include "testsig.h"

#define RATE 48000.0
#define NS (6 * 48000)

/* Gaussian noise of standard deviation 1e-3 (-57 dBFS mean square) with single-sample clicks of
 * 0.5 at the given sample positions, and a 0.5 s tone burst (a level change, not an impulse). */
static float *noisy(const size_t *clicks, size_t nclicks, int with_burst)
{
    float *x = malloc(NS * sizeof *x);
    ts_rng r = {5};
    for (size_t i = 0; i < NS; i++)
        x[i] = (float)(1e-3 * ts_gauss(&r));
    for (size_t i = 0; i < nclicks; i++)
        x[clicks[i]] = 0.5f;
    if (with_burst)
        for (size_t i = 0; i < 24000; i++)
            x[240000 + i] += (float)(0.1 * sin(2 * TS_PI * 1000.0 * (double)i / RATE));
    return x;
}

static size_t run_impulse(ml_impulse *q, const float *x, size_t n, size_t block, ml_event *ev, size_t cap)
{
    size_t total = 0;
    for (size_t i = 0; i < n; i += block) {
        size_t m = i + block <= n ? block : n - i, got = 0;
        ck_assert_int_eq(ml_impulse_push(q, x + i, m, ev + total, cap - total, &got), ML_OK);
        total += got;
    }
    size_t got = 0;
    ck_assert_int_eq(ml_impulse_finish(q, ev + total, cap - total, &got), ML_OK);
    return total + got;
}

static const size_t clicks[] = {70000, 120011, 200000};

START_TEST(impulses_found_at_their_times)
{
    /* Analytic: the second difference of a 0.5 click is 0.5, -1, 0.5, all in the click's frame
     * (the clicks sit at least 3 samples before a frame's end): mean square 1.5/48 (-12.0 dBFS),
     * against the differenced noise's 6e-6 (the difference's power gain for white noise is
     * 1 + 4 + 1; -49.2 dBFS): 37 dB over the floor, above the 20 dB threshold. Each starts in the
     * frame holding it, so start = click / 48 exactly and the start time is within 1 ms. The
     * tone burst lasts 0.5 s > max_s = 0.2 s: no impulse. The noise alone: the level of a frame of
     * 48 Gaussian samples exceeds its median by 20 dB (x 100) with negligible probability. */
    float *x = noisy(clicks, 3, 1);
    ml_impulse_config c = ml_impulse_config_default(RATE);
    ml_impulse *q = NULL;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_OK);
    ck_assert_uint_eq(ml_impulse_frame_samples(q), 48);
    ml_event ev[16];
    size_t n = run_impulse(q, x, NS, 4096, ev, 16);
    ck_assert_uint_eq(n, 3);
    for (size_t i = 0; i < 3; i++) {
        ck_assert_int_eq(ev[i].start, (int64_t)(clicks[i] / 48));
        ck_assert_int_eq(ev[i].end, ev[i].start + 1);
        ck_assert_double_eq_tol(ev[i].peak_abs, 0.5, 1e-6);
        /* 10 lg((1.5/48 + 6e-6) / 0.5) = -12.04 dBFS; 0.5 dB covers the noise in the frame */
        ck_assert_double_eq_tol(ev[i].peak_db, -12.04, 0.5);
        ck_assert_double_eq_tol(ev[i].rise_db, ev[i].peak_db - ev[i].baseline_db, 1e-9);
        /* floor: median frame level of the differenced noise, near 10 lg(6e-6/0.5) = -49.2 dBFS;
         * 0.5 dB: the median of a 48-sample mean square lies ~0.1 dB below its mean, plus the
         * 0.1 dB histogram step */
        ck_assert_double_eq_tol(ev[i].baseline_db, -49.2, 0.5);
    }
    ml_impulse_destroy(q);
    free(x);
}
END_TEST

START_TEST(impulse_block_invariance_and_reset)
{
    float *x = noisy(clicks, 3, 0);
    ml_impulse_config c = ml_impulse_config_default(RATE);
    ml_impulse *q = NULL;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_OK);
    ml_event ref[16], ev[16];
    size_t nref = run_impulse(q, x, NS, NS, ref, 16);
    const size_t blocks[] = {1, 7, 4096};
    for (size_t b = 0; b < 3; b++) {
        ml_impulse_reset(q);
        size_t n = run_impulse(q, x, NS, blocks[b], ev, 16);
        ck_assert_uint_eq(n, nref);
        ck_assert(memcmp(ev, ref, n * sizeof *ev) == 0);
    }
    ml_impulse_destroy(q);
    free(x);
}
END_TEST

START_TEST(impulse_close_clicks_merge_and_cap)
{
    /* Two clicks 2 ms apart (under gap_s = 5 ms) are one impulse spanning frames click/48 ..
     * (click + 96)/48; too small a cap is reported as ML_EINVAL. */
    const size_t two[] = {100000, 100096};
    float *x = noisy(two, 2, 0);
    ml_impulse_config c = ml_impulse_config_default(RATE);
    ml_impulse *q = NULL;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_OK);
    ml_event ev[4];
    ck_assert_uint_eq(run_impulse(q, x, NS, 512, ev, 4), 1);
    ck_assert_int_eq(ev[0].start, 100000 / 48);
    ck_assert_int_eq(ev[0].end, 100096 / 48 + 1);
    ml_impulse_reset(q);
    size_t got = 0;
    ck_assert_int_eq(ml_impulse_push(q, x, NS, ev, 0, &got), ML_EINVAL);
    ml_impulse_destroy(q);
    free(x);
}
END_TEST

START_TEST(impulse_config_rejected)
{
    ml_impulse *q = (ml_impulse *)1;
    ml_impulse_config c = ml_impulse_config_default(0);
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    c = ml_impulse_config_default(RATE);
    c.frame_s = 1e-6; /* less than a sample */
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_EINVAL);
    c = ml_impulse_config_default(RATE);
    c.threshold_db = 0;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_EINVAL);
    c = ml_impulse_config_default(RATE);
    c.floor_s = 0.005;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_EINVAL);
    c = ml_impulse_config_default(RATE);
    c.max_s = 0;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_EINVAL);
    c = ml_impulse_config_default(RATE);
    c.order = 3;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_EINVAL);
}

START_TEST(impulse_under_a_loud_tone)
{
    /* A -20 dBFS 1 kHz tone hides a 0.5 click in the plain level (+3 dB), but its second difference
     * is (2 sin(pi/48))^4 = 1.7e-4 (-37.6 dB) of it, so the click again stands ~37 dB over the
     * floor: found with order 2, missed with order 0 (where it is only 3 dB above). */
    float *x = noisy(clicks, 3, 0);
    for (size_t i = 0; i < NS; i++)
        x[i] += (float)(0.1 * sin(2 * TS_PI * 1000.0 * (double)i / RATE));
    for (int order = 0; order <= 2; order += 2) {
        ml_impulse_config c = ml_impulse_config_default(RATE);
        c.order = order;
        ml_impulse *q = NULL;
        ck_assert_int_eq(ml_impulse_create(&c, &q), ML_OK);
        ml_event ev[16];
        ck_assert_uint_eq(run_impulse(q, x, NS, 4096, ev, 16), order == 2 ? 3 : 0);
        ml_impulse_destroy(q);
    }
    free(x);
}
END_TEST

/* Level sequence at 10 values/s: -60 dB, a 0.5 s spike to -40 at 10 s, a rise to -45 dB from 30 s
 * to 50 s, then -60 until 70 s. */
static void levels(double *v, size_t n)
{
    for (size_t i = 0; i < n; i++)
        v[i] = (i >= 300 && i < 500) ? -45.0 : (i >= 100 && i < 105) ? -40.0 : -60.0;
}

static size_t run_change(ml_change *q, const double *v, size_t n, size_t block, ml_event *ev, size_t cap)
{
    size_t total = 0;
    for (size_t i = 0; i < n; i += block) {
        size_t m = i + block <= n ? block : n - i, got = 0;
        ck_assert_int_eq(ml_change_push(q, v + i, m, ev + total, cap - total, &got), ML_OK);
        total += got;
    }
    size_t got = 0;
    ck_assert_int_eq(ml_change_finish(q, ev + total, cap - total, &got), ML_OK);
    return total + got;
}

START_TEST(change_rise_found_spike_ignored)
{
    /* Analytic: the spike lasts 0.5 s < min_s = 1 s: no change. The rise starts at value 300 and
     * ends at 500 (the first of the run back inside); peak -45, baseline -60 (+- step 0.1 dB), so
     * rise 15 dB. Block invariance: the same events for blocks of 1, 7 and all; reset restarts. */
    double v[700];
    levels(v, 700);
    ml_change_config c = ml_change_config_default(10.0, +1, 6.0);
    ml_change *q = NULL;
    ck_assert_int_eq(ml_change_create(&c, &q), ML_OK);
    const size_t blocks[] = {1, 7, 700};
    for (size_t b = 0; b < 3; b++) {
        ml_event ev[8];
        ml_change_reset(q);
        ck_assert_uint_eq(run_change(q, v, 700, blocks[b], ev, 8), 1);
        ck_assert_int_eq(ev[0].start, 300);
        ck_assert_int_eq(ev[0].end, 500);
        ck_assert_double_eq_tol(ev[0].peak_db, -45.0, 1e-12);
        ck_assert_double_eq_tol(ev[0].baseline_db, -60.0, 0.1);
        ck_assert_double_eq_tol(ev[0].rise_db, 15.0, 0.1);
    }
    ml_change_destroy(q);
}
END_TEST

START_TEST(change_fall_finish_and_max)
{
    /* A carrier at 0 dB falling to -30 dB at 20 s until the end (40 s): direction -1 finds it,
     * finish closes it at the last value (400); rise -30. With max_s = 5 s the change closes after
     * 50 values and the baseline restarts from the new level: no second change follows. */
    double v[400];
    for (size_t i = 0; i < 400; i++)
        v[i] = i >= 200 ? -30.0 : 0.0;
    ml_change_config c = ml_change_config_default(10.0, -1, 10.0);
    ml_change *q = NULL;
    ck_assert_int_eq(ml_change_create(&c, &q), ML_OK);
    ml_event ev[8];
    ck_assert_uint_eq(run_change(q, v, 400, 64, ev, 8), 1);
    ck_assert_int_eq(ev[0].start, 200);
    ck_assert_int_eq(ev[0].end, 400);
    ck_assert_double_eq_tol(ev[0].rise_db, -30.0, 0.1);
    ml_change_destroy(q);
    c.max_s = 5.0;
    ck_assert_int_eq(ml_change_create(&c, &q), ML_OK);
    ck_assert_uint_eq(run_change(q, v, 400, 64, ev, 8), 1);
    ck_assert_int_eq(ev[0].end, 250);
    ck_assert_double_eq_tol(ml_change_get_baseline(q), -30.0, 0.1);
    ml_change_destroy(q);
}
END_TEST

START_TEST(change_config_rejected)
{
    ml_change *q = (ml_change *)1;
    ml_change_config c = ml_change_config_default(10.0, 0, 6.0);
    ck_assert_int_eq(ml_change_create(&c, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    c = ml_change_config_default(10.0, 1, 0.0);
    ck_assert_int_eq(ml_change_create(&c, &q), ML_EINVAL);
    c = ml_change_config_default(0.0, 1, 6.0);
    ck_assert_int_eq(ml_change_create(&c, &q), ML_EINVAL);
    c = ml_change_config_default(10.0, 1, 6.0);
    c.warmup_s = c.baseline_s + 1;
    ck_assert_int_eq(ml_change_create(&c, &q), ML_EINVAL);
}
END_TEST

/* The events of two detectors whose stream is cut at `cut`: the first saves its state there, the
 * second (a new object of the same config) restores it and takes the rest. */
START_TEST(impulse_save_restore_continues_exactly)
{
    /* A continued stream must give exactly the events of an uninterrupted one (a log resumed in
     * another process): the cut falls inside an open click's burst (the burst's frames, the
     * partial frame and the difference's history all carry over) and elsewhere. */
    float *x = noisy(clicks, 3, 1);
    ml_impulse_config c = ml_impulse_config_default(RATE);
    ml_impulse *a = NULL, *b = NULL;
    ck_assert_int_eq(ml_impulse_create(&c, &a), ML_OK);
    ck_assert_int_eq(ml_impulse_create(&c, &b), ML_OK);
    ml_event ref[16], ev[16];
    const size_t nref = run_impulse(a, x, NS, 4096, ref, 16);
    const size_t cuts[] = {120011 + 30, 150001, 60000};
    for (size_t k = 0; k < 3; k++) {
        ml_impulse_reset(a);
        size_t n1 = 0, n2 = 0;
        ck_assert_int_eq(ml_impulse_push(a, x, cuts[k], ev, 16, &n1), ML_OK);
        const size_t need = ml_impulse_save(a, NULL, 0);
        double *st = malloc(need * sizeof *st);
        ck_assert_uint_eq(ml_impulse_save(a, st, need), need);
        ck_assert_int_eq(ml_impulse_restore(b, st, need, true), ML_OK);
        n2 = run_impulse(b, x + cuts[k], NS - cuts[k], 4096, ev + n1, 16 - n1);
        ck_assert_uint_eq(n1 + n2, nref);
        for (size_t i = 0; i < nref; i++) {
            ck_assert_int_eq(ev[i].start, ref[i].start);
            ck_assert_int_eq(ev[i].end, ref[i].end);
            ck_assert_double_eq(ev[i].peak_db, ref[i].peak_db);
            ck_assert_double_eq(ev[i].baseline_db, ref[i].baseline_db);
        }
        /* not continuous: only the floor; the next samples start afresh, judged at once, and the
         * step from silence to the signal is no impulse */
        ck_assert_int_eq(ml_impulse_restore(b, st, need, false), ML_OK);
        size_t n3 = run_impulse(b, x + 150001, NS - 150001, 4096, ev, 16);
        ck_assert_uint_eq(n3, 1); /* the click at 200000 */
        ck_assert_int_eq(ev[0].start, (200000 - 150001) / 48);
        /* damaged states are refused and change nothing */
        st[0] = 99;
        ck_assert_int_eq(ml_impulse_restore(b, st, need, true), ML_EINVAL);
        st[0] = 1;
        ck_assert_int_eq(ml_impulse_restore(b, st, need - 1, true), ML_EINVAL);
        st[5] = 1e9;
        ck_assert_int_eq(ml_impulse_restore(b, st, need, true), ML_EINVAL);
        free(st);
    }
    ml_impulse_destroy(a);
    ml_impulse_destroy(b);
    free(x);
}
END_TEST

START_TEST(change_save_restore_continues)
{
    /* Cut inside the rise (30..50 s): the restored detector finishes the same event; rebased, the
     * next value is index 0 and the open change's start is a negative index of the values before. */
    double v[700];
    levels(v, 700);
    ml_change_config c = ml_change_config_default(10.0, +1, 6.0);
    ml_change *a = NULL, *b = NULL;
    ck_assert_int_eq(ml_change_create(&c, &a), ML_OK);
    ck_assert_int_eq(ml_change_create(&c, &b), ML_OK);
    ml_event ev[8];
    size_t n = 0;
    ck_assert_int_eq(ml_change_push(a, v, 400, ev, 8, &n), ML_OK);
    ck_assert_uint_eq(n, 0);
    int64_t start = 0, in_start = 0;
    bool in_run = true;
    ck_assert(ml_change_get_open(a, &start, &in_run, &in_start));
    ck_assert_int_eq(start, 300);
    ck_assert(!in_run);
    const size_t need = ml_change_save(a, NULL, 0);
    double *st = malloc(need * sizeof *st);
    ck_assert_uint_eq(ml_change_save(a, st, need), need);
    ck_assert_int_eq(ml_change_restore(b, st, need, false), ML_OK);
    ck_assert_double_eq(ml_change_get_baseline(b), ml_change_get_baseline(a)); /* frozen at the rise's start */
    ck_assert_int_eq(ml_change_get_state(b), 2);
    ck_assert_uint_eq(run_change(b, v + 400, 300, 7, ev, 8), 1);
    ck_assert_int_eq(ev[0].start, 300);
    ck_assert_int_eq(ev[0].end, 500);
    ck_assert_double_eq_tol(ev[0].rise_db, 15.0, 0.1);
    ck_assert_int_eq(ml_change_restore(b, st, need, true), ML_OK);
    ck_assert_uint_eq(run_change(b, v + 400, 300, 700, ev, 8), 1);
    ck_assert_int_eq(ev[0].start, 300 - 400);
    ck_assert_int_eq(ev[0].end, 500 - 400);
    st[1] = 7; /* no such state */
    ck_assert_int_eq(ml_change_restore(b, st, need, false), ML_EINVAL);
    free(st);
    ml_change_destroy(a);
    ml_change_destroy(b);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_detect");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, impulses_found_at_their_times);
    tcase_add_test(tc, impulse_block_invariance_and_reset);
    tcase_add_test(tc, impulse_close_clicks_merge_and_cap);
    tcase_add_test(tc, impulse_config_rejected);
    tcase_add_test(tc, impulse_under_a_loud_tone);
    tcase_add_test(tc, change_rise_found_spike_ignored);
    tcase_add_test(tc, change_fall_finish_and_max);
    tcase_add_test(tc, change_config_rejected);
    tcase_add_test(tc, impulse_save_restore_continues_exactly);
    tcase_add_test(tc, change_save_restore_continues);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
