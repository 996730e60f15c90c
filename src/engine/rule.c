#include <math.h>
#include <stdlib.h>
#include <string.h>


#include "lopside/engine/decide.h"
#include "lopside/model/evidence.h"
#include "lopside/model/posterior.h"
#include "lopside/engine/rule.h"
#include "lopside/util/strutil.h"
#include "rule_private.h"

/* The automatic measurement grid leaves this much predictive mass outside (format.md). */
#define GRID_TAIL_MASS 1e-6
/* Beyond the measurement grid, switch points are searched this many sds further out,
 * where every state's tail mass is below 1e-200. */
#define FAR_TAIL_SDS 30.0

/* Count vectors of one table channel: counts (n_vectors x n_outcomes) and
 * log P(counts | s) (n_vectors x n_states). */
typedef struct {
    size_t n_vectors;
    size_t *counts;
    double *log_p;
} channel_table;

/* The numeric channel's view of one row: log weights of the states (prior times the
 * row's likelihood) and scratch space for posteriors. */
typedef struct {
    const lop_problem *p;
    const lop_channel *c;
    const double *row_logw;
    double *logw, *post;
    lop_switch_search search;
} numeric_view;

static void free_tables(channel_table *t, size_t n)
{
    for (size_t i = 0; t && i < n; i++) {
        free(t[i].counts);
        free(t[i].log_p);
    }
    free(t);
}

/* Next count vector in reverse-lexicographic order; false after the last one. */
static bool next_counts(size_t *v, size_t k)
{
    size_t i = k - 1;
    while (i-- > 0)
        if (v[i] > 0)
            break;
    if (i == (size_t)-1)
        return false;
    size_t tail = v[k - 1];
    v[k - 1] = 0;
    v[i]--;
    v[i + 1] = tail + 1;
    return true;
}

static int tabulate_channel(const lop_problem *p, const lop_channel *c, channel_table *t)
{
    size_t k = c->n_outcomes;
    size_t n = (size_t)llround(exp(lgamma((double)(c->repeats + k)) -
                                   lgamma((double)c->repeats + 1) - lgamma((double)k)));
    t->counts = malloc(n * k * sizeof *t->counts);
    t->log_p = malloc(n * p->n_states * sizeof *t->log_p);
    if (!t->counts || !t->log_p)
        return -1;
    size_t *v = t->counts;
    memset(v, 0, k * sizeof *v);
    v[0] = c->repeats;
    size_t i = 0;
    for (;;) {
        for (size_t s = 0; s < p->n_states; s++)
            t->log_p[i * p->n_states + s] = lop_evidence_log_counts(c, s, &t->counts[i * k]);
        if (i + 1 == n)
            break;
        memcpy(&t->counts[(i + 1) * k], &t->counts[i * k], k * sizeof *v);
        if (!next_counts(&t->counts[(i + 1) * k], k))
            break;
        i++;
    }
    t->n_vectors = i + 1;
    return 0;
}

/* Posterior expected loss of every action at measurement x of the numeric channel. */
static void expected_at(void *ctx, double x, double *el)
{
    numeric_view *v = ctx;
    const lop_problem *p = v->p;
    for (size_t s = 0; s < p->n_states; s++)
        v->logw[s] = v->row_logw[s] + lop_evidence_log_summary(v->c, s, x, v->c->repeats);
    lop_posterior_normalize(v->logw, p->n_states, v->post);
    lop_decide_expected(p, v->post, el);
}

/* The best action at the point expected_at last saw, ties told apart exactly. */
static size_t best_at(void *ctx, const double *el)
{
    numeric_view *v = ctx;
    return lop_decide_best_exact(v->p, v->logw, el, v->search.loss_scale);
}

