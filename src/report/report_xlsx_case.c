/* The workbook's Case sheet: live formulas for finite states with named actions and
 * outcome-table or gaussian channels (the file's numbers in shaded cells, everything
 * computed from them a formula with lopside's value cached), values for other problems.
 * The layout is planned first so that formulas can cite cells further down. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/report/report.h"
#include "report_xlsx_private.h"

/* Most observations the Case sheet turns into live formulas, one row each; beyond this the
 * log-likelihoods are written as values. */
#define LIVE_OBSERVATIONS_MAX 5000
/* Stands for log(0) in formulas: exp(-1E+300 - max) is exactly 0, and sums of a few
 * million such terms stay finite. */
#define LOG_ZERO "-1E+300"
#define LOG_ZERO_VALUE (-1e300)
/* log(sqrt(2 pi)), for the gaussian log-density where NORM.DIST underflows. */
#define LOG_SQRT_2PI_TEXT "0.918938533204672742"

static size_t observations(const lop_problem *p)
{
    size_t n = 0;
    for (size_t i = 0; i < p->n_channels; i++)
        n += p->channels[i].n_observed;
    return n;
}

/* Rows of the Case sheet's blocks, planned before writing so that formulas can cite cells
 * further down. Columns are fixed per block (see each writer). */
typedef struct {
    lxw_row_t *model_header;  /* per channel: header row of its evidence-model table */
    bool live_obs;            /* observations are rows of formulas */
    size_t n_obs;
    lxw_row_t obs_header;     /* observations: A channel, B repeat, C observed, D.. per state */
    lxw_row_t post_header;    /* posterior: A state, B prior, C ln L, D ln(prior L), E post */
    lxw_row_t score_header;   /* loss/payoff: A state, B.. actions, then the best */
    lxw_row_t act_header;     /* actions: A action, B expected, C short of the Bayes action */
    lxw_row_t decision;       /* decision block: A label, B value, C unit */
    lxw_col_t width;          /* columns used by the blocks */
} case_layout;

enum { DECIDE_POS, DECIDE_ACTION, DECIDE_SCORE, DECIDE_RUNNER, DECIDE_MARGIN, DECIDE_EVPI,
       DECIDE_ROWS };

static bool plan_case(xlsx_writer *w, case_layout *L)
{
    const lop_problem *p = w->p;
    memset(L, 0, sizeof *L);
    L->model_header = xw_check_ptr(w, calloc(p->n_channels + 1, sizeof *L->model_header),
                                   "Case sheet");
    if (!L->model_header)
        return false;
    lxw_row_t row = 4;
    lxw_col_t width = 5;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        L->model_header[i] = row + 1;
        row += (lxw_row_t)(3 + p->n_states);
        size_t cols = 1 + (c->kind == LOP_CHANNEL_TABLE ? c->n_outcomes : 2);
        if (cols > width)
            width = (lxw_col_t)cols;
    }
    L->n_obs = observations(p);
    L->live_obs = L->n_obs > 0 && L->n_obs <= LIVE_OBSERVATIONS_MAX;
    if (L->live_obs) {
        L->obs_header = row + 1;
        row += (lxw_row_t)(3 + L->n_obs);
        if (3 + p->n_states > width)
            width = (lxw_col_t)(3 + p->n_states);
    }
    L->post_header = row + 1;
    row += (lxw_row_t)(3 + p->n_states);
    L->score_header = row + 1;
    row += (lxw_row_t)(3 + p->n_states);
    if (2 + p->n_actions > width)
        width = (lxw_col_t)(2 + p->n_actions);
    L->act_header = row + 1;
    row += (lxw_row_t)(3 + p->n_actions);
    L->decision = row + 1;
    L->width = width;
    return true;
}

