/* The continuous density of a grid posterior (density.h) under absolute, linlin and
 * tolerance curves and points curves of absolute error: a quadratic in each interval between neighbouring states with the
 * interval's mass and the density's values at the states, so the cumulative is a cubic
 * in each interval. Absolute and linlin losses
 * integrate exactly against it (prefix sums to the interval holding x, the rest of that
 * interval in closed form), their Bayes estimates invert its cumulative exactly, tolerance
 * windows are differences of its cumulative, and the best tolerance estimate is the
 * exact maximum of the window's mass, a cubic in the estimate between breaks.
 *
 * Relative curves: (x - u)/u·f(u) = (x - u)·g(u) with g = f/u, so relative absolute and
 * linlin losses are the absolute ones under the weight g, read as the density of the
 * masses p_i/s_i (the implied f, u times that density, is an equally accurate picture of
 * the posterior). Relative tolerance bands are windows over f itself.
 *
 * Notation as in curve.c: states s[0..n-1], piece k between s_k and s_{k+1} (width h_k)
 * with coefficients poly[3k..3k+2] in t = (u - s_k)/h_k; pre[0][k] and pre[1][k] the
 * weight and the moment about m1 below s_k. */
#include <math.h>
#include <stdint.h>

#include "curve_private.h"
#include "lopside/model/density.h"
#include "lopside/util/interp.h"

/* Masses below this fraction of the largest are left out of the density: together at
 * most n·1e-30 of the posterior, so even a loss 1e15 times the problem's scale away
 * changes an expected loss by less than 1e-15 of that scale for any grid that fits in
 * memory. */
#define CELLS_NEGLIGIBLE 1e-30

/* No piece: u lies outside [s_0, s_{n-1}], where the density is 0. */
#define OUTSIDE SIZE_MAX

bool curve_by_cells(const lop_curve_work *w)
{
    if (!w->cells)
        return false;
    lop_curve_kind k = w->c.kind;
    return k == LOP_CURVE_ABSOLUTE || k == LOP_CURVE_LINLIN || k == LOP_CURVE_TOLERANCE ||
           (k == LOP_CURVE_POINTS && !w->c.relative);
}

/* Returns the factor of the weight the curve integrates: 1/s for relative absolute and
 * linlin curves, else none (NULL). */
static const double *weight_factor(const lop_curve_work *w)
{
    return w->c.relative && w->c.kind != LOP_CURVE_TOLERANCE ? w->inv_s : NULL;
}

void cells_prepare(lop_curve_work *w, bool moments)
{
    size_t n = w->n_states;
    lop_density_nodes(w->s, w->p, weight_factor(w), n, w->node);
    /* Pieces that read no mass are 0: only the stretch around the posterior's mass is
     * built (a narrow posterior on a wide grid has most of its masses 0 or far below
     * anything a loss can notice). */
    double largest = 0;
    for (size_t i = 0; i < n; i++)
        largest = w->p[i] > largest ? w->p[i] : largest;
    double negligible = CELLS_NEGLIGIBLE * largest;
    size_t first = lop_density_first_piece(w->p, n, negligible);
    size_t last = lop_density_last_piece(w->p, n, negligible);
    double *cum = w->pre[0], *mom = moments ? w->pre[1] : NULL;
    cum[0] = 0;
    if (mom)
        mom[0] = 0;
    lop_density_sweep sweep;
    lop_density_sweep_start(&sweep, w->s, NULL, NULL, w->node, n, first);
    for (size_t k = 0; k + 1 < n; k++) {
        double *a = w->poly + 3 * k, h = w->s[k + 1] - w->s[k];
        if (k < first || k > last)
            a[0] = a[1] = a[2] = 0;
        else
            lop_density_sweep_piece(&sweep, k, a);
        double in = lop_density_mass(a, 1);
        cum[k + 1] = cum[k] + h * in;
        if (mom)
            mom[k + 1] = mom[k] + h * ((w->s[k] - w->center) * in + h * lop_density_moment(a, 1));
    }
}

