/* The key table: every section and key of the format (README, "The problem file") is
 * found, the printed reference lists nothing the lookup misses, and misspellings get
 * the nearest known name by edit distance. */
#include <stdio.h>
#include <stdlib.h>

#include "lopside/input/keys.h"
#include "testutil.h"

/* The sections of the format and whether [kind.NAME] is allowed or required, as the
 * README describes them ([evidence.NAME] per channel, [prior.NAME] mixture parts,
 * [sweep.NAME], [design.NAME] and [rule.NAME] always named). */
static const struct {
    const char *kind;
    bool named, name_required;
} format_sections[] = {
    {"problem", false, false}, {"states", false, false},  {"prior", true, false},
    {"evidence", true, false}, {"actions", false, false}, {"loss", false, false},
    {"payoff", false, false},  {"value", false, false},   {"sweep", true, true},
    {"design", true, true},    {"rule", true, true},      {"simulate", false, false},
    {"output", false, false},
};

START_TEST(every_section_of_the_format_is_known)
{
    for (size_t i = 0; i < sizeof format_sections / sizeof *format_sections; i++) {
        const lop_section_spec *spec = lop_keys_section(format_sections[i].kind);
        ck_assert_msg(spec != NULL, "[%s] unknown", format_sections[i].kind);
        ck_assert_str_eq(spec->kind, format_sections[i].kind);
        ck_assert_int_eq(spec->named, format_sections[i].named);
        ck_assert_int_eq(spec->name_required, format_sections[i].name_required);
        ck_assert(spec->help && spec->help[0]);
    }
    ck_assert_ptr_null(lop_keys_section("sweeps"));
    ck_assert_ptr_null(lop_keys_section(""));
}
END_TEST

/* Keys of the README's examples, one or more per section. */
START_TEST(keys_of_the_examples_are_found)
{
    static const char *const known[][2] = {
        {"problem", "title"},      {"problem", "score_unit"}, {"states", "labels"},
        {"states", "from"},        {"states", "step"},        {"prior", "weights"},
        {"prior", "family"},       {"prior", "low"},          {"evidence", "outcomes"},
        {"evidence", "noise"},     {"evidence", "weber"},     {"evidence", "observed"},
        {"evidence", "repeats"},   {"actions", "labels"},     {"actions", "estimate"},
        {"loss", "curve"},         {"loss", "under"},         {"loss", "cuts"},
        {"payoff", "curve"},       {"rule", "kind"},          {"value", "up_to"},
        {"value", "cost"},         {"sweep", "x"},            {"sweep", "x_points"},
        {"design", "vary"},        {"design", "goal"},        {"simulate", "sessions"},
        {"simulate", "rules"},     {"output", "workbook"},
    };
    for (size_t i = 0; i < sizeof known / sizeof *known; i++) {
        const lop_key_spec *k = lop_keys_find(known[i][0], known[i][1]);
        ck_assert_msg(k != NULL, "[%s] %s unknown", known[i][0], known[i][1]);
        ck_assert_str_eq(k->kind, known[i][0]);
        ck_assert_str_eq(k->key, known[i][1]);
    }
    /* A key of one section is not a key of another. */
    ck_assert_ptr_null(lop_keys_find("problem", "weights"));
    ck_assert_ptr_null(lop_keys_find("nosuch", "title"));
}
END_TEST

/* `given.STATE` rows match any non-empty state name; action rows of [loss] and the paths
 * of a believed [rule.NAME] are free-form and left to the caller. */
START_TEST(patterns_and_free_form_keys)
{
    const lop_key_spec *g = lop_keys_find("evidence", "given.contaminated");
    ck_assert_ptr_nonnull(g);
    ck_assert_str_eq(g->key, "given.*");
    ck_assert_ptr_null(lop_keys_find("evidence", "given."));
    ck_assert_ptr_null(lop_keys_find("evidence", "given"));
    ck_assert_ptr_null(lop_keys_find("evidence", "givenx"));
    ck_assert_ptr_null(lop_keys_find("loss", "discard"));
    ck_assert_ptr_null(lop_keys_find("loss", "*"));
    ck_assert_ptr_null(lop_keys_find("rule", "PATH"));
    ck_assert_ptr_nonnull(lop_keys_find("loss", "cuts"));
}
END_TEST

/* Misspellings within the edit-distance limit (Levenshtein, case-insensitive: a
 * transposition is 2) get the nearest key; far ones get none. */
