/* Priors over a grid of numeric states: a named family (or a mixture of them) read
 * from [prior] and its [prior.NAME] parts, turned into the prior mass of each grid cell,
 * in logs so that no tail underflows. Reads the config only; no I/O. The states range
 * over [s[0], s[n-1]] exactly (the file's `from` and `to`): cell i is
 * [s[i] - h/2, s[i] + h/2] clipped to that range, so the end cells are halves, and a
 * family's mass outside its support is 0 (a beta prior on 0 to 1 is fine). A uniform
 * without low or high spans the range; a table's density is linear between its points
 * and 0 outside them; a mixture's weights are normalized. */
#ifndef LOPSIDE_PRIOR_H
#define LOPSIDE_PRIOR_H

#include <stddef.h>

#include "lopside/input/config.h"
#include "lopside/util/error.h"

/* The caller warns when more than this share of the prior lies outside the grid
 * (format.md: mass outside the grid above 0.1% is reported as a warning). */
#define LOP_PRIOR_OUTSIDE_WARN 1e-3

/* Returns LOP_OK after reading [prior] (and the [prior.NAME] parts of a mixture) of cfg
 * for the grid s[0..n-1] (s[i] = s[0] + i*h, n >= 2, h > 0), writing the log of each
 * cell's prior mass renormalized to sum to 1 into log_mass[0..n-1] and the prior mass
 * beyond the range (before renormalizing) into *outside. This function does not warn:
 * the caller warns when *outside > LOP_PRIOR_OUTSIDE_WARN. Returns LOP_EINPUT with err
 * naming file:line, section and key for bad input or a prior with no mass on the range,
 * LOP_ERUN when memory runs out; log_mass and *outside are then unspecified. */
lop_status lop_prior_grid(const lop_config *cfg, const double *s, size_t n, double h,
                          double *log_mass, double *outside, lop_error *err);

/* Returns LOP_OK after the same reading and checks as lop_prior_grid, except that it
 * accepts a prior with no mass on the range and writes the log cell masses as the prior
 * gives them, not renormalized. */
lop_status lop_prior_log_cells(const lop_config *cfg, const double *s, size_t n, double h,
                               double *log_mass, double *outside, lop_error *err);

/* Returns LOP_OK after the same as lop_prior_log_cells, with the masses themselves:
 * mass[0..n-1] and *outside then sum to 1 up to rounding. */
lop_status lop_prior_cells(const lop_config *cfg, const double *s, size_t n, double h,
                           double *mass, double *outside, lop_error *err);

/* Returns LOP_OK after writing the log prior mass (not renormalized) of [lo, hi] to
 * *log_mass, for states ranging over [range_lo, range_hi] (a uniform's default span). */
lop_status lop_prior_log_interval(const lop_config *cfg, double lo, double hi,
                                  double range_lo, double range_hi, double *log_mass,
                                  lop_error *err);

#endif
