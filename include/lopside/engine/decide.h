/* Choosing among actions: expected loss under a distribution over states,
 * the Bayes action with ties, and the value of perfect information. */
#ifndef LOPSIDE_DECIDE_H
#define LOPSIDE_DECIDE_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* Writes to el[a] the sum over states of w[s]·loss(a, s) (w need not be normalized). */
void lop_decide_expected(const lop_problem *p, const double *w, double *el);

/* Returns the action with the least el; ties go to the earlier action. */
size_t lop_decide_best(const double *el, size_t n_actions);

/* Returns the expected loss with the state known under p's prior: a rule's Bayes risk
 * minus this is its EVPI. */
double lop_decide_perfect_risk(const lop_problem *p);

/* Returns true when el_a and el_best are equal up to rounding of losses of size scale. */
bool lop_decide_tied(double el_a, double el_best, double scale);

/* Returns the best action as lop_decide_best does, except that actions tied with it (to
 * the scale) are told apart by the exact sign of their difference, summed from the log
 * weights logw (n_states, unnormalized) relative to the largest weight of the states
 * where their losses differ: far in a posterior's tail the expected losses can tie or
 * underflow while the continuous model still prefers one action. */
size_t lop_decide_best_exact(const lop_problem *p, const double *logw, const double *el,
                             double scale);

/* Returns the largest absolute loss of p: the scale for tie tests. */
double lop_decide_loss_scale(const lop_problem *p);

/* Returns the expected loss with the state known: sum over states of w[s]·min_a loss(a, s). */
double lop_decide_perfect(const lop_problem *p, const double *w);

/* Returns the expected loss of estimating with the state known, under weights w. */
double lop_decide_perfect_estimate(const lop_problem *p, const double *w);

/* Returns a workspace for p's loss curve with the model the problem means (cells on a
 * grid of states; any real estimate unless the file gives an estimate grid), or NULL
 * when memory runs out. */
lop_curve_work *lop_decide_curve_work(const lop_problem *p);

/* Returns LOP_OK after writing the Bayes estimate under post to *x and its expected loss
 * to *el (either may be NULL), or an input error at the `curve` line when that expected
 * loss is not finite: the problem then has no finite answer. */
lop_status lop_decide_estimate_risk(const lop_problem *p, lop_curve_work *w, const double *post,
                                    double *x, double *el, lop_error *err);

/* Returns LOP_OK after filling r->kase: posterior given every observed value, expected
 * loss per action, Bayes action, runner-up, ties and EVPI. */
lop_status lop_decide_case(const lop_problem *p, lop_results *r, lop_error *err);

#endif
