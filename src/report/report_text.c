#include <math.h>
#include <string.h>

#include "lopside/model/curve_family.h"
#include "lopside/report/report.h"
#include "report_studies.h"

/* Rows of a rule table shown at a terminal; JSON has them all. */
#define ROWS_SHOWN 24
/* Measurement points shown for a rule of estimates. */
#define ESTIMATE_ROWS 11

static const char *const noise_names[] = {"gaussian", "scalar", "lognormal", "poisson",
                                          "binomial"};

const char *lop_report_channel_name(const lop_channel *c)
{
    return c->name[0] ? c->name : "evidence";
}

void lop_report_measurement_name(char *buf, size_t size, const lop_channel *c)
{
    const char *name = lop_report_channel_name(c);
    if (c->repeats <= 1) {
        snprintf(buf, size, "%s", name);
        return;
    }
    /* The rule sees one number per decision, the summary the format defines for repeats. */
    bool counts = c->noise == LOP_NOISE_POISSON || c->noise == LOP_NOISE_BINOMIAL;
    snprintf(buf, size, "the %s of the %zu %s of %s",
             c->noise == LOP_NOISE_LOGNORMAL ? "geometric mean" : counts ? "sum" : "mean",
             c->repeats, counts ? "counts" : "readings", name);
}

void lop_report_threshold_measurement(char *buf, size_t size, const lop_problem *p)
{
    snprintf(buf, size, "the measurement");
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].kind == LOP_CHANNEL_NOISE) {
            lop_report_measurement_name(buf, size, &p->channels[i]);
            return;
        }
}

static const char *score_unit(const lop_problem *p)
{
    return p->score_unit[0] ? p->score_unit : "units";
}

static size_t widest(char **labels, size_t n, size_t at_least)
{
    for (size_t i = 0; labels && i < n; i++)
        if (strlen(labels[i]) > at_least)
            at_least = strlen(labels[i]);
    return at_least;
}

static void print_list(FILE *out, char **items, size_t n)
{
    for (size_t i = 0; i < n; i++)
        fprintf(out, "%s%s", i ? ", " : "", items[i]);
}

static void print_channel_kind(FILE *out, const lop_channel *c)
{
    if (c->kind == LOP_CHANNEL_TABLE) {
        fprintf(out, "%s: outcomes ", lop_report_channel_name(c));
        print_list(out, c->outcomes, c->n_outcomes);
    } else {
        fprintf(out, "%s: %s noise", lop_report_channel_name(c), noise_names[c->noise]);
    }
    if (c->repeats > 1)
        fprintf(out, ", %zu repeats", c->repeats);
}

static void print_states(FILE *out, const lop_problem *p)
{
    const char *unit = p->unit[0] ? p->unit : "";
    if (p->states_kind == LOP_STATES_GRID) {
        fprintf(out, "%zu grid states from %.6g to %.6g%s%s (step %.6g)", p->n_states,
                p->state_values[0], p->state_values[p->n_states - 1], unit[0] ? " " : "",
                unit, p->step);
        return;
    }
    fprintf(out, "%zu states (", p->n_states);
    print_list(out, p->state_labels, p->n_states);
    fprintf(out, "%s%s)", unit[0] ? " " : "", unit);
}

static void print_summary_line(FILE *out, const lop_problem *p)
{
    fprintf(out, "%s\n  ", p->title);
    print_states(out, p);
    fprintf(out, "; %zu channel%s", p->n_channels, p->n_channels == 1 ? "" : "s");
    for (size_t i = 0; i < p->n_channels; i++) {
        fputs(i ? "; " : " (", out);
        print_channel_kind(out, &p->channels[i]);
    }
    fputs(p->n_channels ? ")" : "", out);
    if (p->estimate) {
        fprintf(out, "; estimates from %.6g to %.6g", p->estimates[0],
                p->estimates[p->n_estimates - 1]);
    } else {
        fprintf(out, "; %zu actions (", p->n_actions);
        print_list(out, p->actions, p->n_actions);
        fputc(')', out);
    }
    fprintf(out, "; %s in %s\n", lop_problem_orientation(p), score_unit(p));
    if (p->notes[0])
        fprintf(out, "  %s\n", p->notes);
}

