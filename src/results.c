#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>

#include "lopside/results.h"

lop_results *lop_results_new(const lop_problem *p)
{
    lop_results *r = calloc(1, sizeof *r);
    if (!r)
        return NULL;
    r->kase.posterior = calloc(p->n_states, sizeof *r->kase.posterior);
    r->kase.expected_loss = calloc(p->n_actions, sizeof *r->kase.expected_loss);
    r->kase.tied = calloc(p->n_actions, sizeof *r->kase.tied);
    r->rule.numeric_channel = -1;
    if (!r->kase.posterior || !r->kase.expected_loss || !r->kase.tied) {
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
    free(r->kase.posterior);
    free(r->kase.expected_loss);
    free(r->kase.tied);
    lop_rule_result *rule = &r->rule;
    free(rule->not_computed_why);
    free(rule->counts);
    free(rule->row_probability);
    free(rule->row_action);
    free(rule->row_expected_loss);
    free(rule->grid);
    free(rule->grid_action);
    free(rule->switches);
    for (size_t i = 0; i < r->n_warnings; i++)
        free(r->warnings[i]);
    free(r->warnings);
    free(r);
}
