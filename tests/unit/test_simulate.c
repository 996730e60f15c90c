#include <omp.h>
#include <stdio.h>
#include <stdlib.h>

#include "lopside/util/interp.h"
#include "lopside/studies/simulate.h"
#include "testutil.h"
/* The deciders and the trial drawer are private to the simulation; their lookups are
 * what these tests pin down. */
#include "../../src/studies/simulate_private.h"

/* Two table channels (3 outcomes × 3 repeats, 2 outcomes × 2 repeats) and a gaussian
 * channel whose sd differs between states, so most rows have two switch points. */
static const char two_tables[] =
    "[problem]\ntitle = t\n[states]\nlabels = clean, dirty\n[prior]\nweights = 0.8, 0.2\n"
    "[evidence.swab]\noutcomes = clear, faint, flagged\ngiven.clean = 0.8, 0.15, 0.05\n"
    "given.dirty = 0.2, 0.3, 0.5\nrepeats = 3\n"
    "[evidence.dip]\noutcomes = no, yes\ngiven.clean = 0.9, 0.1\ngiven.dirty = 0.4, 0.6\n"
    "repeats = 2\n"
    "[evidence.turbidity]\nnoise = gaussian\nmean = 0.1, 0.35\nsd = 0.08, 0.12\n"
    "[actions]\nlabels = discard, keep\n[loss]\ndiscard = 4, 4\nkeep = 0, 60\n";

/* Every count vector of the rule table has the rank of its row: the drawer's row index
 * (rank of each channel's counts times its stride) names the row rule.c tabulated. */
