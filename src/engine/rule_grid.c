/* The Bayes rule over the measurement grid of one numeric channel, for a grid of
 * states, for estimates, and for noise other than gaussian: O(M·S) in all, parallel
 * over measurement points, one workspace of O(S + A + E) per thread, never an M×S
 * array. The [rule.NAME] comparisons ride along on the same posteriors. */
#include <math.h>
#include <stdlib.h>
#include <string.h>


#include "lopside/engine/decide.h"
#include "lopside/model/evidence.h"
#include "lopside/model/posterior.h"
#include "lopside/engine/rule.h"
#include "lopside/util/strutil.h"
#include "rule_private.h"

/* The automatic measurement grid leaves at most this predictive mass outside: a share to
 * the prior's tails, the rest to each state's measurement tails. Choices integrate their
 * risk exactly between switch points (searched beyond the grid too), so the grid only
 * brackets them (format.md: 1e-6); estimates integrate over the grid, so it covers all
 * but 1e-9; counts are summed over every count with predictive mass above 1e-12. */
#define CHOICE_TAIL_MASS 1e-6
#define ESTIMATE_TAIL_MASS 1e-9
#define COUNT_TAIL_MASS 1e-12
#define PRIOR_TAIL_SHARE 0.1
#define COUNT_POINTS_MAX 1000000
/* Beyond the measurement grid, switch points are searched this many sds further out,
 * where every state's tail mass is below 1e-200. */
#define FAR_TAIL_SDS 30.0
/* With a bounded loss, posterior weights below e^-50 of the largest change no decision
 * or expected loss by more than 2e-22 times the number of states, relative: the rule
 * skips their exp. Unbounded losses (LINEX grows exponentially) keep every weight. */
#define NEGLIGIBLE_LOG_WEIGHT (-50.0)
/* An automatic grid of a continuous measurement gets cells no wider than this share of
 * the narrowest measurement sd, so the midpoint rule's error, of order the squared
 * ratio, stays small; but no more points than the cap. */
#define CELLS_PER_SD 4.0
#define AUTO_POINTS_MAX 20001
/* Below this predictive mass on the grid, the risk misses a part worth a warning. */
#define COVERAGE_WARN 1e-3

/* A believed problem's view of the shared measurement. */
typedef struct {
    const lop_problem *bp;
    const lop_channel *c;
    const double *logprior;  /* the problem's log prior, borrowed */
    lop_evidence_kernel kern;
} believed_view;

/* Everything one thread needs for one measurement point. */
typedef struct {
    double *logw, *post, *el;
    lop_curve_work *curve;
    double **blogw, **bpost, **bel;    /* per believed rule */
    lop_curve_work **bcurve;
} thread_work;

typedef struct {
    const lop_problem *p;
    const lop_channel *c;
    size_t channel;
    const double *logprior;  /* the problem's log prior, borrowed */
    lop_evidence_kernel kern;
    believed_view *believed;          /* per rule; bp NULL when not a believed rule */
    double **rule_loss;               /* per rule: its posterior expected loss per point */
    double loss_scale;                /* choices: for ties (lop_decide_loss_scale) */
} grid_job;

static void thread_work_free(thread_work *t, size_t n_rules)
{
    if (!t)
        return;
    free(t->logw);
    free(t->post);
    free(t->el);
    lop_curve_work_free(t->curve);
    for (size_t k = 0; k < n_rules; k++) {
        if (t->blogw)
            free(t->blogw[k]);
        if (t->bpost)
            free(t->bpost[k]);
        if (t->bel)
            free(t->bel[k]);
        if (t->bcurve)
            lop_curve_work_free(t->bcurve[k]);
    }
    free(t->blogw);
    free(t->bpost);
    free(t->bel);
    free(t->bcurve);
    free(t);
}

static lop_curve_work *curve_for(const lop_problem *p)
{
    return lop_decide_curve_work(p);
}

