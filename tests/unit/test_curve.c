#include <stdlib.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_rng.h>

#include "lopside/model/curve.h"
#include "lopside/model/curve_family.h"
#include "lopside/model/density.h"
#include "testutil.h"

/* ---- helpers ---------------------------------------------------------------------- */

/* Returns n points from `from` to `to`, evenly spaced, as from + i·step. */
static double *uniform_grid(double from, double to, size_t n)
{
    double *g = malloc(n * sizeof *g);
    ck_assert_ptr_nonnull(g);
    double step = (to - from) / (double)(n - 1);
    for (size_t i = 0; i < n; i++)
        g[i] = from + (double)i * step;
    return g;
}

/* Returns n increasing points from `from` with random steps between 0.2 and 1.8 of h. */
static double *ragged_grid(gsl_rng *r, double from, double h, size_t n)
{
    double *g = malloc(n * sizeof *g);
    ck_assert_ptr_nonnull(g);
    g[0] = from;
    for (size_t i = 1; i < n; i++)
        g[i] = g[i - 1] + h * (0.2 + 1.6 * gsl_rng_uniform(r));
    return g;
}

static double normal_density(double s, double mean, double sd)
{
    double z = (s - mean) / sd;
    return exp(-0.5 * z * z) / sd;
}

static void normalize(double *p, size_t n)
{
    double sum = 0;
    for (size_t i = 0; i < n; i++)
        sum += p[i];
    for (size_t i = 0; i < n; i++)
        p[i] /= sum;
}

/* Fills p with one of three posteriors over s: two separated bumps; random weights with
 * about a third of the states empty; all mass on one random state. */
static void random_posterior(gsl_rng *r, int kind, const double *s, size_t n, double *p)
{
    double lo = s[0], span = s[n - 1] - s[0];
    for (size_t i = 0; i < n; i++) {
        if (kind == 0)
            p[i] = 0.55 * normal_density(s[i], lo + 0.3 * span, 0.08 * span) +
                   0.45 * normal_density(s[i], lo + 0.75 * span, 0.04 * span);
        else if (kind == 1)
            p[i] = gsl_rng_uniform(r) < 0.35 ? 0 : pow(gsl_rng_uniform(r), 3);
        else
            p[i] = 0;
    }
    if (kind == 2 || kind == 1)
        p[gsl_rng_uniform_int(r, n)] += 1;
    normalize(p, n);
}

/* Returns sum p·loss(x, s) by the test's own double loop, and in *abs_sum the sum of
 * p·|loss|: the scale of the rounding of that sum. */
static double reference_el(const lop_curve *c, const double *s, const double *p, size_t n,
                           double x, double *abs_sum)
{
    double sum = 0, mag = 0;
    for (size_t i = 0; i < n; i++) {
        if (p[i] == 0)
            continue;
        double l = lop_curve_loss(c, x, s[i]);
        sum += p[i] * l;
        mag += p[i] * fabs(l);
    }
    if (abs_sum)
        *abs_sum = mag;
    return sum;
}

/* ---- random problems -------------------------------------------------------------- */

static const double knot_error[] = {-1.0, -0.2, 0.0, 0.5, 2.0};
static const double knot_value[] = {3.0, 0.5, 0.0, 1.0, 4.0};
/* Knots at and below -1 reach relative errors only for estimates <= 0. */
static const double relative_error[] = {-1.5, -1.0, -0.5, -0.1, 0.0, 0.1, 0.3};
static const double relative_value[] = {-2.0, 3.0, 2.0, 0.4, -0.5, 0.6, 1.5};
static const double single_error[] = {0.3};
static const double single_value[] = {2.5};

typedef struct {
    const char *name;
    lop_curve c;
} named_curve;

static const named_curve curves[] = {
    {"squared", {.kind = LOP_CURVE_SQUARED, .scale = 2}},
    {"absolute", {.kind = LOP_CURVE_ABSOLUTE, .scale = 1.5}},
    {"linlin", {.kind = LOP_CURVE_LINLIN, .under = 1, .over = 3}},
    {"quadquad", {.kind = LOP_CURVE_QUADQUAD, .under = 2, .over = 0.5}},
    {"linex a > 0", {.kind = LOP_CURVE_LINEX, .a = 0.7, .scale = 1}},
    {"linex a < 0", {.kind = LOP_CURVE_LINEX, .a = -1.3, .scale = 0.5}},
    {"tolerance", {.kind = LOP_CURVE_TOLERANCE, .below = 0.3, .above = 0.6, .inside = -1,
                   .outside = 2}},
    {"tolerance on grid steps", {.kind = LOP_CURVE_TOLERANCE, .below = 0.1, .above = 0.15,
                                 .inside = 0, .outside = 1}},
    {"tolerance below > 1", {.kind = LOP_CURVE_TOLERANCE, .below = 1.5, .above = 0.2,
                             .inside = 0.5, .outside = 3}},
    /* bands of binary fractions on the integer grid: edges fall exactly on states */
    {"tolerance 1, 2", {.kind = LOP_CURVE_TOLERANCE, .below = 1, .above = 2, .inside = 0,
                        .outside = 1}},
    {"tolerance 0.5, 0.25", {.kind = LOP_CURVE_TOLERANCE, .below = 0.5, .above = 0.25,
                             .inside = 2, .outside = -1}},
    {"points", {.kind = LOP_CURVE_POINTS, .n_points = 5, .error = knot_error,
                .value = knot_value}},
    {"points around -1", {.kind = LOP_CURVE_POINTS, .n_points = 7, .error = relative_error,
                          .value = relative_value}},
    {"points one knot", {.kind = LOP_CURVE_POINTS, .n_points = 1, .error = single_error,
                         .value = single_value}},
};
#define N_CURVES (sizeof curves / sizeof curves[0])

typedef struct {
    const char *name;
    size_t n_states, n_estimates;
    double *s, *x;
    bool positive;          /* all states > 0: relative curves allowed */
} test_grid;

#define N_GRIDS 5

/* Fills the grids of the random tests: the same uniform grid for states and estimates;
 * ragged states with a wider, coarser estimate grid that starts at 0; a grid through 0
 * with an estimate grid on the same lattice; a narrow estimate grid inside the states;
 * integer states with integer estimates from below 0 to beyond the states. */
static void make_grids(gsl_rng *r, test_grid *g)
{
    g[0] = (test_grid){"same", 301, 301, uniform_grid(0.5, 10, 301), NULL, true};
    g[0].x = uniform_grid(0.5, 10, 301);
    g[1] = (test_grid){"ragged", 257, 123, ragged_grid(r, 0.2, 0.03, 257),
                       uniform_grid(0, 9, 123), true};
    g[2] = (test_grid){"lattice", 201, 161, uniform_grid(-4, 6, 201),
                       uniform_grid(-3, 5, 161), false};
    g[3] = (test_grid){"narrow", 200, 36, uniform_grid(1, 5, 200),
                       uniform_grid(2.2, 2.9, 36), true};
    g[4] = (test_grid){"integers", 64, 84, uniform_grid(1, 64, 64), uniform_grid(-3, 80, 84),
                       true};
}

static void free_grids(test_grid *g)
{
    for (size_t k = 0; k < N_GRIDS; k++) {
        free(g[k].s);
        free(g[k].x);
    }
}

/* Calls check(c, grid, p, w) for every curve, both relative settings where the states
 * allow, every grid and three posteriors, one workspace reused across posteriors. */
