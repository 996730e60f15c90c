/* The workbook's sheets of the studies around the problem: Rules ([rule.NAME] against the
 * Bayes rule), Value ([value]), Designs ([design.NAME]) and Simulation ([simulate]). All
 * hold values computed by lopside; each is written only when the file asks for it. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/report/report.h"
#include "report_studies.h"
#include "report_xlsx_private.h"

/* Rows a chart takes on the sheet at its default size and scale 1. */
#define CHART_ROWS 16

/* Writes a number when it is finite, a blank cell otherwise (JSON's null). */
static void put_finite(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col, double v,
                       lxw_format *fmt)
{
    if (isfinite(v))
        xw_put_number(w, ws, row, col, v, fmt);
    else
        xw_check(w, worksheet_write_blank(ws, row, col, fmt), ws->name);
}

/* The sheet's title in A1 and a note in A2. */
static void sheet_head(xlsx_writer *w, lxw_worksheet *ws, const char *title, const char *note)
{
    xw_put_text(w, ws, 0, 0, title, w->f.title);
    xw_put_text(w, ws, 1, 0, note, w->f.note);
}

/* --- Rules ------------------------------------------------------------------------------ */

/* The first channel with numbers for measurements: the one a threshold rule reads. */
static const lop_channel *threshold_channel(const lop_problem *p)
{
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].kind == LOP_CHANNEL_NOISE)
            return &p->channels[i];
    return NULL;
}

/* Returns how rule k decides, in words: a fixed phrase, or the text written to buf. */
static const char *rule_decides(const lop_problem *p, size_t k, char *buf, size_t size)
{
    const lop_rule_spec *rule = &p->rules[k];
    switch (rule->kind) {
    case LOP_RULE_KIND_MEAN:
        return "answers the posterior mean";
    case LOP_RULE_KIND_MEDIAN:
        return "answers the posterior median";
    case LOP_RULE_KIND_MODE:
        return "answers the posterior mode";
    case LOP_RULE_KIND_MAX_LIKELIHOOD:
        return "answers the state of greatest likelihood";
    case LOP_RULE_KIND_THRESHOLD: {
        const lop_channel *c = threshold_channel(p);
        char name[160] = "the measurement";
        if (c)
            lop_report_measurement_name(name, sizeof name, c);
        snprintf(buf, size, "%s when %s is at or above %.10g, else %s", p->actions[1], name,
                 rule->at, p->actions[0]);
        return buf;
    }
    case LOP_RULE_KIND_BELIEVED:
        break;
    }
    /* A believed rule: the Bayes rule of the problem with the rule's paths changed. */
    char section[512];
    snprintf(section, sizeof section, "rule.%s", rule->name);
    size_t at = (size_t)snprintf(buf, size, "the Bayes rule if");
    bool first = true;
    for (size_t i = 0; p->source && i < p->source->n_entries && at < size; i++) {
        const lop_entry *e = &p->source->entries[i];
        if (strcmp(e->section, section) != 0 || !strchr(e->key, '.'))
            continue;
        int n = snprintf(buf + at, size - at, "%s %s = %s", first ? "" : ",", e->key, e->value);
        at += n > 0 ? (size_t)n : 0;
        first = false;
    }
    return buf;
}

