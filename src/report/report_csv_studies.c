/* The CSV tables of the studies around the problem: rules compared with the Bayes rule,
 * the value of information, every sweep, the designs and the simulation. One static
 * function per table; each returns at once when its data is absent. Scores are in the
 * file's orientation (columns named risk or payoff, expected_loss or expected_payoff);
 * a number that does not exist is an empty field, as JSON's null. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/report/report.h"
#include "lopside/util/strutil.h"
#include "report_csv_private.h"
#include "report_studies.h"

/* Characters of a sweep's name kept in its file names; longer names are cut. */
#define FILE_NAME_CHARS 100

/* A channel's name by index. */
static const char *channel(const lop_problem *p, size_t i)
{
    return lop_report_channel_name(&p->channels[i]);
}

static void csv_flag(csv_set *set, bool v)
{
    csv_str(set, v ? "1" : "0");
}

/* --- rules -------------------------------------------------------------------------- */

static void table_rules(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_results *r = set->r;
    if (!r->n_compared)
        return;
    char holds[512];
    snprintf(holds, sizeof holds, "the Bayes rule and every [rule.NAME] judged under the "
             "problem as given: %s per decision (%s) and regret (how much %s than the Bayes "
             "rule); not_computed says why a rule has none", p->payoff ? "payoff" : "risk",
             csv_score_unit(p), p->payoff ? "less it earns" : "more it loses");
    if (!csv_begin(set, "rules.csv", holds))
        return;
    const char *head[] = {"rule", "kind", p->payoff ? "payoff" : "risk", "regret",
                          "not_computed", NULL};
    csv_header(set, head);
    csv_str(set, "bayes");
    csv_str(set, "bayes");
    if (r->rule.computed) {
        csv_num(set, lop_problem_oriented(p, r->rule.bayes_risk));
        csv_num(set, 0);
        csv_str(set, "");
    } else {
        csv_str(set, "");
        csv_str(set, "");
        csv_str(set, r->rule.not_computed_why);
    }
    csv_end_line(set, true);
    for (size_t k = 0; k < r->n_compared; k++) {
        const lop_compared_rule *c = &r->compared[k];
        csv_str(set, c->name);
        csv_str(set, lop_rule_kind_name(p->rules[k].kind));
        if (c->computed) {
            csv_num(set, lop_problem_oriented(p, c->risk));
            csv_num(set, c->regret);
            csv_str(set, "");
        } else {
            csv_str(set, "");
            csv_str(set, "");
            csv_str(set, c->not_computed_why ? c->not_computed_why
                                             : "the rule was not computed");
        }
        csv_end_line(set, true);
    }
    csv_end(set);
}

/* --- value of information ------------------------------------------------------------ */

