/* The value of information: EVPI, EVSI of extra repeats by re-building the problem with
 * more of them (preposterior analysis over the measurement space), and the value of one
 * more measurement for the case at hand. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "lopside/engine/decide.h"
#include "lopside/engine/engine.h"
#include "lopside/engine/rule.h"
#include "lopside/util/strutil.h"
#include "lopside/model/study.h"
#include "lopside/studies/value.h"

/* Differences of Bayes risks this small relative to the largest loss are rounding:
 * a negative EVSI within it is reported as 0. */
#define ROUNDING_RELATIVE 1e-12

/* Returns the largest absolute loss of p's loss table, or 1 for estimates. */
static double loss_scale(const lop_problem *p)
{
    return p->estimate ? 1 : fmax(1, lop_decide_loss_scale(p));
}

/* Returns true when the rule's one-number summary of a channel's repeats (mean, mean of
 * logs, sum) is sufficient: always for counts; for continuous noise only when the spread
 * is the same in every state (otherwise the spread of the repeats says something too). */
static bool summary_sufficient(const lop_problem *p, const lop_channel *c)
{
    if (c->kind == LOP_CHANNEL_TABLE || c->noise == LOP_NOISE_POISSON ||
        c->noise == LOP_NOISE_BINOMIAL)
        return true;
    if (c->noise == LOP_NOISE_SCALAR)
        return false;
    for (size_t s = 1; s < p->n_states; s++)
        if (c->spread[s] != c->spread[0])
            return false;
    return true;
}

/* Bayes risk of p with channel c measured `repeats` times: re-built from p's source with
 * the channel's observations dropped (the rule does not use them) and its repeats set.
 * Scalar noise has no one-number summary of repeats, so the input format refuses them;
 * here the decider then decides on their mean, whose risk bounds the true one above, as
 * it does for any channel whose summary is not sufficient. */
static lop_status risk_with_repeats(const lop_problem *p, lop_config *scratch,
                                    const lop_channel *c, size_t repeats, lop_value_extra *x,
                                    double *risk, lop_error *err)
{
    bool scalar = c->kind == LOP_CHANNEL_NOISE && c->noise == LOP_NOISE_SCALAR;
    char text[32];
    snprintf(text, sizeof text, "%zu", scalar ? c->repeats : repeats);
    if (lop_config_set(scratch, c->section, "repeats", text, c->line) != 0)
        return lop_error_run(err, "out of memory");
    lop_error inner = {0};
    lop_problem *model = lop_problem_build_model(scratch, &inner);
    if (!model) {
        if (inner.status != LOP_EINPUT) {
            *err = inner;
            return err->status;
        }
        char why[LOP_ERROR_TEXT + 512];
        snprintf(why, sizeof why, "with %zu repeats the problem is invalid: [%s] %s: %s",
                 repeats, inner.section, inner.key, inner.message);
        x->not_computed_why = lop_strdup(why);
        return x->not_computed_why ? LOP_OK : lop_error_run(err, "out of memory");
    }
    size_t index = (size_t)(c - p->channels);
    if (scalar)
        model->channels[index].repeats = repeats;
    x->on_the_mean = !summary_sufficient(p, c) && repeats > 1;
    lop_results *res = lop_results_new(model);
    lop_status st = res ? lop_rule_solve(model, res, err) : lop_error_run(err, "out of memory");
    if (st == LOP_OK && !res->rule.computed) {
        x->not_computed_why = lop_strdup(res->rule.not_computed_why);
        if (!x->not_computed_why)
            st = lop_error_run(err, "out of memory");
    } else if (st == LOP_OK) {
        *risk = res->rule.bayes_risk;
        x->computed = true;
    }
    lop_results_free(res);
    lop_problem_free(model);
    return st;
}

static lop_status price_channel(const lop_problem *p, lop_results *r, size_t channel,
                                lop_value_extra *extra, const lop_progress *progress,
                                size_t *done, size_t total, lop_error *err)
{
    const lop_value_spec *spec = &p->value;
    const lop_channel *c = &p->channels[channel];
    lop_config *scratch = lop_config_copy(p->source);
    if (!scratch)
        return lop_error_run(err, "out of memory");
    lop_config_remove(scratch, c->section, "observed");
    lop_status st = LOP_OK;
    double rounding = ROUNDING_RELATIVE * loss_scale(p);
    for (size_t n = 1; n <= spec->up_to && st == LOP_OK; n++) {
        lop_value_extra *x = &extra[n - 1];
        x->channel = channel;
        x->n = n;
        double risk;
        st = risk_with_repeats(p, scratch, c, c->repeats + n, x, &risk, err);
        if (st == LOP_OK && x->computed) {
            x->evsi = r->rule.bayes_risk - risk;
            if (x->evsi < 0 && x->evsi > -rounding)
                x->evsi = 0;
            x->net = x->evsi - (double)n * spec->cost;
        }
        lop_progress_step(progress, "value of information", ++*done, total);
    }
    lop_config_free(scratch);
    return st;
}

