/* Solving a problem to the accuracy it asks: the answer on the file's grids beside the
 * answer on grids with twice the step, number by number (see accuracy.h). */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "lopside/studies/accuracy.h"
#include "lopside/engine/decide.h"
#include "lopside/studies/run.h"

/* Richardson's estimate is the finer number's error when it falls exactly as the square
 * of the step; a cut or a window edge that falls elsewhere in its cell at each step adds
 * a part that oscillates and that extrapolation does not remove (seen in the seeded
 * random search against quadrature: up to 1.7 times the estimate, on a switch point).
 * The estimate reported is this many times Richardson's. */
#define ERROR_SAFETY 3.0

/* What a number is, for the scale its error is measured against (format.md, README). */
typedef enum {
    QTY_SCORE,        /* expected losses, risks, values of information: the score scale */
    QTY_PROBABILITY,  /* rates: absolute */
    QTY_STATE,        /* posterior summaries, estimates: the state range */
    QTY_MEASUREMENT,  /* switch points, thresholds: the measurement span */
    QTY_SETTING,      /* a design's setting: its bracket */
} quantity_kind;

typedef struct {
    char name[LOP_QUANTITY_NAME];
    quantity_kind kind;
    double scale;     /* QTY_SETTING only */
    double *value;
} quantity;

typedef struct {
    quantity *items;
    size_t n, cap;
    bool failed;      /* memory ran out */
} quantity_list;

static void add(quantity_list *l, quantity_kind kind, double scale, double *value,
                const char *fmt, ...) __attribute__((format(printf, 5, 6)));

/* Appends one number to l; a number that is not finite is not compared. */
static void add(quantity_list *l, quantity_kind kind, double scale, double *value,
                const char *fmt, ...)
{
    if (l->failed || !isfinite(*value))
        return;
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        quantity *grown = realloc(l->items, cap * sizeof *grown);
        if (!grown) {
            l->failed = true;
            return;
        }
        l->items = grown;
        l->cap = cap;
    }
    quantity *q = &l->items[l->n++];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(q->name, sizeof q->name, fmt, ap);
    va_end(ap);
    q->kind = kind;
    q->scale = scale;
    q->value = value;
}

/* Returns true when the posterior's largest mass has a neighbour as large (to 1e-9):
 * then its mode is any point of a flat top, not a number with an error. */
static bool flat_peak(const lop_problem *p, const double *post)
{
    size_t k = 0;
    for (size_t s = 1; s < p->n_states; s++)
        if (post[s] > post[k])
            k = s;
    double next = fmax(k > 0 ? post[k - 1] : 0, k + 1 < p->n_states ? post[k + 1] : 0);
    return post[k] - next <= 1e-9 * post[k];
}

static void collect_case(const lop_problem *p, lop_results *r, quantity_list *l)
{
    lop_case_result *c = &r->kase;
    if (c->numeric) {
        add(l, QTY_STATE, 0, &c->summary.mean, "case.posterior.mean");
        add(l, QTY_STATE, 0, &c->summary.sd, "case.posterior.sd");
        add(l, QTY_STATE, 0, &c->summary.median, "case.posterior.median");
        if (!flat_peak(p, c->posterior))
            add(l, QTY_STATE, 0, &c->summary.mode, "case.posterior.mode");
        add(l, QTY_STATE, 0, &c->summary.q05, "case.posterior.q05");
        add(l, QTY_STATE, 0, &c->summary.q95, "case.posterior.q95");
    }
    add(l, QTY_SCORE, 0, &c->evpi, "case.evpi");
    if (p->estimate) {
        add(l, QTY_STATE, 0, &c->bayes_estimate, "case.bayes_estimate");
        add(l, QTY_SCORE, 0, &c->bayes_estimate_loss, "case.expected_loss");
        return;
    }
    for (size_t a = 0; a < p->n_actions; a++)
        add(l, QTY_SCORE, 0, &c->expected_loss[a], "case.expected_loss[%s]", p->actions[a]);
}

