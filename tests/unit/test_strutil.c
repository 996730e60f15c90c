#include "lopside/util/strutil.h"
#include "testutil.h"

START_TEST(utf8_accepts_text_and_rejects_garbage)
{
    ck_assert(lop_utf8_valid("plain ascii", 11));
    ck_assert(lop_utf8_valid("d\xe2\x80\xb2 = 1.5", 9)); /* d′ */
    ck_assert(!lop_utf8_valid("\xff\xfe", 2));
    ck_assert(!lop_utf8_valid("\xc0\xaf", 2));          /* overlong '/' */
    ck_assert(!lop_utf8_valid("\xed\xa0\x80", 3));      /* surrogate */
    ck_assert(!lop_utf8_valid("\xe2\x80", 2));          /* truncated */
}
END_TEST

START_TEST(edit_distance_counts_single_edits)
{
    ck_assert_uint_eq(lop_edit_distance("weights", "weights"), 0);
    ck_assert_uint_eq(lop_edit_distance("wieghts", "weights"), 2);
    ck_assert_uint_eq(lop_edit_distance("sd", "SD"), 0);
    ck_assert_uint_eq(lop_edit_distance("kitten", "sitting"), 3); /* textbook example */
    ck_assert(lop_close_enough(1, 5));
    ck_assert(!lop_close_enough(4, 6));
}
END_TEST

Suite *suite_strutil(void)
{
    Suite *s = suite_create("strutil");
    TCase *tc = tcase_create("strutil");
    tcase_add_test(tc, utf8_accepts_text_and_rejects_garbage);
    tcase_add_test(tc, edit_distance_counts_single_edits);
    suite_add_tcase(s, tc);
    return s;
}
