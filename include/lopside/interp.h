/* Piecewise-linear functions given by knots, as the format uses them: `at` lines of a
 * loss, `points` curves, `table` responses. */
#ifndef LOPSIDE_INTERP_H
#define LOPSIDE_INTERP_H

#include <stddef.h>

/* Returns the value at `at` of the function linear between the knots (x[i], y[i]) (x
 * increasing, n >= 1) and flat beyond the first and last. */
double lop_interp_linear(const double *x, const double *y, size_t n, double at);

#endif
