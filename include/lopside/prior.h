/* Priors over a grid of numeric states: a named family (or a mixture of them) read
 * from [prior] and its [prior.NAME] parts, turned into the prior mass of each grid cell.
 * Reads the config only; no I/O. Cell i of a grid s[0..n-1] with spacing h is
 * [s[i] - h/2, s[i] + h/2]; the cells tile [s[0] - h/2, s[n-1] + h/2]. A uniform without
 * low or high takes the outer cell edges (so every point gets 1/n); a beta prior needs
 * every cell inside [0, 1] (from >= h/2, to <= 1 - h/2); a table's density is linear
 * between its points and 0 outside them; a mixture's weights are normalized. */
#ifndef LOPSIDE_PRIOR_H
#define LOPSIDE_PRIOR_H

#include <stddef.h>

#include "lopside/config.h"
#include "lopside/error.h"

/* The caller warns when more than this share of the prior lies outside the grid
 * (format.md: mass outside the grid above 0.1% is reported as a warning). */
#define LOP_PRIOR_OUTSIDE_WARN 1e-3

/* Returns LOP_OK after reading [prior] (and the [prior.NAME] parts of a mixture) of cfg
 * for the grid s[0..n-1] (s[i] = s[0] + i*h, n >= 1, h > 0), writing each cell's prior
 * mass renormalized to sum to 1 into mass[0..n-1] and the prior mass beyond the outer
 * cell edges (before renormalizing) into *outside. This function does not warn: the
 * caller warns when *outside > LOP_PRIOR_OUTSIDE_WARN. Returns LOP_EINPUT with err naming
 * file:line, section and key for bad input or a prior with no mass on the grid, LOP_ERUN
 * when memory runs out or the grid breaks the rules above; mass and *outside are then
 * unspecified. */
lop_status lop_prior_grid(const lop_config *cfg, const double *s, size_t n, double h,
                          double *mass, double *outside, lop_error *err);

/* Returns LOP_OK after the same reading and checks as lop_prior_grid, except that it
 * accepts a prior with no mass on the grid and writes the cell masses as the prior gives
 * them, not renormalized: mass[0..n-1] and *outside then sum to 1 up to rounding. */
lop_status lop_prior_cells(const lop_config *cfg, const double *s, size_t n, double h,
                           double *mass, double *outside, lop_error *err);

#endif