static void print_observed(FILE *out, const lop_problem *p)
{
    bool any = false;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (!c->n_observed)
            continue;
        fprintf(out, "%s%s = ", any ? "; " : "given ", lop_report_channel_name(c));
        for (size_t k = 0; k < c->n_observed; k++) {
            if (c->kind == LOP_CHANNEL_TABLE)
                fprintf(out, "%s%s", k ? ", " : "", c->outcomes[c->observed_outcome[k]]);
            else
                fprintf(out, "%s%.6g", k ? ", " : "", c->observed_value[k]);
        }
        any = true;
    }
    if (!any)
        fputs("nothing observed yet (the prior alone)", out);
}

static void print_posterior(FILE *out, const lop_problem *p, const lop_case_result *c)
{
    if (p->states_kind != LOP_STATES_GRID) {
        int sw = (int)widest(p->state_labels, p->n_states, 5);
        fprintf(out, "\n  %-*s  %10s  %10s\n", sw, "state", "prior", "posterior");
        for (size_t s = 0; s < p->n_states; s++)
            fprintf(out, "  %-*s  %10.6g  %10.6g\n", sw, p->state_labels[s], p->prior[s],
                    c->posterior[s]);
    }
    if (c->numeric) {
        const lop_summary *m = &c->summary;
        const char *u = p->unit[0] ? p->unit : "";
        fprintf(out, "  posterior: mean %.6g%s%s, sd %.6g, median %.6g, mode %.6g, "
                     "90%% between %.6g and %.6g\n",
                m->mean, u[0] ? " " : "", u, m->sd, m->median, m->mode, m->q05, m->q95);
    }
}

static void print_choices(FILE *out, const lop_problem *p, const lop_case_result *c)
{
    int aw = (int)widest(p->actions, p->n_actions, 6);
    fprintf(out, "\n  %-*s  expected %s (%s)\n", aw, "action", lop_problem_orientation(p),
            score_unit(p));
    for (size_t a = 0; a < p->n_actions; a++) {
        fprintf(out, "  %-*s  %12.6g", aw, p->actions[a],
                lop_problem_oriented(p, c->expected_loss[a]));
        if (a == c->bayes_action) {
            if (c->n_tied > 1)
                fputs("   <- Bayes action (tied; chosen by the order of [actions])", out);
            else
                fprintf(out, "   <- Bayes action, better than %s by %.6g %s",
                        p->actions[c->runner_up], c->margin, score_unit(p));
        } else {
            for (size_t t = 1; t < c->n_tied; t++)
                if (c->tied[t] == a)
                    fputs("   <- tied with the Bayes action", out);
        }
        fputc('\n', out);
    }
}

static void print_case(FILE *out, const lop_problem *p, const lop_results *r)
{
    const lop_case_result *c = &r->kase;
    fputs("\nCase: ", out);
    print_observed(out, p);
    fputc('\n', out);
    print_posterior(out, p, c);
    if (p->estimate)
        fprintf(out, "\n  Bayes estimate: %.8g%s%s, expected %s %.6g %s\n", c->bayes_estimate,
                p->unit[0] ? " " : "", p->unit, lop_problem_orientation(p),
                lop_problem_oriented(p, c->bayes_estimate_loss), score_unit(p));
    else
        print_choices(out, p, c);
    lop_report_text_flatness(out, p, &r->case_flatness, "Estimates", "  ");
    fprintf(out, "  Value of perfect information for this case: %.6g %s\n", c->evpi,
            score_unit(p));
}