static void table_value_extra(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_value_result *v = &set->r->value;
    if (!v->present || !v->n_extra)
        return;
    char holds[512], cost[LOP_NUMBER_MAX];
    snprintf(holds, sizeof holds, "[value]: per channel and n more measurements beyond the "
             "design's repeats, the EVSI, their cost (n times %s) and the net value, in %s "
             "per decision; on_the_mean is 1 where the EVSI is a lower bound (decided on the "
             "mean of the repeats)", lop_shortest_number(p->value.cost, cost, sizeof cost),
             csv_score_unit(p));
    if (!csv_begin(set, "value_extra.csv", holds))
        return;
    static const char *const head[] = {"channel", "n", "evsi", "cost", "net", "on_the_mean",
                                       "not_computed", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < v->n_extra; i++) {
        const lop_value_extra *x = &v->extra[i];
        csv_str(set, channel(p, x->channel));
        csv_size(set, x->n);
        if (x->computed)
            csv_num(set, x->evsi);
        else
            csv_str(set, "");
        csv_num(set, (double)x->n * p->value.cost);
        if (x->computed)
            csv_num(set, x->net);
        else
            csv_str(set, "");
        csv_flag(set, x->on_the_mean);
        csv_str(set, x->computed ? "" : x->not_computed_why);
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void table_value_next(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_value_result *v = &set->r->value;
    if (!v->present || !v->n_next)
        return;
    char holds[512];
    snprintf(holds, sizeof holds, "[value]: the value (%s) of one more measurement of each "
             "channel for the case at hand", csv_score_unit(p));
    if (!csv_begin(set, "value_case_next.csv", holds))
        return;
    static const char *const head[] = {"channel", "value", "not_computed", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < v->n_next; i++) {
        const lop_value_next *n = &v->next[i];
        csv_str(set, channel(p, n->channel));
        if (n->computed)
            csv_num(set, n->value);
        else
            csv_str(set, "");
        csv_str(set, n->computed ? "" : n->not_computed_why);
        csv_end_line(set, true);
    }
    csv_end(set);
}

/* --- sweeps --------------------------------------------------------------------------- */

/* Writes to base "sweep_NAME" with every character other than ASCII letters, digits,
 * '.', '-' and '_' turned to '_', cut to FILE_NAME_CHARS, and "_2", "_3", ... added until
 * none of the sweep's files clashes with a file of the set. */
static void sweep_base(const csv_set *set, const char *name, char *base, size_t size)
{
    static const char *const suffixes[] = {".csv", "_switch_points.csv", "_threshold.csv"};
    char clean[FILE_NAME_CHARS + 1];
    size_t n = 0;
    for (const char *c = name; *c && n < FILE_NAME_CHARS; c++) {
        char ch = *c;
        bool keep = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
                    (ch >= '0' && ch <= '9') || ch == '.' || ch == '-' || ch == '_';
        clean[n++] = keep ? ch : '_';
    }
    clean[n] = '\0';
    for (int k = 1;; k++) {
        if (k == 1)
            snprintf(base, size, "sweep_%s", clean);
        else
            snprintf(base, size, "sweep_%s_%d", clean, k);
        bool clash = false;
        for (size_t i = 0; i < sizeof suffixes / sizeof suffixes[0]; i++) {
            char file[256];
            snprintf(file, sizeof file, "%s%s", base, suffixes[i]);
            clash |= csv_taken(set, file);
        }
        if (!clash)
            return;
    }
}

/* The rate columns' names: "P(a|s)" for finite states, "P(a)" for grid states. */
static void rate_heads(csv_set *set, const lop_sweep_result *sw, size_t n_actions)
{
    const lop_problem *p = set->p;
    char head[512];
    for (size_t a = 0; a < n_actions; a++) {
        if (!sw->by_state) {
            snprintf(head, sizeof head, "P(%s)", p->actions[a]);
            csv_str(set, head);
            continue;
        }
        for (size_t s = 0; s < p->n_states; s++) {
            snprintf(head, sizeof head, "P(%s|%s)", p->actions[a], p->state_labels[s]);
            csv_str(set, head);
        }
    }
}

static void rates(csv_set *set, const lop_sweep_result *sw, const double *v)
{
    for (size_t q = 0; q < sw->n_rates; q++) {
        if (v)
            csv_num(set, v[q]);
        else
            csv_str(set, "");
    }
}

static void flatness_heads(csv_set *set)
{
    static const char *const heads[] = {"within_0.01_from", "within_0.01_to",
                                        "within_0.05_from", "within_0.05_to",
                                        "within_0.1_from",  "within_0.1_to"};
    for (size_t i = 0; i < 2 * LOP_FLAT_LEVELS; i++)
        csv_str(set, heads[i]);
}

static void flatness(csv_set *set, const lop_flatness *f)
{
    for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
        csv_finite(set, f->computed ? f->range[l].from : NAN);
        csv_finite(set, f->computed ? f->range[l].to : NAN);
    }
}

static void path_points(csv_set *set, const lop_sweep_result *sw, const char *base)
{
    const lop_problem *p = set->p;
    const lop_sweep_spec *spec = sw->spec;
    char file[256], holds[512];
    snprintf(file, sizeof file, "%s.csv", base);
    snprintf(holds, sizeof holds, "[sweep.%s]: the problem re-solved with x = %s%s%s at every "
             "point (x runs fastest): the Bayes %s (%s per decision), EVPI, the case's Bayes "
             "%s%s", spec->name, spec->x, spec->y ? " and y = " : "", spec->y ? spec->y : "",
             p->payoff ? "payoff" : "risk", csv_score_unit(p),
             p->estimate ? "estimate and the estimates within 1%, 5%, 10% of its expected loss"
                         : "action and the choice rates",
             p->estimate ? "" : " (switch points in the _switch_points file)");
    if (!csv_begin(set, file, holds))
        return;
    csv_str(set, "x");
    if (spec->y)
        csv_str(set, "y");
    csv_str(set, "computed");
    csv_str(set, p->payoff ? "bayes_payoff" : "bayes_risk");
    csv_str(set, "evpi");
    csv_str(set, p->estimate ? "case_estimate" : "case_action");
    if (p->estimate)
        flatness_heads(set);
    else
        rate_heads(set, sw, p->n_actions);
    csv_end_line(set, false);
    for (size_t i = 0; i < sw->nx * sw->ny; i++) {
        const lop_sweep_point *pt = &sw->points[i];
        csv_num(set, pt->x);
        if (spec->y)
            csv_num(set, pt->y);
        csv_flag(set, pt->computed);
        csv_finite(set, pt->computed ? lop_problem_oriented(p, pt->bayes_risk) : NAN);
        csv_finite(set, pt->computed ? pt->evpi : NAN);
        if (p->estimate) {
            csv_num(set, pt->case_estimate);
            flatness(set, &pt->flatness);
        } else {
            csv_str(set, p->actions[pt->case_action]);
            rates(set, sw, pt->rates);
        }
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void path_switches(csv_set *set, const lop_sweep_result *sw, const char *base)
{
    const lop_problem *p = set->p;
    const lop_sweep_spec *spec = sw->spec;
    const lop_rule_result *rule = &set->r->rule;
    if (p->estimate)
        return;
    bool rows = set->r->has_rule && rule->n_columns > 0;
    char file[256], holds[512], measure[160] = "the measurement";
    if (set->r->has_rule && rule->numeric_channel >= 0)
        lop_report_measurement_name(measure, sizeof measure,
                                    &p->channels[rule->numeric_channel]);
    snprintf(file, sizeof file, "%s_switch_points.csv", base);
    snprintf(holds, sizeof holds, "[sweep.%s]: at every point, the values of %s where the "
             "Bayes action changes (switch_point), from the action below to the one above%s",
             spec->name, measure, rows ? ", per row of rule_table.csv" : "");
    if (!csv_begin(set, file, holds))
        return;
    csv_str(set, "x");
    if (spec->y)
        csv_str(set, "y");
    if (rows) {
        csv_str(set, "row");
        csv_str(set, "given");
    }
    csv_str(set, "switch_point");
    csv_str(set, "from");
    csv_str(set, "to");
    csv_end_line(set, false);
    char given[1024];
    for (size_t i = 0; i < sw->nx * sw->ny; i++) {
        const lop_sweep_point *pt = &sw->points[i];
        for (size_t q = 0; q < pt->n_switches; q++) {
            const lop_switch_point *sp = &pt->switches[q];
            csv_num(set, pt->x);
            if (spec->y)
                csv_num(set, pt->y);
            if (rows) {
                lop_report_row_given(given, sizeof given, p, rule, sp->row);
                csv_size(set, sp->row + 1);
                csv_str(set, given);
            }
            csv_num(set, sp->x);
            csv_str(set, p->actions[sp->from]);
            csv_str(set, p->actions[sp->to]);
            csv_end_line(set, true);
        }
    }
    csv_end(set);
}

static bool two_labelled(const lop_problem *p)
{
    return p->states_kind == LOP_STATES_LABELS && p->n_states == 2;
}

static bool any_sdt(const lop_sweep_result *sw)
{
    for (size_t j = 0; j < sw->ny; j++)
        if (sw->rows[j].sdt)
            return true;
    return false;
}

static void threshold_points(csv_set *set, const lop_sweep_result *sw, const char *base)
{
    const lop_problem *p = set->p;
    const lop_sweep_spec *spec = sw->spec;
    bool hits = two_labelled(p), sdt = any_sdt(sw);
    char file[256], holds[512], measure[160];
    lop_report_threshold_measurement(measure, sizeof measure, p);
    snprintf(file, sizeof file, "%s.csv", base);
    snprintf(holds, sizeof holds, "[sweep.%s]: every threshold x on %s (the second action at "
             "or above it)%s: each action's rate%s%s, the expected %s (%s per decision)%s",
             spec->name, measure, spec->y ? " for every y" : "",
             sw->by_state ? " per state" : "", hits ? ", hit and false-alarm rates" : "",
             lop_problem_orientation(p), csv_score_unit(p),
             sdt ? ", c and beta of signal detection" : "");
    if (!csv_begin(set, file, holds))
        return;
    csv_str(set, "x");
    if (spec->y)
        csv_str(set, "y");
    rate_heads(set, sw, 2);
    if (hits) {
        csv_str(set, "hit_rate");
        csv_str(set, "false_alarm_rate");
    }
    csv_str(set, p->payoff ? "expected_payoff" : "expected_loss");
    if (sdt) {
        csv_str(set, "c");
        csv_str(set, "beta");
    }
    csv_end_line(set, false);
    for (size_t i = 0; i < sw->nx * sw->ny; i++) {
        const lop_sweep_point *pt = &sw->points[i];
        const lop_threshold_row *row = &sw->rows[i / sw->nx];
        csv_num(set, pt->x);
        if (spec->y)
            csv_num(set, pt->y);
        rates(set, sw, pt->rates);
        if (hits) {
            csv_finite(set, pt->rates ? pt->rates[p->n_states + 1] : NAN);
            csv_finite(set, pt->rates ? pt->rates[p->n_states] : NAN);
        }
        csv_finite(set, lop_problem_oriented(p, pt->expected_loss));
        if (sdt) {
            csv_finite(set, row->sdt ? pt->criterion : NAN);
            csv_finite(set, row->sdt ? pt->beta : NAN);
        }
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void threshold_summary(csv_set *set, const lop_sweep_result *sw, const char *base)
{
    const lop_problem *p = set->p;
    const lop_sweep_spec *spec = sw->spec;
    bool sdt = any_sdt(sw);
    char file[256], holds[512];
    snprintf(file, sizeof file, "%s_threshold.csv", base);
    snprintf(holds, sizeof holds, "[sweep.%s]: %sthe Bayes threshold (empty when always taking "
             "one action does as well), its expected %s, the Bayes %s (%s per decision)%s and "
             "the thresholds within 1%%, 5%%, 10%% of the optimum", spec->name,
             spec->y ? "for every y, " : "", lop_problem_orientation(p),
             p->payoff ? "payoff" : "risk", csv_score_unit(p), sdt ? ", d'" : "");
    if (!csv_begin(set, file, holds))
        return;
    if (spec->y)
        csv_str(set, "y");
    csv_str(set, "bayes_threshold");
    csv_str(set, p->payoff ? "bayes_threshold_expected_payoff" : "bayes_threshold_expected_loss");
    csv_str(set, p->payoff ? "bayes_payoff" : "bayes_risk");
    if (sdt)
        csv_str(set, "d_prime");
    flatness_heads(set);
    csv_end_line(set, false);
    for (size_t j = 0; j < sw->ny; j++) {
        const lop_threshold_row *row = &sw->rows[j];
        if (spec->y)
            csv_num(set, row->y);
        csv_finite(set, row->has_bayes_threshold ? row->bayes_threshold : NAN);
        csv_finite(set, lop_problem_oriented(p, row->bayes_threshold_loss));
        csv_finite(set, lop_problem_oriented(p, row->bayes_risk));
        if (sdt)
            csv_finite(set, row->sdt ? row->d_prime : NAN);
        lop_flatness none = {.computed = false};
        flatness(set, row->has_bayes_threshold ? &row->flatness : &none);
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void table_sweeps(csv_set *set)
{
    for (size_t k = 0; k < set->r->n_sweeps && set->status == LOP_OK; k++) {
        const lop_sweep_result *sw = &set->r->sweeps[k];
        char base[FILE_NAME_CHARS + 32];
        sweep_base(set, sw->spec->name, base, sizeof base);
        if (sw->threshold) {
            threshold_points(set, sw, base);
            threshold_summary(set, sw, base);
        } else {
            path_points(set, sw, base);
            path_switches(set, sw, base);
        }
    }
}

/* --- designs ------------------------------------------------------------------------ */

static void table_designs(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_results *r = set->r;
    if (!r->n_designs)
        return;
    if (!csv_begin(set, "designs.csv", "every [design.NAME]: the path varied over its bracket "
                   "(from, to), the goal and its target (equals), whether it was reached, the "
                   "value found and the goal there (achieved), or the range the goal spans "
                   "over the bracket (range_low, range_high; for action goals the Bayes actions "
                   "seen), and the problems solved"))
        return;
    static const char *const head[] = {"name", "vary", "from", "to", "goal", "equals",
                                       "reached", "value", "achieved", "range_low",
                                       "range_high", "actions_seen", "note", "evaluations",
                                       NULL};
    csv_header(set, head);
    char goal[256], seen[1024];
    for (size_t k = 0; k < r->n_designs; k++) {
        const lop_design_result *d = &r->designs[k];
        const lop_design_spec *spec = d->spec;
        bool action = spec->goal == LOP_GOAL_ACTION;
        csv_str(set, spec->name);
        csv_str(set, spec->vary);
        csv_num(set, spec->from);
        csv_num(set, spec->to);
        csv_str(set, lop_report_goal_name(p, spec, goal, sizeof goal));
        if (action)
            csv_str(set, p->actions[spec->goal_action]);
        else
            csv_num(set, spec->equals);
        csv_flag(set, d->reached);
        csv_finite(set, d->reached ? d->value : NAN);
        csv_finite(set, d->reached && !action ? d->achieved : NAN);
        csv_finite(set, !d->reached && !action ? d->range_lo : NAN);
        csv_finite(set, !d->reached && !action ? d->range_hi : NAN);
        size_t at = 0;
        seen[0] = '\0';
        for (size_t i = 0; !d->reached && action && i < d->n_seen && at < sizeof seen; i++) {
            int n = snprintf(seen + at, sizeof seen - at, "%s%s", i ? " " : "",
                             p->actions[d->seen[i]]);
            at += n > 0 ? (size_t)n : 0;
        }
        csv_str(set, seen);
        csv_str(set, d->note ? d->note : "");
        csv_size(set, d->evaluations);
        csv_end_line(set, true);
    }
    csv_end(set);
}

/* --- simulation ------------------------------------------------------------------------- */

static void table_simulation(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_simulation *sim = &set->r->simulation;
    if (!sim->run)
        return;
    char holds[512];
    snprintf(holds, sizeof holds, "[simulate]: per rule, %zu sessions of %zu trials (seed %lu), "
             "the %s per trial and per session (%s) with 95%% intervals, the analytic value "
             "per trial, session percentiles%s%s", sim->sessions, sim->trials, sim->seed,
             lop_problem_orientation(p), csv_score_unit(p),
             sim->floor_given ? ", the share of sessions below the floor" : "",
             p->estimate ? ", the mean error and mean absolute error of the estimates" : "");
    if (!csv_begin(set, "simulation.csv", holds))
        return;
    const char *head[24];
    size_t n = 0;
    static const char *const fixed[] = {"rule", "simulated", "analytic", "mean_per_trial",
                                        "sd_per_trial", "ci95_low", "ci95_high",
                                        "mean_per_session", "session_ci95_low",
                                        "session_ci95_high", "p05", "p50", "p95"};
    for (size_t i = 0; i < sizeof fixed / sizeof fixed[0]; i++)
        head[n++] = fixed[i];
    if (sim->floor_given)
        head[n++] = "below_floor";
    if (p->estimate) {
        head[n++] = "mean_error";
        head[n++] = "mean_absolute_error";
    }
    head[n++] = "not_simulated";
    head[n] = NULL;
    csv_header(set, head);
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        bool s = m->simulated;
        csv_str(set, m->name);
        csv_flag(set, s);
        csv_finite(set, m->has_analytic ? m->analytic : NAN);
        csv_finite(set, s ? m->mean_per_trial : NAN);
        csv_finite(set, s ? m->sd_per_trial : NAN);
        csv_finite(set, s ? m->ci95[0] : NAN);
        csv_finite(set, s ? m->ci95[1] : NAN);
        csv_finite(set, s ? m->mean_per_session : NAN);
        csv_finite(set, s ? m->session_ci95[0] : NAN);
        csv_finite(set, s ? m->session_ci95[1] : NAN);
        csv_finite(set, s ? m->p05 : NAN);
        csv_finite(set, s ? m->p50 : NAN);
        csv_finite(set, s ? m->p95 : NAN);
        if (sim->floor_given)
            csv_finite(set, s ? m->below_floor : NAN);
        if (p->estimate) {
            csv_finite(set, s ? m->mean_error : NAN);
            csv_finite(set, s ? m->mean_absolute_error : NAN);
        }
        csv_str(set, s ? "" : m->not_simulated_why);
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void table_simulation_rates(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_simulation *sim = &set->r->simulation;
    if (!sim->run || p->estimate)
        return;
    bool grid = p->states_kind == LOP_STATES_GRID;
    char holds[512];
    snprintf(holds, sizeof holds, "[simulate]: per simulated rule, action and state, the trials "
             "in that state, the choices of the action among them and their share (rate)%s",
             grid ? "; grid states: state is empty and counts every trial" : "");
    if (!csv_begin(set, "simulation_rates.csv", holds))
        return;
    static const char *const head[] = {"rule", "action", "state", "trials", "choices", "rate",
                                       NULL};
    csv_header(set, head);
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        if (!m->simulated)
            continue;
        size_t R = m->n_rate_states;
        for (size_t a = 0; a < p->n_actions; a++)
            for (size_t s = 0; s < R; s++) {
                size_t trials = m->state_trials[s], n = m->choices[a * R + s];
                csv_str(set, m->name);
                csv_str(set, p->actions[a]);
                csv_str(set, grid ? "" : p->state_labels[s]);
                csv_size(set, trials);
                csv_size(set, n);
                csv_finite(set, trials ? (double)n / (double)trials : NAN);
                csv_end_line(set, true);
            }
    }
    csv_end(set);
}

static void table_simulation_histogram(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_simulation *sim = &set->r->simulation;
    if (!sim->run)
        return;
    char holds[512];
    snprintf(holds, sizeof holds, "[simulate]: per simulated rule, the sessions whose total %s "
             "(%s) lies in each bin [from, to)", lop_problem_orientation(p), csv_score_unit(p));
    if (!csv_begin(set, "simulation_histogram.csv", holds))
        return;
    static const char *const head[] = {"rule", "from", "to", "sessions", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        for (size_t b = 0; m->simulated && b < m->n_bins; b++) {
            csv_str(set, m->name);
            csv_num(set, m->edges[b]);
            csv_num(set, m->edges[b + 1]);
            csv_size(set, m->counts[b]);
            csv_end_line(set, true);
        }
    }
    csv_end(set);
}

void csv_tables_studies(csv_set *set)
{
    void (*const tables[])(csv_set *) = {
        table_rules,   table_value_extra, table_value_next,          table_sweeps,
        table_designs, table_simulation,  table_simulation_rates, table_simulation_histogram,
    };
    for (size_t t = 0; t < sizeof tables / sizeof tables[0] && set->status == LOP_OK; t++)
        tables[t](set);
}
