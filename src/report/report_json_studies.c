/* JSON of the value of information, sweeps and designs. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "lopside/report/report.h"
#include "report_studies.h"


static const char *channel_name(const lop_problem *p, size_t i)
{
    return lop_report_channel_name(&p->channels[i]);
}

static json_t *flatness_json(const lop_problem *p, const lop_flatness *f)
{
    if (!f->computed)
        return json_null();
    json_t *obj = json_object();
    json_object_set_new(obj, "at", lop_json_number(f->at));
    lop_json_score(obj, p, "expected_loss", "expected_payoff", f->optimum);
    json_t *ranges = json_array();
    for (size_t k = 0; k < LOP_FLAT_LEVELS; k++) {
        json_t *r = json_object();
        json_object_set_new(r, "within", json_real(f->range[k].within));
        json_object_set_new(r, "from", lop_json_number(f->range[k].from));
        json_object_set_new(r, "to", lop_json_number(f->range[k].to));
        json_array_append_new(ranges, r);
    }
    json_object_set_new(obj, "ranges", ranges);
    return obj;
}

static json_t *value_json(const lop_problem *p, const lop_results *r)
{
    const lop_value_result *v = &r->value;
    if (!v->present)
        return json_null();
    json_t *obj = json_object();
    json_object_set_new(obj, "computed", json_boolean(v->computed));
    if (!v->computed)
        json_object_set_new(obj, "not_computed", json_string(v->not_computed_why));
    json_object_set_new(obj, "evpi", v->computed ? lop_json_number(v->evpi) : json_null());
    json_object_set_new(obj, "cost", json_real(p->value.cost));
    json_object_set_new(obj, "up_to", json_integer((json_int_t)p->value.up_to));
    json_t *extra = json_array();
    for (size_t i = 0; i < v->n_extra; i++) {
        const lop_value_extra *x = &v->extra[i];
        json_t *e = json_object();
        json_object_set_new(e, "channel", json_string(channel_name(p, x->channel)));
        json_object_set_new(e, "n", json_integer((json_int_t)x->n));
        json_object_set_new(e, "evsi", x->computed ? lop_json_number(x->evsi) : json_null());
        json_object_set_new(e, "net", x->computed ? lop_json_number(x->net) : json_null());
        if (!x->computed)
            json_object_set_new(e, "not_computed", json_string(x->not_computed_why));
        if (x->on_the_mean)
            json_object_set_new(e, "on_the_mean", json_true());
        json_array_append_new(extra, e);
    }
    json_object_set_new(obj, "extra", extra);
    json_t *best = json_null();
    if (v->has_best) {
        best = json_object();
        json_object_set_new(best, "channel", json_string(channel_name(p, v->best_channel)));
        json_object_set_new(best, "n", json_integer((json_int_t)v->best_n));
        json_object_set_new(best, "net", json_real(v->best_net));
    }
    json_object_set_new(obj, "best", best);
    json_t *next = json_array();
    for (size_t i = 0; i < v->n_next; i++) {
        const lop_value_next *n = &v->next[i];
        json_t *e = json_object();
        json_object_set_new(e, "channel", json_string(channel_name(p, n->channel)));
        json_object_set_new(e, "value", n->computed ? lop_json_number(n->value) : json_null());
        if (!n->computed)
            json_object_set_new(e, "not_computed", json_string(n->not_computed_why));
        json_array_append_new(next, e);
    }
    json_object_set_new(obj, "case_next", next);
    return obj;
}

/* {ACTION: {STATE: rate}} for finite states, {ACTION: rate} for grid states. */
static json_t *rates_json(const lop_problem *p, const lop_sweep_result *w, const double *rates,
                          size_t n_actions)
{
    if (!rates)
        return json_null();
    json_t *obj = json_object();
    for (size_t a = 0; a < n_actions; a++) {
        if (!w->by_state) {
            json_object_set_new(obj, p->actions[a], json_real(rates[a]));
            continue;
        }
        json_t *by = json_object();
        for (size_t s = 0; s < p->n_states; s++)
            json_object_set_new(by, p->state_labels[s], json_real(rates[a * p->n_states + s]));
        json_object_set_new(obj, p->actions[a], by);
    }
    return obj;
}

