#include <float.h>
#include <stdio.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_interp.h>
#include <gsl/gsl_randist.h>

#include "lopside/model/prior.h"
#include "testutil.h"

#define MAX_POINTS 128
#define QUAD_LIMIT 1000

/* A grid as [states] makes it: s_i = from + i*h, h = (to - from)/(points - 1). */
typedef struct {
    double s[MAX_POINTS];
    size_t n;
    double h;
} test_grid;

static test_grid grid_of(double from, double to, size_t points)
{
    ck_assert_uint_le(points, MAX_POINTS);
    test_grid g = {.n = points, .h = (to - from) / (double)(points - 1)};
    for (size_t i = 0; i < points; i++)
        g.s[i] = from + (double)i * g.h;
    return g;
}

/* Returns the config of text; fails the test when it does not read. */
static lop_config *config_of(const char *text)
{
    lop_error err = {0};
    lop_config *cfg = lop_config_read_text("test.ini", text, strlen(text), &err);
    ck_assert_msg(cfg != NULL, "config did not read: %s", err.message);
    return cfg;
}

/* The prior's own cell masses (not renormalized) and outside mass of text on g. */
static void cells_of(const char *text, const test_grid *g, double *mass, double *outside)
{
    lop_config *cfg = config_of(text);
    lop_error err = {0};
    lop_status st = lop_prior_cells(cfg, g->s, g->n, g->h, mass, outside, &err);
    ck_assert_msg(st == LOP_OK, "lop_prior_cells failed: line %d: %s", err.line, err.message);
    lop_config_free(cfg);
}

/* The renormalized masses of text on g (lop_prior_grid writes their logs). */
static void grid_of_prior(const char *text, const test_grid *g, double *mass, double *outside)
{
    lop_config *cfg = config_of(text);
    lop_error err = {0};
    lop_status st = lop_prior_grid(cfg, g->s, g->n, g->h, mass, outside, &err);
    ck_assert_msg(st == LOP_OK, "lop_prior_grid failed: line %d: %s", err.line, err.message);
    for (size_t i = 0; i < g->n; i++)
        mass[i] = exp(mass[i]);
    lop_config_free(cfg);
}

/* Cell i of g: [s_i - h/2, s_i + h/2] clipped to the range [s_0, s_{n-1}]. */
static double cell_lo(const test_grid *g, size_t i)
{
    return i == 0 ? g->s[0] : g->s[i] - g->h / 2;
}
static double cell_hi(const test_grid *g, size_t i)
{
    return i + 1 == g->n ? g->s[g->n - 1] : g->s[i] + g->h / 2;
}

/* Densities from GSL's gsl_ran_*_pdf, written in the families' own parameters. The
 * test integrates these; the module differences CDFs, so the two routes are apart. */
typedef struct {
    double p[6];
    gsl_interp *interp;      /* table */
    gsl_interp_accel *acc;
    const double *at, *density;
    size_t m;
} pdf_params;

static double pdf_uniform(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    return gsl_ran_flat_pdf(x, p[0], p[1]);
}
static double pdf_normal(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    return gsl_ran_gaussian_pdf(x - p[0], p[1]);
}
static double pdf_lognormal(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    return gsl_ran_lognormal_pdf(x, log(p[0]), p[1]);
}
static double pdf_gamma(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    return gsl_ran_gamma_pdf(x, p[0], p[1]);
}
static double pdf_beta(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    return gsl_ran_beta_pdf(x, p[0], p[1]);
}
/* Location-scale t: f(x) = t_df((x - center)/scale)/scale. */
static double pdf_student(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    return gsl_ran_tdist_pdf((x - p[0]) / p[1], p[2]) / p[1];
}
static double pdf_exponential(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    return gsl_ran_exponential_pdf(x, p[0]);
}
/* The table through GSL's linear interpolation, 0 outside, divided by the area p[0]. */
static double pdf_table(double x, void *v)
{
    const pdf_params *t = v;
    if (x < t->at[0] || x > t->at[t->m - 1])
        return 0;
    return gsl_interp_eval(t->interp, t->at, t->density, x, t->acc) / t->p[0];
}
/* Mixture of normal(p0, p1) with weight p2 and gamma(p3, p4) with weight p5. */
static double pdf_mixture(double x, void *v)
{
    const double *p = ((pdf_params *)v)->p;
    double a = gsl_ran_gaussian_pdf(x - p[0], p[1]);
    double b = gsl_ran_gamma_pdf(x, p[3], p[4]);
    return (p[2] * a + p[5] * b) / (p[2] + p[5]);
}

/* Table of the quadrature test: at = 0, 1, 3, 4 and density = 0, 2, 1, 0 have area
 * 1 + 3 + 0.5 = 4.5 (trapezoids (0+2)/2*1, (2+1)/2*2, (1+0)/2*1; by hand). */
static const double table_at[] = {0, 1, 3, 4};
static const double table_density[] = {0, 2, 1, 0};