START_TEST(count_ranks_name_the_rule_rows)
{
    lop_problem *p = test_problem(two_tables);
    lop_results *r = test_solve(p);
    sim_draw d;
    ck_assert_int_eq(sim_draw_init(&d, p, &r->rule), 0);
    ck_assert_uint_eq(d.n_tables, 2);
    /* C(3 + 2, 2) = 10 vectors of the swab, C(2 + 1, 1) = 3 of the dip. */
    ck_assert_uint_eq(d.tables[0].n_vectors, 10);
    ck_assert_uint_eq(d.tables[1].n_vectors, 3);
    ck_assert_uint_eq(r->rule.n_rows, 30);
    for (size_t row = 0; row < r->rule.n_rows; row++) {
        const size_t *counts = &r->rule.counts[row * r->rule.n_columns];
        size_t index = lop_simulate_counts_rank(counts, 3) * d.tables[0].stride +
                       lop_simulate_counts_rank(counts + 3, 2) * d.tables[1].stride;
        ck_assert_uint_eq(index, row);
    }
    sim_draw_clear(&d);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Ranks of a longer channel (4 outcomes, 5 repeats) against the enumeration order the
 * rule table uses, written out here: (n,0,0,0) first, then reverse-lexicographic. */
START_TEST(count_rank_follows_reverse_lexicographic_order)
{
    size_t expected = 0;
    for (long a = 5; a >= 0; a--)
        for (long b = 5 - a; b >= 0; b--)
            for (long c = 5 - a - b; c >= 0; c--) {
                size_t v[4] = {(size_t)a, (size_t)b, (size_t)c, (size_t)(5 - a - b - c)};
                ck_assert_uint_eq(lop_simulate_counts_rank(v, 4), expected);
                expected++;
            }
    ck_assert_uint_eq(expected, 56); /* C(5 + 3, 3) */
}
END_TEST

/* The Bayes decider (row, then the row's switch points by binary search) takes the
 * action the rule tabulated at every grid point of every row. Points within 1e-9 of a
 * switch point are skipped: there the grid's action and the switch point's side are
 * both a rounding of a tie. */
START_TEST(switch_point_lookup_agrees_with_grid_actions)
{
    lop_problem *p = test_problem(two_tables);
    lop_results *r = test_solve(p);
    const lop_rule_result *rule = &r->rule;
    sim_decider dec;
    bool no_memory;
    ck_assert_ptr_null(sim_decider_init(&dec, p, r, -1, &no_memory));
    ck_assert(!no_memory);
    ck_assert_int_eq(dec.kind, SIM_CUTS);
    size_t checked = 0, changes = 0;
    for (size_t row = 0; row < rule->n_rows; row++) {
        for (size_t i = 0; i < rule->n_grid; i++) {
            sim_trial t = {.row = row, .x = rule->grid[i]};
            bool near = false;
            for (size_t k = 0; k < rule->n_switches; k++)
                near |= rule->switches[k].row == row && fabs(rule->switches[k].x - t.x) < 1e-9;
            if (near)
                continue;
            ck_assert_uint_eq(sim_decide_action(&dec, &t),
                              rule->grid_action[row * rule->n_grid + i]);
            checked++;
            changes += i > 0 && rule->grid_action[row * rule->n_grid + i] !=
                                    rule->grid_action[row * rule->n_grid + i - 1];
        }
    }
    ck_assert_uint_eq(checked, rule->n_rows * rule->n_grid);
    ck_assert_uint_gt(changes, 10); /* the test sees rows that switch, not one action */
    sim_decider_clear(&dec);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

START_TEST(cut_index_counts_cuts_at_or_below)
{
    const double cuts[] = {-1, 0.5, 0.5, 2};
    ck_assert_uint_eq(lop_count_at_most(cuts, 4, -3), 0);
    ck_assert_uint_eq(lop_count_at_most(cuts, 4, -1), 1); /* at a cut: the upper side */
    ck_assert_uint_eq(lop_count_at_most(cuts, 4, 0.49), 1);
    ck_assert_uint_eq(lop_count_at_most(cuts, 4, 0.5), 3);
    ck_assert_uint_eq(lop_count_at_most(cuts, 4, 7), 4);
    ck_assert_uint_eq(lop_count_at_most(cuts, 0, 7), 0);
}
END_TEST

/* Linear interpolation on the grid 10, 12, 14, 16 of the values 1, 5, 4, 4; hand
 * computed: at 11, (1 + 5)/2 = 3; at 13.5, 5 + 0.75·(4 - 5) = 4.25; flat beyond. */
START_TEST(interpolation_and_nearest_point)
{
    const double v[] = {1, 5, 4, 4};
    ck_assert_close(lop_simulate_interpolate(v, 4, 10, 0.5, 10), 1, 1e-15);
    ck_assert_close(lop_simulate_interpolate(v, 4, 10, 0.5, 11), 3, 1e-15);
    ck_assert_close(lop_simulate_interpolate(v, 4, 10, 0.5, 13.5), 4.25, 1e-15);
    ck_assert_close(lop_simulate_interpolate(v, 4, 10, 0.5, 16), 4, 1e-15);
    ck_assert_close(lop_simulate_interpolate(v, 4, 10, 0.5, 3), 1, 1e-15);
    ck_assert_close(lop_simulate_interpolate(v, 4, 10, 0.5, 99), 4, 1e-15);
    ck_assert_uint_eq(lop_simulate_nearest(4, 10, 0.5, 10.9), 0);
    ck_assert_uint_eq(lop_simulate_nearest(4, 10, 0.5, 11.1), 1);
    ck_assert_uint_eq(lop_simulate_nearest(4, 10, 0.5, -5), 0);
    ck_assert_uint_eq(lop_simulate_nearest(4, 10, 0.5, 15.2), 3);
    ck_assert_uint_eq(lop_simulate_nearest(4, 10, 0.5, 40), 3);
}
END_TEST

/* Estimates on the grid path: the interpolating decider returns the tabulated Bayes
 * estimate at every grid point (up to the rounding of the grid's own spacing). */
START_TEST(estimate_lookup_agrees_at_grid_points)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nfrom = 400\nto = 1200\nstep = 4\n"
        "[prior]\nfamily = uniform\nlow = 500\nhigh = 1000\n"
        "[evidence.clock]\nnoise = scalar\nweber = 0.15\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = linlin\nunder = 0.01\nover = 0.03\n");
    lop_results *r = test_solve(p);
    sim_decider dec;
    bool no_memory;
    ck_assert_ptr_null(sim_decider_init(&dec, p, r, -1, &no_memory));
    ck_assert_int_eq(dec.kind, SIM_GRID_INTERPOLATE);
    for (size_t i = 0; i < r->rule.n_grid; i++) {
        sim_trial t = {.x = r->rule.grid[i]};
        /* The grid's points and x0 + i·h differ by a few ulps of x; the estimate's slope
         * is below 2, so 1e-9 relative is ample. */
        ck_assert_close(sim_decide_estimate(&dec, &t), r->rule.grid_estimate[i], 1e-9);
    }
    sim_decider_clear(&dec);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Without an estimate grid the estimate is any real number: between measurement points
 * the interpolated estimate is used as it is. With one (here 1, 2, .., 8) the estimates
 * are its points, and the interpolated estimate goes to the nearest of them. A lognormal
 * channel puts these estimates on the grid path. */
START_TEST(interpolated_estimates_snap_only_to_a_given_estimate_grid)
{
    for (int given = 0; given < 2; given++) {
        char text[512];
        snprintf(text, sizeof text,
                 "[problem]\ntitle = t\n[states]\nvalues = 1, 2, 4, 8\n"
                 "[prior]\nweights = 1, 1, 1, 1\n[evidence.meter]\nnoise = lognormal\n"
                 "log_sd = 0.4\n[actions]\nestimate = yes\n%s[loss]\ncurve = squared\n",
                 given ? "from = 1\nto = 8\npoints = 8\n" : "");
        lop_problem *p = test_problem(text);
        lop_results *r = test_solve(p);
        sim_decider dec;
        bool no_memory;
        ck_assert_ptr_null(sim_decider_init(&dec, p, r, -1, &no_memory));
        ck_assert_int_eq(dec.kind, SIM_GRID_INTERPOLATE);
        size_t moved = 0;
        for (size_t i = 0; i + 1 < r->rule.n_grid; i++) {
            sim_trial t = {.x = 0.5 * (r->rule.grid[i] + r->rule.grid[i + 1])};
            double raw =
                lop_simulate_interpolate(dec.grid_value, dec.n_grid, dec.x0, dec.inv_h, t.x);
            double want = raw;
            if (given) {        /* the nearest of 1..8; a tie goes to the lower */
                want = 1;
                for (double v = 2; v <= 8; v++)
                    if (fabs(raw - v) < fabs(raw - want))
                        want = v;
            }
            ck_assert_close(sim_decide_estimate(&dec, &t), want, 0);
            moved += raw != want;
        }
        if (given)
            ck_assert_uint_gt(moved, 0); /* some midpoints fall between two estimates */
        sim_decider_clear(&dec);
        lop_results_free(r);
        lop_problem_free(p);
    }
}
END_TEST

/* A believed rule on the grid path decides where its own posterior says: lognormal noise
 * over the values 1 and 2, the mean of the logs of 2 repeats N(log r, s), s = 0.5/√2.
 * In log space this is equal-variance detection with d' = ln 2 / s, so the believed
 * criterion is log x = s·(d'/2 + ln β / d') (Green & Swets 1966), with β = (believed
 * prior odds 0.7/0.3)·(loss difference 2 under r = 1)/(1 under r = 2). */
START_TEST(believed_rule_switches_at_its_own_criterion)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nvalues = 1, 2\n[prior]\nweights = 0.5, 0.5\n"
        "[evidence.meter]\nnoise = lognormal\nlog_sd = 0.5\nrepeats = 2\n"
        "[actions]\nlabels = low, high\n[loss]\nlow = 0, 1\nhigh = 2, 0\n"
        "[rule.doubtful]\nkind = believed\nprior.weights = 0.7, 0.3\n");
    lop_results *r = test_solve(p);
    sim_decider dec;
    bool no_memory;
    ck_assert_ptr_null(sim_decider_init(&dec, p, r, 0, &no_memory));
    ck_assert_int_eq(dec.kind, SIM_CUTS);
    ck_assert_uint_eq(dec.first[1], 1);
    double s = 0.5 / sqrt(2), d = log(2) / s, beta = (0.7 / 0.3) * 2;
    double x = exp(s * (d / 2 + log(beta) / d));
    /* Bisection to 2^-60 of a grid cell; the believed posterior's rounding moves the
     * crossing by ~1e-15 relative. */
    ck_assert_close(dec.cuts[0], x, 1e-12);
    ck_assert_uint_eq(dec.acts[0], 0);
    ck_assert_uint_eq(dec.acts[1], 1);
    sim_decider_clear(&dec);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

