/* [sweep.NAME]: the problem re-solved along one or two paths, and rule.threshold
 * sweeps of a threshold on the one numeric channel. */
#ifndef LOPSIDE_SWEEP_H
#define LOPSIDE_SWEEP_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/util/progress.h"
#include "lopside/model/results.h"

/* Returns LOP_OK after filling r->sweeps for every [sweep.NAME] of p; r holds p's solved
 * case and rule. At every point of a path sweep the model is re-built from p's source
 * with the paths set: an input error names the sweep, the path and the point when that
 * gives an invalid problem. LOP_ERUN when memory runs out. */
lop_status lop_sweep_solve(const lop_problem *p, lop_results *r, const lop_progress *progress,
                           lop_error *err);

#endif
