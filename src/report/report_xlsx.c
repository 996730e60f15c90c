/* The XLSX workbook for collaborators: Summary, Case (live formulas, report_xlsx_case.c),
 * Rule, Rules, Value, one sheet per sweep (report_xlsx_sweeps.c), Designs, Simulation
 * (report_xlsx_studies.c), Inputs.
 *
 * One function per sheet (xw_sheet_* in the other files, static here) and a static one
 * per block; a sheet is added only when its data exists and a block returns at once when
 * its data is absent, so new sheets plug in beside them. The helpers every sheet uses are
 * in report_xlsx_cells.c (report_xlsx_private.h). Every libxlsxwriter return is checked:
 * the first failure is kept with what was being written and reported with lxw_strerror.
 *
 * Safety: libxlsxwriter writes the file itself at workbook_close, so it is given a
 * temporary name beside the target (made with mkstemp by lop_outfile_open) and the
 * temporary is renamed over the target only after a successful close. */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <xlsxwriter.h>

#include "lopside/model/curve_family.h"
#include "lopside/util/outfile.h"
#include "lopside/report/report.h"
#include "lopside/util/strutil.h"
#include "report_xlsx_private.h"

/* Rows of the rule table drawn as separate series on the Rule chart. */
#define CHART_SERIES_MAX 6

/* --- the Rule sheet: values from lopside ------------------------------------------------- */

/* Tables of the Rule sheet stand side by side with their headers on one frozen row. */
typedef struct {
    lxw_row_t header;
    lxw_col_t next_col;        /* first free column */
    lxw_row_t grid_first;      /* rule_grid: first data row, and columns of x and number */
    lxw_col_t grid_x, grid_number;
    size_t grid_rows;          /* table rows of the rule shown on the grid */
    size_t grid_points;        /* points per table row shown */
    lxw_row_t table_first;     /* rule_table: first data row and probability column */
    lxw_col_t table_row_col, table_prob;
    size_t table_rows;
} rule_layout;

static void rule_switch_points(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    const lop_channel *c = xw_numeric_channel(p, rule);
    if (!c || p->estimate)
        return;
    lxw_col_t c0 = L->next_col;
    if (!rule->n_switches) {
        xw_put_text(w, ws, L->header - 1, c0, "Switch points: none, one action at every "
                    "measurement", w->f.heading);
        L->next_col = c0 + 5;
        return;
    }
    xw_put_text(w, ws, L->header - 1, c0, "Switch points", w->f.heading);
    bool rows = rule->n_columns > 0;
    char name[160], given[1024];
    lop_report_measurement_name(name, sizeof name, c);
    xw_names head = {0};
    if (rows) {
        xw_names_add(w, &head, "row");
        xw_names_add(w, &head, "given");
    }
    xw_names_add(w, &head, "x: %s", name);
    xw_names_add(w, &head, "below x");
    xw_names_add(w, &head, "above x");
    for (size_t k = 0; k < rule->n_switches; k++) {
        const lop_switch_point *sp = &rule->switches[k];
        lxw_row_t row = L->header + 1 + (lxw_row_t)k;
        lxw_col_t col = c0;
        if (rows) {
            lop_report_row_given(given, sizeof given, p, rule, sp->row);
            xw_put_number(w, ws, row, col++, (double)(sp->row + 1), w->f.count);
            xw_put_text(w, ws, row, col++, given, NULL);
        }
        xw_put_number(w, ws, row, col++, sp->x, w->f.switch_x);
        xw_put_text(w, ws, row, col++, p->actions[sp->from], NULL);
        xw_put_text(w, ws, row, col++, p->actions[sp->to], NULL);
    }
    size_t n = head.n;
    if (rows) {
        xw_set_width(w, c0, c0, 6);
        xw_set_width(w, c0 + 1, c0 + 1, 28);
        xw_set_width(w, c0 + 2, c0 + 4, 16);
    } else {
        xw_set_width(w, c0, c0 + 2, 16);
    }
    xw_header_and_table(w, ws, "switch_points", L->header, c0,
                        L->header + (lxw_row_t)rule->n_switches, &head);
    L->next_col = (lxw_col_t)(c0 + n + 1);
}