static void collect_switches(quantity_list *l, lop_switch_point *sw, size_t n, const char *where)
{
    for (size_t k = 0; k < n; k++)
        add(l, QTY_MEASUREMENT, 0, &sw[k].x, "%s.switch_points[%zu]", where, k + 1);
}

static void collect_rule(const lop_problem *p, lop_results *r, quantity_list *l)
{
    lop_rule_result *rule = &r->rule;
    add(l, QTY_SCORE, 0, &rule->prior_only_risk, "rule.prior_only_risk");
    if (!r->has_rule || !rule->computed)
        return;
    add(l, QTY_SCORE, 0, &rule->bayes_risk, "rule.bayes_risk");
    collect_switches(l, rule->switches, rule->n_switches, "rule");
    for (size_t k = 0; k < r->n_compared; k++) {
        lop_compared_rule *cr = &r->compared[k];
        if (!cr->computed)
            continue;
        add(l, QTY_SCORE, 0, &cr->risk, "rules.%s.risk", p->rules[k].name);
        add(l, QTY_SCORE, 0, &cr->regret, "rules.%s.regret", p->rules[k].name);
    }
}

static void collect_value(const lop_problem *p, lop_results *r, quantity_list *l)
{
    lop_value_result *v = &r->value;
    for (size_t k = 0; k < v->n_next; k++)
        if (v->next[k].computed)
            add(l, QTY_SCORE, 0, &v->next[k].value, "value.next[%s]",
                p->channels[v->next[k].channel].section);
    if (!v->computed)
        return;
    add(l, QTY_SCORE, 0, &v->evpi, "value.evpi");
    for (size_t i = 0; i < v->n_extra; i++) {
        lop_value_extra *x = &v->extra[i];
        if (!x->computed)
            continue;
        const char *ch = p->channels[x->channel].section;
        add(l, QTY_SCORE, 0, &x->evsi, "value.extra[%s,%zu].evsi", ch, x->n);
        add(l, QTY_SCORE, 0, &x->net, "value.extra[%s,%zu].net", ch, x->n);
    }
}

static void collect_sweeps(const lop_problem *p, lop_results *r, quantity_list *l)
{
    for (size_t k = 0; k < r->n_sweeps; k++) {
        lop_sweep_result *w = &r->sweeps[k];
        const char *name = w->spec->name;
        for (size_t i = 0; i < w->nx * w->ny; i++) {
            lop_sweep_point *pt = &w->points[i];
            if (!pt->computed)
                continue;
            char where[LOP_QUANTITY_NAME];
            snprintf(where, sizeof where, "sweep.%s[%zu]", name, i + 1);
            add(l, QTY_SCORE, 0, &pt->bayes_risk, "%s.bayes_risk", where);
            add(l, QTY_SCORE, 0, &pt->evpi, "%s.evpi", where);
            if (w->threshold)
                add(l, QTY_SCORE, 0, &pt->expected_loss, "%s.expected_loss", where);
            if (p->estimate)
                add(l, QTY_STATE, 0, &pt->case_estimate, "%s.case_estimate", where);
            for (size_t j = 0; pt->rates && j < w->n_rates; j++)
                add(l, QTY_PROBABILITY, 0, &pt->rates[j], "%s.rates[%zu]", where, j + 1);
            collect_switches(l, pt->switches, pt->n_switches, where);
        }
        for (size_t j = 0; w->rows && j < w->ny; j++) {
            lop_threshold_row *row = &w->rows[j];
            add(l, QTY_SCORE, 0, &row->bayes_risk, "sweep.%s.row[%zu].bayes_risk", name, j + 1);
            if (!row->has_bayes_threshold)
                continue;
            add(l, QTY_MEASUREMENT, 0, &row->bayes_threshold, "sweep.%s.row[%zu].bayes_threshold",
                name, j + 1);
            add(l, QTY_SCORE, 0, &row->bayes_threshold_loss,
                "sweep.%s.row[%zu].bayes_threshold_loss", name, j + 1);
        }
    }
}