/* One table per channel: P(outcome | state), or the gaussian's mean and sd per state. */
static void case_evidence_model(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        const char *name = lop_report_channel_name(c);
        lxw_row_t h = L->model_header[i];
        xw_names head = {0};
        xw_names_add(w, &head, "state%s%s%s", p->unit[0] ? " (" : "", p->unit,
                     p->unit[0] ? ")" : "");
        if (c->kind == LOP_CHANNEL_TABLE) {
            xw_put_textf(w, ws, h - 1, 0, w->f.heading, "Evidence: %s, P(outcome | state)%s",
                         name, c->repeats > 1 ? " of each repeat" : "");
            for (size_t o = 0; o < c->n_outcomes; o++)
                xw_names_add(w, &head, "%s", c->outcomes[o]);
        } else {
            xw_put_textf(w, ws, h - 1, 0, w->f.heading,
                         "Evidence: %s, one measurement is gaussian in each state", name);
            xw_names_add(w, &head, "mean");
            xw_names_add(w, &head, "sd");
        }
        for (size_t s = 0; s < p->n_states; s++) {
            lxw_row_t row = h + 1 + (lxw_row_t)s;
            xw_put_text(w, ws, row, 0, p->state_labels[s], NULL);
            if (c->kind == LOP_CHANNEL_TABLE) {
                for (size_t o = 0; o < c->n_outcomes; o++)
                    xw_put_number(w, ws, row, (lxw_col_t)(1 + o), c->given[s * c->n_outcomes + o],
                                  w->f.in_prob);
            } else {
                xw_put_number(w, ws, row, 1, c->center[s], w->f.in_number);
                xw_put_number(w, ws, row, 2, c->spread[s], w->f.in_number);
            }
        }
        char table[32];
        snprintf(table, sizeof table, "evidence_%zu", i + 1);
        xw_header_and_table(w, ws, table, h, 0, h + (lxw_row_t)p->n_states, &head);
    }
}

/* ln P(observation | state) as a formula over the model cells, with its value. */
static void observation_cell(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L,
                             size_t ch, size_t k, size_t s, lxw_row_t row)
{
    const lop_problem *p = w->p;
    const lop_channel *c = &p->channels[ch];
    lxw_row_t h = L->model_header[ch];
    lxw_row_t srow = h + 1 + (lxw_row_t)s;
    char obs[32], formula[1024];
    xw_ref(obs, sizeof obs, row, 2);
    if (c->kind == LOP_CHANNEL_TABLE) {
        char given[72], labels[72];
        xw_range(given, sizeof given, srow, 1, srow, (lxw_col_t)c->n_outcomes);
        xw_range(labels, sizeof labels, h, 1, h, (lxw_col_t)c->n_outcomes);
        double pr = c->given[s * c->n_outcomes + c->observed_outcome[k]];
        snprintf(formula, sizeof formula,
                 "=IF(INDEX(%s,MATCH(%s,%s,0))>0,LN(INDEX(%s,MATCH(%s,%s,0))),%s)", given, obs,
                 labels, given, obs, labels, LOG_ZERO);
        xw_put_formula(w, ws, row, (lxw_col_t)(3 + s), formula, w->f.loglik,
                       pr > 0 ? log(pr) : LOG_ZERO_VALUE);
    } else {
        char m[32], sd[32], dens[160];
        xw_ref(m, sizeof m, srow, 1);
        xw_ref(sd, sizeof sd, srow, 2);
        snprintf(dens, sizeof dens, "_xlfn.NORM.DIST(%s,%s,%s,FALSE)", obs, m, sd);
        /* Beyond about 38 sd the density underflows; the log-density formula takes over. */
        snprintf(formula, sizeof formula, "=IF(%s>0,LN(%s),-((%s-%s)/%s)^2/2-LN(%s)-%s)", dens,
                 dens, obs, m, sd, sd, LOG_SQRT_2PI_TEXT);
        double z = (c->observed_value[k] - c->center[s]) / c->spread[s];
        xw_put_formula(w, ws, row, (lxw_col_t)(3 + s), formula, w->f.loglik,
                       -0.5 * z * z - log(c->spread[s]) - 0.91893853320467274178);
    }
}

