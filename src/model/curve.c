/* Expected loss of every estimate on a grid, by a fast path per curve family, and the
 * Bayes estimate.
 *
 * Notation: states s[i] (increasing), posterior p[i], estimates x[j] (increasing). The
 * error is e = c_i·(x - s_i) with c_i = 1, or c_i = 1/s_i for relative curves; c_i > 0,
 * so e has the sign of x - s_i. Sums over a run of states come from prefix sums of
 * p·c^k·d^m with d = s - m1, the states shifted by the posterior mean m1 so that the
 * sums stay small and their differences do not cancel. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_exp.h>

#include "curve_private.h"
#include "lopside/util/interp.h"

#define TIE_RELATIVE CURVE_TIE_RELATIVE
/* exp() of more than this would overflow a double: LINEX sums are then scaled. */
#define EXP_SAFE 700.0
/* The FFT path of a points curve is taken when FFT_COST·n·log2(n) is below the pieces'
 * (P + 1)·E + P·S (n: the padded FFT length). Measured (one core, -O2): the FFT path
 * takes about 0.66 ns·n·log2(n), the pieces about 1.5 ns per estimate and knot plus
 * 1 ns per state and knot; with S = E = 10,000 both take 0.19 ms at P = 5. */
#define FFT_COST 0.5
/* Relative LINEX and points curves with continuous estimates: the root or minimum
 * search stops when the bracket is this narrow (relative to the interval searched) or
 * after this many steps. */
#define ROOT_TOLERANCE 1e-14
#define ROOT_ITERATIONS 200
#define MIN_TOLERANCE 1e-12


/* ---- the loss of one estimate ---------------------------------------------------- */

/* Returns phi(u) = e^u - 1 - u = sum_{k>=2} u^k/k! without cancellation near 0, as
 * u²/2·exprel_2(u) with GSL's exprel_2(u) = 2(e^u - 1 - u)/u². */
static double phi(double u)
{
    if (fabs(u) < 1)
        return 0.5 * u * u * gsl_sf_exprel_2(u);
    return expm1(u) - u;
}

/* Returns the loss of the points curve at e: linear between knots, flat outside. */
static double points_loss(const lop_curve *c, double e)
{
    return lop_interp_linear(c->error, c->value, c->n_points, e);
}

/* Returns the loss of error e (e already divided by the state for relative curves). */
static double error_loss(const lop_curve *c, double e)
{
    switch (c->kind) {
    case LOP_CURVE_SQUARED:
        return c->scale * e * e;
    case LOP_CURVE_ABSOLUTE:
        return c->scale * fabs(e);
    case LOP_CURVE_LINLIN:
        return e < 0 ? -c->under * e : c->over * e;
    case LOP_CURVE_QUADQUAD:
        return (e < 0 ? c->under : c->over) * e * e;
    case LOP_CURVE_LINEX:
        /* scale·(exp(a·e) - a·e - 1) (Varian 1975; Zellner 1986) */
        return c->scale * phi(c->a * e);
    case LOP_CURVE_TOLERANCE:
        return -c->below <= e && e <= c->above ? c->inside : c->outside;
    case LOP_CURVE_POINTS:
        return points_loss(c, e);
    }
    return NAN;
}

double lop_curve_loss(const lop_curve *c, double estimate, double state)
{
    if (!c->relative)
        return error_loss(c, estimate - state);
    if (c->kind == LOP_CURVE_TOLERANCE) {
        /* -below <= (x - s)/s <= above, multiplied out by s > 0: the form whose
         * comparisons are monotone in s, so the window search agrees with it exactly. */
        bool in = (1 - c->below) * state <= estimate && estimate <= (1 + c->above) * state;
        return in ? c->inside : c->outside;
    }
    return error_loss(c, (estimate - state) / state);
}

static bool finite_positive(double v)
{
    return isfinite(v) && v > 0;
}

const char *lop_curve_invalid(const lop_curve *c)
{
    switch (c->kind) {
    case LOP_CURVE_SQUARED:
    case LOP_CURVE_ABSOLUTE:
        return finite_positive(c->scale) ? NULL : "scale must be a positive number";
    case LOP_CURVE_LINLIN:
    case LOP_CURVE_QUADQUAD:
        return finite_positive(c->under) && finite_positive(c->over)
                   ? NULL : "under and over must be positive numbers";
    case LOP_CURVE_LINEX:
        if (!finite_positive(c->scale))
            return "scale must be a positive number";
        return isfinite(c->a) && c->a != 0 ? NULL : "a must be a number other than 0";
    case LOP_CURVE_TOLERANCE:
        if (!isfinite(c->below) || !isfinite(c->above) || -c->below > c->above)
            return "the band needs -below <= above";
        return isfinite(c->inside) && isfinite(c->outside)
                   ? NULL : "inside and outside must be numbers";
    case LOP_CURVE_POINTS:
        if (c->n_points < 1 || !c->error || !c->value)
            return "a points curve needs at least one point";
        for (size_t k = 0; k < c->n_points; k++) {
            if (!isfinite(c->error[k]) || !isfinite(c->value[k]))
                return "error and value must be numbers";
            if (k > 0 && !(c->error[k] > c->error[k - 1]))
                return "error must be increasing";
        }
        return NULL;
    }
    return "unknown curve";
}

/* ---- searches --------------------------------------------------------------------- */

/* Returns the number of a[0..n-1] (non-decreasing) that are < v. */
static size_t count_below(const double *a, size_t n, double v)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (a[mid] < v)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* Returns the number of s[0..n-1] (increasing) with coef·s <= v (coef > 0); the rounded
 * product is monotone in s, so the count agrees with testing every state. */
static size_t count_scaled_at_most(const double *s, size_t n, double coef, double v)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (coef * s[mid] <= v)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* Returns the number of s[0..n-1] (increasing) with coef·s < v (coef > 0). */
static size_t count_scaled_below(const double *s, size_t n, double coef, double v)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (coef * s[mid] < v)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

