/* The workbook's sheet of one [sweep.NAME]. Path sweeps: one row per point (x, y, Bayes
 * risk or payoff, EVPI, the case's Bayes action or estimate, choice rates, switch points,
 * flatness), line charts against x, and with a y axis a grid of the Bayes risk (x down,
 * y across) under a colour scale. Threshold sweeps: one row per threshold (choice rates,
 * hit and false-alarm rates, expected loss, c and beta), the Bayes threshold and its
 * flatness, an ROC chart and the expected loss with the Bayes threshold marked. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/path.h"
#include "lopside/report/report.h"
#include "report_xlsx_private.h"

/* Switch points shown as columns of the points table (problems without outcome-table
 * rows); more, or switch points per row, go to a table of their own. */
#define SWITCH_COLUMNS_MAX 6
/* Values of y shown across the grid; beyond this the grid is left out (the table and the
 * CSV folder have every point). */
#define GRID_COLUMNS_MAX 1000
/* Rows a chart takes at scale 1. */
#define CHART_ROWS 16

/* Colours of the grid's scale: pale teal for the best scores, white in the middle, salmon
 * for the worst. */
#define COLOUR_GOOD 0x9FD8CB
#define COLOUR_MID 0xFFFFFF
#define COLOUR_BAD 0xF4A582

typedef struct {
    xlsx_writer *w;
    lxw_worksheet *ws;
    const char *sheet;
    const lop_sweep_result *sw;
    size_t k;                  /* index of the sweep */
    lxw_row_t h;               /* header row of the tables */
    lxw_col_t next_col;        /* first free column right of the tables */
    size_t shown;              /* points in the points table */
    lxw_col_t col_x, col_risk, col_evpi, col_case, col_rates, col_switch, col_flat;
    lxw_col_t col_hit, col_fa, col_loss;
    size_t n_switch_cols;
    bool switch_table;         /* switch points in a table of their own */
    lxw_row_t info_threshold;  /* threshold sweeps, one axis: row of the Bayes threshold */
    lxw_row_t rows_first;      /* threshold sweeps with y: first data row of the per-y table */
    lxw_col_t rows_col;        /*   and its first column */
    size_t n_rates;            /* rate columns shown: all of them, or none when too many */
    lxw_row_t chart_row;
    lxw_col_t chart_col;
} sweep_sheet;

static bool has_y(const sweep_sheet *S)
{
    return S->sw->spec->y != NULL;
}

/* Returns true when the threshold sweep reports hit and false-alarm rates. */
static bool has_hits(const lop_problem *p)
{
    return p->states_kind == LOP_STATES_LABELS && p->n_states == 2;
}

static void rate_header(xlsx_writer *w, xw_names *head, const lop_problem *p,
                        const lop_sweep_result *sw)
{
    if (sw->n_rates > XW_RATE_COLUMNS_MAX)
        return;
    size_t S = sw->by_state ? p->n_states : 1;
    size_t A = sw->n_rates / S;
    for (size_t a = 0; a < A; a++)
        for (size_t s = 0; s < S; s++) {
            if (sw->by_state)
                xw_names_add(w, head, "P(%s | %s)", p->actions[a], p->state_labels[s]);
            else
                xw_names_add(w, head, "P(%s)", p->actions[a]);
        }
}

/* --- charts ----------------------------------------------------------------------------- */

/* Inserts chart at the next place of the chart column. */
static void place_chart(sweep_sheet *S, lxw_chart *chart)
{
    xw_insert_chart(S->w, S->ws, S->chart_row, S->chart_col, chart, 1.3, 1.0);
    S->chart_row += CHART_ROWS;
}

/* A line chart of column val_col against column cat_col of the points table, one series
 * per value of y (at most XW_SERIES_MAX, evenly spread), or one series named `name`. */
static void chart_against_x(sweep_sheet *S, const char *title, const char *x_name,
                            const char *y_name, lxw_col_t cat_col, const lxw_col_t *val_cols,
                            char **names, size_t n_vals)
{
    xlsx_writer *w = S->w;
    const lop_sweep_result *sw = S->sw;
    size_t blocks = S->shown / sw->nx;     /* whole values of y in the table */
    if (blocks == 0 || n_vals == 0)
        return;
    lxw_chart *chart = xw_chart(w, LXW_CHART_SCATTER_STRAIGHT_WITH_MARKERS, S->sheet);
    if (!chart)
        return;
    size_t series = 0;
    for (size_t v = 0; v < n_vals; v++) {
        size_t per = has_y(S) ? (blocks < XW_SERIES_MAX ? blocks : XW_SERIES_MAX) : 1;
        for (size_t b = 0; b < per && series < XW_SERIES_MAX; b++, series++) {
            size_t j = per == 1 ? 0 : b * (blocks - 1) / (per - 1);
            lxw_row_t r0 = S->h + 1 + (lxw_row_t)(j * sw->nx);
            char label[256];
            if (has_y(S))
                snprintf(label, sizeof label, "%s%s%s = %.6g", n_vals > 1 ? names[v] : "",
                         n_vals > 1 ? ", " : "",
                         LOP_SWEEP_AXIS(sw->spec, 'y'),
                         sw->points[j * sw->nx].y);
            else
                snprintf(label, sizeof label, "%s", names[v]);
            if (!xw_series(w, chart, S->sheet, r0, r0 + (lxw_row_t)sw->nx - 1, cat_col,
                           val_cols[v], label))
                return;
        }
    }
    chart_title_set_name(chart, title);
    chart_axis_set_name(chart->x_axis, x_name);
    chart_axis_set_name(chart->y_axis, y_name);
    chart_legend_set_position(chart, LXW_CHART_LEGEND_BOTTOM);
    place_chart(S, chart);
}