void xw_sheet_rules(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_results *r = w->r;
    const char *unit = xw_score_unit(p);
    char text[1024];
    sheet_head(w, ws, "Rules: the Bayes rule and other ways to decide, judged under the "
               "problem as given",
               p->payoff ? "Values computed by lopside. Regret is how much less a rule earns "
                           "per decision than the Bayes rule (0 for the Bayes rule itself)."
                         : "Values computed by lopside. Regret is how much more a rule loses "
                           "per decision than the Bayes rule (0 for the Bayes rule itself).");
    bool notes = false;
    for (size_t k = 0; k < r->n_compared; k++)
        notes |= !r->compared[k].computed;
    notes |= !r->rule.computed;
    const lxw_row_t h = 3;
    lxw_row_t row = h + 1;
    xw_put_text(w, ws, row, 0, "bayes", NULL);
    xw_put_text(w, ws, row, 1, "Bayes rule", NULL);
    xw_put_textf(w, ws, row, 2, NULL, "the %s of %s expected %s given the evidence",
                 p->estimate ? "estimate" : "action", p->payoff ? "greatest" : "least",
                 lop_problem_orientation(p));
    if (r->rule.computed) {
        xw_put_number(w, ws, row, 3, lop_problem_oriented(p, r->rule.bayes_risk), w->f.score);
        xw_put_number(w, ws, row, 4, 0, w->f.score);
    } else {
        xw_put_text(w, ws, row, 5, r->rule.not_computed_why, NULL);
    }
    size_t widest = 40;
    for (size_t k = 0; k < r->n_compared; k++) {
        const lop_compared_rule *c = &r->compared[k];
        row++;
        xw_put_text(w, ws, row, 0, c->name, NULL);
        xw_put_text(w, ws, row, 1, lop_rule_kind_name(p->rules[k].kind), NULL);
        const char *decides = rule_decides(p, k, text, sizeof text);
        xw_put_text(w, ws, row, 2, decides, NULL);
        widest = strlen(decides) > widest ? strlen(decides) : widest;
        if (c->computed) {
            xw_put_number(w, ws, row, 3, lop_problem_oriented(p, c->risk), w->f.score);
            xw_put_number(w, ws, row, 4, c->regret, w->f.score);
        } else {
            xw_put_textf(w, ws, row, 5, NULL, "not computed: %s",
                         c->not_computed_why ? c->not_computed_why : "the rule was not computed");
        }
    }
    xw_names head = {0};
    xw_names_add(w, &head, "rule");
    xw_names_add(w, &head, "kind");
    xw_names_add(w, &head, "decides by");
    xw_names_add(w, &head, "%s (%s per decision)", p->payoff ? "payoff" : "risk", unit);
    xw_names_add(w, &head, "regret (%s per decision)", unit);
    if (notes)
        xw_names_add(w, &head, "note");
    size_t n_cols = head.n;
    xw_set_width(w, 0, 0, 18);
    xw_set_width(w, 1, 1, 18);
    xw_set_width(w, 2, 2, widest < 70 ? (double)widest + 2 : 72);
    xw_set_width(w, 3, 4, 16);
    if (notes)
        xw_set_width(w, 5, 5, 60);
    xw_header_and_table_wrapped(w, ws, "rules", h, 0, row, &head, 16);

    lxw_chart *chart = xw_chart(w, LXW_CHART_BAR, "Rules chart");
    if (chart && xw_series(w, chart, ws->name, h + 1, row, 0, 4, "regret")) {
        snprintf(text, sizeof text, "Regret of each rule against the Bayes rule (%s per "
                 "decision)", unit);
        chart_title_set_name(chart, text);
        chart_axis_set_reverse(chart->y_axis);
        chart_axis_set_label_position(chart->y_axis, LXW_CHART_AXIS_LABEL_POSITION_LOW);
        chart_axis_set_name(chart->x_axis, unit);
        chart_axis_set_min(chart->x_axis, 0);
        chart_legend_set_position(chart, LXW_CHART_LEGEND_NONE);
        xw_insert_chart(w, ws, h, (lxw_col_t)(n_cols + 1), chart, 1.2, 1.0);
    }
    xw_finish_sheet(w, ws, h);
}

/* --- Value ------------------------------------------------------------------------------ */

/* EVSI and net value per channel and n; returns the last row written (h when none). */
static lxw_row_t value_extra(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t h)
{
    const lop_problem *p = w->p;
    const lop_value_result *v = &w->r->value;
    const char *unit = xw_score_unit(p);
    bool notes = false;
    for (size_t i = 0; i < v->n_extra; i++)
        notes |= v->extra[i].on_the_mean || !v->extra[i].computed;
    xw_put_text(w, ws, h - 1, 0, "Extra measurements beyond the design's repeats",
                w->f.heading);
    lxw_row_t row = h;
    for (size_t i = 0; i < v->n_extra; i++) {
        const lop_value_extra *x = &v->extra[i];
        row++;
        xw_put_text(w, ws, row, 0, lop_report_channel_name(&p->channels[x->channel]), NULL);
        xw_put_number(w, ws, row, 1, (double)x->n, w->f.count);
        xw_put_number(w, ws, row, 3, (double)x->n * p->value.cost, w->f.score);
        if (x->computed) {
            xw_put_number(w, ws, row, 2, x->evsi, w->f.score);
            xw_put_number(w, ws, row, 4, x->net, w->f.score);
        }
        if (!x->computed)
            xw_put_textf(w, ws, row, 5, NULL, "not computed: %s", x->not_computed_why);
        else if (x->on_the_mean)
            xw_put_text(w, ws, row, 5, "at least this much: decided on the mean of the "
                        "repeats", NULL);
    }
    xw_names head = {0};
    xw_names_add(w, &head, "channel");
    xw_names_add(w, &head, "more measurements");
    xw_names_add(w, &head, "EVSI (%s per decision)", unit);
    xw_names_add(w, &head, "cost (%s per decision)", unit);
    xw_names_add(w, &head, "net of cost (%s per decision)", unit);
    if (notes)
        xw_names_add(w, &head, "note");
    xw_set_width(w, 0, 0, 14);
    xw_set_width(w, 1, 4, 12);
    if (notes)
        xw_set_width(w, 5, 5, 56);
    xw_header_and_table_wrapped(w, ws, "value_extra", h, 0, row, &head, 16);
    return row;
}

