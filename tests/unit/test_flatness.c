/* Flatness ranges of estimates and thresholds against closed forms: a quadratic expected
 * loss for squared error, the normal-CDF expected loss of a detection threshold, and
 * Poisson tail sums (GSL) for count thresholds. */
#include <stdio.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>

#include "lopside/engine/flatness.h"
#include "lopside/engine/rates.h"
#include "testutil.h"

/* Edges are refined by Brent's method to 1e-10 (flatness.c); 1e-9 on an edge, and on
 * an expected loss whose slope there is below 1. */
#define EDGE_TOL 1e-9

/* States 0..4 with weights 1, 2, 3, 2, 1: mean 2, variance (4 + 2 + 0 + 2 + 4)/9 = 4/3.
 * Squared loss a(e - s)^2 with a = 3 has the expected loss a(e - 2)^2 + a·4/3, least at
 * e = 2 with minimum m = 4, so it stays within k·m of it for |e - 2| <= sqrt(k·m/a). */
static lop_problem *squared_problem(const char *estimate_grid)
{
    char text[512];
    snprintf(text, sizeof text,
             "[problem]\ntitle = t\n[states]\nvalues = 0, 1, 2, 3, 4\n"
             "[prior]\nweights = 1, 2, 3, 2, 1\n[actions]\nestimate = yes\n%s"
             "[loss]\ncurve = squared\nscale = 3\n",
             estimate_grid);
    return test_problem(text);
}

/* Fills f for the squared problem's prior, the expected losses summed here. */
static void squared_flatness(const lop_problem *p, lop_flatness *f)
{
    double *el = malloc(p->n_estimates * sizeof *el);
    for (size_t j = 0; j < p->n_estimates; j++) {
        el[j] = 0;
        for (size_t s = 0; s < p->n_states; s++) {
            double e = p->estimates[j] - p->state_values[s];
            el[j] += p->prior[s] * 3 * e * e;
        }
    }
    lop_flatness_estimates(p, p->prior, el, 2, 4, f);
    free(el);
}

START_TEST(levels_are_one_five_and_ten_percent)
{
    ck_assert_double_eq(lop_flatness_levels[0], 0.01);
    ck_assert_double_eq(lop_flatness_levels[1], 0.05);
    ck_assert_double_eq(lop_flatness_levels[2], 0.10);
}
END_TEST

START_TEST(squared_loss_ranges_are_sqrt_k_min_over_a)
{
    lop_problem *p = squared_problem("from = -10\nto = 14\npoints = 241\n");
    lop_flatness f;
    squared_flatness(p, &f);
    ck_assert(f.computed);
    ck_assert_double_eq(f.at, 2);
    ck_assert_double_eq(f.optimum, 4);
    for (size_t k = 0; k < LOP_FLAT_LEVELS; k++) {
        double half = sqrt(lop_flatness_levels[k] * 4 / 3);
        ck_assert_double_eq(f.range[k].within, lop_flatness_levels[k]);
        ck_assert_close(f.range[k].from, 2 - half, EDGE_TOL);
        ck_assert_close(f.range[k].to, 2 + half, EDGE_TOL);
    }
    lop_problem_free(p);
}
END_TEST

/* Estimates live on their grid, 1.9 to 2.2 in steps of 0.1: every range stops at 1.9
 * below (2 - 0.115 is already outside); above, the 1% range ends inside the grid at
 * 2 + sqrt(0.04/3) = 2.115, the wider ones at the grid's end 2.2. */
START_TEST(estimate_ranges_stop_at_the_ends_of_the_grid)
{
    lop_problem *p = squared_problem("from = 1.9\nto = 2.2\npoints = 4\n");
    lop_flatness f;
    squared_flatness(p, &f);
    for (size_t k = 0; k < LOP_FLAT_LEVELS; k++)
        ck_assert_close(f.range[k].from, 1.9, 1e-15);
    ck_assert_close(f.range[0].to, 2 + sqrt(0.04 / 3), EDGE_TOL);
    ck_assert_close(f.range[1].to, 2.2, 1e-15);
    ck_assert_close(f.range[2].to, 2.2, 1e-15);
    lop_problem_free(p);
}
END_TEST

/* A threshold's expected loss falls to its minimum at the Green & Swets criterion and
 * rises on both sides towards always saying yes (t -> -inf) or no (t -> +inf). A level's
 * edge is where it meets best·(1 + k); when the limit on a side is within the level the
 * range runs on without end. Cases are chosen so both kinds occur. */