static thread_work *thread_work_new(const grid_job *job)
{
    const lop_problem *p = job->p;
    thread_work *t = calloc(1, sizeof *t);
    if (!t)
        return NULL;
    size_t k = p->n_rules ? p->n_rules : 1;
    t->logw = malloc(p->n_states * sizeof *t->logw);
    t->post = malloc(p->n_states * sizeof *t->post);
    t->el = malloc((p->n_actions ? p->n_actions : 1) * sizeof *t->el);
    t->curve = p->estimate ? curve_for(p) : NULL;
    t->blogw = calloc(k, sizeof *t->blogw);
    t->bpost = calloc(k, sizeof *t->bpost);
    t->bel = calloc(k, sizeof *t->bel);
    t->bcurve = calloc(k, sizeof *t->bcurve);
    bool ok = t->logw && t->post && t->el && (!p->estimate || t->curve) && t->blogw &&
              t->bpost && t->bel && t->bcurve;
    for (size_t r = 0; ok && r < p->n_rules; r++) {
        const lop_problem *bp = job->believed[r].bp;
        if (!bp)
            continue;
        t->blogw[r] = malloc(bp->n_states * sizeof(double));
        t->bpost[r] = malloc(bp->n_states * sizeof(double));
        t->bel[r] = malloc((bp->n_actions ? bp->n_actions : 1) * sizeof(double));
        t->bcurve[r] = bp->estimate ? curve_for(bp) : NULL;
        ok = t->blogw[r] && t->bpost[r] && t->bel[r] && (!bp->estimate || t->bcurve[r]);
    }
    if (!ok) {
        thread_work_free(t, p->n_rules);
        return NULL;
    }
    return t;
}

/* Posterior at measurement x into post; returns the log of the predictive density (or
 * probability, for counts) of x. */
static double posterior_at(const lop_evidence_kernel *kern, const double *logprior, double x,
                           double *logw, double *post)
{
    lop_evidence_kernel_eval(kern, x, logprior, logw);
    return lop_posterior_normalize_above(logw, kern->n_states, kern->negligible, post);
}

/* The log weight below which posterior terms may be dropped for p's loss. */
static double negligible_for(const lop_problem *p)
{
    bool bounded = !p->estimate || p->curve.kind == LOP_CURVE_TOLERANCE ||
                   p->curve.kind == LOP_CURVE_POINTS;
    return bounded ? NEGLIGIBLE_LOG_WEIGHT : -INFINITY;
}

/* Decision of rule k at measurement x (an action index or an estimate), and its
 * posterior expected loss under the true posterior t->post (choices: t->el). */
static double compared_decision(const grid_job *job, thread_work *t, size_t k, double x,
                                double *loss)
{
    const lop_problem *p = job->p;
    const lop_rule_spec *spec = &p->rules[k];
    double estimate = NAN;
    switch (spec->kind) {
    case LOP_RULE_KIND_MEAN:
    case LOP_RULE_KIND_MEDIAN:
    case LOP_RULE_KIND_MODE: {
        lop_summary sum;
        lop_posterior_summarize(p->state_values, p->n_states, p->states_kind == LOP_STATES_GRID,
                                t->post, &sum);
        estimate = spec->kind == LOP_RULE_KIND_MEAN     ? sum.mean
                   : spec->kind == LOP_RULE_KIND_MEDIAN ? sum.median
                                                        : sum.mode;
        break;
    }
    case LOP_RULE_KIND_MAX_LIKELIHOOD: {
        /* The state of largest likelihood, then the peak between its neighbours: the
         * estimate is a real number like the Bayes estimate it is compared with. */
        size_t best = 0;
        double top = -INFINITY;
        for (size_t s = 0; s < p->n_states; s++) {
            double ll = lop_evidence_log_summary(job->c, s, x, job->c->repeats);
            if (ll > top) {
                top = ll;
                best = s;
            }
        }
        if (best == 0 || best + 1 >= p->n_states || p->states_kind != LOP_STATES_GRID) {
            estimate = p->state_values[best];
            break;
        }
        double ll[3];
        for (size_t j = 0; j < 3; j++)
            ll[j] = lop_evidence_log_summary(job->c, best - 1 + j, x, job->c->repeats);
        estimate = lop_posterior_peak(p->state_values + best - 1, ll, 3, 1);
        break;
    }
    case LOP_RULE_KIND_THRESHOLD: {
        size_t a = x >= spec->at ? 1 : 0;
        *loss = t->el[a];
        return (double)a;
    }
    case LOP_RULE_KIND_BELIEVED: {
        const believed_view *b = &job->believed[k];
        posterior_at(&b->kern, b->logprior, x, t->blogw[k], t->bpost[k]);
        if (!b->bp->estimate) {
            lop_decide_expected(b->bp, t->bpost[k], t->bel[k]);
            size_t a = lop_decide_best(t->bel[k], b->bp->n_actions);
            *loss = t->el[a];
            return (double)a;
        }
        estimate = lop_curve_bayes(t->bcurve[k], t->bpost[k], NULL);
        break;
    }
    }
    /* the model of the Bayes estimate (cells on a grid), so regrets compare like with like */
    *loss = lop_curve_expected_at(t->curve, t->post, estimate);
    return estimate;
}