static void collect_designs(lop_results *r, quantity_list *l)
{
    for (size_t k = 0; k < r->n_designs; k++) {
        lop_design_result *d = &r->designs[k];
        if (!d->reached)
            continue;
        add(l, QTY_SETTING, fabs(d->spec->to - d->spec->from), &d->value, "design.%s.value",
            d->spec->name);
    }
}

/* Every reported number of r that rests on the grids, with its name and kind. */
static void collect(const lop_problem *p, lop_results *r, quantity_list *l)
{
    collect_case(p, r, l);
    collect_rule(p, r, l);
    collect_value(p, r, l);
    collect_sweeps(p, r, l);
    collect_designs(r, l);
}

static int by_name(const void *a, const void *b)
{
    return strcmp(((const quantity *)a)->name, ((const quantity *)b)->name);
}

double lop_accuracy_score_scale(const lop_problem *p, double prior_only_risk)
{
    double scale = 0;
    if (!p->estimate) {
        scale = lop_decide_loss_scale(p);
    } else if (p->curve.kind == LOP_CURVE_TOLERANCE) {
        scale = fmax(fabs(p->curve.inside), fabs(p->curve.outside));
    } else if (p->curve.kind == LOP_CURVE_POINTS) {
        for (size_t k = 0; k < p->curve.n_points; k++)
            scale = fmax(scale, fabs(p->curve.value[k]));
    } else {
        scale = fabs(prior_only_risk);
    }
    return scale > 0 && isfinite(scale) ? scale : 1;
}

/* The scales of the contract for p solved into r. */
static void set_scales(const lop_problem *p, const lop_results *r, lop_accuracy *acc)
{
    acc->score_scale = lop_accuracy_score_scale(p, r->rule.prior_only_risk);
    acc->state_range = 1;
    if (lop_problem_numeric_states(p) && p->n_states > 1)
        acc->state_range = p->state_values[p->n_states - 1] - p->state_values[0];
    acc->measurement_span = acc->state_range;
    if (r->has_rule && r->rule.computed && r->rule.n_grid > 1)
        acc->measurement_span = r->rule.grid[r->rule.n_grid - 1] - r->rule.grid[0];
}

static double scale_of(const lop_accuracy *acc, const quantity *q)
{
    switch (q->kind) {
    case QTY_SCORE:
        return acc->score_scale;
    case QTY_PROBABILITY:
        return 1;
    case QTY_STATE:
        return acc->state_range;
    case QTY_MEASUREMENT:
        return acc->measurement_span;
    case QTY_SETTING:
        return q->scale > 0 ? q->scale : 1;
    }
    return 1;
}

static int add_miss(lop_accuracy *acc, const char *name, double error, double allowed)
{
    lop_accuracy_miss *grown = realloc(acc->missed, (acc->n_missed + 1) * sizeof *grown);
    if (!grown)
        return -1;
    acc->missed = grown;
    lop_accuracy_miss *m = &acc->missed[acc->n_missed++];
    snprintf(m->name, sizeof m->name, "%s", name);
    m->error = error;
    m->allowed = allowed;
    return 0;
}

/* Returns the number named `name` in the sorted list l, or NULL. */
static const quantity *find(const quantity_list *l, const char *name)
{
    quantity key;
    snprintf(key.name, sizeof key.name, "%s", name);
    return bsearch(&key, l->items, l->n, sizeof *l->items, by_name);
}

