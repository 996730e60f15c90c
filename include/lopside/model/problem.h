/* The validated, typed model of a problem file. Every check of the input
 * contract happens here; the engine may assume what this module promises. */
#ifndef LOPSIDE_PROBLEM_H
#define LOPSIDE_PROBLEM_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/input/config.h"
#include "lopside/input/path.h"
#include "lopside/model/curve.h"
#include "lopside/model/posterior.h"
#include "lopside/util/error.h"

/* Most outcome combinations a rule table may hold (all channels, all repeats), and most
 * numbers in it (combinations x (outcome counts + states)): about 160 MB. */
#define LOP_RULE_COMBINATIONS_MAX 1000000
#define LOP_RULE_CELLS_LIMIT 20000000
/* The most and fewest halvings of the grids that [problem] refine may ask for (the key
 * table, keys.c, states the same range). */
#define LOP_REFINE_MAX 20
#define LOP_REFINE_MIN (-2)
/* Most cells of a state grid unless the file raises it with [states] max_points. */
#define LOP_GRID_POINTS_LIMIT 1000000

typedef enum { LOP_STATES_LABELS, LOP_STATES_VALUES, LOP_STATES_GRID } lop_states_kind;

typedef enum { LOP_CHANNEL_TABLE, LOP_CHANNEL_NOISE } lop_channel_kind;

typedef enum {
    LOP_NOISE_GAUSSIAN,
    LOP_NOISE_SCALAR,
    LOP_NOISE_LOGNORMAL,
    LOP_NOISE_POISSON,
    LOP_NOISE_BINOMIAL,
} lop_noise;

typedef struct {
    char *name;              /* NAME of [evidence.NAME], "" for [evidence] */
    char *section;           /* the section as written */
    int line;                /* line of the section header */
    lop_channel_kind kind;
    size_t repeats;

    /* LOP_CHANNEL_TABLE */
    size_t n_outcomes;
    char **outcomes;
    double *given;           /* n_states x n_outcomes, P(outcome | state) */

    /* LOP_CHANNEL_NOISE: per state, the location of one measurement (r(s), or the
     * mean given per state) and its spread (sd, or sd of the log for lognormal). */
    lop_noise noise;
    double *center;
    double *spread;
    double window;           /* poisson: counting window */
    size_t trials;           /* binomial: trials per measurement */
    bool grid_given;         /* grid_from/grid_to were in the file */
    double grid_from, grid_to;
    size_t grid_points;
    bool grid_points_given;  /* grid_points was in the file (else lopside may refine it) */

    /* the case at hand: 0 or `repeats` observations */
    size_t n_observed;
    size_t *observed_outcome;  /* table channels */
    double *observed_value;    /* noise channels */
} lop_channel;

typedef enum { LOP_RULE_KIND_MEAN, LOP_RULE_KIND_MEDIAN, LOP_RULE_KIND_MODE,
               LOP_RULE_KIND_MAX_LIKELIHOOD, LOP_RULE_KIND_THRESHOLD,
               LOP_RULE_KIND_BELIEVED } lop_rule_kind;

struct lop_problem;

/* [value]: the value of extra measurements. */
typedef struct {
    bool present;
    int line;
    size_t n_channels;
    size_t *channels;        /* indices into the problem's channels */
    size_t up_to;            /* extra repeats to price (default 5) */
    double cost;             /* per extra measurement, in score units (default 0) */
} lop_value_spec;

/* [sweep.NAME]: re-solve along one or two paths. */
typedef struct {
    char *name;
    int line;
    char *x;                 /* a path, or "rule.threshold" */
    lop_path x_path, y_path; /* parsed (x_path unless x is rule.threshold; y_path with y) */
    double x_from, x_to;
    size_t x_points;         /* default 21 */
    char *y;                 /* NULL for a one-axis sweep */
    double y_from, y_to;
    size_t y_points;
    int x_line, y_line;      /* lines of the x and y keys, for errors at a point */
} lop_sweep_spec;

typedef enum { LOP_GOAL_SWITCH_POINT, LOP_GOAL_CHOICE_RATE, LOP_GOAL_RISK,
               LOP_GOAL_ACTION } lop_goal;

/* [design.NAME]: the value of a path that meets a goal. */
typedef struct {
    char *name;
    int line;
    char *vary;              /* a path */
    lop_path vary_path;      /* parsed */
    int vary_line;
    double from, to;         /* the bracket */
    lop_goal goal;
    size_t goal_action;      /* choice_rate.ACTION, or the action of an `action` goal */
    double equals;           /* the target (switch point, rate, risk) */
} lop_design_spec;

/* [simulate]: sessions of trials decided by the Bayes rule and other rules. */
typedef struct {
    bool present;
    int line;
    size_t sessions, trials;
    unsigned long seed;
    bool floor_given;
    double floor;            /* sessions whose total falls below it (file orientation) */
    size_t n_rules;
    long *rules;             /* -1 for the Bayes rule, else an index into problem rules */
} lop_simulate_spec;