/* Returns the piece holding u (s_k <= u < s_{k+1}; the last piece also holds s_{n-1}), or
 * OUTSIDE. *hint is the piece found last: when u lies at or above it, the search walks
 * forward from it, so a sweep with increasing u costs O(n) in all. */
static size_t locate(const lop_curve_work *w, double u, size_t *hint)
{
    size_t n = w->n_states;
    if (!(u >= w->s[0]) || u > w->s[n - 1])
        return OUTSIDE;
    size_t k = *hint;
    if (k != OUTSIDE && k + 1 < n && w->s[k] <= u) {
        while (k + 2 < n && w->s[k + 1] <= u)
            k++;
    } else {
        k = lop_count_at_most(w->s, n, u);
        k = k == 0 ? 0 : k - 1;
        if (k + 1 >= n)
            k = n - 2;
    }
    *hint = k;
    return k;
}

/* Returns the weight below u when u lies in piece k (or OUTSIDE). */
static double cumulative_in(const lop_curve_work *w, size_t k, double u)
{
    if (k == OUTSIDE)
        return u < w->s[0] ? 0 : w->pre[0][w->n_states - 1];
    double h = w->s[k + 1] - w->s[k];
    return w->pre[0][k] + h * lop_density_mass(w->poly + 3 * k, (u - w->s[k]) / h);
}

/* Returns the density at u when u lies in piece k (or OUTSIDE). */
static double density_in(const lop_curve_work *w, size_t k, double u)
{
    if (k == OUTSIDE)
        return 0;
    return lop_density_at(w->poly + 3 * k, (u - w->s[k]) / (w->s[k + 1] - w->s[k]));
}

/* Returns the weight below u. */
static double cumulative(const lop_curve_work *w, double u)
{
    size_t hint = OUTSIDE;
    return cumulative_in(w, locate(w, u, &hint), u);
}

/* Writes the weight W(x) and moment V(x) about m1 of the density below x, looking for
 * x's piece from *hint (see locate). */
static void below_from(const lop_curve_work *w, double x, size_t *hint, double *weight,
                       double *moment)
{
    size_t n = w->n_states;
    size_t k = locate(w, x, hint);
    if (k == OUTSIDE) {
        bool above = x > w->s[n - 1];
        *weight = above ? w->pre[0][n - 1] : 0;
        *moment = above ? w->pre[1][n - 1] : 0;
        return;
    }
    const double *a = w->poly + 3 * k;
    double h = w->s[k + 1] - w->s[k], t = (x - w->s[k]) / h, in = lop_density_mass(a, t);
    *weight = w->pre[0][k] + h * in;
    *moment = w->pre[1][k] + h * ((w->s[k] - w->center) * in + h * lop_density_moment(a, t));
}

/* Writes the weight W(x) and moment V(x) about m1 of the density below x. */
static void below(const lop_curve_work *w, double x, double *weight, double *moment)
{
    size_t hint = OUTSIDE;
    below_from(w, x, &hint, weight, moment);
}

/* over·E[c·(x - u); u < x] + under·E[c·(u - x); u > x] with y = x - m1:
 * over·(y·W - V) + under·((V_total - V) - y·(W_total - W)) (Raiffa & Schlaifer 1961). */
double cells_linlin_at(const lop_curve_work *w, double x, double under, double over)
{
    size_t n = w->n_states;
    double weight, moment, y = x - w->center;
    below(w, x, &weight, &moment);
    return over * (y * weight - moment) +
           under * ((w->pre[1][n - 1] - moment) - y * (w->pre[0][n - 1] - weight));
}

/* The derivative of cells_linlin_at is over·W(x) - under·(W_total - W(x)), zero where W
 * reaches tau·W_total, tau = under/(under + over) (Berger 1985, sec. 4.4.2, from memory):
 * the quantile tau of the weight, inverted exactly in its piece. W is continuous and
 * non-decreasing, so the minimizers are an interval: a point, or a run of pieces
 * without weight. */
