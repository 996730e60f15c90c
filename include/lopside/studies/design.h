/* [design.NAME]: the inverse problem. The value of one path that makes the Bayes rule or
 * the case behave as wanted (a switch point, a choice rate, a Bayes risk, a Bayes
 * action), found by bracketing and Brent's method (GSL). */
#ifndef LOPSIDE_DESIGN_H
#define LOPSIDE_DESIGN_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/util/progress.h"
#include "lopside/model/results.h"

/* Points of the bracket solved before the root is sought: the goal is reached when it
 * changes sign between two of them. */
#define LOP_DESIGN_SCAN_POINTS 11

/* Returns LOP_OK after filling r->designs for every [design.NAME] of p: the value that
 * meets the goal (the lowest, when several in the bracket do), or the range the goal
 * spans over the bracket. An input error names the design, the path and the value when
 * a value in the bracket gives an invalid problem; LOP_ERUN when memory runs out. */
lop_status lop_design_solve(const lop_problem *p, lop_results *r, const lop_progress *progress,
                            lop_error *err);

#endif
