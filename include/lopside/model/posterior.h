/* Normalizing log weights into probabilities. */
#ifndef LOPSIDE_POSTERIOR_H
#define LOPSIDE_POSTERIOR_H

#include <stdbool.h>
#include <stddef.h>

/* A distribution over numeric states, in the state's unit. */
typedef struct {
    double mean, sd, median, mode, q05, q95;
} lop_summary;

/* Returns log(sum exp(logw)) and writes exp(logw - that) to p (log-sum-exp);
 * returns -inf and writes zeros when every weight is zero. */
double lop_posterior_normalize(const double *logw, size_t n, double *p);

/* The same, but weights below e^cut of the largest become exactly 0 without an exp. */
double lop_posterior_normalize_above(const double *logw, size_t n, double cut, double *p);

/* Returns the peak of a smooth function sampled as l at the increasing points x (n of
 * them) whose largest sample is l[k]: the vertex of the parabola through k - 1, k, k + 1,
 * clamped to the midpoints around x[k] (three-point parabolic interpolation, as in Brent
 * 1973, ch. 5, from memory; exact for a quadratic); x[k] at an end or beside -inf. */
double lop_posterior_peak(const double *x, const double *l, size_t n, size_t k);

/* Writes the mean, sd, median, mode and 5% and 95% quantiles of the distribution p over
 * the n increasing numeric states `values`; on a grid the quantiles are those of its
 * continuous density (density.h) and the mode the peak of the log masses. */
void lop_posterior_summarize(const double *values, size_t n, bool grid, const double *p,
                             lop_summary *out);

#endif