static json_t *switches_json(const lop_problem *p, const lop_sweep_point *pt)
{
    json_t *arr = json_array();
    for (size_t k = 0; k < pt->n_switches; k++) {
        const lop_switch_point *sp = &pt->switches[k];
        json_t *s = json_object();
        json_object_set_new(s, "x", json_real(sp->x));
        json_object_set_new(s, "from", json_string(p->actions[sp->from]));
        json_object_set_new(s, "to", json_string(p->actions[sp->to]));
        if (lop_problem_numeric_channels(p) < p->n_channels)
            json_object_set_new(s, "row", json_integer((json_int_t)sp->row));
        json_array_append_new(arr, s);
    }
    return arr;
}

static json_t *path_point_json(const lop_problem *p, const lop_sweep_result *w,
                               const lop_sweep_point *pt)
{
    json_t *obj = json_object();
    json_object_set_new(obj, "x", json_real(pt->x));
    if (w->spec->y)
        json_object_set_new(obj, "y", json_real(pt->y));
    json_object_set_new(obj, "computed", json_boolean(pt->computed));
    lop_json_score(obj, p, "bayes_risk", "bayes_payoff", pt->computed ? pt->bayes_risk : NAN);
    json_object_set_new(obj, "evpi", pt->computed ? lop_json_number(pt->evpi) : json_null());
    if (p->estimate) {
        json_object_set_new(obj, "case_action", json_real(pt->case_estimate));
        json_object_set_new(obj, "rates", json_null());
        json_object_set_new(obj, "flatness", flatness_json(p, &pt->flatness));
    } else {
        json_object_set_new(obj, "case_action", json_string(p->actions[pt->case_action]));
        json_object_set_new(obj, "rates", rates_json(p, w, pt->rates, p->n_actions));
        json_object_set_new(obj, "switch_points", switches_json(p, pt));
    }
    return obj;
}

static json_t *threshold_point_json(const lop_problem *p, const lop_sweep_result *w,
                                    const lop_sweep_point *pt, const lop_threshold_row *row)
{
    json_t *obj = json_object();
    json_object_set_new(obj, "x", json_real(pt->x));
    if (w->spec->y)
        json_object_set_new(obj, "y", json_real(pt->y));
    json_object_set_new(obj, "rates", rates_json(p, w, pt->rates, 2));
    lop_json_score(obj, p, "expected_loss", "expected_payoff", pt->expected_loss);
    if (p->states_kind == LOP_STATES_LABELS && p->n_states == 2) {
        /* The second state is the signal, the second action the "yes". */
        json_object_set_new(obj, "hit_rate", json_real(pt->rates[p->n_states + 1]));
        json_object_set_new(obj, "false_alarm_rate", json_real(pt->rates[p->n_states]));
    }
    if (row->sdt) {
        json_object_set_new(obj, "c", lop_json_number(pt->criterion));
        json_object_set_new(obj, "beta", lop_json_number(pt->beta));
    }
    return obj;
}

/* What a threshold sweep says about one row: its Bayes threshold, flatness and d'. */
static void threshold_row_json(json_t *obj, const lop_problem *p, const lop_threshold_row *row)
{
    json_object_set_new(obj, "bayes_threshold",
                        row->has_bayes_threshold ? json_real(row->bayes_threshold)
                                                 : json_null());
    lop_json_score(obj, p, "bayes_threshold_expected_loss", "bayes_threshold_expected_payoff",
              row->bayes_threshold_loss);
    lop_json_score(obj, p, "bayes_risk", "bayes_payoff", row->bayes_risk);
    json_object_set_new(obj, "flatness", row->has_bayes_threshold
                                             ? flatness_json(p, &row->flatness)
                                             : json_null());
    if (row->sdt)
        json_object_set_new(obj, "d_prime", json_real(row->d_prime));
}

