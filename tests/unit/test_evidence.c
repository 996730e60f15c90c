/* Log-likelihoods, masses and quantiles of measurement summaries, checked against GSL's
 * own distribution functions (gsl_ran_*_pdf, gsl_cdf_*) as the independent reference. */
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_randist.h>

#include "lopside/model/evidence.h"
#include "testutil.h"

/* Log-densities of a few units: GSL's density and its log round to ~1e-16 relative, so
 * 1e-12 (absolute below 1, relative above) leaves room for the log and nothing else. */
#define LOG_TOL 1e-12

/* A numeric channel of the given noise and per-state centers and spreads (borrowed). */
static lop_channel numeric(lop_noise noise, double *center, double *spread)
{
    lop_channel c = {0};
    c.kind = LOP_CHANNEL_NOISE;
    c.noise = noise;
    c.center = center;
    c.spread = spread;
    c.repeats = 1;
    c.window = 1;
    c.trials = 1;
    return c;
}

/* |got/want - 1| <= tol: tail masses far below 1 must keep their digits. */
#define ck_assert_rel(got, want, tol) ck_assert_close((got) / (want), 1.0, (tol))

/* The summary of n repeats of N(c, sd) is their mean, N(c, sd/sqrt n). */
START_TEST(gaussian_summary_is_the_normal_density_of_the_mean)
{
    double center[] = {0, 1.5, -2}, spread[] = {1, 0.5, 3};
    const double xs[] = {-3, 0.2, 4};
    const size_t ns[] = {1, 4, 9};
    lop_noise kinds[] = {LOP_NOISE_GAUSSIAN, LOP_NOISE_SCALAR};
    for (size_t k = 0; k < 2; k++) {
        lop_channel c = numeric(kinds[k], center, spread);
        for (size_t s = 0; s < 3; s++)
            for (size_t i = 0; i < 3; i++)
                for (size_t j = 0; j < 3; j++) {
                    double sd = spread[s] / sqrt((double)ns[j]);
                    ck_assert_close(lop_evidence_log_summary(&c, s, xs[i], ns[j]),
                                    log(gsl_ran_gaussian_pdf(xs[i] - center[s], sd)), LOG_TOL);
                }
    }
}
END_TEST

/* The geometric mean of n lognormal readings with median r and log-sd sigma is
 * lognormal with median r and log-sd sigma/sqrt n; no density at x <= 0. */
START_TEST(lognormal_summary_is_the_lognormal_density)
{
    double center[] = {2, 30}, spread[] = {0.25, 0.8};
    lop_channel c = numeric(LOP_NOISE_LOGNORMAL, center, spread);
    const double xs[] = {0.5, 2, 17, 60};
    for (size_t s = 0; s < 2; s++)
        for (size_t i = 0; i < 4; i++)
            for (size_t n = 1; n <= 5; n += 2) {
                double sd = spread[s] / sqrt((double)n);
                ck_assert_close(lop_evidence_log_summary(&c, s, xs[i], n),
                                log(gsl_ran_lognormal_pdf(xs[i], log(center[s]), sd)), LOG_TOL);
            }
    ck_assert(lop_evidence_log_summary(&c, 0, 0, 1) == -INFINITY);
    ck_assert(lop_evidence_log_summary(&c, 0, -1, 1) == -INFINITY);
}
END_TEST

/* The sum of n Poisson counts of rate r in a window w is Poisson(n·w·r); a rate of 0
 * gives the count 0 for certain. */
START_TEST(poisson_summary_is_the_poisson_probability_of_the_sum)
{
    double center[] = {0.4, 2, 0}, spread[] = {0, 0, 0};
    lop_channel c = numeric(LOP_NOISE_POISSON, center, spread);
    c.window = 2.5;
    for (size_t s = 0; s < 2; s++)
        for (size_t n = 1; n <= 3; n++)
            for (unsigned k = 0; k <= 20; k++)
                ck_assert_close(lop_evidence_log_summary(&c, s, k, n),
                                log(gsl_ran_poisson_pdf(k, (double)n * 2.5 * center[s])),
                                LOG_TOL);
    ck_assert_double_eq(lop_evidence_log_summary(&c, 2, 0, 2), 0);
    ck_assert(lop_evidence_log_summary(&c, 2, 1, 2) == -INFINITY);
    ck_assert(lop_evidence_is_count(&c));
}
END_TEST