/* One more measurement of each channel for the case at hand, from column c0. */
static void value_next(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t h, lxw_col_t c0)
{
    const lop_problem *p = w->p;
    const lop_value_result *v = &w->r->value;
    if (!v->n_next)
        return;
    bool notes = false;
    xw_put_text(w, ws, h - 1, c0, "One more measurement for the case at hand", w->f.heading);
    lxw_row_t row = h;
    for (size_t i = 0; i < v->n_next; i++) {
        const lop_value_next *n = &v->next[i];
        row++;
        xw_put_text(w, ws, row, c0, lop_report_channel_name(&p->channels[n->channel]), NULL);
        if (n->computed) {
            xw_put_number(w, ws, row, c0 + 1, n->value, w->f.score);
        } else {
            xw_put_textf(w, ws, row, c0 + 2, NULL, "not computed: %s", n->not_computed_why);
            notes = true;
        }
    }
    xw_names head = {0};
    xw_names_add(w, &head, "channel");
    xw_names_add(w, &head, "value for the case (%s)", xw_score_unit(p));
    if (notes)
        xw_names_add(w, &head, "note");
    xw_set_width(w, c0, c0, 14);
    xw_set_width(w, c0 + 1, c0 + 1, 18);
    if (notes)
        xw_set_width(w, c0 + 2, c0 + 2, 50);
    xw_header_and_table_wrapped(w, ws, "value_case_next", h, c0, row, &head, 16);
}

/* EVSI and net against n, one pair of lines per channel. */
static void value_chart(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t h, lxw_row_t last,
                        lxw_col_t at)
{
    const lop_problem *p = w->p;
    const lop_value_result *v = &w->r->value;
    if (last <= h)
        return;
    lxw_chart *chart = xw_chart(w, LXW_CHART_SCATTER_STRAIGHT_WITH_MARKERS, "Value chart");
    if (!chart)
        return;
    size_t series = 0, per = p->value.up_to;
    for (size_t first = 0; first < v->n_extra && series + 2 <= XW_SERIES_MAX; first += per) {
        const char *name = lop_report_channel_name(&p->channels[v->extra[first].channel]);
        lxw_row_t r0 = h + 1 + (lxw_row_t)first, r1 = r0 + (lxw_row_t)per - 1;
        char label[200];
        snprintf(label, sizeof label, "EVSI: %s", name);
        if (!xw_series(w, chart, ws->name, r0, r1, 1, 2, label))
            return;
        snprintf(label, sizeof label, "net: %s", name);
        lxw_chart_series *s = xw_series(w, chart, ws->name, r0, r1, 1, 4, label);
        if (!s)
            return;
        lxw_chart_line dash = {.dash_type = LXW_CHART_LINE_DASH_DASH};
        chart_series_set_line(s, &dash);
        series += 2;
    }
    char title[200];
    snprintf(title, sizeof title, "Value of extra measurements: EVSI and net of cost (%s per "
             "decision)", xw_score_unit(p));
    chart_title_set_name(chart, title);
    chart_axis_set_name(chart->x_axis, "more measurements");
    chart_axis_set_major_unit(chart->x_axis, 1);
    chart_axis_set_name(chart->y_axis, xw_score_unit(p));
    chart_legend_set_position(chart, LXW_CHART_LEGEND_BOTTOM);
    xw_insert_chart(w, ws, h, at, chart, 1.3, 1.1);
}