static void measurement_grid(const lop_problem *p, const lop_channel *c, double *grid,
                             size_t m)
{
    double lo = c->grid_from, hi = c->grid_to;
    if (!c->grid_given) {
        /* Each state leaves at most GRID_TAIL_MASS/2 per side outside. */
        lo = INFINITY;
        hi = -INFINITY;
        for (size_t s = 0; s < p->n_states; s++) {
            lo = fmin(lo, lop_evidence_summary_quantile(c, s, 0.5 * GRID_TAIL_MASS, c->repeats));
            hi = fmax(hi, lop_evidence_summary_quantile(c, s, 1 - 0.5 * GRID_TAIL_MASS,
                                                        c->repeats));
        }
    }
    for (size_t i = 0; i < m; i++)
        grid[i] = lop_grid_point(lo, hi, i, m);
}

/* Decides every grid point of one row, finds its switch points and returns its exact
 * contribution to the Bayes risk: the loss integrated between switch points. */
static int solve_numeric_row(numeric_view *v, lop_rule_result *rule, size_t row,
                             lop_switch_list *switches, double *risk)
{
    const lop_problem *p = v->p;
    size_t m = rule->n_grid;
    size_t *act = &rule->grid_action[row * m];
    lop_switch_search *search = &v->search;
    for (size_t i = 0; i < m; i++)
        act[i] = lop_switch_best(search, rule->grid[i]);
    /* The grid leaves a sliver of predictive mass outside, where unequal sds can still
     * turn the decision: look there too, out to where no state has mass left. */
    double reach = 0;
    for (size_t s = 0; s < p->n_states; s++)
        reach = fmax(reach, FAR_TAIL_SDS * v->c->spread[s] / sqrt((double)v->c->repeats));
    double far_lo = rule->grid[0] - reach, far_hi = rule->grid[m - 1] + reach;
    size_t a_lo = lop_switch_best(search, far_lo), a_hi = lop_switch_best(search, far_hi);
    size_t first = switches->n;
    if (a_lo != act[0] &&
        lop_switch_find(search, far_lo, rule->grid[0], a_lo, act[0], row, switches) != 0)
        return -1;
    for (size_t i = 1; i < m; i++)
        if (act[i] != act[i - 1] &&
            lop_switch_find(search, rule->grid[i - 1], rule->grid[i], act[i - 1], act[i], row,
                            switches) != 0)
            return -1;
    if (a_hi != act[m - 1] &&
        lop_switch_find(search, rule->grid[m - 1], far_hi, act[m - 1], a_hi, row, switches) != 0)
        return -1;

    double lo = -INFINITY, total = 0;
    size_t a = a_lo;
    for (size_t k = first; k <= switches->n; k++) {
        double hi = k < switches->n ? switches->items[k].x : INFINITY;
        for (size_t s = 0; s < p->n_states; s++) {
            double w = exp(v->row_logw[s]);
            if (w > 0)
                total += w * lop_problem_loss(p, a, s) *
                         lop_evidence_summary_mass(v->c, s, lo, hi, v->c->repeats);
        }
        if (k < switches->n) {
            a = switches->items[k].to;
            lo = hi;
        }
    }
    *risk = total;
    return 0;
}

double lop_grid_point(double lo, double hi, size_t i, size_t n)
{
    double x = lo + (hi - lo) * (double)i / (double)(n - 1);
    /* A point that should be 0 shows as 0, not as a rounding residue like -3.5e-11. */
    return fabs(x) < 1e-12 * (hi - lo) ? 0 : x;
}

lop_status lop_rule_not_computed(lop_results *r, lop_error *err, const char *why)
{
    r->rule.computed = false;
    r->rule.not_computed_why = lop_strdup(why);
    if (!r->rule.not_computed_why || lop_results_warn(r, "rule not computed: %s", why) != 0)
        return lop_error_run(err, "out of memory");
    return LOP_OK;
}

/* Returns the risk under p of deciding a on the measurements in [lo, hi) of the one
 * numeric channel c: the loss integrated exactly with c's CDF, state by state. */
