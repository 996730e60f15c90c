/* Paths: `section.key` and `section.key[i]` change exactly one number of a config (the
 * contract in path.h), and a path that names nothing is an input error at the line of
 * the entry that gave it, leaving the config as it was. */
#include <stdio.h>
#include <stdlib.h>

#include "lopside/input/path.h"
#include "testutil.h"

static const char file[] = "[problem]\n"           /* 1 */
                           "title = t\n"           /* 2 */
                           "[prior]\n"             /* 3 */
                           "sd = 2\n"              /* 4 */
                           "mean = 0\n"            /* 5 */
                           "[evidence]\n"          /* 6 */
                           "sd = 1\n"              /* 7 */
                           "[evidence.swab]\n"     /* 8 */
                           "sd = 3\n"              /* 9 */
                           "[payoff]\n"            /* 10 */
                           "yes = 1, 2,\n"         /* 11 */
                           "  3\n"                 /* 12 */
                           "no = 4, 5, 6\n";       /* 13 */

/* Checks that cfg holds the entries of `file`, but section/key has value `changed`
 * (NULL: nothing changed), and every other entry kept its value and line (path.h does
 * not say which line a changed entry takes; the tests below say it where it matters). */
static void assert_only_changed(const lop_config *cfg, const char *section, const char *key,
                                const char *changed)
{
    lop_config *orig = test_config(file);
    ck_assert_uint_eq(cfg->n_entries, orig->n_entries);
    for (size_t i = 0; i < orig->n_entries; i++) {
        const lop_entry *o = &orig->entries[i];
        const lop_entry *e = lop_config_find(cfg, o->section, o->key);
        ck_assert_msg(e != NULL, "[%s] %s lost", o->section, o->key);
        bool target = changed && strcmp(o->section, section) == 0 && strcmp(o->key, key) == 0;
        if (!target)
            ck_assert_int_eq(e->line, o->line);
        ck_assert_str_eq(e->value, target ? changed : o->value);
    }
    lop_config_free(orig);
}

/* Where the tests' paths are given: key x of [sweep.s], line 20. */
static const lop_path_site site = {"sweep.s", "x", 20};

/* Parses path and sets it to value; returns the status. */
static lop_status set(lop_config *cfg, const char *path, const char *value, lop_error *err)
{
    memset(err, 0, sizeof *err);
    lop_path parsed;
    lop_status st = lop_path_parse(cfg, path, &site, &parsed, err);
    return st == LOP_OK ? lop_path_set(cfg, &parsed, value, &site, err) : st;
}

/* Sets path to value in a fresh config of `file` and checks that only section/key
 * changed, to `want`. */
static void check_set(const char *path, const char *value, const char *section,
                      const char *key, const char *want)
{
    lop_config *cfg = test_config(file);
    lop_error err;
    ck_assert_msg(set(cfg, path, value, &err) == LOP_OK, "%s: %s", path, err.message);
    assert_only_changed(cfg, section, key, want);
    lop_config_free(cfg);
}

START_TEST(a_whole_key_changes_alone)
{
    check_set("prior.sd", "2.5", "prior", "sd", "2.5");
}
END_TEST

/* `evidence.swab.sd` could be [evidence] key `swab.sd` or [evidence.swab] key `sd`:
 * the longest section present wins. */
START_TEST(the_longest_section_present_wins)
{
    check_set("evidence.swab.sd", "7", "evidence.swab", "sd", "7");
    check_set("evidence.sd", "0.5", "evidence", "sd", "0.5");
}
END_TEST

/* `key[i]` changes the i-th entry (from 1) of a list, the others kept, also across a
 * continuation line; the entry keeps its line. */
START_TEST(an_indexed_path_changes_one_entry)
{
    check_set("payoff.no[2]", "-9", "payoff", "no", "4, -9, 6");
    check_set("payoff.no[1]", "0.5", "payoff", "no", "0.5, 5, 6");
    lop_config *cfg = test_config(file);
    lop_error err;
    ck_assert_int_eq(set(cfg, "payoff.yes[3]", "30", &err), LOP_OK);
    assert_only_changed(cfg, "payoff", "yes", "1, 2, 30");
    ck_assert_int_eq(lop_config_find(cfg, "payoff", "yes")->line, 11);
    lop_config_free(cfg);
}
END_TEST

