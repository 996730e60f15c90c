#include <jansson.h>
#include <math.h>
#include <string.h>

#include "lopside/util/outfile.h"
#include "lopside/model/curve_family.h"
#include "lopside/report/report.h"
#include "report_studies.h"

json_t *lop_json_number(double v)
{
    return isfinite(v) ? json_real(v) : json_null();
}

void lop_json_score(json_t *obj, const lop_problem *p, const char *key, const char *payoff_key,
                    double loss)
{
    json_object_set_new(obj, key, lop_json_number(loss));
    if (p->payoff)
        json_object_set_new(obj, payoff_key, lop_json_number(-loss));
}

static json_t *string_array(char **items, size_t n)
{
    json_t *arr = json_array();
    for (size_t i = 0; i < n; i++)
        json_array_append_new(arr, json_string(items[i]));
    return arr;
}

static json_t *real_array(const double *v, size_t n)
{
    json_t *arr = json_array();
    for (size_t i = 0; i < n; i++)
        json_array_append_new(arr, lop_json_number(v[i]));
    return arr;
}

/* The loss or payoff curve of an estimate problem as read: its name, its numbers (scores
 * in the file's orientation) and, for points, its knots. */
static json_t *curve_json(const lop_problem *p)
{
    const lop_curve *c = &p->curve;
    const lop_curve_family *f = lop_curve_family_of(c->kind);
    double sign = p->payoff ? -1 : 1;
    json_t *obj = json_object();
    json_object_set_new(obj, "name", json_string(f->name));
    json_object_set_new(obj, "relative", json_boolean(c->relative));
    for (size_t i = 0; i < sizeof f->numbers / sizeof f->numbers[0] && f->numbers[i].name; i++) {
        double v = lop_curve_number_value(c, &f->numbers[i]);
        json_object_set_new(obj, f->numbers[i].name,
                            lop_json_number((f->numbers[i].score ? sign * v : v) + 0.0));
    }
    if (c->kind == LOP_CURVE_POINTS) {
        json_t *error = json_array(), *value = json_array();
        for (size_t i = 0; i < c->n_points; i++) {
            json_array_append_new(error, lop_json_number(c->error[i]));
            json_array_append_new(value, lop_json_number(sign * c->value[i] + 0.0));
        }
        json_object_set_new(obj, "error", error);
        json_object_set_new(obj, "value", value);
    }
    return obj;
}

static json_t *problem_json(const lop_problem *p)
{
    json_t *obj = json_object();
    json_object_set_new(obj, "title", json_string(p->title));
    json_object_set_new(obj, "notes", json_string(p->notes));
    json_object_set_new(obj, "unit", json_string(p->unit));
    json_object_set_new(obj, "score_unit", json_string(p->score_unit));
    json_t *states = json_object();
    if (p->states_kind == LOP_STATES_LABELS)
        json_object_set_new(states, "labels", string_array(p->state_labels, p->n_states));
    else
        json_object_set_new(states, p->states_kind == LOP_STATES_GRID ? "grid" : "values",
                            real_array(p->state_values, p->n_states));
    json_object_set_new(obj, "states", states);
    json_object_set_new(obj, "prior", real_array(p->prior, p->n_states));
    if (p->states_kind == LOP_STATES_GRID) {
        json_object_set_new(obj, "step", lop_json_number(p->step));
        json_object_set_new(obj, "prior_outside_grid", lop_json_number(p->prior_outside));
    }
    if (p->estimate) {
        json_object_set_new(obj, "estimates", real_array(p->estimates, p->n_estimates));
        json_object_set_new(obj, "curve", curve_json(p));
    }
    else
        json_object_set_new(obj, "actions", string_array(p->actions, p->n_actions));
    json_t *channels = json_array();
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        json_t *ch = json_object();
        json_object_set_new(ch, "name", json_string(lop_report_channel_name(c)));
        static const char *const noise[] = {"gaussian", "scalar", "lognormal", "poisson",
                                            "binomial"};
        json_object_set_new(ch, "kind",
                            json_string(c->kind == LOP_CHANNEL_TABLE ? "table" : noise[c->noise]));
        json_object_set_new(ch, "repeats", json_integer((json_int_t)c->repeats));
        if (c->kind == LOP_CHANNEL_TABLE)
            json_object_set_new(ch, "outcomes", string_array(c->outcomes, c->n_outcomes));
        json_array_append_new(channels, ch);
    }
    json_object_set_new(obj, "channels", channels);
    return obj;
}