/* --- the grid ------------------------------------------------------------------------ */

/* A grid of one number per point (x down, y across) from column c0 with a 3-colour scale,
 * the better end (lower losses, higher payoffs) pale teal. */
static void grid_block(sweep_sheet *S, lxw_col_t c0, const char *title, const char *x_head,
                       double (*value)(const lop_problem *, const lop_sweep_point *))
{
    xlsx_writer *w = S->w;
    lxw_worksheet *ws = S->ws;
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = S->sw;
    if (sw->ny > GRID_COLUMNS_MAX || sw->nx > XW_ROWS_MAX) {
        xw_put_textf(w, ws, S->h - 1, c0, w->f.note, "%s: %zu values of y are too many to "
                     "show across; the table and the CSV folder hold every point", title,
                     sw->ny);
        S->next_col = c0 + 2;
        return;
    }
    xw_put_text(w, ws, S->h - 1, c0, title, w->f.heading);
    xw_put_textf(w, ws, S->h, c0, w->f.bold, "%s \\ y: %s", x_head,
                 LOP_SWEEP_AXIS(sw->spec, 'y'));
    for (size_t j = 0; j < sw->ny; j++)
        xw_put_number(w, ws, S->h, (lxw_col_t)(c0 + 1 + j), sw->points[j * sw->nx].y,
                      w->f.value_bold);
    for (size_t i = 0; i < sw->nx; i++) {
        lxw_row_t row = S->h + 1 + (lxw_row_t)i;
        xw_put_number(w, ws, row, c0, sw->points[i].x, w->f.value_bold);
        for (size_t j = 0; j < sw->ny; j++)
            xw_put_maybe(w, ws, row, (lxw_col_t)(c0 + 1 + j), value(p, &sw->points[j * sw->nx + i]),
                         w->f.score);
    }
    lxw_conditional_format cf = {.type = LXW_CONDITIONAL_3_COLOR_SCALE,
                                 .min_color = p->payoff ? COLOUR_BAD : COLOUR_GOOD,
                                 .mid_color = COLOUR_MID,
                                 .max_color = p->payoff ? COLOUR_GOOD : COLOUR_BAD};
    xw_check(w, worksheet_conditional_format_range(ws, S->h + 1, c0 + 1,
                                                   S->h + (lxw_row_t)sw->nx,
                                                   (lxw_col_t)(c0 + sw->ny), &cf),
             S->sheet);
    xw_set_width(w, c0, c0, 16);
    xw_set_width(w, c0 + 1, (lxw_col_t)(c0 + sw->ny), 11);
    S->next_col = (lxw_col_t)(c0 + sw->ny + 2);
}

static double grid_risk(const lop_problem *p, const lop_sweep_point *pt)
{
    return pt->computed ? lop_problem_oriented(p, pt->bayes_risk) : NAN;
}

static double grid_expected(const lop_problem *p, const lop_sweep_point *pt)
{
    return pt->rates ? lop_problem_oriented(p, pt->expected_loss) : NAN;
}

/* --- path sweeps ------------------------------------------------------------------------ */

/* The most switch points at any point shown, and whether they belong to outcome rows. */
static size_t most_switches(const lop_sweep_result *sw, size_t shown)
{
    size_t most = 0;
    for (size_t i = 0; i < shown; i++)
        most = sw->points[i].n_switches > most ? sw->points[i].n_switches : most;
    return most;
}

