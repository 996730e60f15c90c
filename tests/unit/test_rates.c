/* Choice rates of thresholds and of the Bayes rule, the best threshold and d', against
 * normal and Poisson tail areas (GSL) and the closed forms of signal detection. */
#include <stdio.h>

#include <gsl/gsl_cdf.h>

#include "lopside/engine/rates.h"
#include "testutil.h"

/* Loss {no|noise, no|signal, yes|noise, yes|signal}: a miss costs 5, a false alarm 2. */
static const double detection_loss[4] = {0, 5, 2, 0};

/* Saying yes at or above t: false alarms F = Q(t), hits H = Q(t - d'), and the rest of
 * each row is its complement; z(H) - z(F) = d' whatever t is (Macmillan & Creelman,
 * Detection Theory: A User's Guide, ch. 1; from memory). Sums of a few CDF values:
 * rounding only, so 1e-14; the inverse normal near 0 or 1 loses a few more digits. */
START_TEST(threshold_rates_are_normal_tail_areas)
{
    const double ps = 0.3, d = 1.4;
    lop_problem *p = test_detection(ps, d, detection_loss, "");
    const lop_channel *c = &p->channels[0];
    const double ts[] = {-1, 0.3, 0.7, 1.7, 3};
    for (size_t i = 0; i < sizeof ts / sizeof *ts; i++) {
        double t = ts[i], rates[4], overall[2];
        double el = lop_rates_threshold(p, c, t, true, rates);
        double f = gsl_cdf_ugaussian_Q(t), h = gsl_cdf_ugaussian_Q(t - d);
        ck_assert_close(rates[0], 1 - f, 1e-14);
        ck_assert_close(rates[1], 1 - h, 1e-14);
        ck_assert_close(rates[2], f, 1e-14);
        ck_assert_close(rates[3], h, 1e-14);
        ck_assert_close(el, test_detection_expected_loss(ps, d, detection_loss, t), 1e-14);
        ck_assert_close(gsl_cdf_ugaussian_Pinv(rates[3]) - gsl_cdf_ugaussian_Pinv(rates[2]), d,
                        1e-11);
        ck_assert_close(lop_rates_threshold(p, c, t, false, overall), el, 1e-15);
        ck_assert_close(overall[1], (1 - ps) * f + ps * h, 1e-14);
        ck_assert_close(overall[0] + overall[1], 1, 1e-15);
    }
    lop_problem_free(p);
}
END_TEST

/* With n repeats the mean has sd 1/sqrt n, so d' grows by sqrt n (common practice), and
 * z(H) - z(F) of the threshold rates says the same. */
START_TEST(d_prime_is_the_mean_difference_over_the_summary_sd)
{
    lop_problem *p = test_detection(0.5, 1.4, detection_loss, "repeats = 4\n");
    const lop_channel *c = &p->channels[0];
    double dp, mid, sd;
    ck_assert(lop_rates_sdt(p, c, &dp, &mid, &sd));
    ck_assert_close(dp, 2.8, 1e-15);
    ck_assert_close(mid, 0.7, 1e-15);
    ck_assert_close(sd, 0.5, 1e-15);
    double rates[4];
    lop_rates_threshold(p, c, 0.9, true, rates);
    ck_assert_close(gsl_cdf_ugaussian_Pinv(rates[3]) - gsl_cdf_ugaussian_Pinv(rates[2]), dp,
                    1e-11);
    lop_problem_free(p);

    /* Unequal sds, or three states: no single d'. */
    p = test_problem("[problem]\ntitle = t\n[states]\nlabels = a, b\n[prior]\nweights = 1, 1\n"
                     "[evidence]\nnoise = gaussian\nmean = 0, 1\nsd = 1, 2\n"
                     "[actions]\nlabels = x, y\n[loss]\nx = 0, 1\ny = 1, 0\n");
    ck_assert(!lop_rates_sdt(p, &p->channels[0], &dp, &mid, &sd));
    lop_problem_free(p);
    p = test_problem("[problem]\ntitle = t\n[states]\nlabels = a, b, c\n"
                     "[prior]\nweights = 1, 1, 1\n"
                     "[evidence]\nnoise = gaussian\nmean = 0, 1, 2\nsd = 1\n"
                     "[actions]\nlabels = x, y\n[loss]\nx = 0, 1, 1\ny = 1, 0, 0\n");
    ck_assert(!lop_rates_sdt(p, &p->channels[0], &dp, &mid, &sd));
    lop_problem_free(p);
}
END_TEST

/* The best threshold is the criterion of Green & Swets (test_detection_best_threshold).
 * The slope's root is refined to 1e-12; 1e-9 leaves room for the slope's rounding near
 * its root. Its loss is a few CDF values at that point: 1e-12. */
