/* Sweeps: re-build and re-solve the problem at every point of one or two paths; or, for
 * rule.threshold, judge every threshold of a two-action problem on its numeric channel. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/engine/decide.h"
#include "lopside/engine/engine.h"
#include "lopside/engine/flatness.h"
#include "lopside/engine/rates.h"
#include "lopside/model/study.h"
#include "lopside/studies/sweep.h"

/* What one point of a path sweep reports, from the model solved there. */
static lop_status fill_point(const lop_problem *model, const lop_results *res,
                             const lop_sweep_result *w, lop_sweep_point *pt, lop_error *err)
{
    const lop_case_result *k = &res->kase;
    if (model->estimate) {
        pt->case_estimate = k->bayes_estimate;
        pt->flatness = res->case_flatness;
    } else {
        pt->case_action = k->bayes_action;
    }
    pt->computed = !res->has_rule || res->rule.computed;
    if (!pt->computed)
        return LOP_OK;
    pt->bayes_risk = res->has_rule ? res->rule.bayes_risk : res->rule.prior_only_risk;
    pt->evpi = pt->bayes_risk - lop_decide_perfect_risk(model);
    if (w->n_rates) {
        pt->rates = malloc(w->n_rates * sizeof *pt->rates);
        if (!pt->rates)
            return lop_error_run(err, "out of memory");
        bool ok = w->by_state ? lop_rates_by_state(model, res, pt->rates)
                              : lop_rates_overall(model, res, pt->rates);
        if (!ok) {
            free(pt->rates);
            pt->rates = NULL;
        }
    }
    if (res->has_rule && res->rule.n_switches) {
        pt->n_switches = res->rule.n_switches;
        pt->switches = malloc(pt->n_switches * sizeof *pt->switches);
        if (!pt->switches)
            return lop_error_run(err, "out of memory");
        memcpy(pt->switches, res->rule.switches, pt->n_switches * sizeof *pt->switches);
    }
    return LOP_OK;
}

/* One row of a threshold sweep (one value of y): the Bayes threshold, its flatness, the
 * signal-detection measures, and every threshold of x. */
static lop_status threshold_row(const lop_problem *model, const lop_results *res,
                                lop_sweep_result *w, size_t j, lop_error *err)
{
    const lop_sweep_spec *spec = w->spec;
    lop_threshold_row *row = &w->rows[j];
    const lop_channel *c = &model->channels[lop_rates_numeric_channel(model)];
    row->bayes_risk = res->rule.computed ? res->rule.bayes_risk : NAN;
    /* Thresholds are searched over the rule's measurement grid (it covers all but 1e-6
     * of the predictive probability), else over the sweep's own thresholds. */
    const lop_rule_result *rule = &res->rule;
    double *xs = malloc(w->nx * sizeof *xs);
    if (!xs)
        return lop_error_run(err, "out of memory");
    for (size_t i = 0; i < w->nx; i++)
        xs[i] = lop_study_axis(spec->x_from, spec->x_to, spec->x_points, i);
    bool use_rule = rule->computed && rule->n_grid >= 2 &&
                    rule->numeric_channel == (long)(c - model->channels);
    const double *grid = use_rule ? rule->grid : xs;
    size_t m = use_rule ? rule->n_grid : w->nx;
    if (!use_rule && spec->x_from > spec->x_to) {
        /* The sweep may run downwards; the search wants increasing points. */
        for (size_t i = 0; i < m / 2; i++) {
            double t = xs[i];
            xs[i] = xs[m - 1 - i];
            xs[m - 1 - i] = t;
        }
    }
    row->bayes_threshold = lop_rates_best_threshold(model, c, grid, m, &row->bayes_threshold_loss);
    row->has_bayes_threshold = isfinite(row->bayes_threshold);
    if (row->has_bayes_threshold &&
        !lop_flatness_threshold(model, c, row->bayes_threshold, row->bayes_threshold_loss, grid,
                                m, &row->flatness)) {
        free(xs);
        return lop_error_run(err, "out of memory");
    }
    free(xs);
    double mid = 0, sd = 1;
    row->sdt = lop_rates_sdt(model, c, &row->d_prime, &mid, &sd);
    for (size_t i = 0; i < w->nx; i++) {
        lop_sweep_point *pt = &w->points[j * w->nx + i];
        pt->x = lop_study_axis(spec->x_from, spec->x_to, spec->x_points, i);
        pt->y = row->y;
        pt->rates = malloc(w->n_rates * sizeof *pt->rates);
        if (!pt->rates)
            return lop_error_run(err, "out of memory");
        pt->expected_loss = lop_rates_threshold(model, c, pt->x, w->by_state, pt->rates);
        pt->bayes_risk = row->bayes_risk;
        pt->computed = true;
        if (row->sdt) {
            /* c = (t - midpoint)/sd and ln beta = c·d' (Macmillan & Creelman, ch. 2). */
            pt->criterion = (pt->x - mid) / sd;
            pt->beta = exp(pt->criterion * row->d_prime);
        }
    }
    return LOP_OK;
}

/* The model at one point, solved; NULL with err set. */
static lop_results *solve_at(lop_config *scratch, const lop_path *paths, const double *values,
                             size_t n, const char *where, const lop_path_site *site,
                             lop_problem **model, lop_error *err)
{
    *model = lop_study_model_at(scratch, paths, values, n, where, site, err);
    if (!*model)
        return NULL;
    lop_results *res = lop_engine_solve(*model, err);
    if (!res) {
        lop_problem_free(*model);
        *model = NULL;
    }
    return res;
}

