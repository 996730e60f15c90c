#include "lopside/studies/design.h"
#include "lopside/engine/engine.h"
#include "lopside/studies/run.h"
#include "lopside/studies/sweep.h"
#include "lopside/studies/value.h"

lop_results *lop_run_solve(const lop_problem *p, const lop_progress *progress, lop_error *err)
{
    lop_results *r = lop_engine_solve(p, err);
    if (!r)
        return NULL;
    if (lop_value_solve(p, r, progress, err) != LOP_OK ||
        lop_sweep_solve(p, r, progress, err) != LOP_OK ||
        lop_design_solve(p, r, progress, err) != LOP_OK) {
        lop_results_free(r);
        return NULL;
    }
    return r;
}
