/* Private to the simulation modules (simulate.c, simulate_draw.c, simulate_rule.c). */
#ifndef LOPSIDE_SIMULATE_PRIVATE_H
#define LOPSIDE_SIMULATE_PRIVATE_H

#include <stdbool.h>
#include <stddef.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* Finite priors up to this many states are drawn by scanning the cumulative weights;
 * larger ones (grids) by Walker's alias table (gsl_ran_discrete). */
#define SIM_SCAN_STATES 16
/* Table channels with up to this many repeats draw one outcome per repeat; more
 * repeats draw the count vector at once (gsl_ran_multinomial, the same distribution). */
#define SIM_REPEATS_ONE_BY_ONE 32

/* One outcome-table channel, ready to draw from. */
typedef struct {
    size_t k, repeats;
    size_t column;            /* where its counts start in a trial's counts */
    size_t n_vectors;         /* count vectors of `repeats` draws over k outcomes */
    size_t stride;            /* row index = sum over channels of rank · stride */
    double *cum;              /* n_states x k: cumulative P(outcome | state) */
    double *p;                /* n_states x k: P(outcome | state), for the multinomial */
    size_t *last;             /* per state: the last outcome with probability > 0 */
} sim_table;

/* One numeric channel, ready to draw the summary of its repeats from. */
typedef struct {
    const lop_channel *c;
    double *loc, *scale;      /* per state; see sim_draw_init */
    unsigned binomial_n;      /* binomial: trials of the summed count */
} sim_numeric;

/* How a trial is drawn: the state, the outcome counts of every table channel and the
 * summary of every numeric channel's repeats. */
typedef struct {
    const lop_problem *p;
    size_t n_states;
    double *state_cum;        /* scanned priors: cumulative prior */
    size_t state_last;        /* the last state with prior weight */
    gsl_ran_discrete_t *alias;
    size_t n_tables;
    sim_table *tables;
    size_t max_k, n_columns;  /* largest outcome count; outcomes of all table channels */
    bool all_counts;          /* fill every channel's counts (direct decisions need them) */
    size_t n_numeric;
    sim_numeric *numeric;     /* in channel order; the first is the rule's */
    bool track_grid;          /* count measurements beyond [grid_lo, grid_hi] */
    double grid_lo, grid_hi;
} sim_draw;

/* One simulated trial. The arrays are the drawing thread's own. */
typedef struct {
    size_t state;
    size_t row;               /* the outcome combination of the table channels */
    double x;                 /* the first numeric channel's summary (0 when none) */
    double *xs;               /* every numeric channel's summary */
    size_t *counts;           /* every table channel's counts, one channel after another
                                 (channels of one repeat only when all_counts is set) */
    double *work;             /* scratch of direct decisions: 2·n_states + n_actions */
} sim_trial;

/* Returns 0 after preparing d to draw trials of p, -1 when memory runs out. */
int sim_draw_init(sim_draw *d, const lop_problem *p, const lop_rule_result *rule);

/* Frees what d owns. */
void sim_draw_clear(sim_draw *d);

/* Draws one trial into t (whose arrays hold d->n_numeric and d->n_columns entries);
 * scratch holds d->max_k entries. Returns true when the measurement fell beyond the
 * rule's grid (tracked problems only). */
bool sim_draw_trial(const sim_draw *d, gsl_rng *rng, unsigned *scratch, sim_trial *t);

/* How one rule decides, precomputed from the tabulated rule. */
typedef enum {
    SIM_ROW_ACTION,           /* table channels only: an action per row */
    SIM_CUTS,                 /* an action per interval between cut points, per row */
    SIM_GRID_ACTION,          /* counts: the action at the count (nearest grid point) */
    SIM_GRID_INTERPOLATE,     /* estimates: linear between grid points */
    SIM_GRID_NEAREST,         /* estimates: the value at the nearest grid point */
    SIM_DIRECT,               /* no table: the posterior of the trial's measurements */
} sim_kind;

typedef struct {
    sim_kind kind;
    bool estimate;
    bool one_row;             /* SIM_CUTS: the same cuts whatever the row */
    size_t *row_action;       /* SIM_ROW_ACTION: n_rows */
    size_t *first;            /* SIM_CUTS: row r's cuts are cuts[first[r] .. first[r+1]) */
    double *cuts;
    size_t *acts;             /* and its actions acts[first[r] + r .. first[r+1] + r] */
    size_t n_grid;            /* grids: x0 + i·h, i < n_grid */
    double x0, inv_h;
    size_t *grid_action;      /* SIM_GRID_ACTION */
    double *grid_value;       /* SIM_GRID_INTERPOLATE, SIM_GRID_NEAREST */
    const double *snap;       /* interpolated estimates go to the nearest of these */
    size_t n_snap;
    double snap_inv_h;        /* 1 / their spacing when uniform, else 0 */
    const lop_problem *model; /* SIM_DIRECT: the model that decides (true or believed) */
    double *logprior;
} sim_decider;

/* Returns NULL after preparing d for simulated rule m (Bayes or a [rule.NAME]) of p,
 * or the reason it cannot be simulated (a static sentence); *no_memory is set when
 * memory ran out. */
const char *sim_decider_init(sim_decider *d, const lop_problem *p, const lop_results *r,
                             long rule, bool *no_memory);

/* Frees what d owns. */
void sim_decider_clear(sim_decider *d);

/* Returns the action rule d takes on trial t (choices). */
size_t sim_decide_action(const sim_decider *d, const sim_trial *t);

/* Returns the estimate rule d gives on trial t (estimates). */
double sim_decide_estimate(const sim_decider *d, const sim_trial *t);

#endif