START_TEST(unknown_keys_get_the_nearest_known_key)
{
    static const char *const cases[][3] = {
        {"problem", "titel", "title"},   {"problem", "TITLE", "title"},
        {"prior", "sdd", "sd"},          {"evidence", "repeat", "repeats"},
        {"evidence", "obsevred", "observed"}, {"states", "point", "points"},
        {"simulate", "sesions", "sessions"},  {"sweep", "x_pionts", "x_points"},
        {"loss", "curv", "curve"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        ck_assert_ptr_null(lop_keys_find(cases[i][0], cases[i][1]));
        const char *near = lop_keys_suggest(cases[i][0], cases[i][1]);
        ck_assert_msg(near != NULL, "no suggestion for %s", cases[i][1]);
        ck_assert_str_eq(near, cases[i][2]);
    }
    ck_assert_ptr_null(lop_keys_suggest("problem", "zzzzzzzz"));
    ck_assert_ptr_null(lop_keys_suggest("prior", "xy"));
    ck_assert_ptr_null(lop_keys_suggest("nosuch", "title"));
    /* The placeholders are never offered. */
    const char *near = lop_keys_suggest("rule", "PATH");
    ck_assert(near == NULL || strcmp(near, "PATH") != 0);
    near = lop_keys_suggest("loss", "*");
    ck_assert(near == NULL || strcmp(near, "*") != 0);
}
END_TEST

START_TEST(unknown_sections_get_the_nearest_known_section)
{
    static const char *const cases[][2] = {
        {"evidense", "evidence"}, {"prio", "prior"},     {"Payof", "payoff"},
        {"acions", "actions"},    {"simulation", "simulate"}, {"outptu", "output"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        const char *near = lop_keys_suggest_section(cases[i][0]);
        ck_assert_msg(near != NULL, "no suggestion for %s", cases[i][0]);
        ck_assert_str_eq(near, cases[i][1]);
    }
    ck_assert_ptr_null(lop_keys_suggest_section("xyzzyq"));
}
END_TEST

/* The reference `lopside keys` prints: a "[kind]  help" line per section, "(also
 * [kind.NAME])" for named ones, and "  key  help (type, default)" lines. Every line must name what the
 * lookups find, with the same help text; every format section must appear. */
START_TEST(printed_reference_agrees_with_the_lookups)
{
    char *text = NULL;
    size_t len = 0;
    FILE *out = open_memstream(&text, &len);
    ck_assert_ptr_nonnull(out);
    lop_keys_print_reference(out, false);
    fclose(out);
    const lop_section_spec *section = NULL;
    size_t n_sections = 0, n_keys = 0, n_named = 0;
    for (char *line = strtok(text, "\n"); line; line = strtok(NULL, "\n")) {
        char name[64];
        if (line[0] == '[') {
            ck_assert_int_eq(sscanf(line, "[%63[^]]]", name), 1);
            section = lop_keys_section(name);
            ck_assert_msg(section != NULL, "printed section [%s] is unknown", name);
            ck_assert_str_eq(line + strlen(name) + 4, section->help);
            n_sections++;
            continue;
        }
        if (line[0] != ' ' || !section)
            continue;
        if (strstr(line, "(also [")) {
            ck_assert(section->named);
            n_named++;
            continue;
        }
        ck_assert_int_eq(sscanf(line, " %63s", name), 1);
        const char *help = line + 2 + strlen(name);
        while (*help == ' ')
            help++;
        n_keys++;
        if (strcmp(name, "ACTION") == 0 || strcmp(name, "PATH") == 0)
            continue; /* free-form rows: checked by the problem builder */
        char probe[80];
        snprintf(probe, sizeof probe, "%s", name);
        size_t n = strlen(name);
        if (n >= 2 && strcmp(name + n - 2, ".*") == 0)
            strcpy(probe + n - 1, "x");
        const lop_key_spec *k = lop_keys_find(section->kind, probe);
        ck_assert_msg(k != NULL, "printed key [%s] %s is not found", section->kind, name);
        ck_assert_str_eq(k->key, name);
        /* the help, then its type, allowed values and default in parentheses */
        ck_assert_msg(strncmp(help, k->help, strlen(k->help)) == 0, "[%s] %s: printed `%s`",
                      section->kind, name, help);
    }
    free(text);
    ck_assert_uint_eq(n_sections, sizeof format_sections / sizeof *format_sections);
    ck_assert_uint_eq(n_named, 5); /* prior, evidence, sweep, design, rule */
    ck_assert_uint_gt(n_keys, 100);
}
END_TEST

Suite *suite_keys(void)
{
    Suite *s = suite_create("keys");
    TCase *tc = tcase_create("keys");
    tcase_add_test(tc, every_section_of_the_format_is_known);
    tcase_add_test(tc, keys_of_the_examples_are_found);
    tcase_add_test(tc, patterns_and_free_form_keys);
    tcase_add_test(tc, unknown_keys_get_the_nearest_known_key);
    tcase_add_test(tc, unknown_sections_get_the_nearest_known_section);
    tcase_add_test(tc, printed_reference_agrees_with_the_lookups);
    suite_add_tcase(s, tc);
    return s;
}