static json_t *summary_json(const lop_summary *m, json_t *obj)
{
    json_object_set_new(obj, "mean", lop_json_number(m->mean));
    json_object_set_new(obj, "sd", lop_json_number(m->sd));
    json_object_set_new(obj, "median", lop_json_number(m->median));
    json_object_set_new(obj, "mode", lop_json_number(m->mode));
    json_object_set_new(obj, "q05", lop_json_number(m->q05));
    json_object_set_new(obj, "q95", lop_json_number(m->q95));
    return obj;
}

static json_t *case_json(const lop_problem *p, const lop_results *r)
{
    const lop_case_result *c = &r->kase;
    json_t *obj = json_object();
    json_t *post = json_object();
    if (p->states_kind == LOP_STATES_VALUES)
        json_object_set_new(post, "values", real_array(p->state_values, p->n_states));
    else if (p->states_kind == LOP_STATES_LABELS)
        json_object_set_new(post, "labels", string_array(p->state_labels, p->n_states));
    if (p->states_kind != LOP_STATES_GRID)
        json_object_set_new(post, "p", real_array(c->posterior, p->n_states));
    if (c->numeric)
        summary_json(&c->summary, post);
    json_object_set_new(obj, "posterior", post);
    if (p->states_kind == LOP_STATES_GRID)
        json_object_set_new(obj, "posterior_grid", real_array(c->posterior, p->n_states));
    if (p->estimate) {
        json_object_set_new(obj, "bayes_action", lop_json_number(c->bayes_estimate));
        json_object_set_new(obj, "bayes_estimate", lop_json_number(c->bayes_estimate));
        lop_json_score(obj, p, "expected_loss", "expected_payoff", c->bayes_estimate_loss);
        json_t *curve = json_object();
        json_object_set_new(curve, "estimate", real_array(p->estimates, p->n_estimates));
        json_object_set_new(curve, "expected_loss", real_array(c->estimate_curve, p->n_estimates));
        json_object_set_new(obj, "curve", curve);
        json_object_set_new(obj, "evpi", lop_json_number(c->evpi));
        return obj;
    }
    json_t *actions = json_array();
    for (size_t a = 0; a < p->n_actions; a++) {
        json_t *row = json_object();
        json_object_set_new(row, "action", json_string(p->actions[a]));
        lop_json_score(row, p, "expected_loss", "expected_payoff", c->expected_loss[a]);
        json_array_append_new(actions, row);
    }
    json_object_set_new(obj, "actions", actions);
    json_object_set_new(obj, "bayes_action", json_string(p->actions[c->bayes_action]));
    lop_json_score(obj, p, "expected_loss", "expected_payoff", c->expected_loss[c->bayes_action]);
    json_object_set_new(obj, "runner_up", json_string(p->actions[c->runner_up]));
    json_object_set_new(obj, "margin", lop_json_number(c->margin));
    json_t *tied = json_array();
    for (size_t t = 0; c->n_tied > 1 && t < c->n_tied; t++)
        json_array_append_new(tied, json_string(p->actions[c->tied[t]]));
    json_object_set_new(obj, "ties", tied);
    json_object_set_new(obj, "evpi", lop_json_number(c->evpi));
    return obj;
}

/* The outcomes of one rule row: a label per channel with one repeat, counts otherwise. */
static json_t *row_outcomes(const lop_problem *p, const lop_rule_result *rule, size_t row)
{
    json_t *obj = json_object();
    size_t col = 0;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        const size_t *counts = &rule->counts[row * rule->n_columns + col];
        json_t *value = NULL;
        if (c->repeats == 1) {
            for (size_t o = 0; o < c->n_outcomes; o++)
                if (counts[o])
                    value = json_string(c->outcomes[o]);
        } else {
            value = json_object();
            for (size_t o = 0; o < c->n_outcomes; o++)
                json_object_set_new(value, c->outcomes[o], json_integer((json_int_t)counts[o]));
        }
        json_object_set_new(obj, lop_report_channel_name(c), value);
        col += c->n_outcomes;
    }
    return obj;
}