static double clamp(double v, double lo, double hi)
{
    return v < lo ? lo : v > hi ? hi : v;
}

/* Returns v clamped to the interval searched: the estimate grid's, or with continuous
 * estimates the states' (where every convex curve's minimizer lies). */
static double clamp_to_estimates(const lop_curve_work *w, double v)
{
    return clamp(v, w->range_lo, w->range_hi);
}

/* ---- sums of the posterior -------------------------------------------------------- */

/* Sets w->mass = sum p and w->center = sum p·s / mass (the posterior mean). */
static void set_center(lop_curve_work *w, const double *p)
{
    double mass = 0, first = 0;
    for (size_t i = 0; i < w->n_states; i++) {
        mass += p[i];
        first += p[i] * w->s[i];
    }
    w->mass = mass;
    w->center = first / mass;
}

/* Fills pre[into + m][i] = sum over states k < i of p·c^power·d^m, m < n_moments, with
 * c = 1/s (relative) or 1 and d = s - center. */
static void set_prefix(lop_curve_work *w, const double *p, int power, size_t n_moments,
                       size_t into)
{
    double sum[3] = {0, 0, 0};
    bool divide = w->c.relative && power > 0;
    for (size_t m = 0; m < n_moments; m++)
        w->pre[into + m][0] = 0;
    for (size_t i = 0; i < w->n_states; i++) {
        double term = p[i];
        if (divide)
            term *= power == 2 ? w->inv_s[i] * w->inv_s[i] : w->inv_s[i];
        double d = w->s[i] - w->center;
        for (size_t m = 0; m < n_moments; m++) {
            sum[m] += term;
            w->pre[into + m][i + 1] = sum[m];
            term *= d;
        }
    }
}

/* Returns the sum of prefix array a over states [lo, hi). */
static double run(const double *a, size_t lo, size_t hi)
{
    return a[hi] - a[lo];
}

/* Returns sum p·loss(x, s), or over cells the integral of the loss against the density
 * (cells_direct), by the direct sum (states without mass are skipped, so an infinite loss
 * there does not turn the sum into NaN). */
static double direct_at(const lop_curve_work *w, const double *p, double x)
{
    if (curve_by_cells(w))
        return cells_direct(w, p, x);
    double sum = 0;
    for (size_t i = 0; i < w->n_states; i++)
        if (p[i] != 0)
            sum += p[i] * lop_curve_loss(&w->c, x, w->s[i]);
    return sum;
}

/* ---- squared: moments ------------------------------------------------------------- */

/* Sets the moments of squared loss: spread = sum p·(s - m1)², or for relative curves
 * inv_mean = mu = sum p/s / mass and spread = sum p·(1/s - mu)². */
static void squared_prepare(lop_curve_work *w, const double *p)
{
    set_center(w, p);
    double spread = 0;
    if (!w->c.relative) {
        for (size_t i = 0; i < w->n_states; i++) {
            double d = w->s[i] - w->center;
            spread += p[i] * d * d;
        }
    } else {
        double first = 0;
        for (size_t i = 0; i < w->n_states; i++)
            first += p[i] * w->inv_s[i];
        w->inv_mean = first / w->mass;
        for (size_t i = 0; i < w->n_states; i++) {
            double d = w->inv_s[i] - w->inv_mean;
            spread += p[i] * d * d;
        }
    }
    w->spread = spread;
}

/* Returns scale·sum p·(x - s)² = scale·(mass·(x - m1)² + sum p·(s - m1)²), or relative
 * scale·sum p·(x/s - 1)² = scale·(x²·sum p·(1/s - mu)² + mass·(x·mu - 1)²)
 * (expanding the square about the mean; Gelman et al., BDA, ch. 2). */
static double squared_at(const lop_curve_work *w, double x)
{
    if (!w->c.relative) {
        double y = x - w->center;
        return w->c.scale * (w->mass * y * y + w->spread);
    }
    double r = x * w->inv_mean - 1;
    return w->c.scale * (x * x * w->spread + w->mass * r * r);
}

/* Returns the minimizer of squared_at: the posterior mean m1, or relative
 * sum p/s / sum p/s² (setting the derivative to 0), clamped to the estimates. */
static double squared_bayes(const lop_curve_work *w)
{
    if (!w->c.relative)
        return clamp_to_estimates(w, w->center);
    double mu = w->inv_mean;
    return clamp_to_estimates(w, w->mass * mu / (w->spread + w->mass * mu * mu));
}

/* ---- absolute and linlin: weighted prefix sums ------------------------------------ */

/* Returns over·sum_{s<=x} p·c·(x - s) + under·sum_{s>x} p·c·(s - x), from prefix sums of
 * p·c and p·c·d (pre[0], pre[1]); k states are <= x. Absolute loss is under = over = scale
 * (Raiffa & Schlaifer 1961). */
static double linlin_at(const lop_curve_work *w, double x, size_t k, double under,
                        double over)
{
    const double *a = w->pre[0], *b = w->pre[1];
    size_t n = w->n_states;
    double y = x - w->center;
    double below = y * a[k] - b[k];
    double above = run(b, k, n) - y * run(a, k, n);
    return over * below + under * above;
}

static void linlin_weights(const lop_curve *c, double *under, double *over)
{
    if (c->kind == LOP_CURVE_ABSOLUTE) {
        *under = *over = c->scale;
    } else {
        *under = c->under;
        *over = c->over;
    }
}

static void linlin_grid(lop_curve_work *w, double *el)
{
    double under, over;
    linlin_weights(&w->c, &under, &over);
    size_t k = 0;
    for (size_t j = 0; j < w->n_estimates; j++) {
        double x = w->x[j];
        while (k < w->n_states && w->s[k] <= x)
            k++;
        el[j] = linlin_at(w, x, k, under, over);
    }
}

