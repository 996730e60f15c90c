/* How flat the expected loss is around its optimum: the thresholds or estimates whose
 * expected loss lies within 1%, 5% and 10% of the optimum's magnitude. */
#ifndef LOPSIDE_FLATNESS_H
#define LOPSIDE_FLATNESS_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* The levels of lop_flatness, in order. */
extern const double lop_flatness_levels[LOP_FLAT_LEVELS];

/* An expected loss as a function of a setting x. */
typedef double (*lop_flat_fn)(double x, void *ctx);

/* Fills f for the case's estimate curve of an estimate problem under posterior post
 * (el: the expected loss of every estimate of p's estimate grid). */
void lop_flatness_estimates(const lop_problem *p, const double *post, const double *el,
                            double bayes_estimate, double best, lop_flatness *f);

/* Fills f for thresholds on channel c around the threshold t (expected loss `best`),
 * evaluated first at the m increasing points of grid. Returns false when memory runs
 * out (f is then not computed). */
bool lop_flatness_threshold(const lop_problem *p, const lop_channel *c, double t, double best,
                            const double *grid, size_t m, lop_flatness *f);

#endif
