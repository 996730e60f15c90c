/* How a simulated trial is decided: by looking the rule up in what the engine tabulated.
 * Finite problems on the exact path: the row of outcome counts, then the switch points of
 * that row (binary search). Grid problems: switch points for continuous choices, the
 * exact count for count channels, linear interpolation of estimates between grid points.
 * Other rules: a threshold is one switch point; a believed rule on the exact path has the
 * switch points of its own Bayes rule, on the grid path those located between the grid
 * points where its decision changes. Finite-state choices whose rule the engine could not
 * tabulate are decided trial by trial from the posterior of the trial's measurements. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/util/interp.h"
#include "lopside/engine/decide.h"
#include "lopside/model/evidence.h"
#include "lopside/model/posterior.h"
#include "lopside/engine/rule.h"
#include "lopside/studies/simulate.h"
#include "simulate_private.h"

/* Bisection steps that locate a believed rule's switch point between two grid points:
 * 2^-60 of a cell, below the spacing of doubles near it. */
#define BISECTION_STEPS 60

double lop_simulate_interpolate(const double *v, size_t n, double x0, double inv_h, double x)
{
    double u = (x - x0) * inv_h;
    if (!(u > 0) || n < 2)
        return v[0];
    if (u >= (double)(n - 1))
        return v[n - 1];
    size_t i = (size_t)u;
    double t = u - (double)i;
    return v[i] + t * (v[i + 1] - v[i]);
}

size_t lop_simulate_nearest(size_t n, double x0, double inv_h, double x)
{
    double u = (x - x0) * inv_h + 0.5;
    if (!(u > 0) || n < 2)
        return 0;
    if (u >= (double)(n - 1))
        return n - 1;
    return (size_t)u;
}

void sim_decider_clear(sim_decider *d)
{
    free(d->row_action);
    free(d->first);
    free(d->cuts);
    free(d->acts);
    free(d->grid_action);
    free(d->grid_value);
    free(d->logprior);
    memset(d, 0, sizeof *d);
}

/* The Bayes action of model q given every measurement of trial t: log prior plus the
 * log-likelihood of each table channel's counts and each numeric channel's summary
 * (evidence.c), normalized by log-sum-exp. O(S·channels + S·A). */
static size_t direct_action(const sim_decider *d, const sim_trial *t)
{
    const lop_problem *q = d->model;
    size_t S = q->n_states;
    double *logw = t->work, *post = logw + S, *el = post + S;
    memcpy(logw, d->logprior, S * sizeof *logw);
    for (size_t i = 0, col = 0, j = 0; i < q->n_channels; i++) {
        const lop_channel *c = &q->channels[i];
        if (c->kind == LOP_CHANNEL_TABLE) {
            for (size_t s = 0; s < S; s++)
                logw[s] += lop_evidence_log_counts(c, s, &t->counts[col]);
            col += c->n_outcomes;
        } else {
            for (size_t s = 0; s < S; s++)
                logw[s] += lop_evidence_log_summary(c, s, t->xs[j], c->repeats);
            j++;
        }
    }
    lop_posterior_normalize(logw, S, post);
    lop_decide_expected(q, post, el);
    return lop_decide_best(el, q->n_actions);
}

size_t sim_decide_action(const sim_decider *d, const sim_trial *t)
{
    switch (d->kind) {
    case SIM_DIRECT:
        return direct_action(d, t);
    case SIM_ROW_ACTION:
        return d->row_action[t->row];
    case SIM_CUTS: {
        size_t row = d->one_row ? 0 : t->row;
        size_t f = d->first[row], n = d->first[row + 1] - f;
        return d->acts[f + row + lop_count_at_most(d->cuts + f, n, t->x)];
    }
    case SIM_GRID_ACTION:
        return d->grid_action[lop_simulate_nearest(d->n_grid, d->x0, d->inv_h, t->x)];
    case SIM_GRID_INTERPOLATE:
    case SIM_GRID_NEAREST:
        break;
    }
    return 0;
}

/* The point of the estimate grid nearest to x. A uniform grid gives the index in one
 * step (its neighbours settle what rounding leaves); others by binary search. */
static double snap_to(const sim_decider *d, double x)
{
    const double *v = d->snap;
    size_t n = d->n_snap, i;
    if (d->snap_inv_h > 0) {
        i = lop_simulate_nearest(n, v[0], d->snap_inv_h, x);
    } else {
        i = lop_count_at_most(v, n, x);
        i = i == n ? n - 1 : i;
    }
    if (i > 0 && fabs(x - v[i - 1]) <= fabs(x - v[i]))
        i--;
    else if (i + 1 < n && fabs(x - v[i + 1]) < fabs(x - v[i]))
        i++;
    return v[i];
}

