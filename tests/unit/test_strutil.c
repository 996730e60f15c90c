#include <math.h>
#include <stdlib.h>

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

START_TEST(nearest_suggests_only_close_choices)
{
    char *options[] = {"json", "workbook", "csv", "quiet"};
    ck_assert_str_eq(lop_nearest("jsn", options, 4), "json");        /* one deletion */
    ck_assert_str_eq(lop_nearest("workbok", options, 4), "workbook"); /* one insertion */
    ck_assert_str_eq(lop_nearest("QUIET", options, 4), "quiet");      /* case is free */
    ck_assert_ptr_null(lop_nearest("zzzzzz", options, 4));            /* nothing near */
    ck_assert_ptr_null(lop_nearest("js", options, 0));
}
END_TEST

/* The texts wanted are Python's repr of the same doubles (its repr is the shortest decimal
 * that reads back, with the closest such text among ties); C writes 1e-05 where Python does
 * too, and -0 where Python writes -0.0. */
START_TEST(shortest_number_reads_back_and_is_shortest)
{
    char buf[LOP_NUMBER_MAX];
    ck_assert_str_eq(lop_shortest_number(0.05, buf, sizeof buf), "0.05");
    ck_assert_str_eq(lop_shortest_number(0.1 + 0.2, buf, sizeof buf), "0.30000000000000004");
    ck_assert_str_eq(lop_shortest_number(1.0 / 3.0, buf, sizeof buf), "0.3333333333333333");
    ck_assert_str_eq(lop_shortest_number(2.0 / 3.0, buf, sizeof buf), "0.6666666666666666");
    ck_assert_str_eq(lop_shortest_number(-1.0 / 3.0, buf, sizeof buf), "-0.3333333333333333");
    ck_assert_str_eq(lop_shortest_number(1e-5, buf, sizeof buf), "1e-05");
    ck_assert_str_eq(lop_shortest_number(1e23, buf, sizeof buf), "1e+23");
    ck_assert_str_eq(lop_shortest_number(9.95641, buf, sizeof buf), "9.95641");
    ck_assert_str_eq(lop_shortest_number(4.9406564584124654e-324, buf, sizeof buf), "5e-324");
    ck_assert_str_eq(lop_shortest_number(-0.0, buf, sizeof buf), "-0");
    /* Every double must come back whole: a spread of magnitudes and awkward fractions. */
    for (int k = -300; k <= 300; k += 7) {
        double v = (1.0 + 1.0 / (k + 1000.5)) * pow(10.0, k);
        ck_assert(strtod(lop_shortest_number(v, buf, sizeof buf), NULL) == v);
    }
}
END_TEST

Suite *suite_strutil(void)
{
    Suite *s = suite_create("strutil");
    TCase *tc = tcase_create("strutil");
    tcase_add_test(tc, utf8_accepts_text_and_rejects_garbage);
    tcase_add_test(tc, edit_distance_counts_single_edits);
    tcase_add_test(tc, nearest_suggests_only_close_choices);
    tcase_add_test(tc, shortest_number_reads_back_and_is_shortest);
    suite_add_tcase(s, tc);
    return s;
}