/* One row per observed value; one column of log-likelihoods per state. */
static void case_observations(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    if (!L->live_obs)
        return;
    lxw_row_t h = L->obs_header;
    xw_put_text(w, ws, h - 1, 0, "Observations: the case at hand, with ln P(observed | state)",
                w->f.heading);
    xw_names head = {0};
    xw_names_add(w, &head, "channel");
    xw_names_add(w, &head, "repeat");
    xw_names_add(w, &head, "observed");
    for (size_t s = 0; s < p->n_states; s++)
        xw_names_add(w, &head, "ln likelihood: %s", p->state_labels[s]);
    lxw_row_t row = h + 1;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        for (size_t k = 0; k < c->n_observed; k++, row++) {
            xw_put_text(w, ws, row, 0, lop_report_channel_name(c), NULL);
            xw_put_number(w, ws, row, 1, (double)(k + 1), w->f.count);
            if (c->kind == LOP_CHANNEL_TABLE)
                xw_put_text(w, ws, row, 2, c->outcomes[c->observed_outcome[k]], w->f.in_text);
            else
                xw_put_number(w, ws, row, 2, c->observed_value[k], w->f.in_number);
            for (size_t s = 0; s < p->n_states; s++)
                observation_cell(w, ws, L, i, k, s, row);
        }
    }
    xw_header_and_table(w, ws, "observations", h, 0, row - 1, &head);
}

/* Prior, log-likelihood, and the posterior by log-sum-exp, as formulas. */
static void case_posterior(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    lxw_row_t h = L->post_header, first = h + 1, last = h + (lxw_row_t)p->n_states;
    xw_put_text(w, ws, h - 1, 0, "Posterior: prior times likelihood, normalized", w->f.heading);
    const double *ll = w->r->kase.log_likelihood;   /* the cached values of the formulas */
    char joint[72], formula[512], a[32], b[32];
    xw_range(joint, sizeof joint, first, 3, last, 3);
    for (size_t s = 0; s < p->n_states; s++) {
        lxw_row_t row = first + (lxw_row_t)s;
        if (p->states_kind == LOP_STATES_VALUES)
            xw_put_number(w, ws, row, 0, p->state_values[s], NULL);
        else
            xw_put_text(w, ws, row, 0, p->state_labels[s], NULL);
        xw_put_number(w, ws, row, 1, p->prior[s], w->f.in_prob);
        if (L->live_obs) {
            char col[72];
            xw_range(col, sizeof col, L->obs_header + 1, (lxw_col_t)(3 + s),
                     L->obs_header + (lxw_row_t)L->n_obs, (lxw_col_t)(3 + s));
            snprintf(formula, sizeof formula, "=SUM(%s)", col);
            xw_put_formula(w, ws, row, 2, formula, w->f.loglik, ll[s]);
        } else {
            xw_put_number(w, ws, row, 2, ll[s], w->f.loglik);
        }
        xw_ref(a, sizeof a, row, 1);
        xw_ref(b, sizeof b, row, 2);
        snprintf(formula, sizeof formula, "=IF(%s>0,LN(%s)+%s,%s)", a, a, b, LOG_ZERO);
        xw_put_formula(w, ws, row, 3, formula, w->f.loglik,
                       p->prior[s] > 0 ? log(p->prior[s]) + ll[s] : LOG_ZERO_VALUE);
        xw_ref(a, sizeof a, row, 3);
        /* Log-sum-exp: shift by the largest term so that exp never underflows to all 0. */
        snprintf(formula, sizeof formula, "=EXP(%s-MAX(%s))/SUMPRODUCT(EXP(%s-MAX(%s)))", a,
                 joint, joint, joint);
        xw_put_formula(w, ws, row, 4, formula, w->f.prob, w->r->kase.posterior[s]);
    }
    xw_names head = {0};
    xw_names_add(w, &head, "state%s%s%s", p->unit[0] ? " (" : "", p->unit, p->unit[0] ? ")" : "");
    xw_names_add(w, &head, "prior");
    xw_names_add(w, &head, "ln likelihood");
    xw_names_add(w, &head, "ln (prior × likelihood)");
    xw_names_add(w, &head, "posterior");
    xw_header_and_table(w, ws, "posterior", h, 0, last, &head);
}