static void rule_table(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    if (!rule->n_columns)
        return;
    bool decided = rule->numeric_channel < 0 && !p->estimate && rule->row_action;
    size_t n_rows = rule->n_rows < XW_ROWS_MAX ? rule->n_rows : XW_ROWS_MAX;
    w->rule_truncated |= n_rows < rule->n_rows;
    lxw_col_t c0 = L->next_col;
    xw_put_text(w, ws, L->header - 1, c0, decided ? "Outcome combinations and the Bayes action"
                                               : "Outcome combinations (rows of the rule)",
             w->f.heading);
    xw_names head = {0};
    xw_names_add(w, &head, "row");
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        if (c->repeats == 1)
            xw_names_add(w, &head, "%s", lop_report_channel_name(c));
        else
            for (size_t o = 0; o < c->n_outcomes; o++)
                xw_names_add(w, &head, "%s: %s (count)", lop_report_channel_name(c),
                             c->outcomes[o]);
    }
    xw_names_add(w, &head, "probability");
    if (decided) {
        xw_names_add(w, &head, "Bayes action");
        xw_names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), xw_score_unit(p));
    }
    for (size_t r = 0; r < n_rows; r++) {
        lxw_row_t row = L->header + 1 + (lxw_row_t)r;
        lxw_col_t col = c0;
        xw_put_number(w, ws, row, col++, (double)(r + 1), w->f.count);
        size_t k = 0;
        for (size_t i = 0; i < p->n_channels; i++) {
            const lop_channel *c = &p->channels[i];
            if (c->kind != LOP_CHANNEL_TABLE)
                continue;
            const size_t *counts = &rule->counts[r * rule->n_columns + k];
            for (size_t o = 0; o < c->n_outcomes; o++) {
                if (c->repeats > 1)
                    xw_put_number(w, ws, row, col++, (double)counts[o], w->f.count);
                else if (counts[o])
                    xw_put_text(w, ws, row, col++, c->outcomes[o], NULL);
            }
            k += c->n_outcomes;
        }
        L->table_prob = col;
        xw_put_number(w, ws, row, col++, rule->row_probability[r], w->f.prob);
        if (decided) {
            xw_put_text(w, ws, row, col++, p->actions[rule->row_action[r]], NULL);
            xw_put_number(w, ws, row, col++, lop_problem_oriented(p, rule->row_expected_loss[r]),
                          w->f.score);
        }
    }
    size_t n = head.n;
    xw_set_width(w, c0, c0, 6);
    xw_set_width(w, c0 + 1, (lxw_col_t)(c0 + n - 1), 16);
    xw_header_and_table(w, ws, "rule_table", L->header, c0, L->header + (lxw_row_t)n_rows,
                        &head);
    L->table_first = L->header + 1;
    L->table_row_col = c0;
    L->table_rows = n_rows;
    L->next_col = (lxw_col_t)(c0 + n + 1);
}

static void rule_grid(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    const lop_channel *c = xw_numeric_channel(p, rule);
    if (!c || !rule->n_grid || (p->estimate ? !rule->grid_estimate : !rule->grid_action))
        return;
    size_t rows = rule->n_rows, points = rule->n_grid;
    if (rows * points > XW_ROWS_MAX) {
        /* Whole rows of the rule while they fit; at least part of the first. */
        rows = XW_ROWS_MAX / points;
        if (rows == 0) {
            rows = 1;
            points = XW_ROWS_MAX;
        }
        w->rule_truncated = true;
    }
    bool with_rows = rule->n_columns > 0;
    lxw_col_t c0 = L->next_col;
    xw_put_text(w, ws, L->header - 1, c0, "The Bayes action at each measurement", w->f.heading);
    char name[160], given[1024];
    lop_report_measurement_name(name, sizeof name, c);
    xw_names head = {0};
    if (with_rows) {
        xw_names_add(w, &head, "row");
        xw_names_add(w, &head, "given");
    }
    xw_names_add(w, &head, "x: %s", name);
    if (p->estimate) {
        xw_names_add(w, &head, "Bayes estimate%s%s%s", p->unit[0] ? " (" : "", p->unit,
                     p->unit[0] ? ")" : "");
    } else {
        xw_names_add(w, &head, "Bayes action");
        xw_names_add(w, &head, "action number");
    }
    lxw_row_t row = L->header + 1;
    for (size_t r = 0; r < rows; r++) {
        if (with_rows)
            lop_report_row_given(given, sizeof given, p, rule, r);
        for (size_t i = 0; i < points; i++, row++) {
            lxw_col_t col = c0;
            if (with_rows) {
                xw_put_number(w, ws, row, col++, (double)(r + 1), w->f.count);
                xw_put_text(w, ws, row, col++, given, NULL);
            }
            xw_put_number(w, ws, row, col++, rule->grid[i], w->f.grid_x);
            if (p->estimate) {
                xw_put_number(w, ws, row, col++, rule->grid_estimate[r * rule->n_grid + i],
                              w->f.number);
                continue;
            }
            size_t a = rule->grid_action[r * rule->n_grid + i];
            xw_put_text(w, ws, row, col++, p->actions[a], NULL);
            xw_put_number(w, ws, row, col++, (double)(a + 1), w->f.count);
        }
    }
    size_t n = head.n;
    L->grid_first = L->header + 1;
    L->grid_x = (lxw_col_t)(c0 + (with_rows ? 2 : 0));
    L->grid_number = (lxw_col_t)(L->grid_x + (p->estimate ? 1 : 2));
    L->grid_rows = rows;
    L->grid_points = points;
    if (with_rows) {
        xw_set_width(w, c0, c0, 6);
        xw_set_width(w, c0 + 1, c0 + 1, 28);
    }
    xw_set_width(w, L->grid_x, L->grid_number, 16);
    xw_header_and_table(w, ws, "rule_grid", L->header, c0, row - 1, &head);
    L->next_col = (lxw_col_t)(c0 + n + 1);
}

/* The action number against the measurement, one line per row of the rule; or, without a
 * numeric channel, the probability of each outcome combination. */
