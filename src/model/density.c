/* The continuous density of a grid posterior (see density.h).
 *
 * The masses alone are exact: each interval's mass is the right part of the cell at its
 * left end and the left part of the cell at its right end. A cell [s - l, s + r] splits
 * at its state s as R = m·r/(l + r) + (r·l/2)·f'(s) + O(h³) (Taylor expansion of the
 * two integrals, done by hand), with f' the central difference of the node values v_i =
 * m_i / width_i; each part is kept within [0, m], so the intervals' masses are >= 0 and
 * sum to sum m exactly (the end cells lie wholly inside their intervals).
 *
 * The node values are the cells' averages of f, which exceed f(s_i) by (r - l)/2·f' +
 * (r² - r·l + l²)/6·f'' (h²/24·f'' on a uniform grid); the density takes the corrected
 * values, with f'' the second divided difference. The end cells are halves, their
 * averages centred a quarter step inside: their values are extrapolated along the line
 * to the next node. A line through the corrected values errs by -h²/2·t(1-t)·f'' at the
 * position t in its interval (the error of linear interpolation, e.g. Atkinson, An
 * Introduction to Numerical Analysis, sec. 3.2, from memory), which would make the best
 * position of a tolerance window wander by O(h²) with where its ends fall; the piece adds
 * 6·beta·t(1-t), beta fixed by the interval's mass, which is -h²/12·f'' + O(h³) when f
 * is smooth: the density then errs by O(h³) and the cumulative at the states by O(h³)
 * at most, every term smooth.
 *
 * Node values >= 0 and at most three times the mean density of either interval beside
 * them keep each piece >= 0: in the Bernstein form v_k·(1-t)² + (6·mean - 2·(v_k +
 * v_{k+1}))·t(1-t) + v_{k+1}·t² the middle coefficient is >= -2·sqrt(v_k·v_{k+1}) when
 * v_k + v_{k+1} - sqrt(v_k·v_{k+1}) <= 3·mean, which max(v_k, v_{k+1}) <= 3·mean
 * implies. The caps act only where the grid does not resolve the posterior (a jump at a
 * uniform prior's edge, a far tail); they change shapes, never masses. */
#include <math.h>
#include <stdbool.h>

#include "lopside/model/density.h"

/* Newton's method on a piece's cumulative stops when the step is below this (t is in
 * [0, 1], so this is a relative position within an interval) or after this many steps. */
#define INVERT_TOLERANCE 1e-15
#define INVERT_STEPS 100

double lop_density_width(const double *s, size_t n, size_t i)
{
    double lo = i == 0 ? s[0] : 0.5 * (s[i - 1] + s[i]);
    double hi = i + 1 >= n ? s[n - 1] : 0.5 * (s[i] + s[i + 1]);
    return hi - lo;
}

double lop_density_nodes(const double *s, const double *p, const double *factor, size_t n,
                         double *v)
{
    double total = 0;
    for (size_t i = 0; i < n; i++) {
        double m = factor ? p[i] * factor[i] : p[i];
        v[i] = m / lop_density_width(s, n, i);
        total += m;
    }
    return total;
}

/* Returns raw node value j of the sweep, v_j or p_j·factor_j / width_j, and writes the
 * cell's width to *width. */
static double raw(const lop_density_sweep *w, size_t j, double *width)
{
    *width = lop_density_width(w->s, w->n, j);
    if (w->v)
        return w->v[j];
    double m = w->factor ? w->p[j] * w->factor[j] : w->p[j];
    return m / *width;
}

/* The sweep keeps the last few raw values, right parts, mean densities and node values
 * in rings of LOP_DENSITY_RING indexed by j mod LOP_DENSITY_RING. */
#define RING(j) ((j) % LOP_DENSITY_RING)

/* Returns the part of cell j's mass right of s_j (see the top of the file), from the raw
 * values of nodes j - 1 .. j + 1 in the ring. */