/* "swab = flagged" for one repeat, "swab: clean 2, flagged 1" for several. */
static void print_row(FILE *out, const lop_problem *p, const lop_rule_result *rule, size_t row)
{
    size_t col = 0;
    bool first = true;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        const size_t *counts = &rule->counts[row * rule->n_columns + col];
        fputs(first ? "" : "; ", out);
        first = false;
        if (c->repeats == 1) {
            for (size_t o = 0; o < c->n_outcomes; o++)
                if (counts[o])
                    fprintf(out, "%s = %s", lop_report_channel_name(c), c->outcomes[o]);
        } else {
            fprintf(out, "%s:", lop_report_channel_name(c));
            for (size_t o = 0; o < c->n_outcomes; o++)
                fprintf(out, "%s %s %zu", o ? "," : "", c->outcomes[o], counts[o]);
        }
        col += c->n_outcomes;
    }
}

static void print_numeric_rule(FILE *out, const lop_problem *p, const lop_rule_result *rule,
                               size_t row, const char *indent)
{
    char name[160];
    lop_report_measurement_name(name, sizeof name, &p->channels[rule->numeric_channel]);
    const lop_switch_point *prev = NULL;
    for (size_t k = 0; k < rule->n_switches; k++) {
        const lop_switch_point *sp = &rule->switches[k];
        if (sp->row != row)
            continue;
        if (rule->count_grid)
            fprintf(out, "%s%s %s %.10g: %s\n", indent, name, prev ? "from" : "below",
                    prev ? prev->x : sp->x, p->actions[sp->from]);
        else if (prev)
            fprintf(out, "%s%s from %.10g to %.10g: %s\n", indent, name, prev->x,
                    sp->x, p->actions[sp->from]);
        else
            fprintf(out, "%s%s below %.10g: %s\n", indent, name, sp->x,
                    p->actions[sp->from]);
        prev = sp;
    }
    if (prev)
        fprintf(out, "%s%s %s %.10g: %s\n", indent, name,
                rule->count_grid ? "from" : "above", prev->x, p->actions[prev->to]);
    else
        fprintf(out, "%sany value of %s: %s\n", indent, name,
                p->actions[rule->grid_action[row * rule->n_grid]]);
}

static void print_estimate_rule(FILE *out, const lop_problem *p, const lop_rule_result *rule)
{
    const lop_channel *c = &p->channels[rule->numeric_channel];
    fprintf(out, "  %16s  %16s\n", lop_report_channel_name(c), "Bayes estimate");
    size_t rows = rule->n_grid < ESTIMATE_ROWS ? rule->n_grid : ESTIMATE_ROWS;
    for (size_t k = 0; k < rows; k++) {
        size_t m = rows == 1 ? 0 : k * (rule->n_grid - 1) / (rows - 1);
        fprintf(out, "  %16.6g  %16.6g\n", rule->grid[m], rule->grid_estimate[m]);
    }
    if (rows < rule->n_grid)
        fprintf(out, "  (%zu of %zu measurement points; all of them in the JSON output)\n",
                rows, rule->n_grid);
}

