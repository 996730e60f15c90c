#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "lopside/engine/decide.h"
#include "lopside/model/evidence.h"
#include "lopside/util/interp.h"
#include "lopside/model/posterior.h"

/* Expected losses this close (relative to the largest loss) count as a tie:
 * far above the rounding of a sum over states, far below any real difference. */
#define TIE_RELATIVE 1e-12

void lop_decide_expected(const lop_problem *p, const double *w, double *el)
{
    for (size_t a = 0; a < p->n_actions; a++) {
        double sum = 0;
        const double *row = &p->loss[a * p->n_states];
        for (size_t s = 0; s < p->n_states; s++)
            sum += w[s] * row[s];
        el[a] = sum;
    }
}

size_t lop_decide_best(const double *el, size_t n_actions)
{
    size_t best = 0;
    for (size_t a = 1; a < n_actions; a++)
        if (el[a] < el[best])
            best = a;
    return best;
}

bool lop_decide_tied(double el_a, double el_best, double scale)
{
    return fabs(el_a - el_best) <= TIE_RELATIVE * (scale > 0 ? scale : 1);
}

/* Returns the sign of el_a - el_b computed from the log weights (see decide.h). */
static int exact_sign(const lop_problem *p, const double *logw, size_t a, size_t b)
{
    const double *ra = &p->loss[a * p->n_states], *rb = &p->loss[b * p->n_states];
    double top = -INFINITY;
    for (size_t s = 0; s < p->n_states; s++)
        if (ra[s] != rb[s] && logw[s] > top)
            top = logw[s];
    if (top == -INFINITY)
        return 0;
    double sum = 0;
    for (size_t s = 0; s < p->n_states; s++)
        if (ra[s] != rb[s] && logw[s] > -INFINITY)
            sum += (ra[s] - rb[s]) * exp(logw[s] - top);
    return (sum > 0) - (sum < 0);
}

size_t lop_decide_best_exact(const lop_problem *p, const double *logw, const double *el,
                             double scale)
{
    size_t best = lop_decide_best(el, p->n_actions), first = best;
    for (size_t a = 0; a < p->n_actions; a++)
        if (a != first && lop_decide_tied(el[a], el[first], scale) &&
            exact_sign(p, logw, a, best) < 0)
            best = a;
    return best;
}

double lop_decide_perfect_risk(const lop_problem *p)
{
    return p->estimate ? lop_decide_perfect_estimate(p, p->prior) : lop_decide_perfect(p, p->prior);
}

double lop_decide_loss_scale(const lop_problem *p)
{
    double scale = 0;
    for (size_t i = 0; i < p->n_actions * p->n_states; i++)
        if (fabs(p->loss[i]) > scale)
            scale = fabs(p->loss[i]);
    return scale;
}

double lop_decide_perfect(const lop_problem *p, const double *w)
{
    double sum = 0;
    for (size_t s = 0; s < p->n_states; s++) {
        double best = INFINITY;
        if (p->perfect) {
            best = p->perfect[s];
        } else {
            for (size_t a = 0; a < p->n_actions; a++)
                best = fmin(best, lop_problem_loss(p, a, s));
        }
        sum += w[s] * best;
    }
    return sum;
}

/* The least loss over the estimate grid of estimating `state`, trying the grid points
 * next to `target` (the loss is piecewise monotone between its breakpoints). */
static double best_near(const lop_problem *p, double state, double target, double best)
{
    const double *x = p->estimates;
    size_t lo = lop_count_at_most(x, p->n_estimates, target); /* first estimate above */
    for (size_t j = lo > 0 ? lo - 1 : 0; j <= lo && j < p->n_estimates; j++)
        best = fmin(best, lop_curve_loss(&p->curve, x[j], state));
    return best;
}

double lop_decide_perfect_estimate(const lop_problem *p, const double *w)
{
    const lop_curve *c = &p->curve;
    if (!p->estimates_given) {
        /* Any real estimate: the state known, the error is chosen freely. */
        double mass = 0;
        for (size_t s = 0; s < p->n_states; s++)
            mass += w[s];
        return mass * lop_curve_least_loss(c);
    }
    /* With the state known the decider still answers with a point of the estimate grid
     * (the actions). Its loss as a function of the estimate is monotone between
     * breakpoints at the errors 0 (every curve's minimum or band) and the knots of a
     * `points` curve, so the best grid point is a neighbour of one of them, or an end. */
    size_t n_knots = c->kind == LOP_CURVE_POINTS ? c->n_points : 0;
    double sum = 0;
    for (size_t s = 0; s < p->n_states; s++) {
        if (w[s] == 0)
            continue;
        double x = p->state_values[s];
        double best = fmin(lop_curve_loss(c, p->estimates[0], x),
                           lop_curve_loss(c, p->estimates[p->n_estimates - 1], x));
        best = best_near(p, x, x, best);
        for (size_t k = 0; k < n_knots; k++)
            best = best_near(p, x, c->relative ? x * (1 + c->error[k]) : x + c->error[k], best);
        sum += w[s] * best;
    }
    return sum;
}