/* The loss or payoff table, states down and actions across, with the best per state. */
static void case_scores(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    lxw_row_t h = L->score_header;
    xw_put_textf(w, ws, h - 1, 0, w->f.heading, "%s (%s) of each action in each state",
                 xw_orientation_title(p), xw_score_unit(p));
    lxw_col_t best_col = (lxw_col_t)(1 + p->n_actions);
    char row_range[72], formula[160];
    for (size_t s = 0; s < p->n_states; s++) {
        lxw_row_t row = h + 1 + (lxw_row_t)s;
        xw_put_text(w, ws, row, 0, p->state_labels[s], NULL);
        double best = lop_problem_oriented(p, lop_problem_loss(p, 0, s));
        for (size_t a = 0; a < p->n_actions; a++) {
            double v = lop_problem_oriented(p, lop_problem_loss(p, a, s));
            xw_put_number(w, ws, row, (lxw_col_t)(1 + a), v, w->f.in_score);
            best = p->payoff ? fmax(best, v) : fmin(best, v);
        }
        xw_range(row_range, sizeof row_range, row, 1, row, (lxw_col_t)p->n_actions);
        snprintf(formula, sizeof formula, "=%s(%s)", p->payoff ? "MAX" : "MIN", row_range);
        xw_put_formula(w, ws, row, best_col, formula, w->f.score, best);
    }
    xw_names head = {0};
    xw_names_add(w, &head, "state");
    for (size_t a = 0; a < p->n_actions; a++)
        xw_names_add(w, &head, "%s (%s)", p->actions[a], xw_score_unit(p));
    xw_names_add(w, &head, "best in this state (%s)", xw_score_unit(p));
    xw_header_and_table(w, ws, p->payoff ? "payoff" : "loss", h, 0, h + (lxw_row_t)p->n_states,
                        &head);
}

/* Expected score of each action: SUMPRODUCT of its column with the posterior. */
static void case_actions(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    const lop_case_result *c = &w->r->kase;
    lxw_row_t h = L->act_header;
    xw_put_textf(w, ws, h - 1, 0, w->f.heading, "Expected %s of each action given the posterior",
                 lop_problem_orientation(p));
    char post[72], col[72], formula[512], a_cell[32], b_cell[32], bayes[32], bscore[32];
    xw_range(post, sizeof post, L->post_header + 1, 4, L->post_header + (lxw_row_t)p->n_states, 4);
    xw_ref(bayes, sizeof bayes, L->decision + DECIDE_ACTION, 1);
    xw_ref(bscore, sizeof bscore, L->decision + DECIDE_SCORE, 1);
    for (size_t a = 0; a < p->n_actions; a++) {
        lxw_row_t row = h + 1 + (lxw_row_t)a;
        xw_put_text(w, ws, row, 0, p->actions[a], NULL);
        xw_range(col, sizeof col, L->score_header + 1, (lxw_col_t)(1 + a),
                 L->score_header + (lxw_row_t)p->n_states, (lxw_col_t)(1 + a));
        snprintf(formula, sizeof formula, "=SUMPRODUCT(%s,%s)", col, post);
        xw_put_formula(w, ws, row, 1, formula, w->f.score,
                       lop_problem_oriented(p, c->expected_loss[a]));
        xw_ref(a_cell, sizeof a_cell, row, 0);
        xw_ref(b_cell, sizeof b_cell, row, 1);
        /* How far each other action falls short of the Bayes action (>= 0 either way). */
        if (p->payoff)
            snprintf(formula, sizeof formula, "=IF(%s=%s,\"\",%s-%s)", a_cell, bayes, bscore,
                     b_cell);
        else
            snprintf(formula, sizeof formula, "=IF(%s=%s,\"\",%s-%s)", a_cell, bayes, b_cell,
                     bscore);
        if (a == c->bayes_action)
            xw_put_formula_text(w, ws, row, 2, formula, w->f.score, "");
        else
            xw_put_formula(w, ws, row, 2, formula, w->f.score,
                           c->expected_loss[a] - c->expected_loss[c->bayes_action]);
    }
    xw_names head = {0};
    xw_names_add(w, &head, "action");
    xw_names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), xw_score_unit(p));
    xw_names_add(w, &head, "short of the Bayes action (%s)", xw_score_unit(p));
    xw_header_and_table(w, ws, "actions", h, 0, h + (lxw_row_t)p->n_actions, &head);
}