/* Fills fine->accuracy from the numbers of three answers on grids whose steps shrink
 * from coarsest to coarse to fine, the errors by the factors r_cc (coarsest to coarse)
 * and r_cf (coarse to fine), the squares of the ratios of the steps. Richardson (1911)
 * moves a number q with the coarser q' to the step 0: q + (q - q')/(r - 1). The
 * extrapolation from (coarse, fine) is the answer; its error is estimated as the
 * distance to the extrapolation from (coarsest, coarse), which is of the coarser one's
 * order and so bounds it, ERROR_SAFETY times; without the coarsest answer (or the
 * number on it), as ERROR_SAFETY times the unextrapolated fine number's error,
 * |q - q'|/(r - 1). With extrapolate, fine's numbers are moved. Returns -1 when memory
 * runs out. */
static int compare(const lop_problem *pf, lop_results *fine, const lop_problem *pc,
                   lop_results *coarse, double r_cf, const lop_problem *pcc,
                   lop_results *coarsest, double r_cc, bool extrapolate)
{
    lop_accuracy *acc = &fine->accuracy;
    quantity_list lf = {0}, lc = {0}, lcc = {0};
    collect(pf, fine, &lf);
    collect(pc, coarse, &lc);
    if (coarsest)
        collect(pcc, coarsest, &lcc);
    int rc = lf.failed || lc.failed || lcc.failed ? -1 : 0;
    if (rc == 0) {
        qsort(lf.items, lf.n, sizeof *lf.items, by_name);
        qsort(lc.items, lc.n, sizeof *lc.items, by_name);
        qsort(lcc.items, lcc.n, sizeof *lcc.items, by_name);
    }
    free(acc->missed);
    acc->missed = NULL;
    acc->n_missed = acc->compared = acc->unmatched = 0;
    acc->reached = 0;
    acc->worst[0] = '\0';
    acc->worst_error = 0;
    size_t i = 0, j = 0;
    while (rc == 0 && (i < lf.n || j < lc.n)) {
        int order = i == lf.n ? 1 : j == lc.n ? -1 : strcmp(lf.items[i].name, lc.items[j].name);
        if (order != 0) {
            acc->unmatched++;
            i += order < 0;
            j += order > 0;
            continue;
        }
        quantity *q = &lf.items[i++];
        double f = *q->value, c = *lc.items[j++].value;
        double better = f + (f - c) / (r_cf - 1);
        const quantity *qq = coarsest ? find(&lcc, q->name) : NULL;
        double error = ERROR_SAFETY * fabs(f - c) / (r_cf - 1);
        if (qq) {
            /* Two extrapolations that agree bound the error of a number that converges
             * smoothly; one whose convergence oscillates (a cut or a window edge moving
             * within its cell) can agree by chance, so the estimate is never below the
             * unextrapolated number's. */
            double earlier = c + (c - *qq->value) / (r_cc - 1);
            error = fmax(error, ERROR_SAFETY * fabs(better - earlier));
        }
        double scale = scale_of(acc, q);
        acc->compared++;
        if (error / scale > acc->reached) {
            acc->reached = error / scale;
            snprintf(acc->worst, sizeof acc->worst, "%s", q->name);
            acc->worst_error = error;
        }
        if (error > acc->asked * scale && add_miss(acc, q->name, error, acc->asked * scale) != 0)
            rc = -1;
        if (!extrapolate)
            continue;
        if (q->kind == QTY_PROBABILITY)
            better = fmin(1, fmax(0, better));
        *q->value = better;
    }
    free(lf.items);
    free(lc.items);
    free(lcc.items);
    return rc;
}

/* A number that passes its bound by less than `slack` is set onto the bound (it is
 * within the accuracy of it); by more, it is a defect. Returns false for a defect. */
static bool onto_bound(lop_accuracy *acc, double *v, double bound, bool below, double slack,
                       const char *name, char *defect, size_t size)
{
    double over = below ? *v - bound : bound - *v;
    if (!(over > 0))
        return true;
    if (over <= slack) {
        *v = bound;
        acc->n_clamped++;
        return true;
    }
    snprintf(defect, size, "%s = %.17g passes its bound %.17g by %.3g, more than the accuracy "
                           "allows (%.3g)",
             name, *v, bound, over, slack);
    return false;
}