static void solve_point(const grid_job *job, thread_work *t, lop_results *r, size_t m)
{
    const lop_problem *p = job->p;
    lop_rule_result *rule = &r->rule;
    double x = rule->grid[m];
    double lognorm = posterior_at(&job->kern, job->logprior, x, t->logw, t->post);
    double cell = rule->count_grid ? 1 : (rule->grid[rule->n_grid - 1] - rule->grid[0]) /
                                         (double)(rule->n_grid - 1);
    rule->grid_weight[m] = lognorm == -INFINITY ? 0 : exp(lognorm) * cell;
    if (lognorm == -INFINITY) {
        /* A measurement no state can produce: any decision, weight 0. */
        for (size_t s = 0; s < p->n_states; s++)
            t->post[s] = p->prior[s];
    }
    if (p->estimate) {
        double loss;
        rule->grid_estimate[m] = lop_curve_bayes(t->curve, t->post, &loss);
        rule->grid_loss[m] = loss;
    } else {
        lop_decide_expected(p, t->post, t->el);
        size_t a = lop_decide_best_exact(p, t->logw, t->el, job->loss_scale);
        rule->grid_action[m] = a;
        rule->grid_loss[m] = t->el[a];
    }
    for (size_t k = 0; k < p->n_rules; k++) {
        lop_compared_rule *cr = &r->compared[k];
        if (!cr->grid_decision)
            continue;
        cr->grid_decision[m] = compared_decision(job, t, k, x, &job->rule_loss[k][m]);
    }
}

/* Writes to *lo and *hi the summaries that leave at most `tail` of the predictive mass
 * outside: the prior's extreme cells holding a share of it are skipped, and every
 * other state leaves the rest in its measurement tails. */
static void predictive_range(const lop_problem *p, const lop_channel *c, double tail,
                             double *lo, double *hi)
{
    double prior_tail = PRIOR_TAIL_SHARE * tail;
    size_t first = 0, last = p->n_states - 1;
    double cum = 0;
    while (first < last && cum + p->prior[first] <= 0.5 * prior_tail)
        cum += p->prior[first++];
    cum = 0;
    while (last > first && cum + p->prior[last] <= 0.5 * prior_tail)
        cum += p->prior[last--];
    *lo = INFINITY;
    *hi = -INFINITY;
    double q = 0.5 * (1 - PRIOR_TAIL_SHARE) * tail;
    bool count = lop_evidence_is_count(c);
    for (size_t s = first; s <= last; s++) {
        if (p->log_prior[s] == -INFINITY)
            continue;
        /* Count families are stochastically ordered in their parameter: only the
         * smallest and largest centers matter, and their quantiles are costly. */
        if (count && s != first && s != last)
            continue;
        *lo = fmin(*lo, lop_evidence_summary_quantile(c, s, q, c->repeats));
        *hi = fmax(*hi, lop_evidence_summary_quantile(c, s, 1 - q, c->repeats));
    }
}

/* The measurement grid: given, or covering the predictive mass as the constants above
 * say. Counts always cover it, whatever range the file gives (a range given for the
 * design's repeats does not hold the sums of more repeats). */
