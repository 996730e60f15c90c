/* Solving a problem to the accuracy it asks ([problem] accuracy): every number lopside
 * reports for a grid problem stands for the continuous model, so the engine's answer is
 * compared with the answer on grids with twice the step, the difference estimates the
 * error (Richardson: for a second-order method the finer answer's error is about a third
 * of the difference when the step halves), the finer answer is extrapolated, and the
 * grids are refined while the estimate exceeds what is asked. Then no impossible number
 * may remain (design.md). */
#ifndef LOPSIDE_ACCURACY_H
#define LOPSIDE_ACCURACY_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/util/progress.h"
#include "lopside/model/results.h"

/* The most work (state points times measurement points of one solve) the accuracy loop
 * spends on one problem before it reports what it reached: about a second on two cores. */
#define LOP_ACCURACY_WORK 2e7

/* What lop_accuracy_solve returns: the results and, when the grids were refined, the
 * refined problem they belong to (the writers need that one); the caller frees both. */
typedef struct {
    lop_problem *refined;     /* NULL: the results belong to the problem given */
    lop_results *results;
} lop_solution;

/* Returns LOP_OK after solving p (lop_engine_solve_progress) to p->accuracy as well as
 * the grids allow, with results->accuracy filled and every invariant checked; LOP_EINPUT
 * for a problem with no finite answer, LOP_ERUN when memory runs out or a number breaks
 * an invariant beyond the accuracy (a defect, named in err). out is untouched on error. */
lop_status lop_accuracy_solve(const lop_problem *p, const lop_progress *progress,
                              lop_solution *out, lop_error *err);

/* Returns true after checking design.md's invariants on r (solved for p, with
 * r->accuracy's asked, reached and scales set): 0 <= EVSI(n) <= EVPI and non-decreasing,
 * the evidence's value >= 0, regrets >= 0, rates in [0, 1]. A number past its bound by
 * less than the accuracy is set onto it (counted in n_clamped); by more, it writes a
 * sentence naming the number and both values to defect and returns false. */
bool lop_accuracy_invariants(const lop_problem *p, lop_results *r, char *defect, size_t size);

/* Returns the score scale of p's contract: the largest |loss| of a choice table; for
 * estimates the largest |loss| of a bounded curve, else |prior_only_risk| (1 if 0). */
double lop_accuracy_score_scale(const lop_problem *p, double prior_only_risk);

#endif