static void for_each_problem(void (*check)(const named_curve *, const test_grid *,
                                           const double *, lop_curve_work *))
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20240611);
    test_grid grids[N_GRIDS];
    make_grids(r, grids);
    for (size_t k = 0; k < N_CURVES; k++) {
        for (int relative = 0; relative < 2; relative++) {
            named_curve nc = curves[k];
            nc.c.relative = relative;
            for (size_t g = 0; g < N_GRIDS; g++) {
                const test_grid *tg = &grids[g];
                if (relative && !tg->positive)
                    continue;
                lop_curve_work *w = lop_curve_work_new(&nc.c, tg->s, tg->n_states, tg->x,
                                                       tg->n_estimates, 0);
                ck_assert_msg(w != NULL, "%s on %s: no workspace", nc.name, tg->name);
                double *p = malloc(tg->n_states * sizeof *p);
                for (int post = 0; post < 3; post++) {
                    random_posterior(r, post, tg->s, tg->n_states, p);
                    check(&nc, tg, p, w);
                }
                free(p);
                lop_curve_work_free(w);
            }
        }
    }
    free_grids(grids);
    gsl_rng_free(r);
}

/* Agreement allowed between two ways of summing: 1e-9 of sum p·|loss|. Both ways round
 * O(S) terms (S <= 301 here, so about 1e-14 relative). Prefix sums, moments and FFTs
 * round relative to posterior totals and to the largest loss rather than to one
 * estimate's own sum (an FFT's error is about eps·log2(n) of the largest loss sample),
 * hence the floor at 1e-3 of the largest such scale on the grid: 1e-12 of it in all. */
#define AGREE 1e-9
#define FLOOR 1e-3

static void check_fast_path(const named_curve *nc, const test_grid *g, const double *p,
                            lop_curve_work *w)
{
    size_t n = g->n_estimates;
    double *fast = malloc(n * sizeof *fast), *direct = malloc(n * sizeof *direct);
    double *scale = malloc(n * sizeof *scale);
    lop_curve_expected(w, p, fast);
    lop_curve_expected_direct(w, p, direct);
    double top = 0;
    for (size_t j = 0; j < n; j++) {
        double want = reference_el(&nc->c, g->s, p, g->n_states, g->x[j], &scale[j]);
        ck_assert_double_eq(direct[j], want); /* the same loop, the same order */
        top = fmax(top, scale[j]);
    }
    for (size_t j = 0; j < n; j++) {
        double tol = AGREE * fmax(scale[j], FLOOR * top);
        ck_assert_msg(fabs(fast[j] - direct[j]) <= tol,
                      "%s%s on %s, estimate %g: fast %.17g, direct %.17g", nc->name,
                      nc->c.relative ? " (relative)" : "", g->name, g->x[j], fast[j],
                      direct[j]);
    }
    free(fast);
    free(direct);
    free(scale);
}

START_TEST(fast_paths_agree_with_the_direct_sum)
{
    for_each_problem(check_fast_path);
}
END_TEST

/* The Bayes estimate is a point of the estimate grid (the actions, format.md), its
 * expected loss is the direct sum there, and nothing on the grid does better. */
static void check_bayes(const named_curve *nc, const test_grid *g, const double *p,
                        lop_curve_work *w)
{
    const lop_curve *c = &nc->c;
    size_t n = g->n_estimates;
    double first = g->x[0], last = g->x[n - 1], top = 0, least = INFINITY;
    for (size_t j = 0; j < n; j++) {
        double mag, el = reference_el(c, g->s, p, g->n_states, g->x[j], &mag);
        top = fmax(top, mag);
        least = fmin(least, el);
    }
    double el_min, mag;
    double x = lop_curve_bayes(w, p, &el_min);
    double at_x = reference_el(c, g->s, p, g->n_states, x, &mag);
    double tol = AGREE * fmax(mag, FLOOR * top);
    const char *rel = c->relative ? " (relative)" : "";
    ck_assert_msg(x >= first && x <= last, "%s%s on %s: %g outside", nc->name, rel, g->name, x);
    ck_assert_msg(fabs(el_min - at_x) <= tol, "%s%s on %s: el_min %.17g, direct %.17g",
                  nc->name, rel, g->name, el_min, at_x);
    ck_assert_msg(at_x <= least + tol, "%s%s on %s: %.17g above the grid's %.17g", nc->name,
                  rel, g->name, at_x, least);
    bool on_grid = false;
    for (size_t j = 0; j < n; j++)
        on_grid = on_grid || g->x[j] == x;
    ck_assert_msg(on_grid, "%s%s on %s: %g is not on the grid", nc->name, rel, g->name, x);
}

START_TEST(bayes_estimates_minimize_over_the_interval)
{
    for_each_problem(check_bayes);
}
END_TEST

/* ---- closed forms under a normal posterior ---------------------------------------- */

/* A normal posterior N(mean, sd²) sampled on a grid from mean - 10.1 sd to mean + 10.3 sd
 * (not centred, so symmetry does not help) with h = sd/100. Sums of a Gaussian's samples
 * times h equal its integrals up to about exp(-2·pi²·(sd/h)²) (Poisson summation), the
 * tails beyond 10 sd hold e^-50, so discrete moments are the normal's to rounding. */
#define NORMAL_MEAN 1.3
#define NORMAL_SD 0.7
#define NORMAL_POINTS 2041

static double *normal_grid(double *h)
{
    double from = NORMAL_MEAN - 10.1 * NORMAL_SD, to = NORMAL_MEAN + 10.3 * NORMAL_SD;
    *h = (to - from) / (NORMAL_POINTS - 1);
    return uniform_grid(from, to, NORMAL_POINTS);
}

static double *normal_posterior(const double *s)
{
    double *p = malloc(NORMAL_POINTS * sizeof *p);
    for (size_t i = 0; i < NORMAL_POINTS; i++)
        p[i] = normal_density(s[i], NORMAL_MEAN, NORMAL_SD);
    normalize(p, NORMAL_POINTS);
    return p;
}

/* Returns the Bayes estimate of c under the normal posterior, its expected loss in *el. */
static double normal_bayes(const lop_curve *c, double *el, double *h)
{
    double *s = normal_grid(h), *p = normal_posterior(s);
    lop_curve_work *w = lop_curve_work_new(c, s, NORMAL_POINTS, s, NORMAL_POINTS, 0);
    ck_assert_ptr_nonnull(w);
    double x = lop_curve_bayes(w, p, el);
    lop_curve_work_free(w);
    free(p);
    free(s);
    return x;
}

START_TEST(squared_loss_gives_the_mean_and_the_variance)
{
    /* Under squared loss the Bayes estimate is the posterior mean and its risk the
     * posterior variance (Gelman et al., BDA, ch. 2); on the estimate grid it is the grid
     * point nearest the mean (within h/2), whose risk is exactly variance + (x - mean)².
     * Tolerance 1e-10 on that identity: the grid sums are exact to rounding (see
     * NORMAL_POINTS), which is about 1e-14 for 2041 terms. */
    lop_curve c = {.kind = LOP_CURVE_SQUARED, .scale = 1};
    double el, h;
    double x = normal_bayes(&c, &el, &h);
    ck_assert(fabs(x - NORMAL_MEAN) <= 0.5 * h + 1e-12);
    double off = (x - NORMAL_MEAN) * (x - NORMAL_MEAN);
    ck_assert_close(el, NORMAL_SD * NORMAL_SD + off, 1e-10);
    c.scale = 3;
    x = normal_bayes(&c, &el, &h);
    ck_assert_close(el, 3 * (NORMAL_SD * NORMAL_SD + off), 1e-10);
}
END_TEST