static void print_rule(FILE *out, const lop_problem *p, const lop_results *r)
{
    const lop_rule_result *rule = &r->rule;
    const char *unit = score_unit(p);
    fputs("\nRule: the Bayes decision for every possible measurement\n", out);
    if (!rule->computed) {
        fprintf(out, "  not computed: %s\n", rule->not_computed_why);
    } else if (p->estimate) {
        print_estimate_rule(out, p, rule);
    } else {
        size_t shown = rule->n_rows < ROWS_SHOWN ? rule->n_rows : ROWS_SHOWN;
        for (size_t row = 0; row < shown; row++) {
            if (rule->n_columns) {
                fputs("  ", out);
                print_row(out, p, rule, row);
                fprintf(out, "  (probability %.4g)", rule->row_probability[row]);
                if (rule->numeric_channel < 0)
                    fprintf(out, ": %s\n", p->actions[rule->row_action[row]]);
                else
                    fputs(":\n", out);
            }
            if (rule->numeric_channel >= 0)
                print_numeric_rule(out, p, rule, row, rule->n_columns ? "    " : "  ");
        }
        if (shown < rule->n_rows)
            fprintf(out, "  ... %zu more rows (all of them in the JSON output)\n",
                    rule->n_rows - shown);
    }
    if (rule->computed) {
        fprintf(out, "  Bayes %s: %.6g %s per decision", p->payoff ? "payoff" : "risk",
                lop_problem_oriented(p, rule->bayes_risk), unit);
        if (!rule->exact && rule->n_columns == 0)
            fprintf(out, rule->count_grid ? " (summed over %zu counts)"
                                          : " (Simpson's rule over %zu measurement points)",
                    rule->n_grid);
        fputc('\n', out);
    }
    if (p->estimate)
        fprintf(out, "  Deciding on the prior alone: %.6g %s per decision\n",
                lop_problem_oriented(p, rule->prior_only_risk), unit);
    else
        fprintf(out, "  Deciding on the prior alone (always %s): %.6g %s per decision\n",
                p->actions[rule->prior_only_action],
                lop_problem_oriented(p, rule->prior_only_risk), unit);
    if (rule->computed)
        fprintf(out, "  The evidence is worth %.6g %s per decision\n",
                rule->prior_only_risk - rule->bayes_risk, unit);
}

static void print_compared(FILE *out, const lop_problem *p, const lop_results *r)
{
    size_t w = 10;
    for (size_t k = 0; k < r->n_compared; k++)
        if (strlen(r->compared[k].name) > w)
            w = strlen(r->compared[k].name);
    fprintf(out, "\nOther rules, judged under the problem as given (%s)\n", score_unit(p));
    fprintf(out, "  %-*s  %-16s  %12s  %12s\n", (int)w, "rule", "kind",
            p->payoff ? "payoff" : "risk", "regret");
    fprintf(out, "  %-*s  %-16s  %12.6g  %12s\n", (int)w, "bayes", "Bayes rule",
            lop_problem_oriented(p, r->rule.bayes_risk), "0");
    for (size_t k = 0; k < r->n_compared; k++) {
        const lop_compared_rule *c = &r->compared[k];
        fprintf(out, "  %-*s  %-16s", (int)w, c->name, lop_rule_kind_name(p->rules[k].kind));
        if (c->computed)
            fprintf(out, "  %12.6g  %12.6g\n", lop_problem_oriented(p, c->risk), c->regret);
        else
            fprintf(out, "  not computed: %s\n", c->not_computed_why);
    }
}

/* The widest name of the simulated rules, at least `at_least`. */
static int simulated_name_width(const lop_simulation *sim, size_t at_least)
{
    for (size_t i = 0; i < sim->n_rules; i++)
        if (strlen(sim->rules[i].name) > at_least)
            at_least = strlen(sim->rules[i].name);
    return (int)at_least;
}

static void print_simulated_choices(FILE *out, const lop_problem *p, const lop_simulation *sim,
                                    int w)
{
    bool grid = p->states_kind == LOP_STATES_GRID;
    int aw = (int)widest(p->actions, p->n_actions, 6);
    fprintf(out, "  choices (share of %s)\n  %-*s  %-*s",
            grid ? "all trials" : "each state's trials", w, "rule", aw, "action");
    size_t R = grid ? 1 : p->n_states;
    for (size_t s = 0; s < R; s++)
        fprintf(out, "  %10s", grid ? "trials" : p->state_labels[s]);
    fputc('\n', out);
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        if (!m->simulated)
            continue;
        for (size_t a = 0; a < p->n_actions; a++) {
            fprintf(out, "  %-*s  %-*s", w, a ? "" : m->name, aw, p->actions[a]);
            for (size_t s = 0; s < R; s++) {
                if (m->state_trials[s])
                    fprintf(out, "  %10.4f",
                            (double)m->choices[a * R + s] / (double)m->state_trials[s]);
                else
                    fprintf(out, "  %10s", "-");
            }
            fputc('\n', out);
        }
    }
}

