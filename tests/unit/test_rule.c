#include <stdio.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>

#include "lopside/engine/rule.h"
#include "testutil.h"

/* An equal-variance yes/no detection problem (noise N(0,1), signal N(d',1)). */
static lop_problem *detection(double p_signal, double dprime, double v_hit, double c_miss,
                              double v_cr, double c_fa, const char *extra)
{
    char text[1024];
    snprintf(text, sizeof text,
             "[problem]\ntitle = detection\n[states]\nlabels = noise, signal\n"
             "[prior]\nweights = %.17g, %.17g\n"
             "[evidence.ear]\nnoise = gaussian\nmean = 0, %.17g\nsd = 1\n%s"
             "[actions]\nlabels = say_no, say_yes\n"
             "[payoff]\nsay_no = %.17g, %.17g\nsay_yes = %.17g, %.17g\n",
             1 - p_signal, p_signal, dprime, extra, v_cr, -c_miss, -c_fa, v_hit);
    return test_problem(text);
}

/* Green & Swets (1966): the optimal criterion is x = d'/2 + ln(beta)/d' with
 * beta = (P(noise)/P(signal)) (V_cr + C_fa) / (V_hit + C_miss). The expected payoff
 * at criterion x is P(n)[V_cr Phi(x) - C_fa Q(x)] + P(s)[V_hit Q(x-d') - C_miss Phi(x-d')]. */
START_TEST(switch_point_and_risk_match_green_and_swets)
{
    static const double cases[][6] = {
        /* P(signal), d', V_hit, C_miss, V_cr, C_fa */
        {0.5, 1.0, 1, 1, 1, 1},   {0.3, 1.5, 4, 2, 1, 3},  {0.8, 2.0, 1, 5, 2, 1},
        {0.1, 0.7, 10, 0, 1, 0},  {0.5, 3.0, 1, 1, 1, 20}, {0.02, 2.5, 50, 5, 1, 1},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        const double *c = cases[i];
        double ps = c[0], d = c[1], vh = c[2], cm = c[3], vc = c[4], cf = c[5];
        lop_problem *p = detection(ps, d, vh, cm, vc, cf, "");
        lop_results *r = test_solve(p);
        double beta = ((1 - ps) / ps) * (vc + cf) / (vh + cm);
        double x = d / 2 + log(beta) / d;
        ck_assert_uint_eq(r->rule.n_switches, 1);
        /* Brent refines to 1e-12; the issue asks for 1e-9. */
        ck_assert_close(r->rule.switches[0].x, x, 1e-9);
        double payoff = (1 - ps) * (vc * gsl_cdf_ugaussian_P(x) - cf * gsl_cdf_ugaussian_Q(x)) +
                        ps * (vh * gsl_cdf_ugaussian_Q(x - d) - cm * gsl_cdf_ugaussian_P(x - d));
        /* Both sides are sums of a few normal CDF values: agreement to rounding. */
        ck_assert_close(-r->rule.bayes_risk, payoff, 1e-12);
        lop_results_free(r);
        lop_problem_free(p);
    }
}
END_TEST

/* With three actions, the middle one is best between two crossings. With only two
 * grid points the rule must still find both by splitting the bracket. Each crossing
 * is where the posterior q = P(signal | x) reaches q* = dn / (dn - ds), dn and ds the
 * loss differences of the two actions in each state; then x = (logit q* - logit p)/d' + d'/2. */