bool lop_accuracy_invariants(const lop_problem *p, lop_results *r, char *defect, size_t size)
{
    lop_accuracy *acc = &r->accuracy;
    double slack = (fmax(acc->asked, acc->reached) + 1e-12) * acc->score_scale;
    double pslack = fmax(acc->asked, acc->reached) + 1e-12;
    lop_rule_result *rule = &r->rule;
    if (!onto_bound(acc, &r->kase.evpi, 0, false, slack, "case.evpi", defect, size))
        return false;
    if (r->has_rule && rule->computed) {
        if (!onto_bound(acc, &rule->bayes_risk, rule->prior_only_risk, true, slack,
                        "rule.bayes_risk (above the prior-only risk: evidence of negative value)",
                        defect, size))
            return false;
        for (size_t k = 0; k < r->n_compared; k++) {
            lop_compared_rule *cr = &r->compared[k];
            if (cr->computed && !onto_bound(acc, &cr->regret, 0, false, slack, "a rule's regret",
                                            defect, size))
                return false;
            if (cr->computed)
                cr->risk = rule->bayes_risk + cr->regret;
        }
    }
    lop_value_result *v = &r->value;
    if (v->computed) {
        if (!onto_bound(acc, &v->evpi, 0, false, slack, "value.evpi", defect, size))
            return false;
        for (size_t i = 0; i < v->n_extra; i++) {
            lop_value_extra *x = &v->extra[i];
            if (!x->computed)
                continue;
            lop_value_extra *prev = i > 0 && v->extra[i - 1].channel == x->channel &&
                                            v->extra[i - 1].computed
                                        ? &v->extra[i - 1]
                                        : NULL;
            if (!onto_bound(acc, &x->evsi, prev ? prev->evsi : 0, false, slack,
                            prev ? "an EVSI (below that of fewer measurements)" : "an EVSI",
                            defect, size) ||
                !onto_bound(acc, &x->evsi, v->evpi, true, slack, "an EVSI (above the EVPI)",
                            defect, size))
                return false;
            x->net = x->evsi - (double)x->n * p->value.cost;
        }
    }
    for (size_t k = 0; k < r->n_sweeps; k++) {
        lop_sweep_result *w = &r->sweeps[k];
        for (size_t i = 0; i < w->nx * w->ny; i++)
            for (size_t j = 0; w->points[i].rates && j < w->n_rates; j++)
                if (!onto_bound(acc, &w->points[i].rates[j], 0, false, pslack, "a sweep's rate",
                                defect, size) ||
                    !onto_bound(acc, &w->points[i].rates[j], 1, true, pslack, "a sweep's rate",
                                defect, size))
                    return false;
    }
    return true;
}

/* Returns true when some number of p rests on a grid: states on a grid, or estimates
 * whose rule integrates over a grid of measurements. */
static bool rests_on_grids(const lop_problem *p)
{
    return p->states_kind == LOP_STATES_GRID ||
           (p->estimate && lop_problem_numeric_channels(p) > 0);
}

/* Returns p re-built with [problem] refine = level, NULL with *too_fine set when the
 * grids would pass their limits, NULL with err set when memory runs out. */
static lop_problem *at_level(const lop_problem *p, int level, bool *too_fine, lop_error *err)
{
    *too_fine = false;
    lop_config *cfg = lop_config_copy(p->source);
    char text[16];
    snprintf(text, sizeof text, "%d", level);
    const lop_section *sec = lop_config_section(p->source, "problem");
    if (!cfg || lop_config_set(cfg, "problem", "refine", text, sec ? sec->line : 0) != 0) {
        lop_config_free(cfg);
        lop_error_run(err, "out of memory");
        return NULL;
    }
    lop_error inner = {0};
    lop_problem *q = lop_problem_build(cfg, &inner);
    lop_config_free(cfg);
    if (!q && inner.status == LOP_EINPUT)
        *too_fine = true;
    else if (!q)
        *err = inner;
    return q;
}