static void rule_chart(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    char cats[96], vals[96], a[72], b[72], title[256], given[1024];
    lxw_chart *chart;
    if (L->grid_rows) {
        chart = xw_chart(w, LXW_CHART_SCATTER_STRAIGHT, "Rule chart");
        if (!chart)
            return;
        for (size_t r = 0; r < L->grid_rows && r < CHART_SERIES_MAX; r++) {
            lxw_row_t f = L->grid_first + (lxw_row_t)(r * L->grid_points);
            lxw_row_t l = f + (lxw_row_t)L->grid_points - 1;
            xw_range(a, sizeof a, f, L->grid_x, l, L->grid_x);
            xw_range(b, sizeof b, f, L->grid_number, l, L->grid_number);
            snprintf(cats, sizeof cats, "=Rule!%s", a);
            snprintf(vals, sizeof vals, "=Rule!%s", b);
            lxw_chart_series *s = xw_check_ptr(w, chart_add_series(chart, cats, vals),
                                               "Rule chart");
            if (!s)
                return;
            if (rule->n_columns) {
                lop_report_row_given(given, sizeof given, p, rule, r);
                chart_series_set_name(s, given);
            } else {
                chart_series_set_name(s, "Bayes action");
            }
        }
        lop_report_measurement_name(title, sizeof title, xw_numeric_channel(p, rule));
        chart_axis_set_name(chart->x_axis, title);
        if (p->estimate) {
            chart_axis_set_name(chart->y_axis, "Bayes estimate");
            chart_title_set_name(chart, "The Bayes estimate at each measurement");
            chart_legend_set_position(chart, rule->n_columns ? LXW_CHART_LEGEND_BOTTOM
                                                             : LXW_CHART_LEGEND_NONE);
            goto insert;
        }
        chart_axis_set_name(chart->y_axis, "action number");
        chart_axis_set_min(chart->y_axis, 0);
        chart_axis_set_max(chart->y_axis, (double)p->n_actions + 1);
        chart_axis_set_major_unit(chart->y_axis, 1);
        size_t at = 0;
        at += (size_t)snprintf(title, sizeof title, "The Bayes action at each measurement (");
        for (size_t k = 0; k < p->n_actions && at < sizeof title; k++)
            at += (size_t)snprintf(title + at, sizeof title - at, "%s%zu = %s", k ? ", " : "",
                                   k + 1, p->actions[k]);
        if (at < sizeof title)
            snprintf(title + at, sizeof title - at, ")");
        chart_title_set_name(chart, title);
        chart_legend_set_position(chart, rule->n_columns ? LXW_CHART_LEGEND_BOTTOM
                                                         : LXW_CHART_LEGEND_NONE);
    } else if (L->table_rows) {
        chart = xw_check_ptr(w, workbook_add_chart(w->wb, LXW_CHART_COLUMN), "Rule chart");
        if (!chart)
            return;
        size_t n = L->table_rows < 200 ? L->table_rows : 200;
        xw_range(a, sizeof a, L->table_first, L->table_row_col,
                 L->table_first + (lxw_row_t)n - 1, L->table_row_col);
        xw_range(b, sizeof b, L->table_first, L->table_prob, L->table_first + (lxw_row_t)n - 1,
                 L->table_prob);
        snprintf(cats, sizeof cats, "=Rule!%s", a);
        snprintf(vals, sizeof vals, "=Rule!%s", b);
        lxw_chart_series *s = xw_check_ptr(w, chart_add_series(chart, cats, vals), "Rule chart");
        if (!s)
            return;
        chart_series_set_name(s, "probability");
        chart_title_set_name(chart, "Probability of each outcome combination (row)");
        chart_axis_set_name(chart->x_axis, "row");
        chart_axis_set_name(chart->y_axis, "probability");
        chart_legend_set_position(chart, LXW_CHART_LEGEND_NONE);
    } else {
        return;
    }
insert:;
    lxw_chart_options opt = {.x_scale = 1.4, .y_scale = 1.2};
    xw_check(w, worksheet_insert_chart_opt(ws, L->header, L->next_col, chart, &opt), "Rule chart");
}

static void sheet_rule(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    const char *unit = xw_score_unit(p);
    xw_put_text(w, ws, 0, 0, "Rule: the Bayes decision for every possible measurement",
                w->f.title);
    xw_put_text(w, ws, 1, 0, "Values computed by lopside, not formulas: they do not follow edits "
                "on the Case sheet.", w->f.note);
    /* Labels overflow to the right across empty cells; values sit in column E. */
    lxw_row_t row = 3;
    if (rule->computed) {
        xw_put_textf(w, ws, row, 0, NULL, "Bayes %s of the rule", p->payoff ? "payoff" : "risk");
        xw_put_number(w, ws, row, 4, lop_problem_oriented(p, rule->bayes_risk), w->f.live_score);
        xw_put_textf(w, ws, row++, 5, NULL, "%s per decision", unit);
    } else {
        xw_put_text(w, ws, row, 0, "Not computed:", NULL);
        xw_put_text(w, ws, row++, 4, rule->not_computed_why, NULL);
    }
    xw_put_textf(w, ws, row, 0, NULL, "Deciding on the prior alone%s%s%s",
                 p->estimate ? "" : " (always ",
                 p->estimate ? "" : p->actions[rule->prior_only_action],
                 p->estimate ? "" : ")");
    xw_put_number(w, ws, row, 4, lop_problem_oriented(p, rule->prior_only_risk), w->f.score);
    xw_put_textf(w, ws, row++, 5, NULL, "%s per decision", unit);
    if (rule->computed) {
        xw_put_text(w, ws, row, 0, "Value of the evidence", NULL);
        xw_put_number(w, ws, row, 4, rule->prior_only_risk - rule->bayes_risk, w->f.score);
        xw_put_textf(w, ws, row++, 5, NULL, "%s per decision", unit);
    }
    if (!rule->computed) {
        xw_set_width(w, 0, 3, 12);
        xw_set_width(w, 4, 4, 60);
        xw_page_setup(w, ws, -1);
        xw_apply_widths(w, ws);
        return;
    }
    rule_layout L = {.header = 9};
    rule_switch_points(w, ws, &L);
    rule_table(w, ws, &L);
    rule_grid(w, ws, &L);
    rule_chart(w, ws, &L);
    if (w->rule_truncated)
        xw_put_textf(w, ws, 7, 0, w->f.note, "The tables below stop at %d rows; the CSV folder "
                     "and the JSON hold every row.", XW_ROWS_MAX);
    xw_finish_sheet(w, ws, L.header);
}