static json_t *rule_json(const lop_problem *p, const lop_results *r)
{
    const lop_rule_result *rule = &r->rule;
    json_t *obj = json_object();
    json_object_set_new(obj, "computed", json_boolean(rule->computed));
    lop_json_score(obj, p, "prior_only_risk", "prior_only_payoff", rule->prior_only_risk);
    if (!p->estimate)
        json_object_set_new(obj, "prior_only_action",
                            json_string(p->actions[rule->prior_only_action]));
    if (!rule->computed) {
        json_object_set_new(obj, "bayes_risk", json_null());
        json_object_set_new(obj, "not_computed", json_string(rule->not_computed_why));
        json_object_set_new(obj, "switch_points", json_array());
        return obj;
    }
    lop_json_score(obj, p, "bayes_risk", "bayes_payoff", rule->bayes_risk);
    json_object_set_new(obj, "value_of_evidence",
                        lop_json_number(rule->prior_only_risk - rule->bayes_risk));
    json_object_set_new(obj, "exact", json_boolean(rule->exact));
    if (!rule->exact)
        json_object_set_new(obj, "coverage", lop_json_number(rule->coverage));
    json_t *switches = json_array();
    for (size_t k = 0; k < rule->n_switches; k++) {
        const lop_switch_point *sp = &rule->switches[k];
        json_t *s = json_object();
        json_object_set_new(s, "x", lop_json_number(sp->x));
        json_object_set_new(s, "from", json_string(p->actions[sp->from]));
        json_object_set_new(s, "to", json_string(p->actions[sp->to]));
        if (rule->n_columns)
            json_object_set_new(s, "given", row_outcomes(p, rule, sp->row));
        json_array_append_new(switches, s);
    }
    json_object_set_new(obj, "switch_points", switches);
    if (rule->n_columns) {
        json_t *table = json_array();
        for (size_t row = 0; row < rule->n_rows; row++) {
            json_t *t = json_object();
            json_object_set_new(t, "outcomes", row_outcomes(p, rule, row));
            json_object_set_new(t, "probability", lop_json_number(rule->row_probability[row]));
            if (rule->numeric_channel < 0) {
                json_object_set_new(t, "action", json_string(p->actions[rule->row_action[row]]));
                lop_json_score(t, p, "expected_loss", "expected_payoff", rule->row_expected_loss[row]);
            }
            json_array_append_new(table, t);
        }
        json_object_set_new(obj, "table", table);
    }
    if (rule->numeric_channel >= 0) {
        json_t *grid = json_object();
        json_object_set_new(grid, "channel",
                            json_string(lop_report_channel_name(
                                &p->channels[rule->numeric_channel])));
        json_object_set_new(grid, "counts", json_boolean(rule->count_grid));
        json_object_set_new(grid, "x", real_array(rule->grid, rule->n_grid));
        json_t *rows = json_array();
        for (size_t row = 0; row < rule->n_rows; row++) {
            json_t *decisions = p->estimate ? real_array(&rule->grid_estimate[row * rule->n_grid],
                                                         rule->n_grid)
                                            : json_array();
            for (size_t i = 0; !p->estimate && i < rule->n_grid; i++)
                json_array_append_new(
                    decisions,
                    json_string(p->actions[rule->grid_action[row * rule->n_grid + i]]));
            json_array_append_new(rows, decisions);
        }
        json_object_set_new(grid, p->estimate ? "estimate" : "action", rows);
        if (rule->grid_weight) {
            json_object_set_new(grid, "probability", real_array(rule->grid_weight, rule->n_grid));
            json_object_set_new(grid, "expected_loss", real_array(rule->grid_loss, rule->n_grid));
        }
        json_object_set_new(obj, "grid", grid);
    }
    return obj;
}

static json_t *rules_json(const lop_problem *p, const lop_results *r)
{
    json_t *arr = json_array();
    for (size_t k = 0; k < r->n_compared; k++) {
        const lop_compared_rule *c = &r->compared[k];
        json_t *obj = json_object();
        json_object_set_new(obj, "name", json_string(c->name));
        json_object_set_new(obj, "kind", json_string(lop_rule_kind_name(p->rules[k].kind)));
        json_object_set_new(obj, "computed", json_boolean(c->computed));
        if (c->computed) {
            lop_json_score(obj, p, "risk", "payoff", c->risk);
            json_object_set_new(obj, "regret", lop_json_number(c->regret));
        } else {
            json_object_set_new(obj, "not_computed", json_string(c->not_computed_why
                                                                     ? c->not_computed_why
                                                                     : "the rule was not computed"));
        }
        json_array_append_new(arr, obj);
    }
    return arr;
}

/* {ACTION: {STATE: value}} for finite states, {ACTION: value} for grid states: choice
 * counts (rates = false) or shares of each state's trials (rates = true). */