typedef struct {
    const char *name;
    const char *text;
    double (*pdf)(double, void *);
    double p[6];
    double from, to;
    size_t points;
    double coarse_from, coarse_to; /* an 11-point grid */
    double breaks[4];    /* where the density has a kink or a jump */
    size_t n_breaks;
} family_case;

static const family_case family_cases[] = {
    {"uniform", "[prior]\nfamily = uniform\nlow = 1.3\nhigh = 3.7\n", pdf_uniform,
     {1.3, 3.7}, 0, 5, 26, 0, 5, {1.3, 3.7}, 2},
    {"normal", "[prior]\nfamily = normal\nmean = 1.5\nsd = 0.7\n", pdf_normal, {1.5, 0.7},
     -1, 4, 41, -1, 4, {0}, 0},
    {"lognormal", "[prior]\nfamily = lognormal\nmedian = 2\nlog_sd = 0.5\n", pdf_lognormal,
     {2, 0.5}, 0, 8, 41, 0, 8, {0}, 1},
    {"gamma", "[prior]\nfamily = gamma\nshape = 2.5\nscale = 1.2\n", pdf_gamma, {2.5, 1.2},
     0, 12, 49, 0, 12, {0}, 1},
    {"beta", "[prior]\nfamily = beta\nalpha = 2.5\nbeta = 4\n", pdf_beta, {2.5, 4}, 0.025,
     0.975, 20, 0.5 / 11, 10.5 / 11, {0}, 0},
    {"student", "[prior]\nfamily = student\ncenter = 1\nscale = 0.5\ndf = 3\n", pdf_student,
     {1, 0.5, 3}, -4, 6, 51, -4, 6, {0}, 0},
    {"exponential", "[prior]\nfamily = exponential\nmean = 1.5\n", pdf_exponential, {1.5},
     0, 10, 51, 0, 10, {0}, 1},
    {"table", "[prior]\nfamily = table\nat = 0, 1, 3, 4\ndensity = 0, 2, 1, 0\n", pdf_table,
     {4.5}, -0.5, 4.5, 21, -0.5, 4.5, {0, 1, 3, 4}, 4},
    {"mixture",
     "[prior]\nfamily = mixture\nparts = a, b\n"
     "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\nweight = 2\n"
     "[prior.b]\nfamily = gamma\nshape = 3\nscale = 1\nweight = 1\n",
     pdf_mixture, {0, 1, 2, 3, 1, 1}, -3, 8, 45, -3, 8, {0}, 1},
};

#define N_FAMILY_CASES (sizeof family_cases / sizeof *family_cases)

/* Returns the integral of c's density over [a, b] by QAGS, split at the density's
 * kinks and jumps, with the summed error estimate in *abserr. */
static double quad_cell(const family_case *c, pdf_params *par, double a, double b,
                        gsl_integration_workspace *ws, double *abserr)
{
    double cuts[6] = {a};
    size_t n = 1;
    for (size_t k = 0; k < c->n_breaks; k++)
        if (c->breaks[k] > a && c->breaks[k] < b)
            cuts[n++] = c->breaks[k];
    cuts[n++] = b;
    gsl_function f = {c->pdf, par};
    double sum = 0;
    *abserr = 0;
    for (size_t k = 0; k + 1 < n; k++) {
        double r, e;
        int st = gsl_integration_qags(&f, cuts[k], cuts[k + 1], 0, 1e-12, QUAD_LIMIT, ws, &r,
                                      &e);
        ck_assert_msg(st == GSL_SUCCESS, "%s: QAGS on [%g, %g]: %s", c->name, cuts[k],
                      cuts[k + 1], gsl_strerror(st));
        sum += r;
        *abserr += e;
    }
    return sum;
}

/* Every family: each cell's mass, a difference of CDF values in the module, against
 * QAGS on GSL's density over the cell [s_i - h/2, s_i + h/2] clipped to the range (Piessens et al.,
 * QUADPACK, 1983; GSL's gsl_integration_qags). The tolerance is QAGS's own error
 * estimate plus 1e-14 for the rounding of the two CDF values (GSL's incomplete gamma and
 * beta functions are good to a few parts in 1e15). The renormalized masses of
 * lop_prior_grid must match the quadrature masses divided by their sum likewise. */
