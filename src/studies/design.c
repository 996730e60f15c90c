/* Designs: scan the bracket, then Brent's method (gsl_root_fsolver_brent) between the
 * two scanned values where the goal changes sign. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "lopside/studies/design.h"
#include "lopside/engine/engine.h"
#include "lopside/engine/rates.h"
#include "lopside/util/strutil.h"
#include "lopside/model/study.h"

#define ROOT_RELATIVE 1e-12
#define ROOT_ITERATIONS 200
/* A root whose goal misses the target by more than this (relative) is a jump of the
 * goal across the target, not a crossing. */
#define JUMP_RELATIVE 1e-6

typedef struct {
    const lop_problem *p;
    const lop_design_spec *spec;
    lop_design_result *out;
    lop_config *scratch;
    char section[128];
    lop_error *err;
    lop_status st;
    const char *note;        /* set when the goal is undefined at some value */
} design_ctx;

/* The goal's quantity at v (file orientation), and for action goals the case's Bayes
 * action in *action; the signed distance from the target in *f (for action goals, the
 * expected loss of the goal's action minus that of the best other: negative where the
 * goal's action is the Bayes action). Returns false with ctx->st or ctx->note set. */
static bool goal_at(design_ctx *ctx, double v, double *quantity, double *f, size_t *action)
{
    const lop_design_spec *spec = ctx->spec;
    char where[64];
    snprintf(where, sizeof where, "inside the bracket %g to %g", spec->from, spec->to);
    lop_path_site site = {ctx->section, "vary", spec->vary_line};
    lop_problem *model =
        lop_study_model_at(ctx->scratch, &spec->vary_path, &v, 1, where, &site, ctx->err);
    if (!model) {
        ctx->st = ctx->err->status;
        return false;
    }
    lop_results *res = lop_engine_solve(model, ctx->err);
    ctx->out->evaluations++;
    bool ok = res != NULL;
    if (!res)
        ctx->st = ctx->err->status;
    const lop_rule_result *rule = res ? &res->rule : NULL;
    if (ok && spec->goal != LOP_GOAL_ACTION && res->has_rule && !rule->computed) {
        ctx->note = "the rule cannot be computed inside the bracket";
        ok = false;
    }
    if (ok) {
        switch (spec->goal) {
        case LOP_GOAL_SWITCH_POINT:
            /* No switch point: the rule takes one action everywhere, as if the switch
             * had moved past every measurement, up (first action) or down. */
            if (rule->n_switches)
                *quantity = rule->switches[0].x;
            else
                *quantity = rule->grid_action[0] == 0 ? INFINITY : -INFINITY;
            /* A monotone squeeze keeps infinite switch points finite for Brent. */
            *f = (*quantity - spec->equals) / (1 + fabs(*quantity - spec->equals));
            if (isnan(*f))
                *f = *quantity > 0 ? 1 : -1;
            break;
        case LOP_GOAL_CHOICE_RATE: {
            double *rates = malloc(model->n_actions * sizeof *rates);
            if (!rates) {
                ctx->st = lop_error_run(ctx->err, "out of memory");
                ok = false;
                break;
            }
            ok = lop_rates_overall(model, res, rates);
            *quantity = rates[spec->goal_action];
            *f = *quantity - spec->equals;
            free(rates);
            if (!ok)
                ctx->note = "the choice rates cannot be computed inside the bracket";
            break;
        }
        case LOP_GOAL_RISK:
            *quantity = lop_problem_oriented(model, res->has_rule ? rule->bayes_risk
                                                                  : rule->prior_only_risk);
            *f = *quantity - spec->equals;
            break;
        case LOP_GOAL_ACTION: {
            const double *el = res->kase.expected_loss;
            double other = INFINITY;
            for (size_t a = 0; a < model->n_actions; a++)
                if (a != spec->goal_action)
                    other = fmin(other, el[a]);
            *f = el[spec->goal_action] - other;
            *quantity = *f;
            *action = res->kase.bayes_action;
            break;
        }
        }
    }
    lop_results_free(res);
    lop_problem_free(model);
    return ok;
}

static double brent_function(double v, void *param)
{
    design_ctx *ctx = param;
    double q, f;
    size_t a;
    if (ctx->st != LOP_OK || ctx->note || !goal_at(ctx, v, &q, &f, &a))
        return NAN;
    return f;
}