static double interval_risk(const lop_problem *p, const lop_channel *c, size_t a, double lo,
                            double hi)
{
    double total = 0;
    for (size_t s = 0; s < p->n_states; s++)
        if (p->prior[s] > 0)
            total += p->prior[s] * lop_problem_loss(p, a, s) *
                     lop_evidence_summary_mass(c, s, lo, hi, c->repeats);
    return total;
}

/* Risk under p of deciding actions[k] on the k-th interval between sorted cut points
 * of the one numeric channel c. */
static double risk_of_intervals(const lop_problem *p, const lop_channel *c, const double *cuts,
                                const size_t *actions, size_t n_cuts)
{
    double total = 0, lo = -INFINITY;
    for (size_t k = 0; k <= n_cuts; k++) {
        double hi = k < n_cuts ? cuts[k] : INFINITY;
        total += interval_risk(p, c, actions[k], lo, hi);
        lo = hi;
    }
    return total;
}

double lop_rule_risk_between(const lop_problem *p, const lop_channel *c,
                             const lop_switch_point *switches, size_t n, size_t only)
{
    double total = 0, lo = -INFINITY;
    size_t a = n ? switches[0].from : only;
    for (size_t k = 0; k <= n; k++) {
        double hi = k < n ? switches[k].x : INFINITY;
        total += interval_risk(p, c, a, lo, hi);
        if (k < n) {
            a = switches[k].to;
            lo = hi;
        }
    }
    return total;
}

/* [rule.NAME] comparisons on the exact path: a threshold cuts once; a believed rule
 * cuts where its own Bayes rule switches. Both are integrated exactly. */
lop_status lop_rule_compare_exact(const lop_problem *p, lop_results *r, lop_error *err)
{
    const lop_channel *c = r->rule.numeric_channel >= 0 ? &p->channels[r->rule.numeric_channel]
                                                        : NULL;
    for (size_t k = 0; k < p->n_rules; k++) {
        const lop_rule_spec *spec = &p->rules[k];
        lop_compared_rule *cr = &r->compared[k];
        if (!c || r->rule.n_columns) {
            cr->not_computed_why = lop_strdup("comparisons need one numeric channel and no "
                                              "outcome-table channel");
            if (!cr->not_computed_why)
                return lop_error_run(err, "out of memory");
            continue;
        }
        if (spec->kind == LOP_RULE_KIND_THRESHOLD) {
            size_t acts[2] = {0, 1};
            cr->risk = risk_of_intervals(p, c, &spec->at, acts, 1);
        } else {
            lop_results *br = lop_results_new(spec->believed);
            if (!br)
                return lop_error_run(err, "out of memory");
            if (lop_rule_solve(spec->believed, br, err) != LOP_OK) {
                lop_results_free(br);
                return err->status;
            }
            const lop_rule_result *b = &br->rule;
            size_t n = b->n_switches;
            double *cuts = malloc((n + 1) * sizeof *cuts);
            size_t *acts = malloc((n + 1) * sizeof *acts);
            if (!cuts || !acts || !b->computed || b->n_rows != 1) {
                free(cuts);
                free(acts);
                lop_results_free(br);
                cr->not_computed_why = lop_strdup("the believed problem's rule could not be "
                                                  "tabulated");
                if (!cr->not_computed_why)
                    return lop_error_run(err, "out of memory");
                continue;
            }
            acts[0] = n ? b->switches[0].from : b->grid_action[0];
            for (size_t i = 0; i < n; i++) {
                cuts[i] = b->switches[i].x;
                acts[i + 1] = b->switches[i].to;
            }
            cr->risk = risk_of_intervals(p, c, cuts, acts, n);
            free(cuts);
            free(acts);
            lop_results_free(br);
        }
        cr->regret = cr->risk - r->rule.bayes_risk;
        cr->computed = true;
    }
    return LOP_OK;
}