static double right_part(const lop_density_sweep *w, size_t j)
{
    const double *s = w->s, *val = w->raw;
    double v = val[RING(j)];
    if (j == 0)
        return v * w->width[RING(0)];
    if (j + 1 >= w->n)
        return 0;
    double l = 0.5 * (s[j] - s[j - 1]), r = 0.5 * (s[j + 1] - s[j]);
    double slope = (val[RING(j + 1)] - val[RING(j - 1)]) / (s[j + 1] - s[j - 1]);
    double part = v * r + 0.5 * r * l * slope;     /* m·r/(l + r) = v·r */
    double whole = v * (l + r);
    return part > 0 ? (part < whole ? part : whole) : 0;
}

/* Returns the density's value at state j: the cell's average corrected to the point,
 * between 0 and three times the mean density of each interval beside it (NAN: none). */
static double node_value(const lop_density_sweep *w, size_t j, double left_mean,
                         double right_mean)
{
    const double *s = w->s, *val = w->raw;
    size_t n = w->n;
    double v = val[RING(j)];
    if (j == 0) {
        double r = 0.5 * (s[1] - s[0]);
        v -= 0.5 * r * (val[RING(1)] - v) / (s[1] - s[0] - 0.5 * r);
    } else if (j + 1 >= n) {
        double l = 0.5 * (s[j] - s[j - 1]);
        v += 0.5 * l * (v - val[RING(j - 1)]) / (s[j] - s[j - 1] - 0.5 * l);
    } else {
        double below = val[RING(j - 1)], above = val[RING(j + 1)];
        double l = 0.5 * (s[j] - s[j - 1]), r = 0.5 * (s[j + 1] - s[j]);
        double left = (v - below) / (s[j] - s[j - 1]), right = (above - v) / (s[j + 1] - s[j]);
        double slope = (above - below) / (s[j + 1] - s[j - 1]);
        double bend = 2 * (right - left) / (s[j + 1] - s[j - 1]);
        v -= 0.5 * (r - l) * slope + (r * r - r * l + l * l) / 6 * bend;
    }
    /* comparisons, not fmin and fmax: this runs once per state of every posterior, and
     * those are calls into libm */
    v = v > 0 ? v : 0;
    if (!isnan(left_mean) && !(v <= 3 * left_mean))
        v = 3 * left_mean;
    if (!isnan(right_mean) && !(v <= 3 * right_mean))
        v = 3 * right_mean;
    return v;
}

void lop_density_sweep_start(lop_density_sweep *w, const double *s, const double *p,
                             const double *factor, const double *v, size_t n, size_t k)
{
    *w = (lop_density_sweep){.s = s, .p = p, .factor = factor, .v = v, .n = n};
    /* piece k reads raw values from k - 2 (through the mean of interval k - 1), right
     * parts from k - 1, means from k - 1 and node values from k */
    w->n_raw = k >= 2 ? k - 2 : 0;
    w->n_right = w->n_mean = k >= 1 ? k - 1 : 0;
    w->n_node = k;
}

void lop_density_sweep_piece(lop_density_sweep *w, size_t k, double a[3])
{
    size_t n = w->n, last = n - 1;
    size_t need_raw = k + 3 < last ? k + 3 : last, need_right = k + 2 < last ? k + 2 : last;
    size_t need_mean = k + 1 < n - 2 ? k + 1 : n - 2;
    while (w->n_raw <= need_raw) {
        w->raw[RING(w->n_raw)] = raw(w, w->n_raw, &w->width[RING(w->n_raw)]);
        w->n_raw++;
    }
    while (w->n_right <= need_right) {
        w->right[RING(w->n_right)] = right_part(w, w->n_right);
        w->n_right++;
    }
    while (w->n_mean <= need_mean) {
        size_t j = w->n_mean++;
        double next = w->raw[RING(j + 1)] * w->width[RING(j + 1)];
        w->mean[RING(j)] = (w->right[RING(j)] + next - w->right[RING(j + 1)]) /
                           (w->s[j + 1] - w->s[j]);
    }
    while (w->n_node <= k + 1) {
        size_t j = w->n_node++;
        w->node[RING(j)] = node_value(w, j, j > 0 ? w->mean[RING(j - 1)] : NAN,
                                      j < last ? w->mean[RING(j)] : NAN);
    }
    double v0 = w->node[RING(k)], v1 = w->node[RING(k + 1)];
    double beta = w->mean[RING(k)] - 0.5 * (v0 + v1);
    a[0] = v0;
    a[1] = v1 - v0 + 6 * beta;
    a[2] = -6 * beta;
}