/* The sum of n binomial counts of t trials is Binomial(n·t, r); r = 0 and r = 1 are
 * certain of 0 and of every trial; more successes than trials are impossible. */
START_TEST(binomial_summary_is_the_binomial_probability_of_the_sum)
{
    double center[] = {0.3, 0.85, 0, 1}, spread[] = {0, 0, 0, 0};
    lop_channel c = numeric(LOP_NOISE_BINOMIAL, center, spread);
    c.trials = 5;
    for (size_t s = 0; s < 2; s++)
        for (unsigned k = 0; k <= 10; k++)
            ck_assert_close(lop_evidence_log_summary(&c, s, k, 2),
                            log(gsl_ran_binomial_pdf(k, center[s], 10)), LOG_TOL);
    ck_assert(lop_evidence_log_summary(&c, 0, 11, 2) == -INFINITY);
    ck_assert_double_eq(lop_evidence_log_summary(&c, 2, 0, 2), 0);
    ck_assert(lop_evidence_log_summary(&c, 2, 1, 2) == -INFINITY);
    ck_assert_double_eq(lop_evidence_log_summary(&c, 3, 10, 2), 0);
    ck_assert(lop_evidence_log_summary(&c, 3, 9, 2) == -INFINITY);
    ck_assert(lop_evidence_is_count(&c));
    lop_channel g = numeric(LOP_NOISE_GAUSSIAN, center, spread);
    ck_assert(!lop_evidence_is_count(&g));
}
END_TEST

/* Counts of a table channel over its repeats are multinomial (gsl_ran_multinomial_lnpdf);
 * an outcome of probability 0 makes its counts impossible and is ignored at count 0. */
START_TEST(table_counts_are_multinomial)
{
    double given[] = {0.2, 0.3, 0.5, 0.6, 0.1, 0.3};
    lop_channel c = {0};
    c.kind = LOP_CHANNEL_TABLE;
    c.n_outcomes = 3;
    c.given = given;
    c.repeats = 6;
    const size_t counts[][3] = {{1, 2, 3}, {0, 0, 6}, {6, 0, 0}, {2, 2, 2}};
    for (size_t s = 0; s < 2; s++)
        for (size_t i = 0; i < 4; i++) {
            unsigned n[3] = {(unsigned)counts[i][0], (unsigned)counts[i][1],
                             (unsigned)counts[i][2]};
            ck_assert_close(lop_evidence_log_counts(&c, s, counts[i]),
                            gsl_ran_multinomial_lnpdf(3, &given[3 * s], n), LOG_TOL);
        }
    /* With P(second) = 0: (4, 0, 2) has probability C(6,2) 0.4^4 0.6^2 (binomial). */
    double zero[] = {0.4, 0, 0.6};
    c.given = zero;
    const size_t ok[] = {4, 0, 2}, impossible[] = {3, 1, 2};
    ck_assert_close(lop_evidence_log_counts(&c, 0, ok), log(gsl_ran_binomial_pdf(4, 0.4, 6)),
                    LOG_TOL);
    ck_assert(lop_evidence_log_counts(&c, 0, impossible) == -INFINITY);
}
END_TEST

/* Continuous noise: P(lo < X <= hi) by normal CDFs; far in the upper tail the mass is
 * Q(lo) - Q(hi), which a difference of CDF values near 1 would round to 0. */
