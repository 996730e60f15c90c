#include <math.h>

#include "lopside/model/density.h"
#include "lopside/model/posterior.h"

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

/* Returns the quantile at probability q of the distribution p over listed values: the
 * smallest value whose CDF reaches q. */
static double listed_quantile(const double *values, size_t n, const double *p, double q)
{
    double cum = 0;
    for (size_t i = 0; i < n; i++) {
        cum += p[i];
        if (cum >= q && p[i] > 0)
            return values[i];
    }
    return values[n - 1];
}

/* Writes the 5%, 50% and 95% quantiles of p: on a grid those of its continuous density
 * (density.h: the cumulative is a cubic in each interval, inverted exactly), over listed
 * values the smallest value whose CDF reaches each. */
static void quantiles(const double *values, size_t n, bool grid, const double *p,
                      double out[3])
{
    static const double q[3] = {0.05, 0.5, 0.95};
    if (grid && n >= 2) {
        lop_density_quantiles(values, p, n, q, 3, out);
        return;
    }
    for (int j = 0; j < 3; j++)
        out[j] = listed_quantile(values, n, p, q[j]);
}

double lop_posterior_peak(const double *x, const double *l, size_t n, size_t k)
{
    if (k == 0 || k + 1 >= n || !isfinite(l[k - 1]) || !isfinite(l[k + 1]))
        return x[k];
    /* vertex of the parabola through (x_j, l_j): x_k - (1/2)·(b²·v - c²·u) / (b·v - c·u)
     * with b = x_k - x_{k-1}, c = x_k - x_{k+1}, u = l_k - l_{k-1}, v = l_k - l_{k+1};
     * the denominator is > 0 when the middle lies above the chord (a maximum) */
    double b = x[k] - x[k - 1], c = x[k] - x[k + 1];
    double u = l[k] - l[k - 1], v = l[k] - l[k + 1];
    double den = b * v - c * u;
    if (!(den > 0))
        return x[k];
    double vertex = x[k] - 0.5 * (b * b * v - c * c * u) / den;
    double lo = 0.5 * (x[k - 1] + x[k]), hi = 0.5 * (x[k] + x[k + 1]);
    return vertex < lo ? lo : vertex > hi ? hi : vertex;
}

/* Returns the mode on a grid: the peak of the log masses (lop_posterior_peak); the state
 * itself beside a state without mass. */
static double grid_mode(const double *values, size_t n, const double *p, size_t k)
{
    if (k == 0 || k + 1 >= n || p[k - 1] <= 0 || p[k + 1] <= 0)
        return values[k];
    double l[3] = {log(p[k - 1]), log(p[k]), log(p[k + 1])};
    return lop_posterior_peak(values + k - 1, l, 3, 1);
}

void lop_posterior_summarize(const double *values, size_t n, bool grid, const double *p,
                             lop_summary *out)
{
    double m1 = 0, best = -1;
    size_t mode = 0;
    for (size_t i = 0; i < n; i++) {
        m1 += p[i] * values[i];
        if (p[i] > best) {
            best = p[i];
            mode = i;
        }
    }
    /* Central second moment in a second pass: no cancellation for narrow posteriors. */
    double var = 0;
    for (size_t i = 0; i < n; i++) {
        double d = values[i] - m1;
        var += p[i] * d * d;
    }
    out->mean = m1;
    out->sd = sqrt(var);
    out->mode = grid ? grid_mode(values, n, p, mode) : values[mode];
    double q[3];
    quantiles(values, n, grid, p, q);
    out->q05 = q[0];
    out->median = q[1];
    out->q95 = q[2];
}
