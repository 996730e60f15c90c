/* The whole computation for one problem: case, rule, value of information, sweeps,
 * designs and the warnings that go with them. Pure: no I/O. */
#ifndef LOPSIDE_ENGINE_H
#define LOPSIDE_ENGINE_H

#include "lopside/error.h"
#include "lopside/problem.h"
#include "lopside/progress.h"
#include "lopside/results.h"

/* Returns results for p (caller frees with lop_results_free), or NULL with err set. */
lop_results *lop_engine_solve(const lop_problem *p, lop_error *err);

/* Returns the same as lop_engine_solve, reporting the steps of long work (sweeps,
 * designs, value of information) to progress (may be NULL). */
lop_results *lop_engine_solve_progress(const lop_problem *p, const lop_progress *progress,
                                       lop_error *err);

#endif