/* --- the Summary sheet ---------------------------------------------------------------- */

/* Columns A to D of the Summary hold about this many characters in all. */
#define SUMMARY_LINE_CHARS 130

/* A paragraph over columns A to D, wrapped, its row tall enough for its lines. */
static lxw_row_t paragraph(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *text)
{
    size_t lines = strlen(text) / SUMMARY_LINE_CHARS + 1;
    xw_check(w, worksheet_merge_range(ws, row, 0, row, 3, text, w->f.wrap), ws->name);
    if (lines > 1)
        xw_check(w, worksheet_set_row(ws, row, 15.0 * (double)lines, NULL), ws->name);
    return row + 1;
}

static lxw_row_t paragraphf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                            const char *fmt, ...) __attribute__((format(printf, 4, 5)));

static lxw_row_t paragraphf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                            const char *fmt, ...)
{
    char buf[2048];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    return paragraph(w, ws, row, buf);
}

/* One line of "The problem": label in A, text in B (overflowing to the right). */
static lxw_row_t summary_line(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                              const char *label, const char *text)
{
    xw_put_text(w, ws, row, 0, label, w->f.bold);
    xw_put_text(w, ws, row, 1, text, NULL);
    return row + 1;
}

static lxw_row_t summary_problem(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_problem *p = w->p;
    char text[2048], list[1024];
    xw_put_text(w, ws, row++, 0, "The problem", w->f.heading);
    if (p->states_kind != LOP_STATES_GRID)
        xw_list_text(list, sizeof list, p->state_labels, p->n_states, 12);
    if (p->states_kind == LOP_STATES_GRID)
        snprintf(text, sizeof text, "a grid of %zu points from %.6g to %.6g%s%s, spacing %.6g",
                 p->n_states, p->state_values[0], p->state_values[p->n_states - 1],
                 p->unit[0] ? " " : "", p->unit, p->step);
    else
        snprintf(text, sizeof text, "%zu %s states%s%s%s: %s", p->n_states,
                 p->states_kind == LOP_STATES_VALUES ? "numeric" : "named",
                 p->unit[0] ? " (" : "", p->unit, p->unit[0] ? ")" : "", list);
    row = summary_line(w, ws, row, "States", text);
    size_t at = 0;
    for (size_t s = 0; s < p->n_states && s < 12 && at < sizeof text; s++)
        at += (size_t)snprintf(text + at, sizeof text - at, "%s%.6g", s ? ", " : "", p->prior[s]);
    if (p->n_states > 12 && at < sizeof text)
        snprintf(text + at, sizeof text - at, ", ... (the Case sheet has all)");
    row = summary_line(w, ws, row, "Prior", text);
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        char label[160];
        snprintf(label, sizeof label, "Evidence: %s", lop_report_channel_name(c));
        if (c->kind == LOP_CHANNEL_TABLE) {
            xw_list_text(list, sizeof list, c->outcomes, c->n_outcomes, 12);
            snprintf(text, sizeof text, "outcomes %s; %zu repeat%s", list, c->repeats,
                     c->repeats == 1 ? "" : "s");
        } else {
            snprintf(text, sizeof text, "%s noise around a center per state; %zu repeat%s",
                     lop_report_noise_name(c), c->repeats, c->repeats == 1 ? "" : "s");
        }
        row = summary_line(w, ws, row, label, text);
    }
    char observed[1024];
    xw_observed_text(observed, sizeof observed, p);
    row = summary_line(w, ws, row, "Observed", observed);
    if (p->estimate)
        snprintf(list, sizeof list, "an estimate of the state, on %zu points from %.6g to %.6g",
                 p->n_estimates, p->estimates[0], p->estimates[p->n_estimates - 1]);
    else
        xw_list_text(list, sizeof list, p->actions, p->n_actions, 12);
    row = summary_line(w, ws, row, "Actions", list);
    if (p->estimate) {
        lop_curve_describe(&p->curve, p->payoff ? -1 : 1, text, sizeof text);
        row = summary_line(w, ws, row, p->payoff ? "Payoff curve" : "Loss curve", text);
    }
    snprintf(text, sizeof text, "%s in %s: the Bayes action has the %s expected %s",
             lop_problem_orientation(p), xw_score_unit(p), p->payoff ? "largest" : "smallest",
             lop_problem_orientation(p));
    row = summary_line(w, ws, row, "Scores", text);
    return row + 1;
}

/* One headline quantity: a live formula citing the Case sheet, or a value (shown with
 * fmt, the score format when NULL). Its value cell gets the defined name `name`. */