START_TEST(gaussian_and_lognormal_interval_masses)
{
    double center[] = {1, 5}, spread[] = {2, 0.5};
    lop_channel c = numeric(LOP_NOISE_GAUSSIAN, center, spread);
    for (size_t s = 0; s < 2; s++)
        for (size_t n = 1; n <= 4; n += 3) {
            double sd = spread[s] / sqrt((double)n), m = center[s];
            ck_assert_close(lop_evidence_summary_mass(&c, s, -1, 2.5, n),
                            gsl_cdf_gaussian_P(2.5 - m, sd) - gsl_cdf_gaussian_P(-1 - m, sd),
                            1e-14);
            ck_assert_close(lop_evidence_summary_mass(&c, s, -INFINITY, INFINITY, n), 1, 1e-15);
            /* 9 to 10 sd above the mean: about 1.1e-19. */
            double lo = m + 9 * sd, hi = m + 10 * sd;
            ck_assert_rel(lop_evidence_summary_mass(&c, s, lo, hi, n),
                          gsl_cdf_ugaussian_Q(9) - gsl_cdf_ugaussian_Q(10), 1e-12);
        }
    ck_assert_double_eq(lop_evidence_summary_mass(&c, 0, 3, 3, 1), 0);
    ck_assert_double_eq(lop_evidence_summary_mass(&c, 0, 3, 2, 1), 0);

    lop_channel l = numeric(LOP_NOISE_LOGNORMAL, center, spread);
    for (size_t s = 0; s < 2; s++) {
        double sd = spread[s] / sqrt(2.0), zeta = log(center[s]);
        ck_assert_close(lop_evidence_summary_mass(&l, s, 0.5, 6, 2),
                        gsl_cdf_lognormal_P(6, zeta, sd) - gsl_cdf_lognormal_P(0.5, zeta, sd),
                        1e-14);
        /* Nothing lies at or below 0. */
        ck_assert_close(lop_evidence_summary_mass(&l, s, -3, 6, 2),
                        gsl_cdf_lognormal_P(6, zeta, sd), 1e-14);
    }
}
END_TEST

/* Counts: P(lo <= X < hi) (the header's convention), i.e. the counts ceil(lo) to
 * ceil(hi) - 1, summed here from GSL's probabilities. */
static double count_mass(const lop_channel *c, size_t s, double lo, double hi, size_t n)
{
    double sum = 0;
    for (unsigned k = 0; k <= 200; k++) {
        if (!(k >= lo && k < hi))
            continue;
        sum += c->noise == LOP_NOISE_POISSON
                   ? gsl_ran_poisson_pdf(k, (double)n * c->window * c->center[s])
                   : gsl_ran_binomial_pdf(k, c->center[s], (unsigned)(n * c->trials));
    }
    return sum;
}

START_TEST(count_interval_masses_are_half_open)
{
    double center[] = {1.2, 0.35}, spread[] = {0, 0};
    lop_channel pois = numeric(LOP_NOISE_POISSON, center, spread);
    pois.window = 2;
    lop_channel bin = numeric(LOP_NOISE_BINOMIAL, center + 1, spread);
    bin.trials = 12;
    const double bounds[][2] = {{2, 5}, {2.5, 5.5}, {-INFINITY, 3}, {4, INFINITY},
                                {0, 1}, {-INFINITY, INFINITY}, {3, 3.5}};
    for (size_t i = 0; i < sizeof bounds / sizeof *bounds; i++) {
        double lo = bounds[i][0], hi = bounds[i][1];
        /* Sums of a few GSL probabilities: rounding only. */
        ck_assert_close(lop_evidence_summary_mass(&pois, 0, lo, hi, 2),
                        count_mass(&pois, 0, lo, hi, 2), 1e-13);
        ck_assert_close(lop_evidence_summary_mass(&bin, 0, lo, hi, 1),
                        count_mass(&bin, 0, lo, hi, 1), 1e-13);
    }
    /* The far upper tail keeps its digits: P(X >= 40) with mean 4.8, about 1e-24. */
    ck_assert_rel(lop_evidence_summary_mass(&pois, 0, 40, INFINITY, 2),
                  gsl_cdf_poisson_Q(39, 4.8), 1e-12);
}
END_TEST

/* Quantiles: the normal and lognormal inverses; for counts the smallest k with
 * P(X <= k) >= q, found here by walking up GSL's CDF. */