START_TEST(cells_match_quadrature_of_the_density)
{
    gsl_set_error_handler_off();
    gsl_integration_workspace *ws = gsl_integration_workspace_alloc(QUAD_LIMIT);
    gsl_interp *interp = gsl_interp_alloc(gsl_interp_linear, 4);
    gsl_interp_accel *acc = gsl_interp_accel_alloc();
    gsl_interp_init(interp, table_at, table_density, 4);
    for (size_t c = 0; c < N_FAMILY_CASES; c++) {
        const family_case *fc = &family_cases[c];
        pdf_params par = {.interp = interp, .acc = acc, .at = table_at,
                          .density = table_density, .m = 4};
        memcpy(par.p, fc->p, sizeof par.p);
        test_grid g = grid_of(fc->from, fc->to, fc->points);
        double raw[MAX_POINTS], norm[MAX_POINTS], quad[MAX_POINTS], err[MAX_POINTS];
        double outside, outside2, quad_sum = 0, err_sum = 0;
        cells_of(fc->text, &g, raw, &outside);
        grid_of_prior(fc->text, &g, norm, &outside2);
        ck_assert_double_eq(outside, outside2);
        for (size_t i = 0; i < g.n; i++) {
            quad[i] = quad_cell(fc, &par, cell_lo(&g, i), cell_hi(&g, i), ws, &err[i]);
            quad_sum += quad[i];
            err_sum += err[i];
            ck_assert_msg(fabs(raw[i] - quad[i]) <= err[i] + 1e-14,
                          "%s cell %zu: %.17g, quadrature %.17g (error estimate %g)",
                          fc->name, i, raw[i], quad[i], err[i]);
        }
        /* The quadrature mass left outside, 1 minus its cells, agrees likewise. */
        ck_assert_msg(fabs(outside - (1 - quad_sum)) <= err_sum + 1e-13,
                      "%s outside %.17g, quadrature %.17g", fc->name, outside, 1 - quad_sum);
        for (size_t i = 0; i < g.n; i++)
            ck_assert_msg(fabs(norm[i] - quad[i] / quad_sum) <=
                              (err[i] + 1e-14 + quad[i] * err_sum) / quad_sum,
                          "%s renormalized cell %zu: %.17g, quadrature %.17g", fc->name, i,
                          norm[i], quad[i] / quad_sum);
    }
    gsl_interp_accel_free(acc);
    gsl_interp_free(interp);
    gsl_integration_workspace_free(ws);
}
END_TEST

/* Coarse grids stay accurate (design.md): with 11 points, the CDF-difference masses and
 * the mass outside the outer edges add to 1 within 1e-12, for every family (the beta's
 * grid 1/22, 3/22, ..., 21/22 has cells tiling [0, 1]). */
START_TEST(coarse_grid_masses_and_outside_add_to_one)
{
    for (size_t c = 0; c < N_FAMILY_CASES; c++) {
        const family_case *fc = &family_cases[c];
        test_grid g = grid_of(fc->coarse_from, fc->coarse_to, 11);
        double raw[MAX_POINTS], outside, sum = 0;
        cells_of(fc->text, &g, raw, &outside);
        for (size_t i = 0; i < g.n; i++) {
            ck_assert_msg(raw[i] >= 0, "%s cell %zu is negative", fc->name, i);
            sum += raw[i];
        }
        ck_assert_msg(fabs(sum + outside - 1) <= 1e-12, "%s: cells %.17g + outside %.17g",
                      fc->name, sum, outside);
    }
}
END_TEST

/* uniform(2.2, 7.7) on the points 0..10 (h = 1): cells [s-1/2, s+1/2] wholly inside get
 * exactly h/(high - low) = 1/5.5; cell 2 = [1.5, 2.5] keeps 0.3/5.5 and cell 8 =
 * [7.5, 8.5] keeps 0.2/5.5 (by hand); no mass is outside. Without low and high the
 * uniform spans the range from the first point to the last, so the n - 2 inner points
 * get 1/(n - 1) and the two half cells at the ends 1/(2(n - 1)). Tolerance: a few
 * roundings. */
START_TEST(uniform_masses_are_the_share_of_the_interval)
{
    test_grid g = grid_of(0, 10, 11);
    double mass[MAX_POINTS], outside;
    cells_of("[prior]\nfamily = uniform\nlow = 2.2\nhigh = 7.7\n", &g, mass, &outside);
    for (size_t i = 0; i < g.n; i++) {
        double want = i >= 3 && i <= 7 ? 1 / 5.5 : i == 2 ? 0.3 / 5.5 : i == 8 ? 0.2 / 5.5 : 0;
        ck_assert_close(mass[i], want, 1e-14);
    }
    ck_assert_double_eq(outside, 0);

    test_grid g7 = grid_of(-3, 3, 7);
    grid_of_prior("[prior]\nfamily = uniform\n", &g7, mass, &outside);
    for (size_t i = 0; i < g7.n; i++)
        ck_assert_close(mass[i], i == 0 || i == 6 ? 1.0 / 12 : 1.0 / 6, 1e-14);
    ck_assert_close(outside, 0, 1e-15);
}
END_TEST

/* exponential with mean mu = 2 on the points 0.5, 1, ..., 5 (h = 0.5, range [0.5, 5]):
 * cell [a, b] holds exp(-a/mu) - exp(-b/mu) (the CDF 1 - exp(-x/mu), by hand); outside
 * are 1 - exp(-0.5/mu) below and exp(-5/mu) above; renormalized masses divide by
 * exp(-0.5/mu) - exp(-5/mu). Tolerance: a few roundings of exp. */
