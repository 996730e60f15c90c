#include <stdio.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_randist.h>

#include "lopside/engine/flatness.h"
#include "lopside/studies/sweep.h"
#include "testutil.h"

/* Equal-variance yes/no detection (noise N(0,1), signal N(d',1)), payoffs V_hit, C_miss,
 * V_cr, C_fa, observed 0.9, and whatever `extra` sections follow. */
static lop_problem *detection(double ps, double d, double vh, double cm, double vc, double cf,
                              const char *extra)
{
    char text[2048];
    snprintf(text, sizeof text,
             "[problem]\ntitle = detection\n[states]\nlabels = noise, signal\n"
             "[prior]\nweights = %.17g, %.17g\n"
             "[evidence.ear]\nnoise = gaussian\nmean = 0, %.17g\nsd = 1\nobserved = 0.9\n"
             "[actions]\nlabels = say_no, say_yes\n"
             "[payoff]\nsay_no = %.17g, %.17g\nsay_yes = %.17g, %.17g\n%s",
             1 - ps, ps, d, vc, -cm, -cf, vh, extra);
    return test_problem(text);
}

/* Expected loss (minus the payoff) of saying yes at or above t (Green & Swets 1966):
 * -(P(n)[V_cr Phi(t) - C_fa Q(t)] + P(s)[V_hit Q(t - d') - C_miss Phi(t - d')]). */
static double threshold_loss(double ps, double d, double vh, double cm, double vc, double cf,
                             double t)
{
    return -((1 - ps) * (vc * gsl_cdf_ugaussian_P(t) - cf * gsl_cdf_ugaussian_Q(t)) +
             ps * (vh * gsl_cdf_ugaussian_Q(t - d) - cm * gsl_cdf_ugaussian_P(t - d)));
}

/* Green & Swets (1966): the optimal criterion d'/2 + ln(beta)/d' with
 * beta = (P(n)/P(s))(V_cr + C_fa)/(V_hit + C_miss). */
static double criterion(double ps, double d, double vh, double cm, double vc, double cf)
{
    return d / 2 + log(((1 - ps) / ps) * (vc + cf) / (vh + cm)) / d;
}

/* Per threshold t: false-alarm rate F = Q(t), hit rate H = Q(t - d'), and Macmillan &
 * Creelman's (Detection Theory: A User's Guide, ch. 1-2) c = -(z(H) + z(F))/2,
 * beta = exp(c·d'), and d' = z(H) - z(F). */