/* Returns the Bayes estimate of linlin (absolute: under = over): the quantile
 * tau = under/(under + over) of the weights p·c (Raiffa & Schlaifer 1961; Berger 1985,
 * secs. 2.4 and 4.4.2, from memory). The expected loss is flat between states whose
 * cumulative weight equals tau·total; then the middle of that interval (within the
 * estimates) is returned. */
static double linlin_bayes(const lop_curve_work *w)
{
    double under, over;
    linlin_weights(&w->c, &under, &over);
    const double *a = w->pre[0];
    size_t n = w->n_states;
    double total = a[n], goal = under / (under + over) * total, tie = TIE_RELATIVE * total;
    /* Minimizing set [lo, hi]: lo is the first state whose cumulative weight through it
     * reaches goal, hi the last state whose cumulative weight before it does not pass it. */
    double lo = -INFINITY, hi = INFINITY;
    if (goal - tie > 0)
        lo = w->s[count_below(a + 1, n, goal - tie)];
    if (goal + tie < total)
        hi = w->s[lop_count_at_most(a, n, goal + tie) - 1];
    double first = w->range_lo, last = w->range_hi;
    if (lo > last)
        return last;
    if (hi < first)
        return first;
    return 0.5 * (fmax(lo, first) + fmin(hi, last));
}

/* ---- quadquad: prefix sums of p·c², p·c²·d, p·c²·d² ------------------------------- */

/* Returns over·sum_{s<=x} p·c²·(x - s)² + under·sum_{s>x} p·c²·(x - s)², each part
 * expanded as y²·sum w - 2y·sum w·d + sum w·d² with y = x - m1; k states are <= x. */
static double quadquad_at(const lop_curve_work *w, double x, size_t k)
{
    const double *a = w->pre[0], *b = w->pre[1], *q = w->pre[2];
    size_t n = w->n_states;
    double y = x - w->center;
    double below = y * y * a[k] - 2 * y * b[k] + q[k];
    double above = y * y * run(a, k, n) - 2 * y * run(b, k, n) + run(q, k, n);
    return w->c.over * below + w->c.under * above;
}

static void quadquad_grid(lop_curve_work *w, double *el)
{
    size_t k = 0;
    for (size_t j = 0; j < w->n_estimates; j++) {
        double x = w->x[j];
        while (k < w->n_states && w->s[k] <= x)
            k++;
        el[j] = quadquad_at(w, x, k);
    }
}

/* Returns y (= x - m1) where half the derivative of quadquad_at,
 * D(y) = over·sum_{s<x} w·(y - d) + under·sum_{s>x} w·(y - d), w = p·c², is zero, when the
 * states below x are exactly the first k: D is linear there. */
static double quadquad_root(const lop_curve_work *w, size_t k)
{
    const double *a = w->pre[0], *b = w->pre[1];
    size_t n = w->n_states;
    double weight = w->c.over * a[k] + w->c.under * run(a, k, n);
    double moment = w->c.over * b[k] + w->c.under * run(b, k, n);
    return moment / weight;
}

/* Returns D at the state k (the state itself contributes 0 there). */
static double quadquad_slope_at_state(const lop_curve_work *w, size_t k)
{
    const double *a = w->pre[0], *b = w->pre[1];
    size_t n = w->n_states;
    double y = w->s[k] - w->center;
    return w->c.over * (y * a[k] - b[k]) + w->c.under * (y * run(a, k, n) - run(b, k, n));
}

/* Returns the minimizer of quadquad: D increases, so the first state k with D >= 0 is
 * found by bisection and the root solved on the piece between states k-1 and k (the
 * first-order condition is piecewise linear in the prefix sums). */
static double quadquad_bayes(const lop_curve_work *w)
{
    size_t n = w->n_states, lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (quadquad_slope_at_state(w, mid) < 0)
            lo = mid + 1;
        else
            hi = mid;
    }
    double y = quadquad_root(w, lo);
    double left = lo > 0 ? w->s[lo - 1] - w->center : -INFINITY;
    double right = lo < n ? w->s[lo] - w->center : INFINITY;
    return clamp_to_estimates(w, w->center + clamp(y, left, right));
}

/* ---- linex: closed form ----------------------------------------------------------- */

/* Sets the sums of LINEX with z = -a·(s - m1): z_sum = sum p·z and
 * log_phi = log sum p·phi(z), scaled by the largest z when exp(z) could overflow. */
static void linex_prepare(lop_curve_work *w, const double *p)
{
    set_center(w, p);
    double a = w->c.a, top = -INFINITY, z_sum = 0;
    for (size_t i = 0; i < w->n_states; i++) {
        if (p[i] == 0)
            continue;
        double z = -a * (w->s[i] - w->center);
        z_sum += p[i] * z;
        if (z > top)
            top = z;
    }
    double sum = 0;
    if (top <= EXP_SAFE) {
        for (size_t i = 0; i < w->n_states; i++)
            if (p[i] != 0)
                sum += p[i] * phi(-a * (w->s[i] - w->center));
        w->log_phi = log(sum);
    } else {
        /* phi(z)·e^-top = e^(z - top) - (1 + z)·e^-top */
        double scale = exp(-top);
        for (size_t i = 0; i < w->n_states; i++) {
            if (p[i] == 0)
                continue;
            double z = -a * (w->s[i] - w->center);
            sum += p[i] * (exp(z - top) - (1 + z) * scale);
        }
        w->log_phi = top + log(sum);
    }
    w->z_sum = z_sum;
}

/* Returns scale·sum p·phi(t + z) with t = a·(x - m1), through
 * phi(t + z) = e^t·phi(z) + phi(t) + z·(e^t - 1): three terms without cancellation
 * (closed form of LINEX over posterior moments; Zellner 1986). */
static double linex_at(const lop_curve_work *w, double x)
{
    double t = w->c.a * (x - w->center);
    return w->c.scale * (exp(t + w->log_phi) + w->mass * phi(t) + w->z_sum * expm1(t));
}