static lxw_row_t headline_fmt(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                              const char *name, const char *quantity, const char *live_ref,
                              const char *text, double value, const char *unit, const char *how,
                              lxw_format *fmt)
{
    xw_put_text(w, ws, row, 0, quantity, NULL);
    if (live_ref && w->kase.live) {
        char formula[64];
        snprintf(formula, sizeof formula, "=%s", live_ref);
        if (text)
            xw_put_formula_text(w, ws, row, 1, formula, w->f.live_text, text);
        else
            xw_put_formula(w, ws, row, 1, formula, w->f.live_score, value);
    } else if (text) {
        xw_put_text(w, ws, row, 1, text, w->f.bold);
    } else {
        xw_put_number(w, ws, row, 1, value, fmt ? fmt : w->f.live_score);
    }
    xw_put_text(w, ws, row, 2, unit, NULL);
    xw_put_text(w, ws, row, 3, how, NULL);
    if (name) {
        char cell[72];
        snprintf(cell, sizeof cell, "=Summary!$B$%lu", (unsigned long)row + 1);
        xw_check(w, workbook_define_name(w->wb, name, cell), "defined names");
        size_t at = strlen(w->defined);
        snprintf(w->defined + at, sizeof w->defined - at, "%s%s", at ? ", " : "", name);
    }
    return row + 1;
}

static lxw_row_t headline(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *name,
                          const char *quantity, const char *live_ref, const char *text,
                          double value, const char *unit, const char *how)
{
    return headline_fmt(w, ws, row, name, quantity, live_ref, text, value, unit, how, NULL);
}

/* The headline rows of [value]: EVPI of the design and the best extra measurement. */
static lxw_row_t headline_value(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                                const char *per)
{
    const lop_problem *p = w->p;
    const lop_value_result *v = &w->r->value;
    const char *how = "value computed by lopside (Value sheet)";
    char text[256];
    if (!v->present)
        return row;
    if (!v->computed)
        return headline(w, ws, row, NULL, "Value of extra measurements", NULL, "not computed",
                        0, "", v->not_computed_why);
    row = headline(w, ws, row, "evpi_design", "Value of perfect information for the design "
                   "(EVPI)", NULL, NULL, v->evpi, per, how);
    if (!v->has_best) {
        snprintf(text, sizeof text, "no extra measurement is worth its cost of %.6g %s each",
                 p->value.cost, xw_score_unit(p));
        return headline(w, ws, row, NULL, "Best extra measurement", NULL, "none", 0, "", text);
    }
    row = headline(w, ws, row, "best_extra_channel", "Best extra measurement: channel", NULL,
                   lop_report_channel_name(&p->channels[v->best_channel]), 0, "", how);
    row = headline_fmt(w, ws, row, "best_extra_n", "Best extra measurement: how many more",
                       NULL, NULL, (double)v->best_n, v->best_n == 1 ? "measurement"
                                                                     : "measurements",
                       "beyond the design's repeats; value computed by lopside (Value sheet)",
                       w->f.count);
    snprintf(text, sizeof text, "its EVSI minus %zu × %.6g %s; value computed by lopside "
             "(Value sheet)", v->best_n, p->value.cost, xw_score_unit(p));
    return headline(w, ws, row, "best_extra_net", "Best extra measurement: net value", NULL,
                    NULL, v->best_net, per, text);
}

static lxw_row_t summary_headline(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_problem *p = w->p;
    const lop_results *r = w->r;
    const lop_case_result *c = &r->kase;
    const char *unit = xw_score_unit(p);
    char per[96], q[160], how[256];
    snprintf(per, sizeof per, "%s per decision", unit);
    xw_put_text(w, ws, row++, 0, "Headline", w->f.heading);
    lxw_row_t h = row++;
    const char *orient = lop_problem_orientation(p);
    const char *live = "live: follows the Case sheet";
    if (!w->kase.live)
        live = "value computed by lopside (Case sheet)";
    if (p->estimate) {
        row = headline(w, ws, row, "bayes_estimate", "Bayes estimate for the case", NULL, NULL,
                       c->bayes_estimate, p->unit, live);
        snprintf(q, sizeof q, "Expected %s of the Bayes estimate", orient);
        row = headline(w, ws, row, p->payoff ? "case_expected_payoff" : "case_expected_loss",
                       q, NULL, NULL, lop_problem_oriented(p, c->bayes_estimate_loss), unit,
                       live);
    } else {
        row = headline(w, ws, row, "bayes_action", "Bayes action for the case",
                       w->kase.bayes_action, p->actions[c->bayes_action], 0, "", live);
        snprintf(q, sizeof q, "Expected %s of the Bayes action", orient);
        row = headline(w, ws, row, p->payoff ? "case_expected_payoff" : "case_expected_loss",
                       q, w->kase.bayes_score, NULL,
                       lop_problem_oriented(p, c->expected_loss[c->bayes_action]), unit, live);
        row = headline(w, ws, row, "runner_up", "Runner-up", w->kase.runner_up,
                       p->actions[c->runner_up], 0, "", live);
        row = headline(w, ws, row, "margin", "Margin over the runner-up", w->kase.margin, NULL,
                       c->margin, unit, live);
    }
    if (!p->estimate && c->n_tied > 1) {
        char ties[512];
        size_t at = 0;
        ties[0] = '\0';
        for (size_t t = 0; t < c->n_tied && at < sizeof ties; t++)
            at += (size_t)snprintf(ties + at, sizeof ties - at, "%s%s", t ? ", " : "",
                                   p->actions[c->tied[t]]);
        row = headline(w, ws, row, NULL, "Tied (expected scores within rounding)", NULL, ties,
                       0, "", "value at the file's numbers; the earlier action is chosen");
    }
    row = headline(w, ws, row, "evpi", "Value of perfect information for the case (EVPI)",
                   w->kase.evpi, NULL, c->evpi, unit, live);
    if (r->has_rule) {
        const lop_rule_result *rule = &r->rule;
        const char *computed = "value computed by lopside (Rule sheet)";
        if (rule->computed) {
            snprintf(q, sizeof q, "Bayes %s of the rule", p->payoff ? "payoff" : "risk");
            row = headline(w, ws, row, p->payoff ? "bayes_payoff" : "bayes_risk", q, NULL,
                           NULL, lop_problem_oriented(p, rule->bayes_risk), per, computed);
        } else {
            row = headline(w, ws, row, NULL, "Rule", NULL, "not computed", 0, "",
                           rule->not_computed_why);
        }
        snprintf(how, sizeof how, "%s%s%s", computed, p->estimate ? "" : "; always ",
                 p->estimate ? "" : p->actions[rule->prior_only_action]);
        row = headline(w, ws, row, p->payoff ? "prior_only_payoff" : "prior_only_risk",
                       "Deciding on the prior alone", NULL, NULL,
                       lop_problem_oriented(p, rule->prior_only_risk), per, how);
        if (!p->estimate)
            row = headline(w, ws, row, "prior_only_action", "Action on the prior alone", NULL,
                           p->actions[rule->prior_only_action], 0, "", computed);
        if (rule->computed)
            row = headline(w, ws, row, "value_of_evidence", "Value of the evidence", NULL, NULL,
                           rule->prior_only_risk - rule->bayes_risk, per,
                           "prior-only risk minus Bayes risk; value computed by lopside");
    }
    row = headline_value(w, ws, row, per);
    xw_names head = {0};
    xw_names_add(w, &head, "quantity");
    xw_names_add(w, &head, "value");
    xw_names_add(w, &head, "unit");
    xw_names_add(w, &head, "how it is computed");
    xw_header_and_table(w, ws, "headline", h, 0, row - 1, &head);
    return row + 1;
}

