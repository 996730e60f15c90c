#include <stdio.h>
#include <stdlib.h>

#include "lopside/engine/decide.h"
#include "lopside/studies/value.h"
#include "testutil.h"

/* A normal prior N(0, tau^2) on a grid, gaussian noise sd sigma with one repeat observed
 * at 3, squared loss. Conjugate normal results (Raiffa & Schlaifer 1961; Gelman et al.,
 * Bayesian Data Analysis, ch. 2): with k measurements the posterior variance is
 * V(k) = (1/tau^2 + k/sigma^2)^-1 whatever they read, so the Bayes risk of squared loss
 * is V(k); the loss with the state known is 0. Hence EVPI = V(1), the EVSI of n more
 * repeats is V(1) - V(1 + n), and one more measurement for the case at hand is worth
 * V - (1/V + 1/sigma^2)^-1 with V the case's posterior variance: the textbook
 * tau^2 - (1/tau^2 + n/sigma^2)^-1 with the case's posterior in place of the prior. */
START_TEST(normal_squared_loss_matches_conjugate_formulas)
{
    const double tau = 10, sigma = 5;
    lop_problem *p = test_problem(
        "[problem]\ntitle = conjugate\n[states]\nfrom = -60\nto = 60\npoints = 1201\n"
        "[prior]\nfamily = normal\nmean = 0\nsd = 10\n"
        "[evidence.eye]\nnoise = gaussian\nsd = 5\nobserved = 3\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n"
        "[value]\nup_to = 3\ncost = 0.5\n");
    lop_results *r = test_solve(p);
    const lop_value_result *v = &r->value;
    ck_assert(v->computed);
    double v1 = 1 / (1 / (tau * tau) + 1 / (sigma * sigma));
    /* Grid error: cell masses of the prior carry Sheppard's h^2/12 (1e-3 here) on
     * tau^2 = 100, about 1e-5 of the posterior variance, and the measurement grid holds
     * all but 1e-6 of the predictive probability; 1e-4 relative covers both. */
    ck_assert_close(v->evpi, v1, 1e-4);
    ck_assert_uint_eq(v->n_extra, 3);
    for (size_t n = 1; n <= 3; n++) {
        double vn = 1 / (1 / (tau * tau) + (double)(1 + n) / (sigma * sigma));
        ck_assert(v->extra[n - 1].computed);
        ck_assert_uint_eq(v->extra[n - 1].n, n);
        ck_assert_close(v->extra[n - 1].evsi, v1 - vn, 1e-4);
        ck_assert_close(v->extra[n - 1].net, v->extra[n - 1].evsi - 0.5 * (double)n, 1e-12);
    }
    /* Nets 4.44 - 0.5, 6.67 - 1, 8 - 1.5: three more is best. */
    ck_assert(v->has_best);
    ck_assert_uint_eq(v->best_n, 3);
    double vc = r->kase.summary.sd * r->kase.summary.sd;
    ck_assert_close(vc, v1, 1e-4);
    ck_assert(v->next[0].computed);
    ck_assert_close(v->next[0].value, vc - 1 / (1 / vc + 1 / (sigma * sigma)), 1e-4);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* When every net value is negative there is no best purchase. */
START_TEST(no_best_when_measurements_cost_more_than_they_are_worth)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = costly\n[states]\nfrom = -60\nto = 60\npoints = 601\n"
        "[prior]\nfamily = normal\nmean = 0\nsd = 10\n"
        "[evidence.eye]\nnoise = gaussian\nsd = 5\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n"
        "[value]\nup_to = 2\ncost = 100\n");
    lop_results *r = test_solve(p);
    ck_assert(r->value.computed);
    ck_assert(!r->value.has_best);
    for (size_t i = 0; i < r->value.n_extra; i++)
        ck_assert(r->value.extra[i].net < 0);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* One more draw of an outcome table for the case at hand, by hand: with posterior q over
 * the states, its value is min_a sum_s q_s L(a,s) - sum_o min_a sum_s q_s P(o|s) L(a,s)
 * (preposterior analysis over the outcomes; Raiffa & Schlaifer 1961). */