START_TEST(summary_quantiles_invert_the_cdfs)
{
    double center[] = {3, 0.6}, spread[] = {1.5, 0};
    lop_channel g = numeric(LOP_NOISE_GAUSSIAN, center, spread);
    lop_channel l = numeric(LOP_NOISE_LOGNORMAL, center, spread);
    lop_channel pois = numeric(LOP_NOISE_POISSON, center, spread);
    pois.window = 1.5;
    lop_channel bin = numeric(LOP_NOISE_BINOMIAL, center + 1, spread + 1);
    bin.trials = 7;
    const double qs[] = {1e-6, 0.025, 0.3, 0.5, 0.9, 0.999};
    for (size_t i = 0; i < sizeof qs / sizeof *qs; i++) {
        double q = qs[i], sd = 1.5 / 2;
        /* The inverse normal of GSL is accurate to ~1e-15 relative. */
        ck_assert_close(lop_evidence_summary_quantile(&g, 0, q, 4),
                        3 + gsl_cdf_gaussian_Pinv(q, sd), 1e-13);
        ck_assert_close(lop_evidence_summary_quantile(&l, 0, q, 4),
                        gsl_cdf_lognormal_Pinv(q, log(3), sd), 1e-13);
        unsigned k = 0;
        while (gsl_cdf_poisson_P(k, 2 * 1.5 * 3) < q)
            k++;
        ck_assert_double_eq(lop_evidence_summary_quantile(&pois, 0, q, 2), k);
        k = 0;
        while (gsl_cdf_binomial_P(k, 0.6, 14) < q)
            k++;
        ck_assert_double_eq(lop_evidence_summary_quantile(&bin, 0, q, 2), k);
    }
}
END_TEST

/* log P(summary x of n repeats | s) from GSL's densities and probabilities. */
static double gsl_log_likelihood(const lop_channel *c, size_t s, double x, size_t n)
{
    double r = c->center[s], sd = c->spread[s] / sqrt((double)n);
    switch (c->noise) {
    case LOP_NOISE_GAUSSIAN:
    case LOP_NOISE_SCALAR:
        return log(gsl_ran_gaussian_pdf(x - r, sd));
    case LOP_NOISE_LOGNORMAL:
        return log(gsl_ran_lognormal_pdf(x, log(r), sd));
    case LOP_NOISE_POISSON:
        /* Poisson(0) is certain of 0; GSL's pdf gives NaN there (log 0 times 0). */
        if (r == 0)
            return x == 0 ? 0 : -INFINITY;
        return log(gsl_ran_poisson_pdf((unsigned)x, (double)n * c->window * r));
    case LOP_NOISE_BINOMIAL:
        return log(gsl_ran_binomial_pdf((unsigned)x, r, (unsigned)(n * c->trials)));
    }
    return NAN;
}

/* The rule's kernel gives logprior[s] plus the same log-likelihood for every noise,
 * with the degenerate rates (0 for Poisson, 0 and 1 for binomial: log 0 = -inf from
 * GSL's probability 0, and log 1 = 0) and x <= 0 for lognormal exact. */
START_TEST(kernel_adds_the_log_likelihood_to_the_log_prior)
{
    const double logprior[] = {-0.5, -1.2, -2};
    double gc[] = {0, 1, 2.5}, gs[] = {1, 0.7, 2}, pc[] = {0, 0.8, 3}, bc[] = {0, 0.45, 1};
    lop_channel c[] = {numeric(LOP_NOISE_GAUSSIAN, gc, gs), numeric(LOP_NOISE_LOGNORMAL, gs, gs),
                       numeric(LOP_NOISE_POISSON, pc, gs), numeric(LOP_NOISE_BINOMIAL, bc, gs)};
    c[2].window = 2;
    c[3].trials = 4;
    const double xs[] = {-0.5, 0, 1.3, 3, 5, 8};
    for (size_t k = 0; k < 4; k++) {
        lop_evidence_kernel kern;
        ck_assert_int_eq(lop_evidence_kernel_init(&kern, &c[k], 3, 2), 0);
        bool counts = lop_evidence_is_count(&c[k]);
        for (size_t i = 0; i < sizeof xs / sizeof *xs; i++) {
            if (counts && (xs[i] < 0 || xs[i] != floor(xs[i])))
                continue;
            double logw[3];
            lop_evidence_kernel_eval(&kern, xs[i], logprior, logw);
            for (size_t s = 0; s < 3; s++) {
                double want = logprior[s] + (c[k].noise == LOP_NOISE_LOGNORMAL && xs[i] <= 0
                                                 ? -INFINITY
                                                 : gsl_log_likelihood(&c[k], s, xs[i], 2));
                if (isinf(want))
                    ck_assert_msg(logw[s] == want, "noise %zu, x %g, state %zu: %g", k, xs[i],
                                  s, logw[s]);
                else
                    ck_assert_msg(fabs(logw[s] - want) <= LOG_TOL * fmax(1, fabs(want)),
                                  "noise %zu, x %g, state %zu: %.17g, expected %.17g", k,
                                  xs[i], s, logw[s], want);
            }
        }
        lop_evidence_kernel_clear(&kern);
        ck_assert_ptr_null(kern.a);
    }
}
END_TEST