/* Returns the LINEX Bayes estimate x = -(1/a)·ln E[e^(-a·s)] (Zellner 1986), computed as
 * m1 - (1/a)·ln(1 + (sum p·phi(z) + sum p·z)/mass), clamped to the estimates. */
static double linex_bayes(const lop_curve_work *w)
{
    double log_ratio;
    if (w->log_phi <= EXP_SAFE)
        log_ratio = log1p((exp(w->log_phi) + w->z_sum) / w->mass);
    else
        log_ratio = w->log_phi + log1p((w->mass + w->z_sum) * exp(-w->log_phi)) - log(w->mass);
    return clamp_to_estimates(w, w->center - log_ratio / w->c.a);
}

/* Relative LINEX has no closed form: F(x) = log sum p/s·e^(a(x/s - 1)) - log sum p/s is
 * zero where the derivative of the expected loss, a·sum p/s·(e^(a(x/s - 1)) - 1), is;
 * F has the derivative's sign times sign(a) and stays finite where exp would overflow. */
typedef struct {
    const lop_curve_work *w;
    const double *log_weight;       /* log(p/s), -inf without mass */
    double log_total;               /* log sum p/s */
} linex_relative_view;

static double linex_relative_score(double x, void *params)
{
    const linex_relative_view *v = params;
    const lop_curve_work *w = v->w;
    double top = -INFINITY;
    for (size_t i = 0; i < w->n_states; i++) {
        double t = v->log_weight[i] + w->c.a * (x * w->inv_s[i] - 1);
        if (t > top)
            top = t;
    }
    double sum = 0;
    for (size_t i = 0; i < w->n_states; i++)
        sum += exp(v->log_weight[i] + w->c.a * (x * w->inv_s[i] - 1) - top);
    return top + log(sum) - v->log_total;
}

/* Returns the relative LINEX Bayes estimate: the root of the derivative by Brent's method
 * (GSL), or an end of the estimates when the derivative has one sign on them. */
static double linex_relative_bayes(lop_curve_work *w, const double *p)
{
    double *log_weight = w->pre[0];
    double top = -INFINITY;
    for (size_t i = 0; i < w->n_states; i++) {
        log_weight[i] = p[i] > 0 ? log(p[i] * w->inv_s[i]) : -INFINITY;
        if (log_weight[i] > top)
            top = log_weight[i];
    }
    double sum = 0;
    for (size_t i = 0; i < w->n_states; i++)
        sum += exp(log_weight[i] - top);
    linex_relative_view view = {w, log_weight, top + log(sum)};
    double sign = w->c.a > 0 ? 1 : -1;
    double first = w->range_lo, last = w->range_hi;
    if (sign * linex_relative_score(first, &view) >= 0)
        return first;
    if (sign * linex_relative_score(last, &view) <= 0)
        return last;
    gsl_function f = {linex_relative_score, &view};
    if (gsl_root_fsolver_set(w->solver, &f, first, last) != GSL_SUCCESS)
        return NAN;
    double root = 0.5 * (first + last);
    for (int it = 0; it < ROOT_ITERATIONS; it++) {
        if (gsl_root_fsolver_iterate(w->solver) != GSL_SUCCESS)
            break;
        root = gsl_root_fsolver_root(w->solver);
        double lo = gsl_root_fsolver_x_lower(w->solver), hi = gsl_root_fsolver_x_upper(w->solver);
        if (gsl_root_test_interval(lo, hi, ROOT_TOLERANCE * (last - first), 0) == GSL_SUCCESS)
            break;
    }
    return root;
}

/* ---- tolerance: a window of states ------------------------------------------------ */

double curve_tolerance_el(const lop_curve_work *w, double in)
{
    return w->c.outside * w->mass + (w->c.inside - w->c.outside) * in;
}

/* The band -below <= x - s <= above is the states in [x - above, x + below]: two
 * pointers that only move forward as x increases (sliding window over the cumulative
 * posterior pre[0]). The tests are those of lop_curve_loss, so the two agree exactly. */
static void tolerance_grid(lop_curve_work *w, double *el)
{
    const double *cum = w->pre[0];
    size_t lo = 0, hi = 0, n = w->n_states;
    for (size_t j = 0; j < w->n_estimates; j++) {
        double x = w->x[j];
        while (lo < n && x - w->s[lo] > w->c.above)
            lo++;
        while (hi < n && x - w->s[hi] >= -w->c.below)
            hi++;
        el[j] = curve_tolerance_el(w, hi > lo ? run(cum, lo, hi) : 0);
    }
}

/* Sets [*lo, *hi) to the states of the relative band at x: (1 - below)·s <= x <= (1 +
 * above)·s, by bisection on each side; a factor <= 0 turns its side around or makes it
 * hold for all states or none. */
static void relative_band(const lop_curve_work *w, double x, size_t *lo, size_t *hi)
{
    size_t n = w->n_states;
    double low = 1 - w->c.below, high = 1 + w->c.above;
    *lo = 0;
    *hi = n;
    if (low > 0)                                /* low·s <= x */
        *hi = count_scaled_at_most(w->s, n, low, x);
    else if (low < 0)
        *lo = count_scaled_below(w->s, n, -low, -x);
    else if (x < 0)
        *hi = 0;
    if (high > 0) {                             /* x <= high·s */
        size_t first = count_scaled_below(w->s, n, high, x);
        *lo = first > *lo ? first : *lo;
    } else if (high < 0) {
        size_t end = count_scaled_at_most(w->s, n, -high, -x);
        *hi = end < *hi ? end : *hi;
    } else if (x > 0) {
        *hi = 0;
    }
}

/* Relative band. When both factors are positive (below < 1, the usual band) its ends
 * x/(1 + above) and x/(1 - below) increase with x: two forward pointers, O(S + E);
 * otherwise bisection per estimate, O(E log S). The tests are those of lop_curve_loss. */