/* A whole key absent from its section is added there (a sweep of a key left at its
 * default), at the line of the entry that gave the path; whether the key exists in the
 * format is the problem builder's check. */
START_TEST(an_absent_whole_key_is_added_at_the_paths_line)
{
    lop_config *cfg = test_config(file);
    lop_error err;
    ck_assert_int_eq(set(cfg, "prior.median", "4", &err), LOP_OK);
    const lop_entry *e = lop_config_find(cfg, "prior", "median");
    ck_assert_ptr_nonnull(e);
    ck_assert_str_eq(e->value, "4");
    ck_assert_int_eq(e->line, 20);
    ck_assert_str_eq(lop_config_find(cfg, "prior", "sd")->value, "2");
    lop_config_free(cfg);
}
END_TEST

/* Paths naming nothing: an input error at the giving entry's line, in its section and
 * key, naming the path and the reason; the config unchanged. */
START_TEST(bad_paths_are_errors_at_the_giving_line)
{
    static const char *const cases[][2] = {
        {"priors.sd", "names no section"},
        {"sd", "names no section"},
        {"prior.", "names no key"},
        {"payoff.yes[0]", "a whole number from 1"},
        {"payoff.yes[-1]", "a whole number from 1"},
        {"payoff.yes[x]", "a whole number from 1"},
        {"payoff.yes[2]x", "a whole number from 1"},
        {"payoff.yes[2", "a whole number from 1"},
        {"payoff.yes[ 2]", "a whole number from 1"},
        {"payoff.yes[+2]", "a whole number from 1"},
        {"payoff.yes[4]", "names entry 4, but [payoff] yes has 3 entries"},
        {"payoff.maybe[1]", "has no key `maybe`"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        lop_config *cfg = test_config(file);
        lop_error err;
        ck_assert_int_eq(set(cfg, cases[i][0], "1", &err), LOP_EINPUT);
        test_check_error(&err, 20, "sweep.s", "x", cases[i][1]);
        ck_assert_msg(strstr(err.message, cases[i][0]) != NULL, "the path is named: %s",
                      err.message);
        assert_only_changed(cfg, NULL, NULL, NULL);
        lop_config_free(cfg);
    }
}
END_TEST

/* The last part of a path names an axis: its key, with the index when it has one; the
 * whole path reads back as written. */
START_TEST(path_key_is_the_last_part)
{
    static const char *const cases[][2] = {
        {"payoff.yes[1]", "yes[1]"},
        {"evidence.swab.sd", "sd"},
        {"prior.sd", "sd"},
    };
    lop_config *cfg = test_config(file);
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        lop_path path;
        lop_error err = {0};
        ck_assert_int_eq(lop_path_parse(cfg, cases[i][0], &site, &path, &err), LOP_OK);
        char buf[LOP_PATH_PART * 2 + 32];
        ck_assert_str_eq(lop_path_label(&path, buf, sizeof buf), cases[i][1]);
        ck_assert_str_eq(lop_path_text(&path, buf, sizeof buf), cases[i][0]);
    }
    lop_config_free(cfg);
}
END_TEST

Suite *suite_path(void)
{
    Suite *s = suite_create("path");
    TCase *tc = tcase_create("path");
    tcase_add_test(tc, a_whole_key_changes_alone);
    tcase_add_test(tc, the_longest_section_present_wins);
    tcase_add_test(tc, an_indexed_path_changes_one_entry);
    tcase_add_test(tc, an_absent_whole_key_is_added_at_the_paths_line);
    tcase_add_test(tc, bad_paths_are_errors_at_the_giving_line);
    tcase_add_test(tc, path_key_is_the_last_part);
    suite_add_tcase(s, tc);
    return s;
}