START_TEST(threshold_ranges_meet_the_level_or_run_on)
{
    static const double cases[][6] = {
        /* P(signal), d', loss no|n, no|s, yes|n, yes|s */
        {0.5, 1.0, 0, 1, 1, 0}, {0.3, 1.4, 0, 5, 2, 0}, {0.1, 1.0, 0, 1, 1, 0},
        {0.05, 1.0, 0, 1, 1, 0}, {0.9, 1.0, 0, 1, 1, 0},
    };
    double grid[201];
    for (size_t i = 0; i < 201; i++)
        grid[i] = -6 + 0.06 * (double)i;
    size_t finite = 0, endless = 0;
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        const double ps = cases[i][0], d = cases[i][1], *loss = &cases[i][2];
        lop_problem *p = test_detection(ps, d, loss, "");
        double t = test_detection_best_threshold(ps, d, loss);
        double best = test_detection_expected_loss(ps, d, loss, t);
        double always_yes = (1 - ps) * loss[2] + ps * loss[3];
        double always_no = (1 - ps) * loss[0] + ps * loss[1];
        lop_flatness f;
        ck_assert(lop_flatness_threshold(p, &p->channels[0], t, best, grid, 201, &f));
        ck_assert(f.computed);
        for (size_t k = 0; k < LOP_FLAT_LEVELS; k++) {
            double target = best * (1 + lop_flatness_levels[k]);
            const lop_flat_range *r = &f.range[k];
            ck_assert(r->from < t && t < r->to);
            if (always_yes <= target) {
                ck_assert(r->from == -INFINITY);
                endless++;
            } else {
                ck_assert_close(test_detection_expected_loss(ps, d, loss, r->from), target,
                                EDGE_TOL);
                finite++;
            }
            if (always_no <= target) {
                ck_assert(r->to == INFINITY);
                endless++;
            } else {
                ck_assert_close(test_detection_expected_loss(ps, d, loss, r->to), target,
                                EDGE_TOL);
                finite++;
            }
        }
        lop_problem_free(p);
    }
    ck_assert_uint_gt(finite, 0);
    ck_assert_uint_gt(endless, 0);
}
END_TEST

/* Poisson counts with means 20 and 24 (rate 10 or 12 in a window of 2), equal priors,
 * 0-1 loss: the threshold k (yes from k on) has expected loss
 * 0.5 P(X >= k | 20) + 0.5 P(X < k | 24). Ranges are whole numbers: walking out from
 * the best k while the loss stays within the level; reaching 0 (always yes) or past
 * the grid (always no) means no end. */
static double count_loss(double k)
{
    return 0.5 * gsl_cdf_poisson_Q((unsigned)k - 1, 20) +
           0.5 * gsl_cdf_poisson_P((unsigned)k - 1, 24);
}

START_TEST(count_threshold_ranges_are_whole_numbers)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nvalues = 10, 12\n[prior]\nweights = 1, 1\n"
        "[evidence]\nnoise = poisson\nwindow = 2\n"
        "[actions]\nlabels = no, yes\n[loss]\nno = 0, 1\nyes = 1, 0\n");
    /* Likelihood ratio (24/20)^k e^-4 reaches 1 from k = ceil(4 / ln 1.2) = 22 on. */
    double t = ceil(4 / log(1.2)), best = count_loss(t);
    ck_assert_double_eq(t, 22);
    double grid[] = {0, 60};
    lop_flatness f;
    ck_assert(lop_flatness_threshold(p, &p->channels[0], t, best, grid, 2, &f));
    for (size_t k = 0; k < LOP_FLAT_LEVELS; k++) {
        double target = best * (1 + lop_flatness_levels[k]);
        double lo = t, hi = t;
        while (lo > 1 && count_loss(lo - 1) <= target)
            lo--;
        while (hi < 61 && count_loss(hi + 1) <= target)
            hi++;
        ck_assert(lo > 1 && hi < 61); /* the levels end within the grid here */
        ck_assert_double_eq(f.range[k].from, lo);
        ck_assert_double_eq(f.range[k].to, hi);
    }
    ck_assert(f.range[2].to - f.range[2].from > f.range[0].to - f.range[0].from);
    lop_problem_free(p);
}
END_TEST

Suite *suite_flatness(void)
{
    Suite *s = suite_create("flatness");
    TCase *tc = tcase_create("flatness");
    tcase_add_test(tc, levels_are_one_five_and_ten_percent);
    tcase_add_test(tc, squared_loss_ranges_are_sqrt_k_min_over_a);
    tcase_add_test(tc, estimate_ranges_stop_at_the_ends_of_the_grid);
    tcase_add_test(tc, threshold_ranges_meet_the_level_or_run_on);
    tcase_add_test(tc, count_threshold_ranges_are_whole_numbers);
    suite_add_tcase(s, tc);
    return s;
}