double sim_decide_estimate(const sim_decider *d, const sim_trial *t)
{
    if (d->kind != SIM_GRID_INTERPOLATE)
        return d->grid_value[lop_simulate_nearest(d->n_grid, d->x0, d->inv_h, t->x)];
    double e = lop_simulate_interpolate(d->grid_value, d->n_grid, d->x0, d->inv_h, t->x);
    return d->snap ? snap_to(d, e) : e;
}

/* Cut points and actions of every row of a tabulated rule (exact or grid path). */
static int cuts_from_rule(sim_decider *d, const lop_rule_result *rule)
{
    size_t n_rows = rule->n_rows, n_sw = rule->n_switches;
    d->kind = SIM_CUTS;
    d->first = malloc((n_rows + 1) * sizeof *d->first);
    d->cuts = malloc((n_sw ? n_sw : 1) * sizeof *d->cuts);
    d->acts = malloc((n_sw + n_rows) * sizeof *d->acts);
    d->one_row = n_rows == 1;
    if (!d->first || !d->cuts || !d->acts)
        return -1;
    size_t k = 0;
    for (size_t row = 0; row < n_rows; row++) {
        d->first[row] = k;
        d->acts[k + row] = k < n_sw && rule->switches[k].row == row
                               ? rule->switches[k].from
                               : rule->grid_action[row * rule->n_grid];
        while (k < n_sw && rule->switches[k].row == row) {
            d->cuts[k] = rule->switches[k].x;
            d->acts[k + row + 1] = rule->switches[k].to;
            k++;
        }
    }
    d->first[n_rows] = k;
    return 0;
}

/* One cut at `at`, the same for every row: action 0 below, action 1 at or above. */
static int threshold_cuts(sim_decider *d, double at)
{
    d->kind = SIM_CUTS;
    d->one_row = true;
    d->first = malloc(2 * sizeof *d->first);
    d->cuts = malloc(sizeof *d->cuts);
    d->acts = malloc(2 * sizeof *d->acts);
    if (!d->first || !d->cuts || !d->acts)
        return -1;
    d->first[0] = 0;
    d->first[1] = 1;
    d->cuts[0] = at;
    d->acts[0] = 0;
    d->acts[1] = 1;
    return 0;
}

static void set_grid(sim_decider *d, const lop_rule_result *rule)
{
    d->n_grid = rule->n_grid;
    d->x0 = rule->grid[0];
    double h = rule->n_grid > 1
                   ? (rule->grid[rule->n_grid - 1] - rule->grid[0]) / (double)(rule->n_grid - 1)
                   : 0;
    d->inv_h = h > 0 ? 1 / h : 0;
}

/* Grid decisions as values (estimates) or actions (choices on counts). */
static int grid_values(sim_decider *d, const lop_rule_result *rule, const double *values,
                       const size_t *actions, bool estimate, sim_kind kind)
{
    set_grid(d, rule);
    d->kind = kind;
    if (estimate) {
        d->grid_value = malloc(rule->n_grid * sizeof *d->grid_value);
        if (!d->grid_value)
            return -1;
        memcpy(d->grid_value, values, rule->n_grid * sizeof *values);
        return 0;
    }
    d->grid_action = malloc(rule->n_grid * sizeof *d->grid_action);
    if (!d->grid_action)
        return -1;
    for (size_t i = 0; i < rule->n_grid; i++)
        d->grid_action[i] = actions ? actions[i] : (size_t)values[i];
    return 0;
}

/* A believed problem deciding on the shared measurement: its own posterior. */
typedef struct {
    const lop_problem *bp;
    lop_evidence_kernel kern;
    double *logprior, *logw, *post, *el;
} believed_eval;

static size_t believed_action(believed_eval *b, double x)
{
    lop_evidence_kernel_eval(&b->kern, x, b->logprior, b->logw);
    lop_posterior_normalize(b->logw, b->bp->n_states, b->post);
    lop_decide_expected(b->bp, b->post, b->el);
    return lop_decide_best(b->el, b->bp->n_actions);
}

/* Switch points of a believed rule on the grid path: where its decision changes between
 * two grid points, bisection on its own Bayes decision. */