static lxw_row_t summary_live(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    xw_put_text(w, ws, row++, 0, "Live cells", w->f.heading);
    if (!w->kase.live) {
        row = paragraph(w, ws, row, "None for this kind of problem: live formulas cover finite "
                        "states with named actions and outcome-table or gaussian channels. "
                        "Every number in this workbook is a value computed by lopside.");
        return paragraphf(w, ws, row, "Formulas may cite the headline values by their "
                          "defined names: %s.", w->defined) + 1;
    }
    row = paragraph(w, ws, row, "On the Case sheet the shaded cells (prior, evidence model, "
                    "observed values, and the loss or payoff table) feed formulas: "
                    "log-likelihoods, posterior, expected scores, the Bayes action, runner-up, "
                    "margin and EVPI. The headline rows marked live cite those cells, so a "
                    "collaborator who edits a cell there sees the decision change here.");
    row = paragraph(w, ws, row, "Everything else (the rule and its risks, the rules "
                    "compared, the value of information, sweeps, designs and the simulation) "
                    "is a value computed by lopside from the problem file as given.");
    row = paragraphf(w, ws, row, "Formulas elsewhere may cite the headline values by their "
                     "defined names: %s.", w->defined);
    return row + 1;
}

/* How close the numbers are to the continuous model: what was asked, what was reached,
 * and the numbers that miss it. */
static lxw_row_t summary_accuracy(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_accuracy *a = &w->r->accuracy;
    char text[512];
    xw_put_text(w, ws, row++, 0, "Accuracy", w->f.heading);
    if (!a->estimated) {
        snprintf(text, sizeof text, "asked %.3g; nothing rests on a grid: exact up to rounding",
                 a->asked);
        return summary_line(w, ws, row, "Accuracy", text) + 1;
    }
    snprintf(text, sizeof text, "asked %.3g, reached %.3g%s (each number's error estimated from "
             "the grids at two steps, relative to its scale)", a->asked, a->reached,
             a->reached <= a->asked ? "" : ": NOT REACHED");
    row = summary_line(w, ws, row, "Accuracy", text);
    if (a->worst[0]) {
        snprintf(text, sizeof text, "%s, about %.3g", a->worst, a->worst_error);
        row = summary_line(w, ws, row, "Largest error", text);
    }
    for (size_t i = 0; i < a->n_missed && i < 20; i++) {
        snprintf(text, sizeof text, "%s: error about %.3g where %.3g is allowed",
                 a->missed[i].name, a->missed[i].error, a->missed[i].allowed);
        row = summary_line(w, ws, row, "Misses", text);
    }
    return row + 1;
}

static lxw_row_t summary_warnings(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    xw_put_text(w, ws, row++, 0, "Warnings", w->f.heading);
    if (!w->r->n_warnings)
        xw_put_text(w, ws, row++, 0, "none", NULL);
    for (size_t i = 0; i < w->r->n_warnings; i++)
        row = paragraphf(w, ws, row, "- %s", w->r->warnings[i]);
    return row + 1;
}

static lxw_row_t summary_cautions(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    xw_put_text(w, ws, row++, 0, "Cautions", w->f.heading);
    row = paragraph(w, ws, row, "Payoff schedules with aversive outcomes for animals or "
                    "people (time-outs, air puffs, shocks, loss of earned money) need approval "
                    "under your institution's animal-care or human-subjects rules before use.");
    row = paragraph(w, ws, row, "lopside is not medical, veterinary or safety advice; local "
                    "rules and licensed practice decide.");
    row = paragraph(w, ws, row, "The numbers are only as good as the model in the problem "
                    "file: a prior, noise model or loss that does not fit gives an exact answer "
                    "to the wrong question.");
    return row + 1;
}

