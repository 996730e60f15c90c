/* Choice rates of the Bayes rule and of threshold rules, the best threshold, and the
 * signal-detection measures of a threshold. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "lopside/model/evidence.h"
#include "lopside/engine/rates.h"

#define BEST_TOLERANCE 1e-12
#define BEST_ITERATIONS 200
/* Most whole-number thresholds of a count channel searched for the best one. */
#define COUNT_THRESHOLDS_MAX 1000000

long lop_rates_numeric_channel(const lop_problem *p)
{
    long found = -1;
    for (size_t i = 0; i < p->n_channels; i++) {
        if (p->channels[i].kind == LOP_CHANNEL_TABLE)
            continue;
        if (found >= 0)
            return -1;
        found = (long)i;
    }
    return found;
}

/* log P(row | s): the product over table channels of the multinomial of its counts. */
static double row_log_probability(const lop_problem *p, const lop_rule_result *rule,
                                  size_t row, size_t s)
{
    double ll = 0;
    size_t col = 0;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        ll += lop_evidence_log_counts(c, s, &rule->counts[row * rule->n_columns + col]);
        col += c->n_outcomes;
    }
    return ll;
}

/* Every row of outcome counts; within a row, the numeric channel's intervals between
 * switch points, each integrated with the channel's CDF. */
static void rates_intervals(const lop_problem *p, const lop_rule_result *rule, double *rates)
{
    size_t S = p->n_states;
    const lop_channel *c =
        rule->numeric_channel >= 0 ? &p->channels[rule->numeric_channel] : NULL;
    size_t k = 0;   /* switch points come in row order */
    for (size_t row = 0; row < rule->n_rows; row++) {
        size_t first = k;
        while (k < rule->n_switches && rule->switches[k].row == row)
            k++;
        for (size_t s = 0; s < S; s++) {
            double pr = rule->n_columns ? exp(row_log_probability(p, rule, row, s)) : 1;
            if (pr == 0)
                continue;
            if (!c) {
                rates[rule->row_action[row] * S + s] += pr;
                continue;
            }
            size_t a = first < k ? rule->switches[first].from
                                 : rule->grid_action[row * rule->n_grid];
            double lo = -INFINITY;
            for (size_t j = first; j <= k; j++) {
                double hi = j < k ? rule->switches[j].x : INFINITY;
                rates[a * S + s] += pr * lop_evidence_summary_mass(c, s, lo, hi, c->repeats);
                if (j < k) {
                    a = rule->switches[j].to;
                    lo = hi;
                }
            }
        }
    }
}

bool lop_rates_by_state(const lop_problem *p, const lop_results *r, double *rates)
{
    if (p->estimate || (r->has_rule && !r->rule.computed))
        return false;
    size_t S = p->n_states;
    memset(rates, 0, p->n_actions * S * sizeof *rates);
    if (!r->has_rule) {
        for (size_t s = 0; s < S; s++)
            rates[r->rule.prior_only_action * S + s] = 1;
    } else {
        /* The masses between switch points, by the channel's CDF over the whole support:
         * exact, and smooth in the problem's numbers (a sum over grid cells would step as
         * cells change sides). Counts switch at the first count of the new action. */
        rates_intervals(p, &r->rule, rates);
    }
    return true;
}

bool lop_rates_overall(const lop_problem *p, const lop_results *r, double *rates)
{
    if (p->estimate || (r->has_rule && !r->rule.computed))
        return false;
    memset(rates, 0, p->n_actions * sizeof *rates);
    double *by_state = malloc(p->n_actions * p->n_states * sizeof *by_state);
    if (!by_state || !lop_rates_by_state(p, r, by_state)) {
        free(by_state);
        return false;
    }
    for (size_t a = 0; a < p->n_actions; a++)
        for (size_t s = 0; s < p->n_states; s++)
            rates[a] += p->prior[s] * by_state[a * p->n_states + s];
    free(by_state);
    return true;
}

double lop_rates_threshold(const lop_problem *p, const lop_channel *c, double t, bool by_state,
                           double *rates)
{
    size_t S = p->n_states;
    if (rates)
        memset(rates, 0, (by_state ? 2 * S : 2) * sizeof *rates);
    double total = 0;
    for (size_t s = 0; s < S; s++) {
        double q = lop_evidence_summary_mass(c, s, t, INFINITY, c->repeats);
        total += p->prior[s] *
                 ((1 - q) * lop_problem_loss(p, 0, s) + q * lop_problem_loss(p, 1, s));
        if (!rates)
            continue;
        if (by_state) {
            rates[s] = 1 - q;
            rates[S + s] = q;
        } else {
            rates[0] += p->prior[s] * (1 - q);
            rates[1] += p->prior[s] * q;
        }
    }
    return total;
}