START_TEST(linlin_gives_the_normal_quantile)
{
    /* linlin's Bayes estimate is the quantile under/(under + over) of the posterior
     * (Raiffa & Schlaifer 1961; Berger 1985, secs. 2.4 and 4.4.2, from memory); the
     * reference is GSL's normal quantile. The discrete posterior's cumulative sum through state k is the normal CDF
     * at s_k + h/2 (midpoint rule, error O(h²) in probability), so its quantile is the
     * state whose cell [s - h/2, s + h/2] holds the normal one: within h/2, plus an
     * O(h²/sd) shift far below 0.1·h here. Tolerance 0.6·h. */
    const double pairs[][2] = {{1, 9}, {1, 3}, {1, 1}, {4, 1}, {19, 1}};
    for (size_t k = 0; k < sizeof pairs / sizeof pairs[0]; k++) {
        lop_curve c = {.kind = LOP_CURVE_LINLIN, .under = pairs[k][0], .over = pairs[k][1]};
        double el, h;
        double x = normal_bayes(&c, &el, &h);
        double tau = c.under / (c.under + c.over);
        double want = NORMAL_MEAN + gsl_cdf_gaussian_Pinv(tau, NORMAL_SD);
        ck_assert_msg(fabs(x - want) <= 0.6 * h, "tau %g: %.12g, normal quantile %.12g", tau,
                      x, want);
    }
    /* absolute loss: the median, which is the mean of a normal */
    lop_curve c = {.kind = LOP_CURVE_ABSOLUTE, .scale = 1};
    double el, h;
    double x = normal_bayes(&c, &el, &h);
    ck_assert(fabs(x - NORMAL_MEAN) <= 0.6 * h);
    /* and its risk E|s - median| = sd·sqrt(2/pi) = 0.5585 (the mean absolute deviation of
     * a normal). |s - median| has a kink, so the grid sum is off by up to f·h²/4 (f: the
     * density at the median, 0.57; h = 0.007), and a median placed up to h/2 off adds
     * f·(h/2)² more: 1.4e-5 in all, so 3e-5. */
    ck_assert_close(el, NORMAL_SD * sqrt(2 / M_PI), 3e-5);
}
END_TEST

START_TEST(linex_gives_the_mean_minus_a_variance_over_two)
{
    /* Under a normal posterior the LINEX Bayes estimate is mean - a·sd²/2 (Zellner 1986);
     * on the estimate grid, a point within h/2 of it (the expected loss is convex). At any
     * x the expected loss is scale·(exp(a(x - mean) + a²sd²/2) - a(x - mean) - 1), since
     * E[exp(a(x - s))] is the normal's moment generating function. The grid sums of a
     * Gaussian times e^(-a·s), itself a Gaussian shifted by a·sd² (under 2 sd here), are
     * exact to rounding like the moments, so that identity holds to 1e-10. */
    const double as[] = {0.8, -1.5, 2.5};
    for (size_t k = 0; k < sizeof as / sizeof as[0]; k++) {
        lop_curve c = {.kind = LOP_CURVE_LINEX, .a = as[k], .scale = 2};
        double el, h;
        double x = normal_bayes(&c, &el, &h);
        double var = NORMAL_SD * NORMAL_SD;
        ck_assert(fabs(x - (NORMAL_MEAN - as[k] * var / 2)) <= 0.5 * h + 1e-12);
        double d = x - NORMAL_MEAN;
        ck_assert_close(el, 2 * (exp(as[k] * d + as[k] * as[k] * var / 2) - as[k] * d - 1),
                        1e-10);
    }
}
END_TEST

/* ---- tolerance: the mode as the band shrinks -------------------------------------- */

START_TEST(tolerance_tends_to_the_higher_mode)
{
    /* 0.6·N(-2, 0.5²) + 0.4·N(3, 0.3²): most mass near -2, the higher peak at 3 (heights
     * 0.6/0.5 < 0.4/0.3). A band of half-width b centred on a mode holds
     * weight·(2·Phi(b/sd) - 1) of the mass; the Bayes estimate is the mode whose band
     * holds more (GSL's normal CDF decides). The components are 10 sd apart, so each
     * mode is its component's mean to e^-50. On the grid (h = 0.005) the best window is
     * centred to within h. Each half-width is a fifth of a step past a multiple of h, so
     * no band edge falls on a state (an edge on a state is in or out by rounding, and
     * windows would alternate between 2m and 2m + 1 states). The estimate must also
     * minimize the brute-force expected loss over the grid, and for a band narrower than
     * a step it is the state of largest posterior weight itself. */
    size_t n = 2201;
    double *s = uniform_grid(-5, 6, n), h = s[1] - s[0];
    double *p = malloc(n * sizeof *p), *el = malloc(n * sizeof *el);
    for (size_t i = 0; i < n; i++)
        p[i] = 0.6 * normal_density(s[i], -2, 0.5) + 0.4 * normal_density(s[i], 3, 0.3);
    normalize(p, n);
    size_t mode = 0;
    for (size_t i = 1; i < n; i++)
        if (p[i] > p[mode])
            mode = i;
    ck_assert(fabs(s[mode] - 3) <= h);
    const double halves[] = {2.001, 1.001, 0.601, 0.201, 0.101, 0.031, 0.011, 0.006, 0.001};
    for (size_t k = 0; k < sizeof halves / sizeof halves[0]; k++) {
        double b = halves[k];
        lop_curve c = {.kind = LOP_CURVE_TOLERANCE, .below = b, .above = b, .inside = 0,
                       .outside = 1};
        lop_curve_work *w = lop_curve_work_new(&c, s, n, s, n, 0);
        double el_min, x = lop_curve_bayes(w, p, &el_min);
        double near_low = 0.6 * (2 * gsl_cdf_gaussian_P(b, 0.5) - 1);
        double near_high = 0.4 * (2 * gsl_cdf_gaussian_P(b, 0.3) - 1);
        double want = near_high > near_low ? 3 : -2;
        ck_assert_msg(fabs(x - want) <= h, "half-width %g: %g, expected the mode at %g", b, x,
                      want);
        lop_curve_expected_direct(w, p, el);
        double least = el[0];
        for (size_t j = 1; j < n; j++)
            least = fmin(least, el[j]);
        /* el is 1 - (mass in the band), a sum of at most n terms: rounding ~1e-13 */
        ck_assert_close(el_min, least, 1e-12);
        ck_assert_close(reference_el(&c, s, p, n, x, NULL), least, 1e-12);
        if (b < h)
            ck_assert_msg(x == s[mode], "half-width %g: %g, mode %g", b, x, s[mode]);
        lop_curve_work_free(w);
    }
    free(el);
    free(p);
    free(s);
}
END_TEST

/* ---- flat minima ------------------------------------------------------------------ */

/* Returns the Bayes estimate on estimates 0, 1, ..., 100 (or from..to) with the given
 * mass on states 0, 1, ..., 100, and its expected loss in *el. */
static double integer_bayes(const lop_curve *c, const double *p, double from, double to,
                            double *el)
{
    double *s = uniform_grid(0, 100, 101);
    size_t n_x = (size_t)(to - from) + 1;
    double *x = uniform_grid(from, to, n_x);
    lop_curve_work *w = lop_curve_work_new(c, s, 101, x, n_x, 0);
    ck_assert_ptr_nonnull(w);
    double best = lop_curve_bayes(w, p, el);
    lop_curve_work_free(w);
    free(x);
    free(s);
    return best;
}

