#include <stdio.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_randist.h>

#include "lopside/studies/design.h"
#include "testutil.h"

/* The detection problem of the sweep tests: P(signal) = 0.3, d' = 1.5, payoffs
 * V_hit = 4, C_miss = 2, V_cr = 1 and a false-alarm cost varied by the design,
 * observed 0.9. */
#define PS 0.3
#define DP 1.5
#define VH 4.0
#define CM 2.0
#define VC 1.0

static lop_problem *detection(const char *design)
{
    char text[2048];
    snprintf(text, sizeof text,
             "[problem]\ntitle = detection\n[states]\nlabels = noise, signal\n"
             "[prior]\nweights = %.17g, %.17g\n"
             "[evidence.ear]\nnoise = gaussian\nmean = 0, %.17g\nsd = 1\nobserved = 0.9\n"
             "[actions]\nlabels = say_no, say_yes\n"
             "[payoff]\nsay_no = %.17g, %.17g\nsay_yes = -3, %.17g\n"
             "[design.d]\nvary = payoff.say_yes[1]\nfrom = -20\nto = -0.5\n%s",
             1 - PS, PS, DP, VC, -CM, VH, design);
    return test_problem(text);
}

/* Green & Swets (1966): criterion x = d'/2 + ln(beta)/d', beta = (P(n)/P(s))(V_cr +
 * C_fa)/(V_hit + C_miss). */
static double criterion(double cf)
{
    return DP / 2 + log(((1 - PS) / PS) * (VC + cf) / (VH + CM)) / DP;
}

static const lop_design_result *solve(lop_problem *p, lop_results **r)
{
    *r = test_solve(p);
    ck_assert_uint_eq((*r)->n_designs, 1);
    return &(*r)->designs[0];
}

/* Solving Green & Swets' criterion for the false-alarm cost: the switch point x needs
 * beta = exp((x - d'/2) d'), so C_fa = beta (P(s)/P(n)) (V_hit + C_miss) - V_cr. */
START_TEST(switch_point_design_solves_the_criterion_for_the_penalty)
{
    static const double targets[] = {0.5, 1.0, 1.4, 2.0};
    for (size_t i = 0; i < sizeof targets / sizeof *targets; i++) {
        char design[128];
        snprintf(design, sizeof design, "goal = switch_point\nequals = %.17g\n", targets[i]);
        lop_problem *p = detection(design);
        lop_results *r;
        const lop_design_result *d = solve(p, &r);
        double beta = exp((targets[i] - DP / 2) * DP);
        double cf = beta * (PS / (1 - PS)) * (VH + CM) - VC;
        ck_assert_msg(d->reached, "target %g not reached", targets[i]);
        /* Brent stops at 1e-12 of the bracket, the switch point at 1e-12: 1e-8. */
        ck_assert_close(d->value, -cf, 1e-8);
        ck_assert_close(d->achieved, targets[i], 1e-8);
        lop_results_free(r);
        lop_problem_free(p);
    }
}
END_TEST

/* The rate of saying yes, P(n) Q(x) + P(s) Q(x - d'), at the criterion of the found
 * penalty, meets the target. */