static lxw_row_t summary_provenance(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_provenance *prov = w->prov;
    xw_put_text(w, ws, row++, 0, "Provenance", w->f.heading);
    row = summary_line(w, ws, row, "Tool", "lopside " LOP_VERSION);
    row = summary_line(w, ws, row, "Input", prov->input_path);
    row = summary_line(w, ws, row, "Input SHA-256", prov->sha256);
    row = summary_line(w, ws, row, "Generated (UTC)", prov->generated);
    if (prov->has_seed || w->r->simulation.run) {
        char seed[32];
        snprintf(seed, sizeof seed, "%llu",
                 prov->has_seed ? prov->seed : (unsigned long long)w->r->simulation.seed);
        row = summary_line(w, ws, row, "Seed", seed);
    }
    return row + 1;
}

/* One line per sweep sheet: its name and what it varies. */
static lxw_row_t summary_sweep_sheets(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    char text[1024];
    for (size_t k = 0; k < w->r->n_sweeps; k++) {
        const lop_sweep_result *sw = &w->r->sweeps[k];
        const lop_sweep_spec *spec = sw->spec;
        size_t at = 0;
        int n;
        if (sw->threshold)
            n = snprintf(text, sizeof text, "[sweep.%s]: %zu thresholds from %.6g to %.6g with "
                         "choice rates, expected %s and the Bayes threshold", spec->name,
                         spec->x_points, spec->x_from, spec->x_to,
                         lop_problem_orientation(w->p));
        else
            n = snprintf(text, sizeof text, "[sweep.%s]: %s from %.6g to %.6g (%zu points), "
                         "re-solved at each", spec->name, spec->x, spec->x_from, spec->x_to,
                         spec->x_points);
        at = n > 0 && (size_t)n < sizeof text ? (size_t)n : strlen(text);
        if (spec->y)
            snprintf(text + at, sizeof text - at, "; for each %s from %.6g to %.6g (%zu values)",
                     spec->y, spec->y_from, spec->y_to, spec->y_points);
        row = summary_line(w, ws, row, w->sweep_sheets[k], text);
    }
    return row;
}

static lxw_row_t summary_sheets(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_results *r = w->r;
    xw_put_text(w, ws, row++, 0, "Sheets", w->f.heading);
    row = summary_line(w, ws, row, "Case", w->kase.live
                       ? "evidence model, observations, posterior, the loss or payoff table "
                         "and expected scores, as live formulas; charts"
                       : "the posterior and the decision for the case, as values; a chart");
    if (r->has_rule)
        row = summary_line(w, ws, row, "Rule", "the Bayes action for every outcome "
                           "combination and measurement, switch points, risks; a chart");
    if (r->n_compared)
        row = summary_line(w, ws, row, "Rules", "the Bayes rule and every [rule.NAME]: how "
                           "each decides, its risk or payoff and its regret; a chart of regret");
    if (r->value.present)
        row = summary_line(w, ws, row, "Value", "EVPI, the EVSI and net value of extra "
                           "measurements per channel, the best purchase, one more measurement "
                           "for the case; a chart");
    row = summary_sweep_sheets(w, ws, row);
    if (r->n_designs)
        row = summary_line(w, ws, row, "Designs", "every [design.NAME]: the path varied, its "
                           "bracket, the goal, the value found or the range the goal spans");
    if (r->simulation.run)
        row = summary_line(w, ws, row, "Simulation", "simulated sessions per rule: means with "
                           "95% intervals beside the analytic values, percentiles, choice "
                           "rates; histograms of session totals");
    if (w->prov->input_text)
        row = summary_line(w, ws, row, "Inputs", "the problem file as given, line by line");
    return row;
}

static void sheet_summary(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    xw_put_text(w, ws, 0, 0, p->title, w->f.title);
    lxw_row_t row = 1;
    if (p->notes[0])
        row = paragraph(w, ws, row, p->notes);
    row++;
    row = summary_problem(w, ws, row);
    row = summary_headline(w, ws, row);
    row = summary_live(w, ws, row);
    row = summary_accuracy(w, ws, row);
    row = summary_warnings(w, ws, row);
    row = summary_cautions(w, ws, row);
    row = summary_provenance(w, ws, row);
    summary_sheets(w, ws, row);
    xw_set_width(w, 0, 0, 46);
    xw_set_width(w, 1, 1, 22);
    xw_set_width(w, 2, 2, 22);
    xw_set_width(w, 3, 3, 48);
    xw_page_setup(w, ws, -1);
    xw_apply_widths(w, ws);
}

/* --- the Inputs sheet ------------------------------------------------------------------ */

static void sheet_inputs(xlsx_writer *w, lxw_worksheet *ws)
{
    const char *text = w->prov->input_text;
    size_t len = w->prov->input_len;
    xw_put_textf(w, ws, 0, 0, w->f.title, "The problem file as given: %s", w->prov->input_path);
    if (len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0) {
        text += 3;
        len -= 3;
    }
    lxw_row_t row = 2;
    size_t widest = 20;
    char *line = xw_check_ptr(w, malloc(len + 1), "Inputs sheet");
    if (!line)
        return;
    for (size_t at = 0, n = 1; at < len; n++, row++) {
        size_t end = at;
        while (end < len && text[end] != '\n')
            end++;
        size_t k = end - at;
        memcpy(line, text + at, k);
        if (k && line[k - 1] == '\r')
            k--;
        line[k] = '\0';
        xw_put_number(w, ws, row, 0, (double)n, w->f.count);
        xw_put_text(w, ws, row, 1, line, w->f.text);
        if (k > widest)
            widest = k;
        at = end + 1;
    }
    free(line);
    xw_names head = {0};
    xw_names_add(w, &head, "line");
    xw_names_add(w, &head, "text");
    xw_header_and_table(w, ws, "inputs", 1, 0, row - 1, &head);
    xw_set_width(w, 0, 0, 7);
    xw_set_width(w, 1, 1, widest < 110 ? (double)widest + 2 : 112);
    worksheet_freeze_panes(ws, 2, 0);
    xw_page_setup(w, ws, 1);
    xw_apply_widths(w, ws);
}

