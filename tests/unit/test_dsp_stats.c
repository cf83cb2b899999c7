/* Unit tests for dsp/stats: clip thresholds, mean, RMS, extremes, non-finite samples.
 * SPDX-License-Identifier: MIT
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/stats.h"
#include "testsig.h"

/* Count of clipped samples when exactly one sample x is pushed. */
static uint64_t clipped_one(int bits, float x)
{
    ml_stats st;
    ck_assert_int_eq(ml_stats_init(&st, bits), ML_OK);
    ml_stats_push(&st, &x, 1);
    ck_assert_uint_eq(st.count, 1);
    return st.clipped;
}

START_TEST(clip_thresholds_16bit)
{
    /* dsp/stats.h contract for 16 bits: codes are k/32768, k = -32768..32767 (1 LSB = 2^-15).
     * "At or within 1 LSB of full scale" makes the codes 32767, 32766 (positive full-scale code
     * 32767 and its neighbour) and -32768, -32767 clipped; 32765 and -32766 are not.
     * All these k/32768 are exact in float (16 significant bits < 24). */
    ck_assert_uint_eq(clipped_one(16, 32767.0f / 32768.0f), 1);
    ck_assert_uint_eq(clipped_one(16, 32766.0f / 32768.0f), 1);
    ck_assert_uint_eq(clipped_one(16, 32765.0f / 32768.0f), 0);
    ck_assert_uint_eq(clipped_one(16, -32768.0f / 32768.0f), 1);
    ck_assert_uint_eq(clipped_one(16, -32767.0f / 32768.0f), 1);
    ck_assert_uint_eq(clipped_one(16, -32766.0f / 32768.0f), 0);
    /* Beyond full scale (a float source may overshoot) is clipped too; mid-scale and zero are not. */
    ck_assert_uint_eq(clipped_one(16, 1.5f), 1);
    ck_assert_uint_eq(clipped_one(16, -1.5f), 1);
    ck_assert_uint_eq(clipped_one(16, 0.5f), 0);
    ck_assert_uint_eq(clipped_one(16, 0.0f), 0);
}
END_TEST

START_TEST(clip_thresholds_24bit_and_8bit)
{
    /* Same rule at 24 bits (codes k/2^23, exact in float: 24 significant bits) ... */
    const float fs24 = 8388608.0f;
    ck_assert_uint_eq(clipped_one(24, 8388607.0f / fs24), 1);
    ck_assert_uint_eq(clipped_one(24, 8388606.0f / fs24), 1);
    ck_assert_uint_eq(clipped_one(24, 8388605.0f / fs24), 0);
    ck_assert_uint_eq(clipped_one(24, -8388608.0f / fs24), 1);
    ck_assert_uint_eq(clipped_one(24, -8388607.0f / fs24), 1);
    ck_assert_uint_eq(clipped_one(24, -8388606.0f / fs24), 0);
    /* ... and at 8 bits (codes k/128). */
    ck_assert_uint_eq(clipped_one(8, 126.0f / 128.0f), 1);
    ck_assert_uint_eq(clipped_one(8, 125.0f / 128.0f), 0);
    ck_assert_uint_eq(clipped_one(8, -127.0f / 128.0f), 1);
    ck_assert_uint_eq(clipped_one(8, -126.0f / 128.0f), 0);
}
END_TEST

START_TEST(init_rejects_bad_bits)
{
    ml_stats st;
    ck_assert_int_eq(ml_stats_init(&st, 1), ML_EINVAL);
    ck_assert_int_eq(ml_stats_init(&st, 0), ML_EINVAL);
    ck_assert_int_eq(ml_stats_init(&st, 33), ML_EINVAL);
    ck_assert_int_eq(ml_stats_init(&st, -16), ML_EINVAL);
    ck_assert_int_eq(ml_stats_init(NULL, 16), ML_EINVAL);
    ck_assert_int_eq(ml_stats_init(&st, 2), ML_OK);
    ck_assert_int_eq(ml_stats_init(&st, 32), ML_OK);
}
END_TEST