size_t lop_density_first_piece(const double *p, size_t n, double negligible)
{
    size_t i = 0;
    while (i < n && p[i] <= negligible)
        i++;
    /* Before the first mass the intervals hold none, so their values, capped at three
     * times the mean density beside them, are 0 too. */
    return i > 0 && i < n ? i - 1 : 0;
}

size_t lop_density_last_piece(const double *p, size_t n, double negligible)
{
    size_t i = n;
    while (i > 0 && p[i - 1] <= negligible)
        i--;
    if (i == 0)
        return n - 2;
    return i - 1 < n - 2 ? i - 1 : n - 2;       /* the interval after the last mass */
}

void lop_density_piece_of(const double *s, const double *p, const double *factor, size_t n,
                          size_t k, double a[3])
{
    lop_density_sweep w;
    lop_density_sweep_start(&w, s, p, factor, NULL, n, k);
    lop_density_sweep_piece(&w, k, a);
}

double lop_density_invert(const double a[3], double goal)
{
    double whole = lop_density_mass(a, 1);
    if (!(goal > 0) || !(whole > 0))
        return 0;
    if (goal >= whole)
        return 1;
    /* a start from a0·t + a1·t²/2 = goal, the root free of cancellation */
    double disc = a[0] * a[0] + 2 * a[1] * goal, t;
    double den = a[0] + sqrt(fmax(disc, 0));
    t = disc >= 0 && den > 0 ? 2 * goal / den : goal / whole;
    double lo = 0, hi = 1;
    t = fmin(fmax(t, 0), 1);
    for (int it = 0; it < INVERT_STEPS; it++) {
        double f = lop_density_mass(a, t) - goal;
        if (f == 0)
            return t;
        if (f < 0)
            lo = t;
        else
            hi = t;
        double slope = lop_density_at(a, t), next;
        next = slope > 0 ? t - f / slope : lo - 1;
        if (!(next > lo && next < hi))
            next = 0.5 * (lo + hi);
        bool done = fabs(next - t) <= INVERT_TOLERANCE || hi - lo <= INVERT_TOLERANCE;
        t = next;
        if (done)
            break;
    }
    return t;
}

void lop_density_quantiles(const double *s, const double *p, size_t n, const double *q,
                           size_t n_q, double *out)
{
    /* the pieces' total, sum p up to rounding: the quantiles are of it */
    lop_density_sweep w;
    double total = 0, a[3];
    size_t first = lop_density_first_piece(p, n, 0);
    lop_density_sweep_start(&w, s, p, NULL, NULL, n, first);
    for (size_t k = first; k + 1 < n; k++) {
        lop_density_sweep_piece(&w, k, a);
        total += (s[k + 1] - s[k]) * lop_density_mass(a, 1);
    }
    size_t j = 0;
    double cum = 0;
    lop_density_sweep_start(&w, s, p, NULL, NULL, n, first);
    for (size_t k = first; k + 1 < n && j < n_q; k++) {
        double h = s[k + 1] - s[k];
        lop_density_sweep_piece(&w, k, a);
        double in = h * lop_density_mass(a, 1);
        /* the least u: a piece without mass never holds a quantile */
        while (j < n_q && in > 0 && cum + in >= q[j] * total) {
            out[j] = s[k] + h * lop_density_invert(a, (q[j] * total - cum) / h);
            j++;
        }
        cum += in;
    }
    for (; j < n_q; j++)
        out[j] = s[n - 1];
}