/* --- the workbook -------------------------------------------------------------------- */

/* Frees the sweep sheet names of w. */
static void free_sweep_sheets(xlsx_writer *w)
{
    for (size_t k = 0; w->sweep_sheets && k < w->r->n_sweeps; k++)
        free(w->sweep_sheets[k]);
    free(w->sweep_sheets);
    w->sweep_sheets = NULL;
}

static void write_workbook(xlsx_writer *w)
{
    const lop_problem *p = w->p;
    const lop_results *r = w->r;
    char comments[512];
    snprintf(comments, sizeof comments, "Written by lopside %s from %s (SHA-256 %s) at %s",
             LOP_VERSION, w->prov->input_path, w->prov->sha256, w->prov->generated);
    lxw_doc_properties props = {.title = p->title, .comments = comments};
    xw_check(w, workbook_set_properties(w->wb, &props), "document properties");
    xw_make_formats(w);
    /* Sheets in reading order; filled in the order that lets the Summary cite the Case. */
    lxw_worksheet *summary = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Summary"), "Summary");
    lxw_worksheet *kase = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Case"), "Case");
    lxw_worksheet *rule = NULL, *rules = NULL, *value = NULL, *designs = NULL;
    lxw_worksheet *simulation = NULL, *inputs = NULL, **sweeps = NULL;
    if (r->has_rule)
        rule = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Rule"), "Rule");
    if (r->n_compared)
        rules = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Rules"), "Rules");
    if (r->value.present)
        value = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Value"), "Value");
    if (r->n_sweeps) {
        sweeps = xw_check_ptr(w, calloc(r->n_sweeps, sizeof *sweeps), "sweeps");
        w->sweep_sheets = xw_check_ptr(w, calloc(r->n_sweeps, sizeof *w->sweep_sheets),
                                       "sweeps");
    }
    for (size_t k = 0; sweeps && w->sweep_sheets && k < r->n_sweeps; k++) {
        char used[LXW_MAX_SHEETNAME_LENGTH];
        sweeps[k] = xw_add_sheet(w, r->sweeps[k].spec->name, used, sizeof used);
        w->sweep_sheets[k] = xw_check_ptr(w, lop_strdup(used), "sweeps");
        if (w->error != LXW_NO_ERROR)
            break;
    }
    if (r->n_designs)
        designs = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Designs"), "Designs");
    if (r->simulation.run)
        simulation = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Simulation"), "Simulation");
    if (w->prov->input_text)
        inputs = xw_check_ptr(w, workbook_add_worksheet(w->wb, "Inputs"), "Inputs");
    if (w->error == LXW_NO_ERROR) {
        xw_sheet_case(w, kase);
        sheet_summary(w, summary);
        if (rule)
            sheet_rule(w, rule);
        if (rules)
            xw_sheet_rules(w, rules);
        if (value)
            xw_sheet_value(w, value);
        for (size_t k = 0; k < r->n_sweeps; k++)
            xw_sheet_sweep(w, sweeps[k], k, w->sweep_sheets[k]);
        if (designs)
            xw_sheet_designs(w, designs);
        if (simulation)
            xw_sheet_simulation(w, simulation);
        if (inputs)
            sheet_inputs(w, inputs);
        worksheet_activate(summary);
    }
    free(sweeps);
    free_sweep_sheets(w);
}

/* Flushes the closed file at path to disk; returns 0, or -1 with errno set. */
static int sync_path(const char *path)
{
    int fd = open(path, O_RDONLY);
    if (fd < 0)
        return -1;
    int rc = fsync(fd);
    int e = errno;
    close(fd);
    errno = e;
    return rc;
}

lop_status lop_report_xlsx(const char *path, const lop_problem *p, const lop_results *r,
                           const lop_provenance *prov, lop_outfile_list *pending,
                           lop_error *err)
{
    lop_outfile out;
    if (lop_outfile_open(&out, path, err) != LOP_OK)
        return LOP_ERUN;
    /* The empty temporary is closed; libxlsxwriter rewrites it by name. */
    if (lop_outfile_finish(&out, err) != LOP_OK)
        return LOP_ERUN;
    xlsx_writer w = {.p = p, .r = r, .prov = prov, .error = LXW_NO_ERROR};
    w.wb = workbook_new(out.tmp_path);
    if (!w.wb) {
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: libxlsxwriter could not start a workbook",
                             path);
    }
    write_workbook(&w);
    lxw_error closed = workbook_close(w.wb); /* writes and frees, even after a failure */
    if (w.error != LXW_NO_ERROR) {
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: %s (while writing %s)", path,
                             lxw_strerror(w.error), w.failed_at);
    }
    if (closed != LXW_NO_ERROR) {
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: %s", path, lxw_strerror(closed));
    }
    if (sync_path(out.tmp_path) != 0) {
        int e = errno;
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: %s", path, strerror(e));
    }
    return lop_outfile_defer(pending, &out, err);
}