START_TEST(middle_action_is_found_between_two_grid_points)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nlabels = noise, signal\n[prior]\nweights = 1, 1\n"
        "[evidence]\nnoise = gaussian\nmean = 0, 1\nsd = 1\ngrid_from = -4\ngrid_to = 5\n"
        "grid_points = 2\n"
        "[actions]\nlabels = no, unsure, yes\n[loss]\nno = 0, 10\nunsure = 3, 3\nyes = 10, 0\n");
    lop_results *r = test_solve(p);
    ck_assert_uint_eq(r->rule.n_switches, 2);
    /* no vs unsure: 10q = 3; unsure vs yes: 10(1 - q) = 3 (prior odds 1, d' = 1). */
    double q1 = 0.3, q2 = 0.7;
    double x1 = log(q1 / (1 - q1)) + 0.5, x2 = log(q2 / (1 - q2)) + 0.5;
    ck_assert_close(r->rule.switches[0].x, x1, 1e-9);
    ck_assert_close(r->rule.switches[1].x, x2, 1e-9);
    ck_assert_uint_eq(r->rule.switches[0].to, 1);
    ck_assert_uint_eq(r->rule.switches[1].from, 1);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* 1,000 repeats of a two-outcome channel: the rule has 1,001 count vectors whose
 * probabilities sum to 1, and the case posterior stays finite (no underflow). */
START_TEST(thousand_repeats_do_not_underflow)
{
    size_t n = 1000, k = 520;
    size_t cap = 64 + n * 8;
    char *observed = malloc(cap);
    strcpy(observed, "observed = ");
    for (size_t i = 0; i < n; i++)
        strcat(observed, i == 0 ? "" : (i % 10 == 0 ? ",\n  " : ", ")),
            strcat(observed, i < k ? "up" : "down");
    char *text = malloc(cap + 512);
    snprintf(text, cap + 512,
             "[problem]\ntitle = t\n[states]\nlabels = fair, biased\n[prior]\nweights = 1, 1\n"
             "[evidence.coin]\noutcomes = up, down\ngiven.fair = 0.5, 0.5\n"
             "given.biased = 0.6, 0.4\nrepeats = 1000\n%s\n"
             "[actions]\nlabels = accept, reject\n[loss]\naccept = 0, 1\nreject = 1, 0\n",
             observed);
    lop_problem *p = test_problem(text);
    lop_results *r = test_solve(p);
    /* log odds (biased : fair) = 520 ln(1.2) + 480 ln(0.8), far beyond exp's range. */
    double log_odds = (double)k * log(1.2) + (double)(n - k) * log(0.8);
    ck_assert_close(r->kase.posterior[1], 1 / (1 + exp(-log_odds)), 1e-12);
    ck_assert_uint_eq(r->rule.n_rows, n + 1);
    double total = 0;
    for (size_t row = 0; row < r->rule.n_rows; row++)
        total += r->rule.row_probability[row];
    /* A sum of 1001 positive terms: rounding only. */
    ck_assert_close(total, 1, 1e-12);
    ck_assert(r->rule.bayes_risk <= r->rule.prior_only_risk);
    lop_results_free(r);
    lop_problem_free(p);
    free(text);
    free(observed);
}
END_TEST

/* With no informative evidence the rule cannot beat the prior: Bayes risk = prior risk. */
START_TEST(uninformative_evidence_is_worth_nothing)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nlabels = a, b\n[prior]\nweights = 2, 1\n"
        "[evidence.e]\noutcomes = u, v, w\ngiven.a = 0.2, 0.3, 0.5\ngiven.b = 0.2, 0.3, 0.5\n"
        "repeats = 3\n[actions]\nlabels = x, y\n[loss]\nx = 0, 5\ny = 1, 0\n");
    lop_results *r = test_solve(p);
    ck_assert_uint_eq(r->rule.n_rows, 10); /* C(3 + 2, 2) count vectors */
    ck_assert_close(r->rule.bayes_risk, r->rule.prior_only_risk, 1e-14);
    ck_assert_close(r->rule.prior_only_risk, 2.0 / 3.0, 1e-15); /* always x: 5·(1/3) vs y 2/3 */
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

Suite *suite_rule(void)
{
    Suite *s = suite_create("rule");
    TCase *tc = tcase_create("rule");
    tcase_add_test(tc, switch_point_and_risk_match_green_and_swets);
    tcase_add_test(tc, middle_action_is_found_between_two_grid_points);
    tcase_add_test(tc, thousand_repeats_do_not_underflow);
    tcase_add_test(tc, uninformative_evidence_is_worth_nothing);
    suite_add_tcase(s, tc);
    return s;
}