static lop_results *simulate(const lop_problem *p, volatile sig_atomic_t *stop)
{
    lop_results *r = test_solve(p);
    lop_error err = {0};
    lop_simulate_control ctl = {stop, NULL};
    ck_assert_int_eq(lop_simulate_run(p, r, &ctl, &err), LOP_OK);
    return r;
}

/* Every trial pays 2 whatever happens, so every number is known exactly: 2 per trial,
 * 2·trials per session with no spread, a single histogram bin, and the floor counts
 * totals strictly below it. Payoffs stay payoffs (the file's orientation). */
START_TEST(constant_payoff_is_exact_and_oriented)
{
    static const char text[] =
        "[problem]\ntitle = t\n[states]\nlabels = a, b\n[prior]\nweights = 1, 3\n"
        "[evidence]\nnoise = gaussian\nmean = 0, 1\nsd = 1\n"
        "[actions]\nlabels = x, y\n[payoff]\nx = 2, 2\ny = 2, 2\n"
        "[simulate]\nsessions = 50\ntrials = 30\nseed = 4\nfloor = %s\n";
    char buf[512];
    for (int pass = 0; pass < 2; pass++) {
        snprintf(buf, sizeof buf, text, pass ? "60.5" : "60");
        lop_problem *p = test_problem(buf);
        lop_results *r = simulate(p, NULL);
        const lop_simulation *sim = &r->simulation;
        ck_assert(sim->run);
        ck_assert_uint_eq(sim->n_rules, 1);
        const lop_simulated_rule *m = &sim->rules[0];
        ck_assert(m->simulated && m->has_analytic);
        ck_assert_close(m->analytic, 2, 1e-15);
        ck_assert_close(m->mean_per_trial, 2, 1e-15);
        ck_assert_close(m->ci95[0], 2, 1e-15);
        ck_assert_close(m->ci95[1], 2, 1e-15);
        ck_assert_close(m->mean_per_session, 60, 1e-15);
        ck_assert_close(m->p05, 60, 0);
        ck_assert_close(m->p95, 60, 0);
        ck_assert_close(m->below_floor, pass ? 1 : 0, 0);
        ck_assert_uint_eq(m->n_bins, 1);
        ck_assert_uint_eq(m->counts[0], 50);
        ck_assert(m->edges[0] <= 60 && 60 < m->edges[1]);
        lop_results_free(r);
        lop_problem_free(p);
    }
}
END_TEST