/* Generic path: a grid of states, estimates, or a numeric channel that is not gaussian. */
static bool needs_grid_path(const lop_problem *p)
{
    if (p->states_kind == LOP_STATES_GRID || p->estimate)
        return true;
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].kind == LOP_CHANNEL_NOISE &&
            p->channels[i].noise != LOP_NOISE_GAUSSIAN)
            return true;
    return false;
}

static lop_status solve_table_and_gaussian(const lop_problem *p, lop_results *r,
                                           lop_error *err);

lop_status lop_rule_solve(const lop_problem *p, lop_results *r, lop_error *err)
{
    lop_rule_result *rule = &r->rule;
    if (!p->estimate) {
        double *el = malloc(p->n_actions * sizeof *el);
        if (!el)
            return lop_error_run(err, "out of memory");
        lop_decide_expected(p, p->prior, el);
        rule->prior_only_action = lop_decide_best(el, p->n_actions);
        rule->prior_only_risk = el[rule->prior_only_action];
        free(el);
    } else {
        lop_curve_work *w = lop_decide_curve_work(p);
        if (!w)
            return lop_error_run(err, "out of memory");
        lop_status st =
            lop_decide_estimate_risk(p, w, p->prior, NULL, &rule->prior_only_risk, err);
        lop_curve_work_free(w);
        if (st != LOP_OK)
            return st;
    }
    if (p->n_channels == 0)
        return LOP_OK;
    r->has_rule = true;
    if (lop_problem_numeric_channels(p) > 1)
        return lop_rule_not_computed(r, err,
                                     "the rule covers at most one numeric channel; the case "
                                     "is still exact");
    if (!needs_grid_path(p)) {
        lop_status st = solve_table_and_gaussian(p, r, err);
        return st == LOP_OK && rule->computed ? lop_rule_compare_exact(p, r, err) : st;
    }
    if (lop_problem_numeric_channels(p) != 1 || p->n_channels != 1)
        return lop_rule_not_computed(r, err,
                                     "a rule over an outcome table together with a "
                                     "non-gaussian or grid channel is not supported; the "
                                     "case is still exact");
    return lop_rule_solve_grid(p, r, err);
}

/* Finite states, choices: every combination of outcome counts of the table channels,
 * times the grid of at most one gaussian channel, integrated exactly. */