static void print_simulation(FILE *out, const lop_problem *p, const lop_results *r)
{
    const lop_simulation *sim = &r->simulation;
    const char *unit = score_unit(p), *word = lop_problem_orientation(p);
    int w = simulated_name_width(sim, 8);
    fprintf(out, "\nSimulation: %zu sessions of %zu trials, seed %lu; every rule decides the same "
                 "%.0f trials\n",
            sim->sessions, sim->trials, sim->seed, (double)sim->sessions * (double)sim->trials);
    fprintf(out, "  %s per trial (%s)\n  %-*s  %12s  %-24s  %12s\n", word, unit, w, "rule",
            "simulated", "95% interval", "analytic");
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        if (!m->simulated) {
            fprintf(out, "  %-*s  not simulated: %s\n", w, m->name, m->not_simulated_why);
            continue;
        }
        char interval[64];
        snprintf(interval, sizeof interval, "%.6g to %.6g", m->ci95[0], m->ci95[1]);
        fprintf(out, "  %-*s  %12.6g  %-24s", w, m->name, m->mean_per_trial, interval);
        if (m->has_analytic)
            fprintf(out, "  %12.6g  (%s the interval)\n", m->analytic,
                    m->analytic >= m->ci95[0] && m->analytic <= m->ci95[1] ? "inside"
                                                                           : "outside");
        else
            fprintf(out, "  %12s\n", "-");
    }
    size_t simulated = 0;
    for (size_t i = 0; i < sim->n_rules; i++)
        simulated += sim->rules[i].simulated;
    if (!simulated)
        return;
    fprintf(out, "  %s per session of %zu trials (%s)\n  %-*s  %12s  %-24s  %10s  %10s  %10s",
            word, sim->trials, unit, w, "rule", "mean", "95% interval", "5%", "50%", "95%");
    char floor_head[48] = "";
    if (sim->floor_given)
        snprintf(floor_head, sizeof floor_head, "below %.6g", sim->floor);
    fprintf(out, "%s%s\n", floor_head[0] ? "  " : "", floor_head);
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        if (!m->simulated)
            continue;
        char interval[64];
        snprintf(interval, sizeof interval, "%.6g to %.6g", m->session_ci95[0],
                 m->session_ci95[1]);
        fprintf(out, "  %-*s  %12.6g  %-24s  %10.6g  %10.6g  %10.6g", w, m->name,
                m->mean_per_session, interval, m->p05, m->p50, m->p95);
        if (sim->floor_given)
            fprintf(out, "  %*.2f%%", (int)strlen(floor_head) - 1, 100 * m->below_floor);
        fputc('\n', out);
    }
    if (p->estimate) {
        const char *u = p->unit[0] ? p->unit : "state units";
        fprintf(out, "  estimates (%s)\n  %-*s  %12s  %20s\n", u, w, "rule", "mean error",
                "mean absolute error");
        for (size_t i = 0; i < sim->n_rules; i++) {
            const lop_simulated_rule *m = &sim->rules[i];
            if (m->simulated)
                fprintf(out, "  %-*s  %12.6g  %20.6g\n", w, m->name, m->mean_error,
                        m->mean_absolute_error);
        }
    } else {
        print_simulated_choices(out, p, sim, w);
    }
    if (sim->seconds > 0)
        fprintf(out, "  (%.3g s on %d thread%s: %.3g million trials per second)\n", sim->seconds,
                sim->threads, sim->threads == 1 ? "" : "s",
                (double)sim->sessions * (double)sim->trials / sim->seconds / 1e6);
}

/* One line on how close the numbers are to the continuous model, and the numbers that
 * miss the accuracy asked, if any. */
