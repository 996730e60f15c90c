#include <stdlib.h>

#include "lopside/input/parse.h"
#include "testutil.h"

/* Parses one number from `value` as the entry [s] k on line 7. */
static lop_status number(const char *value, bool allow_inf, double *out, lop_error *err)
{
    lop_config cfg = {.path = "t.ini"};
    lop_entry e = {.section = "s", .key = "k", .value = (char *)value, .line = 7};
    memset(err, 0, sizeof *err);
    return lop_parse_number(&cfg, &e, allow_inf, out, err);
}

START_TEST(numbers_are_plain_decimals)
{
    lop_error err;
    double v;
    ck_assert_int_eq(number("1e-3", false, &v, &err), LOP_OK);
    ck_assert_double_eq(v, 1e-3);
    ck_assert_int_eq(number("-2.5", false, &v, &err), LOP_OK);
    ck_assert_double_eq(v, -2.5);
    static const char *const bad[] = {"0.3x", "nan", "inf", "0x10", "", "1,2", "1e999", "--1"};
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        ck_assert_msg(number(bad[i], false, &v, &err) == LOP_EINPUT, "accepted `%s`", bad[i]);
        ck_assert_int_eq(err.line, 7);
        ck_assert_str_eq(err.key, "k");
    }
    ck_assert_int_eq(number("-inf", true, &v, &err), LOP_OK);
    ck_assert(isinf(v) && v < 0);
}
END_TEST

START_TEST(lists_split_at_commas_and_continuations)
{
    lop_config cfg = {.path = "t.ini"};
    lop_entry e = {.section = "s", .key = "k", .value = "1, 2,\n3\n4", .line = 1};
    lop_error err = {0};
    double *v;
    size_t n;
    ck_assert_int_eq(lop_parse_numbers(&cfg, &e, &v, &n, &err), LOP_OK);
    ck_assert_uint_eq(n, 4);
    ck_assert_double_eq(v[3], 4);
    free(v);
    e.value = "1,,2";
    ck_assert_int_eq(lop_parse_numbers(&cfg, &e, &v, &n, &err), LOP_EINPUT);
}
END_TEST

START_TEST(labels_must_be_distinct_words)
{
    lop_config cfg = {.path = "t.ini"};
    lop_entry e = {.section = "s", .key = "k", .value = "a, b, a", .line = 1};
    lop_error err = {0};
    lop_list list;
    ck_assert_int_eq(lop_parse_labels(&cfg, &e, &list, &err), LOP_EINPUT);
    ck_assert_ptr_nonnull(strstr(err.message, "duplicate label `a`"));
    memset(&err, 0, sizeof err);
    e.value = "ok, not ok";
    ck_assert_int_eq(lop_parse_labels(&cfg, &e, &list, &err), LOP_EINPUT);
}
END_TEST

Suite *suite_parse(void)
{
    Suite *s = suite_create("parse");
    TCase *tc = tcase_create("parse");
    tcase_add_test(tc, numbers_are_plain_decimals);
    tcase_add_test(tc, lists_split_at_commas_and_continuations);
    tcase_add_test(tc, labels_must_be_distinct_words);
    suite_add_tcase(s, tc);
    return s;
}