START_TEST(exponential_masses_match_the_closed_form)
{
    const double mu = 2;
    test_grid g = grid_of(0.5, 5, 10);
    double mass[MAX_POINTS], norm[MAX_POINTS], outside;
    cells_of("[prior]\nfamily = exponential\nmean = 2\n", &g, mass, &outside);
    double inside = exp(-0.5 / mu) - exp(-5 / mu);
    for (size_t i = 0; i < g.n; i++) {
        double a = cell_lo(&g, i), b = cell_hi(&g, i);
        ck_assert_close(mass[i], exp(-a / mu) - exp(-b / mu), 1e-14);
    }
    ck_assert_close(outside, (1 - exp(-0.5 / mu)) + exp(-5 / mu), 1e-14);
    grid_of_prior("[prior]\nfamily = exponential\nmean = 2\n", &g, norm, &outside);
    for (size_t i = 0; i < g.n; i++) {
        double a = cell_lo(&g, i), b = cell_hi(&g, i);
        ck_assert_close(norm[i], (exp(-a / mu) - exp(-b / mu)) / inside, 1e-14);
    }
}
END_TEST

/* A triangle: at = 0, 1, 2 with density 0, 1, 0 (area 1). Its CDF is F(x) = x^2/2 on
 * [0, 1] and 1 - (2 - x)^2/2 on [1, 2]. On the points 0, 0.5, ..., 2 (h = 0.5) the cells
 * hold, by hand: F(0.25) = 0.03125; F(0.75) - F(0.25) = 0.28125 - 0.03125 = 0.25;
 * F(1.25) - F(0.75) = 0.71875 - 0.28125 = 0.4375 (across the peak); then 0.25, 0.03125.
 * The same shape scaled by 4 gives the same masses. On the points 0, 0.5, 1 the last
 * cell is the half [0.75, 1] holding F(1) - F(0.75) = 0.21875, leaving 1 - F(1) = 0.5
 * outside.
 * Tolerance: the trapezoids are exact for a linear density, so a few roundings. */
START_TEST(table_triangle_has_known_cell_integrals)
{
    static const double want[] = {0.03125, 0.25, 0.4375, 0.25, 0.03125};
    test_grid g = grid_of(0, 2, 5);
    double mass[MAX_POINTS], outside;
    cells_of("[prior]\nfamily = table\nat = 0, 1, 2\ndensity = 0, 1, 0\n", &g, mass,
             &outside);
    for (size_t i = 0; i < 5; i++)
        ck_assert_close(mass[i], want[i], 1e-15);
    ck_assert_close(outside, 0, 1e-15);
    cells_of("[prior]\nfamily = table\nat = 0, 1, 2\ndensity = 0, 4, 0\n", &g, mass, &outside);
    for (size_t i = 0; i < 5; i++)
        ck_assert_close(mass[i], want[i], 1e-15);

    test_grid g3 = grid_of(0, 1, 3);
    cells_of("[prior]\nfamily = table\nat = 0, 1, 2\ndensity = 0, 1, 0\n", &g3, mass,
             &outside);
    static const double want3[] = {0.03125, 0.25, 0.21875};
    for (size_t i = 0; i < 3; i++)
        ck_assert_close(mass[i], want3[i], 1e-15);
    ck_assert_close(outside, 0.5, 1e-15);
    grid_of_prior("[prior]\nfamily = table\nat = 0, 1, 2\ndensity = 0, 1, 0\n", &g3, mass,
                  &outside);
    for (size_t i = 0; i < 3; i++)
        ck_assert_close(mass[i], want3[i] / 0.5, 1e-15);
}
END_TEST

/* A mixture with weights 3 and 1 is 0.75 of the first part plus 0.25 of the second,
 * cell by cell and outside (the definition of a mixture). Tolerance: rounding. */
START_TEST(mixture_of_two_normals_is_the_weighted_sum)
{
    test_grid g = grid_of(-4, 6, 41);
    double a[MAX_POINTS], b[MAX_POINTS], mix[MAX_POINTS], norm[MAX_POINTS];
    double out_a, out_b, out_mix;
    cells_of("[prior]\nfamily = normal\nmean = -1\nsd = 1.5\n", &g, a, &out_a);
    cells_of("[prior]\nfamily = normal\nmean = 3\nsd = 0.8\n", &g, b, &out_b);
    static const char text[] = "[prior]\nfamily = mixture\nparts = left, right\n"
                               "[prior.left]\nfamily = normal\nmean = -1\nsd = 1.5\nweight = 3\n"
                               "[prior.right]\nweight = 1\nfamily = normal\nmean = 3\nsd = 0.8\n";
    cells_of(text, &g, mix, &out_mix);
    double inside = 0;
    for (size_t i = 0; i < g.n; i++) {
        ck_assert_close(mix[i], 0.75 * a[i] + 0.25 * b[i], 1e-15);
        inside += 0.75 * a[i] + 0.25 * b[i];
    }
    ck_assert_close(out_mix, 0.75 * out_a + 0.25 * out_b, 1e-15);
    grid_of_prior(text, &g, norm, &out_mix);
    for (size_t i = 0; i < g.n; i++)
        ck_assert_close(norm[i], (0.75 * a[i] + 0.25 * b[i]) / inside, 1e-14);
}
END_TEST