START_TEST(empty_accumulator)
{
    /* Contract: mean and RMS are 0 when empty; extremes 0 before the first sample. */
    ml_stats st;
    ck_assert_int_eq(ml_stats_init(&st, 16), ML_OK);
    ml_stats_push(&st, NULL, 0);
    ck_assert_uint_eq(st.count, 0);
    ck_assert_double_eq(ml_stats_mean(&st), 0.0);
    ck_assert_double_eq(ml_stats_rms(&st), 0.0);
    ck_assert_double_eq(st.min, 0.0);
    ck_assert_double_eq(st.max, 0.0);
}
END_TEST

START_TEST(mean_rms_extremes_known_values)
{
    /* {0.5, -0.25, 0.75, -1.0}: sum 0, mean 0; sum of squares 0.25 + 0.0625 + 0.5625 + 1 = 1.875,
     * RMS sqrt(1.875/4); min -1, max 0.75. All inputs and partial sums are exact in binary. */
    const float x[] = {0.5f, -0.25f, 0.75f, -1.0f};
    ml_stats st;
    ck_assert_int_eq(ml_stats_init(&st, 16), ML_OK);
    ml_stats_push(&st, x, 4);
    ck_assert_uint_eq(st.count, 4);
    ck_assert_double_eq(ml_stats_mean(&st), 0.0);
    ck_assert_double_eq(ml_stats_rms(&st), sqrt(1.875 / 4.0));
    ck_assert_double_eq(st.min, -1.0);
    ck_assert_double_eq(st.max, 0.75);
    ck_assert_uint_eq(st.clipped, 1); /* -1.0 only */
}
END_TEST

START_TEST(sine_rms_and_dc_mean)
{
    /* 0.25 + 0.5 sin(2 pi 1000 t + pi/2) at 48 kHz over exactly 100 periods (4800 samples):
     * mean 0.25 (the sine sums to zero over whole periods), RMS sqrt(0.25^2 + 0.5^2/2)
     * = sqrt(0.1875). The phase puts sample 0 on the crest (0.75) and sample 24 on the trough
     * (-0.25), so the extremes are exact too. Tolerance 1e-7: float rounding of each sample is
     * <= 2^-25 relative (values < 1), about 3e-8, and it does not accumulate in double sums. */
    enum { n = 4800 };
    static double xd[n];
    static float x[n];
    for (size_t i = 0; i < n; i++)
        xd[i] = 0.25;
    ts_add_sine(xd, n, 0.5, 1000.0, 48000.0, TS_PI / 2.0);
    ts_to_float(xd, x, n);
    ml_stats st;
    ck_assert_int_eq(ml_stats_init(&st, 16), ML_OK);
    ml_stats_push(&st, x, n);
    ck_assert_double_eq_tol(ml_stats_mean(&st), 0.25, 1e-7);
    ck_assert_double_eq_tol(ml_stats_rms(&st), sqrt(0.1875), 1e-7);
    ck_assert_double_eq_tol(st.max, 0.75, 1e-7);
    ck_assert_double_eq_tol(st.min, -0.25, 1e-7);
}
END_TEST

START_TEST(non_finite_samples_are_counted_not_summed)
{
    const float x[] = {NAN, 0.5f, INFINITY, -INFINITY, -0.5f, NAN};
    ml_stats st;
    ck_assert_int_eq(ml_stats_init(&st, 16), ML_OK);
    ml_stats_push(&st, x, 6);
    ck_assert_uint_eq(st.nonfinite, 4);
    ck_assert_uint_eq(st.count, 2);
    ck_assert_uint_eq(st.clipped, 0); /* +-inf are not "clipped" samples: they are non-finite */
    ck_assert_double_eq(ml_stats_mean(&st), 0.0);
    ck_assert_double_eq(ml_stats_rms(&st), 0.5);
    ck_assert_double_eq(st.max, 0.5);
    ck_assert_double_eq(st.min, -0.5);
    /* The first finite sample after a NaN still initialises the extremes. */
    const float y[] = {NAN, -0.125f};
    ck_assert_int_eq(ml_stats_init(&st, 16), ML_OK);
    ml_stats_push(&st, y, 2);
    ck_assert_double_eq(st.max, -0.125);
    ck_assert_double_eq(st.min, -0.125);
}
END_TEST