void xw_sheet_value(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_value_result *v = &w->r->value;
    const char *unit = xw_score_unit(p);
    char per[96], text[512];
    snprintf(per, sizeof per, "%s per decision", unit);
    sheet_head(w, ws, "Value: what more information is worth",
               "Values computed by lopside. The EVSI of n more measurements of a channel is "
               "the Bayes risk as given minus the Bayes risk with n more repeats (a "
               "preposterior analysis); net of cost is EVSI minus n times the cost.");
    lxw_row_t row = 3;
    if (v->computed) {
        row = xw_info_line(w, ws, row, "Value of perfect information for the design (EVPI)",
                           v->evpi, w->f.score, per);
    } else {
        row = xw_info_text(w, ws, row, "Design values not computed", v->not_computed_why, NULL);
    }
    row = xw_info_line(w, ws, row, "Cost of one extra measurement", p->value.cost, w->f.score,
                       unit);
    if (!v->computed)
        snprintf(text, sizeof text, "not known: the design values were not computed");
    else if (v->has_best)
        snprintf(text, sizeof text, "%zu more %s measurement%s, net %.6g %s", v->best_n,
                 lop_report_channel_name(&p->channels[v->best_channel]),
                 v->best_n == 1 ? "" : "s", v->best_net, per);
    else
        snprintf(text, sizeof text, "none: no extra measurement is worth its cost");
    row = xw_info_text(w, ws, row, "Best purchase", text, w->f.bold);
    lxw_row_t h = row + 2;
    lxw_row_t last = h;
    if (v->n_extra)
        last = value_extra(w, ws, h);
    bool notes = false;
    for (size_t i = 0; i < v->n_extra; i++)
        notes |= v->extra[i].on_the_mean || !v->extra[i].computed;
    lxw_col_t next_col = v->n_extra ? (lxw_col_t)(notes ? 7 : 6) : 0;
    value_next(w, ws, h, next_col);
    value_chart(w, ws, h, last, (lxw_col_t)(next_col + 4));
    xw_set_width(w, 0, 0, 14);
    xw_finish_sheet(w, ws, h);
}

/* --- Designs ---------------------------------------------------------------------------- */

void xw_sheet_designs(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_results *r = w->r;
    sheet_head(w, ws, "Designs: the setting of the file that gives the behaviour wanted",
               "Values computed by lopside. Each design varies one path over its bracket until "
               "the goal meets the target (the lowest such value when several do); when none "
               "does, the range the goal spans over the bracket is shown.");
    bool seen = false, notes = false;
    for (size_t k = 0; k < r->n_designs; k++) {
        seen |= !r->designs[k].reached && r->designs[k].spec->goal == LOP_GOAL_ACTION;
        notes |= r->designs[k].note != NULL;
    }
    const lxw_row_t h = 3;
    lxw_row_t row = h;
    char goal[256], list[1024];
    for (size_t k = 0; k < r->n_designs; k++) {
        const lop_design_result *d = &r->designs[k];
        const lop_design_spec *spec = d->spec;
        bool action = spec->goal == LOP_GOAL_ACTION;
        lxw_col_t col = 0;
        row++;
        xw_put_text(w, ws, row, col++, spec->name, NULL);
        xw_put_text(w, ws, row, col++, spec->vary, NULL);
        xw_put_number(w, ws, row, col++, spec->from, w->f.value);
        xw_put_number(w, ws, row, col++, spec->to, w->f.value);
        xw_put_text(w, ws, row, col++, lop_report_goal_name(p, spec, goal, sizeof goal), NULL);
        if (action)
            xw_put_text(w, ws, row, col++, p->actions[spec->goal_action], NULL);
        else
            xw_put_number(w, ws, row, col++, spec->equals, w->f.value);
        xw_put_text(w, ws, row, col++, d->reached ? "yes" : "no", NULL);
        if (d->reached)
            xw_put_number(w, ws, row, col, d->value, w->f.value);
        col++;
        if (d->reached && !action)
            put_finite(w, ws, row, col, d->achieved, w->f.value);
        col++;
        if (!d->reached && !action) {
            put_finite(w, ws, row, col, d->range_lo, w->f.value);
            put_finite(w, ws, row, col + 1, d->range_hi, w->f.value);
        }
        col += 2;
        if (seen) {
            if (!d->reached && action) {
                char **labels = xw_check_ptr(w, calloc(d->n_seen + 1, sizeof *labels),
                                             "Designs");
                if (!labels)
                    return;
                for (size_t i = 0; i < d->n_seen; i++)
                    labels[i] = p->actions[d->seen[i]];
                xw_list_text(list, sizeof list, labels, d->n_seen, d->n_seen);
                free(labels);
                xw_put_text(w, ws, row, col, list, NULL);
            }
            col++;
        }
        if (notes) {
            if (d->note)
                xw_put_text(w, ws, row, col, d->note, NULL);
            col++;
        }
        xw_put_number(w, ws, row, col, (double)d->evaluations, w->f.count);
    }
    xw_names head = {0};
    xw_names_add(w, &head, "design");
    xw_names_add(w, &head, "path varied");
    xw_names_add(w, &head, "bracket from");
    xw_names_add(w, &head, "bracket to");
    xw_names_add(w, &head, "goal");
    xw_names_add(w, &head, "target");
    xw_names_add(w, &head, "reached");
    xw_names_add(w, &head, "value found");
    xw_names_add(w, &head, "goal there");
    xw_names_add(w, &head, "goal spans from");
    xw_names_add(w, &head, "goal spans to");
    if (seen)
        xw_names_add(w, &head, "Bayes actions seen");
    if (notes)
        xw_names_add(w, &head, "note");
    xw_names_add(w, &head, "problems solved");
    size_t n = head.n;
    xw_set_width(w, 0, 1, 22);
    xw_set_width(w, 2, (lxw_col_t)(n - 1), 12);
    if (notes)
        xw_set_width(w, (lxw_col_t)(n - 2), (lxw_col_t)(n - 2), 50);
    xw_header_and_table_wrapped(w, ws, "designs", h, 0, row, &head, 16);
    xw_put_text(w, ws, row + 2, 0, "Goals: switch_point is the rule's first switch point (a "
                "measurement); choice_rate.ACTION the probability of choosing ACTION before any "
                "evidence; risk the Bayes risk (payoff in a [payoff] file) per decision; action "
                "where the case's Bayes action changes to ACTION.", w->f.note);
    xw_finish_sheet(w, ws, h);
}