typedef struct {
    const lop_problem *p;
    const lop_channel *c;
} slope_ctx;

/* The slope of the expected loss of a threshold t, up to a positive factor:
 * d/dt sum_s prior(s)[L0(s)(1 - Q_s(t)) + L1(s) Q_s(t)] = sum_s prior(s)(L0 - L1) f_s(t),
 * with the densities f_s scaled by the largest so none underflows. */
static double slope_at(double t, void *param)
{
    const slope_ctx *ctx = param;
    const lop_problem *p = ctx->p;
    double top = -INFINITY;
    for (size_t s = 0; s < p->n_states; s++)
        top = fmax(top, p->log_prior[s] + lop_evidence_log_summary(ctx->c, s, t, ctx->c->repeats));
    if (top == -INFINITY)
        return 0;
    double d = 0;
    for (size_t s = 0; s < p->n_states; s++) {
        if (p->log_prior[s] == -INFINITY)
            continue;
        double ll = p->log_prior[s] + lop_evidence_log_summary(ctx->c, s, t, ctx->c->repeats);
        d += (lop_problem_loss(p, 0, s) - lop_problem_loss(p, 1, s)) * exp(ll - top);
    }
    return d;
}

/* The root of the slope in [lo, hi] where it turns from negative to positive (Brent). */
static double refine_minimum(slope_ctx *ctx, double lo, double hi)
{
    double flo = slope_at(lo, ctx), fhi = slope_at(hi, ctx);
    if (!(flo < 0 && fhi > 0))
        return NAN;
    gsl_function f = {slope_at, ctx};
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    double root = NAN;
    if (s && gsl_root_fsolver_set(s, &f, lo, hi) == GSL_SUCCESS) {
        for (int it = 0; it < BEST_ITERATIONS; it++) {
            if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
                break;
            root = gsl_root_fsolver_root(s);
            if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s),
                                       BEST_TOLERANCE, BEST_TOLERANCE) == GSL_SUCCESS)
                break;
        }
    }
    gsl_root_fsolver_free(s);
    return root;
}

double lop_rates_best_threshold(const lop_problem *p, const lop_channel *c, const double *grid,
                                size_t m, double *loss)
{
    /* Far below every measurement the second action is always chosen; far above, the
     * first: those are the losses a threshold must beat. */
    double always[2] = {0, 0};
    for (size_t s = 0; s < p->n_states; s++) {
        always[0] += p->prior[s] * lop_problem_loss(p, 0, s);
        always[1] += p->prior[s] * lop_problem_loss(p, 1, s);
    }
    double best_t = NAN, best = fmin(always[0], always[1]);
    if (lop_evidence_is_count(c)) {
        double lo = ceil(grid[0]), hi = floor(grid[m - 1]) + 1;
        if (hi - lo > COUNT_THRESHOLDS_MAX)
            hi = lo + COUNT_THRESHOLDS_MAX;
        for (double k = fmax(lo, 1); k <= hi; k++) {
            double el = lop_rates_threshold(p, c, k, false, NULL);
            if (el < best) {
                best = el;
                best_t = k;
            }
        }
        *loss = best;
        return best_t;
    }
    size_t j = m;
    for (size_t i = 0; i < m; i++) {
        double el = lop_rates_threshold(p, c, grid[i], false, NULL);
        if (el < best) {
            best = el;
            j = i;
        }
    }
    if (j == m) {
        *loss = best;
        return NAN;
    }
    best_t = grid[j];
    slope_ctx ctx = {p, c};
    double root = refine_minimum(&ctx, grid[j > 0 ? j - 1 : 0], grid[j + 1 < m ? j + 1 : j]);
    if (isfinite(root)) {
        double el = lop_rates_threshold(p, c, root, false, NULL);
        if (el <= best) {
            best = el;
            best_t = root;
        }
    }
    *loss = best;
    return best_t;
}

bool lop_rates_sdt(const lop_problem *p, const lop_channel *c, double *d_prime, double *mid,
                   double *sd)
{
    if (p->states_kind != LOP_STATES_LABELS || p->n_states != 2 ||
        c->kind != LOP_CHANNEL_NOISE || c->noise != LOP_NOISE_GAUSSIAN ||
        c->spread[0] != c->spread[1])
        return false;
    *sd = c->spread[0] / sqrt((double)c->repeats);
    *d_prime = (c->center[1] - c->center[0]) / *sd;
    *mid = 0.5 * (c->center[0] + c->center[1]);
    return true;
}