static const char detection[] =
    "[problem]\ntitle = t\n[states]\nlabels = noise, signal\n[prior]\nweights = 0.7, 0.3\n"
    "[evidence.ear]\nnoise = gaussian\nmean = 0, 1.5\nsd = 1\n"
    "[actions]\nlabels = say_no, say_yes\n[payoff]\nsay_no = 1, -2\nsay_yes = -3, 4\n"
    "[rule.unbiased]\nkind = threshold\nat = 0.75\n"
    "[simulate]\nsessions = 300\ntrials = 500\nseed = %d\nrules = bayes, unbiased\n";

static lop_results *simulate_detection(int seed, int threads, lop_problem **pp)
{
    char buf[1024];
    snprintf(buf, sizeof buf, detection, seed);
    *pp = test_problem(buf);
    int before = omp_get_max_threads();
    omp_set_num_threads(threads);
    lop_results *r = simulate(*pp, NULL);
    omp_set_num_threads(before);
    return r;
}

static bool same_rule(const lop_simulated_rule *a, const lop_simulated_rule *b, size_t n_choices)
{
    return a->mean_per_trial == b->mean_per_trial && a->ci95[0] == b->ci95[0] &&
           a->ci95[1] == b->ci95[1] && a->p05 == b->p05 && a->p50 == b->p50 &&
           a->p95 == b->p95 && a->n_bins == b->n_bins &&
           memcmp(a->counts, b->counts, a->n_bins * sizeof *a->counts) == 0 &&
           memcmp(a->edges, b->edges, (a->n_bins + 1) * sizeof *a->edges) == 0 &&
           memcmp(a->choices, b->choices, n_choices * sizeof *a->choices) == 0;
}

/* 150,000 trials make 3 blocks of 131 sessions: one thread or two, the same numbers;
 * another seed, others. The tallies add up: every session in the histogram, every trial
 * in a state, every trial of a state in one action. */
START_TEST(same_seed_same_numbers_whatever_the_threads)
{
    lop_problem *p1, *p2, *p3;
    lop_results *one = simulate_detection(7, 1, &p1);
    lop_results *two = simulate_detection(7, 2, &p2);
    lop_results *other = simulate_detection(8, 2, &p3);
    for (size_t k = 0; k < 2; k++) {
        const lop_simulated_rule *a = &one->simulation.rules[k], *b = &two->simulation.rules[k];
        ck_assert(same_rule(a, b, 4));
        ck_assert(!same_rule(a, &other->simulation.rules[k], 4));
        size_t in_bins = 0;
        for (size_t i = 0; i < a->n_bins; i++)
            in_bins += a->counts[i];
        ck_assert_uint_eq(in_bins, 300);
        ck_assert_uint_eq(a->state_trials[0] + a->state_trials[1], 150000);
        for (size_t s = 0; s < 2; s++)
            ck_assert_uint_eq(a->choices[s] + a->choices[2 + s], a->state_trials[s]);
        ck_assert(a->p05 <= a->p50 && a->p50 <= a->p95);
        ck_assert(a->ci95[0] < a->mean_per_trial && a->mean_per_trial < a->ci95[1]);
        ck_assert_close(a->mean_per_session, 500 * a->mean_per_trial, 1e-14);
    }
    lop_results_free(one);
    lop_results_free(two);
    lop_results_free(other);
    lop_problem_free(p1);
    lop_problem_free(p2);
    lop_problem_free(p3);
}
END_TEST