static void tolerance_relative_grid(lop_curve_work *w, double *el)
{
    const double *cum = w->pre[0];
    size_t n = w->n_states, lo = 0, hi = 0;
    double low = 1 - w->c.below, high = 1 + w->c.above;
    bool forward = low > 0 && high > 0;
    for (size_t j = 0; j < w->n_estimates; j++) {
        double x = w->x[j];
        if (forward) {
            while (lo < n && high * w->s[lo] < x)
                lo++;
            while (hi < n && low * w->s[hi] <= x)
                hi++;
        } else {
            relative_band(w, x, &lo, &hi);
        }
        el[j] = curve_tolerance_el(w, hi > lo ? run(cum, lo, hi) : 0);
    }
}

/* Returns the number of s[0..n-1] (increasing) with x - s > above: a prefix. */
static size_t count_beyond_band(const double *s, size_t n, double x, double above)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (x - s[mid] > above)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* Returns the number of s[0..n-1] (increasing) with x - s >= -below: a prefix. */
static size_t count_within_band(const double *s, size_t n, double x, double below)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (x - s[mid] >= -below)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

double curve_points_window(const lop_curve_work *w, double x)
{
    size_t lo, hi, n = w->n_states;
    if (w->c.relative) {
        relative_band(w, x, &lo, &hi);
    } else {
        lo = count_beyond_band(w->s, n, x, w->c.above);
        hi = count_within_band(w->s, n, x, w->c.below);
    }
    return hi > lo ? run(w->pre[0], lo, hi) : 0;
}

/* ---- points: prefix sums per piece ------------------------------------------------ */

/* Returns true when state i has error >= knot m at estimate x (absolute: x - s >= k;
 * relative, x > 0: (1 + k)·s <= x). Monotone in i and in x. */
static bool points_reaches(const lop_curve_work *w, size_t m, double x, size_t i)
{
    if (w->c.relative)
        return (1 + w->c.error[m]) * w->s[i] <= x;
    return x - w->s[i] >= w->c.error[m];
}

/* Returns sum p·L(e) given count[m] = the states (a prefix) with error >= knot m: the
 * states between knots m and m+1 add v_m·sum p + slope_m·(sum p·e - k_m·sum p), with
 * sum p·e = y·sum p·c - sum p·c·d (pre[0] = p, pre[1] = p·c, pre[2] = p·c·d); those
 * above the last knot add its value, those below the first the first value. */
static double points_at(const lop_curve_work *w, double x)
{
    const double *a = w->pre[0], *b = w->pre[1], *q = w->pre[2];
    const double *k = w->c.error, *v = w->c.value;
    const size_t *count = w->count;
    size_t last = w->c.n_points - 1;
    double y = x - w->center;
    double sum = v[last] * a[count[last]] + v[0] * run(a, count[0], w->n_states);
    for (size_t m = 0; m < last; m++) {
        size_t lo = count[m + 1], hi = count[m];
        if (hi <= lo)
            continue;
        double mass = run(a, lo, hi);
        double first = y * run(b, lo, hi) - run(q, lo, hi);
        sum += v[m] * mass + w->slope[m] * (first - k[m] * mass);
    }
    return sum;
}

/* Points curve, O(S·P + E·P): one pointer per knot, moving forward as x increases.
 * Relative estimates <= 0 (outside the sense of a relative error) take the direct sum. */
static void points_grid(lop_curve_work *w, const double *p, double *el)
{
    if (curve_by_cells(w)) {
        for (size_t m = 0; m < w->c.n_points; m++)
            w->count[m] = SIZE_MAX;             /* the knots' pieces, found afresh */
        for (size_t j = 0; j < w->n_estimates; j++)
            el[j] = cells_points_at(w, w->x[j], w->count);
        return;
    }
    for (size_t m = 0; m < w->c.n_points; m++)
        w->count[m] = 0;
    for (size_t j = 0; j < w->n_estimates; j++) {
        double x = w->x[j];
        if (w->c.relative && x <= 0) {
            el[j] = direct_at(w, p, x);
            continue;
        }
        for (size_t m = 0; m < w->c.n_points; m++)
            while (w->count[m] < w->n_states && points_reaches(w, m, x, w->count[m]))
                w->count[m]++;
        el[j] = points_at(w, x);
    }
}

/* ---- the best estimate of the grid ------------------------------------------------ */

/* Returns the largest loss magnitude of a tolerance or points curve: the scale of ties. */
static double curve_loss_scale(const lop_curve *c)
{
    if (c->kind == LOP_CURVE_TOLERANCE)
        return fmax(fabs(c->inside), fabs(c->outside));
    double top = 0;
    for (size_t m = 0; m < c->n_points; m++)
        top = fmax(top, fabs(c->value[m]));
    return top;
}

/* Returns the index of the best estimate of el: the middle of the first run of
 * estimates whose expected losses tie with the least (lower middle of an even run). */
static size_t grid_best(const double *el, size_t n, double scale)
{
    double least = el[0];
    for (size_t j = 1; j < n; j++)
        if (el[j] < least)
            least = el[j];
    double tie = TIE_RELATIVE * (scale > 0 ? scale : 1);
    size_t first = 0;
    while (el[first] - least > tie)
        first++;
    size_t end = first + 1;
    while (end < n && el[end] - least <= tie)
        end++;
    return first + (end - 1 - first) / 2;
}

/* ---- dispatch --------------------------------------------------------------------- */