/* The Bayes action by INDEX/MATCH on the best expected score (ties: the earlier action,
 * as MATCH finds the first), runner-up, margin and EVPI. */
static void case_decision(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    const lop_case_result *c = &w->r->kase;
    const char *unit = xw_score_unit(p);
    const char *best = p->payoff ? "MAX" : "MIN";
    lxw_row_t d = L->decision;
    lxw_row_t a0 = L->act_header + 1, a1 = L->act_header + (lxw_row_t)p->n_actions;
    char acts[72], el[72], shortfall[72], bestcol[72], post[72], pos[32], score[32];
    char formula[512];
    xw_range(acts, sizeof acts, a0, 0, a1, 0);
    xw_range(el, sizeof el, a0, 1, a1, 1);
    xw_range(shortfall, sizeof shortfall, a0, 2, a1, 2);
    xw_range(bestcol, sizeof bestcol, L->score_header + 1, (lxw_col_t)(1 + p->n_actions),
             L->score_header + (lxw_row_t)p->n_states, (lxw_col_t)(1 + p->n_actions));
    xw_range(post, sizeof post, L->post_header + 1, 4, L->post_header + (lxw_row_t)p->n_states, 4);
    xw_ref(pos, sizeof pos, d + DECIDE_POS, 1);
    xw_ref(score, sizeof score, d + DECIDE_SCORE, 1);

    xw_put_text(w, ws, d - 1, 0, "Decision for the case", w->f.heading);
    xw_put_text(w, ws, d + DECIDE_POS, 0, "Bayes action (its place in the list)", NULL);
    snprintf(formula, sizeof formula, "=MATCH(%s(%s),%s,0)", best, el, el);
    xw_put_formula(w, ws, d + DECIDE_POS, 1, formula, w->f.count, (double)(c->bayes_action + 1));

    xw_put_text(w, ws, d + DECIDE_ACTION, 0, "Bayes action", w->f.bold);
    snprintf(formula, sizeof formula, "=INDEX(%s,%s)", acts, pos);
    xw_put_formula_text(w, ws, d + DECIDE_ACTION, 1, formula, w->f.live_text,
                        p->actions[c->bayes_action]);

    xw_put_textf(w, ws, d + DECIDE_SCORE, 0, NULL, "Expected %s of the Bayes action",
                 lop_problem_orientation(p));
    snprintf(formula, sizeof formula, "=INDEX(%s,%s)", el, pos);
    xw_put_formula(w, ws, d + DECIDE_SCORE, 1, formula, w->f.live_score,
                   lop_problem_oriented(p, c->expected_loss[c->bayes_action]));
    xw_put_text(w, ws, d + DECIDE_SCORE, 2, unit, NULL);

    xw_put_text(w, ws, d + DECIDE_RUNNER, 0, "Runner-up", NULL);
    snprintf(formula, sizeof formula, "=INDEX(%s,MATCH(MIN(%s),%s,0))", acts, shortfall,
             shortfall);
    xw_put_formula_text(w, ws, d + DECIDE_RUNNER, 1, formula, NULL, p->actions[c->runner_up]);

    xw_put_text(w, ws, d + DECIDE_MARGIN, 0, "Margin over the runner-up", NULL);
    snprintf(formula, sizeof formula, "=MIN(%s)", shortfall);
    xw_put_formula(w, ws, d + DECIDE_MARGIN, 1, formula, w->f.score, c->margin);
    xw_put_text(w, ws, d + DECIDE_MARGIN, 2, unit, NULL);

    /* EVPI = E[score of the best action per state] - score of the Bayes action. */
    xw_put_text(w, ws, d + DECIDE_EVPI, 0, "Value of perfect information (EVPI)", NULL);
    if (p->payoff)
        snprintf(formula, sizeof formula, "=MAX(0,SUMPRODUCT(%s,%s)-%s)", bestcol, post, score);
    else
        snprintf(formula, sizeof formula, "=MAX(0,%s-SUMPRODUCT(%s,%s))", score, bestcol, post);
    xw_put_formula(w, ws, d + DECIDE_EVPI, 1, formula, w->f.score, c->evpi);
    xw_put_text(w, ws, d + DECIDE_EVPI, 2, unit, NULL);

    xw_case_cells *k = &w->kase;
    k->live = true;
    snprintf(k->bayes_action, sizeof k->bayes_action, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_ACTION + 1));
    snprintf(k->bayes_score, sizeof k->bayes_score, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_SCORE + 1));
    snprintf(k->runner_up, sizeof k->runner_up, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_RUNNER + 1));
    snprintf(k->margin, sizeof k->margin, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_MARGIN + 1));
    snprintf(k->evpi, sizeof k->evpi, "Case!$B$%lu", (unsigned long)(d + DECIDE_EVPI + 1));
}

