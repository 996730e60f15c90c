/* Locating the measurements where the Bayes action changes, shared by both rule paths:
 * Brent's method on the difference of two actions' posterior expected losses, and a
 * split of the bracket when a third action wins at the crossing. */
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "lopside/engine/decide.h"
#include "rule_private.h"

/* Switch points are located to this absolute-plus-relative width. */
#define SWITCH_TOLERANCE 1e-12
#define SWITCH_ITERATIONS 200

int lop_switch_push(lop_switch_list *list, double x, size_t from, size_t to, size_t row)
{
    if (list->n == list->cap) {
        size_t cap = list->cap ? list->cap * 2 : 16;
        lop_switch_point *grown = realloc(list->items, cap * sizeof *grown);
        if (!grown)
            return -1;
        list->items = grown;
        list->cap = cap;
    }
    list->items[list->n++] = (lop_switch_point){x, from, to, row};
    return 0;
}

typedef struct {
    lop_switch_search *s;
    size_t a, b;
} pair;

/* Posterior expected loss of action a minus that of b at x: negative where a is better. */
static double difference_at(double x, void *param)
{
    pair *q = param;
    q->s->expected(q->s->ctx, x, q->s->el);
    return q->s->el[q->a] - q->s->el[q->b];
}

/* Root of the difference in [lo, hi], where a is best at lo and b at hi (Brent). */
static double refine(lop_switch_search *s, size_t a, size_t b, double lo, double hi)
{
    pair q = {s, a, b};
    gsl_function f = {difference_at, &q};
    double flo = difference_at(lo, &q), fhi = difference_at(hi, &q);
    if (flo == 0)
        return lo;
    if (fhi == 0 || flo * fhi > 0)
        return hi;
    double root = 0.5 * (lo + hi);
    gsl_root_fsolver *solver = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (solver && gsl_root_fsolver_set(solver, &f, lo, hi) == GSL_SUCCESS) {
        for (int it = 0; it < SWITCH_ITERATIONS; it++) {
            if (gsl_root_fsolver_iterate(solver) != GSL_SUCCESS)
                break;
            root = gsl_root_fsolver_root(solver);
            if (gsl_root_test_interval(gsl_root_fsolver_x_lower(solver),
                                       gsl_root_fsolver_x_upper(solver), SWITCH_TOLERANCE,
                                       SWITCH_TOLERANCE) == GSL_SUCCESS)
                break;
        }
    }
    gsl_root_fsolver_free(solver);
    return root;
}

/* Returns the best action at the point whose expected losses s->el holds. */
static size_t best_of(const lop_switch_search *s)
{
    return s->best ? s->best(s->ctx, s->el) : lop_decide_best(s->el, s->n_actions);
}

static int find(lop_switch_search *s, double lo, double hi, size_t a, size_t b, size_t row,
                lop_switch_list *out, size_t depth)
{
    double x = refine(s, a, b, lo, hi);
    s->expected(s->ctx, x, s->el);
    size_t c = best_of(s);
    if (c == a || c == b || depth > s->n_actions ||
        lop_decide_tied(s->el[c], s->el[a], s->loss_scale))
        return lop_switch_push(out, x, a, b, row);
    if (find(s, lo, x, a, c, row, out, depth + 1) != 0)
        return -1;
    return find(s, x, hi, c, b, row, out, depth + 1);
}

int lop_switch_find(lop_switch_search *s, double lo, double hi, size_t a, size_t b,
                    size_t row, lop_switch_list *out)
{
    return find(s, lo, hi, a, b, row, out, 0);
}

size_t lop_switch_best(lop_switch_search *s, double x)
{
    s->expected(s->ctx, x, s->el);
    return best_of(s);
}