static void path_table(sweep_sheet *S)
{
    xlsx_writer *w = S->w;
    lxw_worksheet *ws = S->ws;
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = S->sw;
    const char *unit = xw_score_unit(p);
    const lop_channel *c = xw_numeric_channel(p, &w->r->rule);
    char measure[160] = "measurement";
    if (c)
        lop_report_measurement_name(measure, sizeof measure, c);
    bool rows = w->r->has_rule && w->r->rule.n_columns > 0;
    size_t most = p->estimate ? 0 : most_switches(sw, S->shown);
    S->switch_table = most > 0 && (rows || most > SWITCH_COLUMNS_MAX);
    S->n_switch_cols = most > 0 && !S->switch_table ? most : 0;
    xw_names head = {0};
    lxw_col_t col = 0;
    S->col_x = col++;
    xw_names_add(w, &head, "x: %s", sw->spec->x);
    if (has_y(S)) {
        col++;
        xw_names_add(w, &head, "y: %s", sw->spec->y);
    }
    S->col_risk = col++;
    xw_names_add(w, &head, "Bayes %s (%s per decision)", p->payoff ? "payoff" : "risk", unit);
    S->col_evpi = col++;
    xw_names_add(w, &head, "EVPI (%s per decision)", unit);
    S->col_case = col++;
    if (p->estimate)
        xw_names_add(w, &head, "case estimate%s%s%s", p->unit[0] ? " (" : "", p->unit,
                     p->unit[0] ? ")" : "");
    else
        xw_names_add(w, &head, "case action");
    S->col_rates = col;
    col = (lxw_col_t)(col + S->n_rates);
    rate_header(w, &head, p, sw);
    S->col_switch = col;
    for (size_t k = 0; k < S->n_switch_cols; k++)
        xw_names_add(w, &head, "switch point %zu (%s)", k + 1, measure);
    col = (lxw_col_t)(col + S->n_switch_cols);
    S->col_flat = col;
    if (p->estimate)
        for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
            int pct = l == 0 ? 1 : l == 1 ? 5 : 10;
            xw_names_add(w, &head, "estimates within %d%% from", pct);
            xw_names_add(w, &head, "estimates within %d%% to", pct);
        }
    for (size_t i = 0; i < S->shown; i++) {
        const lop_sweep_point *pt = &sw->points[i];
        lxw_row_t row = S->h + 1 + (lxw_row_t)i;
        xw_put_number(w, ws, row, S->col_x, pt->x, w->f.value);
        if (has_y(S))
            xw_put_number(w, ws, row, S->col_x + 1, pt->y, w->f.value);
        if (pt->computed) {
            xw_put_number(w, ws, row, S->col_risk, lop_problem_oriented(p, pt->bayes_risk),
                          w->f.score);
            xw_put_number(w, ws, row, S->col_evpi, pt->evpi, w->f.score);
        }
        if (p->estimate)
            xw_put_number(w, ws, row, S->col_case, pt->case_estimate, w->f.value);
        else
            xw_put_text(w, ws, row, S->col_case, p->actions[pt->case_action], NULL);
        for (size_t q = 0; pt->rates && q < S->n_rates; q++)
            xw_put_number(w, ws, row, (lxw_col_t)(S->col_rates + q), pt->rates[q], w->f.prob);
        for (size_t q = 0; q < S->n_switch_cols && q < pt->n_switches; q++)
            xw_put_number(w, ws, row, (lxw_col_t)(S->col_switch + q), pt->switches[q].x,
                          w->f.switch_x);
        for (size_t l = 0; p->estimate && pt->flatness.computed && l < LOP_FLAT_LEVELS; l++) {
            lxw_col_t at = (lxw_col_t)(S->col_flat + 2 * l);
            if (isfinite(pt->flatness.range[l].from))
                xw_put_number(w, ws, row, at, pt->flatness.range[l].from, w->f.value);
            if (isfinite(pt->flatness.range[l].to))
                xw_put_number(w, ws, row, at + 1, pt->flatness.range[l].to, w->f.value);
        }
    }
    size_t n = head.n;
    xw_set_width(w, 0, (lxw_col_t)(n - 1), 12);
    char table[48];
    snprintf(table, sizeof table, "sweep_%zu", S->k + 1);
    xw_header_and_table_wrapped(w, ws, table, S->h, 0, S->h + (lxw_row_t)S->shown, &head, 16);
    S->next_col = (lxw_col_t)(n + 1);
}

/* Every switch point of every point shown, when they do not fit as columns. */
static void path_switch_table(sweep_sheet *S)
{
    xlsx_writer *w = S->w;
    lxw_worksheet *ws = S->ws;
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = S->sw;
    if (!S->switch_table)
        return;
    const lop_rule_result *rule = &w->r->rule;
    bool rows = w->r->has_rule && rule->n_columns > 0;
    lxw_col_t c0 = S->next_col;
    xw_put_text(w, ws, S->h - 1, c0, "Switch points at each point", w->f.heading);
    lxw_row_t row = S->h;
    char given[1024];
    for (size_t i = 0; i < S->shown && row < S->h + XW_ROWS_MAX; i++) {
        const lop_sweep_point *pt = &sw->points[i];
        for (size_t q = 0; q < pt->n_switches && row < S->h + XW_ROWS_MAX; q++) {
            const lop_switch_point *sp = &pt->switches[q];
            lxw_col_t col = c0;
            row++;
            xw_put_number(w, ws, row, col++, pt->x, w->f.value);
            if (has_y(S))
                xw_put_number(w, ws, row, col++, pt->y, w->f.value);
            if (rows) {
                /* Rows are the same outcome combinations at every point. */
                lop_report_row_given(given, sizeof given, p, rule, sp->row);
                xw_put_number(w, ws, row, col++, (double)(sp->row + 1), w->f.count);
                xw_put_text(w, ws, row, col++, given, NULL);
            }
            xw_put_number(w, ws, row, col++, sp->x, w->f.switch_x);
            xw_put_text(w, ws, row, col++, p->actions[sp->from], NULL);
            xw_put_text(w, ws, row, col++, p->actions[sp->to], NULL);
        }
    }
    xw_names head = {0};
    xw_names_add(w, &head, "x: %s", sw->spec->x);
    if (has_y(S))
        xw_names_add(w, &head, "y: %s", sw->spec->y);
    if (rows) {
        xw_names_add(w, &head, "row");
        xw_names_add(w, &head, "given");
    }
    xw_names_add(w, &head, "switch point");
    xw_names_add(w, &head, "below");
    xw_names_add(w, &head, "above");
    size_t n = head.n;
    xw_set_width(w, c0, (lxw_col_t)(c0 + n - 1), 12);
    if (rows)
        xw_set_width(w, (lxw_col_t)(c0 + n - 4), (lxw_col_t)(c0 + n - 4), 28);
    char table[48];
    snprintf(table, sizeof table, "sweep_%zu_switch", S->k + 1);
    xw_header_and_table_wrapped(w, ws, table, S->h, c0, row, &head, 16);
    S->next_col = (lxw_col_t)(c0 + n + 1);
}