/* accuracy: what was asked, the worst estimated error reached (relative to its scale)
 * and the numbers that miss; `estimated` false when nothing rests on a grid. */
static json_t *accuracy_json(const lop_accuracy *a)
{
    json_t *obj = json_object();
    json_object_set_new(obj, "asked", lop_json_number(a->asked));
    json_object_set_new(obj, "estimated", json_boolean(a->estimated));
    json_object_set_new(obj, "reached", lop_json_number(a->reached));
    json_t *worst = json_object();
    json_object_set_new(worst, "quantity", a->worst[0] ? json_string(a->worst) : json_null());
    json_object_set_new(worst, "error", lop_json_number(a->worst_error));
    json_object_set_new(obj, "worst", worst);
    json_t *missed = json_array();
    for (size_t i = 0; i < a->n_missed; i++) {
        json_t *m = json_object();
        json_object_set_new(m, "quantity", json_string(a->missed[i].name));
        json_object_set_new(m, "error", lop_json_number(a->missed[i].error));
        json_object_set_new(m, "allowed", lop_json_number(a->missed[i].allowed));
        json_array_append_new(missed, m);
    }
    json_object_set_new(obj, "missed", missed);
    json_object_set_new(obj, "compared", json_integer((json_int_t)a->compared));
    json_object_set_new(obj, "unmatched", json_integer((json_int_t)a->unmatched));
    json_object_set_new(obj, "state_points", json_integer((json_int_t)a->state_points));
    json_object_set_new(obj, "refine", json_integer(a->refine));
    json_t *scales = json_object();
    json_object_set_new(scales, "score", lop_json_number(a->score_scale));
    json_object_set_new(scales, "state_range", lop_json_number(a->state_range));
    json_object_set_new(scales, "measurement_span", lop_json_number(a->measurement_span));
    json_object_set_new(obj, "scales", scales);
    return obj;
}

static json_t *choices_json(const lop_problem *p, const lop_simulated_rule *m, bool rates)
{
    json_t *obj = json_object();
    size_t R = m->n_rate_states;
    for (size_t a = 0; a < p->n_actions; a++) {
        json_t *row = R == 1 && p->states_kind == LOP_STATES_GRID ? NULL : json_object();
        for (size_t s = 0; s < R; s++) {
            size_t n = m->choices[a * R + s];
            json_t *v = !rates                  ? json_integer((json_int_t)n)
                        : m->state_trials[s] > 0 ? lop_json_number((double)n / (double)m->state_trials[s])
                                                 : json_null();
            if (row)
                json_object_set_new(row, p->state_labels[s], v);
            else
                json_object_set_new(obj, p->actions[a], v);
        }
        if (row)
            json_object_set_new(obj, p->actions[a], row);
    }
    return obj;
}

static json_t *pair_json(const double *v)
{
    return real_array(v, 2);
}