double cells_linlin_bayes(const lop_curve_work *w, double under, double over)
{
    const double *a = w->pre[0];
    size_t n = w->n_states;
    double total = a[n - 1], goal = under / (under + over) * total;
    double tie = CURVE_TIE_RELATIVE * total;
    size_t k = 0;                               /* first piece whose upper end reaches goal */
    while (k + 2 < n && a[k + 1] < goal)
        k++;
    double h = w->s[k + 1] - w->s[k];
    double lo = w->s[k] + h * lop_density_invert(w->poly + 3 * k, (goal - a[k]) / h);
    if (a[k + 1] - goal > tie)
        return lo;
    /* goal is met at the upper end of piece k: pieces without weight after it tie. */
    size_t j = k + 1;
    while (j + 1 < n && a[j + 1] - goal <= tie)
        j++;
    return 0.5 * (lo + w->s[j]);
}

/* One end of a tolerance band as a function of the estimate x near some x: u = slope·x +
 * offset, or infinite (slope 0, offset ±inf). */
typedef struct {
    double slope, offset;
} band_end;

static double end_at(band_end e, double x)
{
    return e.slope == 0 ? e.offset : e.slope * x + e.offset;
}

/* Writes the ends of the interval of states u for which the estimate x lies in the band
 * -below <= e <= above: [x - above, x + below], or, relative, (1 - below)·u <= x <= (1 +
 * above)·u solved for u on each side by the sign of its factor. Each end is affine in x
 * between the breaks (x = 0 for relative bands). Empty when lo > hi. */
static void band_ends(const lop_curve *c, double x, band_end *lo, band_end *hi)
{
    if (!c->relative) {
        *lo = (band_end){1, -c->above};
        *hi = (band_end){1, c->below};
        return;
    }
    double low = 1 - c->below, high = 1 + c->above;
    *lo = (band_end){0, -INFINITY};
    *hi = (band_end){0, INFINITY};
    if (low > 0)
        *hi = (band_end){1 / low, 0};
    else if (low < 0)
        *lo = (band_end){1 / low, 0};
    else if (x < 0)
        *lo = (band_end){0, INFINITY};
    if (high > 0) {
        if (end_at(*lo, x) < x / high)
            *lo = (band_end){1 / high, 0};
    } else if (high < 0) {
        if (end_at(*hi, x) > x / high)
            *hi = (band_end){1 / high, 0};
    } else if (x > 0) {
        *lo = (band_end){0, INFINITY};
    }
}

double cells_window(const lop_curve_work *w, double x)
{
    band_end lo, hi;
    band_ends(&w->c, x, &lo, &hi);
    double a = end_at(lo, x), b = end_at(hi, x);
    if (!(b > a))
        return 0;
    return cumulative(w, b) - cumulative(w, a);
}

/* A points curve in the state u at estimate x: the error x - u passes knot m at u_m = x -
 * e_m, decreasing in m. Between u_{m+1} and u_m the loss is v_m + slope_m·(x - u - e_m),
 * beyond the last knot's u it is the last value, beyond the first's the first value. */

double cells_points_at(const lop_curve_work *w, double x, size_t *hints)
{
    const double *e = w->c.error, *v = w->c.value;
    size_t last = w->c.n_points - 1, n = w->n_states;
    double y = x - w->center, total = w->pre[0][n - 1];
    double w_hi, m_hi, w_lo, m_lo;              /* W, V at u_m and at u_{m+1} */
    below_from(w, x - e[last], &hints[last], &w_lo, &m_lo);
    double sum = v[last] * w_lo;
    for (size_t m = last; m-- > 0;) {
        below_from(w, x - e[m], &hints[m], &w_hi, &m_hi);
        double mass = w_hi - w_lo;
        sum += (v[m] + w->slope[m] * (y - e[m])) * mass - w->slope[m] * (m_hi - m_lo);
        w_lo = w_hi;
        m_lo = m_hi;
    }
    return sum + v[0] * (total - w_lo);
}