/* normal(0, 1) on the points -1, -0.9, ..., 1 (h = 0.1): the range ends at -/+1, so
 * 2 Phi(-1) = erfc(1/sqrt 2) lies outside (Phi(x) = erfc(-x/sqrt 2)/2, C99 erfc);
 * the renormalized masses sum to 1 and are the raw ones over 1 - outside.
 * Tolerance: Phi and erfc agree to a few roundings. */
START_TEST(normal_on_a_narrow_grid_leaves_both_tails_outside)
{
    static const char text[] = "[prior]\nfamily = normal\nmean = 0\nsd = 1\n";
    test_grid g = grid_of(-1, 1, 21);
    double raw[MAX_POINTS], mass[MAX_POINTS], outside, outside_raw, sum = 0;
    cells_of(text, &g, raw, &outside_raw);
    grid_of_prior(text, &g, mass, &outside);
    ck_assert_close(outside, erfc(1 / sqrt(2)), 1e-14);
    ck_assert_double_eq(outside, outside_raw);
    ck_assert(outside > LOP_PRIOR_OUTSIDE_WARN); /* the caller would warn here */
    for (size_t i = 0; i < g.n; i++) {
        sum += mass[i];
        ck_assert_close(mass[i], raw[i] / (1 - erfc(1 / sqrt(2))), 1e-13);
    }
    ck_assert_close(sum, 1, 1e-14);
    /* Symmetric prior, symmetric grid: symmetric masses. */
    for (size_t i = 0; i < g.n; i++)
        ck_assert_close(mass[i], mass[g.n - 1 - i], 1e-13);
}
END_TEST

/* Far in the upper tail, P(b) - P(a) rounds to 0 (P = 1 - 1e-15); the Q form keeps the
 * masses: normal(0, 1) on 8, 8.1, ..., 10 must match Q(a) - Q(b) computed from erfc
 * (Q(x) = erfc(x/sqrt 2)/2) to 1e-10 relative; likewise the mirror grid in the lower
 * tail. Tolerance: erfc far out is accurate to about 1e-15 relative; 1e-10 leaves room. */
START_TEST(tail_cells_keep_their_relative_precision)
{
    test_grid g = grid_of(8, 10, 21);
    test_grid m = grid_of(-10, -8, 21);
    double up[MAX_POINTS], down[MAX_POINTS], out_up, out_down;
    cells_of("[prior]\nfamily = normal\nmean = 0\nsd = 1\n", &g, up, &out_up);
    cells_of("[prior]\nfamily = normal\nmean = 0\nsd = 1\n", &m, down, &out_down);
    for (size_t i = 0; i < g.n; i++) {
        double a = cell_lo(&g, i), b = cell_hi(&g, i);
        double want = (erfc(a / sqrt(2)) - erfc(b / sqrt(2))) / 2;
        ck_assert_msg(fabs(up[i] - want) <= 1e-10 * want, "upper cell %zu: %.17g vs %.17g", i,
                      up[i], want);
        ck_assert_msg(fabs(down[g.n - 1 - i] - want) <= 1e-10 * want,
                      "lower cell %zu: %.17g vs %.17g", g.n - 1 - i, down[g.n - 1 - i], want);
    }
    ck_assert(out_up > 1 - 1e-12 && out_down > 1 - 1e-12);
}
END_TEST

/* A beta prior on a grid from 0 to 1, the grid everyone writes for a probability: the
 * cells are clipped to the range, so beta(2, 1) (CDF x^2) on 0, 0.5, 1 holds 1/16 in
 * [0, 1/4], 8/16 in [1/4, 3/4] and 7/16 in [3/4, 1] (by hand); beta(1/2, 1/2), whose
 * density is infinite at both ends, has the arcsine CDF (2/pi) asin(sqrt x) (Feller
 * 1968, III.4, from memory), so the end cells hold (2/pi) asin(1/2) = 1/3 each.
 * Tolerance: a few roundings. */
START_TEST(beta_grid_from_0_to_1_is_clipped_to_the_support)
{
    test_grid g = grid_of(0, 1, 3);
    double mass[MAX_POINTS], outside;
    cells_of("[prior]\nfamily = beta\nalpha = 2\nbeta = 1\n", &g, mass, &outside);
    ck_assert_close(mass[0], 1.0 / 16, 1e-15);
    ck_assert_close(mass[1], 8.0 / 16, 1e-15);
    ck_assert_close(mass[2], 7.0 / 16, 1e-15);
    ck_assert_close(outside, 0, 1e-15);
    cells_of("[prior]\nfamily = beta\nalpha = 0.5\nbeta = 0.5\n", &g, mass, &outside);
    ck_assert_close(mass[0], 1.0 / 3, 1e-14);
    ck_assert_close(mass[1], 1.0 / 3, 1e-14);
    ck_assert_close(mass[2], 1.0 / 3, 1e-14);
}
END_TEST