START_TEST(flat_minima_give_their_middle)
{
    double p[101] = {0};
    double el;
    /* All mass on 40. A band -5.5 <= e <= 5.5 holds it for estimates 35..45: the plateau's
     * middle is 40. A band -2.5 <= e <= 7.5 holds it for 38..47 (ten points): the lower
     * middle, 42. Hand calculations; el is exactly inside or outside. */
    p[40] = 1;
    lop_curve band = {.kind = LOP_CURVE_TOLERANCE, .below = 5.5, .above = 5.5, .inside = -3,
                      .outside = 1};
    ck_assert_double_eq(integer_bayes(&band, p, 0, 100, &el), 40);
    ck_assert_double_eq(el, -3);
    band.below = 2.5;
    band.above = 7.5;
    ck_assert_double_eq(integer_bayes(&band, p, 0, 100, &el), 42);
    /* points: zero loss for -2 <= e <= 2, rising to 5 at |e| = 10: plateau 38..42. These
     * grids share a lattice, so the FFT path computes el: 0 up to its rounding, about
     * eps·log2(n) of the largest value (1e-14 allows for it). */
    const double e[] = {-10, -2, 2, 10}, v[] = {5, 0, 0, 5};
    lop_curve pts = {.kind = LOP_CURVE_POINTS, .n_points = 4, .error = e, .value = v};
    ck_assert_double_eq(integer_bayes(&pts, p, 0, 100, &el), 40);
    ck_assert_close(el, 0, 1e-14);

    /* Half the mass on 20, half on 30: absolute loss 1.5·(0.5|x - 20| + 0.5|x - 30|) is
     * flat at 1.5·5 on [20, 30]: the middle is 25; with estimates only from 26 the flat
     * part left is [26, 30], middle 28. */
    p[40] = 0;
    p[20] = p[30] = 0.5;
    lop_curve abs_loss = {.kind = LOP_CURVE_ABSOLUTE, .scale = 1.5};
    ck_assert_double_eq(integer_bayes(&abs_loss, p, 0, 100, &el), 25);
    ck_assert_close(el, 7.5, 1e-15);
    ck_assert_double_eq(integer_bayes(&abs_loss, p, 26, 60, &el), 28);
    /* linlin, under 1 and over 3 (quantile 1/4): a quarter of the mass on 10, the rest on
     * 50. Between them the loss is 3·0.25·(x - 10) + 1·0.75·(50 - x) = 30, flat: the
     * middle is 30. */
    p[20] = p[30] = 0;
    p[10] = 0.25;
    p[50] = 0.75;
    lop_curve lin = {.kind = LOP_CURVE_LINLIN, .under = 1, .over = 3};
    ck_assert_double_eq(integer_bayes(&lin, p, 0, 100, &el), 30);
    ck_assert_close(el, 30, 1e-15);
}
END_TEST

/* ---- FFT correlation -------------------------------------------------------------- */

/* Any shift-invariant loss will do for the FFT path; this one is neither even nor
 * piecewise linear. */
static double wiggly_loss(double e)
{
    return pow(fabs(e), 1.5) + 0.3 * sin(2 * e);
}

START_TEST(fft_correlation_matches_the_direct_sum)
{
    /* states -3..4 and estimates -1..2.5 with h = 0.01: 701 + 351 - 1 = 1051 samples,
     * padded to 1080 = 2³·3³·5 (GSL's mixed-radix path, not only powers of 2). An FFT's
     * rounding is absolute, about eps·log2(n) times the largest sample, so the tolerance
     * is 1e-9 of the largest loss sample. */
    size_t n_s = 701, n_x = 351;
    double *s = uniform_grid(-3, 4, n_s), *x = uniform_grid(-1, 2.5, n_x);
    double h;
    long k0;
    ck_assert(lop_curve_lattice(s, n_s, x, n_x, &h, &k0));
    ck_assert_close(h, 0.01, 1e-12);
    ck_assert_int_eq(k0, -500); /* (-1 - 4)/0.01 */
    size_t n_t = n_s + n_x - 1;
    double *loss = malloc(n_t * sizeof *loss), top = 0;
    for (size_t t = 0; t < n_t; t++) {
        loss[t] = wiggly_loss(((double)k0 + (double)t) * h);
        top = fmax(top, fabs(loss[t]));
    }
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 7);
    double *p = malloc(n_s * sizeof *p), *el = malloc(n_x * sizeof *el);
    lop_curve_fft *f = lop_curve_fft_new(loss, n_s, n_x);
    ck_assert_ptr_nonnull(f);
    for (int post = 0; post < 3; post++) {
        random_posterior(r, post, s, n_s, p);
        lop_curve_fft_expected(f, p, el);
        for (size_t j = 0; j < n_x; j++) {
            double want = 0;
            for (size_t i = 0; i < n_s; i++)
                want += p[i] * wiggly_loss(x[j] - s[i]);
            ck_assert_msg(fabs(el[j] - want) <= 1e-9 * top, "estimate %g: fft %.17g, direct %.17g",
                          x[j], el[j], want);
        }
    }
    lop_curve_fft_free(f);
    free(el);
    free(p);
    free(loss);
    gsl_rng_free(r);
    free(x);
    free(s);
}
END_TEST

START_TEST(lattices_are_recognized)
{
    double h;
    long k0;
    double *s = uniform_grid(0, 10, 101), *x = uniform_grid(2, 3, 11);
    ck_assert(lop_curve_lattice(s, 101, x, 11, &h, &k0));
    ck_assert_int_eq(k0, -80);     /* (2 - 10)/0.1 */
    double *half = uniform_grid(2.05, 3.05, 11);   /* half a step off */
    ck_assert(!lop_curve_lattice(s, 101, half, 11, &h, &k0));
    double *coarse = uniform_grid(2, 4, 11);       /* step 0.2 */
    ck_assert(!lop_curve_lattice(s, 101, coarse, 11, &h, &k0));
    s[50] += 1e-6;                                 /* one state off */
    ck_assert(!lop_curve_lattice(s, 101, x, 11, &h, &k0));
    free(coarse);
    free(half);
    free(x);
    free(s);
}
END_TEST

START_TEST(points_with_many_knots_take_the_fft_path)
{
    /* 400 knots on [-5, 5] (a wiggle on a parabola), states 0..19.99 (2000 points) and
     * estimates 2..17 on the same lattice: the FFT is far cheaper than 400 pieces, and
     * must agree with the direct sum to 1e-9 of the largest value (its rounding is
     * absolute, see above). The same curve cut to 3 knots stays on the pieces. */
    size_t n_k = 400, n_s = 2000, n_x = 1501;
    double *e = uniform_grid(-5, 5, n_k), *v = malloc(n_k * sizeof *v), top = 0;
    for (size_t k = 0; k < n_k; k++) {
        v[k] = 0.2 * e[k] * e[k] + sin(7 * e[k]);
        top = fmax(top, fabs(v[k]));
    }
    double *s = uniform_grid(0, 19.99, n_s), *x = uniform_grid(2, 17, n_x);
    lop_curve c = {.kind = LOP_CURVE_POINTS, .n_points = n_k, .error = e, .value = v};
    lop_curve_work *w = lop_curve_work_new(&c, s, n_s, x, n_x, 0);
    ck_assert_ptr_nonnull(w);
    ck_assert_int_eq(lop_curve_work_method(w), LOP_CURVE_BY_FFT);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 11);
    double *p = malloc(n_s * sizeof *p);
    double *fast = malloc(n_x * sizeof *fast), *direct = malloc(n_x * sizeof *direct);
    for (int post = 0; post < 3; post++) {
        random_posterior(r, post, s, n_s, p);
        lop_curve_expected(w, p, fast);
        lop_curve_expected_direct(w, p, direct);
        size_t best = 0;
        for (size_t j = 0; j < n_x; j++) {
            ck_assert_msg(fabs(fast[j] - direct[j]) <= 1e-9 * top,
                          "estimate %g: fft %.17g, direct %.17g", x[j], fast[j], direct[j]);
            if (direct[j] < direct[best])
                best = j;
        }
        double el_min;
        lop_curve_bayes(w, p, &el_min);
        ck_assert(fabs(el_min - direct[best]) <= 1e-9 * top);
    }
    c.n_points = 3;
    lop_curve_work *few = lop_curve_work_new(&c, s, n_s, x, n_x, 0);
    ck_assert_int_eq(lop_curve_work_method(few), LOP_CURVE_BY_PIECES);
    lop_curve_work_free(few);
    free(direct);
    free(fast);
    free(p);
    gsl_rng_free(r);
    lop_curve_work_free(w);
    free(x);
    free(s);
    free(v);
    free(e);
}
END_TEST