/* Returns the value of one more measurement of channel `channel` of p for a decider
 * whose belief is post: prior-only risk minus Bayes risk of the problem whose prior is
 * post and whose one channel is that one, measured once (Raiffa & Schlaifer 1961,
 * preposterior analysis). Sets *computed false (with *why, the caller frees) when that
 * rule cannot be computed; NAN with err set when memory runs out. */
static double value_of_next(const lop_problem *p, size_t channel, const double *post,
                            const double *log_post, bool *computed, char **why, lop_error *err)
{
    /* A view of p: the case's posterior as the prior, and the one channel measured once.
     * The rule reads nothing else, and nothing of p is changed. */
    lop_problem view = *p;
    lop_channel one = p->channels[channel];
    one.repeats = 1;
    one.n_observed = 0;
    view.channels = &one;
    view.n_channels = 1;
    view.prior = (double *)post;
    view.log_prior = (double *)log_post;
    view.n_rules = 0;
    view.rules = NULL;
    *computed = false;
    *why = NULL;
    lop_results *res = lop_results_new(&view);
    if (!res) {
        lop_error_run(err, "out of memory");
        return NAN;
    }
    double value = NAN;
    if (lop_rule_solve(&view, res, err) == LOP_OK) {
        if (res->rule.computed) {
            value = res->rule.prior_only_risk - res->rule.bayes_risk;
            double rounding = ROUNDING_RELATIVE * loss_scale(p);
            if (value < 0 && value > -rounding)
                value = 0;
            *computed = true;
        } else {
            *why = lop_strdup(res->rule.not_computed_why);
            value = 0;
            if (!*why) {
                lop_error_run(err, "out of memory");
                value = NAN;
            }
        }
    }
    lop_results_free(res);
    return value;
}

lop_status lop_value_solve(const lop_problem *p, lop_results *r, const lop_progress *progress,
                           lop_error *err)
{
    const lop_value_spec *spec = &p->value;
    lop_value_result *v = &r->value;
    if (!spec->present)
        return LOP_OK;
    v->present = true;
    v->n_next = spec->n_channels;
    v->next = calloc(spec->n_channels ? spec->n_channels : 1, sizeof *v->next);
    if (!v->next)
        return lop_error_run(err, "out of memory");
    /* The case's posterior as the prior of one more measurement; a weight that
     * underflowed to 0 is beyond any effect on a risk. */
    double *log_post = malloc(p->n_states * sizeof *log_post);
    if (!log_post)
        return lop_error_run(err, "out of memory");
    for (size_t s = 0; s < p->n_states; s++)
        log_post[s] = log(r->kase.posterior[s]);
    for (size_t k = 0; k < spec->n_channels; k++) {
        lop_value_next *nx = &v->next[k];
        nx->channel = spec->channels[k];
        nx->value = value_of_next(p, nx->channel, r->kase.posterior, log_post, &nx->computed,
                                  &nx->not_computed_why, err);
        if (isnan(nx->value)) {
            free(log_post);
            return err->status;
        }
    }
    free(log_post);
    if (!r->rule.computed) {
        v->not_computed_why = lop_strdup(r->rule.not_computed_why
                                             ? r->rule.not_computed_why
                                             : "the problem has no evidence");
        return v->not_computed_why ? LOP_OK : lop_error_run(err, "out of memory");
    }
    v->evpi = r->rule.bayes_risk - lop_decide_perfect_risk(p);
    if (v->evpi < 0 && v->evpi > -ROUNDING_RELATIVE * loss_scale(p))
        v->evpi = 0;
    v->n_extra = spec->n_channels * spec->up_to;
    v->extra = calloc(v->n_extra ? v->n_extra : 1, sizeof *v->extra);
    if (!v->extra)
        return lop_error_run(err, "out of memory");
    size_t done = 0;
    for (size_t k = 0; k < spec->n_channels; k++)
        if (price_channel(p, r, spec->channels[k], &v->extra[k * spec->up_to], progress, &done,
                          v->n_extra, err) != LOP_OK)
            return err->status;
    /* A net value within rounding of 0 buys nothing. */
    double worth = ROUNDING_RELATIVE * loss_scale(p);
    for (size_t i = 0; i < v->n_extra; i++) {
        const lop_value_extra *x = &v->extra[i];
        if (x->computed && x->net > worth && (!v->has_best || x->net > v->best_net)) {
            v->has_best = true;
            v->best_channel = x->channel;
            v->best_n = x->n;
            v->best_net = x->net;
        }
    }
    v->computed = true;
    return LOP_OK;
}
