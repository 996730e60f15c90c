#include <math.h>

#include "lopside/posterior.h"

double lop_posterior_normalize(const double *logw, size_t n, double *p)
{
    return lop_posterior_normalize_above(logw, n, -INFINITY, p);
}

double lop_posterior_normalize_above(const double *logw, size_t n, double cut, double *p)
{
    double top = -INFINITY;
    for (size_t i = 0; i < n; i++)
        if (logw[i] > top)
            top = logw[i];
    if (top == -INFINITY) {
        for (size_t i = 0; i < n; i++)
            p[i] = 0;
        return -INFINITY;
    }
    double sum = 0;
    for (size_t i = 0; i < n; i++) {
        double d = logw[i] - top;
        p[i] = d < cut ? 0 : exp(d);
        sum += p[i];
    }
    for (size_t i = 0; i < n; i++)
        p[i] /= sum;
    return top + log(sum);
}

/* Writes the cell of state i of a grid: between the midpoints to its neighbours, the
 * first and last cells ending at the first and last state (the state range). */
static void cell(const lop_problem *pr, size_t i, double *lo, double *hi)
{
    const double *x = pr->state_values;
    size_t n = pr->n_states;
    *lo = i == 0 ? x[0] : 0.5 * (x[i - 1] + x[i]);
    *hi = i + 1 == n ? x[n - 1] : 0.5 * (x[i] + x[i + 1]);
}

/* Returns the quantile at probability q of the distribution p over the states of a
 * problem: on a grid each cell's mass is spread evenly over the cell (so the CDF is
 * piecewise linear); over listed values, the smallest value whose CDF reaches q. */
static double quantile(const lop_problem *pr, const double *p, double q)
{
    size_t n = pr->n_states;
    const double *x = pr->state_values;
    double cum = 0;
    for (size_t i = 0; i < n; i++) {
        double next = cum + p[i];
        if (next >= q && p[i] > 0) {
            if (pr->states_kind != LOP_STATES_GRID)
                return x[i];
            double lo, hi, t = (q - cum) / p[i];
            cell(pr, i, &lo, &hi);
            return lo + (t < 0 ? 0 : t > 1 ? 1 : t) * (hi - lo);
        }
        cum = next;
    }
    return x[n - 1];
}

/* Returns the mode on a grid: the vertex of the parabola through the log masses of the
 * state of largest mass and its neighbours, clamped to its cell, so a smooth posterior's
 * mode is found to second order (three-point parabolic interpolation, as in Brent 1973,
 * ch. 5, from memory); the state itself at an end of the grid or beside a state
 * without mass. */
static double grid_mode(const lop_problem *pr, const double *p, size_t k)
{
    const double *x = pr->state_values;
    size_t n = pr->n_states;
    if (k == 0 || k + 1 >= n || p[k - 1] <= 0 || p[k + 1] <= 0)
        return x[k];
    double l[3] = {log(p[k - 1]), log(p[k]), log(p[k + 1])}, lo, hi;
    /* vertex of the parabola through (x_j, l_j): x_k - (1/2)·(b²·v - c²·u) / (b·v - c·u)
     * with b = x_k - x_{k-1}, c = x_k - x_{k+1}, u = l_k - l_{k-1}, v = l_k - l_{k+1};
     * the denominator is > 0 when the middle lies above the chord (a maximum) */
    double b = x[k] - x[k - 1], c = x[k] - x[k + 1];
    double u = l[1] - l[0], v = l[1] - l[2];
    double den = b * v - c * u;
    if (!(den > 0))
        return x[k];
    double vertex = x[k] - 0.5 * (b * b * v - c * c * u) / den;
    cell(pr, k, &lo, &hi);
    return vertex < lo ? lo : vertex > hi ? hi : vertex;
}

void lop_posterior_summarize(const lop_problem *pr, const double *p, lop_summary *out)
{
    double m1 = 0, best = -1;
    size_t mode = 0;
    for (size_t i = 0; i < pr->n_states; i++) {
        m1 += p[i] * pr->state_values[i];
        if (p[i] > best) {
            best = p[i];
            mode = i;
        }
    }
    /* Central second moment in a second pass: no cancellation for narrow posteriors. */
    double var = 0;
    for (size_t i = 0; i < pr->n_states; i++) {
        double d = pr->state_values[i] - m1;
        var += p[i] * d * d;
    }
    out->mean = m1;
    out->sd = sqrt(var);
    out->mode = pr->states_kind == LOP_STATES_GRID ? grid_mode(pr, p, mode) : pr->state_values[mode];
    out->median = quantile(pr, p, 0.5);
    out->q05 = quantile(pr, p, 0.05);
    out->q95 = quantile(pr, p, 0.95);
}
