/* The solve of one model: the case, the rule over measurements, the flatness of the
 * estimate and the warnings that go with them. Studies (value of information, sweeps,
 * designs) sit above it (run.h). Pure: no I/O. */
#ifndef LOPSIDE_ENGINE_H
#define LOPSIDE_ENGINE_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* Returns results for p's model (caller frees with lop_results_free), or NULL with err
 * set. */
lop_results *lop_engine_solve(const lop_problem *p, lop_error *err);

#endif
