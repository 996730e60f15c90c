#include <stdlib.h>

#include "testutil.h"

static lop_config *read_text(const char *text, lop_error *err)
{
    memset(err, 0, sizeof *err);
    return lop_config_read_text("t.ini", text, strlen(text), err);
}

START_TEST(entries_keep_their_lines)
{
    lop_error err;
    lop_config *cfg = read_text("; comment\n[problem]\ntitle = A\n\n[prior]\nweights = 1, 2\n",
                                &err);
    ck_assert_ptr_nonnull(cfg);
    const lop_entry *e = lop_config_find(cfg, "prior", "weights");
    ck_assert_ptr_nonnull(e);
    ck_assert_int_eq(e->line, 6);
    ck_assert_str_eq(e->value, "1, 2");
    ck_assert_int_eq(lop_config_section(cfg, "prior")->line, 5);
    lop_config_free(cfg);
}
END_TEST

START_TEST(continuation_lines_join_a_long_list)
{
    lop_error err;
    lop_config *cfg = read_text("[prior]\nweights = 1, 2,\n    3, 4\n  5\nx = 1\n", &err);
    ck_assert_ptr_nonnull(cfg);
    ck_assert_str_eq(lop_config_find(cfg, "prior", "weights")->value, "1, 2,\n3, 4\n5");
    ck_assert_int_eq(lop_config_find(cfg, "prior", "x")->line, 5);
    lop_config_free(cfg);
}
END_TEST

START_TEST(long_line_is_an_error_with_its_number)
{
    char *text = malloc(300);
    strcpy(text, "[prior]\nweights = 1");
    size_t n = strlen(text);
    for (int i = 0; i < 100; i++, n += 2)
        memcpy(text + n, ",1", 2);
    strcpy(text + n, "\n");
    lop_error err;
    ck_assert_ptr_null(read_text(text, &err));
    free(text);
    ck_assert_int_eq(err.status, LOP_EINPUT);
    ck_assert_int_eq(err.line, 2);
    ck_assert_ptr_nonnull(strstr(err.message, "limit is 198"));
}
END_TEST

START_TEST(a_line_of_exactly_the_limit_is_read)
{
    char text[300] = "[problem]\ntitle = ";
    size_t n = strlen("title = ");
    size_t at = strlen(text);
    memset(text + at, 'x', LOP_CONFIG_LINE_MAX - n);
    strcpy(text + at + LOP_CONFIG_LINE_MAX - n, "\n");
    lop_error err;
    lop_config *cfg = read_text(text, &err);
    ck_assert_msg(cfg != NULL, "%s", err.message);
    ck_assert_uint_eq(strlen(lop_config_find(cfg, "problem", "title")->value),
                      LOP_CONFIG_LINE_MAX - n);
    lop_config_free(cfg);
}
END_TEST

START_TEST(duplicate_key_names_both_lines)
{
    lop_error err;
    ck_assert_ptr_null(read_text("[a]\nk = 1\nj = 2\nk = 3\n", &err));
    ck_assert_int_eq(err.line, 4);
    ck_assert_ptr_nonnull(strstr(err.message, "first on line 2"));
}
END_TEST

START_TEST(nul_bytes_and_bad_utf8_are_rejected)
{
    lop_error err;
    memset(&err, 0, sizeof err);
    ck_assert_ptr_null(lop_config_read_text("t.ini", "[a]\nk = 1\0x\n", 11, &err));
    ck_assert_int_eq(err.line, 2);
    ck_assert_ptr_null(read_text("[a]\nk = \xff\n", &err));
    ck_assert_ptr_nonnull(strstr(err.message, "UTF-8"));
}
END_TEST

START_TEST(line_without_equals_is_reported)
{
    lop_error err;
    ck_assert_ptr_null(read_text("[a]\nk = 1\njust words\n", &err));
    ck_assert_int_eq(err.line, 3);
}
END_TEST

START_TEST(crlf_and_bom_are_accepted)
{
    lop_error err;
    lop_config *cfg = read_text("\xef\xbb\xbf[a]\r\nk = 1\r\n", &err);
    ck_assert_ptr_nonnull(cfg);
    ck_assert_str_eq(lop_config_find(cfg, "a", "k")->value, "1");
    lop_config_free(cfg);
}
END_TEST

Suite *suite_config(void)
{
    Suite *s = suite_create("config");
    TCase *tc = tcase_create("config");
    tcase_add_test(tc, entries_keep_their_lines);
    tcase_add_test(tc, continuation_lines_join_a_long_list);
    tcase_add_test(tc, long_line_is_an_error_with_its_number);
    tcase_add_test(tc, a_line_of_exactly_the_limit_is_read);
    tcase_add_test(tc, duplicate_key_names_both_lines);
    tcase_add_test(tc, nul_bytes_and_bad_utf8_are_rejected);
    tcase_add_test(tc, line_without_equals_is_reported);
    tcase_add_test(tc, crlf_and_bom_are_accepted);
    suite_add_tcase(s, tc);
    return s;
}
