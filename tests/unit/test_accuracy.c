#include <stdio.h>
#include <stdlib.h>

#include "lopside/studies/accuracy.h"
#include "testutil.h"

/* A normal prior N(0, 10^2) on a grid of 1281 points over +/-8 sd (the truncation
 * moves the variance by less than 1e-13), gaussian noise sd 5, squared loss. Conjugate
 * normal results (Raiffa & Schlaifer 1961; Gelman et al., Bayesian Data Analysis, ch. 2):
 * with k measurements the posterior variance is V(k) = (1/tau^2 + k/sigma^2)^-1 whatever
 * they read, so the Bayes risk is V(1), the prior-only risk tau^2 and the EVSI of n more
 * V(1) - V(1 + n). The grid's step (0.125 = sd/80) leaves an error of about 1.3e-5 of
 * a single solve (Sheppard's h^2/12 on the variance); the accuracy check must reach the
 * default 1e-6 of the score scale (the prior-only risk) and the numbers must then agree
 * with the formulas to that. */
START_TEST(coarse_normal_grid_reaches_the_asked_accuracy)
{
    const double tau = 10, sigma = 5;
    lop_problem *p = test_problem(
        "[problem]\ntitle = conjugate\n[states]\nfrom = -80\nto = 80\npoints = 1281\n"
        "[prior]\nfamily = normal\nmean = 0\nsd = 10\n"
        "[evidence.eye]\nnoise = gaussian\nsd = 5\nobserved = 3\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n"
        "[value]\nup_to = 3\n");
    lop_error err = {0};
    lop_solution sol = {0};
    ck_assert_int_eq(lop_accuracy_solve(p, NULL, &sol, &err), LOP_OK);
    const lop_results *r = sol.results;
    const lop_accuracy *acc = &r->accuracy;
    ck_assert(acc->estimated);
    ck_assert_msg(acc->reached <= acc->asked, "reached %g (worst %s)", acc->reached, acc->worst);
    ck_assert_uint_eq(acc->n_missed, 0);
    double tol = acc->asked * tau * tau;
    double v1 = 1 / (1 / (tau * tau) + 1 / (sigma * sigma));
    /* The scale is the prior-only risk on the grid solved, before extrapolation: tau^2
     * plus Sheppard's h^2/12 (Sheppard 1898, from memory), within 1e-3 of tau^2. */
    ck_assert_close(acc->score_scale, tau * tau, 1e-3);
    ck_assert_close(r->rule.prior_only_risk, tau * tau, tol / (tau * tau));
    ck_assert_msg(fabs(r->rule.bayes_risk - v1) <= tol, "Bayes risk %.12g, V(1) %.12g",
                  r->rule.bayes_risk, v1);
    for (size_t n = 1; n <= 3; n++) {
        double vn = 1 / (1 / (tau * tau) + (double)(1 + n) / (sigma * sigma));
        ck_assert_msg(fabs(r->value.extra[n - 1].evsi - (v1 - vn)) <= tol,
                      "EVSI(%zu) %.12g, formula %.12g", n, r->value.extra[n - 1].evsi, v1 - vn);
    }
    /* The case: posterior mean 3·tau^2/(tau^2 + sigma^2) = 2.4, sd sqrt(V(1)) = 4.472. */
    double range = 160;
    ck_assert_msg(fabs(r->kase.summary.mean - 2.4) <= acc->asked * range, "mean %.12g",
                  r->kase.summary.mean);
    ck_assert_msg(fabs(r->kase.summary.sd - sqrt(v1)) <= acc->asked * range, "sd %.12g",
                  r->kase.summary.sd);
    lop_results_free(sol.results);
    lop_problem_free(sol.refined);
    lop_problem_free(p);
}
END_TEST

/* Finite states with choices rest on no grid: one solve, nothing estimated. */
START_TEST(finite_choices_are_not_refined)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = finite\n[states]\nlabels = noise, tone\n"
        "[prior]\nweights = 0.7, 0.3\n[evidence]\nnoise = gaussian\nmean = 0, 1.5\nsd = 1\n"
        "[actions]\nlabels = no, yes\n[loss]\nno = 0, 4\nyes = 1, 0\n");
    lop_error err = {0};
    lop_solution sol = {0};
    ck_assert_int_eq(lop_accuracy_solve(p, NULL, &sol, &err), LOP_OK);
    ck_assert(sol.refined == NULL);
    ck_assert(!sol.results->accuracy.estimated);
    ck_assert_uint_eq(sol.results->accuracy.solves, 1);
    lop_results_free(sol.results);
    lop_problem_free(p);
}
END_TEST

/* design.md: no impossible numbers. An EVSI a hair below that of fewer measurements
 * (within the accuracy) is set onto it; one above the EVPI by far more is a defect that
 * names the number. */
START_TEST(invariants_clamp_within_accuracy_and_stop_beyond)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = conjugate\n[states]\nfrom = -80\nto = 80\npoints = 321\n"
        "[prior]\nfamily = normal\nmean = 0\nsd = 10\n"
        "[evidence.eye]\nnoise = gaussian\nsd = 5\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n[value]\nup_to = 3\n");
    lop_error err = {0};
    lop_solution sol = {0};
    ck_assert_int_eq(lop_accuracy_solve(p, NULL, &sol, &err), LOP_OK);
    lop_results *r = sol.results;
    lop_value_extra *x = r->value.extra;
    double slack = r->accuracy.asked * r->accuracy.score_scale;
    x[1].evsi = x[0].evsi - 0.5 * slack;
    char defect[512] = "";
    ck_assert(lop_accuracy_invariants(sol.refined ? sol.refined : p, r, defect, sizeof defect));
    ck_assert_double_eq(x[1].evsi, x[0].evsi);
    x[2].evsi = r->value.evpi + 1000 * slack;
    ck_assert(!lop_accuracy_invariants(sol.refined ? sol.refined : p, r, defect, sizeof defect));
    ck_assert_msg(strstr(defect, "EVSI") != NULL, "defect: %s", defect);
    lop_results_free(sol.results);
    lop_problem_free(sol.refined);
    lop_problem_free(p);
}
END_TEST

Suite *suite_accuracy(void)
{
    Suite *s = suite_create("accuracy");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, coarse_normal_grid_reaches_the_asked_accuracy);
    tcase_add_test(tc, finite_choices_are_not_refined);
    tcase_add_test(tc, invariants_clamp_within_accuracy_and_stop_beyond);
    suite_add_tcase(s, tc);
    return s;
}