static void path_charts(sweep_sheet *S)
{
    xlsx_writer *w = S->w;
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = S->sw;
    const char *unit = xw_score_unit(p);
    const char *risk = p->payoff ? "Bayes payoff" : "Bayes risk";
    char title[512], y_name[160];
    snprintf(y_name, sizeof y_name, "%s per decision", unit);
    if (has_y(S)) {
        lxw_col_t cols[] = {S->col_risk};
        char *names[] = {(char *)risk};
        snprintf(title, sizeof title, "%s against %s, one line per %s", risk, sw->spec->x,
                 sw->spec->y);
        chart_against_x(S, title, sw->spec->x, y_name, S->col_x, cols, names, 1);
        return;
    }
    lxw_col_t cols[XW_SERIES_MAX];
    char *names[XW_SERIES_MAX];
    cols[0] = S->col_risk;
    names[0] = (char *)risk;
    cols[1] = S->col_evpi;
    names[1] = "EVPI";
    snprintf(title, sizeof title, "%s and EVPI against %s", risk, sw->spec->x);
    chart_against_x(S, title, sw->spec->x, y_name, S->col_x, cols, names, 2);
    if (p->estimate) {
        cols[0] = S->col_case;
        names[0] = "case estimate";
        snprintf(title, sizeof title, "The case's Bayes estimate against %s", sw->spec->x);
        chart_against_x(S, title, sw->spec->x, p->unit[0] ? p->unit : "estimate", S->col_x,
                        cols, names, 1);
        return;
    }
    /* Rates of every action but the first: per state they sum to 1. */
    xw_names rate_names = {0};
    rate_header(w, &rate_names, p, sw);
    size_t S_ = sw->by_state ? p->n_states : 1, n = 0;
    for (size_t q = S_; q < rate_names.n && n < XW_SERIES_MAX; q++, n++) {
        cols[n] = (lxw_col_t)(S->col_rates + q);
        names[n] = rate_names.items[q];
    }
    if (n) {
        snprintf(title, sizeof title, "Choice rates against %s", sw->spec->x);
        chart_against_x(S, title, sw->spec->x, "probability", S->col_x, cols, names, n);
    }
    xw_names_free(&rate_names);
    char label[XW_SERIES_MAX][32];
    for (n = 0; n < S->n_switch_cols && n < XW_SERIES_MAX; n++) {
        snprintf(label[n], sizeof label[n], "switch point %zu", n + 1);
        cols[n] = (lxw_col_t)(S->col_switch + n);
        names[n] = label[n];
    }
    if (n) {
        snprintf(title, sizeof title, "Switch points of the rule against %s", sw->spec->x);
        chart_against_x(S, title, sw->spec->x, "measurement", S->col_x, cols, names, n);
    }
}

static void path_sweep(sweep_sheet *S)
{
    path_table(S);
    path_switch_table(S);
    if (has_y(S)) {
        char title[256];
        snprintf(title, sizeof title, "Bayes %s (%s per decision): x down, y across",
                 S->w->p->payoff ? "payoff" : "risk", xw_score_unit(S->w->p));
        grid_block(S, S->next_col, title, LOP_SWEEP_AXIS(S->sw->spec, 'x'),
                   grid_risk);
    }
    S->chart_row = S->h;
    S->chart_col = S->next_col;
    path_charts(S);
}

/* --- threshold sweeps ------------------------------------------------------------------- */

/* The Bayes threshold, its expected score, the Bayes risk and d' of a one-axis threshold
 * sweep, from row `row`; returns the next free row. */