lop_curve_work *lop_decide_curve_work(const lop_problem *p)
{
    unsigned options = (p->states_kind == LOP_STATES_GRID ? LOP_CURVE_CELLS : 0) |
                       (p->estimates_given ? 0 : LOP_CURVE_CONTINUOUS);
    return lop_curve_work_new(&p->curve, p->state_values, p->n_states, p->estimates,
                              p->n_estimates, options);
}

/* Returns the input error of a curve whose expected loss at estimate x is not finite,
 * naming the states whose losses make it so (x not a number: those whose relative error
 * 1/s overflows), or, when no single loss overflows but their sum does, every state
 * with mass. */
static lop_status unbounded(const lop_problem *p, const double *post, double x,
                            lop_error *err)
{
    double first = NAN, last = NAN, any_first = NAN, any_last = NAN;
    for (size_t s = 0; s < p->n_states; s++) {
        if (post[s] == 0)
            continue;
        double v = p->state_values[s];
        any_first = isnan(any_first) ? v : any_first;
        any_last = v;
        bool bad = isfinite(x) ? !isfinite(post[s] * lop_curve_loss(&p->curve, x, v))
                               : p->curve.relative && !isfinite(1 / v);
        if (bad) {
            first = isnan(first) ? v : first;
            last = v;
        }
    }
    if (isnan(first)) {
        first = any_first;
        last = any_last;
    }
    const char *section = lop_problem_orientation(p);
    char at[64] = "at every estimate";
    if (isfinite(x))
        snprintf(at, sizeof at, "even at the best estimate (%.6g)", x);
    return lop_error_input(err, p->path, p->curve_line, section, "curve",
                           "the expected %s has no finite value: %s the %s of states %.6g to "
                           "%.6g is beyond the largest number%s; narrow the states or choose "
                           "another curve",
                           section, at, section, first, last,
                           p->curve.relative ? " (a relative error grows without bound as "
                                               "the state approaches 0)"
                                             : "");
}

lop_status lop_decide_estimate_risk(const lop_problem *p, lop_curve_work *w, const double *post,
                                    double *x, double *el, lop_error *err)
{
    double loss, best = lop_curve_bayes(w, post, &loss);
    if (!isfinite(loss))
        return unbounded(p, post, best, err);
    if (x)
        *x = best;
    if (el)
        *el = loss;
    return LOP_OK;
}

static lop_status decide_estimate(const lop_problem *p, lop_case_result *c, lop_error *err)
{
    lop_curve_work *w = lop_decide_curve_work(p);
    if (!w)
        return lop_error_run(err, "out of memory preparing the loss curve");
    lop_curve_expected(w, c->posterior, c->estimate_curve);
    lop_status st = lop_decide_estimate_risk(p, w, c->posterior, &c->bayes_estimate,
                                             &c->bayes_estimate_loss, err);
    lop_curve_work_free(w);
    if (st != LOP_OK)
        return st;
    c->evpi = c->bayes_estimate_loss - lop_decide_perfect_estimate(p, c->posterior);
    if (c->evpi < 0) /* rounding only */
        c->evpi = 0;
    return LOP_OK;
}

lop_status lop_decide_case(const lop_problem *p, lop_results *r, lop_error *err)
{
    lop_case_result *c = &r->kase;
    double *logw = malloc(p->n_states * sizeof *logw);
    if (!logw)
        return lop_error_run(err, "out of memory");
    lop_evidence_add_observed(p, c->log_likelihood);
    for (size_t s = 0; s < p->n_states; s++)
        logw[s] = p->log_prior[s] + c->log_likelihood[s];
    double norm = lop_posterior_normalize(logw, p->n_states, c->posterior);
    free(logw);
    if (norm == -INFINITY)
        return lop_error_run(err, "the observed values have no likelihood under any state");
    c->numeric = lop_problem_numeric_states(p);
    if (c->numeric)
        lop_posterior_summarize(p->state_values, p->n_states, p->states_kind == LOP_STATES_GRID,
                                c->posterior, &c->summary);
    if (p->estimate)
        return decide_estimate(p, c, err);

    lop_decide_expected(p, c->posterior, c->expected_loss);
    c->bayes_action = lop_decide_best(c->expected_loss, p->n_actions);
    double best = c->expected_loss[c->bayes_action];
    double scale = lop_decide_loss_scale(p);
    c->runner_up = c->bayes_action == 0 ? 1 : 0;
    c->n_tied = 0;
    c->tied[c->n_tied++] = c->bayes_action;
    for (size_t a = 0; a < p->n_actions; a++) {
        if (a == c->bayes_action)
            continue;
        if (c->expected_loss[a] < c->expected_loss[c->runner_up])
            c->runner_up = a;
        if (lop_decide_tied(c->expected_loss[a], best, scale))
            c->tied[c->n_tied++] = a;
    }
    c->margin = c->expected_loss[c->runner_up] - best;
    c->evpi = best - lop_decide_perfect(p, c->posterior);
    if (c->evpi < 0) /* rounding only: perfect information never costs */
        c->evpi = 0;
    return LOP_OK;
}
