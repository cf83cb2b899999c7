/* Unit tests for dsp/dropout: silence runs and discontinuities, exact sample positions.
 * SPDX-License-Identifier: MIT
 *
 * Signals are synthesised here (fixed seeds); the expected events are where the test put them,
 * sample for sample. The second-difference scale of a tone A sin(w n) is A w^2 / sqrt(2) rms
 * (dsp/dropout.h); a dropped sample or a step of size d gives |e| about d.
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>

#include "dsp/dropout.h"
#include "testsig.h"

#define FS 48000.0
#define N2 (2 * 48000)

/* 1 kHz at amplitude 0.5 (phase 0.3) plus noise 1e-5, as float. */
static float *tone(size_t n, double a, uint64_t seed)
{
    float *x = malloc(n * sizeof *x);
    ck_assert_ptr_nonnull(x);
    ts_rng g = {seed};
    for (size_t i = 0; i < n; i++)
        x[i] = (float)(a * sin(2 * TS_PI * 1000.0 * (double)i / FS + 0.3) + 1e-5 * ts_gauss(&g));
    return x;
}

/* The same events, field by field (structs may hold padding). */
static void assert_same_events(const ml_dropout_result *a, const ml_dropout_result *b)
{
    ck_assert_uint_eq(a->nevents, b->nevents);
    ck_assert_uint_eq(a->nstored, b->nstored);
    for (size_t i = 0; i < a->nstored; i++) {
        const ml_dropout_event *e = &a->events[i], *f = &b->events[i];
        ck_assert(e->kind == f->kind && e->start == f->start && e->end == f->end && e->value == f->value
                  && e->ratio == f->ratio);
    }
}

static ml_dropout_result run(const float *x, size_t n, size_t block)
{
    ml_dropout_config c = ml_dropout_config_default(FS);
    ml_dropout *q = NULL;
    ck_assert_int_eq(ml_dropout_create(&c, &q), ML_OK);
    for (size_t i = 0; i < n; i += block)
        ck_assert_int_eq(ml_dropout_push(q, x + i, n - i < block ? n - i : block), ML_OK);
    ml_dropout_result r;
    ck_assert_int_eq(ml_dropout_get(q, &r), ML_OK);
    ml_dropout_destroy(q);
    return r;
}

START_TEST(dropout_150ms_in_a_tone)
{
    /* 7200 samples (150 ms) of zeros from sample 48000: one silence event [48000, 55199], value 0;
     * the steps into and out of it are part of it (no step events). Block invariance: 1, 7, 4096. */
    float *x = tone(N2, 0.5, 1);
    for (size_t i = 48000; i < 48000 + 7200; i++)
        x[i] = 0.0f;
    ml_dropout_result r = run(x, N2, 4096);
    ck_assert_uint_eq(r.nevents, 1);
    ck_assert_uint_eq(r.nsilence, 1);
    ck_assert_uint_eq(r.nstep, 0);
    ck_assert_int_eq(r.events[0].kind, ML_DROPOUT_SILENCE);
    ck_assert_int_eq(r.events[0].start, 48000);
    ck_assert_int_eq(r.events[0].end, 55199);
    ck_assert_double_eq(r.events[0].value, 0.0);
    ck_assert_int_eq(r.silent_samples, 7200);
    ck_assert_int_eq(r.samples, N2);
    ck_assert(!r.ongoing);
    const size_t blocks[] = {1, 7};
    for (size_t b = 0; b < 2; b++) {
        ml_dropout_result o = run(x, N2, blocks[b]);
        assert_same_events(&o, &r);
    }
    free(x);
}
END_TEST

START_TEST(one_sample_glitch)
{
    /* Sample 30000 dropped to 0 (the tone there is 0.5 sin(2 pi 30000/48 + 0.3) = 0.148, far from
     * 0): one step event starting at 30000 (it spans the two samples after, whose second
     * differences the glitch also moves), ratio far above 20. A +0.2 spike at 60000 in the
     * same capture: a second event at 60000. Block invariance 1, 7, 4096. */
    float *x = tone(N2, 0.5, 2);
    x[30000] = 0.0f;
    x[60000] += 0.2f;
    ml_dropout_result r = run(x, N2, 4096);
    ck_assert_uint_eq(r.nsilence, 0);
    ck_assert_uint_eq(r.nstep, 2);
    ck_assert_int_eq(r.events[0].kind, ML_DROPOUT_STEP);
    ck_assert_int_eq(r.events[0].start, 30000);
    ck_assert_int_le(r.events[0].end, 30002);
    ck_assert(r.events[0].ratio > 20.0);
    ck_assert_int_eq(r.events[1].start, 60000);
    ck_assert_int_le(r.events[1].end, 60002);
    const size_t blocks[] = {1, 7};
    for (size_t b = 0; b < 2; b++) {
        ml_dropout_result o = run(x, N2, blocks[b]);
        assert_same_events(&o, &r);
    }
    free(x);
}
END_TEST

