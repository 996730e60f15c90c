/* Ranges of settings whose expected loss stays near the optimum. */
#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "lopside/model/evidence.h"
#include "lopside/engine/flatness.h"
#include "lopside/engine/rates.h"

const double lop_flatness_levels[LOP_FLAT_LEVELS] = {0.01, 0.05, 0.10};

#define EDGE_TOLERANCE 1e-10
#define EDGE_ITERATIONS 200
/* Beyond the grid, steps double this many times before a range counts as endless. */
#define OUTWARD_DOUBLINGS 60

typedef struct {
    lop_flat_fn fn;
    void *ctx;
    double target;
} level_ctx;

static double above_target(double x, void *param)
{
    level_ctx *l = param;
    return l->fn(x, l->ctx) - l->target;
}

/* The x between inside (fn <= target) and outside (fn > target) where fn meets the
 * target (Brent). */
static double edge(level_ctx *l, double inside, double outside)
{
    double lo = fmin(inside, outside), hi = fmax(inside, outside);
    gsl_function f = {above_target, l};
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    double root = inside;
    if (s && gsl_root_fsolver_set(s, &f, lo, hi) == GSL_SUCCESS) {
        for (int it = 0; it < EDGE_ITERATIONS; it++) {
            if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
                break;
            root = gsl_root_fsolver_root(s);
            if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s),
                                       EDGE_TOLERANCE, EDGE_TOLERANCE) == GSL_SUCCESS)
                break;
        }
    }
    gsl_root_fsolver_free(s);
    return root;
}

/* One side (dir = -1 below `at`, +1 above) of one level. */
static double side(level_ctx *l, double at, const double *grid, const double *vals, size_t m,
                   int dir, bool bounded, bool discrete)
{
    double last = at;
    /* The grid points beyond `at`, nearest first. */
    size_t i = 0;
    while (i < m && grid[i] <= at)
        i++;
    size_t first_above = i, first_below = i;
    while (first_below > 0 && grid[first_below - 1] >= at)
        first_below--;
    for (size_t k = 0; k < m; k++) {
        size_t j;
        if (dir > 0) {
            if (first_above + k >= m)
                break;
            j = first_above + k;
        } else {
            if (k + 1 > first_below)
                break;
            j = first_below - 1 - k;
        }
        if (vals[j] > l->target)
            return discrete ? last : edge(l, last, grid[j]);
        last = grid[j];
    }
    if (bounded || discrete)
        return last;
    double width = m > 1 ? grid[m - 1] - grid[0] : 1;
    if (!(width > 0))
        width = 1;
    for (int k = 0; k < OUTWARD_DOUBLINGS; k++) {
        double x = last + dir * width * ldexp(1, k);
        if (l->fn(x, l->ctx) > l->target)
            return edge(l, last, x);
        last = x;
    }
    return dir * INFINITY;
}

/* Fills f around the optimum `at` of fn (expected loss `best`): for each level, the
 * range of x around `at` where fn(x) <= best + level·|best|. vals holds fn at the m
 * increasing points of grid; crossings between points are refined by Brent's method
 * unless `discrete` (then only grid points count). `bounded`: x lives on the grid, so a
 * range stops at its ends; otherwise it is searched beyond the grid and is infinite when
 * fn never leaves the level. */
static void flatness_find(lop_flat_fn fn, void *ctx, double at, double best, const double *grid,
                       const double *vals, size_t m, bool bounded, bool discrete,
                       lop_flatness *f)
{
    f->computed = isfinite(at) && isfinite(best);
    f->at = at;
    f->optimum = best;
    for (size_t k = 0; k < LOP_FLAT_LEVELS; k++) {
        lop_flat_range *r = &f->range[k];
        r->within = lop_flatness_levels[k];
        r->from = r->to = at;
        if (!f->computed)
            continue;
        level_ctx l = {fn, ctx, best + r->within * fabs(best)};
        r->from = side(&l, at, grid, vals, m, -1, bounded, discrete);
        r->to = side(&l, at, grid, vals, m, +1, bounded, discrete);
    }
}

typedef struct {
    const lop_problem *p;
    const double *post;
} estimate_ctx;

/* Expected loss of estimate e under the posterior: the direct sum over states. */
static double estimate_loss(double e, void *param)
{
    const estimate_ctx *ctx = param;
    const lop_problem *p = ctx->p;
    double sum = 0;
    for (size_t s = 0; s < p->n_states; s++)
        if (ctx->post[s] > 0)
            sum += ctx->post[s] * lop_curve_loss(&p->curve, e, p->state_values[s]);
    return sum;
}

void lop_flatness_estimates(const lop_problem *p, const double *post, const double *el,
                            double bayes_estimate, double best, lop_flatness *f)
{
    estimate_ctx ctx = {p, post};
    flatness_find(estimate_loss, &ctx, bayes_estimate, best, p->estimates, el,
                      p->n_estimates, true, false, f);
}

typedef struct {
    const lop_problem *p;
    const lop_channel *c;
} threshold_ctx;

static double threshold_loss(double t, void *param)
{
    const threshold_ctx *ctx = param;
    return lop_rates_threshold(ctx->p, ctx->c, t, false, NULL);
}

bool lop_flatness_threshold(const lop_problem *p, const lop_channel *c, double t, double best,
                            const double *grid, size_t m, lop_flatness *f)
{
    threshold_ctx ctx = {p, c};
    bool counts = lop_evidence_is_count(c);
    /* Thresholds on counts act only at whole numbers: search those, up to one past the
     * grid, where the rule always takes the first action. */
    double lo = counts ? ceil(grid[0]) : 0, hi = counts ? floor(grid[m - 1]) + 1 : 0;
    size_t n = counts ? (size_t)(hi - lo) + 1 : m;
    double *points = calloc(n, sizeof *points), *vals = calloc(n, sizeof *vals);
    if (!points || !vals) {
        free(points);
        free(vals);
        f->computed = false;
        return false;
    }
    for (size_t i = 0; i < n; i++) {
        points[i] = counts ? lo + (double)i : grid[i];
        vals[i] = threshold_loss(points[i], &ctx);
    }
    flatness_find(threshold_loss, &ctx, t, best, points, vals, n, counts, counts, f);
    for (size_t k = 0; counts && k < LOP_FLAT_LEVELS; k++) {
        /* Every threshold at or below 0 takes the second action always, every one past
         * the grid the first: a range that reaches them runs on without end. */
        if (f->range[k].from <= points[0] && points[0] <= 0)
            f->range[k].from = -INFINITY;
        if (f->range[k].to >= points[n - 1])
            f->range[k].to = INFINITY;
    }
    free(points);
    free(vals);
    return true;
}