/* The observed values of every channel add their log-likelihoods, one reading at a
 * time: independent readings multiply. Table outcomes add log P(outcome | s). */
START_TEST(observed_values_add_one_term_per_reading)
{
    lop_problem *p = test_problem(
        "[problem]\ntitle = t\n[states]\nlabels = a, b\n[prior]\nweights = 1, 1\n"
        "[evidence.swab]\noutcomes = clear, flagged\ngiven.a = 0.9, 0.1\n"
        "given.b = 0.25, 0.75\nrepeats = 2\nobserved = flagged, clear\n"
        "[evidence.dial]\nnoise = gaussian\nmean = 0.1, 0.4\nsd = 0.1, 0.2\nrepeats = 3\n"
        "observed = 0.2, 0.35, 0.05\n"
        "[actions]\nlabels = x, y\n[loss]\nx = 0, 1\ny = 1, 0\n");
    double ll[] = {1, 2};
    lop_evidence_add_observed(p, ll);
    const double mean[] = {0.1, 0.4}, sd[] = {0.1, 0.2}, x[] = {0.2, 0.35, 0.05};
    const double flagged[] = {0.1, 0.75}, clear[] = {0.9, 0.25};
    for (size_t s = 0; s < 2; s++) {
        double want = (double)(s + 1) + log(flagged[s]) + log(clear[s]);
        for (size_t i = 0; i < 3; i++)
            want += log(gsl_ran_gaussian_pdf(x[i] - mean[s], sd[s]));
        ck_assert_close(ll[s], want, LOG_TOL);
    }
    lop_problem_free(p);
}
END_TEST

/* The mean is sufficient for a gaussian mean with a known common sd (Fisher-Neyman
 * factorization): sum_i log f(x_i | m) - log f_mean(xbar | m) = -(n-1)/2 log(2 pi sd^2)
 * - log(n)/2 - sum_i (x_i - xbar)^2 / (2 sd^2), the same for every m. */
START_TEST(the_mean_carries_all_gaussian_evidence)
{
    double center[] = {-1, 0.3, 2}, spread[] = {0.8, 0.8, 0.8};
    lop_channel c = numeric(LOP_NOISE_GAUSSIAN, center, spread);
    const double x[] = {0.1, 0.9, -0.4, 0.6};
    double xbar = (0.1 + 0.9 - 0.4 + 0.6) / 4, ss = 0;
    for (size_t i = 0; i < 4; i++)
        ss += (x[i] - xbar) * (x[i] - xbar);
    double want = -1.5 * log(2 * M_PI * 0.64) - 0.5 * log(4.0) - ss / (2 * 0.64);
    for (size_t s = 0; s < 3; s++) {
        double sum = 0;
        for (size_t i = 0; i < 4; i++)
            sum += lop_evidence_log_summary(&c, s, x[i], 1);
        ck_assert_close(sum - lop_evidence_log_summary(&c, s, xbar, 4), want, LOG_TOL);
    }
}
END_TEST

Suite *suite_evidence(void)
{
    Suite *s = suite_create("evidence");
    TCase *tc = tcase_create("evidence");
    tcase_add_test(tc, gaussian_summary_is_the_normal_density_of_the_mean);
    tcase_add_test(tc, lognormal_summary_is_the_lognormal_density);
    tcase_add_test(tc, poisson_summary_is_the_poisson_probability_of_the_sum);
    tcase_add_test(tc, binomial_summary_is_the_binomial_probability_of_the_sum);
    tcase_add_test(tc, table_counts_are_multinomial);
    tcase_add_test(tc, gaussian_and_lognormal_interval_masses);
    tcase_add_test(tc, count_interval_masses_are_half_open);
    tcase_add_test(tc, summary_quantiles_invert_the_cdfs);
    tcase_add_test(tc, kernel_adds_the_log_likelihood_to_the_log_prior);
    tcase_add_test(tc, observed_values_add_one_term_per_reading);
    tcase_add_test(tc, the_mean_carries_all_gaussian_evidence);
    suite_add_tcase(s, tc);
    return s;
}
