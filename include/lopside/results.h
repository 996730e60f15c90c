/* Everything the engine computed, as plain data. Writers only read it.
 * Scores are stored as losses; writers turn them to the file's orientation. */
#ifndef LOPSIDE_RESULTS_H
#define LOPSIDE_RESULTS_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/problem.h"

/* A distribution over numeric states, in the state's unit. */
typedef struct {
    double mean, sd, median, mode, q05, q95;
} lop_summary;

typedef struct {
    double *posterior;        /* n_states */
    bool numeric;             /* numeric states: summary is set */
    lop_summary summary;
    /* choices */
    double *expected_loss;    /* n_actions */
    size_t bayes_action;
    size_t runner_up;         /* best of the other actions */
    double margin;            /* expected loss of runner_up minus that of bayes_action */
    size_t *tied;             /* actions tied with the Bayes action, bayes_action first */
    size_t n_tied;
    double evpi;              /* expected value of perfect information for the case */
    /* estimates */
    double bayes_estimate;
    double bayes_estimate_loss;   /* its expected loss */
    double *estimate_curve;       /* expected loss of every estimate of the estimate grid */
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
    double *grid_estimate;    /* estimates: the Bayes estimate at each grid point */
    double *grid_weight;      /* P(measurement cell) before any evidence (generic path) */
    double *grid_loss;        /* posterior expected loss of the decision at each point */
    bool count_grid;          /* the grid is the whole numbers of a count channel */
    double coverage;          /* sum of grid_weight: predictive mass on the grid */
    bool exact;               /* risk integrated exactly (finite states, gaussian) */
    lop_switch_point *switches;
    size_t n_switches;

    double bayes_risk;
    double prior_only_risk;
    size_t prior_only_action;
} lop_rule_result;

/* A [rule.NAME] judged under the true problem. */
typedef struct {
    const char *name;         /* borrowed from the problem */
    bool computed;
    char *not_computed_why;
    double risk;
    double regret;            /* risk minus the Bayes risk, >= 0 up to grid error */
    double *grid_decision;    /* per grid point: action index or estimate (generic path) */
} lop_compared_rule;

typedef struct {
    lop_case_result kase;
    bool has_rule;            /* the problem has evidence */
    lop_rule_result rule;
    lop_compared_rule *compared;  /* one per problem rule */
    size_t n_compared;
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
