/* [simulate]: sessions of trials, each trial a state drawn from the prior, a measurement
 * drawn from the evidence model, a decision by the Bayes rule or a [rule.NAME] looked up
 * in the rule the engine tabulated, and its loss or payoff. GSL generators; the same seed
 * gives the same numbers whatever the number of threads. No I/O. */
#ifndef LOPSIDE_SIMULATE_H
#define LOPSIDE_SIMULATE_H

#include <signal.h>
#include <stddef.h>

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/util/progress.h"
#include "lopside/model/results.h"

/* Sessions are simulated in blocks of about this many trials, each block with its own
 * generator seeded from the seed and the block's index. */
#define LOP_SIMULATE_BLOCK_TRIALS 65536

/* What the caller may ask of a long simulation. Every member may be NULL. */
typedef struct {
    volatile sig_atomic_t *stop;  /* non-zero: stop soon; the results are then marked
                                     interrupted and must not be reported */
    const lop_progress *progress; /* blocks done of total, reported by one thread between
                                     blocks */
} lop_simulate_control;

/* Returns LOP_OK after filling r->simulation for p->simulate (nothing when absent); r
 * must hold p's solved case and rule. A stop request returns LOP_OK with
 * r->simulation.interrupted set. LOP_ERUN when memory runs out. */
lop_status lop_simulate_run(const lop_problem *p, lop_results *r, const lop_simulate_control *ctl,
                            lop_error *err);

/* Returns the value at x of the linear interpolation of v over the uniform grid
 * x0 + i·h (i = 0 .. n-1, inv_h = 1/h), flat beyond its ends. */
double lop_simulate_interpolate(const double *v, size_t n, double x0, double inv_h, double x);

/* Returns the index of the point of the uniform grid x0 + i·h (i < n) nearest to x. */
size_t lop_simulate_nearest(size_t n, double x0, double inv_h, double x);

/* Returns the index of the count vector counts (k outcomes) among all count vectors of
 * the same sum, in the order of the rule table: (n, 0, ..., 0) first, then
 * reverse-lexicographic. */
size_t lop_simulate_counts_rank(const size_t *counts, size_t k);

#endif
