/* Private to the rule modules (rule.c, rule_grid.c). */
#ifndef LOPSIDE_RULE_PRIVATE_H
#define LOPSIDE_RULE_PRIVATE_H

#include "lopside/util/error.h"
#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* Returns point i of n evenly spaced from lo to hi (a residue of rounding near 0 is 0). */
double lop_grid_point(double lo, double hi, size_t i, size_t n);

/* Returns LOP_OK after marking the rule not computed, with a warning saying why. */
lop_status lop_rule_not_computed(lop_results *r, lop_error *err, const char *why);

/* Returns LOP_OK after solving the rule over the measurement grid of the problem's one
 * numeric channel (grid states, estimates, or noise other than gaussian). */
lop_status lop_rule_solve_grid(const lop_problem *p, lop_results *r, lop_error *err);

/* Returns the risk under p of the rule that decides by the n sorted switch points of
 * the one numeric channel c (`only` when n is 0), integrated exactly with c's CDF over
 * the whole measurement axis. */
double lop_rule_risk_between(const lop_problem *p, const lop_channel *c,
                             const lop_switch_point *switches, size_t n, size_t only);

/* Returns LOP_OK after filling the risk and regret of each [rule.NAME] of a choice
 * problem with one numeric channel, integrated exactly: a threshold cuts once; a
 * believed rule cuts where its own Bayes rule switches. */
lop_status lop_rule_compare_exact(const lop_problem *p, lop_results *r, lop_error *err);

/* A growing list of switch points. */
typedef struct {
    lop_switch_point *items;
    size_t n, cap;
} lop_switch_list;

/* What a switch search needs: the posterior expected loss of every action at a
 * measurement x, written to el (n_actions, scratch owned by the caller). */
typedef struct {
    void (*expected)(void *ctx, double x, double *el);
    /* the best action given the el just written (NULL: lop_decide_best) */
    size_t (*best)(void *ctx, const double *el);
    void *ctx;
    size_t n_actions;
    double loss_scale;        /* for tie tests */
    double *el;
} lop_switch_search;

/* Returns 0 after appending (x, from, to, row) to list, -1 when memory runs out. */
int lop_switch_push(lop_switch_list *list, double x, size_t from, size_t to, size_t row);

/* Returns 0 after appending, in order, every change of the Bayes action in [lo, hi]
 * where a is best at lo and b at hi; -1 when memory runs out. */
int lop_switch_find(lop_switch_search *s, double lo, double hi, size_t a, size_t b,
                    size_t row, lop_switch_list *out);

/* Returns the Bayes action at x (ties to the earlier action). */
size_t lop_switch_best(lop_switch_search *s, double x);

#endif