/* --- Simulation ------------------------------------------------------------------------- */

/* One row per rule: means with intervals, the analytic value, percentiles. Returns the
 * last row written. */
static lxw_row_t simulation_table(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t h)
{
    const lop_problem *p = w->p;
    const lop_simulation *sim = &w->r->simulation;
    const char *unit = xw_score_unit(p), *word = lop_problem_orientation(p);
    bool notes = false;
    for (size_t i = 0; i < sim->n_rules; i++)
        notes |= !sim->rules[i].simulated;
    xw_put_textf(w, ws, h - 1, 0, w->f.heading, "%s per trial and per session of %zu trials, "
                 "in %s", p->payoff ? "Payoff" : "Loss", sim->trials, unit);
    lxw_row_t row = h;
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        lxw_col_t col = 0;
        row++;
        xw_put_text(w, ws, row, col++, m->name, NULL);
        if (m->has_analytic)
            xw_put_number(w, ws, row, col, m->analytic, w->f.score);
        col++;
        if (m->simulated) {
            xw_put_number(w, ws, row, col++, m->mean_per_trial, w->f.score);
            xw_put_number(w, ws, row, col++, m->ci95[0], w->f.score);
            xw_put_number(w, ws, row, col++, m->ci95[1], w->f.score);
            if (m->has_analytic)
                xw_put_text(w, ws, row, col, m->analytic >= m->ci95[0] &&
                            m->analytic <= m->ci95[1] ? "inside" : "outside", NULL);
            col++;
            xw_put_number(w, ws, row, col++, m->sd_per_trial, w->f.score);
            xw_put_number(w, ws, row, col++, m->mean_per_session, w->f.score);
            xw_put_number(w, ws, row, col++, m->session_ci95[0], w->f.score);
            xw_put_number(w, ws, row, col++, m->session_ci95[1], w->f.score);
            xw_put_number(w, ws, row, col++, m->p05, w->f.score);
            xw_put_number(w, ws, row, col++, m->p50, w->f.score);
            xw_put_number(w, ws, row, col++, m->p95, w->f.score);
            if (sim->floor_given)
                xw_put_number(w, ws, row, col++, m->below_floor, w->f.percent);
            if (p->estimate) {
                xw_put_number(w, ws, row, col++, m->mean_error, w->f.value);
                xw_put_number(w, ws, row, col++, m->mean_absolute_error, w->f.value);
            }
        } else {
            col = (lxw_col_t)(col + 11 + (sim->floor_given ? 1 : 0) + (p->estimate ? 2 : 0));
            xw_put_textf(w, ws, row, col, NULL, "not simulated: %s", m->not_simulated_why);
        }
    }
    char per_trial[96], per_session[128];
    snprintf(per_trial, sizeof per_trial, "%s per trial", unit);
    snprintf(per_session, sizeof per_session, "%s per session", unit);
    const char *su = p->unit[0] ? p->unit : "state units";
    xw_names head = {0};
    xw_names_add(w, &head, "rule");
    xw_names_add(w, &head, "analytic (%s)", per_trial);
    xw_names_add(w, &head, "mean %s (%s)", word, per_trial);
    xw_names_add(w, &head, "95%% interval from (%s)", per_trial);
    xw_names_add(w, &head, "95%% interval to (%s)", per_trial);
    xw_names_add(w, &head, "analytic in the interval");
    xw_names_add(w, &head, "sd per trial (%s)", unit);
    xw_names_add(w, &head, "mean %s (%s)", word, per_session);
    xw_names_add(w, &head, "95%% interval from (%s)", per_session);
    xw_names_add(w, &head, "95%% interval to (%s)", per_session);
    xw_names_add(w, &head, "5%% of sessions below (%s)", unit);
    xw_names_add(w, &head, "median session (%s)", unit);
    xw_names_add(w, &head, "95%% of sessions below (%s)", unit);
    if (sim->floor_given)
        xw_names_add(w, &head, "sessions below %.6g %s", sim->floor, unit);
    if (p->estimate) {
        xw_names_add(w, &head, "mean error (%s)", su);
        xw_names_add(w, &head, "mean absolute error (%s)", su);
    }
    if (notes)
        xw_names_add(w, &head, "note");
    size_t n = head.n;
    xw_set_width(w, 0, 0, 18);
    xw_set_width(w, 1, (lxw_col_t)(n - 1), 12);
    if (notes)
        xw_set_width(w, (lxw_col_t)(n - 1), (lxw_col_t)(n - 1), 50);
    xw_header_and_table_wrapped(w, ws, "simulation", h, 0, row, &head, 16);
    return row;
}