/* A stop request before the first block: marked interrupted, nothing summarized. */
START_TEST(stop_request_marks_the_run_interrupted)
{
    char buf[1024];
    snprintf(buf, sizeof buf, detection, 1);
    lop_problem *p = test_problem(buf);
    volatile sig_atomic_t stop = 1;
    lop_results *r = simulate(p, &stop);
    ck_assert(r->simulation.interrupted);
    ck_assert(!r->simulation.run);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* Two gaussian channels leave the rule untabulated; each trial is then decided from its
 * own posterior. Equal priors and losses, means 0 and 1, sd 1 in both channels: the
 * log-likelihood ratio is x1 + x2 - 1, so the Bayes action is `y` exactly when
 * x1 + x2 > 1 (Green & Swets 1966 with the two readings summed). */
START_TEST(untabulated_rule_decides_each_trial_from_its_posterior)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nlabels = a, b\n[prior]\nweights = 1, 1\n"
        "[evidence.one]\nnoise = gaussian\nmean = 0, 1\nsd = 1\n"
        "[evidence.two]\nnoise = gaussian\nmean = 0, 1\nsd = 1\n"
        "[actions]\nlabels = x, y\n[loss]\nx = 0, 1\ny = 1, 0\n"
        "[simulate]\nsessions = 10\ntrials = 10\n");
    lop_results *r = test_solve(p);
    ck_assert(!r->rule.computed);
    sim_decider dec;
    bool no_memory;
    ck_assert_ptr_null(sim_decider_init(&dec, p, r, -1, &no_memory));
    ck_assert_int_eq(dec.kind, SIM_DIRECT);
    double xs[2], work[8];
    size_t counts[1];
    sim_trial t = {.xs = xs, .counts = counts, .work = work};
    static const double points[][2] = {{0.6, 0.5}, {0.6, 0.3}, {-3, 4.1}, {-3, 3.9}, {2, -0.9}};
    for (size_t i = 0; i < sizeof points / sizeof *points; i++) {
        xs[0] = t.x = points[i][0];
        xs[1] = points[i][1];
        ck_assert_uint_eq(sim_decide_action(&dec, &t), points[i][0] + points[i][1] > 1);
    }
    sim_decider_clear(&dec);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

/* A rule that cannot be looked up nor decided trial by trial (grid states with two
 * channels: no rule table, and a posterior over the grid per trial is not attempted) is
 * reported as not simulated, with the reason and a warning. */
START_TEST(untabulated_grid_rule_is_not_simulated)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nfrom = 0\nto = 10\npoints = 101\n"
        "[prior]\nfamily = uniform\n"
        "[evidence.one]\nnoise = gaussian\nsd = 1\n[evidence.two]\nnoise = gaussian\nsd = 2\n"
        "[actions]\nestimate = yes\n[loss]\ncurve = squared\n"
        "[simulate]\nsessions = 10\ntrials = 10\n");
    lop_results *r = simulate(p, NULL);
    ck_assert(!r->rule.computed);
    ck_assert(r->simulation.run);
    ck_assert(!r->simulation.rules[0].simulated);
    ck_assert_ptr_nonnull(r->simulation.rules[0].not_simulated_why);
    bool warned = false;
    for (size_t i = 0; i < r->n_warnings; i++)
        warned |= strstr(r->warnings[i], "not simulated") != NULL;
    ck_assert(warned);
    lop_results_free(r);
    lop_problem_free(p);
}
END_TEST

Suite *suite_simulate(void)
{
    Suite *s = suite_create("simulate");
    TCase *tc = tcase_create("simulate");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, count_ranks_name_the_rule_rows);
    tcase_add_test(tc, count_rank_follows_reverse_lexicographic_order);
    tcase_add_test(tc, switch_point_lookup_agrees_with_grid_actions);
    tcase_add_test(tc, cut_index_counts_cuts_at_or_below);
    tcase_add_test(tc, interpolation_and_nearest_point);
    tcase_add_test(tc, estimate_lookup_agrees_at_grid_points);
    tcase_add_test(tc, interpolated_estimates_snap_only_to_a_given_estimate_grid);
    tcase_add_test(tc, believed_rule_switches_at_its_own_criterion);
    tcase_add_test(tc, constant_payoff_is_exact_and_oriented);
    tcase_add_test(tc, same_seed_same_numbers_whatever_the_threads);
    tcase_add_test(tc, stop_request_marks_the_run_interrupted);
    tcase_add_test(tc, untabulated_rule_decides_each_trial_from_its_posterior);
    tcase_add_test(tc, untabulated_grid_rule_is_not_simulated);
    suite_add_tcase(s, tc);
    return s;
}
