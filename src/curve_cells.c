/* The cell model of a grid posterior: each state's mass spread evenly over its cell, the
 * cells meeting at the midpoints between states and ending at the first and last state,
 * so the cumulative posterior is piecewise linear. Absolute and linlin losses integrate
 * exactly over it (a quantile inside a cell splits the cell), tolerance bands count the
 * part of a cell they cover, and the best tolerance estimate is found among the breaks of
 * the window's mass.
 *
 * Notation as in curve.c: edges e[0..n] (cell i is [e_i, e_{i+1}], width w_i), posterior
 * p, density q_i = p_i / w_i on cell i, weight c(u) = 1 or 1/u (relative), m1 the
 * posterior mean the moments are taken about. */
#include <math.h>

#include "curve_private.h"
#include "lopside/interp.h"

bool curve_by_cells(const lop_curve_work *w)
{
    if (!w->cells)
        return false;
    lop_curve_kind k = w->c.kind;
    return k == LOP_CURVE_ABSOLUTE || k == LOP_CURVE_LINLIN || k == LOP_CURVE_TOLERANCE;
}

/* Returns the cell holding t (e[k] <= t < e[k+1]), clamped to the cells. */
static size_t cell_of(const lop_curve_work *w, double t)
{
    size_t k = lop_count_at_most(w->edge, w->n_states + 1, t);
    if (k == 0)
        return 0;
    return k > w->n_states ? w->n_states - 1 : k - 1;
}

/* Writes the weight and first moment of cell i between its lower edge and t (e_i <= t <=
 * e_{i+1}): q·(t - e_i) and q·(t - e_i)·((t + e_i)/2 - m1), or, relative, the integrals
 * of q/u and q/u·(u - m1): q·log(t/e_i) and q·(t - e_i) - m1·q·log(t/e_i). */
static void cell_part(const lop_curve_work *w, size_t i, double t, double *weight,
                      double *moment)
{
    double lo = w->edge[i], q = w->p[i] / (w->edge[i + 1] - lo), len = t - lo;
    if (!w->c.relative) {
        *weight = q * len;
        *moment = q * len * (0.5 * (t + lo) - w->center);
    } else {
        *weight = q * log1p(len / lo);
        *moment = q * len - w->center * *weight;
    }
}

void cells_linlin_prepare(lop_curve_work *w)
{
    double *a = w->pre[0], *b = w->pre[1];
    a[0] = b[0] = 0;
    for (size_t i = 0; i < w->n_states; i++) {
        double weight, moment;
        cell_part(w, i, w->edge[i + 1], &weight, &moment);
        a[i + 1] = a[i] + weight;
        b[i + 1] = b[i] + moment;
    }
}

/* Writes the weight W(x) and moment V(x) of the cells' mass below x. */
static void below(const lop_curve_work *w, double x, double *weight, double *moment)
{
    size_t n = w->n_states;
    if (x <= w->edge[0]) {
        *weight = *moment = 0;
        return;
    }
    if (x >= w->edge[n]) {
        *weight = w->pre[0][n];
        *moment = w->pre[1][n];
        return;
    }
    size_t k = cell_of(w, x);
    cell_part(w, k, x, weight, moment);
    *weight += w->pre[0][k];
    *moment += w->pre[1][k];
}

/* over·E[c·(x - u); u < x] + under·E[c·(u - x); u > x] with y = x - m1:
 * over·(y·W - V) + under·((V_total - V) - y·(W_total - W)) (Raiffa & Schlaifer 1961). */
double cells_linlin_at(const lop_curve_work *w, double x, double under, double over)
{
    size_t n = w->n_states;
    double weight, moment, y = x - w->center;
    below(w, x, &weight, &moment);
    return over * (y * weight - moment) +
           under * ((w->pre[1][n] - moment) - y * (w->pre[0][n] - weight));
}

/* Returns the point of cell k where the weight below reaches goal (pre[0][k] <= goal <=
 * pre[0][k+1]): linear in the cell, or, relative, e_k·(e_{k+1}/e_k)^t. */
static double cell_invert(const lop_curve_work *w, size_t k, double goal)
{
    const double *a = w->pre[0];
    double lo = w->edge[k], hi = w->edge[k + 1], in = a[k + 1] - a[k];
    double t = in > 0 ? (goal - a[k]) / in : 0;
    t = t < 0 ? 0 : t > 1 ? 1 : t;
    if (!w->c.relative)
        return lo + t * (hi - lo);
    return lo * exp(t * log1p((hi - lo) / lo));
}

/* The derivative of cells_linlin_at is over·W(x) - under·(W_total - W(x)), zero where W
 * reaches tau·W_total, tau = under/(under + over) (Berger 1985, sec. 4.4.2, from memory).
 * W is continuous and non-decreasing, so the minimizers are an interval: a point, or a
 * run of cells without mass. */
double cells_linlin_bayes(const lop_curve_work *w, double under, double over)
{
    const double *a = w->pre[0];
    size_t n = w->n_states;
    double total = a[n], goal = under / (under + over) * total;
    double tie = CURVE_TIE_RELATIVE * total;
    size_t k = 0;                                /* first cell whose upper edge reaches goal */
    while (k + 1 < n && a[k + 1] < goal)
        k++;
    double lo = cell_invert(w, k, goal);
    if (a[k + 1] - goal > tie)
        return lo;
    /* goal is met at the upper edge of cell k: cells without mass after it tie. */
    size_t j = k + 1;
    while (j < n && a[j + 1] - goal <= tie)
        j++;
    return 0.5 * (lo + w->edge[j]);
}

