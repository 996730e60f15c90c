/* Private to the rule modules (rule.c, rule_grid.c). */
#ifndef LOPSIDE_RULE_PRIVATE_H
#define LOPSIDE_RULE_PRIVATE_H

#include "lopside/error.h"
#include "lopside/problem.h"
#include "lopside/results.h"

/* Returns LOP_OK after marking the rule not computed, with a warning saying why. */
lop_status lop_rule_not_computed(lop_results *r, lop_error *err, const char *why);

/* Returns LOP_OK after solving the rule over the measurement grid of the problem's one
 * numeric channel (grid states, estimates, or noise other than gaussian). */
lop_status lop_rule_solve_grid(const lop_problem *p, lop_results *r, lop_error *err);

#endif
