/* Unit tests for io/printable: names made safe to print.
 * SPDX-License-Identifier: MIT
 *
 * Expected forms follow io/printable.h. Which byte sequences are valid UTF-8 is the Unicode
 * Standard's table 3-7 (chapter 3, "Well-Formed UTF-8 Byte Sequences"); U+009B is the C1 control
 * CSI of ECMA-48 section 5.3; U+202E (RIGHT-TO-LEFT OVERRIDE) and U+2066..U+2069 are the
 * explicit directional formatting characters of Unicode Standard Annex 9.
 */
#include <check.h>
#include <stdlib.h>
#include <string.h>

#include "io/printable.h"
#include "tests/unit/ml_check.h"

static void expect(const char *in, const char *want)
{
    char out[256];
    const size_t n = ml_printable(out, sizeof out, in);
    ck_assert_str_eq(out, want);
    ck_assert_uint_eq(n, strlen(want));
}

START_TEST(controls_are_escaped)
{
    /* a terminal-title escape: ESC ] 0 ; title BEL */
    expect("a\x1b]0;owned\x07.wav", "a\\x1b]0;owned\\x07.wav");
    expect("line1\nline2\r\tx", "line1\\nline2\\r\\tx");
    expect("del\x7f", "del\\x7f");
    expect("", "");
    expect(NULL, "");
}
END_TEST

START_TEST(valid_utf8_is_kept)
{
    expect("caf\xc3\xa9 \xe2\x82\xac \xf0\x9f\x93\xbb", "caf\xc3\xa9 \xe2\x82\xac \xf0\x9f\x93\xbb"); /* é € 📻 */
    expect("back\\slash", "back\\slash");
    ck_assert(ml_is_printable("caf\xc3\xa9.wav"));
    ck_assert(!ml_is_printable("a\x1b"));
}
END_TEST

START_TEST(invalid_utf8_is_escaped_per_byte)
{
    expect("\xff", "\\xff");
    expect("\xc0\xaf", "\\xc0\\xaf");             /* overlong '/' (table 3-7: C0 never valid) */
    expect("\xed\xa0\x80", "\\xed\\xa0\\x80");     /* a surrogate, U+D800 */
    expect("\xf4\x90\x80\x80", "\\xf4\\x90\\x80\\x80"); /* above U+10FFFF */
    expect("\xe2\x82", "\\xe2\\x82");             /* cut sequence at the end */
    expect("\x80x", "\\x80x");                    /* stray continuation byte */
}
END_TEST

START_TEST(hidden_code_points_are_escaped)
{
    expect("\xc2\x9b" "2J", "\\u009b2J");           /* C1 CSI */
    expect("gnp.\xe2\x80\xae" "exe", "gnp.\\u202eexe"); /* right-to-left override */
    expect("\xe2\x81\xa6x\xe2\x81\xa9", "\\u2066x\\u2069");
    expect("a\xe2\x80\xa8" "b", "a\\u2028b");       /* line separator */
}
END_TEST

START_TEST(cut_copies_end_in_dots_on_whole_units)
{
    char out[8];
    /* "\x1b" becomes 4 characters: room for 7 - 3 = 4 before "..." */
    size_t n = ml_printable(out, sizeof out, "ab\x1b" "cdef");
    ck_assert_uint_eq(n, 2 + 4 + 4);
    ck_assert_str_eq(out, "ab...");
    n = ml_printable(out, sizeof out, "abc\xc3\xa9xyz"); /* 8 bytes: the 2-byte e-acute does not fit in 4 */
    ck_assert_uint_eq(n, 8);
    ck_assert_str_eq(out, "abc...");
    ck_assert_uint_eq(ml_printable(out, sizeof out, "abcdefg"), 7); /* fits exactly */
    ck_assert_str_eq(out, "abcdefg");
    char two[2];
    ml_printable(two, sizeof two, "xyz");
    ck_assert_str_eq(two, ".");
    ck_assert_uint_eq(ml_printable(NULL, 0, "\x01"), 4);
    char *d = ml_printable_dup("x\ny");
    ck_assert_str_eq(d, "x\\ny");
    free(d);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("io_printable");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, controls_are_escaped);
    tcase_add_test(tc, valid_utf8_is_kept);
    tcase_add_test(tc, invalid_utf8_is_escaped_per_byte);
    tcase_add_test(tc, hidden_code_points_are_escaped);
    tcase_add_test(tc, cut_copies_end_in_dots_on_whole_units);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(suite());
}
