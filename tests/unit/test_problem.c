/* Building problems from INI text: states (labels, values, grids), the prior, scores
 * stored as losses, channels, estimate grids, and input errors carrying file:line. */
#include <stdio.h>
#include <stdlib.h>

#include "testutil.h"

/* Lines 1-11; the cases below change one of them or add sections after line 11. */
static const char base[] = "[problem]\n"          /* 1 */
                           "title = t\n"          /* 2 */
                           "[states]\n"           /* 3 */
                           "labels = a, b\n"      /* 4 */
                           "[prior]\n"            /* 5 */
                           "weights = 1, 1\n"     /* 6 */
                           "[actions]\n"          /* 7 */
                           "labels = x, y\n"      /* 8 */
                           "[loss]\n"             /* 9 */
                           "x = 0, 1\n"           /* 10 */
                           "y = 1, 0\n";          /* 11 */

/* Writes base with the first `find` replaced by `replace`, then `tail`, to text. */
static void edited(const char *find, const char *replace, const char *tail, char *text,
                   size_t size)
{
    const char *at = find ? strstr(base, find) : NULL;
    ck_assert(!find || at);
    if (!at)
        snprintf(text, size, "%s%s", base, tail);
    else
        snprintf(text, size, "%.*s%s%s%s", (int)(at - base), base, replace, at + strlen(find),
                 tail);
}

/* Returns the problem of base edited as above; fails the test when invalid. */
static lop_problem *edited_problem(const char *find, const char *replace, const char *tail)
{
    char text[2048];
    edited(find, replace, tail, text, sizeof text);
    return test_problem(text);
}

/* Weights are normalized by their sum (kept for reports); a weight of 0 has log -inf. */
START_TEST(finite_states_take_normalized_weights)
{
    lop_problem *p = edited_problem("labels = a, b\n[prior]\nweights = 1, 1\n[actions]\n"
                                    "labels = x, y\n[loss]\nx = 0, 1\ny = 1, 0\n",
                                    "labels = a, b, c\n[prior]\nweights = 3, 1, 0\n[actions]\n"
                                    "labels = x, y\n[loss]\nx = 0, 1, 2\ny = 1, 0, 5\n",
                                    "");
    ck_assert_int_eq(p->states_kind, LOP_STATES_LABELS);
    ck_assert_uint_eq(p->n_states, 3);
    ck_assert_str_eq(p->state_labels[2], "c");
    ck_assert(!lop_problem_numeric_states(p));
    ck_assert_close(p->prior[0], 0.75, 1e-16);
    ck_assert_close(p->prior[1], 0.25, 1e-16);
    ck_assert_double_eq(p->prior[2], 0);
    ck_assert_close(p->log_prior[0], log(0.75), 1e-16);
    ck_assert(p->log_prior[2] == -INFINITY);
    ck_assert_double_eq(p->prior_given_sum, 4);
    ck_assert_uint_eq(p->n_actions, 2);
    ck_assert_str_eq(p->actions[1], "y");
    ck_assert(!p->payoff);
    ck_assert_str_eq(lop_problem_orientation(p), "loss");
    ck_assert_double_eq(lop_problem_loss(p, 0, 2), 2);
    ck_assert_double_eq(lop_problem_loss(p, 1, 2), 5);
    ck_assert_double_eq(lop_problem_oriented(p, 5), 5);
    ck_assert_str_eq(p->title, "t");
    lop_problem_free(p);
}
END_TEST

/* A payoff file is negated once into losses; reports turn them back. */
START_TEST(payoffs_are_stored_negated)
{
    lop_problem *p = edited_problem("[loss]\nx = 0, 1\ny = 1, 0\n",
                                    "[payoff]\nx = 4, -2.5\ny = 0, 8\n", "");
    ck_assert(p->payoff);
    ck_assert_str_eq(lop_problem_orientation(p), "payoff");
    ck_assert_double_eq(lop_problem_loss(p, 0, 0), -4);
    ck_assert_double_eq(lop_problem_loss(p, 0, 1), 2.5);
    ck_assert_double_eq(lop_problem_loss(p, 1, 1), -8);
    ck_assert_double_eq(lop_problem_oriented(p, lop_problem_loss(p, 1, 1)), 8);
    lop_problem_free(p);
}
END_TEST