/* ---- single losses and validation ------------------------------------------------- */

START_TEST(losses_follow_the_format_table)
{
    /* format.md's table of curves, by hand. */
    lop_curve c = {.kind = LOP_CURVE_SQUARED, .scale = 2};
    ck_assert_double_eq(lop_curve_loss(&c, 1, 2.5), 4.5);
    c = (lop_curve){.kind = LOP_CURVE_ABSOLUTE, .scale = 3};
    ck_assert_double_eq(lop_curve_loss(&c, 1, 3), 6);
    c = (lop_curve){.kind = LOP_CURVE_LINLIN, .under = 1, .over = 3};
    ck_assert_double_eq(lop_curve_loss(&c, 1, 3), 2);
    ck_assert_double_eq(lop_curve_loss(&c, 3.5, 3), 1.5);
    c = (lop_curve){.kind = LOP_CURVE_QUADQUAD, .under = 2, .over = 0.5};
    ck_assert_double_eq(lop_curve_loss(&c, 2, 3), 2);
    ck_assert_double_eq(lop_curve_loss(&c, 5, 3), 2);
    /* LINEX at a·e = 1: e - 2; at a·e = 1e-6: 1e-12/2 + 1e-18/6 + ..., which the
     * literal exp(a·e) - a·e - 1 gets wrong in the fourth digit. */
    c = (lop_curve){.kind = LOP_CURVE_LINEX, .a = 1, .scale = 1};
    ck_assert_close(lop_curve_loss(&c, 2, 1), M_E - 2, 1e-15);
    ck_assert_close(lop_curve_loss(&c, 1e-6, 0) * 1e12, 0.5 + 1e-6 / 6, 1e-12);
    c = (lop_curve){.kind = LOP_CURVE_TOLERANCE, .below = 1, .above = 2, .inside = 0,
                    .outside = 4};
    ck_assert_double_eq(lop_curve_loss(&c, 0, 1), 0);     /* e = -1: on the edge */
    ck_assert_double_eq(lop_curve_loss(&c, 3, 1), 0);     /* e = 2: on the edge */
    ck_assert_double_eq(lop_curve_loss(&c, 3.001, 1), 4);
    ck_assert_double_eq(lop_curve_loss(&c, -0.001, 1), 4);
    /* relative band -0.25 <= (x - 8)/8 <= 0.125 is 6 <= x <= 9 (binary fractions) */
    c = (lop_curve){.kind = LOP_CURVE_TOLERANCE, .below = 0.25, .above = 0.125, .inside = 1,
                    .outside = 2, .relative = true};
    ck_assert_double_eq(lop_curve_loss(&c, 9, 8), 1);
    ck_assert_double_eq(lop_curve_loss(&c, 6, 8), 1);
    ck_assert_double_eq(lop_curve_loss(&c, 9.0001, 8), 2);
    ck_assert_double_eq(lop_curve_loss(&c, 5.9999, 8), 2);
    const double e[] = {-1, 0, 2}, v[] = {4, 0, 1};
    c = (lop_curve){.kind = LOP_CURVE_POINTS, .n_points = 3, .error = e, .value = v};
    ck_assert_double_eq(lop_curve_loss(&c, 0, 3), 4);     /* flat below */
    ck_assert_double_eq(lop_curve_loss(&c, 2.5, 3), 2);
    ck_assert_double_eq(lop_curve_loss(&c, 4, 3), 0.5);
    ck_assert_double_eq(lop_curve_loss(&c, 8, 3), 1);     /* flat above */
    c.relative = true;                                    /* e = (12 - 10)/10 = 0.2 */
    ck_assert_close(lop_curve_loss(&c, 12, 10), 0.1, 1e-15);
}
END_TEST

START_TEST(bad_curves_and_grids_are_refused)
{
    const double e[] = {0, 0}, v[] = {1, 2};
    const lop_curve bad[] = {
        {.kind = LOP_CURVE_SQUARED, .scale = 0},
        {.kind = LOP_CURVE_ABSOLUTE, .scale = -1},
        {.kind = LOP_CURVE_LINLIN, .under = 0, .over = 1},
        {.kind = LOP_CURVE_QUADQUAD, .under = 1, .over = NAN},
        {.kind = LOP_CURVE_LINEX, .a = 0, .scale = 1},
        {.kind = LOP_CURVE_TOLERANCE, .below = -2, .above = 1, .outside = 1},
        {.kind = LOP_CURVE_POINTS, .n_points = 2, .error = e, .value = v},
        {.kind = LOP_CURVE_POINTS, .n_points = 0, .error = e, .value = v},
    };
    double s[] = {1, 2, 3}, x[] = {1, 2};
    for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++) {
        ck_assert_ptr_nonnull(lop_curve_invalid(&bad[k]));
        ck_assert_ptr_null(lop_curve_work_new(&bad[k], s, 3, x, 2, 0));
    }
    lop_curve good = {.kind = LOP_CURVE_SQUARED, .scale = 1};
    ck_assert_ptr_null(lop_curve_invalid(&good));
    lop_curve_work *w = lop_curve_work_new(&good, s, 3, x, 2, 0);
    ck_assert_ptr_nonnull(w);
    ck_assert_int_eq(lop_curve_work_method(w), LOP_CURVE_BY_MOMENTS);
    lop_curve_work_free(w);
    lop_curve_work_free(NULL);
    lop_curve_fft_free(NULL);
    /* relative errors need states > 0 */
    good.relative = true;
    double with_zero[] = {0, 1, 2}, negative[] = {-1, 1, 2};
    ck_assert_ptr_null(lop_curve_work_new(&good, with_zero, 3, x, 2, 0));
    ck_assert_ptr_null(lop_curve_work_new(&good, negative, 3, x, 2, 0));
    /* grids must increase */
    good.relative = false;
    double flat[] = {1, 1, 2}, backwards[] = {2, 1};
    ck_assert_ptr_null(lop_curve_work_new(&good, flat, 3, x, 2, 0));
    ck_assert_ptr_null(lop_curve_work_new(&good, s, 3, backwards, 2, 0));
    ck_assert_ptr_null(lop_curve_work_new(&good, s, 0, x, 2, 0));
}
END_TEST


/* ---- continuous estimates -------------------------------------------------------- */

/* Returns the Bayes estimate of c with real estimates (options | LOP_CURVE_CONTINUOUS)
 * over states s and posterior p, its expected loss in *el, and checks that loss against
 * the direct sum at the same estimate. The estimate grid is the states. */