/* Returns the integral over piece k (from lo, width h) against its density a of the
 * loss A + B·u for u between lo + h·ta and lo + h·tb (clipped to the piece). */
static double piece_linear(double lo, double h, const double a[3], double ta, double tb,
                           double A, double B)
{
    ta = fmax(ta, 0);
    tb = fmin(tb, 1);
    if (!(tb > ta))
        return 0;
    double dm = lop_density_mass(a, tb) - lop_density_mass(a, ta);
    double dmom = lop_density_moment(a, tb) - lop_density_moment(a, ta);
    return h * ((A + B * lo) * dm + B * h * dmom);
}

/* Returns the integral of a points curve's loss at x over piece k against a, segment by
 * segment of the curve (see cells_points_at). */
static double piece_points(const lop_curve_work *w, double x, size_t k, const double a[3])
{
    const double *e = w->c.error, *v = w->c.value;
    size_t last = w->c.n_points - 1;
    double lo = w->s[k], h = w->s[k + 1] - lo;
    double t_last = (x - e[last] - lo) / h, t_first = (x - e[0] - lo) / h;
    double sum = piece_linear(lo, h, a, -INFINITY, t_last, v[last], 0) +
                 piece_linear(lo, h, a, t_first, INFINITY, v[0], 0);
    for (size_t m = 0; m < last; m++) {
        double slope = (v[m + 1] - v[m]) / (e[m + 1] - e[m]);
        sum += piece_linear(lo, h, a, (x - e[m + 1] - lo) / h, (x - e[m] - lo) / h,
                            v[m] + slope * (x - e[m]), -slope);
    }
    return sum;
}

/* Returns the integral of loss(x, u) over piece k against the piece a: over·(x - u)
 * below x and under·(u - x) above it for linlin and absolute, inside or outside for
 * tolerance. */
static double piece_loss(const lop_curve_work *w, double x, size_t k, const double a[3])
{
    const lop_curve *c = &w->c;
    double lo = w->s[k], h = w->s[k + 1] - lo, whole = lop_density_mass(a, 1);
    if (c->kind == LOP_CURVE_POINTS)
        return piece_points(w, x, k, a);
    if (c->kind == LOP_CURVE_TOLERANCE) {
        band_end e_lo, e_hi;
        band_ends(c, x, &e_lo, &e_hi);
        double ta = fmax((end_at(e_lo, x) - lo) / h, 0), tb = fmin((end_at(e_hi, x) - lo) / h, 1);
        double in = tb > ta ? lop_density_mass(a, tb) - lop_density_mass(a, ta) : 0;
        return h * (c->inside * in + c->outside * (whole - in));
    }
    double under = c->kind == LOP_CURVE_ABSOLUTE ? c->scale : c->under;
    double over = c->kind == LOP_CURVE_ABSOLUTE ? c->scale : c->over;
    double t = fmin(fmax((x - lo) / h, 0), 1), y = x - lo;   /* the piece splits at x */
    double m0 = lop_density_mass(a, t), m1 = lop_density_moment(a, t);
    double below_part = y * m0 - h * m1;
    double above_part = h * (lop_density_moment(a, 1) - m1) - y * (whole - m0);
    return h * (over * below_part + under * above_part);
}

double cells_direct(const lop_curve_work *w, const double *p, double x)
{
    size_t n = w->n_states;
    const double *factor = weight_factor(w);
    double sum = 0, a[3];
    lop_density_sweep sweep;
    lop_density_sweep_start(&sweep, w->s, p, factor, NULL, n, 0);
    for (size_t k = 0; k + 1 < n; k++) {
        lop_density_sweep_piece(&sweep, k, a);
        if (lop_density_mass(a, 1) != 0)        /* no loss from where there is no mass */
            sum += piece_loss(w, x, k, a);
    }
    return sum;
}

/* Writes the breaks of the window's mass in increasing order to w->cand and returns how
 * many: the estimates at which a band edge meets one of the states v[0..n-1] (the nodes
 * of the density, or, over points, the states), v·factor + offset for each side of the
 * band, and 0 for a relative band whose side turns around there. */
