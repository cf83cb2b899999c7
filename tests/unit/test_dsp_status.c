/* Unit tests for dsp/status: every status code has its own description.
 * SPDX-License-Identifier: MIT
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <stdlib.h>
#include <string.h>

#include "dsp/status.h"

/* The text given to codes outside the table: an out-of-range code must get it, a real code never. */
static const char *generic_text(void)
{
    return ml_strerror(ML_STATUS_COUNT);
}

START_TEST(every_code_has_a_distinct_specific_text)
{
    const char *generic = generic_text();
    ck_assert_ptr_nonnull(generic);
    for (int a = 0; a < ML_STATUS_COUNT; a++) {
        const char *ta = ml_strerror((ml_status)a);
        ck_assert_ptr_nonnull(ta);
        ck_assert_msg(strlen(ta) > 0, "code %d has an empty text", a);
        ck_assert_msg(strcmp(ta, generic) != 0, "code %d has only the generic text \"%s\"", a, ta);
        for (int b = 0; b < a; b++)
            ck_assert_msg(strcmp(ta, ml_strerror((ml_status)b)) != 0, "codes %d and %d share \"%s\"", b, a,
                          ta);
    }
}
END_TEST

START_TEST(out_of_range_codes_get_the_generic_text)
{
    const char *generic = generic_text();
    const int bad[] = {ML_STATUS_COUNT, ML_STATUS_COUNT + 1, 1000, -1, -1000};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        const char *t = ml_strerror((ml_status)bad[i]);
        ck_assert_ptr_nonnull(t);
        ck_assert_str_eq(t, generic);
    }
}
END_TEST

START_TEST(success_is_code_zero)
{
    /* Contract of dsp/status.h: callers test `st != ML_OK`, and zero-initialised results read as OK. */
    ck_assert_int_eq(ML_OK, 0);
}
END_TEST

static Suite *status_suite(void)
{
    Suite *s = suite_create("dsp_status");
    TCase *tc = tcase_create("strerror");
    tcase_add_test(tc, every_code_has_a_distinct_specific_text);
    tcase_add_test(tc, out_of_range_codes_get_the_generic_text);
    tcase_add_test(tc, success_is_code_zero);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(status_suite());
}
