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
            /* Uniform within the cell [x - h/2, x + h/2]. */
            double t = (q - cum) / p[i];
            return x[i] - 0.5 * pr->step + t * pr->step;
        }
        cum = next;
    }
    return pr->states_kind == LOP_STATES_GRID ? x[n - 1] + 0.5 * pr->step : x[n - 1];
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
    out->mode = pr->state_values[mode];
    out->median = quantile(pr, p, 0.5);
    out->q05 = quantile(pr, p, 0.05);
    out->q95 = quantile(pr, p, 0.95);
}