static lxw_row_t threshold_info(sweep_sheet *S, lxw_row_t row)
{
    xlsx_writer *w = S->w;
    lxw_worksheet *ws = S->ws;
    const lop_problem *p = w->p;
    const lop_threshold_row *tr = &S->sw->rows[0];
    const char *unit = xw_score_unit(p);
    char measure[160], label[256], per[96];
    lop_report_threshold_measurement(measure, sizeof measure, p);
    snprintf(per, sizeof per, "%s per decision", unit);
    S->info_threshold = row;
    snprintf(label, sizeof label, "Bayes threshold (%s)", measure);
    if (tr->has_bayes_threshold) {
        row = xw_info_line(w, ws, row, label, tr->bayes_threshold, w->f.switch_x, "");
    } else {
        row = xw_info_text(w, ws, row, label, "none: always taking one action does as well",
                           NULL);
    }
    snprintf(label, sizeof label, "Expected %s at the Bayes threshold",
             lop_problem_orientation(p));
    row = xw_info_line(w, ws, row, label, lop_problem_oriented(p, tr->bayes_threshold_loss),
                       w->f.score, per);
    snprintf(label, sizeof label, "Bayes %s of the rule", p->payoff ? "payoff" : "risk");
    if (isfinite(tr->bayes_risk))
        row = xw_info_line(w, ws, row, label, lop_problem_oriented(p, tr->bayes_risk),
                           w->f.score, per);
    if (tr->sdt)
        row = xw_info_line(w, ws, row, "d′ (two labelled states, equal-variance gaussian)",
                           tr->d_prime, w->f.measure, "");
    return row;
}

/* The thresholds whose expected score lies within 1%, 5% and 10% of the optimum's, from
 * column c0 (one-axis sweeps). */
static void threshold_flatness(sweep_sheet *S)
{
    xlsx_writer *w = S->w;
    lxw_worksheet *ws = S->ws;
    const lop_threshold_row *tr = &S->sw->rows[0];
    if (!tr->has_bayes_threshold || !tr->flatness.computed)
        return;
    lxw_col_t c0 = S->next_col;
    xw_put_textf(w, ws, S->h - 1, c0, w->f.heading, "Flatness: thresholds within the optimum's "
                 "expected %s", lop_problem_orientation(w->p));
    for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
        lxw_row_t row = S->h + 1 + (lxw_row_t)l;
        xw_put_number(w, ws, row, c0, tr->flatness.range[l].within, w->f.percent);
        if (isfinite(tr->flatness.range[l].from))
            xw_put_number(w, ws, row, c0 + 1, tr->flatness.range[l].from, w->f.switch_x);
        else
            xw_put_text(w, ws, row, c0 + 1, "no lower end", NULL);
        if (isfinite(tr->flatness.range[l].to))
            xw_put_number(w, ws, row, c0 + 2, tr->flatness.range[l].to, w->f.switch_x);
        else
            xw_put_text(w, ws, row, c0 + 2, "no upper end", NULL);
    }
    xw_names head = {0};
    xw_names_add(w, &head, "within");
    xw_names_add(w, &head, "thresholds from");
    xw_names_add(w, &head, "thresholds to");
    xw_set_width(w, c0, c0 + 2, 12);
    char table[48];
    snprintf(table, sizeof table, "sweep_%zu_flatness", S->k + 1);
    xw_header_and_table_wrapped(w, ws, table, S->h, c0, S->h + LOP_FLAT_LEVELS, &head, 16);
    S->next_col = c0 + 4;
}

/* Per value of y: the Bayes threshold, its expected score, the Bayes risk, d' and the
 * flatness ranges (two-axis threshold sweeps). */
static void threshold_rows(sweep_sheet *S)
{
    xlsx_writer *w = S->w;
    lxw_worksheet *ws = S->ws;
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = S->sw;
    const char *unit = xw_score_unit(p);
    bool sdt = false;
    for (size_t j = 0; j < sw->ny; j++)
        sdt |= sw->rows[j].sdt;
    lxw_col_t c0 = S->next_col;
    xw_put_text(w, ws, S->h - 1, c0, "The Bayes threshold for each y", w->f.heading);
    size_t shown = sw->ny < XW_ROWS_MAX ? sw->ny : XW_ROWS_MAX;
    for (size_t j = 0; j < shown; j++) {
        const lop_threshold_row *tr = &sw->rows[j];
        lxw_row_t row = S->h + 1 + (lxw_row_t)j;
        lxw_col_t col = c0;
        xw_put_number(w, ws, row, col++, tr->y, w->f.value);
        if (tr->has_bayes_threshold)
            xw_put_number(w, ws, row, col, tr->bayes_threshold, w->f.switch_x);
        col++;
        xw_put_number(w, ws, row, col++, lop_problem_oriented(p, tr->bayes_threshold_loss),
                      w->f.score);
        xw_put_maybe(w, ws, row, col++, lop_problem_oriented(p, tr->bayes_risk), w->f.score);
        if (sdt) {
            if (tr->sdt)
                xw_put_number(w, ws, row, col, tr->d_prime, w->f.measure);
            col++;
        }
        for (size_t l = 0; l < LOP_FLAT_LEVELS; l++, col += 2) {
            if (!tr->has_bayes_threshold || !tr->flatness.computed)
                continue;
            if (isfinite(tr->flatness.range[l].from))
                xw_put_number(w, ws, row, col, tr->flatness.range[l].from, w->f.switch_x);
            if (isfinite(tr->flatness.range[l].to))
                xw_put_number(w, ws, row, col + 1, tr->flatness.range[l].to, w->f.switch_x);
        }
    }
    xw_names head = {0};
    xw_names_add(w, &head, "y: %s", sw->spec->y);
    xw_names_add(w, &head, "Bayes threshold");
    xw_names_add(w, &head, "expected %s there (%s per decision)", lop_problem_orientation(p),
                 unit);
    xw_names_add(w, &head, "Bayes %s (%s per decision)", p->payoff ? "payoff" : "risk", unit);
    if (sdt)
        xw_names_add(w, &head, "d′");
    for (size_t l = 0; l < LOP_FLAT_LEVELS; l++) {
        int pct = l == 0 ? 1 : l == 1 ? 5 : 10;
        xw_names_add(w, &head, "within %d%% from", pct);
        xw_names_add(w, &head, "within %d%% to", pct);
    }
    size_t n = head.n;
    xw_set_width(w, c0, (lxw_col_t)(c0 + n - 1), 12);
    char table[48];
    snprintf(table, sizeof table, "sweep_%zu_threshold", S->k + 1);
    xw_header_and_table_wrapped(w, ws, table, S->h, c0, S->h + (lxw_row_t)shown, &head, 16);
    S->rows_first = S->h + 1;
    S->rows_col = c0;
    S->next_col = (lxw_col_t)(c0 + n + 1);
}

