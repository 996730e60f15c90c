#include <gsl/gsl_errno.h>

#include "lopside/engine/decide.h"
#include "testutil.h"

/* Screening with 1% prevalence, 80% sensitivity and a 9.6% false-positive rate:
 * after a positive result the posterior is 0.008 / (0.008 + 0.09504) = 0.0776
 * (Eddy 1982; Gigerenzer & Hoffrage 1995; from memory). */
static const char screening[] =
    "[problem]\ntitle = screening\n"
    "[states]\nlabels = healthy, ill\n"
    "[prior]\nweights = 0.99, 0.01\n"
    "[evidence.test]\noutcomes = negative, positive\n"
    "given.healthy = 0.904, 0.096\ngiven.ill = 0.2, 0.8\nobserved = positive\n"
    "[actions]\nlabels = wait, treat\n"
    "[loss]\nwait = 0, 10\ntreat = 1, 1\n";

START_TEST(screening_posterior_after_a_positive_result)
{
    lop_problem *p = test_problem(screening);
    lop_results *r = test_solve(p);
    ck_assert_close(r->kase.posterior[1], 0.008 / (0.008 + 0.99 * 0.096), 1e-14);
    ck_assert(fabs(r->kase.posterior[1] - 0.078) < 0.001);
    /* wait: 10·0.0776 = 0.776 < treat: 1, so waiting is the Bayes action. */
    ck_assert_uint_eq(r->kase.bayes_action, 0);
    ck_assert_close(r->kase.margin, 1 - 10 * r->kase.posterior[1], 1e-14);
    /* EVPI = E[loss of wait] - E[min loss] = 10·q - 1·q (perfect info treats the ill). */
    ck_assert_close(r->kase.evpi, 9 * r->kase.posterior[1], 1e-14);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

START_TEST(ties_go_to_the_earlier_action_and_are_reported)
{
    lop_problem *p = test_problem("[problem]\ntitle = t\n[states]\nlabels = a, b\n"
                                  "[prior]\nweights = 1, 1\n[actions]\nlabels = x, y, z\n"
                                  "[payoff]\nx = 3, 0\ny = 9, 9\nz = 0, 18\n");
    lop_results *r = test_solve(p);
    /* Payoffs 1.5, 9, 9: y and z tie; y comes first in [actions]. */
    ck_assert_uint_eq(r->kase.bayes_action, 1);
    ck_assert_uint_eq(r->kase.n_tied, 2);
    ck_assert_uint_eq(r->kase.tied[1], 2);
    ck_assert_double_eq(r->kase.margin, 0);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

START_TEST(payoff_files_keep_their_orientation)
{
    lop_problem *p = test_problem("[problem]\ntitle = t\n[states]\nlabels = a, b\n"
                                  "[prior]\nweights = 3, 1\n[actions]\nlabels = x, y\n"
                                  "[payoff]\nx = 4, 0\ny = 0, 8\n");
    lop_results *r = test_solve(p);
    /* Expected payoffs: x = 3, y = 2; stored as losses -3 and -2. */
    ck_assert_uint_eq(r->kase.bayes_action, 0);
    ck_assert_close(lop_problem_oriented(p, r->kase.expected_loss[0]), 3, 1e-15);
    ck_assert_close(r->kase.margin, 1, 1e-15);
    /* With the state known: 0.75·4 + 0.25·8 = 5, so EVPI = 5 - 3. */
    ck_assert_close(r->kase.evpi, 2, 1e-15);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Relative LINEX on states from 1e-320: the relative error (x - s)/s of the lowest state
 * is beyond the largest double (1/s overflows) for every estimate, so the expected loss
 * has no finite value: an input error at the `curve` line (line 12) naming the states
 * whose relative error overflows (only the lowest; the next is 1e-320 + 10/999). */
START_TEST(an_unbounded_expected_loss_is_an_input_error)
{
    gsl_set_error_handler_off(); /* as main does: the root search meets NaN and says so */
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nfrom = 1e-320\nto = 10\npoints = 1000\n"
        "[prior]\nfamily = uniform\n[actions]\nestimate = yes\n[loss]\ncurve = linex\n"
        "a = 3\nrelative = yes\n");
    lop_error err = {0};
    lop_results *r = lop_run_solve(p, NULL, &err);
    ck_assert_ptr_null(r);
    ck_assert_int_eq(err.status, LOP_EINPUT);
    ck_assert_int_eq(err.line, 12);
    ck_assert_str_eq(err.section, "loss");
    ck_assert_str_eq(err.key, "curve");
    ck_assert_msg(strstr(err.message, "no finite value: at every estimate the loss of states "
                                      "9.99989e-321 to 9.99989e-321") != NULL,
                  "%s", err.message);
    lop_problem_free(p);
}
END_TEST

Suite *suite_decide(void)
{
    Suite *s = suite_create("decide");
    TCase *tc = tcase_create("decide");
    tcase_add_test(tc, screening_posterior_after_a_positive_result);
    tcase_add_test(tc, ties_go_to_the_earlier_action_and_are_reported);
    tcase_add_test(tc, payoff_files_keep_their_orientation);
    tcase_add_test(tc, an_unbounded_expected_loss_is_an_input_error);
    suite_add_tcase(s, tc);
    return s;
}