static void case_charts(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    lxw_col_t at = (lxw_col_t)(L->width + 1);
    char cats[64], vals[64];
    lxw_row_t f = L->post_header + 1, l = L->post_header + (lxw_row_t)p->n_states;

    lxw_chart *chart = xw_check_ptr(w, workbook_add_chart(w->wb, LXW_CHART_COLUMN), "Case chart");
    if (!chart)
        return;
    snprintf(cats, sizeof cats, "=Case!$A$%lu:$A$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    snprintf(vals, sizeof vals, "=Case!$B$%lu:$B$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    lxw_chart_series *s = xw_check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
    if (s)
        chart_series_set_name(s, "prior");
    snprintf(vals, sizeof vals, "=Case!$E$%lu:$E$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    s = xw_check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
    if (s)
        chart_series_set_name(s, "posterior");
    chart_title_set_name(chart, "Prior and posterior of each state");
    chart_axis_set_name(chart->y_axis, "probability");
    chart_axis_set_min(chart->y_axis, 0);
    chart_legend_set_position(chart, LXW_CHART_LEGEND_BOTTOM);
    xw_check(w, worksheet_insert_chart(ws, L->post_header - 1, at, chart), "Case chart");

    chart = xw_check_ptr(w, workbook_add_chart(w->wb, LXW_CHART_BAR), "Case chart");
    if (!chart)
        return;
    f = L->act_header + 1;
    l = L->act_header + (lxw_row_t)p->n_actions;
    snprintf(cats, sizeof cats, "=Case!$A$%lu:$A$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    snprintf(vals, sizeof vals, "=Case!$B$%lu:$B$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    s = xw_check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
    if (s)
        chart_series_set_name(s, lop_problem_orientation(p));
    char title[160];
    snprintf(title, sizeof title, "Expected %s of each action (%s)",
             lop_problem_orientation(p), xw_score_unit(p));
    chart_title_set_name(chart, title);
    /* In a bar chart y is the category axis: first action on top, labels at the left. */
    chart_axis_set_reverse(chart->y_axis);
    chart_axis_set_label_position(chart->y_axis, LXW_CHART_AXIS_LABEL_POSITION_LOW);
    chart_legend_set_position(chart, LXW_CHART_LEGEND_NONE);
    /* Below the first chart (15 rows high) when the tables are close together. */
    lxw_row_t row = L->act_header - 1;
    if (row < L->post_header + 15)
        row = L->post_header + 15;
    xw_check(w, worksheet_insert_chart(ws, row, at, chart), "Case chart");
}

/* Live formulas cover finite states, named actions, and outcome-table or gaussian
 * channels; other problems get the Case sheet as values. */
static bool case_is_live(const lop_problem *p)
{
    if (p->states_kind == LOP_STATES_GRID || p->estimate)
        return false;
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].kind == LOP_CHANNEL_NOISE &&
            p->channels[i].noise != LOP_NOISE_GAUSSIAN)
            return false;
    return true;
}

/* The Case sheet as values: grid states, estimates, other noise families. */
static void sheet_case_values(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_case_result *c = &w->r->kase;
    const char *unit = xw_score_unit(p);
    char text[2048];
    xw_put_text(w, ws, 0, 0, "Case: the posterior and the decision given every observed value",
                w->f.title);
    xw_put_text(w, ws, 1, 0, "Values computed by lopside: live formulas cover finite states with "
                "named actions and outcome-table or gaussian channels.", w->f.note);
    xw_observed_text(text, sizeof text, p);
    xw_put_textf(w, ws, 2, 0, NULL, "Observed: %s", text);
    lxw_row_t row = 4;
    xw_put_text(w, ws, row++, 0, "Decision for the case", w->f.heading);
    if (p->estimate) {
        row = xw_value_line(w, ws, row, "Bayes estimate", c->bayes_estimate, w->f.live_score,
                            p->unit);
        snprintf(text, sizeof text, "Expected %s of the Bayes estimate",
                 lop_problem_orientation(p));
        row = xw_value_line(w, ws, row, text, lop_problem_oriented(p, c->bayes_estimate_loss),
                            w->f.score, unit);
    } else {
        xw_put_text(w, ws, row, 0, "Bayes action", w->f.bold);
        xw_put_text(w, ws, row++, 1, p->actions[c->bayes_action], w->f.live_text);
        snprintf(text, sizeof text, "Expected %s of the Bayes action",
                 lop_problem_orientation(p));
        row = xw_value_line(w, ws, row, text,
                            lop_problem_oriented(p, c->expected_loss[c->bayes_action]),
                            w->f.live_score, unit);
        xw_put_text(w, ws, row, 0, "Runner-up", NULL);
        xw_put_text(w, ws, row++, 1, p->actions[c->runner_up], NULL);
        row = xw_value_line(w, ws, row, "Margin over the runner-up", c->margin, w->f.score, unit);
    }
    row = xw_value_line(w, ws, row, "Value of perfect information (EVPI)", c->evpi, w->f.score,
                        unit);
    if (c->numeric) {
        static const char *const q[] = {"mean", "sd", "median", "mode", "5% quantile",
                                        "95% quantile"};
        double v[] = {c->summary.mean, c->summary.sd, c->summary.median, c->summary.mode,
                      c->summary.q05, c->summary.q95};
        row++;
        xw_put_text(w, ws, row++, 0, "Posterior summary", w->f.heading);
        lxw_row_t h = row++;
        for (size_t i = 0; i < 6; i++, row++) {
            xw_put_text(w, ws, row, 0, q[i], NULL);
            xw_put_number(w, ws, row, 1, v[i], w->f.number);
        }
        xw_names head = {0};
        xw_names_add(w, &head, "quantity");
        xw_names_add(w, &head, "value%s%s%s", p->unit[0] ? " (" : "", p->unit,
                     p->unit[0] ? ")" : "");
        xw_header_and_table(w, ws, "posterior_summary", h, 0, row - 1, &head);
    }
    if (!p->estimate) {
        row++;
        xw_put_textf(w, ws, row++, 0, w->f.heading, "Expected %s of each action",
                     lop_problem_orientation(p));
        lxw_row_t h = row++;
        for (size_t a = 0; a < p->n_actions; a++, row++) {
            xw_put_text(w, ws, row, 0, p->actions[a], NULL);
            xw_put_number(w, ws, row, 1, lop_problem_oriented(p, c->expected_loss[a]), w->f.score);
        }
        xw_names head = {0};
        xw_names_add(w, &head, "action");
        xw_names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), unit);
        xw_header_and_table(w, ws, "actions", h, 0, row - 1, &head);
    }
    /* Long tables side by side from column E, under one frozen header row. */
    lxw_row_t h = 5;
    lxw_col_t col = 4;
    size_t n = p->n_states < XW_ROWS_MAX ? p->n_states : XW_ROWS_MAX;
    xw_put_text(w, ws, h - 1, col, "Posterior", w->f.heading);
    for (size_t s = 0; s < n; s++) {
        if (lop_problem_numeric_states(p))
            xw_put_number(w, ws, h + 1 + (lxw_row_t)s, col, p->state_values[s], w->f.number);
        else
            xw_put_text(w, ws, h + 1 + (lxw_row_t)s, col, p->state_labels[s], NULL);
        xw_put_number(w, ws, h + 1 + (lxw_row_t)s, col + 1, p->prior[s], w->f.prob);
        xw_put_number(w, ws, h + 1 + (lxw_row_t)s, col + 2, c->posterior[s], w->f.prob);
    }
    xw_names head = {0};
    xw_names_add(w, &head, "state%s%s%s", p->unit[0] ? " (" : "", p->unit, p->unit[0] ? ")" : "");
    xw_names_add(w, &head, "prior");
    xw_names_add(w, &head, "posterior");
    xw_header_and_table(w, ws, "posterior", h, col, h + (lxw_row_t)n, &head);
    if (p->estimate) {
        col += 4;
        size_t m = p->n_estimates < XW_ROWS_MAX ? p->n_estimates : XW_ROWS_MAX;
        xw_put_text(w, ws, h - 1, col, "Expected score of every estimate", w->f.heading);
        for (size_t i = 0; i < m; i++) {
            xw_put_number(w, ws, h + 1 + (lxw_row_t)i, col, p->estimates[i], w->f.number);
            xw_put_number(w, ws, h + 1 + (lxw_row_t)i, col + 1,
                          lop_problem_oriented(p, c->estimate_curve[i]), w->f.score);
        }
        xw_names_add(w, &head, "estimate%s%s%s", p->unit[0] ? " (" : "", p->unit,
                     p->unit[0] ? ")" : "");
        xw_names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), unit);
        xw_header_and_table(w, ws, "estimate_curve", h, col, h + (lxw_row_t)m, &head);
    }
    /* The posterior against the state (numeric states) or per state. */
    lxw_chart *chart = xw_check_ptr(w, workbook_add_chart(w->wb, lop_problem_numeric_states(p)
                                                       ? LXW_CHART_SCATTER_STRAIGHT
                                                       : LXW_CHART_COLUMN), "Case chart");
    if (!chart)
        return;
    char a[72], b[72], cats[96], vals[96];
    xw_range(a, sizeof a, h + 1, 4, h + (lxw_row_t)n, 4);
    snprintf(cats, sizeof cats, "=Case!%s", a);
    for (lxw_col_t k = 5; k <= 6; k++) {
        xw_range(b, sizeof b, h + 1, k, h + (lxw_row_t)n, k);
        snprintf(vals, sizeof vals, "=Case!%s", b);
        lxw_chart_series *s = xw_check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
        if (s)
            chart_series_set_name(s, k == 5 ? "prior" : "posterior");
    }
    chart_title_set_name(chart, "Prior and posterior of each state");
    chart_legend_set_position(chart, LXW_CHART_LEGEND_BOTTOM);
    xw_check(w, worksheet_insert_chart(ws, h, col + 3, chart), "Case chart");
    xw_set_width(w, 0, 0, 36);
    xw_set_width(w, 1, 2, 14);
    worksheet_freeze_panes(ws, h + 1, 0);
    xw_page_setup(w, ws, -1);
    xw_apply_widths(w, ws);
}

