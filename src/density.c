/* The continuous density of a grid posterior (see density.h).
 *
 * Why the curvature term: the masses give node values v_i = f(s_i) + h²/24·f''(s_i) +
 * O(h⁴), a smooth bias. The line between two nodes errs by -h²/2·t(1-t)·f'' (the error
 * of linear interpolation, e.g. Atkinson, An Introduction to Numerical Analysis, sec.
 * 3.2, from memory), a term that depends on where t falls in its interval. Subtracting
 * h²/2·(t(1-t) - 1/6)·K, with K the mean of the second differences at the interval's two
 * nodes, leaves a smooth O(h²) error (the constant K/12) and an O(h³) remainder, while
 * the piece keeps the mass of the line, (v_k + v_{k+1})·h/2: the pieces' masses sum to
 * sum p exactly, so nothing is rescaled, and where the posterior jumps (a uniform prior's
 * edge on a state) the term moves mass within one interval instead of adding O(h) of
 * it. The cost is a step of K/12 between neighbouring pieces at a state, O(h³) where the
 * posterior is smooth; the cumulative stays continuous. */
#include <math.h>
#include <stdbool.h>

#include "lopside/density.h"

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

/* Returns the second divided difference at node j (0 < j < n - 1), the estimate of f''
 * there: 2·((v_{j+1} - v_j)/h_j - (v_j - v_{j-1})/h_{j-1}) / (h_{j-1} + h_j). val[m] is
 * the value of node first + m. */
static double second(const double *s, const double *val, size_t first, size_t j)
{
    double left = s[j] - s[j - 1], right = s[j + 1] - s[j];
    const double *v = val + (j - first);
    return 2 * ((v[1] - v[0]) / right - (v[0] - v[-1]) / left) / (left + right);
}

/* Writes piece k from the values of nodes first .. (val[m] is node first + m), which must
 * cover max(k - 1, 0) .. min(k + 2, n - 1). The second differences of the two end nodes,
 * which have no neighbour beyond, are those of the nodes next to them. */
static void piece(const double *s, size_t n, size_t k, const double *val, size_t first,
                  double a[3])
{
    double v0 = val[k - first], v1 = val[k + 1 - first], bend = 0;
    if (n >= 3) {
        size_t j0 = k == 0 ? 1 : k, j1 = k + 2 >= n ? n - 2 : k + 1;
        double c0 = second(s, val, first, j0);
        double c1 = j1 == j0 ? c0 : second(s, val, first, j1);
        double h = s[k + 1] - s[k];
        bend = 0.5 * (c0 + c1) * h * h;
        /* q(t) = e0·(1-t)² + (v0 + v1 - bend/3)·t(1-t) + e1·t² (Bernstein form) with
         * e0 = v0 + bend/12, e1 = v1 + bend/12 is >= 0 on [0, 1] when all three
         * coefficients are: cap the bend to [-12·min(v0, v1), 3·(v0 + v1)]. Only where
         * the grid does not resolve the posterior does the cap act. */
        bend = fmin(fmax(bend, -12 * fmin(v0, v1)), 3 * (v0 + v1));
    }
    a[0] = v0 + bend / 12;
    a[1] = v1 - v0 - 0.5 * bend;
    a[2] = 0.5 * bend;
}

void lop_density_piece(const double *s, const double *v, size_t n, size_t k, double a[3])
{
    piece(s, n, k, v, 0, a);
}

void lop_density_piece_of(const double *s, const double *p, const double *factor, size_t n,
                          size_t k, double a[3])
{
    size_t first = k > 0 ? k - 1 : 0, last = k + 2 < n ? k + 2 : n - 1;
    double val[4];
    for (size_t j = first; j <= last; j++)
        val[j - first] = (factor ? p[j] * factor[j] : p[j]) / lop_density_width(s, n, j);
    piece(s, n, k, val, first, a);
}

double lop_density_mass(const double a[3], double t)
{
    return t * (a[0] + t * (a[1] / 2 + t * a[2] / 3));
}

double lop_density_moment(const double a[3], double t)
{
    return t * t * (a[0] / 2 + t * (a[1] / 3 + t * a[2] / 4));
}

double lop_density_at(const double a[3], double t)
{
    return a[0] + t * (a[1] + t * a[2]);
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
    double total = 0, a[3];
    for (size_t k = 0; k + 1 < n; k++) {
        lop_density_piece_of(s, p, NULL, n, k, a);
        total += (s[k + 1] - s[k]) * lop_density_mass(a, 1);
    }
    size_t j = 0;
    double cum = 0;
    for (size_t k = 0; k + 1 < n && j < n_q; k++) {
        double h = s[k + 1] - s[k];
        lop_density_piece_of(s, p, NULL, n, k, a);
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
