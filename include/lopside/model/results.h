/* Everything the engine computed, as plain data. Writers only read it.
 * Scores are stored as losses; writers turn them to the file's orientation. */
#ifndef LOPSIDE_RESULTS_H
#define LOPSIDE_RESULTS_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/model/problem.h"

typedef struct {
    double *posterior;        /* n_states */
    double *log_likelihood;   /* n_states: of the observed values (0 with none) */
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

/* One rule's simulated sessions ([simulate]). Unlike the rest of the model, these numbers
 * are in the file's orientation (payoffs for a [payoff] file), as they are reported:
 * percentiles and histograms of payoffs are not those of losses with a sign flipped. */
typedef struct {
    const char *name;         /* "bayes" or the [rule.NAME] name (borrowed) */
    long rule;                /* -1: the Bayes rule; else an index into the problem's rules */
    bool simulated;
    char *not_simulated_why;  /* set when the rule could not be simulated */
    bool has_analytic;        /* the engine computed this rule's risk */
    double analytic;          /* that risk per trial, oriented */
    double mean_per_trial, sd_per_trial;
    double ci95[2];           /* 95% interval of the mean per trial (low, high) */
    double mean_per_session;
    double session_ci95[2];
    double p05, p50, p95;     /* percentiles of the session totals (linear interpolation) */
    double below_floor;       /* share of sessions whose total is below the floor */
    /* choices: trials per state and choices per action and state (grid states: one
     * column holding every trial) */
    size_t n_rate_states;
    size_t *state_trials;     /* n_rate_states */
    size_t *choices;          /* n_actions x n_rate_states */
    /* estimates: mean error (estimate - state) and mean absolute error, in state units */
    double mean_error, mean_absolute_error;
    /* histogram of the session totals: counts[i] of them in [edges[i], edges[i+1]), bins
     * of a round width covering every total */
    size_t n_bins;
    double *edges;            /* n_bins + 1 */
    size_t *counts;           /* n_bins */
} lop_simulated_rule;

typedef struct {
    bool run;                 /* [simulate] was given and every block ran */
    bool interrupted;         /* stopped on request: nothing may be reported */
    size_t sessions, trials;
    unsigned long seed;
    bool floor_given;
    double floor;
    size_t n_rules;
    lop_simulated_rule *rules;
    size_t outside_grid;      /* trials whose measurement fell beyond the rule's grid,
                                 decided as at its nearest end */
    double seconds;           /* wall time of the simulated trials (no set-up) */
    int threads;
} lop_simulation;

/* Flatness: the settings (thresholds, estimates) whose expected loss stays within
 * 1%, 5% and 10% of the optimum's magnitude, so a reader sees how strongly the
 * schedule pulls towards the optimum. */
#define LOP_FLAT_LEVELS 3
typedef struct {
    double within;            /* 0.01, 0.05, 0.10 */
    double from, to;          /* -inf / +inf: the range runs on without end */
} lop_flat_range;

typedef struct {
    bool computed;
    double at;                /* the optimal setting */
    double optimum;           /* its expected loss */
    lop_flat_range range[LOP_FLAT_LEVELS];
} lop_flatness;

/* [value]: the expected value of sample information of n more measurements. */
typedef struct {
    size_t channel;           /* index into the problem's channels */
    size_t n;                 /* measurements beyond the design's repeats */
    bool computed;
    char *not_computed_why;
    bool on_the_mean;         /* decided on the mean of the repeats, which is not
                                 sufficient (scalar noise, or a spread that differs
                                 between states): evsi is then a lower bound */
    double evsi;              /* Bayes risk as given minus Bayes risk with n more */
    double net;               /* evsi - n·cost */
} lop_value_extra;

/* The value of one more measurement of a channel for the case at hand. */
typedef struct {
    size_t channel;
    bool computed;
    char *not_computed_why;
    double value;
} lop_value_next;

typedef struct {
    bool present;             /* the file has [value] */
    bool computed;
    char *not_computed_why;
    double evpi;              /* Bayes risk as given minus the loss with the state known */
    size_t n_extra;
    lop_value_extra *extra;   /* per priced channel, n = 1 .. up_to */
    bool has_best;            /* some net value is positive */
    size_t best_channel, best_n;
    double best_net;
    size_t n_next;
    lop_value_next *next;     /* per priced channel */
} lop_value_result;

/* One point of a sweep. Losses as everywhere; writers orient them. */
typedef struct {
    double x, y;
    bool computed;            /* the rule (or, threshold sweeps, the threshold) was solved */
    double bayes_risk;        /* the rule's risk (prior-only risk without evidence) */
    double evpi;              /* bayes_risk minus the loss with the state known */
    size_t case_action;       /* choices: the case's Bayes action */
    double case_estimate;     /* estimates: the case's Bayes estimate */
    double *rates;            /* choices: P(a | s) at a·n_states + s (finite states) or
                                 P(a) at a (grid states); NULL when not computed */
    lop_switch_point *switches;
    size_t n_switches;
    lop_flatness flatness;    /* estimates: of the case's estimate curve */
    /* rule.threshold sweeps */
    double expected_loss;     /* of deciding by the threshold x */
    double criterion, beta;   /* signal detection: c and beta of the threshold */
} lop_sweep_point;

/* A threshold sweep's Bayes threshold for one value of y (one row for one axis). */
typedef struct {
    double y;
    bool has_bayes_threshold; /* some threshold beats always choosing one action */
    double bayes_threshold;   /* the threshold of least expected loss */
    double bayes_threshold_loss;
    double bayes_risk;        /* of the Bayes rule at this y */
    lop_flatness flatness;    /* thresholds around the Bayes threshold */
    bool sdt;                 /* two labelled states, equal-variance gaussian evidence */
    double d_prime;
} lop_threshold_row;

typedef struct {
    const lop_sweep_spec *spec;   /* borrowed from the problem */
    bool threshold;               /* x is rule.threshold */
    bool by_state;                /* rates are per action and state (finite states) */
    size_t n_rates;               /* numbers per point in rates */
    size_t nx, ny;                /* ny = 1 for one axis; points run x fastest */
    lop_sweep_point *points;      /* nx·ny */
    lop_threshold_row *rows;      /* threshold sweeps: ny */
} lop_sweep_result;

/* [design.NAME]: the value of a path that meets a goal, or what the goal spans. */
typedef struct {
    const lop_design_spec *spec;  /* borrowed from the problem */
    bool reached;
    double value;             /* the setting that meets the goal (reached) */
    double achieved;          /* the goal's quantity there, in the file's orientation */
    double range_lo, range_hi;/* the goal's quantity over the bracket (not reached) */
    size_t n_seen;
    size_t *seen;             /* action goals: the case's Bayes actions over the bracket */
    char *note;               /* why not reached, when more than "outside the range" */
    size_t evaluations;       /* problems solved */
} lop_design_result;

/* How close the reported numbers are to the continuous model ([problem] accuracy). */
#define LOP_QUANTITY_NAME 96
typedef struct {
    char name[LOP_QUANTITY_NAME];  /* e.g. "rule.bayes_risk" */
    double error;             /* estimated error, in the number's own unit */
    double allowed;           /* accuracy times the number's scale */
} lop_accuracy_miss;

typedef struct {
    bool estimated;           /* grids were compared (else nothing rests on a grid) */
    double asked;             /* [problem] accuracy */
    double reached;           /* largest estimated error relative to its scale */
    char worst[LOP_QUANTITY_NAME];  /* the number with that error ("" if none) */
    double worst_error;       /* its estimated error, in its own unit */
    size_t compared;          /* numbers compared between the grids */
    size_t unmatched;         /* numbers present on one grid only (e.g. a switch point) */
    size_t n_missed;
    lop_accuracy_miss *missed;/* numbers whose estimated error exceeds what is allowed */
    size_t state_points;      /* the state grid solved on (0: no state grid) */
    int refine;               /* [problem] refine of that grid */
    double score_scale, state_range, measurement_span;  /* the scales of the contract */
    size_t n_clamped;         /* numbers set onto a bound they passed within accuracy */
    size_t solves;            /* engine solves it took */
    double seconds;           /* their wall time, with the comparisons */
    double seconds_first;     /* the wall time of the first: one solve on the file's grids */
} lop_accuracy;

typedef struct {
    lop_case_result kase;
    bool has_rule;            /* the problem has evidence */
    lop_rule_result rule;
    lop_compared_rule *compared;  /* one per problem rule */
    size_t n_compared;
    char **warnings;
    size_t n_warnings;
    lop_simulation simulation;  /* [simulate], filled by lop_simulate_run */
    lop_flatness case_flatness; /* estimates: the case's estimate curve */
    lop_value_result value;     /* [value] */
    size_t n_sweeps;
    lop_sweep_result *sweeps;   /* one per [sweep.NAME] */
    size_t n_designs;
    lop_design_result *designs; /* one per [design.NAME] */
    double seconds_case, seconds_rule;  /* wall time of each part, for benchmarks */
    lop_accuracy accuracy;      /* filled by lop_accuracy_solve */
} lop_results;

/* Returns empty results sized for p, or NULL when memory runs out. */
lop_results *lop_results_new(const lop_problem *p);

/* Returns 0 after adding a formatted warning, -1 when memory runs out. */
int lop_results_warn(lop_results *r, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Frees r; NULL is a no-op. */
void lop_results_free(lop_results *r);

#endif