static void print_accuracy(FILE *out, const lop_results *r)
{
    const lop_accuracy *a = &r->accuracy;
    fputs("\nAccuracy\n", out);
    if (!a->estimated) {
        fprintf(out, "  asked %.3g; nothing rests on a grid: exact up to rounding\n", a->asked);
        return;
    }
    fprintf(out, "  asked %.3g, reached %.3g (estimated from the grids at two steps", a->asked,
            a->reached);
    if (a->state_points)
        fprintf(out, "; %zu state points", a->state_points);
    fprintf(out, ")%s\n", a->reached <= a->asked ? "" : ": NOT REACHED");
    if (a->worst[0])
        fprintf(out, "  largest error: %s, about %.3g\n", a->worst, a->worst_error);
    size_t shown = a->n_missed < 10 ? a->n_missed : 10;
    for (size_t i = 0; i < shown; i++)
        fprintf(out, "  misses: %s, error about %.3g where %.3g is allowed\n",
                a->missed[i].name, a->missed[i].error, a->missed[i].allowed);
    if (a->n_missed > shown)
        fprintf(out, "  ... and %zu more (the JSON lists them all)\n", a->n_missed - shown);
}

void lop_report_text(FILE *out, const lop_problem *p, const lop_results *r,
                     const lop_provenance *prov)
{
    print_summary_line(out, p);
    print_case(out, p, r);
    if (r->has_rule)
        print_rule(out, p, r);
    if (r->n_compared && r->rule.computed)
        print_compared(out, p, r);
    lop_report_text_studies(out, p, r);
    if (r->simulation.run)
        print_simulation(out, p, r);
    print_accuracy(out, r);
    if (r->n_warnings) {
        fputs("\nWarnings\n", out);
        for (size_t i = 0; i < r->n_warnings; i++)
            fprintf(out, "  - %s\n", r->warnings[i]);
    }
    fprintf(out, "\nlopside %s, %s, input %s (SHA-256 %.12s...)", LOP_VERSION, prov->generated,
            prov->input_path, prov->sha256);
    if (prov->has_seed)
        fprintf(out, ", seed %llu", prov->seed);
    fputc('\n', out);
}

static void print_channel_detail(FILE *out, const lop_problem *p, const lop_channel *c, int sw)
{
    fprintf(out, "\n  channel %s (line %d), %zu repeat%s\n", lop_report_channel_name(c), c->line,
            c->repeats, c->repeats == 1 ? "" : "s");
    size_t shown = p->states_kind == LOP_STATES_GRID ? 0 : p->n_states;
    for (size_t s = 0; s < shown; s++) {
        fprintf(out, "    %-*s", sw, p->state_labels[s]);
        if (c->kind == LOP_CHANNEL_TABLE)
            for (size_t o = 0; o < c->n_outcomes; o++)
                fprintf(out, "  P(%s) = %.6g", c->outcomes[o], c->given[s * c->n_outcomes + o]);
        else
            fprintf(out, "  %s around %.6g (spread %.6g)", noise_names[c->noise],
                    c->center[s], c->spread[s]);
        fputc('\n', out);
    }
    if (p->states_kind == LOP_STATES_GRID)
        fprintf(out, "    %s noise around r(s): r = %.6g at the first state, %.6g at the last\n",
                noise_names[c->noise], c->center[0], c->center[p->n_states - 1]);
}

static void print_score_table(FILE *out, const lop_problem *p)
{
    int aw = (int)widest(p->actions, p->n_actions, 6);
    fprintf(out, "\n  %s (%s)\n  %-*s", lop_problem_orientation(p), score_unit(p), aw, "action");
    for (size_t s = 0; s < p->n_states; s++)
        fprintf(out, "  %12s", p->state_labels[s]);
    fputc('\n', out);
    for (size_t a = 0; a < p->n_actions; a++) {
        fprintf(out, "  %-*s", aw, p->actions[a]);
        for (size_t s = 0; s < p->n_states; s++)
            fprintf(out, "  %12.6g", lop_problem_oriented(p, lop_problem_loss(p, a, s)));
        fputc('\n', out);
    }
}