static lop_status solve_table_and_gaussian(const lop_problem *p, lop_results *r,
                                           lop_error *err)
{
    lop_rule_result *rule = &r->rule;
    size_t n_table = p->n_channels - lop_problem_numeric_channels(p);
    channel_table *tables = calloc(n_table ? n_table : 1, sizeof *tables);
    size_t *table_channel = calloc(n_table ? n_table : 1, sizeof *table_channel);
    double *logw = malloc(p->n_states * sizeof *logw);
    double *row_logw = malloc(p->n_states * sizeof *row_logw);
    double *post = malloc(p->n_states * sizeof *post);
    double *scratch = malloc(p->n_states * sizeof *scratch);
    double *row_el = malloc(p->n_actions * sizeof *row_el);
    size_t *digit = calloc(n_table ? n_table : 1, sizeof *digit);
    lop_switch_list switches = {0};
    lop_status st = LOP_OK;
    if (!tables || !table_channel || !logw || !row_logw || !post || !scratch || !row_el ||
        !digit)
        goto no_memory;

    rule->n_rows = 1;
    rule->n_columns = 0;
    for (size_t i = 0, t = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE) {
            rule->numeric_channel = (long)i;
            continue;
        }
        table_channel[t] = i;
        if (tabulate_channel(p, c, &tables[t]) != 0)
            goto no_memory;
        rule->n_rows *= tables[t].n_vectors;
        rule->n_columns += c->n_outcomes;
        t++;
    }
    const lop_channel *numeric =
        rule->numeric_channel >= 0 ? &p->channels[rule->numeric_channel] : NULL;
    if (numeric) {
        rule->n_grid = numeric->grid_points;
        if ((double)rule->n_rows * (double)rule->n_grid > LOP_RULE_CELLS_MAX) {
            st = lop_rule_not_computed(r, err, "the rule table would exceed its size limit; lower "
                                      "grid_points or repeats");
            goto done;
        }
        rule->grid = malloc(rule->n_grid * sizeof *rule->grid);
        rule->grid_action = malloc(rule->n_rows * rule->n_grid * sizeof *rule->grid_action);
        if (!rule->grid || !rule->grid_action)
            goto no_memory;
        measurement_grid(p, numeric, rule->grid, rule->n_grid);
    }
    rule->counts = malloc((rule->n_columns ? rule->n_rows * rule->n_columns : 1) *
                          sizeof *rule->counts);
    rule->row_probability = malloc(rule->n_rows * sizeof *rule->row_probability);
    rule->row_action = malloc(rule->n_rows * sizeof *rule->row_action);
    rule->row_expected_loss = malloc(rule->n_rows * sizeof *rule->row_expected_loss);
    if (!rule->counts || !rule->row_probability || !rule->row_action ||
        !rule->row_expected_loss)
        goto no_memory;

    numeric_view view = {p, numeric, row_logw, logw, post,
                         {expected_at, best_at, NULL, p->n_actions, lop_decide_loss_scale(p),
                          row_el}};
    view.search.ctx = &view;
    rule->bayes_risk = 0;
    for (size_t row = 0; row < rule->n_rows; row++) {
        /* Row = one count vector per table channel, the last channel varying fastest. */
        for (size_t s = 0; s < p->n_states; s++)
            row_logw[s] = p->log_prior[s];
        size_t col = 0;
        for (size_t t = 0; t < n_table; t++) {
            const lop_channel *c = &p->channels[table_channel[t]];
            const channel_table *tab = &tables[t];
            for (size_t s = 0; s < p->n_states; s++)
                row_logw[s] += tab->log_p[digit[t] * p->n_states + s];
            memcpy(&rule->counts[row * rule->n_columns + col],
                   &tab->counts[digit[t] * c->n_outcomes], c->n_outcomes * sizeof(size_t));
            col += c->n_outcomes;
        }
        for (size_t t = n_table; t-- > 0;) {
            if (++digit[t] < tables[t].n_vectors)
                break;
            digit[t] = 0;
        }
        double log_row = lop_posterior_normalize(row_logw, p->n_states, scratch);
        rule->row_probability[row] = exp(log_row);

        lop_decide_expected(p, scratch, row_el);
        rule->row_action[row] = lop_decide_best(row_el, p->n_actions);
        rule->row_expected_loss[row] = row_el[rule->row_action[row]];
        if (!numeric) {
            rule->bayes_risk += rule->row_probability[row] * rule->row_expected_loss[row];
            continue;
        }
        double risk;
        if (solve_numeric_row(&view, rule, row, &switches, &risk) != 0)
            goto no_memory;
        rule->bayes_risk += risk;
    }
    rule->switches = switches.items;
    rule->n_switches = switches.n;
    switches.items = NULL;
    rule->computed = true;
    rule->exact = true;
    if (numeric && numeric->repeats > 1) {
        bool common_sd = true;
        for (size_t s = 1; s < p->n_states; s++)
            common_sd &= numeric->spread[s] == numeric->spread[0];
        if (!common_sd &&
            lop_results_warn(r,
                             "[%s]: the rule decides on the mean of %zu repeats, which is not "
                             "a sufficient statistic when sd differs between states; the "
                             "case uses every observed value",
                             numeric->section, numeric->repeats) != 0)
            goto no_memory;
    }
    goto done;
no_memory:
    st = lop_error_run(err, "out of memory while tabulating the rule");
done:
    free_tables(tables, n_table);
    free(table_channel);
    free(logw);
    free(row_logw);
    free(post);
    free(scratch);
    free(row_el);
    free(digit);
    free(switches.items);
    return st;
}
