#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>

#include "lopside/model/results.h"

lop_results *lop_results_new(const lop_problem *p)
{
    lop_results *r = calloc(1, sizeof *r);
    if (!r)
        return NULL;
    size_t n_actions = p->n_actions ? p->n_actions : 1;
    r->kase.posterior = calloc(p->n_states, sizeof *r->kase.posterior);
    r->kase.expected_loss = calloc(n_actions, sizeof *r->kase.expected_loss);
    r->kase.log_likelihood = calloc(p->n_states, sizeof *r->kase.log_likelihood);
    r->kase.tied = calloc(n_actions, sizeof *r->kase.tied);
    r->rule.numeric_channel = -1;
    if (p->estimate)
        r->kase.estimate_curve = calloc(p->n_estimates, sizeof *r->kase.estimate_curve);
    r->n_compared = p->n_rules;
    r->compared = calloc(p->n_rules ? p->n_rules : 1, sizeof *r->compared);
    for (size_t i = 0; r->compared && i < p->n_rules; i++)
        r->compared[i].name = p->rules[i].name;
    if (!r->kase.posterior || !r->kase.expected_loss || !r->kase.log_likelihood || !r->kase.tied || !r->compared ||
        (p->estimate && !r->kase.estimate_curve)) {
        lop_results_free(r);
        return NULL;
    }
    return r;
}

int lop_results_warn(lop_results *r, const char *fmt, ...)
{
    char text[512];
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(text, sizeof text, fmt, ap);
    va_end(ap);
    char **grown = realloc(r->warnings, (r->n_warnings + 1) * sizeof *grown);
    char *copy = n >= 0 ? malloc((size_t)n + 1) : NULL;
    if (!grown || !copy) {
        free(copy);
        if (grown)
            r->warnings = grown;
        return -1;
    }
    snprintf(copy, (size_t)n + 1, "%s", text);
    r->warnings = grown;
    r->warnings[r->n_warnings++] = copy;
    return 0;
}

void lop_results_free(lop_results *r)
{
    if (!r)
        return;
    free(r->accuracy.missed);
    free(r->kase.posterior);
    free(r->kase.log_likelihood);
    free(r->kase.expected_loss);
    free(r->kase.tied);
    free(r->kase.estimate_curve);
    for (size_t i = 0; r->compared && i < r->n_compared; i++) {
        free(r->compared[i].not_computed_why);
        free(r->compared[i].grid_decision);
    }
    free(r->compared);
    lop_rule_result *rule = &r->rule;
    free(rule->not_computed_why);
    free(rule->counts);
    free(rule->row_probability);
    free(rule->row_action);
    free(rule->row_expected_loss);
    free(rule->grid);
    free(rule->grid_action);
    free(rule->grid_estimate);
    free(rule->grid_weight);
    free(rule->grid_loss);
    free(rule->switches);
    for (size_t i = 0; r->simulation.rules && i < r->simulation.n_rules; i++) {
        lop_simulated_rule *m = &r->simulation.rules[i];
        free(m->not_simulated_why);
        free(m->state_trials);
        free(m->choices);
        free(m->edges);
        free(m->counts);
    }
    free(r->simulation.rules);
    free(r->value.not_computed_why);
    for (size_t i = 0; r->value.extra && i < r->value.n_extra; i++)
        free(r->value.extra[i].not_computed_why);
    free(r->value.extra);
    for (size_t i = 0; r->value.next && i < r->value.n_next; i++)
        free(r->value.next[i].not_computed_why);
    free(r->value.next);
    for (size_t i = 0; r->sweeps && i < r->n_sweeps; i++) {
        lop_sweep_result *w = &r->sweeps[i];
        for (size_t k = 0; w->points && k < w->nx * w->ny; k++) {
            free(w->points[k].rates);
            free(w->points[k].switches);
        }
        free(w->points);
        free(w->rows);
    }
    free(r->sweeps);
    for (size_t i = 0; r->designs && i < r->n_designs; i++) {
        free(r->designs[i].seen);
        free(r->designs[i].note);
    }
    free(r->designs);
    for (size_t i = 0; i < r->n_warnings; i++)
        free(r->warnings[i]);
    free(r->warnings);
    free(r);
}