/* Sets the sums lop_curve_expected and lop_curve_bayes read for the posterior p. */
static void prepare(lop_curve_work *w, const double *p)
{
    w->p = p;
    switch (w->c.kind) {
    case LOP_CURVE_SQUARED:
        squared_prepare(w, p);
        break;
    case LOP_CURVE_ABSOLUTE:
    case LOP_CURVE_LINLIN:
        set_center(w, p);
        if (w->cells)
            cells_prepare(w, true);
        else
            set_prefix(w, p, 1, 2, 0);
        break;
    case LOP_CURVE_QUADQUAD:
        set_center(w, p);
        set_prefix(w, p, 2, 3, 0);
        break;
    case LOP_CURVE_LINEX:
        if (!w->c.relative)
            linex_prepare(w, p);
        break;
    case LOP_CURVE_TOLERANCE:
        set_center(w, p);
        if (w->cells)
            cells_prepare(w, false);
        else
            set_prefix(w, p, 0, 1, 0);
        break;
    case LOP_CURVE_POINTS:
        set_center(w, p);           /* the FFT path needs only the mass, for ties */
        if (curve_by_cells(w)) {
            cells_prepare(w, true);
            break;
        }
        if (w->method == LOP_CURVE_BY_FFT && !w->continuous)
            break;
        set_prefix(w, p, 0, 1, 0);  /* the search between grid points takes the pieces */
        set_prefix(w, p, 1, 2, 1);
        break;
    }
}

/* Writes the expected linlin (absolute) loss of every estimate. */
static void linlin_expected(lop_curve_work *w, double *el)
{
    if (!w->cells) {
        linlin_grid(w, el);
        return;
    }
    double under, over;
    linlin_weights(&w->c, &under, &over);
    for (size_t j = 0; j < w->n_estimates; j++)
        el[j] = cells_linlin_at(w, w->x[j], under, over);
}

/* Writes the expected tolerance loss of every estimate. */
static void tolerance_expected(lop_curve_work *w, double *el)
{
    if (w->cells) {
        for (size_t j = 0; j < w->n_estimates; j++)
            el[j] = curve_tolerance_el(w, cells_window(w, w->x[j]));
    } else if (w->c.relative) {
        tolerance_relative_grid(w, el);
    } else {
        tolerance_grid(w, el);
    }
}

void lop_curve_expected(lop_curve_work *w, const double *p, double *el)
{
    prepare(w, p);
    switch (w->c.kind) {
    case LOP_CURVE_SQUARED:
        for (size_t j = 0; j < w->n_estimates; j++)
            el[j] = squared_at(w, w->x[j]);
        break;
    case LOP_CURVE_ABSOLUTE:
    case LOP_CURVE_LINLIN:
        linlin_expected(w, el);
        break;
    case LOP_CURVE_QUADQUAD:
        quadquad_grid(w, el);
        break;
    case LOP_CURVE_LINEX:
        for (size_t j = 0; j < w->n_estimates; j++)
            el[j] = w->c.relative ? direct_at(w, p, w->x[j]) : linex_at(w, w->x[j]);
        break;
    case LOP_CURVE_TOLERANCE:
        tolerance_expected(w, el);
        break;
    case LOP_CURVE_POINTS:
        if (w->method == LOP_CURVE_BY_FFT && !curve_by_cells(w))
            lop_curve_fft_expected(w->fft, p, el);
        else
            points_grid(w, p, el);
        break;
    }
}

void lop_curve_expected_direct(const lop_curve_work *w, const double *p, double *el)
{
    for (size_t j = 0; j < w->n_estimates; j++)
        el[j] = direct_at(w, p, w->x[j]);
}

double lop_curve_expected_at(const lop_curve_work *w, const double *p, double x)
{
    return direct_at(w, p, x);
}

/* Expected loss of one estimate x for a convex curve, once prepare() has run. */
static double convex_at(lop_curve_work *w, const double *p, double x)
{
    const lop_curve *c = &w->c;
    switch (c->kind) {
    case LOP_CURVE_SQUARED:
        return squared_at(w, x);
    case LOP_CURVE_ABSOLUTE:
    case LOP_CURVE_LINLIN: {
        double under, over;
        linlin_weights(c, &under, &over);
        if (w->cells)
            return cells_linlin_at(w, x, under, over);
        return linlin_at(w, x, lop_count_at_most(w->s, w->n_states, x), under, over);
    }
    case LOP_CURVE_QUADQUAD:
        return quadquad_at(w, x, lop_count_at_most(w->s, w->n_states, x));
    default:
        return c->relative ? direct_at(w, p, x) : linex_at(w, x);
    }
}

/* The continuous minimizer of a convex curve's expected loss over the range searched. */
static double convex_minimizer(lop_curve_work *w, const double *p)
{
    const lop_curve *c = &w->c;
    if (c->kind == LOP_CURVE_LINEX && c->relative)
        return linex_relative_bayes(w, p);
    prepare(w, p);
    switch (c->kind) {
    case LOP_CURVE_SQUARED:
        return squared_bayes(w);
    case LOP_CURVE_ABSOLUTE:
    case LOP_CURVE_LINLIN: {
        if (!w->cells)
            return linlin_bayes(w);
        double under, over;
        linlin_weights(c, &under, &over);
        return clamp_to_estimates(w, cells_linlin_bayes(w, under, over));
    }
    case LOP_CURVE_QUADQUAD:
        return quadquad_bayes(w);
    default:
        return linex_bayes(w);
    }
}

/* Returns the expected loss of a points curve at x from the pieces, the counts of each
 * knot found by bisection (they are prefixes of the states). */
static double points_one(lop_curve_work *w, double x)
{
    if (curve_by_cells(w)) {
        for (size_t m = 0; m < w->c.n_points; m++)
            w->count[m] = SIZE_MAX;
        return cells_points_at(w, x, w->count);
    }
    if (w->c.relative && x <= 0)
        return direct_at(w, w->p, x);
    for (size_t m = 0; m < w->c.n_points; m++) {
        size_t lo = 0, hi = w->n_states;
        while (lo < hi) {
            size_t mid = lo + (hi - lo) / 2;
            if (points_reaches(w, m, x, mid))
                lo = mid + 1;
            else
                hi = mid;
        }
        w->count[m] = lo;
    }
    return points_at(w, x);
}

