/* Unit tests for dsp/channels: mapping the analysed channels of a frame and splitting them out.
 * SPDX-License-Identifier: MIT
 *
 * The frames hold distinct known values (channel c of frame i is 10 i + c), so every split can be
 * checked exactly.
 */
#include <check.h>
#include <complex.h>

#include "dsp/channels.h"
#include "ml_check.h"

#define NF 5
#define NCH 4

static void frames(float *f)
{
    for (int i = 0; i < NF; i++)
        for (int c = 0; c < NCH; c++)
            f[i * NCH + c] = (float)(10 * i + c);
}

START_TEST(map_rejection)
{
    ml_channels c;
    ck_assert_int_eq(ml_channels_map(0, 1, false, false, 0, &c), ML_EINVAL);   /* no channels */
    ck_assert_int_eq(ml_channels_map(2, 3, false, false, 0, &c), ML_EINVAL);   /* channel 3 of 2 */
    ck_assert_int_eq(ml_channels_map(2, 2, true, false, 0, &c), ML_EINVAL);    /* Q would be channel 3 */
    ck_assert_int_eq(ml_channels_map(3, 1, true, false, 2, &c), ML_EINVAL);    /* reference is Q */
    ck_assert_int_eq(ml_channels_map(3, 1, false, false, 1, &c), ML_EINVAL);   /* reference is the channel */
    ck_assert_int_eq(ml_channels_map(3, 1, false, false, 4, &c), ML_EINVAL);   /* reference outside */
    ck_assert_int_eq(ml_channels_map(3, 1, false, false, 0, NULL), ML_EINVAL);
}
END_TEST

START_TEST(split_real_iq_swapped_and_reference)
{
    float f[NF * NCH], re[NF], im[NF], ref[NF];
    double complex z[NF];
    frames(f);
    ml_channels c;
    /* channel 3 alone */
    ck_assert_int_eq(ml_channels_map(NCH, 3, false, false, 0, &c), ML_OK);
    ml_channels_split(&c, f, NF, re, NULL);
    ml_channels_split_complex(&c, f, NF, z);
    for (int i = 0; i < NF; i++) {
        ck_assert_float_eq(re[i], 10 * i + 2);
        ck_assert(z[i] == (double)(10 * i + 2));
    }
    /* I/Q from channels 2 and 3, reference channel 1 */
    ck_assert_int_eq(ml_channels_map(NCH, 2, true, false, 1, &c), ML_OK);
    ml_channels_split(&c, f, NF, re, im);
    ml_channels_split_complex(&c, f, NF, z);
    ml_channels_split_ref(&c, f, NF, ref);
    for (int i = 0; i < NF; i++) {
        ck_assert_float_eq(re[i], 10 * i + 1);
        ck_assert_float_eq(im[i], 10 * i + 2);
        ck_assert(creal(z[i]) == 10 * i + 1 && cimag(z[i]) == 10 * i + 2);
        ck_assert_float_eq(ref[i], 10 * i);
    }
    /* --swap-iq: Q then I */
    ck_assert_int_eq(ml_channels_map(NCH, 2, true, true, 0, &c), ML_OK);
    ml_channels_split(&c, f, NF, re, im);
    for (int i = 0; i < NF; i++) {
        ck_assert_float_eq(re[i], 10 * i + 2);
        ck_assert_float_eq(im[i], 10 * i + 1);
    }
    /* one channel: a plain copy */
    ck_assert_int_eq(ml_channels_map(1, 1, false, false, 0, &c), ML_OK);
    ml_channels_split(&c, f, NF, re, NULL);
    for (int i = 0; i < NF; i++)
        ck_assert_float_eq(re[i], f[i]);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("dsp_channels");
    TCase *tc = tcase_create("channels");
    tcase_add_test(tc, map_rejection);
    tcase_add_test(tc, split_real_iq_swapped_and_reference);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