/* A normal(0, 1) prior on a grid from 0 to 61: the cells beyond about 38 sd hold less
 * than the smallest double, yet keep exact logs, so a reading far out still finds its
 * posterior there. The upper tail Q(x) = phi(x)/x (1 - 1/x^2 + 3/x^4 - ...)
 * (Abramowitz & Stegun 26.2.12, from memory) gives the log masses of the cells from 40
 * on to 1e-6 (the next term, 15/x^6, is 4e-9 at x = 40); the grid holds 1/2 of the
 * prior. */
START_TEST(far_tail_cells_keep_their_logs)
{
    test_grid g = grid_of(0, 61, 123);
    lop_config *cfg = config_of("[prior]\nfamily = normal\nmean = 0\nsd = 1\n");
    lop_error err = {0};
    double lm[MAX_POINTS], outside;
    ck_assert_int_eq(lop_prior_grid(cfg, g.s, g.n, g.h, lm, &outside, &err), LOP_OK);
    lop_config_free(cfg);
    for (size_t i = 80; i < g.n; i++) {
        double a = cell_lo(&g, i), b = cell_hi(&g, i);
        double la = -a * a / 2 - log(a * sqrt(2 * M_PI)) + log1p(-1 / (a * a) + 3 / pow(a, 4));
        double lb = -b * b / 2 - log(b * sqrt(2 * M_PI)) + log1p(-1 / (b * b) + 3 / pow(b, 4));
        double want = la + log1p(-exp(lb - la)) - log(0.5);
        ck_assert(want < log(DBL_MIN)); /* the case this test is about */
        ck_assert_msg(fabs(lm[i] - want) <= 1e-6, "cell %zu: log mass %.12g, asymptotic %.12g",
                      i, lm[i], want);
    }
}
END_TEST

/* An input error case: the text, the grid, and where the message must point. */
typedef struct {
    const char *text;
    double from, to;
    size_t points;           /* 0: the default grid 0.05, 0.15, ..., 0.95 */
    int line;
    const char *section, *key, *fragment;
} error_case;

#define NORMAL_HEAD "[prior]\nfamily = normal\n"
#define MIX_HEAD "[prior]\nfamily = mixture\nparts = a, b\n"
#define PART_B "[prior.b]\nfamily = normal\nmean = 0\nsd = 1\nweight = 1\n"