START_TEST(case_next_of_an_outcome_table_by_hand)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = swab\n[states]\nlabels = clean, dirty\n[prior]\nweights = 0.8, 0.2\n"
        "[evidence.swab]\noutcomes = clear, flagged\ngiven.clean = 0.9, 0.1\n"
        "given.dirty = 0.3, 0.7\nobserved = flagged\n"
        "[actions]\nlabels = keep, discard\n[loss]\nkeep = 0, 10\ndiscard = 3, 1\n"
        "[value]\n");
    lop_results *r = test_solve(p);
    /* Posterior after one flag: 0.8·0.1 : 0.2·0.7 = 0.08 : 0.14. */
    double q[2] = {0.08 / 0.22, 0.14 / 0.22};
    double L[2][2] = {{0, 10}, {3, 1}}, P[2][2] = {{0.9, 0.1}, {0.3, 0.7}};
    double now = fmin(q[0] * L[0][0] + q[1] * L[0][1], q[0] * L[1][0] + q[1] * L[1][1]);
    double later = 0;
    for (int o = 0; o < 2; o++) {
        double best = INFINITY;
        for (int a = 0; a < 2; a++)
            best = fmin(best, q[0] * P[0][o] * L[a][0] + q[1] * P[1][o] * L[a][1]);
        later += best;
    }
    ck_assert(r->value.next[0].computed);
    /* Sums of a few products: agreement to rounding. */
    ck_assert_close(r->value.next[0].value, now - later, 1e-12);
    ck_assert(r->value.next[0].value > 0);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* A small generator of reproducible random numbers (64-bit LCG, Knuth's MMIX). */
static double uniform01(unsigned long long *state)
{
    *state = *state * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*state >> 11) / 9007199254740992.0;
}

/* Value of information is never negative, never decreases with more measurements, and
 * never exceeds EVPI; for the case, one more measurement is worth between 0 and the
 * case's EVPI (properties of preposterior analysis: information cannot hurt a Bayes
 * decider, and no information beats knowing the state). Random finite problems. */
START_TEST(value_properties_on_random_problems)
{
    unsigned long long seed = 20240612;
    static const char *const states[] = {"a", "b", "c"};
    for (int trial = 0; trial < 24; trial++) {
        int S = 2 + (int)(uniform01(&seed) * 2), A = 2 + (int)(uniform01(&seed) * 2);
        bool table = uniform01(&seed) < 0.5, equal_sd = uniform01(&seed) < 0.5;
        char text[2048];
        int n = snprintf(text, sizeof text, "[problem]\ntitle = random\n[states]\nlabels = ");
        for (int s = 0; s < S; s++)
            n += snprintf(text + n, sizeof text - (size_t)n, "%s%s", s ? ", " : "", states[s]);
        n += snprintf(text + n, sizeof text - (size_t)n, "\n[prior]\nweights = ");
        for (int s = 0; s < S; s++)
            n += snprintf(text + n, sizeof text - (size_t)n, "%s%.6f", s ? ", " : "",
                          0.1 + uniform01(&seed));
        n += snprintf(text + n, sizeof text - (size_t)n,
                      "\n[evidence.meter]\nnoise = gaussian\nobserved = %.4f\nmean = ",
                      3 * uniform01(&seed));
        for (int s = 0; s < S; s++)
            n += snprintf(text + n, sizeof text - (size_t)n, "%s%.4f", s ? ", " : "",
                          3 * uniform01(&seed));
        n += snprintf(text + n, sizeof text - (size_t)n, "\nsd = ");
        for (int s = 0; s < (equal_sd ? 1 : S); s++)
            n += snprintf(text + n, sizeof text - (size_t)n, "%s%.4f", s ? ", " : "",
                          0.5 + uniform01(&seed));
        n += snprintf(text + n, sizeof text - (size_t)n, "\n");
        if (table) {
            n += snprintf(text + n, sizeof text - (size_t)n,
                          "[evidence.swab]\noutcomes = clear, flagged\nobserved = flagged\n");
            for (int s = 0; s < S; s++) {
                double f = 0.05 + 0.9 * uniform01(&seed);
                n += snprintf(text + n, sizeof text - (size_t)n, "given.%s = %.6f, %.6f\n",
                              states[s], 1 - f, f);
            }
        }
        n += snprintf(text + n, sizeof text - (size_t)n, "[actions]\nlabels = %s\n",
                      A == 2 ? "x, y" : "x, y, z");
        n += snprintf(text + n, sizeof text - (size_t)n, "[loss]\n");
        for (int a = 0; a < A; a++) {
            n += snprintf(text + n, sizeof text - (size_t)n, "%c = ", "xyz"[a]);
            for (int s = 0; s < S; s++)
                n += snprintf(text + n, sizeof text - (size_t)n, "%s%.4f", s ? ", " : "",
                              10 * uniform01(&seed));
            n += snprintf(text + n, sizeof text - (size_t)n, "\n");
        }
        snprintf(text + n, sizeof text - (size_t)n, "[value]\nup_to = 3\ncost = %.4f\n",
                 0.2 * uniform01(&seed));
        lop_problem *p = test_problem(text);
        lop_results *r = test_solve(p);
        const lop_value_result *v = &r->value;
        ck_assert_msg(v->computed, "%s", text);
        /* Exact path (finite states, gaussian evidence): rounding only, 1e-12 of the
         * largest loss (10). */
        double tol = 1e-11;
        ck_assert_msg(v->evpi >= -tol, "EVPI %g < 0 in\n%s", v->evpi, text);
        double best = -INFINITY;
        for (size_t c = 0; c < p->value.n_channels; c++) {
            double previous = 0;
            for (size_t k = 0; k < p->value.up_to; k++) {
                const lop_value_extra *x = &v->extra[c * p->value.up_to + k];
                ck_assert(x->computed);
                /* With unequal sds the rule decides on the mean of the repeats, which is
                 * not sufficient: then only the upper bound holds. */
                ck_assert(x->on_the_mean == (!equal_sd && c == 0));
                bool lower = !x->on_the_mean;
                ck_assert_msg((!lower || (x->evsi >= -tol && x->evsi >= previous - tol)) &&
                                  x->evsi <= v->evpi + tol,
                              "EVSI %g (previous %g, EVPI %g) in\n%s", x->evsi, previous,
                              v->evpi, text);
                ck_assert_close(x->net, x->evsi - (double)x->n * p->value.cost, 1e-12);
                previous = x->evsi;
                best = fmax(best, x->net);
            }
        }
        ck_assert(v->has_best == (best > 0));
        if (v->has_best)
            ck_assert_close(v->best_net, best, 1e-15);
        for (size_t c = 0; c < v->n_next; c++) {
            ck_assert(v->next[c].computed);
            ck_assert_msg(v->next[c].value >= -tol && v->next[c].value <= r->kase.evpi + tol,
                          "case value %g, case EVPI %g in\n%s", v->next[c].value, r->kase.evpi,
                          text);
        }
        lop_results_free(r);
        lop_problem_free(p);
    }
}
END_TEST

