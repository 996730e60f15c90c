/* The whole computation for one problem: the engine's solve, then the studies that
 * re-solve its model (value of information, sweeps, designs). Pure: no I/O. */
#ifndef LOPSIDE_RUN_H
#define LOPSIDE_RUN_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/util/progress.h"
#include "lopside/model/results.h"

/* Returns results for p with every study done (caller frees with lop_results_free), or
 * NULL with err set; long work reports its steps to progress (may be NULL). */
lop_results *lop_run_solve(const lop_problem *p, const lop_progress *progress, lop_error *err);

#endif