/* Numeric states: values in increasing order, each also kept as written. */
START_TEST(value_states_are_numbers_and_labels)
{
    lop_problem *p = edited_problem("labels = a, b\n[prior]\nweights = 1, 1\n"
                                    "[actions]\nlabels = x, y\n[loss]\nx = 0, 1\ny = 1, 0\n",
                                    "values = 1, 2.5, 4e1\n[prior]\nweights = 1, 1, 2\n"
                                    "[actions]\nlabels = x, y\n[loss]\nx = 0, 1, 1\n"
                                    "y = 1, 0, 0\n",
                                    "");
    ck_assert_int_eq(p->states_kind, LOP_STATES_VALUES);
    ck_assert(lop_problem_numeric_states(p));
    ck_assert_double_eq(p->state_values[1], 2.5);
    ck_assert_double_eq(p->state_values[2], 40);
    ck_assert_str_eq(p->state_labels[2], "4e1");
    ck_assert_close(p->prior[2], 0.5, 1e-16);
    lop_problem_free(p);
}
END_TEST

/* A grid from `from` to `to`: with `step` h, (to - from)/h + 1 points; with `points` n,
 * the step (to - from)/(n - 1); the last point is `to` itself. */
START_TEST(grid_states_from_to_step_or_points)
{
    static const char prior[] = "[prior]\nfamily = uniform\n";
    static const char tail[] = "[actions]\nestimate = yes\n[loss]\ncurve = squared\n";
    char text[1024];
    snprintf(text, sizeof text, "[problem]\ntitle = t\n[states]\nfrom = 1\nto = 3\nstep = 0.25\n%s%s",
             prior, tail);
    lop_problem *p = test_problem(text);
    ck_assert_int_eq(p->states_kind, LOP_STATES_GRID);
    ck_assert_uint_eq(p->n_states, 9);
    ck_assert_double_eq(p->step, 0.25);
    for (size_t i = 0; i < 9; i++)
        ck_assert_double_eq(p->state_values[i], 1 + 0.25 * (double)i); /* exact in binary */
    /* A uniform prior on the grid: half cells at the ends (cells end at the range). */
    ck_assert_close(p->prior[0], 0.125 / 2, 1e-15);
    ck_assert_close(p->prior[4], 0.125, 1e-15);
    lop_problem_free(p);

    snprintf(text, sizeof text, "[problem]\ntitle = t\n[states]\nfrom = 0\nto = 1\npoints = 11\n%s%s",
             prior, tail);
    p = test_problem(text);
    ck_assert_uint_eq(p->n_states, 11);
    ck_assert_close(p->step, 0.1, 1e-16);
    for (size_t i = 0; i < 11; i++)
        ck_assert_close(p->state_values[i], (double)i / 10, 1e-15);
    ck_assert_double_eq(p->state_values[10], 1);
    /* Estimates default to the states' grid. */
    ck_assert(p->estimate);
    ck_assert(!p->estimates_given);
    ck_assert_uint_eq(p->n_estimates, 11);
    lop_problem_free(p);

    /* Neither: 1001 points, the default the key table states. */
    snprintf(text, sizeof text, "[problem]\ntitle = t\n[states]\nfrom = 0\nto = 1\n%s%s", prior,
             tail);
    p = test_problem(text);
    ck_assert_uint_eq(p->n_states, 1001);
    lop_problem_free(p);
}
END_TEST

/* [problem] refine halves the step that many times (negative: doubles it), so 10 cells
 * become 10·2^r, rounded up to at least one cell below 0. */
START_TEST(refine_multiplies_the_cells)
{
    ck_assert_double_eq(lop_problem_refined_cells(10, 0), 10);
    ck_assert_double_eq(lop_problem_refined_cells(10, 2), 40);
    ck_assert_double_eq(lop_problem_refined_cells(10, -1), 5);
    ck_assert_double_eq(lop_problem_refined_cells(10, -2), 3);
    ck_assert_double_eq(lop_problem_refined_cells(1, -2), 1);
    lop_problem *p = test_problem("[problem]\ntitle = t\nrefine = 1\n[states]\nfrom = 0\nto = 1\n"
                                  "points = 11\n[prior]\nfamily = uniform\n"
                                  "[actions]\nestimate = yes\n[loss]\ncurve = squared\n");
    ck_assert_uint_eq(p->n_states, 21);
    ck_assert_close(p->step, 0.05, 1e-16);
    lop_problem_free(p);
}
END_TEST