START_TEST(threshold_sweep_gives_roc_points_and_detection_measures)
{
    const double ps = 0.3, d = 1.5;
    lop_problem *p = detection(ps, d, 4, 2, 1, 3,
                               "[sweep.roc]\nx = rule.threshold\nx_from = -1\nx_to = 3\n"
                               "x_points = 9\n");
    lop_results *r = test_solve(p);
    ck_assert_uint_eq(r->n_sweeps, 1);
    const lop_sweep_result *w = &r->sweeps[0];
    ck_assert(w->threshold && w->by_state);
    ck_assert(w->rows[0].sdt);
    ck_assert_close(w->rows[0].d_prime, d, 1e-15);
    for (size_t i = 0; i < 9; i++) {
        const lop_sweep_point *pt = &w->points[i];
        double t = -1 + 0.5 * (double)i;
        ck_assert_close(pt->x, t, 1e-15);
        double F = gsl_cdf_ugaussian_Q(t), H = gsl_cdf_ugaussian_Q(t - d);
        /* Normal CDF values on both sides: agreement to rounding. */
        ck_assert_close(pt->rates[1 * 2 + 0], F, 1e-14);
        ck_assert_close(pt->rates[1 * 2 + 1], H, 1e-14);
        ck_assert_close(pt->rates[0 * 2 + 0] + pt->rates[1 * 2 + 0], 1, 1e-14);
        ck_assert_close(pt->expected_loss, threshold_loss(ps, d, 4, 2, 1, 3, t), 1e-13);
        double zH = gsl_cdf_ugaussian_Pinv(H), zF = gsl_cdf_ugaussian_Pinv(F);
        /* The inverse CDF loses a few digits in the tails (rates down to 1e-3): 1e-9. */
        ck_assert_close(zH - zF, d, 1e-9);
        ck_assert_close(pt->criterion, -(zH + zF) / 2, 1e-9);
        ck_assert_close(pt->beta, exp(-(zH + zF) / 2 * (zH - zF)), 1e-9);
    }
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* The Bayes threshold is the Green & Swets criterion, the switch point of the Bayes rule,
 * and the thresholds within 1%, 5%, 10% end where the closed-form expected loss reaches
 * that much above the optimum. */
START_TEST(bayes_threshold_and_its_flatness)
{
    static const double cases[][6] = {
        {0.3, 1.5, 4, 2, 1, 3}, {0.5, 1.0, 1, 1, 1, 1}, {0.2, 2.0, 10, 1, 1, 5},
    };
    for (size_t c = 0; c < sizeof cases / sizeof *cases; c++) {
        const double *k = cases[c];
        lop_problem *p = detection(k[0], k[1], k[2], k[3], k[4], k[5],
                                   "[sweep.roc]\nx = rule.threshold\nx_from = -2\nx_to = 4\n");
        lop_results *r = test_solve(p);
        const lop_threshold_row *row = &r->sweeps[0].rows[0];
        double x = criterion(k[0], k[1], k[2], k[3], k[4], k[5]);
        ck_assert(row->has_bayes_threshold);
        /* Brent on the slope stops at 1e-12. */
        ck_assert_close(row->bayes_threshold, x, 1e-9);
        ck_assert_close(row->bayes_threshold, r->rule.switches[0].x, 1e-9);
        double best = threshold_loss(k[0], k[1], k[2], k[3], k[4], k[5], x);
        ck_assert_close(row->bayes_threshold_loss, best, 1e-12);
        ck_assert_close(row->bayes_risk, r->rule.bayes_risk, 1e-15);
        ck_assert(row->flatness.computed);
        for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
            const lop_flat_range *f = &row->flatness.range[l];
            double target = best + lop_flatness_levels[l] * fabs(best);
            ck_assert(f->from < x && x < f->to);
            /* The ends are roots to 1e-10 in the threshold; the loss's slope there is
             * below 1, so it meets the target to 1e-9. */
            ck_assert_close(threshold_loss(k[0], k[1], k[2], k[3], k[4], k[5], f->from), target,
                            1e-9);
            ck_assert_close(threshold_loss(k[0], k[1], k[2], k[3], k[4], k[5], f->to), target,
                            1e-9);
            if (l > 0)
                ck_assert(f->from < f[-1].from && f->to > f[-1].to);
        }
        lop_results_free(r);
        lop_problem_free(p);
    }
}
END_TEST

/* A sweep of the false-alarm cost: at every point the switch point follows Green &
 * Swets, the Bayes risk is the closed-form loss of that criterion, the choice rates are
 * the normal tails beyond it, and the case's action is the better one under the case's
 * posterior (observed 0.9). */