START_TEST(best_threshold_is_the_likelihood_ratio_criterion)
{
    static const double cases[][6] = {
        /* P(signal), d', loss no|n, no|s, yes|n, yes|s */
        {0.5, 1.0, 0, 1, 1, 0},  {0.3, 1.4, 0, 5, 2, 0}, {0.8, 2.0, -2, 5, 1, -1},
        {0.1, 0.7, 0, 30, 1, 0}, {0.5, 3.0, 0, 1, 20, 0},
    };
    double grid[201];
    for (size_t i = 0; i < 201; i++)
        grid[i] = -6 + 0.06 * (double)i;
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        const double ps = cases[i][0], d = cases[i][1], *loss = &cases[i][2];
        lop_problem *p = test_detection(ps, d, loss, "");
        double el;
        double t = lop_rates_best_threshold(p, &p->channels[0], grid, 201, &el);
        double want = test_detection_best_threshold(ps, d, loss);
        ck_assert_close(t, want, 1e-9);
        ck_assert_close(el, test_detection_expected_loss(ps, d, loss, want), 1e-12);
        lop_problem_free(p);
    }
}
END_TEST

/* Saying yes costs more in both states: no threshold beats always saying no, whose
 * expected loss is P(signal)·L(no|signal) = 0.3. */
START_TEST(no_best_threshold_when_one_action_always_wins)
{
    const double loss[4] = {0, 1, 2, 2};
    lop_problem *p = test_detection(0.3, 1, loss, "");
    double grid[] = {-3, -1, 0, 1, 3, 5}, el;
    double t = lop_rates_best_threshold(p, &p->channels[0], grid, 6, &el);
    ck_assert(isnan(t));
    ck_assert_close(el, 0.3, 1e-15);
    lop_problem_free(p);
}
END_TEST

/* Poisson counts with means 2 and 6, equal priors, 0-1 loss: say yes when the likelihood
 * ratio (6/2)^k e^-(6-2) reaches 1, i.e. from k* = ceil(4 / ln 3) = 4 on (the Bayes
 * likelihood-ratio test). Its loss is 0.5 P(X >= 4 | 2) + 0.5 P(X < 4 | 6). */
START_TEST(best_count_threshold_is_the_likelihood_ratio_criterion)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nvalues = 1, 3\n[prior]\nweights = 1, 1\n"
        "[evidence]\nnoise = poisson\nwindow = 2\n"
        "[actions]\nlabels = no, yes\n[loss]\nno = 0, 1\nyes = 1, 0\n");
    const lop_channel *c = &p->channels[0];
    double grid[] = {0, 40}, el;
    double t = lop_rates_best_threshold(p, c, grid, 2, &el);
    ck_assert_double_eq(t, ceil(4 / log(3.0)));
    ck_assert_double_eq(t, 4);
    double want = 0.5 * gsl_cdf_poisson_Q(3, 2) + 0.5 * gsl_cdf_poisson_P(3, 6);
    ck_assert_close(el, want, 1e-14);
    double rates[4];
    lop_rates_threshold(p, c, 4, true, rates);
    ck_assert_close(rates[2], gsl_cdf_poisson_Q(3, 2), 1e-14);
    ck_assert_close(rates[3], gsl_cdf_poisson_Q(3, 6), 1e-14);
    lop_problem_free(p);
}
END_TEST

/* The Bayes rule of the detection problem says yes above the Green & Swets criterion x,
 * so its rates are Q(x) given noise and Q(x - d') given signal; the switch point is
 * refined to 1e-12 (test_rule asks 1e-9) and the densities are below 0.4. */
START_TEST(bayes_rule_rates_are_tail_areas_beyond_the_switch_point)
{
    const double ps = 0.3, d = 1.4;
    lop_problem *p = test_detection(ps, d, detection_loss, "");
    lop_results *r = test_solve(p);
    double x = test_detection_best_threshold(ps, d, detection_loss);
    double rates[4], overall[2];
    ck_assert(lop_rates_by_state(p, r, rates));
    ck_assert_close(rates[2], gsl_cdf_ugaussian_Q(x), 1e-9);
    ck_assert_close(rates[3], gsl_cdf_ugaussian_Q(x - d), 1e-9);
    ck_assert_close(rates[0] + rates[2], 1, 1e-14);
    ck_assert_close(rates[1] + rates[3], 1, 1e-14);
    ck_assert(lop_rates_overall(p, r, overall));
    ck_assert_close(overall[1], (1 - ps) * rates[2] + ps * rates[3], 1e-15);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* One positive-or-negative test: the rule treats after a positive result only (20 x
 * P(ill | +) = 1.55 > 1 but 20 x P(ill | -) = 0.045 < 1), so P(treat | healthy) is the
 * false-positive rate 0.096 and P(treat | ill) the sensitivity 0.8. */
START_TEST(table_channel_rates_are_the_test_characteristics)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = screening\n[states]\nlabels = healthy, ill\n"
        "[prior]\nweights = 0.99, 0.01\n"
        "[evidence.test]\noutcomes = negative, positive\n"
        "given.healthy = 0.904, 0.096\ngiven.ill = 0.2, 0.8\n"
        "[actions]\nlabels = wait, treat\n[loss]\nwait = 0, 20\ntreat = 1, 1\n");
    lop_results *r = test_solve(p);
    double rates[4], overall[2];
    ck_assert(lop_rates_by_state(p, r, rates));
    ck_assert_close(rates[2], 0.096, 1e-15);
    ck_assert_close(rates[3], 0.8, 1e-15);
    ck_assert_close(rates[0], 0.904, 1e-15);
    ck_assert(lop_rates_overall(p, r, overall));
    ck_assert_close(overall[1], 0.99 * 0.096 + 0.01 * 0.8, 1e-15);
    ck_assert_int_eq(lop_rates_numeric_channel(p), -1);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Without evidence the prior-only action is chosen in every state; estimates have no
 * choice rates. */