/* The factor by which the error shrinks from coarse's grids to fine's: the squared ratio
 * of their cells (state grid, else the rule's measurement grid). */
static double error_ratio(const lop_problem *fine, const lop_results *rf,
                          const lop_problem *coarse, const lop_results *rc)
{
    double r = fine->states_kind == LOP_STATES_GRID
                   ? (double)(fine->n_states - 1) / (double)(coarse->n_states - 1)
                   : (double)(rf->rule.n_grid - 1) / (double)(rc->rule.n_grid - 1);
    return r * r;
}

/* Returns the work of solving p once: state points times measurement points, times the
 * rules judged on each posterior (the Bayes rule and every [rule.NAME]). */
static double work_of(const lop_problem *p, const lop_results *r)
{
    double m = r->has_rule && r->rule.computed && r->rule.n_grid > 0 ? (double)r->rule.n_grid : 1;
    return (double)p->n_states * m * (double)(1 + p->n_rules);
}

static double seconds_now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* One answer and the problem it belongs to (NULL: the caller's problem). */
typedef struct {
    lop_problem *p;
    lop_results *r;
} answer;

static void answer_free(answer *a)
{
    lop_results_free(a->r);
    lop_problem_free(a->p);
    a->r = NULL;
    a->p = NULL;
}

/* Returns LOP_OK after solving p at [problem] refine = level into *a, or with a->r NULL
 * when the grids would pass their limits. */
static lop_status solve_at(const lop_problem *p, int level, const lop_progress *progress,
                           answer *a, size_t *solves, lop_error *err)
{
    a->p = NULL;
    a->r = NULL;
    ++*solves;
    if (level == p->refine) {
        a->r = lop_run_solve(p, progress, err);
        return a->r ? LOP_OK : err->status;
    }
    bool too_fine;
    a->p = at_level(p, level, &too_fine, err);
    if (!a->p)
        return too_fine ? LOP_OK : err->status;
    a->r = lop_run_solve(a->p, progress, err);
    if (!a->r) {
        answer_free(a);
        return err->status;
    }
    return LOP_OK;
}

/* Returns how many halvings beyond the current level should bring the error from
 * `reached` below `asked` when the extrapolated numbers' error falls as the fourth power
 * of the step (a second-order method after one Richardson step; if it falls slower, the
 * next round halves again), within the work budget; each halving multiplies the work by
 * `growth` (2: the state grid; 4: the measurement grid too). */
static int halvings_wanted(double reached, double asked, double work, double growth)
{
    int k = (int)ceil(log(reached / asked) / log(16.0));
    if (k < 1)
        k = 1;
    while (k > 1 && work * pow(growth, k) > LOP_ACCURACY_WORK)
        k--;
    return k;
}

lop_status lop_accuracy_solve(const lop_problem *p, const lop_progress *progress,
                              lop_solution *out, lop_error *err)
{
    /* Three answers: [0] on the finest grids, [1] and [2] with twice and four times the
     * step (coarser than the file's through [problem] refine = -1 and -2). */
    answer a[3] = {{0}};
    int level = p->refine;
    size_t solves = 0;
    double started = seconds_now();
    if (solve_at(p, level, progress, &a[0], &solves, err) != LOP_OK)
        goto fail;
    double first_solve = seconds_now() - started;
    a[0].r->accuracy.asked = p->accuracy;
    set_scales(p, a[0].r, &a[0].r->accuracy);
    if (rests_on_grids(p) && level - 1 >= LOP_REFINE_MIN) {
        if (solve_at(p, level - 1, progress, &a[1], &solves, err) != LOP_OK ||
            (level - 2 >= LOP_REFINE_MIN &&
             solve_at(p, level - 2, progress, &a[2], &solves, err) != LOP_OK))
            goto fail;
        for (bool last = false;;) {
            const lop_problem *pp[3];
            for (int i = 0; i < 3; i++)
                pp[i] = a[i].p ? a[i].p : p;
            lop_accuracy *acc = &a[0].r->accuracy;
            acc->asked = p->accuracy;
            acc->estimated = a[1].r != NULL;
            set_scales(pp[0], a[0].r, acc);
            if (!a[1].r)
                break;
            double r01 = error_ratio(pp[0], a[0].r, pp[1], a[1].r);
            double r12 = a[2].r ? error_ratio(pp[1], a[1].r, pp[2], a[2].r) : 0;
            if (compare(pp[0], a[0].r, pp[1], a[1].r, r01, pp[2], a[2].r, r12, last) != 0) {
                lop_error_run(err, "out of memory");
                goto fail;
            }
            if (last)
                break;
            double work = work_of(pp[0], a[0].r);
            double growth = (pp[0]->states_kind == LOP_STATES_GRID ? 2 : 1) *
                            (pp[0]->estimate ? 2 : 1);
            last = acc->reached <= acc->asked || work * growth > LOP_ACCURACY_WORK ||
                   level >= LOP_REFINE_MAX;
            if (last)
                continue; /* once more, to extrapolate */
            /* Not reached: halve the steps as often as the error's fall asks (jumping
             * over levels), with the two levels just below the new one as companions. */
            int k = halvings_wanted(acc->reached, acc->asked, work, growth);
            if (level + k > LOP_REFINE_MAX)
                k = LOP_REFINE_MAX - level;
            /* The answers at the three new levels: kept ones where a level is kept (the
             * first step, k = 1), new solves for the rest; nothing kept is given up until
             * every new one is in hand. */
            answer next[3] = {{0}};
            lop_status st = LOP_OK;
            bool fresh[3] = {false, false, false}; /* read below even when a solve fails early */
            for (int i = 0; i < 3 && st == LOP_OK; i++) {
                int kept = i >= k ? i - k : -1; /* level + k - i == level - (i - k) */
                fresh[i] = kept < 0 || kept > 2 || !a[kept].r;
                if (fresh[i])
                    st = solve_at(p, level + k - i, progress, &next[i], &solves, err);
                else
                    next[i] = a[kept];
            }
            if (st != LOP_OK || !next[0].r || !next[1].r) {
                for (int i = 0; i < 3; i++)
                    if (fresh[i])
                        answer_free(&next[i]);
                if (st != LOP_OK)
                    goto fail;
                last = true; /* past the grids' limits: keep what is reached */
                continue;
            }
            for (int i = 0; i < 3; i++) {
                bool reused = false;
                for (int j = 0; j < 3; j++)
                    reused |= !fresh[j] && next[j].r == a[i].r;
                if (!reused)
                    answer_free(&a[i]);
            }
            for (int i = 0; i < 3; i++)
                a[i] = next[i];
            level += k;
        }
    }
    const lop_problem *solved = a[0].p ? a[0].p : p;
    lop_accuracy *acc = &a[0].r->accuracy;
    acc->refine = solved->refine;
    acc->solves = solves;
    acc->seconds = seconds_now() - started;
    acc->seconds_first = first_solve;
    acc->state_points = solved->states_kind == LOP_STATES_GRID ? solved->n_states : 0;
    char defect[512];
    if (!lop_accuracy_invariants(solved, a[0].r, defect, sizeof defect)) {
        lop_error_run(err, "a defect: %s; please report it with the problem file", defect);
        goto fail;
    }
    answer_free(&a[1]);
    answer_free(&a[2]);
    out->refined = a[0].p;
    out->results = a[0].r;
    return LOP_OK;
fail:
    for (int i = 0; i < 3; i++)
        answer_free(&a[i]);
    return err->status;
}