static double points_score(double x, void *params)
{
    return points_one(params, x);
}

/* Returns the minimizer of a points curve's expected loss near the best grid estimate j
 * by Brent's method (GSL) between its neighbours, and writes its expected loss to *el;
 * the grid estimate itself when the neighbours do not bracket a lower value (an end,
 * or a plateau). The expected loss is continuous and piecewise linear in x, so the
 * search converges on the break where it is least. */
static double points_search(lop_curve_work *w, size_t j, double *el)
{
    size_t n = w->n_estimates;
    double x = w->x[j], best = points_one(w, x);
    *el = best;
    if (j == 0 || j + 1 >= n)
        return x;
    double lo = w->x[j - 1], hi = w->x[j + 1];
    double f_lo = points_one(w, lo), f_hi = points_one(w, hi);
    gsl_function f = {points_score, w};
    if (!(best < f_lo && best < f_hi) ||
        gsl_min_fminimizer_set_with_values(w->minimizer, &f, x, best, lo, f_lo, hi, f_hi) !=
            GSL_SUCCESS)
        return x;
    for (int it = 0; it < ROOT_ITERATIONS; it++) {
        if (gsl_min_fminimizer_iterate(w->minimizer) != GSL_SUCCESS)
            break;
        double a = gsl_min_fminimizer_x_lower(w->minimizer);
        double b = gsl_min_fminimizer_x_upper(w->minimizer);
        if (gsl_min_test_interval(a, b, MIN_TOLERANCE * (w->x[n - 1] - w->x[0]), 0) ==
            GSL_SUCCESS)
            break;
    }
    double m = gsl_min_fminimizer_x_minimum(w->minimizer);
    double v = points_one(w, m);
    if (v < best) {
        *el = v;
        return m;
    }
    return x;
}

/* The best real estimate: closed forms and roots for convex curves, the breaks of a
 * tolerance window, Brent's method for points. */
static double continuous_bayes(lop_curve_work *w, const double *p, double *el)
{
    const lop_curve *c = &w->c;
    if (c->kind == LOP_CURVE_TOLERANCE) {
        prepare(w, p);
        return curve_tolerance_bayes(w, el);
    }
    if (c->kind == LOP_CURVE_POINTS) {
        lop_curve_expected(w, p, w->el);
        size_t j = grid_best(w->el, w->n_estimates, curve_loss_scale(c) * w->mass);
        return points_search(w, j, el);
    }
    double x = convex_minimizer(w, p);
    *el = convex_at(w, p, x);
    return x;
}

double lop_curve_bayes(lop_curve_work *w, const double *p, double *el_min)
{
    const lop_curve *c = &w->c;
    double x, el;
    if (w->continuous) {
        x = continuous_bayes(w, p, &el);
    } else if (c->kind == LOP_CURVE_TOLERANCE || c->kind == LOP_CURVE_POINTS) {
        lop_curve_expected(w, p, w->el);
        size_t j = grid_best(w->el, w->n_estimates, curve_loss_scale(c) * w->mass);
        x = w->x[j];
        el = w->el[j];
    } else {
        /* The actions are the points of the estimate grid (format.md). The expected loss
         * is convex in the estimate, so the best grid point is one of the two around the
         * continuous minimizer. */
        double m = convex_minimizer(w, p);
        size_t k = lop_count_at_most(w->x, w->n_estimates, m);
        size_t lo = k ? k - 1 : 0, hi = k < w->n_estimates ? k : w->n_estimates - 1;
        double el_lo = convex_at(w, p, w->x[lo]), el_hi = convex_at(w, p, w->x[hi]);
        bool low = el_lo <= el_hi;
        x = w->x[low ? lo : hi];
        el = low ? el_lo : el_hi;
    }
    if (el_min)
        *el_min = el;
    return x;
}

double lop_curve_least_loss(const lop_curve *c)
{
    switch (c->kind) {
    case LOP_CURVE_TOLERANCE:
        return fmin(c->inside, c->outside);
    case LOP_CURVE_POINTS: {
        double least = c->value[0];
        for (size_t m = 1; m < c->n_points; m++)
            least = fmin(least, c->value[m]);
        return least;
    }
    default:
        return 0;                   /* every other curve is >= 0, and 0 at e = 0 */
    }
}

/* ---- the workspace ---------------------------------------------------------------- */

lop_curve_method lop_curve_work_method(const lop_curve_work *w)
{
    return w->method;
}

void lop_curve_work_free(lop_curve_work *w)
{
    if (!w)
        return;
    free(w->knots);
    free(w->slope);
    free(w->s);
    free(w->x);
    free(w->inv_s);
    for (size_t m = 0; m < 3; m++)
        free(w->pre[m]);
    free(w->count);
    free(w->el);
    lop_curve_fft_free(w->fft);
    gsl_root_fsolver_free(w->solver);
    gsl_min_fminimizer_free(w->minimizer);
    free(w->node);
    free(w->poly);
    free(w->cand);
    free(w->cand_el);
    free(w);
}

/* Returns true when v[0..n-1] is finite and strictly increasing (n >= 1). */
static bool increasing(const double *v, size_t n)
{
    if (!v || n == 0)
        return false;
    for (size_t i = 0; i < n; i++)
        if (!isfinite(v[i]) || (i > 0 && !(v[i] > v[i - 1])))
            return false;
    return true;
}

/* Returns a copy of v[0..n-1], or NULL. */
static double *copy_of(const double *v, size_t n)
{
    double *c = malloc(n * sizeof *c);
    if (c)
        memcpy(c, v, n * sizeof *c);
    return c;
}