START_TEST(choice_rate_design)
{
    lop_problem *p = detection("goal = choice_rate.say_yes\nequals = 0.2\n");
    lop_results *r;
    const lop_design_result *d = solve(p, &r);
    ck_assert(d->reached);
    double x = criterion(-d->value);
    double rate = (1 - PS) * gsl_cdf_ugaussian_Q(x) + PS * gsl_cdf_ugaussian_Q(x - DP);
    ck_assert_close(rate, 0.2, 1e-9);
    ck_assert_close(d->achieved, 0.2, 1e-9);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* The Bayes payoff at the found penalty, from normal CDFs at the criterion, meets the
 * target (risk goals are in the file's orientation: a payoff here). */
START_TEST(risk_design_in_the_files_orientation)
{
    lop_problem *p = detection("goal = risk\nequals = 0.8\n");
    lop_results *r;
    const lop_design_result *d = solve(p, &r);
    ck_assert(d->reached);
    double cf = -d->value, x = criterion(cf);
    double payoff = (1 - PS) * (VC * gsl_cdf_ugaussian_P(x) - cf * gsl_cdf_ugaussian_Q(x)) +
                    PS * (VH * gsl_cdf_ugaussian_Q(x - DP) - CM * gsl_cdf_ugaussian_P(x - DP));
    ck_assert_close(payoff, 0.8, 1e-9);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* The case (observed 0.9) turns to say_yes where the expected payoffs tie under its
 * posterior q: q V_hit - (1 - q) C_fa = (1 - q) V_cr - q C_miss. */
START_TEST(action_design_finds_where_the_case_turns)
{
    lop_problem *p = detection("goal = action\nequals = say_yes\n");
    lop_results *r;
    const lop_design_result *d = solve(p, &r);
    double ln = (1 - PS) * gsl_ran_gaussian_pdf(0.9, 1);
    double ls = PS * gsl_ran_gaussian_pdf(0.9 - DP, 1);
    double q = ls / (ln + ls);
    double cf = (q * (VH + CM) - (1 - q) * VC) / (1 - q);
    ck_assert(d->reached);
    ck_assert_close(d->value, -cf, 1e-9);
    ck_assert_uint_eq(d->n_seen, 2);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Grid states: the payoff of a wrong `long` that makes the rule choose `long` 30% of the
 * time. Checked by solving the problem at the value found, independently of the design:
 * P(long) = sum_s prior(s) Q((x* - s)/80) beyond its switch point x*. */
START_TEST(choice_rate_design_on_grid_states)
{
    static const char head[] =
        "[problem]\ntitle = bands\n[states]\nfrom = 300\nto = 1300\npoints = 501\n"
        "[prior]\nfamily = normal\nmean = 800\nsd = 120\n"
        "[evidence.clock]\nnoise = gaussian\nsd = 80\n"
        "[actions]\nlabels = short, long\n[payoff]\ncuts = 800\nshort = 1, -1\n";
    char text[1024];
    snprintf(text, sizeof text, "%slong = -2, 1\n[design.rate]\nvary = payoff.long[1]\n"
                                "from = -10\nto = 0\ngoal = choice_rate.long\nequals = 0.3\n",
             head);
    lop_problem *p = test_problem(text);
    lop_results *r;
    const lop_design_result *d = solve(p, &r);
    ck_assert(d->reached);
    snprintf(text, sizeof text, "%slong = %.17g, 1\n", head, d->value);
    lop_problem *q = test_problem(text);
    lop_results *rq = test_solve(q);
    ck_assert_uint_eq(rq->rule.n_switches, 1);
    double x = rq->rule.switches[0].x, rate = 0;
    for (size_t s = 0; s < q->n_states; s++)
        rate += q->prior[s] * gsl_cdf_ugaussian_Q((x - q->state_values[s]) / 80);
    /* Brent stops at 1e-12 of the bracket; the rate's slope in the payoff is below 1. */
    ck_assert_close(rate, 0.3, 1e-9);
    lop_results_free(rq);
    lop_problem_free(q);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* A goal outside what the bracket can give is not reached, and the range reported is the
 * criterion at the two ends (it is monotone in the penalty). */
START_TEST(unreachable_goal_reports_its_range)
{
    lop_problem *p = detection("goal = switch_point\nequals = 5\n");
    lop_results *r;
    const lop_design_result *d = solve(p, &r);
    ck_assert(!d->reached);
    ck_assert_close(d->range_lo, criterion(0.5), 1e-9);
    ck_assert_close(d->range_hi, criterion(20), 1e-9);
    ck_assert_uint_eq(d->evaluations, LOP_DESIGN_SCAN_POINTS);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Bracket ends that give an invalid problem are refused when the file is read, naming
 * the design, the path and the value. */
START_TEST(invalid_bracket_end_is_an_input_error)
{
    lop_error err;
    ck_assert_int_eq(test_problem_error(
                         "[problem]\ntitle = t\n[states]\nlabels = n, s\n[prior]\nweights = 1, 1\n"
                         "[evidence.ear]\nnoise = gaussian\nmean = 0, 1\nsd = 1\n"
                         "[actions]\nlabels = no, yes\n[loss]\nno = 0, 1\nyes = 1, 0\n"
                         "[design.d]\nvary = evidence.ear.sd\nfrom = -1\nto = 2\n"
                         "goal = risk\nequals = 0.3\n",
                         &err),
                     LOP_EINPUT);
    ck_assert_int_eq(err.line, 17);
    ck_assert_str_eq(err.section, "design.d");
    ck_assert_str_eq(err.key, "vary");
    ck_assert_msg(strstr(err.message, "evidence.ear.sd = -1 (the bracket's `from`)"), "%s",
                  err.message);
}
END_TEST

Suite *suite_design(void)
{
    Suite *s = suite_create("design");
    TCase *tc = tcase_create("design");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, switch_point_design_solves_the_criterion_for_the_penalty);
    tcase_add_test(tc, choice_rate_design);
    tcase_add_test(tc, risk_design_in_the_files_orientation);
    tcase_add_test(tc, choice_rate_design_on_grid_states);
    tcase_add_test(tc, action_design_finds_where_the_case_turns);
    tcase_add_test(tc, unreachable_goal_reports_its_range);
    tcase_add_test(tc, invalid_bracket_end_is_an_input_error);
    suite_add_tcase(s, tc);
    return s;
}