static const error_case error_cases[] = {
    {"[prior]\nfamily = normla\nmean = 0\nsd = 1\n", 0, 0, 0, 2, "prior", "family",
     "unknown family `normla`; did you mean `normal`?"},
    {"[prior]\nfamily =\nmean = 0\n", 0, 0, 0, 2, "prior", "family",
     "the value is empty: expected one of uniform, normal, lognormal, gamma, beta, student, "
     "exponential, table, mixture"},
    {"[prior]\nfamily = zzz\n", 0, 0, 0, 2, "prior", "family", "unknown family `zzz` (families: "},
    {"[states]\nfrom = 0\n\n[prior]\nmean = 0\n", 0, 0, 0, 4, "prior", "family",
     "missing: states on a grid need `family =`"},
    {"[states]\nfrom = 0\n", 0, 0, 0, 0, "prior", "", "missing section: [prior]"},
    {NORMAL_HEAD "mean = 0\n", 0, 0, 0, 1, "prior", "sd", "missing: the normal family needs `sd`"},
    {NORMAL_HEAD "mean = 0\nsd = 1\nscale = 2\n", 0, 0, 0, 5, "prior", "scale",
     "`scale` is not a key of the normal family (its keys: mean, sd)"},
    {NORMAL_HEAD "mean = 0\nsdd = 1\n", 0, 0, 0, 4, "prior", "sdd", "did you mean `sd`?"},
    {NORMAL_HEAD "weights = 1, 2\nmean = 0\nsd = 1\n", 0, 0, 0, 3, "prior", "weights",
     "not a key of the normal family"},
    {NORMAL_HEAD "mean = 0\nsd = 0\n", 0, 0, 0, 4, "prior", "sd", "must be > 0"},
    {NORMAL_HEAD "mean = 0\nsd = -1\n", 0, 0, 0, 4, "prior", "sd", "must be > 0 for the normal"},
    {NORMAL_HEAD "mean = 0\nsd = 0.3x\n", 0, 0, 0, 4, "prior", "sd",
     "expected a finite number, found `0.3x`"},
    {NORMAL_HEAD "mean = 0\nsd = 1, 2\n", 0, 0, 0, 4, "prior", "sd", "expected one number"},
    {NORMAL_HEAD "mean = 1e999\nsd = 1\n", 0, 0, 0, 3, "prior", "mean", "a finite number"},
    {"[prior]\nfamily = lognormal\nmedian = 0\nlog_sd = 1\n", 0, 0, 0, 3, "prior", "median",
     "must be > 0"},
    {"[prior]\nfamily = lognormal\nmedian = 1\nlog_sd = 0\n", 0, 0, 0, 4, "prior", "log_sd",
     "must be > 0"},
    {"[prior]\nfamily = gamma\nshape = 0\nscale = 1\n", 0, 0, 0, 3, "prior", "shape",
     "must be > 0"},
    {"[prior]\nfamily = gamma\nshape = 1\nscale = -2\n", 0, 0, 0, 4, "prior", "scale",
     "must be > 0"},
    {"[prior]\nfamily = beta\nalpha = 0\nbeta = 1\n", 0, 0, 0, 3, "prior", "alpha",
     "must be > 0"},
    {"[prior]\nfamily = beta\nalpha = 1\nbeta = -0.5\n", 0, 0, 0, 4, "prior", "beta",
     "must be > 0"},
    {"[prior]\nfamily = student\ncenter = 0\nscale = 0\ndf = 3\n", 0, 0, 0, 4, "prior", "scale",
     "must be > 0"},
    {"[prior]\nfamily = student\ncenter = 0\nscale = 1\ndf = 0\n", 0, 0, 0, 5, "prior", "df",
     "must be > 0"},
    {"[prior]\nfamily = student\nscale = 1\ndf = 2\n", 0, 0, 0, 1, "prior", "center",
     "missing: the student family needs `center`"},
    {"[prior]\nfamily = exponential\nmean = 0\n", 0, 0, 0, 3, "prior", "mean", "must be > 0"},
    {"[prior]\nfamily = uniform\nlow = 0.6\nhigh = 0.4\n", 0, 0, 0, 4, "prior", "high",
     "low (0.6) must be below high (0.4)"},
    {"[prior]\nfamily = uniform\nlow = 2\n", 0, 0, 0, 3, "prior", "low",
     "the grid's `to`"},
    {"[prior]\nfamily = table\nat = 0, 0.5, 0.5\ndensity = 1, 1, 1\n", 0, 0, 0, 3, "prior",
     "at", "points must increase strictly: entry 3 (0.5) is not above entry 2"},
    {"[prior]\nfamily = table\nat = 0, 1\ndensity = 1, 2, 3\n", 0, 0, 0, 4, "prior", "density",
     "expected one density per point of `at` (2, line 3), found 3"},
    {"[prior]\nfamily = table\nat = 0, 1\ndensity = 1, -1\n", 0, 0, 0, 4, "prior", "density",
     "entry 2 is negative"},
    {"[prior]\nfamily = table\nat = 0, 1\ndensity = 0, 0\n", 0, 0, 0, 4, "prior", "density",
     "the density is 0 everywhere"},
    {"[prior]\nfamily = table\nat = 0\ndensity = 1\n", 0, 0, 0, 3, "prior", "at",
     "at least two points"},
    {"[prior]\nfamily = table\nat = 0, 1\n", 0, 0, 0, 1, "prior", "density", "missing"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\nweight = 1\n", 0, 0, 0, 3, "prior",
     "parts", "part `b` has no [prior.b] section"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\n" PART_B, 0, 0, 0, 4, "prior.a",
     "weight", "missing: each part of a mixture needs a weight"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\nweight = -1\n" PART_B, 0, 0, 0, 8,
     "prior.a", "weight", "must be >= 0, found -1"},
    {"[prior]\nfamily = mixture\nparts = a, b, a\n[prior.a]\nfamily = normal\nmean = 0\n"
     "sd = 1\nweight = 1\n" PART_B,
     0, 0, 0, 3, "prior", "parts", "duplicate label `a`"},
    {MIX_HEAD "[prior.a]\nfamily = mixture\nparts = c\nweight = 1\n" PART_B, 0, 0, 0, 5,
     "prior.a", "family", "cannot itself be a mixture"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\nweight = 1\n" PART_B
     "[prior.c]\nfamily = normal\nmean = 0\nsd = 1\nweight = 1\n",
     0, 0, 0, 14, "prior.c", "", "not one of the parts listed in [prior] parts (line 3)"},
    {NORMAL_HEAD "mean = 0\nsd = 1\n" PART_B, 0, 0, 0, 5, "prior.b", "",
     "part sections belong to a mixture, but [prior] family is normal (line 2)"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\nweight = 0\n"
     "[prior.b]\nfamily = normal\nmean = 0\nsd = 1\nweight = 0\n",
     0, 0, 0, 3, "prior", "parts", "the weights of the parts sum to 0"},
    {"[prior]\nfamily = mixture\n", 0, 0, 0, 1, "prior", "parts", "missing: the mixture family"},
    {MIX_HEAD "mean = 1\n" "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\nweight = 1\n" PART_B,
     0, 0, 0, 4, "prior", "mean", "not a key of the mixture family (its keys: parts)"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 0\nsd = 1\nweight = 1\n"
     "[prior.b]\nfamily = gama\nshape = 1\nscale = 1\nweight = 1\n",
     0, 0, 0, 10, "prior.b", "family", "did you mean `gamma`?"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 0\nsd = 0\nweight = 1\n" PART_B, 0, 0, 0, 7,
     "prior.a", "sd", "must be > 0"},
    {NORMAL_HEAD "mean = 100\nsd = 1\n", 0, 0, 0, 2, "prior", "family",
     "the normal prior puts no mass on the grid's range 0.05 to 0.95"},
    {"[prior]\nfamily = uniform\nlow = 5\nhigh = 6\n", 0, 0, 0, 2, "prior", "family",
     "the uniform prior puts no mass on the grid"},
    {MIX_HEAD "[prior.a]\nfamily = normal\nmean = 50\nsd = 1\nweight = 1\n"
     "[prior.b]\nfamily = exponential\nmean = 1\nweight = 0\n",
     0, 0, 0, 2, "prior", "family", "the mixture prior puts no mass on the grid"},
};