/* What the file asks for beyond the case and the rule, one line each. */
static void print_studies(FILE *out, const lop_problem *p)
{
    static const char *const goals[] = {"switch_point", "choice_rate", "risk", "action"};
    if (p->n_rules || p->value.present || p->n_sweeps || p->n_designs || p->simulate.present)
        fputc('\n', out);
    for (size_t k = 0; k < p->n_rules; k++)
        fprintf(out, "  rule %s: %s\n", p->rules[k].name, lop_rule_kind_name(p->rules[k].kind));
    if (p->value.present)
        fprintf(out, "  value: %zu channel%s, up to %zu extra repeats at %g %s each\n",
                p->value.n_channels, p->value.n_channels == 1 ? "" : "s", p->value.up_to,
                p->value.cost, score_unit(p));
    for (size_t k = 0; k < p->n_sweeps; k++) {
        const lop_sweep_spec *w = &p->sweeps[k];
        fprintf(out, "  sweep %s: %s from %g to %g (%zu points)", w->name, w->x, w->x_from,
                w->x_to, w->x_points);
        if (w->y)
            fprintf(out, " by %s from %g to %g (%zu points)", w->y, w->y_from, w->y_to,
                    w->y_points);
        fputc('\n', out);
    }
    for (size_t k = 0; k < p->n_designs; k++) {
        const lop_design_spec *d = &p->designs[k];
        fprintf(out, "  design %s: %s in [%g, %g] so that %s%s%s", d->name, d->vary, d->from,
                d->to, goals[d->goal],
                d->goal == LOP_GOAL_CHOICE_RATE || d->goal == LOP_GOAL_ACTION ? " " : "",
                d->goal == LOP_GOAL_CHOICE_RATE || d->goal == LOP_GOAL_ACTION
                    ? p->actions[d->goal_action]
                    : "");
        if (d->goal == LOP_GOAL_ACTION)
            fputc('\n', out);
        else
            fprintf(out, " = %g\n", d->equals);
    }
    if (p->simulate.present)
        fprintf(out, "  simulate: %zu sessions of %zu trials, seed %lu\n", p->simulate.sessions,
                p->simulate.trials, p->simulate.seed);
}

void lop_report_problem(FILE *out, const lop_problem *p)
{
    print_summary_line(out, p);
    int sw = (int)widest(p->state_labels, p->n_states, 5);
    if (p->states_kind != LOP_STATES_GRID) {
        fprintf(out, "\n  %-*s  %10s\n", sw, "state", "prior");
        for (size_t s = 0; s < p->n_states; s++)
            fprintf(out, "  %-*s  %10.6g\n", sw, p->state_labels[s], p->prior[s]);
    } else {
        const lop_summary m = p->prior_summary;
        fprintf(out, "\n  prior on the grid: mean %.6g, sd %.6g, 90%% between %.6g and %.6g; "
                     "%.3g of it beyond the grid\n",
                m.mean, m.sd, m.q05, m.q95, p->prior_outside);
    }
    for (size_t i = 0; i < p->n_channels; i++)
        print_channel_detail(out, p, &p->channels[i], sw);
    if (p->estimate && p->estimates_given)
        fprintf(out, "\n  estimates: %zu points from %.6g to %.6g\n", p->n_estimates,
                p->estimates[0], p->estimates[p->n_estimates - 1]);
    else if (p->estimate)
        fprintf(out, "\n  estimates: any real number (the expected loss is shown at %zu points "
                     "from %.6g to %.6g)\n", p->n_estimates, p->estimates[0],
                p->estimates[p->n_estimates - 1]);
    else if (p->states_kind != LOP_STATES_GRID)
        print_score_table(out, p);
    if (p->estimate) {
        char curve[1024];
        lop_curve_describe(&p->curve, p->payoff ? -1 : 1, curve, sizeof curve);
        fprintf(out, "  %s curve (error = estimate - state): %s\n", p->payoff ? "payoff" : "loss",
                curve);
    }
    fprintf(out, "\n  accuracy asked: %.3g of each number's scale", p->accuracy);
    if (p->refine)
        fprintf(out, " (grids' steps halved %d times before solving)", p->refine);
    fputc('\n', out);
    print_studies(out, p);
}
