#include <math.h>
#include <time.h>

#include "lopside/engine/decide.h"
#include "lopside/engine/engine.h"
#include "lopside/engine/flatness.h"
#include "lopside/model/prior.h"
#include "lopside/engine/rule.h"

static double seconds_now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

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
    if (p->states_kind == LOP_STATES_GRID && p->prior_outside > LOP_PRIOR_OUTSIDE_WARN &&
        lop_results_warn(r, "[prior]: %.3g%% of the prior lies beyond the grid %g to %g; it was "
                            "left out and the rest renormalized",
                         100 * p->prior_outside, p->state_values[0],
                         p->state_values[p->n_states - 1]) != 0) {
        lop_error_run(err, "out of memory");
        goto fail;
    }
    double t0 = seconds_now();
    if (lop_decide_case(p, r, err) != LOP_OK)
        goto fail;
    double t1 = seconds_now();
    if (lop_rule_solve(p, r, err) != LOP_OK)
        goto fail;
    r->seconds_case = t1 - t0;
    r->seconds_rule = seconds_now() - t1;
    if (p->estimate)
        lop_flatness_estimates(p, r->kase.posterior, r->kase.estimate_curve,
                               r->kase.bayes_estimate, r->kase.bayes_estimate_loss,
                               &r->case_flatness);
    return r;
fail:
    lop_results_free(r);
    return NULL;
}