START_TEST(prior_action_without_evidence_and_no_rates_for_estimates)
{
    lop_problem *p = test_problem("[problem]\ntitle = t\n[states]\nlabels = a, b\n"
                                  "[prior]\nweights = 3, 1\n[actions]\nlabels = x, y\n"
                                  "[loss]\nx = 0, 4\ny = 2, 0\n");
    lop_results *r = test_solve(p);
    /* x: 0.25·4 = 1 < y: 0.75·2 = 1.5. */
    double rates[4];
    ck_assert(lop_rates_by_state(p, r, rates));
    ck_assert_double_eq(rates[0], 1);
    ck_assert_double_eq(rates[1], 1);
    ck_assert_double_eq(rates[2], 0);
    ck_assert_double_eq(rates[3], 0);
    lop_results_free(r);
    lop_problem_free(p);

    p = test_problem("[problem]\ntitle = t\n[states]\nvalues = 1, 2, 3\n"
                     "[prior]\nweights = 1, 1, 1\n[evidence]\nnoise = gaussian\nsd = 1\n"
                     "[actions]\nestimate = yes\n[loss]\ncurve = squared\n");
    r = test_solve(p);
    double none[3] = {7, 7, 7};
    ck_assert(!lop_rates_by_state(p, r, none));
    ck_assert(!lop_rates_overall(p, r, none));
    ck_assert_double_eq(none[0], 7);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* The one numeric channel is found among table channels; two numeric channels make it
 * ambiguous. */
START_TEST(numeric_channel_is_found_only_when_alone)
{
    static const char head[] =
        "[problem]\ntitle = t\n[states]\nlabels = a, b\n[prior]\nweights = 1, 1\n"
        "[evidence.swab]\noutcomes = u, v\ngiven.a = 0.5, 0.5\ngiven.b = 0.2, 0.8\n"
        "[evidence.dial]\nnoise = gaussian\nmean = 0, 1\nsd = 1\n";
    static const char tail[] = "[actions]\nlabels = x, y\n[loss]\nx = 0, 1\ny = 1, 0\n";
    char text[1024];
    snprintf(text, sizeof text, "%s%s", head, tail);
    lop_problem *p = test_problem(text);
    ck_assert_int_eq(lop_rates_numeric_channel(p), 1);
    lop_problem_free(p);
    snprintf(text, sizeof text, "%s[evidence.more]\nnoise = gaussian\nmean = 0, 2\nsd = 1\n%s",
             head, tail);
    p = test_problem(text);
    ck_assert_int_eq(lop_rates_numeric_channel(p), -1);
    lop_problem_free(p);
}
END_TEST

Suite *suite_rates(void)
{
    Suite *s = suite_create("rates");
    TCase *tc = tcase_create("rates");
    tcase_add_test(tc, threshold_rates_are_normal_tail_areas);
    tcase_add_test(tc, d_prime_is_the_mean_difference_over_the_summary_sd);
    tcase_add_test(tc, best_threshold_is_the_likelihood_ratio_criterion);
    tcase_add_test(tc, no_best_threshold_when_one_action_always_wins);
    tcase_add_test(tc, best_count_threshold_is_the_likelihood_ratio_criterion);
    tcase_add_test(tc, bayes_rule_rates_are_tail_areas_beyond_the_switch_point);
    tcase_add_test(tc, table_channel_rates_are_the_test_characteristics);
    tcase_add_test(tc, prior_action_without_evidence_and_no_rates_for_estimates);
    tcase_add_test(tc, numeric_channel_is_found_only_when_alone);
    suite_add_tcase(s, tc);
    return s;
}