/* Choice rates: one row per rule and action, one column per state (grid states: one
 * column for all trials). Returns the last row written (h when none). */
static lxw_row_t simulation_rates(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t h)
{
    const lop_problem *p = w->p;
    const lop_simulation *sim = &w->r->simulation;
    if (p->estimate)
        return h;
    size_t R = 0;
    for (size_t i = 0; i < sim->n_rules; i++)
        if (sim->rules[i].simulated)
            R = sim->rules[i].n_rate_states;
    if (!R)
        return h;
    if (R > XW_RATE_COLUMNS_MAX) {
        xw_put_textf(w, ws, h - 1, 0, w->f.note, "Choices: %zu states are too many columns to "
                     "show; the CSV folder and the JSON hold the rates.", R);
        return h;
    }
    bool grid = p->states_kind == LOP_STATES_GRID;
    xw_put_text(w, ws, h - 1, 0, grid ? "Choices: share of all trials"
                                      : "Choices: share of each state's trials", w->f.heading);
    lxw_row_t row = h;
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        if (!m->simulated)
            continue;
        for (size_t a = 0; a < p->n_actions; a++) {
            row++;
            xw_put_text(w, ws, row, 0, m->name, NULL);
            xw_put_text(w, ws, row, 1, p->actions[a], NULL);
            for (size_t s = 0; s < R; s++)
                if (m->state_trials[s])
                    xw_put_number(w, ws, row, (lxw_col_t)(2 + s),
                                  (double)m->choices[a * R + s] / (double)m->state_trials[s],
                                  w->f.prob);
        }
    }
    xw_names head = {0};
    xw_names_add(w, &head, "rule");
    xw_names_add(w, &head, "action");
    for (size_t s = 0; s < R; s++) {
        if (grid)
            xw_names_add(w, &head, "share of all trials");
        else
            xw_names_add(w, &head, "share of %s trials", p->state_labels[s]);
    }
    xw_header_and_table_wrapped(w, ws, "simulation_rates", h, 0, row, &head, 16);
    return row;
}

/* Histograms of session totals: rule, bin, sessions; one column chart per rule. Returns the
 * last row written. */
