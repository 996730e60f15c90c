#include <math.h>

#include "lopside/decide.h"
#include "lopside/engine.h"
#include "lopside/rule.h"

/* Weights within this of 1 count as already normalized. */
#define WEIGHT_SUM_SLACK 1e-9

lop_results *lop_engine_solve(const lop_problem *p, lop_error *err)
{
    lop_results *r = lop_results_new(p);
    if (!r) {
        lop_error_run(err, "out of memory");
        return NULL;
    }
    if (fabs(p->prior_given_sum - 1) > WEIGHT_SUM_SLACK &&
        lop_results_warn(r, "[prior] weights sum to %.9g, not 1; they were normalized",
                         p->prior_given_sum) != 0) {
        lop_error_run(err, "out of memory");
        goto fail;
    }
    if (lop_decide_case(p, r, err) != LOP_OK || lop_rule_solve(p, r, err) != LOP_OK)
        goto fail;
    return r;
fail:
    lop_results_free(r);
    return NULL;
}