/* The point of y-row j nearest its Bayes threshold, nx when there is none. */
static size_t nearest_point(const lop_sweep_result *sw, size_t j)
{
    const lop_threshold_row *tr = &sw->rows[j];
    size_t best = sw->nx;
    double gap = INFINITY;
    for (size_t i = 0; tr->has_bayes_threshold && i < sw->nx; i++) {
        double d = fabs(sw->points[j * sw->nx + i].x - tr->bayes_threshold);
        if (d < gap) {
            gap = d;
            best = i;
        }
    }
    return best;
}

static void threshold_table(sweep_sheet *S)
{
    xlsx_writer *w = S->w;
    lxw_worksheet *ws = S->ws;
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = S->sw;
    const char *unit = xw_score_unit(p);
    bool hits = has_hits(p), sdt = false;
    for (size_t j = 0; j < sw->ny; j++)
        sdt |= sw->rows[j].sdt;
    char measure[160];
    lop_report_threshold_measurement(measure, sizeof measure, p);
    xw_names head = {0};
    lxw_col_t col = 0;
    S->col_x = col++;
    xw_names_add(w, &head, "threshold: %s", measure);
    if (has_y(S)) {
        col++;
        xw_names_add(w, &head, "y: %s", sw->spec->y);
    }
    S->col_rates = col;
    col = (lxw_col_t)(col + S->n_rates);
    rate_header(w, &head, p, sw);
    if (hits) {
        S->col_hit = col++;
        S->col_fa = col++;
        xw_names_add(w, &head, "hit rate: P(%s | %s)", p->actions[1], p->state_labels[1]);
        xw_names_add(w, &head, "false-alarm rate: P(%s | %s)", p->actions[1],
                     p->state_labels[0]);
    }
    S->col_loss = col++;
    xw_names_add(w, &head, "expected %s (%s per decision)", lop_problem_orientation(p), unit);
    lxw_col_t col_c = col;
    if (sdt) {
        col += 2;
        xw_names_add(w, &head, "c");
        xw_names_add(w, &head, "β");
    }
    lxw_col_t col_note = col;
    xw_names_add(w, &head, "note");
    for (size_t i = 0; i < S->shown; i++) {
        const lop_sweep_point *pt = &sw->points[i];
        size_t j = i / sw->nx;
        lxw_row_t row = S->h + 1 + (lxw_row_t)i;
        xw_put_number(w, ws, row, S->col_x, pt->x, w->f.grid_x);
        if (has_y(S))
            xw_put_number(w, ws, row, S->col_x + 1, pt->y, w->f.value);
        for (size_t q = 0; pt->rates && q < S->n_rates; q++)
            xw_put_number(w, ws, row, (lxw_col_t)(S->col_rates + q), pt->rates[q], w->f.prob);
        if (hits && pt->rates) {
            xw_put_number(w, ws, row, S->col_hit, pt->rates[p->n_states + 1], w->f.prob);
            xw_put_number(w, ws, row, S->col_fa, pt->rates[p->n_states], w->f.prob);
        }
        xw_put_maybe(w, ws, row, S->col_loss, lop_problem_oriented(p, pt->expected_loss),
                     w->f.score);
        if (sw->rows[j].sdt) {
            xw_put_maybe(w, ws, row, col_c, pt->criterion, w->f.measure);
            xw_put_maybe(w, ws, row, col_c + 1, pt->beta, w->f.measure);
        }
        if (i % sw->nx == nearest_point(sw, j))
            xw_put_textf(w, ws, row, col_note, NULL, "nearest the Bayes threshold %.6g",
                         sw->rows[j].bayes_threshold);
    }
    size_t n = head.n;
    xw_set_width(w, 0, (lxw_col_t)(n - 2), 12);
    xw_set_width(w, col_note, col_note, 34);
    char table[48];
    snprintf(table, sizeof table, "sweep_%zu", S->k + 1);
    xw_header_and_table_wrapped(w, ws, table, S->h, 0, S->h + (lxw_row_t)S->shown, &head, 16);
    S->next_col = (lxw_col_t)(n + 1);
}

