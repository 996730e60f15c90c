/* The validated, typed model of a problem file. Every check of the input
 * contract happens here; the engine may assume what this module promises. */
#ifndef LOPSIDE_PROBLEM_H
#define LOPSIDE_PROBLEM_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/config.h"
#include "lopside/error.h"

/* Most outcome combinations a rule table may hold (all channels, all repeats). */
#define LOP_RULE_COMBINATIONS_MAX 1000000

typedef enum { LOP_STATES_LABELS, LOP_STATES_VALUES } lop_states_kind;

typedef enum { LOP_CHANNEL_TABLE, LOP_CHANNEL_GAUSSIAN } lop_channel_kind;

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

    /* LOP_CHANNEL_GAUSSIAN: one measurement is N(mean[s], sd[s]) */
    double *mean;
    double *sd;
    bool grid_given;         /* grid_from/grid_to were in the file */
    double grid_from, grid_to;
    size_t grid_points;

    /* the case at hand: 0 or `repeats` observations */
    size_t n_observed;
    size_t *observed_outcome;  /* table channels */
    double *observed_value;    /* gaussian channels */
} lop_channel;

typedef struct {
    char *path;              /* the problem file, as given */
    char *title, *notes, *unit, *score_unit;

    lop_states_kind states_kind;
    size_t n_states;
    char **state_labels;     /* for values: the numbers as written */
    double *state_values;    /* LOP_STATES_VALUES only */

    double *prior;           /* normalized */
    double prior_given_sum;  /* sum of the weights as written */

    size_t n_channels;
    lop_channel *channels;

    size_t n_actions;
    char **actions;

    bool payoff;             /* the file gave [payoff]; reports keep that orientation */
    double *loss;            /* n_actions x n_states, always as a loss (payoff negated) */

    char *out_json, *out_csv, *out_workbook;  /* from [output], relative to the file */
} lop_problem;

/* Returns a validated problem built from cfg, or NULL with err set. */
lop_problem *lop_problem_build(const lop_config *cfg, lop_error *err);

/* Returns the loss of action a in state s. */
static inline double lop_problem_loss(const lop_problem *p, size_t a, size_t s)
{
    return p->loss[a * p->n_states + s];
}

/* Returns the number of channels whose measurement is a number rather than a label. */
size_t lop_problem_numeric_channels(const lop_problem *p);

/* Returns the word for the file's orientation: "loss" or "payoff". */
const char *lop_problem_orientation(const lop_problem *p);

/* Returns v in the file's orientation: a loss as is, a payoff with its sign flipped. */
double lop_problem_oriented(const lop_problem *p, double loss);

/* Frees p; NULL is a no-op. */
void lop_problem_free(lop_problem *p);

#endif