static int build_grid(const lop_problem *p, const lop_channel *c, lop_rule_result *rule)
{
    rule->count_grid = lop_evidence_is_count(c);
    double lo = c->grid_from, hi = c->grid_to;
    if (!c->grid_given || rule->count_grid) {
        double tail = rule->count_grid ? COUNT_TAIL_MASS
                      : p->estimate    ? ESTIMATE_TAIL_MASS
                                       : CHOICE_TAIL_MASS;
        double alo, ahi;
        predictive_range(p, c, tail, &alo, &ahi);
        lo = c->grid_given ? fmin(lo, alo) : alo;
        hi = c->grid_given ? fmax(hi, ahi) : ahi;
        if (rule->count_grid && hi == lo)
            hi = lo + 1;
    }
    if (rule->count_grid) {
        lo = fmax(0, ceil(lo));
        hi = floor(hi);
    }
    if (rule->count_grid && hi - lo + 1 > COUNT_POINTS_MAX)
        return -2;
    rule->n_grid = rule->count_grid ? (size_t)(hi - lo) + 1 : c->grid_points;
    if (!rule->count_grid && !c->grid_points_given) {
        double narrowest = INFINITY;
        for (size_t s = 0; s < p->n_states; s++) {
            if (p->prior[s] == 0)
                continue;
            double sd = c->spread[s] / sqrt((double)c->repeats);
            if (c->noise == LOP_NOISE_LOGNORMAL) /* the density's width near its center */
                sd *= c->center[s];
            narrowest = fmin(narrowest, sd);
        }
        double want = ceil(CELLS_PER_SD * (hi - lo) / narrowest) + 1;
        if (want > (double)rule->n_grid)
            rule->n_grid = want < AUTO_POINTS_MAX ? (size_t)want : AUTO_POINTS_MAX;
    }
    /* Estimates integrate over the grid: each level of [problem] refine halves its steps
     * (choices integrate exactly between switch points, whatever the grid). */
    if (!rule->count_grid && p->estimate)
        rule->n_grid = (size_t)lop_problem_refined_cells((double)(rule->n_grid - 1), p->refine) + 1;
    /* Simpson's rule wants an even number of cells. */
    if (!rule->count_grid && rule->n_grid % 2 == 0)
        rule->n_grid++;
    rule->grid = malloc(rule->n_grid * sizeof *rule->grid);
    if (!rule->grid)
        return -1;
    for (size_t i = 0; i < rule->n_grid; i++)
        rule->grid[i] = rule->count_grid ? lo + (double)i
                                     : lop_grid_point(lo, hi, i, rule->n_grid);
    return 0;
}

/* Returns the weight of point m of the rule's grid in the integral over measurements,
 * relative to grid_weight (the cell's mass by the midpoint rule): composite Simpson
 * (1, 4, 2, ..., 4, 1)/3 per cell for continuous measurements, fourth order in the
 * cell width for a smooth integrand (Davis & Rabinowitz 1984, Sec. 2.2, from memory),
 * with the outer points weighted 1/3 over the grid's span; 1 for counts. */
static double simpson_factor(const lop_rule_result *rule, size_t m)
{
    if (rule->count_grid)
        return 1;
    if (m == 0 || m + 1 == rule->n_grid)
        return 1.0 / 3;
    return m % 2 ? 4.0 / 3 : 2.0 / 3;
}

/* Posterior expected loss of every action at x, for the switch search. */
typedef struct {
    const grid_job *job;
    thread_work *t;
} switch_ctx;

static void expected_at(void *param, double x, double *el)
{
    switch_ctx *ctx = param;
    posterior_at(&ctx->job->kern, ctx->job->logprior, x, ctx->t->logw, ctx->t->post);
    lop_decide_expected(ctx->job->p, ctx->t->post, el);
}

/* The best action at the point expected_at last saw, ties told apart exactly. */
static size_t best_at(void *param, const double *el)
{
    switch_ctx *ctx = param;
    return lop_decide_best_exact(ctx->job->p, ctx->t->logw, el, ctx->job->loss_scale);
}

/* The measurements beyond the grid out to where no state has mass left (FAR_TAIL_SDS
 * sds of the widest state), where unequal spreads can still turn the decision. */
static void far_ends(const lop_problem *p, const lop_channel *c, const lop_rule_result *rule,
                     double *far_lo, double *far_hi)
{
    double reach = 0;
    for (size_t s = 0; s < p->n_states; s++)
        if (p->log_prior[s] > -INFINITY)
            reach = fmax(reach, FAR_TAIL_SDS * c->spread[s] / sqrt((double)c->repeats));
    double lo = rule->grid[0], hi = rule->grid[rule->n_grid - 1];
    if (c->noise == LOP_NOISE_LOGNORMAL) {
        *far_lo = lo * exp(-reach);
        *far_hi = hi * exp(reach);
    } else {
        *far_lo = lo - reach;
        *far_hi = hi + reach;
    }
}

/* Switch points of choices: refined by root finding between grid points for
 * continuous measurements (splitting the bracket when a third action wins between
 * them), and beyond the grid's ends; for counts, the first count of the new action. */