static int believed_grid_cuts(sim_decider *d, const lop_problem *bp, const lop_rule_result *rule,
                              const double *decision)
{
    const lop_channel *c = NULL;
    for (size_t i = 0; i < bp->n_channels; i++)
        if (bp->channels[i].kind == LOP_CHANNEL_NOISE)
            c = &bp->channels[i];
    believed_eval b = {.bp = bp};
    size_t m = rule->n_grid, n_sw = 0;
    for (size_t i = 1; i < m; i++)
        n_sw += decision[i] != decision[i - 1];
    int st = -1;
    b.logprior = malloc(bp->n_states * sizeof *b.logprior);
    b.logw = malloc(bp->n_states * sizeof *b.logw);
    b.post = malloc(bp->n_states * sizeof *b.post);
    b.el = malloc(bp->n_actions * sizeof *b.el);
    d->kind = SIM_CUTS;
    d->one_row = true;
    d->first = malloc(2 * sizeof *d->first);
    d->cuts = malloc((n_sw ? n_sw : 1) * sizeof *d->cuts);
    d->acts = malloc((n_sw + 1) * sizeof *d->acts);
    if (!c || !b.logprior || !b.logw || !b.post || !b.el || !d->first || !d->cuts || !d->acts ||
        lop_evidence_kernel_init(&b.kern, c, bp->n_states, c->repeats) != 0)
        goto done;
    for (size_t s = 0; s < bp->n_states; s++)
        b.logprior[s] = bp->log_prior[s];
    d->first[0] = 0;
    d->first[1] = n_sw;
    d->acts[0] = (size_t)decision[0];
    for (size_t i = 1, k = 0; i < m; i++) {
        if (decision[i] == decision[i - 1])
            continue;
        size_t a = (size_t)decision[i - 1];
        double lo = rule->grid[i - 1], hi = rule->grid[i];
        for (int it = 0; it < BISECTION_STEPS; it++) {
            double mid = 0.5 * (lo + hi);
            if (believed_action(&b, mid) == a)
                lo = mid;
            else
                hi = mid;
        }
        d->cuts[k] = 0.5 * (lo + hi);
        d->acts[++k] = (size_t)decision[i];
    }
    st = 0;
done:
    lop_evidence_kernel_clear(&b.kern);
    free(b.logprior);
    free(b.logw);
    free(b.post);
    free(b.el);
    return st;
}

/* Direct decisions by model q on the measurements of p: q must read them the same way
 * (the same channels, kinds and outcomes); finite states and choices only, where a
 * posterior per trial is a few dozen operations. */
static const char *direct(sim_decider *d, const lop_problem *p, const lop_problem *q,
                          bool *no_memory)
{
    if (p->states_kind == LOP_STATES_GRID || p->estimate)
        return "the rule table was not computed, and deciding every simulated trial from "
               "its posterior is done for finite states and choices only";
    bool same = q->n_channels == p->n_channels;
    for (size_t i = 0; same && i < p->n_channels; i++)
        same = q->channels[i].kind == p->channels[i].kind &&
               q->channels[i].n_outcomes == p->channels[i].n_outcomes;
    if (!same)
        return "the believed problem reads the measurements differently";
    d->kind = SIM_DIRECT;
    d->model = q;
    d->logprior = malloc(q->n_states * sizeof *d->logprior);
    if (!d->logprior) {
        *no_memory = true;
        return NULL;
    }
    for (size_t s = 0; s < q->n_states; s++)
        d->logprior[s] = q->log_prior[s];
    return NULL;
}

/* The same rows: the same table channels with the same count vectors, in the same order. */
static bool same_rows(const lop_rule_result *a, const lop_rule_result *b)
{
    if (a->n_rows != b->n_rows || a->n_columns != b->n_columns ||
        (a->numeric_channel < 0) != (b->numeric_channel < 0))
        return false;
    return a->n_columns == 0 ||
           memcmp(a->counts, b->counts, a->n_rows * a->n_columns * sizeof *a->counts) == 0;
}

/* A believed rule on the exact path: the believed problem's own rule, row by row. */
static const char *believed_exact(sim_decider *d, const lop_problem *bp, const lop_results *r,
                                  bool *no_memory)
{
    lop_results *br = lop_results_new(bp);
    lop_error err = {0};
    const char *why = NULL;
    if (!br) {
        *no_memory = true;
        return NULL;
    }
    if (lop_rule_solve(bp, br, &err) != LOP_OK) {
        *no_memory = true;
    } else if (!br->rule.computed || !br->rule.exact || !same_rows(&r->rule, &br->rule)) {
        why = "the believed problem's rule could not be tabulated over the same outcomes";
    } else if (br->rule.numeric_channel < 0) {
        d->kind = SIM_ROW_ACTION;
        d->row_action = malloc(br->rule.n_rows * sizeof *d->row_action);
        if (!d->row_action)
            *no_memory = true;
        else
            memcpy(d->row_action, br->rule.row_action, br->rule.n_rows * sizeof *d->row_action);
    } else if (cuts_from_rule(d, &br->rule) != 0) {
        *no_memory = true;
    }
    lop_results_free(br);
    return why;
}