/* Writes the interval [*lo, *hi] of states u for which the estimate x lies in the band
 * -below <= e <= above: [x - above, x + below], or, relative, (1 - below)·u <= x <= (1 +
 * above)·u solved for u on each side by the sign of its factor. Empty when *lo > *hi. */
static void band_states(const lop_curve *c, double x, double *lo, double *hi)
{
    if (!c->relative) {
        *lo = x - c->above;
        *hi = x + c->below;
        return;
    }
    double low = 1 - c->below, high = 1 + c->above;
    *lo = -INFINITY;
    *hi = INFINITY;
    if (low > 0)
        *hi = x / low;
    else if (low < 0)
        *lo = x / low;
    else if (x < 0)
        *lo = INFINITY;
    if (high > 0)
        *lo = fmax(*lo, x / high);
    else if (high < 0)
        *hi = fmin(*hi, x / high);
    else if (x > 0)
        *lo = INFINITY;
}

/* Returns the cumulative posterior of the cells at t: piecewise linear through the
 * edges (pre[0][i] is the mass of the cells below edge i). */
static double cells_cumulative(const lop_curve_work *w, double t)
{
    size_t n = w->n_states;
    if (t <= w->edge[0])
        return 0;
    if (t >= w->edge[n])
        return w->pre[0][n];
    size_t k = cell_of(w, t);
    double lo = w->edge[k];
    return w->pre[0][k] + w->p[k] * ((t - lo) / (w->edge[k + 1] - lo));
}

double cells_window(const lop_curve_work *w, double x)
{
    double lo, hi;
    band_states(&w->c, x, &lo, &hi);
    if (!(hi > lo))
        return 0;
    return cells_cumulative(w, hi) - cells_cumulative(w, lo);
}

/* Returns the integral of (x - u)/u over u in [a, b] (0 < a <= b): x·log(b/a) - (b - a). */
static double relative_error_integral(double x, double a, double b)
{
    return x * log1p((b - a) / a) - (b - a);
}

double cells_loss(const lop_curve_work *w, double x, size_t i)
{
    const lop_curve *c = &w->c;
    double lo = w->edge[i], hi = w->edge[i + 1], width = hi - lo;
    if (c->kind == LOP_CURVE_TOLERANCE) {
        double a, b;
        band_states(c, x, &a, &b);
        double in = fmax(0, fmin(b, hi) - fmax(a, lo)) / width;
        return c->inside * in + c->outside * (1 - in);
    }
    double under = c->kind == LOP_CURVE_ABSOLUTE ? c->scale : c->under;
    double over = c->kind == LOP_CURVE_ABSOLUTE ? c->scale : c->over;
    double mid = fmin(fmax(x, lo), hi);         /* the cell splits at x */
    if (!c->relative)                           /* the integral of |x - u| on each side */
        return (over * (mid - lo) * (x - 0.5 * (lo + mid)) +
                under * (hi - mid) * (0.5 * (mid + hi) - x)) / width;
    double under_part = mid < hi ? -relative_error_integral(x, mid, hi) : 0;
    double over_part = mid > lo ? relative_error_integral(x, lo, mid) : 0;
    return (over * over_part + under * under_part) / width;
}

/* Writes the breaks of the window's mass in increasing order to w->cand and returns how
 * many: the estimates at which a band edge meets a cell edge (or, over points, a state),
 * v·factor + offset for the edges v of each side of the band, and 0 for a relative band
 * whose side turns around there. */
static size_t breaks(lop_curve_work *w)
{
    const lop_curve *c = &w->c;
    const double *v = w->cells ? w->edge : w->s;
    size_t n = w->cells ? w->n_states + 1 : w->n_states;
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

/* Returns the mass of the band at x: over the cells, or the states in it. */
static double window(const lop_curve_work *w, double x)
{
    return w->cells ? cells_window(w, x) : curve_points_window(w, x);
}

double curve_tolerance_bayes(lop_curve_work *w, double *el)
{
    size_t m = breaks(w);
    double scale = fmax(fabs(w->c.inside), fabs(w->c.outside)) * w->mass;
    double tie = CURVE_TIE_RELATIVE * (scale > 0 ? scale : 1);
    double least = INFINITY;
    size_t first = 0;
    for (size_t k = 0; k < m; k++) {
        double v = curve_tolerance_el(w, window(w, w->cand[k]));
        if (v < least - tie) {
            least = v;
            first = k;
        }
    }
    /* The run of breaks tied with the best: the expected loss is linear between breaks
     * over cells (constant between them over points), so the run is one plateau when its
     * middle ties too. */
    size_t end = first + 1;
    while (end < m && curve_tolerance_el(w, window(w, w->cand[end])) - least <= tie)
        end++;
    double x = w->cand[first];
    if (end - 1 > first) {
        double mid = 0.5 * (w->cand[first] + w->cand[end - 1]);
        double at_mid = curve_tolerance_el(w, window(w, mid));
        if (at_mid - least <= tie) {
            x = mid;
            least = fmin(least, at_mid);
        }
    }
    *el = curve_tolerance_el(w, window(w, x));
    return x;
}