/* Another way to decide, compared with the Bayes rule ([rule.NAME]). */
typedef struct {
    char *name;
    int line;
    lop_rule_kind kind;
    double at;                    /* threshold */
    struct lop_problem *believed; /* believed: the problem as the decider believes it */
} lop_rule_spec;

typedef struct lop_problem {
    char *path;              /* the problem file, as given */
    char *title, *notes, *unit, *score_unit;
    double accuracy;         /* [problem] accuracy: asked of every reported number */
    int refine;              /* [problem] refine: times the grids' steps are halved (-1, -2:
                                doubled, quadrupled: the accuracy check's companions) */

    lop_states_kind states_kind;
    size_t n_states;
    char **state_labels;     /* values and grid: the numbers as text */
    double *state_values;    /* values and grid states */
    double step;             /* grid spacing (grid states) */

    double *prior;           /* normalized; far tails may underflow to 0 */
    double *log_prior;       /* its logs, exact where prior underflows: use these */
    double prior_given_sum;  /* sum of the weights as written (finite states) */
    double prior_outside;    /* prior mass beyond the grid (grid states) */
    lop_summary prior_summary;   /* grid states: the prior's summary on the grid */

    size_t n_channels;
    lop_channel *channels;

    /* Actions: named choices, or estimates of the state. */
    bool estimate;
    size_t n_actions;
    char **actions;          /* choices: labels; estimates: NULL */
    double *estimates;       /* estimates: the grid the expected loss is shown on */
    size_t n_estimates;
    bool estimates_given;    /* the file gave an estimate grid: the estimate is one of its
                                points; else any real number, and the grid is the states' */

    bool payoff;             /* the file gave [payoff]; reports keep that orientation */
    double *loss;            /* choices: n_actions x n_states, always a loss; a grid cell
                                split by a cut holds the mass-weighted mean of its bands */
    double *perfect;         /* choices over bands: per cell, the loss with the state known
                                (the mean over its bands of the least loss); NULL: the
                                least of the cell's losses */
    lop_curve curve;         /* estimates: the loss curve (payoffs negated) */
    int curve_line;          /* estimates: line of the `curve` key */
    double *curve_error, *curve_value; /* owned knots of a `points` curve */

    size_t n_rules;
    lop_rule_spec *rules;

    lop_value_spec value;
    size_t n_sweeps;
    lop_sweep_spec *sweeps;
    size_t n_designs;
    lop_design_spec *designs;
    lop_simulate_spec simulate;

    lop_config *source;      /* a copy of the file, to re-build changed problems from */

    char *out_json, *out_csv, *out_workbook;  /* from [output], relative to the file */
} lop_problem;

/* Returns buf holding a short name of sweep w's axis ('x' or 'y'): the last part of its
 * path ("say_yes[1]"), or "threshold" for rule.threshold. */
const char *lop_sweep_axis_label(const lop_sweep_spec *w, char axis, char *buf, size_t size);

/* The same in a buffer of the enclosing block, for use inside a printf. */
#define LOP_SWEEP_AXIS(w, axis)                                                            \
    lop_sweep_axis_label((w), (axis), (char[LOP_PATH_PART + 24]){0}, LOP_PATH_PART + 24)

/* Returns a validated problem built from cfg, or NULL with err set. */
lop_problem *lop_problem_build(const lop_config *cfg, lop_error *err);

/* Returns the model of cfg alone: the problem without its [rule.NAME], [value], sweeps,
 * designs, [simulate] or outputs, as sweeps, designs and the value of information
 * re-solve it after changing entries; NULL with err set. */
lop_problem *lop_problem_build_model(const lop_config *cfg, lop_error *err);

/* Returns the loss of choice a in state s (choices only). */
static inline double lop_problem_loss(const lop_problem *p, size_t a, size_t s)
{
    return p->loss[a * p->n_states + s];
}

/* Returns the number of cells a grid of `cells` cells gets at [problem] refine level
 * `refine`: cells·2^refine, rounded up (at least 1) below 0. */
double lop_problem_refined_cells(double cells, int refine);

/* Returns true when states are numbers (values or a grid). */
bool lop_problem_numeric_states(const lop_problem *p);

/* Returns the number of channels whose measurement is a number rather than a label. */
size_t lop_problem_numeric_channels(const lop_problem *p);

/* Returns the name of a rule kind as the file spells it, e.g. "posterior_mean". */
const char *lop_rule_kind_name(lop_rule_kind kind);

/* Returns the word for the file's orientation: "loss" or "payoff". */
const char *lop_problem_orientation(const lop_problem *p);

/* Returns v in the file's orientation: a loss as is, a payoff with its sign flipped. */
double lop_problem_oriented(const lop_problem *p, double loss);

/* Frees p; NULL is a no-op. */
void lop_problem_free(lop_problem *p);

#endif
