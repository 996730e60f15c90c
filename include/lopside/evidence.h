/* Log-likelihoods of measurements given each state. Log space throughout, so that
 * many repeats or large counts never underflow. */
#ifndef LOPSIDE_EVIDENCE_H
#define LOPSIDE_EVIDENCE_H

#include <stddef.h>

#include "lopside/problem.h"

/* Returns log P(outcome | state s) of one draw of a table channel (-inf when 0). */
double lop_evidence_log_outcome(const lop_channel *c, size_t s, size_t outcome);

/* Returns the log-density of the mean of n repeats, x, given state s (gaussian channel). */
double lop_evidence_log_mean(const lop_channel *c, size_t s, double x, size_t n);

/* Returns log P(counts | s) of a table channel: the multinomial over its repeats. */
double lop_evidence_log_counts(const lop_channel *c, size_t s, const size_t *counts);

/* Adds to ll[s] the log-likelihood of every observed value of every channel. */
void lop_evidence_add_observed(const lop_problem *p, double *ll);

/* Returns the sd of the mean of the channel's repeats in state s. */
double lop_evidence_sd_of_mean(const lop_channel *c, size_t s);

#endif