static int find_switches(const grid_job *job, thread_work *t, lop_rule_result *rule)
{
    switch_ctx ctx = {job, t};
    lop_switch_search search = {expected_at, best_at, &ctx, job->p->n_actions,
                                job->loss_scale, t->el};
    lop_switch_list list = {0};
    size_t m_last = rule->n_grid - 1;
    double far_lo = 0, far_hi = 0;
    size_t a_lo = rule->grid_action[0], a_hi = rule->grid_action[m_last];
    if (!rule->count_grid) {
        far_ends(job->p, job->c, rule, &far_lo, &far_hi);
        a_lo = lop_switch_best(&search, far_lo);
        a_hi = lop_switch_best(&search, far_hi);
    }
    int rc = a_lo != rule->grid_action[0]
                 ? lop_switch_find(&search, far_lo, rule->grid[0], a_lo, rule->grid_action[0], 0,
                                   &list)
                 : 0;
    for (size_t m = 1; m <= m_last && rc == 0; m++) {
        size_t a = rule->grid_action[m - 1], b = rule->grid_action[m];
        if (a == b)
            continue;
        rc = rule->count_grid
                 ? lop_switch_push(&list, rule->grid[m], a, b, 0)
                 : lop_switch_find(&search, rule->grid[m - 1], rule->grid[m], a, b, 0, &list);
    }
    if (rc == 0 && a_hi != rule->grid_action[m_last])
        rc = lop_switch_find(&search, rule->grid[m_last], far_hi, rule->grid_action[m_last],
                             a_hi, 0, &list);
    if (rc != 0) {
        free(list.items);
        return -1;
    }
    rule->switches = list.items;
    rule->n_switches = list.n;
    return 0;
}

/* The index of the numeric channel of a problem (there is exactly one here). */
static size_t numeric_channel(const lop_problem *p)
{
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].kind == LOP_CHANNEL_NOISE)
            return i;
    return 0;
}

static lop_status prepare_rules(grid_job *job, lop_results *r, lop_error *err)
{
    const lop_problem *p = job->p;
    for (size_t k = 0; k < p->n_rules; k++) {
        const lop_rule_spec *spec = &p->rules[k];
        lop_compared_rule *cr = &r->compared[k];
        if (spec->kind == LOP_RULE_KIND_BELIEVED) {
            const lop_problem *bp = spec->believed;
            if (lop_problem_numeric_channels(bp) != 1 || bp->n_channels != 1) {
                cr->not_computed_why = lop_strdup("the believed problem needs one numeric "
                                                  "channel, as the true one has");
                if (!cr->not_computed_why)
                    return lop_error_run(err, "out of memory");
                continue;
            }
            job->believed[k].bp = bp;
            job->believed[k].c = &bp->channels[numeric_channel(bp)];
            job->believed[k].logprior = bp->log_prior;
            if (lop_evidence_kernel_init(&job->believed[k].kern, job->believed[k].c,
                                         bp->n_states, job->believed[k].c->repeats) != 0)
                return lop_error_run(err, "out of memory");
            job->believed[k].kern.negligible = negligible_for(bp);
        }
        cr->grid_decision = malloc(r->rule.n_grid * sizeof *cr->grid_decision);
        job->rule_loss[k] = malloc(r->rule.n_grid * sizeof **job->rule_loss);
        if (!cr->grid_decision || !job->rule_loss[k])
            return lop_error_run(err, "out of memory");
    }
    return LOP_OK;
}

