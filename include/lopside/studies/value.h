/* [value]: what information is worth. EVPI of the design, the expected value of sample
 * information of n more measurements of each channel (preposterior analysis, exact on
 * the rule's grids), its net value after cost, the best purchase, and the value of one
 * more measurement for the case at hand. */
#ifndef LOPSIDE_VALUE_H
#define LOPSIDE_VALUE_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/util/progress.h"
#include "lopside/model/results.h"

/* Returns LOP_OK after filling r->value for p's [value] (nothing without one); r holds p's
 * solved case and rule. Parts that cannot be computed say why. LOP_ERUN when memory
 * runs out. */
lop_status lop_value_solve(const lop_problem *p, lop_results *r, const lop_progress *progress,
                           lop_error *err);

#endif