void xw_sheet_case(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    if (!case_is_live(p)) {
        sheet_case_values(w, ws);
        return;
    }
    case_layout L;
    if (!plan_case(w, &L))
        return;
    char text[2048];
    xw_put_text(w, ws, 0, 0, "Case: the posterior and the decision given every observed value",
                w->f.title);
    xw_put_text(w, ws, 1, 0, "Shaded cells are the problem file's numbers; edit one and the "
                "posterior, the expected scores and the Bayes action below follow (and the "
                "Summary's headline).", w->f.note);
    xw_observed_text(text, sizeof text, p);
    xw_put_textf(w, ws, 2, 0, NULL, "Observed: %s", text);
    if (L.n_obs && !L.live_obs)
        xw_put_textf(w, ws, 3, 0, w->f.note, "%zu observations are too many to show one per "
                     "row: the ln likelihood column holds values, not formulas.", L.n_obs);
    case_evidence_model(w, ws, &L);
    case_observations(w, ws, &L);
    case_posterior(w, ws, &L);
    case_scores(w, ws, &L);
    case_actions(w, ws, &L);
    case_decision(w, ws, &L);
    case_charts(w, ws, &L);
    xw_set_width(w, 0, 0, 36);
    xw_set_width(w, 1, (lxw_col_t)(L.width - 1), 12);
    worksheet_freeze_panes(ws, 3, 0);
    xw_page_setup(w, ws, -1);
    xw_apply_widths(w, ws);
    free(L.model_header);
}

/* --- the Rule sheet: values from lopside ------------------------------------------------- */