/* Returns the number of prefix arrays the family needs. */
static size_t prefix_arrays(const lop_curve *c)
{
    switch (c->kind) {
    case LOP_CURVE_ABSOLUTE:
    case LOP_CURVE_LINLIN:
        return 2;
    case LOP_CURVE_QUADQUAD:
    case LOP_CURVE_POINTS:
        return 3;
    case LOP_CURVE_TOLERANCE:
        return 1;
    case LOP_CURVE_LINEX:
        return c->relative ? 1 : 0;  /* relative: log weights for the root search */
    case LOP_CURVE_SQUARED:
        return 0;
    }
    return 0;
}

/* Returns false when memory runs out; sets up the FFT path of a points curve when both
 * grids lie on one lattice and its cost is below the pieces'. */
static bool choose_points_path(lop_curve_work *w)
{
    double h;
    long k0;
    size_t n_s = w->n_states, n_e = w->n_estimates, n_p = w->c.n_points;
    if (w->c.relative || !lop_curve_lattice(w->s, n_s, w->x, n_e, &h, &k0))
        return true;
    double n = (double)lop_curve_fft_size(n_s + n_e - 1);
    double pieces = (double)(n_p + 1) * (double)n_e + (double)n_p * (double)n_s;
    if (FFT_COST * n * log2(n) >= pieces)
        return true;
    size_t samples = n_s + n_e - 1;
    double *loss = malloc(samples * sizeof *loss);
    if (!loss)
        return false;
    for (size_t t = 0; t < samples; t++)
        loss[t] = error_loss(&w->c, ((double)k0 + (double)t) * h);
    w->fft = lop_curve_fft_new(loss, n_s, n_e);
    free(loss);
    if (!w->fft)
        return false;
    w->method = LOP_CURVE_BY_FFT;
    return true;
}

/* Returns false when memory runs out; copies the knots and their slopes. */
static bool copy_points(lop_curve_work *w, const lop_curve *c)
{
    size_t n = c->n_points;
    w->knots = malloc(2 * n * sizeof *w->knots);
    w->slope = malloc(n * sizeof *w->slope);
    w->count = malloc(n * sizeof *w->count);
    if (!w->knots || !w->slope || !w->count)
        return false;
    memcpy(w->knots, c->error, n * sizeof *w->knots);
    memcpy(w->knots + n, c->value, n * sizeof *w->knots);
    w->c.error = w->knots;
    w->c.value = w->knots + n;
    for (size_t m = 0; m + 1 < n; m++)
        w->slope[m] = (c->value[m + 1] - c->value[m]) / (c->error[m + 1] - c->error[m]);
    return true;
}

static lop_curve_method default_method(const lop_curve *c)
{
    switch (c->kind) {
    case LOP_CURVE_SQUARED:
        return LOP_CURVE_BY_MOMENTS;
    case LOP_CURVE_LINEX:
        return c->relative ? LOP_CURVE_BY_DIRECT : LOP_CURVE_BY_MOMENTS;
    case LOP_CURVE_TOLERANCE:
        return LOP_CURVE_BY_WINDOW;
    case LOP_CURVE_POINTS:
        return LOP_CURVE_BY_PIECES;
    default:
        return LOP_CURVE_BY_PREFIX_SUMS;
    }
}

lop_curve_work *lop_curve_work_new(const lop_curve *c, const double *states, size_t n_states,
                                   const double *estimates, size_t n_estimates,
                                   unsigned options)
{
    if (!c || lop_curve_invalid(c) || !increasing(states, n_states) ||
        !increasing(estimates, n_estimates))
        return NULL;
    if (c->relative && !(states[0] > 0))
        return NULL;
    lop_curve_work *w = calloc(1, sizeof *w);
    if (!w)
        return NULL;
    w->c = *c;
    w->c.error = w->c.value = NULL;
    w->n_states = n_states;
    w->n_estimates = n_estimates;
    w->method = default_method(c);
    w->s = copy_of(states, n_states);
    w->x = copy_of(estimates, n_estimates);
    w->el = malloc(n_estimates * sizeof *w->el);
    if (!w->s || !w->x || !w->el)
        goto fail;
    w->cells = (options & LOP_CURVE_CELLS) && n_states >= 2;
    w->continuous = (options & LOP_CURVE_CONTINUOUS) != 0;
    w->range_lo = w->continuous ? states[0] : estimates[0];
    w->range_hi = w->continuous ? states[n_states - 1] : estimates[n_estimates - 1];
    if (curve_by_cells(w) && (!(w->node = malloc(n_states * sizeof *w->node)) ||
                              !(w->poly = malloc(3 * (n_states - 1) * sizeof *w->poly))))
        goto fail;
    /* continuous tolerance: at most 2·n_states + 1 breaks and two ends of the reachable
     * estimates, then the breaks and up to two stationary points between each pair as
     * candidates */
    size_t n_breaks = 2 * n_states + 3;
    if (w->continuous && c->kind == LOP_CURVE_TOLERANCE &&
        (!(w->cand = malloc(4 * n_breaks * sizeof *w->cand)) ||
         !(w->cand_el = malloc(3 * n_breaks * sizeof *w->cand_el))))
        goto fail;
    if (w->continuous && c->kind == LOP_CURVE_POINTS &&
        !(w->minimizer = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent)))
        goto fail;
    if (c->relative) {
        w->inv_s = malloc(n_states * sizeof *w->inv_s);
        if (!w->inv_s)
            goto fail;
        for (size_t i = 0; i < n_states; i++)
            w->inv_s[i] = 1 / states[i];
    }
    for (size_t m = 0; m < prefix_arrays(c); m++)
        if (!(w->pre[m] = malloc((n_states + 1) * sizeof *w->pre[m])))
            goto fail;
    if (c->kind == LOP_CURVE_POINTS && (!copy_points(w, c) || !choose_points_path(w)))
        goto fail;
    if (c->kind == LOP_CURVE_LINEX && c->relative &&
        !(w->solver = gsl_root_fsolver_alloc(gsl_root_fsolver_brent)))
        goto fail;
    return w;
fail:
    lop_curve_work_free(w);
    return NULL;
}