static void threshold_charts(sweep_sheet *S)
{
    xlsx_writer *w = S->w;
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = S->sw;
    char title[256], measure[160], y_name[160];
    lop_report_threshold_measurement(measure, sizeof measure, p);
    snprintf(y_name, sizeof y_name, "%s per decision", xw_score_unit(p));
    char *names[XW_SERIES_MAX];
    lxw_col_t cols[XW_SERIES_MAX];
    if (has_hits(p)) {
        /* ROC: the hit rate against the false-alarm rate, both from 0 to 1. */
        lxw_chart *chart = xw_chart(w, LXW_CHART_SCATTER_STRAIGHT_WITH_MARKERS, S->sheet);
        if (!chart)
            return;
        size_t blocks = S->shown / sw->nx;
        size_t per = blocks < XW_SERIES_MAX ? blocks : XW_SERIES_MAX;
        for (size_t b = 0; b < per; b++) {
            size_t j = per == 1 ? 0 : b * (blocks - 1) / (per - 1);
            lxw_row_t r0 = S->h + 1 + (lxw_row_t)(j * sw->nx);
            char label[200] = "thresholds";
            if (has_y(S))
                snprintf(label, sizeof label, "%s = %.6g", LOP_SWEEP_AXIS(sw->spec, 'y'),
                         sw->rows[j].y);
            if (!xw_series(w, chart, S->sheet, r0, r0 + (lxw_row_t)sw->nx - 1, S->col_fa,
                           S->col_hit, label))
                return;
        }
        chart_title_set_name(chart, "ROC: hit rate against false-alarm rate");
        chart_axis_set_name(chart->x_axis, "false-alarm rate");
        chart_axis_set_name(chart->y_axis, "hit rate");
        chart_axis_set_min(chart->x_axis, 0);
        chart_axis_set_max(chart->x_axis, 1);
        chart_axis_set_min(chart->y_axis, 0);
        chart_axis_set_max(chart->y_axis, 1);
        chart_legend_set_position(chart, has_y(S) ? LXW_CHART_LEGEND_BOTTOM
                                                  : LXW_CHART_LEGEND_NONE);
        place_chart(S, chart);
    } else if (p->n_actions >= 2) {
        xw_names rate_names = {0};
        rate_header(w, &rate_names, p, sw);
        size_t S_ = sw->by_state ? p->n_states : 1, n = 0;
        for (size_t q = S_; q < rate_names.n && n < XW_SERIES_MAX; q++, n++) {
            cols[n] = (lxw_col_t)(S->col_rates + q);
            names[n] = rate_names.items[q];
        }
        snprintf(title, sizeof title, "Choice rates against the threshold on %s", measure);
        if (n && !has_y(S))
            chart_against_x(S, title, measure, "probability", S->col_x, cols, names, n);
        xw_names_free(&rate_names);
    }
    /* The expected score of each threshold, the Bayes threshold marked. */
    snprintf(title, sizeof title, "Expected %s of each threshold%s",
             lop_problem_orientation(p), has_y(S) ? ", one line per y"
                                                  : ", the Bayes threshold marked");
    lxw_chart *chart = xw_chart(w, LXW_CHART_SCATTER_STRAIGHT_WITH_MARKERS, S->sheet);
    if (!chart)
        return;
    size_t blocks = S->shown / sw->nx;
    size_t per = blocks < XW_SERIES_MAX ? blocks : XW_SERIES_MAX;
    for (size_t b = 0; b < per; b++) {
        size_t j = per == 1 ? 0 : b * (blocks - 1) / (per - 1);
        lxw_row_t r0 = S->h + 1 + (lxw_row_t)(j * sw->nx);
        char label[200];
        snprintf(label, sizeof label, "expected %s", lop_problem_orientation(p));
        if (has_y(S))
            snprintf(label, sizeof label, "%s = %.6g", LOP_SWEEP_AXIS(sw->spec, 'y'),
                     sw->rows[j].y);
        if (!xw_series(w, chart, S->sheet, r0, r0 + (lxw_row_t)sw->nx - 1, S->col_x,
                       S->col_loss, label))
            return;
    }
    if (!has_y(S) && sw->rows[0].has_bayes_threshold) {
        /* One point: the Bayes threshold and its expected score, from the cells above. */
        lxw_chart_series *s = xw_check_ptr(w, chart_add_series(chart, NULL, NULL), S->sheet);
        if (!s)
            return;
        /* Each range is set once: libxlsxwriter keeps the first copy of a replaced one. */
        chart_series_set_categories(s, S->sheet, S->info_threshold, XW_INFO_COL,
                                    S->info_threshold, XW_INFO_COL);
        chart_series_set_values(s, S->sheet, S->info_threshold + 1, XW_INFO_COL,
                                S->info_threshold + 1, XW_INFO_COL);
        chart_series_set_name(s, "Bayes threshold");
        lxw_chart_line none = {.none = LXW_TRUE};
        chart_series_set_line(s, &none);
        chart_series_set_marker_type(s, LXW_CHART_MARKER_DIAMOND);
        chart_series_set_marker_size(s, 10);
    }
    chart_title_set_name(chart, title);
    chart_axis_set_name(chart->x_axis, measure);
    chart_axis_set_name(chart->y_axis, y_name);
    chart_legend_set_position(chart, LXW_CHART_LEGEND_BOTTOM);
    place_chart(S, chart);
    if (has_y(S)) {
        /* The Bayes threshold against y, from the per-y table. */
        chart = xw_chart(w, LXW_CHART_SCATTER_STRAIGHT_WITH_MARKERS, S->sheet);
        size_t shown = sw->ny < XW_ROWS_MAX ? sw->ny : XW_ROWS_MAX;
        if (!chart || !xw_series(w, chart, S->sheet, S->rows_first,
                                 S->rows_first + (lxw_row_t)shown - 1, S->rows_col,
                                 S->rows_col + 1, "Bayes threshold"))
            return;
        snprintf(title, sizeof title, "The Bayes threshold against %s", sw->spec->y);
        chart_title_set_name(chart, title);
        chart_axis_set_name(chart->x_axis, sw->spec->y);
        chart_axis_set_name(chart->y_axis, measure);
        chart_legend_set_position(chart, LXW_CHART_LEGEND_NONE);
        place_chart(S, chart);
    }
}