lop_status lop_rule_solve_grid(const lop_problem *p, lop_results *r, lop_error *err)
{
    lop_rule_result *rule = &r->rule;
    lop_status st = LOP_OK;
    grid_job job = {.p = p,
                    .logprior = p->log_prior,
                    .believed = calloc(p->n_rules + 1, sizeof(believed_view)),
                    .rule_loss = calloc(p->n_rules + 1, sizeof(double *))};
    if (!job.believed || !job.rule_loss) {
        st = lop_error_run(err, "out of memory");
        goto done;
    }
    job.loss_scale = p->estimate ? 0 : lop_decide_loss_scale(p);
    job.channel = numeric_channel(p);
    job.c = &p->channels[job.channel];
    rule->numeric_channel = (long)job.channel;
    if (lop_evidence_kernel_init(&job.kern, job.c, p->n_states, job.c->repeats) != 0) {
        st = lop_error_run(err, "out of memory");
        goto done;
    }
    job.kern.negligible = negligible_for(p);
    int grid = build_grid(p, job.c, rule);
    if (grid == -2) {
        st = lop_rule_not_computed(r, err, "the counts span more than a million values; "
                                           "give grid_from and grid_to");
        goto done;
    }
    rule->n_rows = 1;
    rule->grid_weight = malloc(rule->n_grid * sizeof *rule->grid_weight);
    rule->grid_loss = malloc(rule->n_grid * sizeof *rule->grid_loss);
    if (p->estimate)
        rule->grid_estimate = malloc(rule->n_grid * sizeof *rule->grid_estimate);
    else
        rule->grid_action = malloc(rule->n_grid * sizeof *rule->grid_action);
    if (grid != 0 || !rule->grid_weight || !rule->grid_loss ||
        (p->estimate ? !rule->grid_estimate : !rule->grid_action)) {
        st = lop_error_run(err, "out of memory");
        goto done;
    }
    if (prepare_rules(&job, r, err) != LOP_OK) {
        st = LOP_ERUN;
        goto done;
    }

    int failed = 0;
#pragma omp parallel
    {
        thread_work *t = thread_work_new(&job);
        if (!t) {
#pragma omp atomic write
            failed = 1;
        }
#pragma omp for schedule(static)
        for (size_t m = 0; m < rule->n_grid; m++)
            if (t)
                solve_point(&job, t, r, m);
        thread_work_free(t, p->n_rules);
    }
    if (failed) {
        st = lop_error_run(err, "out of memory in the rule's workspaces");
        goto done;
    }

    /* Sums in a fixed order, so the result does not depend on the thread count. The
     * coverage is the predictive mass the grid holds by the same rule; risks of
     * estimates are divided by it, so a sliver beyond the grid is counted at the
     * grid's average rather than as a loss of 0. */
    double bayes_sum = 0;
    rule->coverage = 0;
    for (size_t m = 0; m < rule->n_grid; m++) {
        double w = rule->grid_weight[m] * simpson_factor(rule, m);
        bayes_sum += w * rule->grid_loss[m];
        rule->coverage += w;
    }
    if (p->estimate) {
        rule->bayes_risk = bayes_sum / rule->coverage;
        for (size_t k = 0; k < p->n_rules; k++) {
            lop_compared_rule *cr = &r->compared[k];
            if (!cr->grid_decision)
                continue;
            cr->risk = 0;
            for (size_t m = 0; m < rule->n_grid; m++)
                cr->risk += rule->grid_weight[m] * simpson_factor(rule, m) * job.rule_loss[k][m];
            cr->risk /= rule->coverage;
            cr->regret = cr->risk - rule->bayes_risk;
            cr->computed = true;
        }
    } else {
        /* Choices: the loss integrated exactly between the switch points, over the
         * whole measurement axis, and the compared rules likewise. */
        thread_work *t = thread_work_new(&job);
        if (!t || find_switches(&job, t, rule) != 0) {
            thread_work_free(t, p->n_rules);
            st = lop_error_run(err, "out of memory");
            goto done;
        }
        thread_work_free(t, p->n_rules);
        rule->bayes_risk = lop_rule_risk_between(p, job.c, rule->switches, rule->n_switches,
                                                 rule->grid_action[0]);
        rule->exact = true;
        if (lop_rule_compare_exact(p, r, err) != LOP_OK) {
            st = err->status;
            goto done;
        }
    }
    rule->computed = true;
    if (p->estimate && fabs(rule->coverage - 1) > COVERAGE_WARN &&
        lop_results_warn(r, "[%s]: the measurement grid holds %.4g of the predictive "
                            "probability where it should hold 1, so the Bayes risk is off by "
                            "about that share: the grid is too coarse for the noise (raise "
                            "grid_points) or too narrow (widen grid_from and grid_to)",
                         job.c->section, rule->coverage) != 0)
        st = lop_error_run(err, "out of memory");
done:
    for (size_t k = 0; job.believed && k < p->n_rules; k++) {
        lop_evidence_kernel_clear(&job.believed[k].kern);
    }
    lop_evidence_kernel_clear(&job.kern);
    for (size_t k = 0; job.rule_loss && k < p->n_rules; k++)
        free(job.rule_loss[k]);
    free(job.believed);
    free(job.rule_loss);
    return st;
}