/* Each check of the [prior] contract stops with its message at the offending line,
 * section and key, through lop_prior_grid. */
START_TEST(bad_priors_name_their_line_section_and_key)
{
    for (size_t c = 0; c < sizeof error_cases / sizeof *error_cases; c++) {
        const error_case *ec = &error_cases[c];
        test_grid g = ec->points ? grid_of(ec->from, ec->to, ec->points) : grid_of(0.05, 0.95, 10);
        lop_config *cfg = config_of(ec->text);
        double mass[MAX_POINTS], outside;
        lop_error err = {0};
        lop_status st = lop_prior_grid(cfg, g.s, g.n, g.h, mass, &outside, &err);
        lop_config_free(cfg);
        ck_assert_msg(st == LOP_EINPUT, "case %zu (%s): accepted", c, ec->fragment);
        ck_assert_msg(err.line == ec->line && strcmp(err.section, ec->section) == 0 &&
                          strcmp(err.key, ec->key) == 0 && strstr(err.message, ec->fragment),
                      "case %zu: got %d: [%s] %s: %s; want %d: [%s] %s: ...%s...", c, err.line,
                      err.section, err.key, err.message, ec->line, ec->section, ec->key,
                      ec->fragment);
    }
}
END_TEST

/* The one-line form users see starts with FILE:LINE: [section] key:. */
START_TEST(error_reads_as_file_line_section_key)
{
    lop_config *cfg = config_of("[prior]\nfamily = normal\nmean = 0\nsd = 0.3x\n");
    test_grid g = grid_of(0, 1, 11);
    double mass[MAX_POINTS], outside;
    lop_error err = {0};
    ck_assert_int_eq(lop_prior_grid(cfg, g.s, g.n, g.h, mass, &outside, &err), LOP_EINPUT);
    lop_config_free(cfg);
    char line[LOP_ERROR_TEXT + 512];
    lop_error_format(&err, line, sizeof line);
    ck_assert_str_eq(line, "test.ini:4: [prior] sd: expected a finite number, found `0.3x`");
}
END_TEST

/* A grid the caller built wrongly is a run-time failure, not the user's input error. */
START_TEST(empty_grid_is_refused)
{
    lop_config *cfg = config_of("[prior]\nfamily = normal\nmean = 0\nsd = 1\n");
    double s[1] = {0}, mass[1], outside;
    lop_error err = {0};
    ck_assert_int_eq(lop_prior_grid(cfg, s, 0, 0.1, mass, &outside, &err), LOP_ERUN);
    memset(&err, 0, sizeof err);
    ck_assert_int_eq(lop_prior_grid(cfg, s, 1, 0, mass, &outside, &err), LOP_ERUN);
    lop_config_free(cfg);
}
END_TEST

Suite *suite_prior(void)
{
    Suite *s = suite_create("prior");
    TCase *tc = tcase_create("prior");
    tcase_add_test(tc, cells_match_quadrature_of_the_density);
    tcase_add_test(tc, coarse_grid_masses_and_outside_add_to_one);
    tcase_add_test(tc, uniform_masses_are_the_share_of_the_interval);
    tcase_add_test(tc, exponential_masses_match_the_closed_form);
    tcase_add_test(tc, table_triangle_has_known_cell_integrals);
    tcase_add_test(tc, mixture_of_two_normals_is_the_weighted_sum);
    tcase_add_test(tc, normal_on_a_narrow_grid_leaves_both_tails_outside);
    tcase_add_test(tc, tail_cells_keep_their_relative_precision);
    tcase_add_test(tc, beta_grid_from_0_to_1_is_clipped_to_the_support);
    tcase_add_test(tc, far_tail_cells_keep_their_logs);
    tcase_add_test(tc, bad_priors_name_their_line_section_and_key);
    tcase_add_test(tc, error_reads_as_file_line_section_key);
    tcase_add_test(tc, empty_grid_is_refused);
    suite_add_tcase(s, tc);
    return s;
}