static void threshold_sweep(sweep_sheet *S)
{
    threshold_table(S);
    if (has_y(S)) {
        threshold_rows(S);
        char title[256];
        snprintf(title, sizeof title, "Expected %s (%s per decision): thresholds down, y across",
                 lop_problem_orientation(S->w->p), xw_score_unit(S->w->p));
        grid_block(S, S->next_col, title, "threshold", grid_expected);
    } else {
        threshold_flatness(S);
    }
    S->chart_row = S->h;
    S->chart_col = S->next_col;
    threshold_charts(S);
}

/* --- the sheet -------------------------------------------------------------------------- */

void xw_sheet_sweep(xlsx_writer *w, lxw_worksheet *ws, size_t k, const char *sheet)
{
    const lop_problem *p = w->p;
    const lop_sweep_result *sw = &w->r->sweeps[k];
    const lop_sweep_spec *spec = sw->spec;
    sweep_sheet S = {.w = w, .ws = ws, .sheet = sheet, .sw = sw, .k = k,
                     .n_rates = sw->n_rates <= XW_RATE_COLUMNS_MAX ? sw->n_rates : 0};
    size_t n = sw->nx * sw->ny;
    /* Whole values of y while they fit; at least part of the first. */
    S.shown = n;
    if (n > XW_ROWS_MAX) {
        S.shown = XW_ROWS_MAX / sw->nx * sw->nx;
        if (S.shown == 0)
            S.shown = XW_ROWS_MAX;
    }
    char measure[160];
    lop_report_threshold_measurement(measure, sizeof measure, p);
    if (sw->threshold)
        xw_put_textf(w, ws, 0, 0, w->f.title, "Sweep %s: every threshold on %s from %.6g to "
                     "%.6g (%zu thresholds)", spec->name, measure, spec->x_from, spec->x_to,
                     spec->x_points);
    else
        xw_put_textf(w, ws, 0, 0, w->f.title, "Sweep %s: %s from %.6g to %.6g (%zu points)",
                     spec->name, spec->x, spec->x_from, spec->x_to, spec->x_points);
    if (spec->y)
        xw_put_textf(w, ws, 1, 0, w->f.note, "For each %s from %.6g to %.6g (%zu values); x "
                     "runs fastest. Values computed by lopside.", spec->y, spec->y_from,
                     spec->y_to, spec->y_points);
    else if (sw->threshold)
        xw_put_text(w, ws, 1, 0, "Deciding by a threshold: the second action at or above it. "
                    "Values computed by lopside.", w->f.note);
    else
        xw_put_text(w, ws, 1, 0, "The problem re-solved with the path set to each value. "
                    "Values computed by lopside.", w->f.note);
    lxw_row_t row = 3;
    if (S.shown < n)
        xw_put_textf(w, ws, row++, 0, w->f.note, "The table stops at %zu of the %zu points; "
                     "the CSV folder and the JSON hold every point.", S.shown, n);
    if (sw->n_rates > XW_RATE_COLUMNS_MAX)
        xw_put_textf(w, ws, row++, 0, w->f.note, "%zu choice rates per point are too many "
                     "columns to show; the CSV folder and the JSON hold them.", sw->n_rates);
    if (sw->threshold && !spec->y)
        row = threshold_info(&S, row);
    S.h = row + 2;
    if (sw->threshold)
        threshold_sweep(&S);
    else
        path_sweep(&S);
    xw_set_width(w, 0, 0, 16);
    xw_finish_sheet(w, ws, S.h);
}