static double continuous_bayes(const lop_curve *c, const double *s, const double *p, size_t n,
                               unsigned options, double *el)
{
    lop_curve_work *w = lop_curve_work_new(c, s, n, s, n, options | LOP_CURVE_CONTINUOUS);
    ck_assert_ptr_nonnull(w);
    double x = lop_curve_bayes(w, p, el);
    /* both sums run over the same n terms: rounding only */
    ck_assert_close(*el, lop_curve_expected_at(w, p, x), 1e-12);
    lop_curve_work_free(w);
    return x;
}

/* The posterior 0.1, 0.2, 0.3, 0.4 on four states: as listed values (point masses) the
 * Bayes estimates are the closed forms of each curve (DeGroot 1970, sec. 11.3-11.4;
 * LINEX: Varian 1975, Zellner 1986; quadquad solved by hand), not states. */
START_TEST(continuous_estimates_over_values_take_the_closed_forms)
{
    const double s[] = {0, 1, 2, 3}, p[] = {0.1, 0.2, 0.3, 0.4};
    double el;
    /* squared: the mean 2, expected loss the variance 0.1·4 + 0.2·1 + 0.4·1 = 1 */
    lop_curve sq = {.kind = LOP_CURVE_SQUARED, .scale = 1};
    ck_assert_close(continuous_bayes(&sq, s, p, 4, 0, &el), 2.0, 1e-12);
    ck_assert_close(el, 1.0, 1e-12);
    /* LINEX: -(1/a)·log sum p·exp(-a·s) */
    lop_curve lx = {.kind = LOP_CURVE_LINEX, .scale = 1, .a = 0.7};
    double mgf = 0;
    for (int i = 0; i < 4; i++)
        mgf += p[i] * exp(-0.7 * s[i]);
    ck_assert_close(continuous_bayes(&lx, s, p, 4, 0, &el), -log(mgf) / 0.7, 1e-12);
    /* quadquad under 1, over 4: between 1 and 2 the derivative is 2·(4·(0.1x + 0.2(x - 1))
     * + 0.3(x - 2) + 0.4(x - 3)) = 2·(1.9x - 2.6), zero at x = 2.6/1.9 */
    lop_curve qq = {.kind = LOP_CURVE_QUADQUAD, .under = 1, .over = 4};
    ck_assert_close(continuous_bayes(&qq, s, p, 4, 0, &el), 2.6 / 1.9, 1e-12);
    /* relative squared over 1..4: E[1/X]/E[1/X²] */
    const double r[] = {1, 2, 3, 4};
    lop_curve rs = {.kind = LOP_CURVE_SQUARED, .scale = 1, .relative = true};
    double m1 = 0, m2 = 0;
    for (int i = 0; i < 4; i++) {
        m1 += p[i] / r[i];
        m2 += p[i] / (r[i] * r[i]);
    }
    ck_assert_close(continuous_bayes(&rs, r, p, 4, 0, &el), m1 / m2, 1e-12);
    /* absolute with equal weights: every point of [1, 2] is a median; the middle, 1.5 */
    const double even[] = {0.25, 0.25, 0.25, 0.25};
    lop_curve ab = {.kind = LOP_CURVE_ABSOLUTE, .scale = 1};
    ck_assert_close(continuous_bayes(&ab, s, even, 4, 0, &el), 1.5, 1e-12);
    ck_assert_close(el, 1.0, 1e-12);    /* (1.5 + 0.5 + 0.5 + 1.5)/4 */
}
END_TEST

/* The hand example of the density over cells (density.h), worked by hand: grid 0..4,
 * masses 0, 1/4, 1/2, 1/4, 0, cells' averages v = 0, 1/4, 1/2, 1/4, 0. The right parts
 * of the cells, m/2 + (1/8)·(v_{j+1} - v_{j-1})/2, are 0, 5/32, 1/4, 3/32, 0, so the
 * intervals hold 3/32, 13/32, 13/32, 3/32. The values at the states, v - (1/24)·(second
 * difference) with the ends extrapolated ((4·v_0 - v_1)/3 = -1/12, kept at 0), are 0,
 * 1/4, 25/48, 1/4, 0, none above three times a mean beside it. Each piece is the line
 * through its end values plus 6·beta·t(1-t), beta = mean - (sum of the end values)/2:
 * piece 0: t/16 + 3t²/16; piece 1: 1/4 + 19t/48 - t²/8; piece 2: 25/48 - 7t/48 - t²/8;
 * piece 3: (4 - 7t + 3t²)/16. */
static double hand_mass(int k, double t)   /* mass of piece k over [0, t] */
{
    switch (k) {
    case 0:
        return t * t / 32 + t * t * t / 16;
    case 1:
        return t / 4 + 19 * t * t / 96 - t * t * t / 24;
    case 2:
        return 25 * t / 48 - 7 * t * t / 96 - t * t * t / 24;
    default:
        return (4 * t - 3.5 * t * t + t * t * t) / 16;
    }
}

/* Returns the hand example's cumulative at u in [0, 4]. */
static double hand_cumulative(double u)
{
    double below = 0;
    int k = 0;
    while (k < 3 && u >= k + 1)
        below += hand_mass(k++, 1);
    return below + hand_mass(k, u - k);
}

/* The absolute-loss estimate is the median (Berger 1985, sec. 4.4.2, from memory), 2 by
 * symmetry, and its expected loss 2·∫_0^2 (2 - u) f(u) du = 2·(23/192 + 13/72) = 173/288
 * by hand; the linlin estimate (under 1, over 3) is the quantile 1/4, found here by
 * bisection on hand_cumulative; the median, 5% and 95% quantiles of the same masses by
 * lop_density_quantiles agree with bisection too. */
START_TEST(estimates_over_cells_follow_the_density)
{
    const double s[] = {0, 1, 2, 3, 4}, p[] = {0, 0.25, 0.5, 0.25, 0};
    double el;
    lop_curve ab = {.kind = LOP_CURVE_ABSOLUTE, .scale = 1};
    ck_assert_close(continuous_bayes(&ab, s, p, 5, LOP_CURVE_CELLS, &el), 2.0, 1e-12);
    ck_assert_close(el, 173.0 / 288, 1e-12);
    const double q[] = {0.05, 0.25, 0.5, 0.95};
    double want[4], got[4];
    for (int j = 0; j < 4; j++) {
        double lo = 0, hi = 4;
        for (int it = 0; it < 200; it++) {
            double mid = 0.5 * (lo + hi);
            if (hand_cumulative(mid) < q[j])
                lo = mid;
            else
                hi = mid;
        }
        want[j] = 0.5 * (lo + hi);
    }
    lop_density_quantiles(s, p, 5, q, 4, got);
    for (int j = 0; j < 4; j++)
        ck_assert_close(got[j], want[j], 1e-12);
    lop_curve ll = {.kind = LOP_CURVE_LINLIN, .under = 1, .over = 3};
    ck_assert_close(continuous_bayes(&ll, s, p, 5, LOP_CURVE_CELLS, &el), want[1], 1e-12);
}
END_TEST

/* A band edge inside an interval counts the part of the density it covers: in the hand
 * example the band ±0.25 around 1.9 is [1.65, 2.15], whose mass is hand_cumulative(2.15) -
 * hand_cumulative(1.65), by the fast path and the direct integral alike. */
