/* Everything the engine computed, as plain data. Writers only read it.
 * Scores are stored as losses; writers turn them to the file's orientation. */
#ifndef LOPSIDE_RESULTS_H
#define LOPSIDE_RESULTS_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/problem.h"

typedef struct {
    double *posterior;        /* n_states */
    double *expected_loss;    /* n_actions */
    size_t bayes_action;
    size_t runner_up;         /* best of the other actions */
    double margin;            /* expected loss of runner_up minus that of bayes_action */
    size_t *tied;             /* actions tied with the Bayes action, bayes_action first */
    size_t n_tied;
    double evpi;              /* expected value of perfect information for the case */
} lop_case_result;

typedef struct {
    double x;                 /* measurement where the Bayes action changes */
    size_t from, to;          /* action below and above x */
    size_t row;               /* outcome combination of the table channels it belongs to */
} lop_switch_point;

typedef struct {
    bool computed;
    char *not_computed_why;   /* set when the rule could not be computed */

    /* Rows: every combination of outcome counts of the table channels (1 row if none). */
    size_t n_rows;
    size_t n_columns;         /* sum of outcomes over table channels */
    size_t *counts;           /* n_rows x n_columns */
    double *row_probability;  /* P(row) before any evidence */
    size_t *row_action;       /* Bayes action per row (no numeric channel) */
    double *row_expected_loss;/* expected loss of that action given the row */

    /* The numeric channel, when there is one. */
    long numeric_channel;     /* index into problem channels, -1 if none */
    size_t n_grid;
    double *grid;             /* measurement points (mean of the repeats) */
    size_t *grid_action;      /* n_rows x n_grid */
    lop_switch_point *switches;
    size_t n_switches;

    double bayes_risk;
    double prior_only_risk;
    size_t prior_only_action;
} lop_rule_result;

typedef struct {
    lop_case_result kase;
    bool has_rule;            /* the problem has evidence */
    lop_rule_result rule;
    char **warnings;
    size_t n_warnings;
} lop_results;

/* Returns empty results sized for p, or NULL when memory runs out. */
lop_results *lop_results_new(const lop_problem *p);

/* Returns 0 after adding a formatted warning, -1 when memory runs out. */
int lop_results_warn(lop_results *r, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Frees r; NULL is a no-op. */
void lop_results_free(lop_results *r);

#endif