/* Scalar noise takes one repeat in the file; priced repeats decide on their mean, and
 * are flagged as a lower bound, still never negative and never above EVPI. */
START_TEST(scalar_noise_prices_repeats_on_their_mean)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = timing\n[states]\nfrom = 400\nto = 1200\nstep = 4\n"
        "[prior]\nfamily = uniform\nlow = 500\nhigh = 1000\n"
        "[evidence.clock]\nnoise = scalar\nweber = 0.15\nobserved = 780\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n[value]\nup_to = 2\n");
    lop_results *r = test_solve(p);
    const lop_value_result *v = &r->value;
    ck_assert(v->computed);
    for (size_t k = 0; k < 2; k++) {
        ck_assert(v->extra[k].computed);
        ck_assert(v->extra[k].on_the_mean);
        ck_assert(v->extra[k].evsi > 0 && v->extra[k].evsi < v->evpi);
    }
    ck_assert(v->extra[1].evsi > v->extra[0].evsi);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Without a computable rule (two numeric channels) the design values say why, and the
 * value for the case at hand, one channel at a time, is still computed. */
START_TEST(value_without_a_rule_says_why)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = two\n[states]\nlabels = n, s\n[prior]\nweights = 1, 1\n"
        "[evidence.a]\nnoise = gaussian\nmean = 0, 1\nsd = 1\nobserved = 0.5\n"
        "[evidence.b]\nnoise = gaussian\nmean = 0, 2\nsd = 1\n"
        "[actions]\nlabels = no, yes\n[loss]\nno = 0, 1\nyes = 1, 0\n[value]\n");
    lop_results *r = test_solve(p);
    ck_assert(!r->value.computed);
    ck_assert_ptr_nonnull(r->value.not_computed_why);
    ck_assert_uint_eq(r->value.n_next, 2);
    ck_assert(r->value.next[0].computed && r->value.next[1].computed);
    /* Channel b separates the states better (d' = 2 against 1): worth more. */
    ck_assert(r->value.next[1].value > r->value.next[0].value);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

Suite *suite_value(void)
{
    Suite *s = suite_create("value");
    TCase *tc = tcase_create("value");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, normal_squared_loss_matches_conjugate_formulas);
    tcase_add_test(tc, no_best_when_measurements_cost_more_than_they_are_worth);
    tcase_add_test(tc, case_next_of_an_outcome_table_by_hand);
    tcase_add_test(tc, value_properties_on_random_problems);
    tcase_add_test(tc, scalar_noise_prices_repeats_on_their_mean);
    tcase_add_test(tc, value_without_a_rule_says_why);
    suite_add_tcase(s, tc);
    return s;
}