/* A threshold sweep: one row per value of y (the problem as given when there is no y). */
static lop_status sweep_thresholds(const lop_problem *p, lop_results *r, lop_sweep_result *w,
                                   const char *section, const char *what,
                                   const lop_progress *progress, lop_error *err)
{
    const lop_sweep_spec *spec = w->spec;
    lop_config *scratch = lop_config_copy(p->source);
    if (!scratch)
        return lop_error_run(err, "out of memory");
    lop_status st = LOP_OK;
    for (size_t j = 0; j < w->ny && st == LOP_OK; j++) {
        double y = spec->y ? lop_study_axis(spec->y_from, spec->y_to, spec->y_points, j) : 0;
        w->rows[j].y = y;
        lop_problem *model = NULL;
        lop_results *res = r;
        if (spec->y) {
            char where[64];
            snprintf(where, sizeof where, "row %zu of %zu", j + 1, w->ny);
            lop_path_site site = {section, "y", spec->y_line};
            res = solve_at(scratch, &spec->y_path, &y, 1, where, &site, &model, err);
            if (!res) {
                st = err->status;
                break;
            }
        }
        st = threshold_row(model ? model : p, res, w, j, err);
        if (model) {
            lop_results_free(res);
            lop_problem_free(model);
        }
        lop_progress_step(progress, what, (j + 1) * w->nx, w->nx * w->ny);
    }
    lop_config_free(scratch);
    return st;
}

/* One point of a path sweep, solved with the thread's own scratch copy of the file. */
static lop_status path_point(lop_config *scratch, lop_sweep_result *w, size_t k,
                             const char *section, lop_error *err)
{
    const lop_sweep_spec *spec = w->spec;
    size_t i = k % w->nx, j = k / w->nx;
    lop_sweep_point *pt = &w->points[k];
    pt->x = lop_study_axis(spec->x_from, spec->x_to, spec->x_points, i);
    pt->y = spec->y ? lop_study_axis(spec->y_from, spec->y_to, spec->y_points, j) : 0;
    const lop_path paths[2] = {spec->x_path, spec->y_path};
    double values[2] = {pt->x, pt->y};
    char where[64];
    snprintf(where, sizeof where, "point %zu of %zu", k + 1, w->nx * w->ny);
    lop_path_site site = {section, "x", spec->x_line};
    lop_problem *model = NULL;
    lop_results *res = solve_at(scratch, paths, values, spec->y ? 2 : 1, where, &site, &model,
                                err);
    if (!res)
        return err->status;
    lop_status st = fill_point(model, res, w, pt, err);
    lop_results_free(res);
    lop_problem_free(model);
    return st;
}

/* A path sweep: the points are independent problems, solved in parallel (OpenMP, one
 * point per thread at a time, each rule then on its thread alone), so many small
 * solves do not pay a parallel region each. Every point's numbers are the same whatever
 * the thread count; the error reported is that of the first failing point. */
static lop_status sweep_paths(const lop_problem *p, lop_sweep_result *w, const char *section,
                              const char *what, const lop_progress *progress, lop_error *err)
{
    size_t total = w->nx * w->ny, failed_at = total, done = 0;
    lop_error first = {0};
#pragma omp parallel
    {
        lop_config *scratch = lop_config_copy(p->source);
        lop_error local = {0};
#pragma omp for schedule(dynamic, 1)
        for (size_t k = 0; k < total; k++) {
            size_t stop;
#pragma omp atomic read
            stop = failed_at;
            if (stop < k)
                continue;
            lop_status st = scratch ? path_point(scratch, w, k, section, &local)
                                    : lop_error_run(&local, "out of memory");
#pragma omp critical(lop_sweep_report)
            {
                if (st != LOP_OK && k < failed_at) {
#pragma omp atomic write
                    failed_at = k;
                    first = local;
                }
                if (st == LOP_OK)
                    lop_progress_step(progress, what, ++done, total);
            }
            memset(&local, 0, sizeof local);
        }
        lop_config_free(scratch);
    }
    if (failed_at < total) {
        *err = first;
        return err->status;
    }
    return LOP_OK;
}

static lop_status sweep_one(const lop_problem *p, lop_results *r, lop_sweep_result *w,
                            const lop_progress *progress, lop_error *err)
{
    char section[128], what[160];
    snprintf(section, sizeof section, "sweep.%s", w->spec->name);
    snprintf(what, sizeof what, "sweep %s", w->spec->name);
    return w->threshold ? sweep_thresholds(p, r, w, section, what, progress, err)
                        : sweep_paths(p, w, section, what, progress, err);
}

lop_status lop_sweep_solve(const lop_problem *p, lop_results *r, const lop_progress *progress,
                           lop_error *err)
{
    if (!p->n_sweeps)
        return LOP_OK;
    r->sweeps = calloc(p->n_sweeps, sizeof *r->sweeps);
    if (!r->sweeps)
        return lop_error_run(err, "out of memory");
    r->n_sweeps = p->n_sweeps;
    for (size_t k = 0; k < p->n_sweeps; k++) {
        lop_sweep_result *w = &r->sweeps[k];
        w->spec = &p->sweeps[k];
        w->threshold = strcmp(w->spec->x, "rule.threshold") == 0;
        w->nx = w->spec->x_points;
        w->ny = w->spec->y ? w->spec->y_points : 1;
        w->by_state = p->states_kind != LOP_STATES_GRID;
        w->n_rates = p->estimate ? 0 : w->by_state ? p->n_actions * p->n_states : p->n_actions;
        w->points = calloc(w->nx * w->ny, sizeof *w->points);
        w->rows = w->threshold ? calloc(w->ny, sizeof *w->rows) : NULL;
        if (!w->points || (w->threshold && !w->rows))
            return lop_error_run(err, "out of memory");
        if (sweep_one(p, r, w, progress, err) != LOP_OK)
            return err->status;
    }
    return LOP_OK;
}