/* Interpolated estimates go to the nearest of the sorted values v (n of them). */
static void snap_to_values(sim_decider *d, const double *v, size_t n)
{
    d->snap = v;
    d->n_snap = n;
    double h = n > 1 ? (v[n - 1] - v[0]) / (double)(n - 1) : 0;
    bool uniform = h > 0;
    for (size_t i = 0; uniform && i < n; i++)
        uniform = fabs(v[i] - (v[0] + (double)i * h)) <= 1e-9 * h;
    d->snap_inv_h = uniform ? 1 / h : 0;
}

/* Bayes estimates are points of the estimate grid when the file gives one (curve.h);
 * interpolated between measurement points they are put back on it: a sharp band scores
 * an estimate on the grid's lattice differently from one beside it. Without a grid the
 * estimate is any real number and stays as interpolated, except for a points curve:
 * its expected loss is a sum over the states (curve.h), with kinks at the states plus
 * the knots, where its best estimates lie; interpolated off them an estimate would be
 * scored down a slope the rule never takes, so it goes back to the state grid. */
static void snap_estimates(sim_decider *d, const lop_problem *decider)
{
    if (decider->estimates_given || decider->curve.kind == LOP_CURVE_POINTS)
        snap_to_values(d, decider->estimates, decider->n_estimates);
}

const char *sim_decider_init(sim_decider *d, const lop_problem *p, const lop_results *r,
                             long rule, bool *no_memory)
{
    const lop_rule_result *tab = &r->rule;
    memset(d, 0, sizeof *d);
    *no_memory = false;
    d->estimate = p->estimate;
    int st = 0;
    if (rule >= 0 && p->rules[rule].kind == LOP_RULE_KIND_THRESHOLD) {
        st = threshold_cuts(d, p->rules[rule].at);
        *no_memory = st != 0;
        return NULL;
    }
    if (!tab->computed) {
        if (rule >= 0 && p->rules[rule].kind != LOP_RULE_KIND_BELIEVED)
            return "the rule table was not computed, and this rule is looked up on it";
        return direct(d, p, rule < 0 ? p : p->rules[rule].believed, no_memory);
    }
    if (rule < 0) {
        if (tab->exact && tab->numeric_channel < 0) {
            d->kind = SIM_ROW_ACTION;
            d->row_action = malloc(tab->n_rows * sizeof *d->row_action);
            if (d->row_action)
                memcpy(d->row_action, tab->row_action, tab->n_rows * sizeof *d->row_action);
            st = d->row_action ? 0 : -1;
        } else if (p->estimate) {
            snap_estimates(d, p);
            st = grid_values(d, tab, tab->grid_estimate, NULL, true,
                             tab->count_grid ? SIM_GRID_NEAREST : SIM_GRID_INTERPOLATE);
        } else if (tab->count_grid) {
            st = grid_values(d, tab, NULL, tab->grid_action, false, SIM_GRID_ACTION);
        } else {
            st = cuts_from_rule(d, tab);
        }
        *no_memory = st != 0;
        return NULL;
    }
    const lop_rule_spec *spec = &p->rules[rule];
    if (tab->exact) {
        if (spec->kind == LOP_RULE_KIND_BELIEVED) {
            const char *why = believed_exact(d, spec->believed, r, no_memory);
            if (!why || *no_memory)
                return why;
            sim_decider_clear(d);
            return direct(d, p, spec->believed, no_memory);
        }
        return "this kind of rule needs estimates";
    }
    if (spec->kind == LOP_RULE_KIND_BELIEVED && p->estimate)
        snap_estimates(d, spec->believed);
    const double *decision = r->compared[rule].grid_decision;
    if (!decision)
        return r->compared[rule].not_computed_why ? r->compared[rule].not_computed_why
                                                  : "the rule was not computed";
    if (p->estimate) {
        /* The maximum-likelihood state and the posterior mode over listed values follow
         * the measurement in steps of the states: interpolated, then put on the nearest
         * state, they track the rule between measurement points, where the value at the
         * nearest point alone would cost a bias of order the squared cell width (and the
         * analytic risk, a sum over the points, is that of the rule itself). On a grid
         * both are vertices between states and move smoothly. */
        bool stepped = (spec->kind == LOP_RULE_KIND_MODE ||
                        spec->kind == LOP_RULE_KIND_MAX_LIKELIHOOD) &&
                       p->states_kind != LOP_STATES_GRID;
        if (stepped)
            snap_to_values(d, p->state_values, p->n_states);
        st = grid_values(d, tab, decision, NULL, true,
                         tab->count_grid ? SIM_GRID_NEAREST : SIM_GRID_INTERPOLATE);
    } else if (tab->count_grid) {
        st = grid_values(d, tab, decision, NULL, false, SIM_GRID_ACTION);
    } else {
        st = believed_grid_cuts(d, spec->believed, tab, decision);
    }
    *no_memory = st != 0;
    return NULL;
}