/* An estimate grid from..to with n points is evenly spaced. */
START_TEST(estimate_grid_is_evenly_spaced)
{
    lop_problem *p = test_problem("[problem]\ntitle = t\n[states]\nvalues = 0, 1, 2\n"
                                  "[prior]\nweights = 1, 1, 1\n[actions]\nestimate = yes\n"
                                  "from = -1\nto = 3\npoints = 9\n[loss]\ncurve = absolute\n");
    ck_assert(p->estimates_given);
    ck_assert_uint_eq(p->n_estimates, 9);
    for (size_t i = 0; i < 9; i++)
        ck_assert_double_eq(p->estimates[i], -1 + 0.5 * (double)i);
    ck_assert_int_eq(p->curve.kind, LOP_CURVE_ABSOLUTE);
    ck_assert_double_eq(p->curve.scale, 1);
    lop_problem_free(p);
}
END_TEST

/* A numeric channel over a grid measures r(s) (here 1 + 2s) with its noise; scalar
 * noise has sd = max(weber·r(s), sd_floor) (Weber's law, common practice). */
START_TEST(channels_measure_the_response_with_their_noise)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nfrom = 0\nto = 10\npoints = 11\n"
        "[prior]\nfamily = uniform\n"
        "[evidence.dial]\nnoise = gaussian\nsd = 0.5\nresponse = linear\noffset = 1\nslope = 2\n"
        "repeats = 3\nobserved = 4, 5.5, 6\n"
        "[evidence.clock]\nnoise = scalar\nweber = 0.1\nsd_floor = 0.3\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n");
    ck_assert_uint_eq(p->n_channels, 2);
    ck_assert_uint_eq(lop_problem_numeric_channels(p), 2);
    const lop_channel *dial = &p->channels[0], *clock = &p->channels[1];
    ck_assert_str_eq(dial->name, "dial");
    ck_assert_str_eq(dial->section, "evidence.dial");
    ck_assert_int_eq(dial->line, 9);
    ck_assert_uint_eq(dial->repeats, 3);
    ck_assert_uint_eq(dial->n_observed, 3);
    ck_assert_double_eq(dial->observed_value[1], 5.5);
    for (size_t s = 0; s < 11; s++) {
        double r = (double)s;
        ck_assert_double_eq(dial->center[s], 1 + 2 * r);
        ck_assert_double_eq(dial->spread[s], 0.5);
        ck_assert_double_eq(clock->center[s], r);
        ck_assert_close(clock->spread[s], fmax(0.1 * r, 0.3), 1e-16);
    }
    lop_problem_free(p);
}
END_TEST

/* A table channel keeps P(outcome | state) row by row and the observed outcomes as
 * indices. */
START_TEST(table_channels_keep_their_rows_and_observations)
{
    lop_problem *p = edited_problem(NULL, NULL,
                                    "[evidence.swab]\noutcomes = clear, flagged, unclear\n"
                                    "given.b = 0.1, 0.8, 0.1\ngiven.a = 0.7, 0.1, 0.2\n"
                                    "repeats = 2\nobserved = unclear, clear\n");
    const lop_channel *c = &p->channels[0];
    ck_assert_int_eq(c->kind, LOP_CHANNEL_TABLE);
    ck_assert_uint_eq(c->n_outcomes, 3);
    ck_assert_str_eq(c->outcomes[2], "unclear");
    ck_assert_double_eq(c->given[0 * 3 + 0], 0.7);
    ck_assert_double_eq(c->given[1 * 3 + 1], 0.8);
    ck_assert_uint_eq(c->observed_outcome[0], 2);
    ck_assert_uint_eq(c->observed_outcome[1], 0);
    ck_assert_uint_eq(lop_problem_numeric_channels(p), 0);
    lop_problem_free(p);
}
END_TEST

/* Bad input: an input error naming test.ini, the line to change (counted in the text
 * above), section and key, formatted `test.ini:LINE: [section] key: message`. */