START_TEST(tolerance_windows_count_partial_cells)
{
    const double s[] = {0, 1, 2, 3, 4}, p[] = {0, 0.25, 0.5, 0.25, 0};
    lop_curve c = {.kind = LOP_CURVE_TOLERANCE, .below = 0.25, .above = 0.25, .inside = 0,
                   .outside = 1};
    const double x[] = {1.9};
    lop_curve_work *w = lop_curve_work_new(&c, s, 5, x, 1, LOP_CURVE_CELLS);
    ck_assert_ptr_nonnull(w);
    double el, direct;
    lop_curve_expected(w, p, &el);
    lop_curve_expected_direct(w, p, &direct);
    double in = hand_cumulative(2.15) - hand_cumulative(1.65);
    ck_assert_close(el, 1 - in, 1e-12);     /* sums of a few terms: rounding only */
    ck_assert_close(direct, 1 - in, 1e-12);
    lop_curve_work_free(w);

    /* Half-width 5 on a 0.1 grid over 0..20, a posterior uniform in the continuous
     * reading (end cells half as heavy): the window at 10 holds exactly 10/20 of it, not
     * the 101 whole cells (0.505) of a point count. */
    double u[201], q[201];
    for (int i = 0; i < 201; i++) {
        u[i] = 0.1 * i;
        q[i] = i == 0 || i == 200 ? 0.5 : 1;
    }
    normalize(q, 201);
    lop_curve band = {.kind = LOP_CURVE_TOLERANCE, .below = 5, .above = 5, .inside = 0,
                      .outside = 1};
    const double ten[] = {10};
    w = lop_curve_work_new(&band, u, 201, ten, 1, LOP_CURVE_CELLS);
    lop_curve_expected(w, q, &el);
    ck_assert_close(el, 0.5, 1e-12);
    lop_curve_work_free(w);
}
END_TEST

/* Over cells, the fast paths (prefix sums, exact windows) and the direct integral piece by
 * piece agree on ragged grids and awkward posteriors (two bumps, a third of the states
 * empty, one state with all the mass), for absolute, linlin and tolerance curves, plain
 * and relative; and each continuous Bayes estimate's loss is the direct one at it. */
START_TEST(cells_fast_paths_agree_with_the_direct_integral)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 7);
    lop_curve curves[] = {
        {.kind = LOP_CURVE_ABSOLUTE, .scale = 2},
        {.kind = LOP_CURVE_LINLIN, .under = 1, .over = 3},
        {.kind = LOP_CURVE_LINLIN, .under = 2, .over = 0.5, .relative = true},
        {.kind = LOP_CURVE_TOLERANCE, .below = 0.7, .above = 1.3, .inside = 0, .outside = 1},
        {.kind = LOP_CURVE_TOLERANCE, .below = 0.1, .above = 0.2, .inside = -1, .outside = 0.5,
         .relative = true},
        {.kind = LOP_CURVE_TOLERANCE, .below = 1.5, .above = 0.2, .inside = 0, .outside = 1,
         .relative = true},
    };
    size_t n = 60, m = 45;
    double p[60], el[45], direct[45];
    for (size_t k = 0; k < sizeof curves / sizeof *curves; k++) {
        for (int kind = 0; kind < 3; kind++) {
            double *s = ragged_grid(r, 1, 0.2, n), *x = uniform_grid(-1, 16, m);
            random_posterior(r, kind, s, n, p);
            lop_curve_work *w = lop_curve_work_new(&curves[k], s, n, x, m, LOP_CURVE_CELLS);
            ck_assert_ptr_nonnull(w);
            lop_curve_expected(w, p, el);
            lop_curve_expected_direct(w, p, direct);
            for (size_t j = 0; j < m; j++)  /* sums of O(n) terms of size <= 40: rounding */
                ck_assert_msg(fabs(el[j] - direct[j]) <= 1e-11 * fmax(1, fabs(direct[j])),
                              "curve %zu kind %d x %g: %.17g vs %.17g", k, kind, x[j], el[j],
                              direct[j]);
            lop_curve_work_free(w);
            double best;
            continuous_bayes(&curves[k], s, p, n, LOP_CURVE_CELLS, &best);
            free(s);
            free(x);
        }
    }
    gsl_rng_free(r);
}
END_TEST

/* Cell masses of a normal posterior N(mu, sigma²) over the grid of n points on [lo, hi]:
 * exact normal CDF differences over the cells (GSL's gsl_cdf_gaussian_P). */
static void normal_cells(double mu, double sigma, double lo, double hi, size_t n, double *s,
                         double *p)
{
    double h = (hi - lo) / (double)(n - 1);
    for (size_t i = 0; i < n; i++)
        s[i] = lo + (double)i * h;
    for (size_t i = 0; i < n; i++) {
        double a = i == 0 ? lo : s[i] - 0.5 * h, b = i + 1 == n ? hi : s[i] + 0.5 * h;
        p[i] = gsl_cdf_gaussian_P(b - mu, sigma) - gsl_cdf_gaussian_P(a - mu, sigma);
    }
    normalize(p, n);
}

/* The density over cells converges smoothly: for a normal posterior on grids of 201, 401
 * and 801 points, each number's error falls at least threefold per halving of the step
 * (Richardson's rule in accuracy.c assumes fourfold and takes a third of the difference
 * as the error; a faster fall only makes that estimate cautious), or is already within
 * rounding (n·2^-52 of its scale), and the extrapolation (4·q_{h/2} - q_h)/3 of 401 and
 * 801 points is within 1e-7 of the closed form (of the state range for positions,
 * absolute for the probability). Closed forms: quantiles mu + sigma·Phi^-1(q) (GSL's
 * gsl_cdf_ugaussian_Pinv, as scipy's norm.ppf); the absolute estimate is the median and
 * the linlin one (under 1, over 3) the quantile 1/4 (Berger 1985, sec. 4.4.2, from
 * memory); for a symmetric unimodal posterior the window of half-width a holds most mass
 * centred on the mean (its mass's slope f(x + a) - f(x - a) vanishes only there), so the
 * tolerance estimate is mu and its window holds 2·Phi(a/sigma) - 1. The range
 * [mu - 8 sigma, mu + 8.7 sigma] leaves out less than 1e-15 of the normal and is not
 * symmetric about mu, so no error vanishes by symmetry of the grid. (With the cells'
 * averages joined by lines, the tolerance estimate's error would not fall steadily: the
 * densities at the band's ends would err by h²/2·t(1-t)·f'', t their places in their
 * intervals.) */
