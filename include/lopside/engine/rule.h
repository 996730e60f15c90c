/* The Bayes decision rule over the whole measurement space: every combination of
 * outcome counts of the table channels, and a grid over one numeric channel with
 * switch points found by root finding. */
#ifndef LOPSIDE_RULE_H
#define LOPSIDE_RULE_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* Largest rule table (rows x measurement points) kept in memory. */
#define LOP_RULE_CELLS_MAX 20000000

/* Returns LOP_OK after filling r->rule (Bayes risk, prior-only risk, table, switch
 * points); a problem whose rule cannot be tabulated gets r->rule.computed = false and a
 * warning. LOP_ERUN only when memory runs out. */
lop_status lop_rule_solve(const lop_problem *p, lop_results *r, lop_error *err);

#endif