static size_t breaks(lop_curve_work *w, const double *v, size_t n)
{
    const lop_curve *c = &w->c;
    double factor[2] = {1, 1}, offset[2] = {c->above, -c->below};
    if (c->relative) {
        factor[0] = 1 + c->above;
        factor[1] = 1 - c->below;
        offset[0] = offset[1] = 0;
    }
    /* Each side's breaks are monotone in v: read them backwards when the factor is < 0. */
    size_t i[2] = {0, 0}, m = 0;
    size_t len[2] = {factor[0] != 0 ? n : 0, factor[1] != 0 ? n : 0};
    bool zero = c->relative;
    for (;;) {
        double next[2];
        for (int side = 0; side < 2; side++) {
            size_t j = factor[side] < 0 ? n - 1 - i[side] : i[side];
            next[side] = i[side] < len[side] ? factor[side] * v[j] + offset[side] : INFINITY;
        }
        int side = next[0] <= next[1] ? 0 : 1;
        if (next[side] == INFINITY)
            break;
        if (zero && next[side] >= 0) {
            w->cand[m++] = 0;
            zero = false;
        }
        w->cand[m++] = next[side];
        i[side]++;
    }
    if (zero)
        w->cand[m++] = 0;
    return m;
}

/* Bisection for the edge of a tie level set stops after this many halvings (far below
 * rounding for any interval between two breaks). */
#define EDGE_STEPS 200

/* Returns the expected tolerance loss at x over the density or over points. */
static double tolerance_at(const lop_curve_work *w, double x)
{
    return curve_tolerance_el(w, w->cells ? cells_window(w, x) : curve_points_window(w, x));
}

/* Returns where the expected loss crosses `level` between out (above it) and in (at or
 * below it), by bisection: over cells the loss is continuous, so a crossing lies between. */
static double level_edge(const lop_curve_work *w, double out, double in, double level)
{
    for (int it = 0; it < EDGE_STEPS; it++) {
        double mid = 0.5 * (out + in);
        if (mid == out || mid == in)
            break;
        if (tolerance_at(w, mid) > level)
            out = mid;
        else
            in = mid;
    }
    return in;
}

/* Returns the best of the m candidate estimates x[] (increasing) with expected losses v[]
 * and writes its loss to *el. Estimates whose losses lie within the tie of the least count
 * as equally good, and the first run of such candidates is taken: over points (a step
 * function) the middle of that run when the middle ties too; over cells the middle of the
 * interval where the loss stays within the tie, its edges found by bisection, when that
 * middle ties too. Near a strict minimum that is the minimum itself to within rounding;
 * where the window holds all the mass over an interval of estimates (up to a tail far
 * below the tie) it is the interval's middle, which moves smoothly with the grid, as
 * the tail does, where the last candidate of a run would move by whole steps. */
static double best_candidate(const lop_curve_work *w, const double *x, const double *v,
                             size_t m, double *el)
{
    double scale = fmax(fabs(w->c.inside), fabs(w->c.outside)) * w->mass;
    double tie = CURVE_TIE_RELATIVE * (scale > 0 ? scale : 1);
    double least = INFINITY;
    for (size_t k = 0; k < m; k++)
        least = fmin(least, v[k]);
    size_t first = 0;
    while (v[first] - least > tie)
        first++;
    size_t end = first + 1, arg = first;
    while (end < m && v[end] - least <= tie) {
        if (v[end] < v[arg])
            arg = end;
        end++;
    }
    double lo = x[first], hi = x[end - 1];
    if (w->cells) {
        if (first > 0)
            lo = level_edge(w, x[first - 1], x[first], least + tie);
        if (end < m)
            hi = level_edge(w, x[end], x[end - 1], least + tie);
    }
    if (hi > lo) {
        double mid = 0.5 * (lo + hi), at_mid = tolerance_at(w, mid);
        if (at_mid - least <= tie) {
            *el = at_mid;
            return mid;
        }
    }
    *el = v[arg];
    return x[arg];
}