START_TEST(reset_keeps_thresholds)
{
    ml_stats st;
    ck_assert_int_eq(ml_stats_init(&st, 16), ML_OK);
    const double hi = st.clip_hi, lo = st.clip_lo;
    const float x[] = {1.0f, NAN, -0.25f};
    ml_stats_push(&st, x, 3);
    ml_stats_reset(&st);
    ck_assert_double_eq(st.clip_hi, hi);
    ck_assert_double_eq(st.clip_lo, lo);
    ck_assert_uint_eq(st.count, 0);
    ck_assert_uint_eq(st.clipped, 0);
    ck_assert_uint_eq(st.nonfinite, 0);
    ck_assert_double_eq(st.sum, 0.0);
    ck_assert_double_eq(st.sumsq, 0.0);
    ck_assert_double_eq(st.min, 0.0);
    ck_assert_double_eq(st.max, 0.0);
    /* and the thresholds still act: 32766/32768 is clipped, 32765/32768 is not (16-bit rule) */
    const float y[] = {32766.0f / 32768.0f, 32765.0f / 32768.0f};
    ml_stats_push(&st, y, 2);
    ck_assert_uint_eq(st.clipped, 1);
}
END_TEST

START_TEST(block_invariance)
{
    /* Pushing the same samples in blocks of 1, 7 and 4096 (and all at once) must give the same
     * accumulator. The sums run in sample order whatever the blocks, so the result is
     * bit-identical; compared field by field. Signal: noise + tone + a few specials. */
    enum { n = 20000 };
    static float x[n];
    static double xd[n];
    ts_rng r = {12345};
    for (size_t i = 0; i < n; i++)
        xd[i] = 0.1 * ts_gauss(&r);
    ts_add_sine(xd, n, 0.8, 997.0, 48000.0, 0.0);
    ts_to_float(xd, x, n);
    x[100] = NAN;
    x[2000] = 1.0f;
    x[3001] = -INFINITY;
    const size_t blocks[] = {1, 7, 4096, n};
    ml_stats ref;
    ck_assert_int_eq(ml_stats_init(&ref, 16), ML_OK);
    ml_stats_push(&ref, x, n);
    ck_assert_uint_eq(ref.nonfinite, 2);
    ck_assert_uint_gt(ref.clipped, 0);
    for (size_t b = 0; b < sizeof blocks / sizeof blocks[0]; b++) {
        ml_stats st;
        ck_assert_int_eq(ml_stats_init(&st, 16), ML_OK);
        for (size_t i = 0; i < n; i += blocks[b])
            ml_stats_push(&st, x + i, n - i < blocks[b] ? n - i : blocks[b]);
        ck_assert_uint_eq(st.count, ref.count);
        ck_assert_uint_eq(st.clipped, ref.clipped);
        ck_assert_uint_eq(st.nonfinite, ref.nonfinite);
        ck_assert_double_eq(st.sum, ref.sum);
        ck_assert_double_eq(st.sumsq, ref.sumsq);
        ck_assert_double_eq(st.min, ref.min);
        ck_assert_double_eq(st.max, ref.max);
    }
}
END_TEST

static Suite *stats_suite(void)
{
    Suite *s = suite_create("dsp_stats");
    TCase *tc = tcase_create("stats");
    tcase_add_test(tc, clip_thresholds_16bit);
    tcase_add_test(tc, clip_thresholds_24bit_and_8bit);
    tcase_add_test(tc, init_rejects_bad_bits);
    tcase_add_test(tc, empty_accumulator);
    tcase_add_test(tc, mean_rms_extremes_known_values);
    tcase_add_test(tc, sine_rms_and_dc_mean);
    tcase_add_test(tc, non_finite_samples_are_counted_not_summed);
    tcase_add_test(tc, reset_keeps_thresholds);
    tcase_add_test(tc, block_invariance);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(stats_suite());
}
