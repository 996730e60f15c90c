/* Log-likelihoods of measurements given each state. Log space throughout, so that
 * many repeats or large counts never underflow. A numeric channel's repeats enter the
 * rule as one summary: the mean (gaussian), the mean of the logs shown as the geometric
 * mean (lognormal), or the sum (poisson, binomial). */
#ifndef LOPSIDE_EVIDENCE_H
#define LOPSIDE_EVIDENCE_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/model/problem.h"

/* Returns log P(counts | s) of a table channel: the multinomial over its repeats. */
double lop_evidence_log_counts(const lop_channel *c, size_t s, const size_t *counts);

/* Returns the log-likelihood of the summary x of n repeats of a numeric channel in
 * state s (a density for continuous noise, a probability for counts; -inf if impossible). */
double lop_evidence_log_summary(const lop_channel *c, size_t s, double x, size_t n);

/* Returns P(lo < summary <= hi | s) for n repeats of a continuous numeric channel, and
 * P(lo <= summary < hi | s) for counts (so a switch point at the first count of the new
 * action bounds both intervals); exact, by CDFs over the whole support. */
double lop_evidence_summary_mass(const lop_channel *c, size_t s, double lo, double hi,
                                 size_t n);

/* Returns the summary quantile at probability q in state s (continuous noise), or the
 * smallest count whose CDF reaches q (counts). */
double lop_evidence_summary_quantile(const lop_channel *c, size_t s, double q, size_t n);

/* Returns true when the channel's measurements are counts (poisson, binomial). */
bool lop_evidence_is_count(const lop_channel *c);

/* Per-state constants of a numeric channel's summary likelihood, precomputed so the
 * rule's inner loop over states is a few multiply-adds. */
typedef struct {
    const lop_channel *c;
    size_t n_states, repeats;
    double *a, *b, *k;   /* per state; meaning depends on the noise (see evidence.c) */
    double negligible;   /* log weight below which a posterior term may be dropped */
} lop_evidence_kernel;

/* Returns 0 after filling kern for channel c (n repeats), -1 when memory runs out. */
int lop_evidence_kernel_init(lop_evidence_kernel *kern, const lop_channel *c,
                             size_t n_states, size_t n);

/* Writes logw[s] = logprior[s] + log-likelihood of the summary x in state s, for all s. */
void lop_evidence_kernel_eval(const lop_evidence_kernel *kern, double x,
                              const double *logprior, double *logw);

/* Frees what kern owns. */
void lop_evidence_kernel_clear(lop_evidence_kernel *kern);

/* Adds to ll[s] the log-likelihood of every observed value of every channel. */
void lop_evidence_add_observed(const lop_problem *p, double *ll);

#endif