/* Appends to (x, v) the stationary points of the window's mass strictly inside the piece
 * (a, b) between consecutive breaks, then writes the loss at a to *v_a. The band's ends
 * are affine in x and each lies in one piece of the density there, so the mass's slope is
 * a quadratic in x: sampled at a, the middle and b (one-sided at the ends) and solved by
 * the stable quadratic formula q = -(B + sign(B)·sqrt(B² - 4AC))/2, roots q/A and C/q
 * (Press et al., Numerical Recipes, sec. 5.6, from memory). */
static size_t piece_stationary(lop_curve_work *w, double a, double b, size_t *hint_lo,
                               size_t *hint_hi, double *x, double *v, double *v_a)
{
    double mid = 0.5 * (a + b);
    band_end lo, hi;
    band_ends(&w->c, mid, &lo, &hi);
    bool open = end_at(hi, mid) > end_at(lo, mid);
    size_t k_lo = locate(w, end_at(lo, mid), hint_lo), k_hi = locate(w, end_at(hi, mid), hint_hi);
    double in_a = open ? cumulative_in(w, k_hi, end_at(hi, a)) -
                             cumulative_in(w, k_lo, end_at(lo, a))
                       : 0;
    *v_a = curve_tolerance_el(w, in_a);
    if (!open || w->c.inside == w->c.outside)
        return 0;
    double g[3], at[3] = {a, mid, b};
    for (int j = 0; j < 3; j++)
        g[j] = hi.slope * density_in(w, k_hi, end_at(hi, at[j])) -
               lo.slope * density_in(w, k_lo, end_at(lo, at[j]));
    /* g(tau) = A·tau² + B·tau + C on tau in [0, 1] through the three samples */
    double A = 2 * g[0] - 4 * g[1] + 2 * g[2], B = -3 * g[0] + 4 * g[1] - g[2], C = g[0];
    double roots[2];
    size_t r = 0;
    if (A == 0) {
        if (B != 0)
            roots[r++] = -C / B;
    } else {
        double disc = B * B - 4 * A * C;
        if (disc >= 0) {
            double q = -0.5 * (B + copysign(sqrt(disc), B));
            roots[r++] = q / A;
            if (q != 0)
                roots[r++] = C / q;
        }
    }
    if (r == 2 && roots[1] < roots[0]) {
        double t = roots[0];
        roots[0] = roots[1];
        roots[1] = t;
    }
    size_t found = 0;
    for (size_t j = 0; j < r; j++) {
        if (!(roots[j] > 0 && roots[j] < 1))
            continue;
        double xr = a + roots[j] * (b - a);
        x[found] = xr;
        v[found] = curve_tolerance_el(w, cumulative_in(w, k_hi, end_at(hi, xr)) -
                                             cumulative_in(w, k_lo, end_at(lo, xr)));
        found++;
    }
    return found;
}

/* Returns the state u at which the weight below reaches goal (within [s_0, s_{n-1}]). */
static double weight_quantile(const lop_curve_work *w, double goal)
{
    double total = w->pre[0][w->n_states - 1];
    goal = fmin(fmax(goal, 0), total);
    return cells_linlin_bayes(w, goal, total - goal);
}

/* Narrows the search for the best window when more mass in the window is better (an
 * absolute band, inside < outside). The window centred on the median holds mass M; a
 * window at x holds at most W(x + below) and at most total - W(x - above), so no x
 * outside [Q(T) - below, Q(total - T) + above] can hold T = M - 4·tie/(outside - inside)
 * or more, and every such x loses by more than four ties: it neither wins nor joins the
 * winner's tie. Writes those ends to *xlo and *xhi and narrows [*first, *last] to the
 * states whose breaks can fall between them; leaves everything as it is when T <= 0. */
