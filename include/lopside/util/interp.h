/* Piecewise-linear functions given by knots, as the format uses them (`at` lines of a
 * loss, `points` curves, `table` responses), and the search in sorted values they and
 * the rule lookups share. */
#ifndef LOPSIDE_INTERP_H
#define LOPSIDE_INTERP_H

#include <stddef.h>

/* Returns the value at `at` of the function linear between the knots (x[i], y[i]) (x
 * increasing, n >= 1) and flat beyond the first and last. */
double lop_interp_linear(const double *x, const double *y, size_t n, double at);

/* Returns how many of a[0..n-1] (non-decreasing) are <= v: the index of the interval
 * between sorted cut points that holds v (a point on a cut belongs to the upper side). */
size_t lop_count_at_most(const double *a, size_t n, double v);

#endif