START_TEST(false_alarm_penalty_sweep_follows_green_and_swets)
{
    const double ps = 0.3, d = 1.5;
    lop_problem *p = detection(ps, d, 4, 2, 1, 3,
                               "[sweep.penalty]\nx = payoff.say_yes[1]\nx_from = -10\n"
                               "x_to = -1\nx_points = 10\n");
    lop_results *r = test_solve(p);
    const lop_sweep_result *w = &r->sweeps[0];
    ck_assert(!w->threshold);
    ck_assert_uint_eq(w->nx * w->ny, 10);
    double ln = (1 - ps) * gsl_ran_gaussian_pdf(0.9, 1), ls = ps * gsl_ran_gaussian_pdf(0.9 - d, 1);
    double q = ls / (ln + ls);
    for (size_t i = 0; i < 10; i++) {
        const lop_sweep_point *pt = &w->points[i];
        double cf = 10 - (double)i;
        ck_assert_close(pt->x, -cf, 1e-15);
        double x = criterion(ps, d, 4, 2, 1, cf);
        ck_assert(pt->computed);
        ck_assert_uint_eq(pt->n_switches, 1);
        ck_assert_close(pt->switches[0].x, x, 1e-9);
        ck_assert_close(pt->bayes_risk, threshold_loss(ps, d, 4, 2, 1, cf, x), 1e-12);
        /* EVPI: the risk minus the loss of deciding knowing the state (-V_cr, -V_hit). */
        ck_assert_close(pt->evpi, pt->bayes_risk - ((1 - ps) * -1 + ps * -4), 1e-12);
        ck_assert_close(pt->rates[1 * 2 + 0], gsl_cdf_ugaussian_Q(x), 1e-9);
        ck_assert_close(pt->rates[1 * 2 + 1], gsl_cdf_ugaussian_Q(x - d), 1e-9);
        double el_no = -(1 - q) * 1 + q * 2, el_yes = (1 - q) * cf - q * 4;
        ck_assert_uint_eq(pt->case_action, el_yes < el_no ? 1 : 0);
    }
    /* The cheapest false alarm (cost 1) makes the case's answer yes, the dearest no. */
    ck_assert_uint_eq(w->points[0].case_action, 0);
    ck_assert_uint_eq(w->points[9].case_action, 1);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Two axes: x runs fastest; every point follows the criterion of its own d' (y). */
START_TEST(two_axis_sweep_orders_points_x_fastest)
{
    lop_problem *p = detection(0.5, 1, 1, 1, 1, 1,
                               "[sweep.grid]\nx = payoff.say_yes[1]\nx_from = -3\nx_to = -1\n"
                               "x_points = 3\ny = evidence.ear.mean[2]\ny_from = 1\ny_to = 2\n"
                               "y_points = 2\n");
    lop_results *r = test_solve(p);
    const lop_sweep_result *w = &r->sweeps[0];
    ck_assert_uint_eq(w->nx, 3);
    ck_assert_uint_eq(w->ny, 2);
    for (size_t j = 0; j < 2; j++)
        for (size_t i = 0; i < 3; i++) {
            const lop_sweep_point *pt = &w->points[j * 3 + i];
            double cf = 3 - (double)i, d = 1 + (double)j;
            ck_assert_close(pt->x, -cf, 1e-15);
            ck_assert_close(pt->y, d, 1e-15);
            ck_assert_close(pt->switches[0].x, criterion(0.5, d, 1, 1, 1, cf), 1e-9);
        }
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* A threshold sweep with a y axis: one Bayes threshold per y, each Green & Swets'
 * criterion of its own d' (the signal's mean). */
START_TEST(threshold_sweep_with_a_y_axis)
{
    lop_problem *p = detection(0.3, 1.5, 4, 2, 1, 3,
                               "[sweep.rocs]\nx = rule.threshold\nx_from = -1\nx_to = 3\n"
                               "x_points = 5\ny = evidence.ear.mean[2]\ny_from = 1\ny_to = 2.5\n"
                               "y_points = 4\n");
    lop_results *r = test_solve(p);
    const lop_sweep_result *w = &r->sweeps[0];
    ck_assert_uint_eq(w->ny, 4);
    for (size_t j = 0; j < 4; j++) {
        double d = 1 + 0.5 * (double)j;
        const lop_threshold_row *row = &w->rows[j];
        ck_assert_close(row->y, d, 1e-15);
        ck_assert(row->sdt && row->has_bayes_threshold);
        ck_assert_close(row->d_prime, d, 1e-15);
        ck_assert_close(row->bayes_threshold, criterion(0.3, d, 4, 2, 1, 3), 1e-9);
        const lop_sweep_point *pt = &w->points[j * 5 + 4];
        ck_assert_close(pt->rates[1 * 2 + 1], gsl_cdf_ugaussian_Q(3 - d), 1e-14);
    }
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

typedef struct {
    size_t calls, last_done, last_total;
    bool ordered;
} step_count;

static void count_step(void *ctx, const char *what, size_t done, size_t total)
{
    step_count *c = ctx;
    (void)what;
    c->ordered &= done <= total && (c->calls == 0 || done >= c->last_done ||
                                    total != c->last_total);
    c->calls++;
    c->last_done = done;
    c->last_total = total;
}

/* Long work reports its steps: a 7-point sweep reports 7 steps, the last one done. */
START_TEST(sweeps_report_progress)
{
    lop_problem *p = detection(0.3, 1.5, 4, 2, 1, 3,
                               "[sweep.s]\nx = payoff.say_yes[1]\nx_from = -5\nx_to = -1\n"
                               "x_points = 7\n");
    step_count count = {0, 0, 0, true};
    lop_progress progress = {count_step, &count};
    lop_error err = {0};
    lop_results *r = lop_run_solve(p, &progress, &err);
    ck_assert_ptr_nonnull(r);
    ck_assert_uint_eq(count.calls, 7);
    ck_assert(count.ordered);
    ck_assert_uint_eq(count.last_done, 7);
    ck_assert_uint_eq(count.last_total, 7);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Grid states, a choice by bands: N(800, 120) prior, N(s, 80) clock, `long` above 800.
 * The rule says `long` above its switch point x*, so P(long) is the sum over the grid's
 * states of prior(s) Q((x* - s)/80), and close to the continuous predictive tail
 * Q((x* - 800)/sqrt(120^2 + 80^2)) (the 1-ms grid changes the prior's variance by
 * Sheppard's 1/12: far below 1e-5). */
START_TEST(grid_choice_rates_are_predictive_tails)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = bands\n[states]\nfrom = 300\nto = 1300\npoints = 1001\n"
        "[prior]\nfamily = normal\nmean = 800\nsd = 120\n"
        "[evidence.clock]\nnoise = gaussian\nsd = 80\n"
        "[actions]\nlabels = short, long\n[payoff]\ncuts = 800\nshort = 1, -1\nlong = -2, 1\n"
        "[sweep.one]\nx = payoff.long[1]\nx_from = -3\nx_to = -1\nx_points = 3\n");
    lop_results *r = test_solve(p);
    const lop_sweep_result *w = &r->sweeps[0];
    ck_assert(!w->by_state);
    ck_assert_uint_eq(w->n_rates, 2);
    double sd = sqrt(120.0 * 120 + 80 * 80);
    for (size_t i = 0; i < 3; i++) {
        const lop_sweep_point *pt = &w->points[i];
        ck_assert_uint_eq(pt->n_switches, 1);
        double x = pt->switches[0].x, sum = 0;
        for (size_t s = 0; s < p->n_states; s++)
            sum += p->prior[s] * gsl_cdf_ugaussian_Q((x - p->state_values[s]) / 80);
        /* The same sum of normal tails on both sides: rounding only. */
        ck_assert_close(pt->rates[1], sum, 1e-12);
        ck_assert_close(pt->rates[1], gsl_cdf_ugaussian_Q((x - 800) / sd), 1e-5);
        ck_assert_close(pt->rates[0] + pt->rates[1], 1, 1e-12);
    }
    /* A dearer wrong `long` (payoff -3 when short) moves the switch point up. */
    ck_assert(w->points[0].switches[0].x > w->points[2].switches[0].x);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Finite numeric states on the generic path (lognormal noise): P(a | s) is the lognormal
 * tail beyond the switch point. */
START_TEST(generic_path_rates_by_state)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = gauge\n[states]\nvalues = 1, 2\n[prior]\nweights = 1, 1\n"
        "[evidence.gauge]\nnoise = lognormal\nlog_sd = 0.5\n"
        "[actions]\nlabels = low, high\n[loss]\nlow = 0, 1\nhigh = 1, 0\n"
        "[sweep.s]\nx = evidence.gauge.log_sd\nx_from = 0.4\nx_to = 0.6\nx_points = 2\n");
    lop_results *r = test_solve(p);
    const lop_sweep_result *w = &r->sweeps[0];
    ck_assert(w->by_state);
    for (size_t i = 0; i < 2; i++) {
        const lop_sweep_point *pt = &w->points[i];
        double sl = 0.4 + 0.2 * (double)i;
        ck_assert_uint_eq(pt->n_switches, 1);
        /* Equal priors and losses: the switch is where the likelihoods cross, the
         * geometric mean of the two medians, sqrt(2) (Brent, to 1e-12). */
        ck_assert_close(pt->switches[0].x, sqrt(2.0), 1e-9);
        for (size_t s = 0; s < 2; s++) {
            double median = 1 + (double)s;
            double tail = gsl_cdf_ugaussian_Q((log(sqrt(2.0)) - log(median)) / sl);
            /* A switch point off by 1e-12 moves a tail by less than 1e-11. */
            ck_assert_close(pt->rates[2 + s], tail, 1e-10);
            ck_assert_close(pt->rates[s] + pt->rates[2 + s], 1, 1e-12);
        }
    }
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Squared loss: the expected loss of estimate e is V + (e - m)^2 with m and V the
 * posterior mean and variance (a textbook identity). With the optimum E at estimate a,
 * the estimates within k of it are m +- sqrt(E (1 + k) - V). Checked for the case; every
 * sweep point has ranges around its estimate, and the point whose sd is the file's
 * repeats the case's ranges. */
START_TEST(estimate_flatness_of_squared_loss)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = aim\n[states]\nfrom = -40\nto = 40\npoints = 801\n"
        "[prior]\nfamily = normal\nmean = 0\nsd = 8\n"
        "[evidence.eye]\nnoise = gaussian\nsd = 4\nobserved = 3.2\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n"
        "[sweep.noise]\nx = evidence.eye.sd\nx_from = 2\nx_to = 6\nx_points = 3\n");
    lop_results *r = test_solve(p);
    double m = 0, v = 0;
    for (size_t s = 0; s < p->n_states; s++)
        m += r->kase.posterior[s] * p->state_values[s];
    for (size_t s = 0; s < p->n_states; s++)
        v += r->kase.posterior[s] * pow(p->state_values[s] - m, 2);
    const lop_flatness *f = &r->case_flatness;
    ck_assert(f->computed);
    ck_assert_close(f->at, r->kase.bayes_estimate, 0);
    /* The Bayes estimate is the exact mean, or the estimate grid's point next to it. */
    ck_assert(fabs(f->at - m) <= 0.1);
    double best = v + (f->at - m) * (f->at - m);
    /* Sums over 801 states on both sides: 1e-12. */
    ck_assert_close(f->optimum, best, 1e-12);
    for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
        double half = sqrt(best * (1 + lop_flatness_levels[l]) - v);
        /* Brent ends the ranges at 1e-10 (relative). */
        ck_assert_close(f->range[l].from, m - half, 1e-8);
        ck_assert_close(f->range[l].to, m + half, 1e-8);
    }
    const lop_sweep_result *w = &r->sweeps[0];
    for (size_t i = 0; i < 3; i++) {
        const lop_sweep_point *pt = &w->points[i];
        ck_assert(pt->flatness.computed);
        ck_assert_close(pt->case_estimate, pt->flatness.at, 0);
        for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
            ck_assert(pt->flatness.range[l].from < pt->flatness.at);
            ck_assert(pt->flatness.range[l].to > pt->flatness.at);
            if (l > 0)
                ck_assert(pt->flatness.range[l].to > pt->flatness.range[l - 1].to);
        }
        /* Squared loss: the Bayes risk is the posterior variance, the same for every
         * measurement, (1/64 + 1/sd^2)^-1, up to the grid's Sheppard term on the prior and
         * rounding estimates to the 0.1 grid (each about 1e-3 absolute). */
        double sd = 2 + 2 * (double)i;
        ck_assert_close(pt->bayes_risk, 1 / (1 / 64.0 + 1 / (sd * sd)), 1e-3);
        ck_assert_close(pt->evpi, pt->bayes_risk, 1e-12);
    }
    for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
        ck_assert_close(w->points[1].flatness.range[l].from, f->range[l].from, 1e-12);
        ck_assert_close(w->points[1].flatness.range[l].to, f->range[l].to, 1e-12);
    }
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* A point that makes the problem invalid is an input error at the sweep's x line that
 * names the sweep, the path, the value and the point; a path naming no key is refused
 * when the file is read. */