static void reachable_estimates(const lop_curve_work *w, size_t *first, size_t *last,
                                double *xlo, double *xhi)
{
    const lop_curve *c = &w->c;
    double total = w->pre[0][w->n_states - 1];
    double median = weight_quantile(w, 0.5 * total);
    double held = cells_window(w, median + 0.5 * (c->above - c->below));
    double scale = fmax(fabs(c->inside), fabs(c->outside)) * w->mass;
    double tie = CURVE_TIE_RELATIVE * (scale > 0 ? scale : 1);
    double enough = held - 4 * tie / (c->outside - c->inside);
    if (!(enough > 0) || !(held <= total))
        return;
    double lo = weight_quantile(w, enough) - c->below;
    double hi = weight_quantile(w, total - enough) + c->above;
    if (!(lo < hi))
        return;
    /* a break v + above or v - below lies in [lo, hi] only for v in [lo - above, hi + below] */
    size_t a = lop_count_at_most(w->s, w->n_states, lo - c->above);
    size_t b = lop_count_at_most(w->s, w->n_states, hi + c->below);
    a = a > 0 ? a - 1 : 0;
    b = b < w->n_states ? b : w->n_states - 1;
    a = a > *first ? a : *first;
    b = b < *last ? b : *last;
    if (a > b)
        return;
    *first = a;
    *last = b;
    *xlo = lo;
    *xhi = hi;
}

/* Over cells: the window's mass is a cubic in x between breaks, so its extremes are at
 * the breaks or at the roots of its quadratic slope. When a larger window is better
 * (inside < outside) only the breaks of the states from the one before the first with
 * mass to the one after the last count: the window is empty of mass elsewhere. */
static double cells_tolerance_bayes(lop_curve_work *w, double *el)
{
    size_t n = w->n_states, first = 0, last = n - 1;
    if (w->c.inside < w->c.outside) {
        while (first < n && w->p[first] == 0)
            first++;
        while (last > first && w->p[last] == 0)
            last--;
        if (first == n) {
            first = 0;
            last = n - 1;
        }
        first = first > 0 ? first - 1 : 0;
        last = last + 1 < n ? last + 1 : n - 1;
    }
    double xlo = -INFINITY, xhi = INFINITY;
    if (w->c.inside < w->c.outside && !w->c.relative)
        reachable_estimates(w, &first, &last, &xlo, &xhi);
    size_t m = breaks(w, w->s + first, last - first + 1);
    if (xlo > -INFINITY) {
        /* only the breaks strictly inside (xlo, xhi), with xlo and xhi as the ends */
        size_t kept = 0;
        w->cand[kept++] = xlo;
        for (size_t k = 0; k < m; k++)
            if (w->cand[k] > xlo && w->cand[k] < xhi)
                w->cand[kept++] = w->cand[k];
        w->cand[kept++] = xhi;
        m = kept;
    }
    double *x = w->cand + m, *v = w->cand_el;
    size_t count = 0, hint_lo = OUTSIDE, hint_hi = OUTSIDE;
    for (size_t k = 0; k < m; k++) {
        double a = w->cand[k];
        double b = k + 1 < m ? w->cand[k + 1] : a;
        double v_a;
        size_t found = 0;
        if (b > a) {
            found = piece_stationary(w, a, b, &hint_lo, &hint_hi, x + count + 1,
                                     v + count + 1, &v_a);
        } else {
            v_a = curve_tolerance_el(w, cells_window(w, a));
        }
        x[count] = a;
        v[count] = v_a;
        count += 1 + found;
    }
    return best_candidate(w, x, v, count, el);
}

/* Over points: the window's mass is a step function, so its best value is at a break. */
static double points_tolerance_bayes(lop_curve_work *w, double *el)
{
    size_t m = breaks(w, w->s, w->n_states);
    double *x = w->cand, *v = w->cand_el;
    for (size_t k = 0; k < m; k++)
        v[k] = curve_tolerance_el(w, curve_points_window(w, x[k]));
    return best_candidate(w, x, v, m, el);
}

double curve_tolerance_bayes(lop_curve_work *w, double *el)
{
    return w->cells ? cells_tolerance_bayes(w, el) : points_tolerance_bayes(w, el);
}