START_TEST(cells_converge_smoothly_to_the_normal_closed_forms)
{
    const double mu = 0.3, sigma = 0.25, lo = mu - 8 * sigma, hi = mu + 8.7 * sigma;
    const double half = 0.2, range = hi - lo;
    enum { N_LEVELS = 3, N_QTY = 7 };
    const size_t sizes[N_LEVELS] = {201, 401, 801};
    const char *names[N_QTY] = {"q05", "median", "q95", "absolute estimate", "linlin estimate",
                                "tolerance estimate", "window probability"};
    double want[N_QTY], got[N_LEVELS][N_QTY];
    const double q[3] = {0.05, 0.5, 0.95};
    for (int j = 0; j < 3; j++)
        want[j] = mu + sigma * gsl_cdf_ugaussian_Pinv(q[j]);
    want[3] = mu;
    want[4] = mu + sigma * gsl_cdf_ugaussian_Pinv(0.25);
    want[5] = mu;
    want[6] = 2 * gsl_cdf_ugaussian_P(half / sigma) - 1;
    static double s[801], p[801];
    for (int level = 0; level < N_LEVELS; level++) {
        size_t n = sizes[level];
        normal_cells(mu, sigma, lo, hi, n, s, p);
        lop_density_quantiles(s, p, n, q, 3, got[level]);
        double el;
        lop_curve ab = {.kind = LOP_CURVE_ABSOLUTE, .scale = 1};
        got[level][3] = continuous_bayes(&ab, s, p, n, LOP_CURVE_CELLS, &el);
        lop_curve ll = {.kind = LOP_CURVE_LINLIN, .under = 1, .over = 3};
        got[level][4] = continuous_bayes(&ll, s, p, n, LOP_CURVE_CELLS, &el);
        lop_curve tol = {.kind = LOP_CURVE_TOLERANCE, .below = half, .above = half,
                         .inside = 0, .outside = 1};
        got[level][5] = continuous_bayes(&tol, s, p, n, LOP_CURVE_CELLS, &el);
        got[level][6] = 1 - el;
    }
    for (int k = 0; k < N_QTY; k++) {
        double scale = k == 6 ? 1 : range;
        for (int level = 1; level < N_LEVELS; level++) {
            double before = fabs(got[level - 1][k] - want[k]);
            double after = fabs(got[level][k] - want[k]);
            double rounding = (double)sizes[level] * 0x1p-52 * scale;
            ck_assert_msg(after <= before / 3 || after <= rounding,
                          "%s at %zu points: error %.3g after %.3g at %zu", names[k],
                          sizes[level], after, before, sizes[level - 1]);
        }
        double extrapolated = (4 * got[2][k] - got[1][k]) / 3;
        ck_assert_msg(fabs(extrapolated - want[k]) <= 1e-7 * scale,
                      "%s: extrapolated %.17g, closed form %.17g", names[k], extrapolated,
                      want[k]);
    }
}
END_TEST

/* Tolerance and points curves with real estimates: the Bayes estimate's expected loss is
 * the least of a fine scan (every 1e-4 over the states and beyond), by the direct sum. */
START_TEST(tolerance_and_points_estimates_beat_a_fine_scan)
{
    double s[21], p[21];
    for (int i = 0; i < 21; i++) {
        s[i] = 0.1 * i;
        p[i] = exp(-0.5 * pow((s[i] - 1.234) / 0.3, 2)) + 0.3 * (i % 3 == 0);
    }
    normalize(p, 21);
    const double err[] = {-0.3, 0, 0.1, 0.4}, val[] = {2, 0, 0.5, 3};
    lop_curve curves[] = {
        {.kind = LOP_CURVE_TOLERANCE, .below = 0.17, .above = 0.23, .inside = 0, .outside = 1},
        {.kind = LOP_CURVE_TOLERANCE, .below = 0.05, .above = 0.2, .inside = -1, .outside = 0,
         .relative = true},
        {.kind = LOP_CURVE_POINTS, .n_points = 4, .error = err, .value = val},
    };
    for (size_t k = 0; k < 3; k++) {
        for (unsigned cells = 0; cells <= LOP_CURVE_CELLS; cells += LOP_CURVE_CELLS) {
            const double *grid = curves[k].relative ? s + 1 : s;
            const double *post = curves[k].relative ? p + 1 : p;
            double el;
            lop_curve_work *w = lop_curve_work_new(&curves[k], grid, 20, grid, 20,
                                                   cells | LOP_CURVE_CONTINUOUS);
            ck_assert_ptr_nonnull(w);
            double x = lop_curve_bayes(w, post, &el);
            ck_assert_close(el, lop_curve_expected_at(w, post, x), 1e-12);
            double least = INFINITY;
            for (int j = -5000; j <= 25000; j++)
                least = fmin(least, lop_curve_expected_at(w, post, 1e-4 * j));
            /* the contract: 1e-6 of the loss scale (at most 3 here) */
            ck_assert_msg(el <= least + 3e-6, "curve %zu cells %u: %.17g above the scan's %.17g",
                          k, cells, el, least);
            lop_curve_work_free(w);
        }
    }
}
END_TEST

/* The family table is what the reader, `check` and the writers share: every kind has
 * exactly one family, found by its name, and a description shows the numbers as written
 * (a payoff's scores negated back). */
START_TEST(curve_families_cover_every_kind_and_describe_as_written)
{
    size_t n;
    const lop_curve_family *f = lop_curve_families(&n);
    ck_assert_uint_eq(n, 7);
    for (size_t i = 0; i < n; i++) {
        ck_assert_ptr_eq(lop_curve_family_named(f[i].name), &f[i]);
        ck_assert_ptr_eq(lop_curve_family_of(f[i].kind), &f[i]);
    }
    ck_assert_ptr_null(lop_curve_family_named("quadratic"));
    ck_assert(lop_curve_family_has(lop_curve_family_named("tolerance"), "half_width"));
    ck_assert(!lop_curve_family_has(lop_curve_family_named("linlin"), "scale"));

    char text[256];
    lop_curve band = {.kind = LOP_CURVE_TOLERANCE, .below = 2, .above = 3, .inside = -5,
                      .outside = 0};
    lop_curve_describe(&band, -1, text, sizeof text);
    ck_assert_str_eq(text, "tolerance: below 2, above 3, inside 5, outside 0");
    const double e[] = {-1, 0, 2}, v[] = {4, 0, 6};
    lop_curve pts = {.kind = LOP_CURVE_POINTS, .n_points = 3, .error = e, .value = v,
                     .relative = true};
    lop_curve_describe(&pts, 1, text, sizeof text);
    ck_assert_str_eq(text, "points: (error, value) (-1, 4), (0, 0), (2, 6); error relative to "
                           "the state");
    /* a short buffer is cut, never overrun, and the full length is returned */
    char tiny[8];
    int full = lop_curve_describe(&band, -1, tiny, sizeof tiny);
    ck_assert_int_eq(full, (int)strlen("tolerance: below 2, above 3, inside 5, outside 0"));
    ck_assert_str_eq(tiny, "toleran");
}
END_TEST

Suite *suite_curve(void)
{
    Suite *s = suite_create("curve");
    TCase *tc = tcase_create("curve");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, losses_follow_the_format_table);
    tcase_add_test(tc, bad_curves_and_grids_are_refused);
    tcase_add_test(tc, fast_paths_agree_with_the_direct_sum);
    tcase_add_test(tc, bayes_estimates_minimize_over_the_interval);
    tcase_add_test(tc, squared_loss_gives_the_mean_and_the_variance);
    tcase_add_test(tc, linlin_gives_the_normal_quantile);
    tcase_add_test(tc, linex_gives_the_mean_minus_a_variance_over_two);
    tcase_add_test(tc, tolerance_tends_to_the_higher_mode);
    tcase_add_test(tc, flat_minima_give_their_middle);
    tcase_add_test(tc, fft_correlation_matches_the_direct_sum);
    tcase_add_test(tc, lattices_are_recognized);
    tcase_add_test(tc, points_with_many_knots_take_the_fft_path);
    tcase_add_test(tc, continuous_estimates_over_values_take_the_closed_forms);
    tcase_add_test(tc, estimates_over_cells_follow_the_density);
    tcase_add_test(tc, cells_fast_paths_agree_with_the_direct_integral);
    tcase_add_test(tc, cells_converge_smoothly_to_the_normal_closed_forms);
    tcase_add_test(tc, tolerance_windows_count_partial_cells);
    tcase_add_test(tc, tolerance_and_points_estimates_beat_a_fine_scan);
    tcase_add_test(tc, curve_families_cover_every_kind_and_describe_as_written);
    suite_add_tcase(s, tc);
    return s;
}
