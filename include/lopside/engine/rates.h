/* How often each action is chosen: under the Bayes rule of a solved problem, and under
 * a threshold on one numeric channel (the second action at or above it), with the
 * threshold of least expected loss and the signal-detection measures of a threshold. */
#ifndef LOPSIDE_RATES_H
#define LOPSIDE_RATES_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* Returns true after writing P(choose a | s) to rates[a·n_states + s] for the Bayes rule
 * in r (choices only): for continuous measurements the masses of the intervals between
 * switch points (of each row, times the row's probability given s); for counts the sum of
 * P(x | s) over the counts deciding a; without evidence, the prior-only action.
 * Returns false, leaving rates unchanged, when the rule was not computed or p has
 * estimates. */
bool lop_rates_by_state(const lop_problem *p, const lop_results *r, double *rates);

/* Returns true after writing P(choose a) before any evidence to rates[a] for the Bayes
 * rule in r; false as lop_rates_by_state, or when memory runs out. */
bool lop_rates_overall(const lop_problem *p, const lop_results *r, double *rates);

/* Returns the expected loss of choosing action 1 when channel c's summary is at or
 * above t and action 0 below; writes the rates per action (P(a | s) at a·n_states + s
 * when by_state, else P(a)) to rates when not NULL. */
double lop_rates_threshold(const lop_problem *p, const lop_channel *c, double t, bool by_state,
                           double *rates);

/* Returns the threshold of least expected loss (written to *loss), searched over the m
 * increasing points of grid and refined by Brent's method on the slope of the expected
 * loss (continuous noise) or over the whole numbers (counts); NAN when always choosing
 * one action does at least as well as every threshold (*loss is then that action's). */
double lop_rates_best_threshold(const lop_problem *p, const lop_channel *c, const double *grid,
                                size_t m, double *loss);

/* Returns true when p has two labelled states and c is gaussian with one sd in both:
 * then writes d' = (mean2 - mean1)/sd of c's summary, the midpoint of the two means
 * and that sd (equal-variance signal detection; Macmillan & Creelman, Detection
 * Theory: A User's Guide, ch. 1-2). */
bool lop_rates_sdt(const lop_problem *p, const lop_channel *c, double *d_prime, double *mid,
                   double *sd);

/* Returns the index of the one numeric channel of p, or -1 when p has none or several. */
long lop_rates_numeric_channel(const lop_problem *p);

#endif