static lxw_row_t simulation_histogram(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t h,
                                      lxw_col_t chart_col)
{
    const lop_problem *p = w->p;
    const lop_simulation *sim = &w->r->simulation;
    const char *unit = xw_score_unit(p);
    xw_put_textf(w, ws, h - 1, 0, w->f.heading, "Session totals: sessions in each bin [from, to) "
                 "of the %s per session", lop_problem_orientation(p));
    lxw_row_t row = h;
    lxw_row_t chart_row = 3;
    size_t charts = 0;
    for (size_t i = 0; i < sim->n_rules; i++) {
        const lop_simulated_rule *m = &sim->rules[i];
        if (!m->simulated || !m->n_bins)
            continue;
        lxw_row_t first = row + 1;
        for (size_t b = 0; b < m->n_bins; b++) {
            row++;
            xw_put_text(w, ws, row, 0, m->name, NULL);
            xw_put_number(w, ws, row, 1, m->edges[b], w->f.number);
            xw_put_number(w, ws, row, 2, m->edges[b + 1], w->f.number);
            xw_put_number(w, ws, row, 3, (double)m->counts[b], w->f.count);
        }
        if (charts == XW_SERIES_MAX)
            continue;
        lxw_chart *chart = xw_chart(w, LXW_CHART_COLUMN, "Simulation chart");
        if (!chart || !xw_series(w, chart, ws->name, first, row, 1, 3, "sessions"))
            return row;
        char title[256], axis[160];
        snprintf(title, sizeof title, "Session totals under %s (%zu sessions of %zu trials)",
                 m->name, sim->sessions, sim->trials);
        chart_title_set_name(chart, title);
        snprintf(axis, sizeof axis, "%s per session, bins from (%s)",
                 lop_problem_orientation(p), unit);
        chart_axis_set_name(chart->x_axis, axis);
        chart_axis_set_name(chart->y_axis, "sessions");
        chart_set_series_gap(chart, 10);
        chart_legend_set_position(chart, LXW_CHART_LEGEND_NONE);
        xw_insert_chart(w, ws, chart_row, chart_col, chart, 1.3, 1.0);
        chart_row += CHART_ROWS;
        charts++;
    }
    xw_names head = {0};
    xw_names_add(w, &head, "rule");
    xw_names_add(w, &head, "from (%s)", unit);
    xw_names_add(w, &head, "to (%s)", unit);
    xw_names_add(w, &head, "sessions");
    xw_header_and_table_wrapped(w, ws, "simulation_histogram", h, 0, row, &head, 16);
    return row;
}

void xw_sheet_simulation(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_simulation *sim = &w->r->simulation;
    char title[256], note[512];
    snprintf(title, sizeof title, "Simulation: %zu sessions of %zu trials, every rule deciding "
             "the same trials", sim->sessions, sim->trials);
    snprintf(note, sizeof note, "Simulated by lopside with seed %lu (the same seed gives the "
             "same numbers); %s. Analytic values are the engine's exact risk or payoff per "
             "trial.", sim->seed, p->payoff ? "payoffs as in the file" : "losses as in the file");
    sheet_head(w, ws, title, note);
    lxw_row_t row = 3;
    row = xw_info_line(w, ws, row, "Sessions", (double)sim->sessions, w->f.count, "");
    row = xw_info_line(w, ws, row, "Trials per session", (double)sim->trials, w->f.count, "");
    /* Seeds are below 2^32: a double holds them exactly. */
    row = xw_info_line(w, ws, row, "Seed", (double)sim->seed, w->f.count, "");
    if (sim->floor_given)
        row = xw_info_line(w, ws, row, "Floor of a session's total", sim->floor,
                           w->f.number, xw_score_unit(p));
    row = xw_info_line(w, ws, row, "Trials beyond the rule's measurement grid",
                       (double)sim->outside_grid, w->f.count, "decided as at its nearest end");
    lxw_row_t last = simulation_table(w, ws, row + 2);
    last = simulation_rates(w, ws, last + 3);
    size_t n_cols = 13 + (sim->floor_given ? 1 : 0) + (p->estimate ? 2 : 0);
    simulation_histogram(w, ws, last + 3, (lxw_col_t)(n_cols + 1));
    xw_set_width(w, 0, 0, 18);
    worksheet_freeze_panes(ws, 2, 0);
    xw_page_setup(w, ws, -1);
    xw_apply_widths(w, ws);
}