static json_t *sweep_json(const lop_problem *p, const lop_sweep_result *w)
{
    const lop_sweep_spec *spec = w->spec;
    json_t *obj = json_object();
    json_object_set_new(obj, "name", json_string(spec->name));
    json_object_set_new(obj, "kind", json_string(w->threshold ? "threshold" : "path"));
    json_object_set_new(obj, "x", json_string(spec->x));
    json_object_set_new(obj, "x_from", json_real(spec->x_from));
    json_object_set_new(obj, "x_to", json_real(spec->x_to));
    if (spec->y) {
        json_object_set_new(obj, "y", json_string(spec->y));
        json_object_set_new(obj, "y_from", json_real(spec->y_from));
        json_object_set_new(obj, "y_to", json_real(spec->y_to));
    }
    json_t *points = json_array();
    for (size_t j = 0; j < w->ny; j++)
        for (size_t i = 0; i < w->nx; i++) {
            const lop_sweep_point *pt = &w->points[j * w->nx + i];
            json_array_append_new(points, w->threshold
                                              ? threshold_point_json(p, w, pt, &w->rows[j])
                                              : path_point_json(p, w, pt));
        }
    json_object_set_new(obj, "points", points);
    if (w->threshold && !spec->y) {
        threshold_row_json(obj, p, &w->rows[0]);
    } else if (w->threshold) {
        json_t *rows = json_array();
        for (size_t j = 0; j < w->ny; j++) {
            json_t *row = json_object();
            json_object_set_new(row, "y", json_real(w->rows[j].y));
            threshold_row_json(row, p, &w->rows[j]);
            json_array_append_new(rows, row);
        }
        json_object_set_new(obj, "by_y", rows);
    }
    return obj;
}

const char *lop_report_goal_name(const lop_problem *p, const lop_design_spec *d, char *buf,
                                 size_t size)
{
    switch (d->goal) {
    case LOP_GOAL_SWITCH_POINT:
        return "switch_point";
    case LOP_GOAL_RISK:
        return "risk";
    case LOP_GOAL_ACTION:
        return "action";
    case LOP_GOAL_CHOICE_RATE:
        break;
    }
    snprintf(buf, size, "choice_rate.%s", p->actions[d->goal_action]);
    return buf;
}

static json_t *design_json(const lop_problem *p, const lop_design_result *d)
{
    const lop_design_spec *spec = d->spec;
    char goal[160];
    json_t *obj = json_object();
    json_object_set_new(obj, "name", json_string(spec->name));
    json_object_set_new(obj, "vary", json_string(spec->vary));
    json_object_set_new(obj, "from", json_real(spec->from));
    json_object_set_new(obj, "to", json_real(spec->to));
    json_object_set_new(obj, "goal", json_string(lop_report_goal_name(p, spec, goal,
                                                                      sizeof goal)));
    bool action = spec->goal == LOP_GOAL_ACTION;
    json_object_set_new(obj, "equals", action ? json_string(p->actions[spec->goal_action])
                                              : json_real(spec->equals));
    json_object_set_new(obj, "reached", json_boolean(d->reached));
    json_object_set_new(obj, "value", d->reached ? json_real(d->value) : json_null());
    if (d->reached && !action)
        json_object_set_new(obj, "achieved", lop_json_number(d->achieved));
    if (!d->reached && action) {
        json_t *seen = json_array();
        for (size_t i = 0; i < d->n_seen; i++)
            json_array_append_new(seen, json_string(p->actions[d->seen[i]]));
        json_object_set_new(obj, "range", seen);
    } else if (!d->reached) {
        json_t *range = json_array();
        json_array_append_new(range, lop_json_number(d->range_lo));
        json_array_append_new(range, lop_json_number(d->range_hi));
        json_object_set_new(obj, "range", range);
    }
    if (d->note)
        json_object_set_new(obj, "note", json_string(d->note));
    json_object_set_new(obj, "evaluations", json_integer((json_int_t)d->evaluations));
    return obj;
}

void lop_report_json_studies(json_t *root, const lop_problem *p, const lop_results *r)
{
    json_t *kase = json_object_get(root, "case");
    if (kase && p->estimate)
        json_object_set_new(kase, "flatness", flatness_json(p, &r->case_flatness));
    json_object_set_new(root, "value", value_json(p, r));
    json_t *sweeps = json_array();
    for (size_t k = 0; k < r->n_sweeps; k++)
        json_array_append_new(sweeps, sweep_json(p, &r->sweeps[k]));
    json_object_set_new(root, "sweeps", sweeps);
    json_t *designs = json_array();
    for (size_t k = 0; k < r->n_designs; k++)
        json_array_append_new(designs, design_json(p, &r->designs[k]));
    json_object_set_new(root, "designs", designs);
}