START_TEST(errors_carry_file_and_line)
{
    static const struct {
        const char *find, *replace, *tail;
        int line;
        const char *section, *key, *fragment;
    } cases[] = {
        {"weights = 1, 1", "weights = 1, -1", "", 6, "prior", "weights", "negative"},
        {"weights = 1, 1", "weights = 1, 1, 1", "", 6, "prior", "weights", "one weight per state"},
        {"weights = 1, 1", "weights = 0, 0", "", 6, "prior", "weights", "sum to 0"},
        {"weights = 1, 1", "weights = 1, 0.3x", "", 6, "prior", "weights", ""},
        {"title = t", "titel = t", "", 2, "problem", "titel", "did you mean `title`"},
        {"[prior]", "[prio]", "", 5, "prio", "", "did you mean [prior]"},
        {"labels = a, b", "labels = a, a", "", 4, "states", "labels", ""},
        {"x = 0, 1", "x = 0, 1, 2", "", 10, "loss", "x", "one value per state"},
        {"y = 1, 0", "yy = 1, 0", "", 11, "loss", "yy", "did you mean `y`"},
        {NULL, NULL, "[payoff]\nx = 1, 0\ny = 0, 1\n", 12, "payoff", "", "exactly one"},
        {NULL, NULL, "[evidence]\noutcomes = u, v\ngiven.a = 0.5, 0.4\ngiven.b = 0.5, 0.5\n", 14,
         "evidence", "given.a", "sum to"},
        {NULL, NULL, "[evidence]\noutcomes = u, v\ngiven.a = 0.5, 0.5\ngiven.bb = 0.5, 0.5\n", 15,
         "evidence", "given.bb", "did you mean `given.b`"},
        {NULL, NULL,
         "[evidence]\noutcomes = up, down\ngiven.a = 0.5, 0.5\ngiven.b = 0.5, 0.5\n"
         "observed = dwon\n",
         16, "evidence", "observed", "did you mean `down`"},
        {NULL, NULL, "[evidence]\nnoise = gaussian\nmean = 0, 1\nsd = 0\n", 15, "evidence", "sd",
         "must be > 0"},
        {NULL, NULL, "[evidence]\nnoise = poisson\nmean = 1, 2\n", 13, "evidence", "noise",
         "numeric states"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        char text[2048];
        edited(cases[i].find, cases[i].replace, cases[i].tail, text, sizeof text);
        lop_error err;
        ck_assert_int_eq(test_problem_error(text, &err), LOP_EINPUT);
        test_check_error(&err, cases[i].line, cases[i].section, cases[i].key, cases[i].fragment);
    }
}
END_TEST

/* A grid whose step does not divide the range, or whose end is not above its start, is
 * an error at that key's line. */
START_TEST(grid_errors_point_at_their_key)
{
    static const struct {
        const char *states;
        int line;
        const char *key, *fragment;
    } cases[] = {
        {"from = 0\nto = 1\nstep = 0.3\n", 6, "step", "does not divide"},
        {"from = 1\nto = 1\npoints = 5\n", 5, "to", "must be above"},
        {"from = 0\nto = 1\npoints = 5\nstep = 0.25\n", 7, "step", "not both"},
        {"from = 0\nto = 1\npoints = 1\n", 6, "points", ""},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        char text[1024];
        snprintf(text, sizeof text,
                 "[problem]\ntitle = t\n[states]\n%s[prior]\nfamily = uniform\n"
                 "[actions]\nestimate = yes\n[loss]\ncurve = squared\n",
                 cases[i].states);
        lop_error err;
        ck_assert_int_eq(test_problem_error(text, &err), LOP_EINPUT);
        test_check_error(&err, cases[i].line, "states", cases[i].key, cases[i].fragment);
    }
}
END_TEST

Suite *suite_problem(void)
{
    Suite *s = suite_create("problem");
    TCase *tc = tcase_create("problem");
    tcase_add_test(tc, finite_states_take_normalized_weights);
    tcase_add_test(tc, payoffs_are_stored_negated);
    tcase_add_test(tc, value_states_are_numbers_and_labels);
    tcase_add_test(tc, grid_states_from_to_step_or_points);
    tcase_add_test(tc, refine_multiplies_the_cells);
    tcase_add_test(tc, estimate_grid_is_evenly_spaced);
    tcase_add_test(tc, channels_measure_the_response_with_their_noise);
    tcase_add_test(tc, table_channels_keep_their_rows_and_observations);
    tcase_add_test(tc, errors_carry_file_and_line);
    tcase_add_test(tc, grid_errors_point_at_their_key);
    suite_add_tcase(s, tc);
    return s;
}