START_TEST(bad_points_and_paths_are_input_errors)
{
    static const char head[] =
        "[problem]\ntitle = t\n[states]\nlabels = n, s\n[prior]\nweights = 1, 1\n"
        "[evidence.ear]\nnoise = gaussian\nmean = 0, 1\nsd = 1\n"
        "[actions]\nlabels = no, yes\n[loss]\nno = 0, 1\nyes = 1, 0\n";
    char text[1024];
    lop_error err;
    snprintf(text, sizeof text, "%s[sweep.noise]\nx = evidence.ear.sd\nx_from = -1\nx_to = 1\n"
                                "x_points = 5\n", head);
    ck_assert_int_eq(test_problem_error(text, &err), LOP_EINPUT);
    ck_assert_int_eq(err.line, 17);
    ck_assert_str_eq(err.section, "sweep.noise");
    ck_assert_str_eq(err.key, "x");
    ck_assert_msg(strstr(err.message, "evidence.ear.sd = -1 (point 1 of 5) makes the problem "
                                      "invalid"),
                  "%s", err.message);
    snprintf(text, sizeof text, "%s[sweep.noise]\nx = evidence.ear.sdd\nx_from = 1\nx_to = 2\n",
             head);
    ck_assert_int_eq(test_problem_error(text, &err), LOP_EINPUT);
    ck_assert_int_eq(err.line, 17);
    ck_assert_msg(strstr(err.message, "names nothing") && strstr(err.message, "`sd`"), "%s",
                  err.message);
}
END_TEST

Suite *suite_sweep(void)
{
    Suite *s = suite_create("sweep");
    TCase *tc = tcase_create("sweep");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, threshold_sweep_gives_roc_points_and_detection_measures);
    tcase_add_test(tc, bayes_threshold_and_its_flatness);
    tcase_add_test(tc, false_alarm_penalty_sweep_follows_green_and_swets);
    tcase_add_test(tc, two_axis_sweep_orders_points_x_fastest);
    tcase_add_test(tc, threshold_sweep_with_a_y_axis);
    tcase_add_test(tc, sweeps_report_progress);
    tcase_add_test(tc, grid_choice_rates_are_predictive_tails);
    tcase_add_test(tc, generic_path_rates_by_state);
    tcase_add_test(tc, estimate_flatness_of_squared_loss);
    tcase_add_test(tc, bad_points_and_paths_are_input_errors);
    suite_add_tcase(s, tc);
    return s;
}