/* format.md's `simulation`, in the file's orientation. */
static json_t *simulation_json(const lop_problem *p, const lop_results *r)
{
    const lop_simulation *sim = &r->simulation;
    json_t *obj = json_object();
    json_object_set_new(obj, "sessions", json_integer((json_int_t)sim->sessions));
    json_object_set_new(obj, "trials", json_integer((json_int_t)sim->trials));
    json_object_set_new(obj, "seed", json_integer((json_int_t)sim->seed));
    if (sim->floor_given)
        json_object_set_new(obj, "floor", lop_json_number(sim->floor));
    json_object_set_new(obj, "outside_grid", json_integer((json_int_t)sim->outside_grid));
    json_object_set_new(obj, "threads", json_integer(sim->threads));
    json_object_set_new(obj, "seconds", lop_json_number(sim->seconds));
    double n = (double)sim->sessions * (double)sim->trials;
    json_object_set_new(obj, "trials_per_second",
                        sim->seconds > 0 ? lop_json_number(n / sim->seconds) : json_null());
    json_t *rules = json_array();
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        json_t *o = json_object();
        json_object_set_new(o, "rule", json_string(m->name));
        json_object_set_new(o, "simulated", json_boolean(m->simulated));
        json_object_set_new(o, "analytic", m->has_analytic ? lop_json_number(m->analytic) : json_null());
        if (!m->simulated) {
            json_object_set_new(o, "not_simulated", json_string(m->not_simulated_why));
            json_array_append_new(rules, o);
            continue;
        }
        json_object_set_new(o, "mean_per_trial", lop_json_number(m->mean_per_trial));
        json_object_set_new(o, "sd_per_trial", lop_json_number(m->sd_per_trial));
        json_object_set_new(o, "ci95", pair_json(m->ci95));
        json_object_set_new(o, "mean_per_session", lop_json_number(m->mean_per_session));
        json_object_set_new(o, "session_ci95", pair_json(m->session_ci95));
        json_t *pct = json_object();
        json_object_set_new(pct, "p05", lop_json_number(m->p05));
        json_object_set_new(pct, "p50", lop_json_number(m->p50));
        json_object_set_new(pct, "p95", lop_json_number(m->p95));
        json_object_set_new(o, "session_percentiles", pct);
        if (sim->floor_given)
            json_object_set_new(o, "below_floor", lop_json_number(m->below_floor));
        if (p->estimate) {
            json_object_set_new(o, "mean_error", lop_json_number(m->mean_error));
            json_object_set_new(o, "mean_absolute_error", lop_json_number(m->mean_absolute_error));
        } else {
            json_object_set_new(o, "rates", choices_json(p, m, true));
            json_object_set_new(o, "counts", choices_json(p, m, false));
            if (p->states_kind != LOP_STATES_GRID) {
                json_t *st = json_object();
                for (size_t s = 0; s < m->n_rate_states; s++)
                    json_object_set_new(st, p->state_labels[s],
                                        json_integer((json_int_t)m->state_trials[s]));
                json_object_set_new(o, "state_trials", st);
            }
        }
        json_t *hist = json_object();
        json_object_set_new(hist, "edges", real_array(m->edges, m->n_bins + 1));
        json_t *counts = json_array();
        for (size_t b = 0; b < m->n_bins; b++)
            json_array_append_new(counts, json_integer((json_int_t)m->counts[b]));
        json_object_set_new(hist, "counts", counts);
        json_object_set_new(o, "histogram", hist);
        json_array_append_new(rules, o);
    }
    json_object_set_new(obj, "rules", rules);
    return obj;
}

lop_status lop_report_json(const char *path, const lop_problem *p, const lop_results *r,
                           const lop_provenance *prov, lop_outfile_list *pending,
                           lop_error *err)
{
    json_t *root = json_object();
    json_t *tool = json_object();
    json_object_set_new(tool, "name", json_string("lopside"));
    json_object_set_new(tool, "version", json_string(LOP_VERSION));
    json_object_set_new(root, "tool", tool);
    json_t *input = json_object();
    json_object_set_new(input, "path", json_string(prov->input_path));
    json_object_set_new(input, "sha256", json_string(prov->sha256));
    json_object_set_new(root, "input", input);
    json_object_set_new(root, "generated", json_string(prov->generated));
    json_object_set_new(root, "seed",
                        prov->has_seed ? json_integer((json_int_t)prov->seed) : json_null());
    json_object_set_new(root, "orientation", json_string(lop_problem_orientation(p)));
    json_object_set_new(root, "problem", problem_json(p));
    json_object_set_new(root, "case", case_json(p, r));
    json_object_set_new(root, "rule", r->has_rule ? rule_json(p, r) : json_null());
    json_object_set_new(root, "rules", rules_json(p, r));
    lop_report_json_studies(root, p, r);
    if (r->simulation.run)
        json_object_set_new(root, "simulation", simulation_json(p, r));
    json_t *timing = json_object();
    json_object_set_new(timing, "case_seconds", lop_json_number(r->seconds_case));
    json_object_set_new(timing, "rule_seconds", lop_json_number(r->seconds_rule));
    json_object_set_new(timing, "solves", json_integer((json_int_t)r->accuracy.solves));
    json_object_set_new(timing, "accurate_seconds", lop_json_number(r->accuracy.seconds));
    json_object_set_new(timing, "file_grid_seconds", lop_json_number(r->accuracy.seconds_first));
    json_object_set_new(root, "timing", timing);
    json_object_set_new(root, "accuracy", accuracy_json(&r->accuracy));
    json_object_set_new(root, "warnings", string_array(r->warnings, r->n_warnings));

    lop_outfile out;
    lop_status st = lop_outfile_open(&out, path, err);
    if (st == LOP_OK) {
        if (json_dumpf(root, out.file, JSON_INDENT(2) | JSON_REAL_PRECISION(17)) != 0 ||
            fputc('\n', out.file) == EOF) {
            lop_outfile_abandon(&out);
            st = lop_error_run(err, "cannot write %s", path);
        } else {
            st = lop_outfile_defer(pending, &out, err);
        }
    }
    json_decref(root);
    return st;
}