/* The root of the goal between lo and hi, where it changes sign (Brent). */
static double find_root(design_ctx *ctx, double lo, double hi)
{
    gsl_function fn = {brent_function, ctx};
    gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    double root = NAN;
    if (!s) {
        ctx->st = lop_error_run(ctx->err, "out of memory");
        return NAN;
    }
    double scale = fmax(fabs(ctx->spec->from), fabs(ctx->spec->to));
    if (gsl_root_fsolver_set(s, &fn, lo, hi) == GSL_SUCCESS) {
        for (int it = 0; it < ROOT_ITERATIONS; it++) {
            if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
                break;
            root = gsl_root_fsolver_root(s);
            if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s),
                                       ROOT_RELATIVE * fmax(scale, 1e-300), ROOT_RELATIVE) ==
                GSL_SUCCESS)
                break;
        }
    }
    gsl_root_fsolver_free(s);
    return root;
}

static int add_seen(lop_design_result *out, size_t action)
{
    for (size_t i = 0; i < out->n_seen; i++)
        if (out->seen[i] == action)
            return 0;
    size_t *grown = realloc(out->seen, (out->n_seen + 1) * sizeof *grown);
    if (!grown)
        return -1;
    out->seen = grown;
    out->seen[out->n_seen++] = action;
    return 0;
}

static lop_status design_one(const lop_problem *p, lop_design_result *out,
                             const lop_progress *progress, lop_error *err)
{
    const lop_design_spec *spec = out->spec;
    design_ctx ctx = {.p = p, .spec = spec, .out = out, .err = err, .st = LOP_OK};
    snprintf(ctx.section, sizeof ctx.section, "design.%s", spec->name);
    char what[160];
    snprintf(what, sizeof what, "design %s", spec->name);
    ctx.scratch = lop_config_copy(p->source);
    if (!ctx.scratch)
        return lop_error_run(err, "out of memory");
    double v[LOP_DESIGN_SCAN_POINTS], f[LOP_DESIGN_SCAN_POINTS], q[LOP_DESIGN_SCAN_POINTS];
    size_t n = 0;
    out->range_lo = INFINITY;
    out->range_hi = -INFINITY;
    for (; n < LOP_DESIGN_SCAN_POINTS; n++) {
        size_t a = 0;
        v[n] = lop_study_axis(spec->from, spec->to, LOP_DESIGN_SCAN_POINTS, n);
        if (!goal_at(&ctx, v[n], &q[n], &f[n], &a))
            break;
        if (spec->goal == LOP_GOAL_ACTION && add_seen(out, a) != 0) {
            ctx.st = lop_error_run(err, "out of memory");
            break;
        }
        out->range_lo = fmin(out->range_lo, q[n]);
        out->range_hi = fmax(out->range_hi, q[n]);
        lop_progress_step(progress, what, n + 1, LOP_DESIGN_SCAN_POINTS + 1);
        if (f[n] == 0 || (n > 0 && (f[n - 1] < 0) != (f[n] < 0)))
            break;
    }
    if (ctx.st == LOP_OK && !ctx.note && n < LOP_DESIGN_SCAN_POINTS) {
        double root = f[n] == 0 ? v[n] : find_root(&ctx, v[n - 1], v[n]);
        double qr, fr;
        size_t a;
        if (ctx.st == LOP_OK && !ctx.note && isfinite(root) && goal_at(&ctx, root, &qr, &fr, &a)) {
            out->value = root;
            out->achieved = qr;
            bool jump = spec->goal != LOP_GOAL_ACTION &&
                        fabs(qr - spec->equals) > JUMP_RELATIVE * fmax(1, fabs(spec->equals));
            out->reached = !jump;
            if (jump) {
                char text[256];
                snprintf(text, sizeof text, "the goal jumps across %g at %s = %.10g",
                         spec->equals, spec->vary, root);
                out->note = lop_strdup(text);
                if (!out->note)
                    ctx.st = lop_error_run(err, "out of memory");
            }
        }
    }
    if (ctx.st == LOP_OK && ctx.note && !out->note) {
        out->note = lop_strdup(ctx.note);
        if (!out->note)
            ctx.st = lop_error_run(err, "out of memory");
    }
    lop_progress_step(progress, what, LOP_DESIGN_SCAN_POINTS + 1, LOP_DESIGN_SCAN_POINTS + 1);
    lop_config_free(ctx.scratch);
    return ctx.st;
}

lop_status lop_design_solve(const lop_problem *p, lop_results *r, const lop_progress *progress,
                            lop_error *err)
{
    if (!p->n_designs)
        return LOP_OK;
    r->designs = calloc(p->n_designs, sizeof *r->designs);
    if (!r->designs)
        return lop_error_run(err, "out of memory");
    r->n_designs = p->n_designs;
    for (size_t k = 0; k < p->n_designs; k++) {
        r->designs[k].spec = &p->designs[k];
        r->designs[k].value = NAN;
        r->designs[k].achieved = NAN;
        if (design_one(p, &r->designs[k], progress, err) != LOP_OK)
            return err->status;
    }
    return LOP_OK;
}