START_TEST(quiet_passages_are_no_dropouts)
{
    /* A 1 kHz tone whose level falls smoothly (over 10 ms) from -6 dBFS to -80 dBFS for 0.5 s and
     * back, stored as 16-bit codes (the quiet part is +-3 codes: values repeat for a few samples
     * only), then a 30 Hz tone at one code (a repeated value holds for about a third of its
     * period, 11 ms < 50 ms): no event at all. */
    const size_t n = 3 * 48000;
    float *x = malloc(n * sizeof *x);
    ck_assert_ptr_nonnull(x);
    for (size_t i = 0; i < n; i++) {
        const double t = (double)i / FS;
        double a = 0.5;
        if (t >= 0.5 && t < 1.5) {
            const double lo = 1e-4, u = t - 0.5;
            const double k = u < 0.01 ? u / 0.01 : u > 0.99 ? (1.0 - u) / 0.01 : 1.0;
            a = 0.5 * pow(lo / 0.5, 0.5 * (1 - cos(TS_PI * k)));
        }
        double v = a * sin(2 * TS_PI * 1000.0 * t);
        if (t >= 2.0)
            v = sin(2 * TS_PI * 30.0 * t) / 32768.0;
        x[i] = (float)(nearbyint(v * 32768.0) / 32768.0);
    }
    ml_dropout_result r = run(x, n, 4096);
    ck_assert_msg(r.nevents == 0, "%zu events, first %d at %lld", r.nevents, r.nevents ? (int)r.events[0].kind : -1,
                  r.nevents ? (long long)r.events[0].start : -1LL);
    free(x);
}
END_TEST

START_TEST(silence_at_the_start_and_at_the_end)
{
    /* 0.3 s of digital silence, then the tone: a silence event [0, 14399] and no step at the
     * tone's onset (detection restarts after a silence). Then a capture that stops delivering
     * (zeros from 1.5 s to the end): an ongoing silence event [72000, 95999]. A held nonzero value
     * (a stuck converter, 0.25 for 60 ms) is silence too, with its value. */
    float *x = tone(N2, 0.5, 3);
    for (size_t i = 0; i < 14400; i++)
        x[i] = 0.0f;
    ml_dropout_result r = run(x, N2, 4096);
    ck_assert_uint_eq(r.nevents, 1);
    ck_assert_int_eq(r.events[0].kind, ML_DROPOUT_SILENCE);
    ck_assert_int_eq(r.events[0].start, 0);
    ck_assert_int_eq(r.events[0].end, 14399);
    for (size_t i = 72000; i < N2; i++)
        x[i] = 0.0f;
    r = run(x, N2, 4096);
    ck_assert_uint_eq(r.nevents, 2);
    ck_assert(r.ongoing);
    ck_assert_int_eq(r.events[1].start, 72000);
    ck_assert_int_eq(r.events[1].end, N2 - 1);
    free(x);
    x = tone(N2, 0.5, 4);
    for (size_t i = 20000; i < 22880; i++)
        x[i] = 0.25f;
    r = run(x, N2, 4096);
    ck_assert_uint_eq(r.nsilence, 1);
    ck_assert_double_eq(r.events[0].value, 0.25);
    ck_assert_int_eq(r.events[0].start, 20000);
    ck_assert_int_eq(r.events[0].end, 22879);
    free(x);
}
END_TEST

START_TEST(config_reset_and_rejection)
{
    ml_dropout_config c = ml_dropout_config_default(FS);
    ck_assert_double_eq(c.min_silence_s, 0.05);
    ck_assert_double_eq(c.step_ratio, 20.0);
    ml_dropout *q = NULL;
    ck_assert_int_eq(ml_dropout_create(&c, &q), ML_OK);
    float z[4800] = {0};
    ck_assert_int_eq(ml_dropout_push(q, z, 4800), ML_OK); /* 100 ms of zeros */
    ml_dropout_result r;
    ck_assert_int_eq(ml_dropout_get(q, &r), ML_OK);
    ck_assert_uint_eq(r.nevents, 1);
    ml_dropout_reset(q);
    ck_assert_int_eq(ml_dropout_get(q, &r), ML_OK);
    ck_assert_uint_eq(r.nevents, 0);
    ck_assert_int_eq(r.samples, 0);
    ck_assert_int_eq(ml_dropout_push(q, NULL, 1), ML_EINVAL);
    ck_assert_int_eq(ml_dropout_push(q, NULL, 0), ML_OK);
    ck_assert_int_eq(ml_dropout_get(q, NULL), ML_EINVAL);
    ml_dropout_destroy(q);
    ml_dropout_destroy(NULL);
    const ml_dropout_config bad[] = {
        {0.0, 0.05, 20.0, 1e-4, 0.01}, {FS, 0.0, 20.0, 1e-4, 0.01}, {FS, 0.05, 1.0, 1e-4, 0.01},
        {FS, 0.05, 20.0, -1.0, 0.01},  {FS, 0.05, 20.0, 1e-4, 0.0}, {FS, NAN, 20.0, 1e-4, 0.01},
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        ck_assert_int_eq(ml_dropout_create(&bad[i], &q), ML_EINVAL);
        ck_assert_ptr_null(q);
    }
    ck_assert_int_eq(ml_dropout_create(NULL, &q), ML_EINVAL);
}
END_TEST

static Suite *dropout_suite(void)
{
    Suite *s = suite_create("dsp_dropout");
    TCase *tc = tcase_create("dropout");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, dropout_150ms_in_a_tone);
    tcase_add_test(tc, one_sample_glitch);
    tcase_add_test(tc, quiet_passages_are_no_dropouts);
    tcase_add_test(tc, silence_at_the_start_and_at_the_end);
    tcase_add_test(tc, config_reset_and_rejection);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(dropout_suite());
}
