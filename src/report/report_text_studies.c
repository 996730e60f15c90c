/* Text sections of the value of information, sweeps and designs. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "lopside/input/path.h"
#include "lopside/report/report.h"
#include "report_studies.h"

/* Rows of a sweep shown at a terminal; JSON has them all. */
#define SWEEP_ROWS 25
/* Rate columns shown at a terminal. */
#define RATE_COLUMNS 4
/* Switch points listed per sweep point at a terminal; the rest are counted. */
#define SWITCHES_LISTED 3

static const char *units(const lop_problem *p)
{
    return p->score_unit[0] ? p->score_unit : "units";
}

static const char *risk_word(const lop_problem *p)
{
    return p->payoff ? "Bayes payoff" : "Bayes risk";
}

/* A number of a range end: "-inf"/"inf" spelled as words. */
static void print_end(FILE *out, double v)
{
    if (isinf(v))
        fputs(v < 0 ? "no lower end" : "no upper end", out);
    else
        fprintf(out, "%.6g", v);
}

void lop_report_text_flatness(FILE *out, const lop_problem *p, const lop_flatness *f,
                              const char *what, const char *indent)
{
    if (!f->computed)
        return;
    fprintf(out, "%s%s within 1%%, 5%%, 10%% of the optimum's %s:", indent, what,
            lop_problem_orientation(p));
    for (size_t k = 0; k < LOP_FLAT_LEVELS; k++) {
        fputs(k ? "; " : " ", out);
        print_end(out, f->range[k].from);
        fputs(" to ", out);
        print_end(out, f->range[k].to);
    }
    fputc('\n', out);
}

static void print_value(FILE *out, const lop_problem *p, const lop_results *r)
{
    const lop_value_result *v = &r->value;
    fprintf(out, "\nValue of information (%s per decision)\n", units(p));
    for (size_t i = 0; i < v->n_next; i++) {
        const lop_value_next *n = &v->next[i];
        const char *name = lop_report_channel_name(&p->channels[n->channel]);
        if (n->computed)
            fprintf(out, "  For the case at hand, one more %s measurement is worth %.6g\n", name,
                    n->value);
        else
            fprintf(out, "  For the case at hand, one more %s measurement: not computed: %s\n",
                    name, n->not_computed_why);
    }
    if (!v->computed) {
        fprintf(out, "  Design values not computed: %s\n", v->not_computed_why);
        return;
    }
    fprintf(out, "  Perfect information (EVPI of the design): %.6g\n", v->evpi);
    fprintf(out, "  More measurements than the design's repeats, at %.6g each:\n",
            p->value.cost);
    size_t w = 7;
    for (size_t i = 0; i < v->n_extra; i++)
        w = strlen(lop_report_channel_name(&p->channels[v->extra[i].channel])) > w
                ? strlen(lop_report_channel_name(&p->channels[v->extra[i].channel]))
                : w;
    fprintf(out, "    %-*s  %5s  %12s  %12s\n", (int)w, "channel", "more", "EVSI",
            "net of cost");
    bool on_mean = false;
    for (size_t i = 0; i < v->n_extra; i++) {
        const lop_value_extra *x = &v->extra[i];
        fprintf(out, "    %-*s  %5zu", (int)w, lop_report_channel_name(&p->channels[x->channel]),
                x->n);
        if (x->computed)
            fprintf(out, "  %12.6g  %12.6g%s\n", x->evsi, x->net, x->on_the_mean ? " *" : "");
        else
            fprintf(out, "  not computed: %s\n", x->not_computed_why);
        on_mean |= x->on_the_mean;
    }
    if (on_mean)
        fputs("    * deciding on the mean of the repeats, which is not a sufficient summary "
              "for this channel: at least this much\n",
              out);
    if (v->has_best)
        fprintf(out, "  Best: %zu more %s measurement%s, net %.6g %s per decision\n", v->best_n,
                lop_report_channel_name(&p->channels[v->best_channel]),
                v->best_n == 1 ? "" : "s", v->best_net, units(p));
    else
        fputs("  Best: none; no extra measurement is worth its cost\n", out);
}

/* Which of a sweep's points to show: all, or evenly spread SWEEP_ROWS of them. */
static size_t shown_index(size_t k, size_t shown, size_t n)
{
    return shown == n ? k : k * (n - 1) / (shown - 1);
}

/* Rate columns: P(a | s) (finite states) or P(a) (grid states) for every action but the
 * first (the rates of each state sum to 1), when they fit. */
static size_t rate_columns(const lop_problem *p, const lop_sweep_result *w, size_t n_actions)
{
    if (p->estimate)
        return 0;
    size_t n = (n_actions - 1) * (w->by_state ? p->n_states : 1);
    return n <= RATE_COLUMNS ? n : 0;
}

/* The head of a rate column: "P(a|s)" or "P(a)". */
static void rate_head(char *head, size_t size, const lop_problem *p, const lop_sweep_result *w,
                      size_t a, size_t s)
{
    if (w->by_state)
        snprintf(head, size, "P(%s|%s)", p->actions[a], p->state_labels[s]);
    else
        snprintf(head, size, "P(%s)", p->actions[a]);
}

/* One width for every rate column: the widest head, at least 12. */
static int rate_width(const lop_problem *p, const lop_sweep_result *w, size_t n_actions)
{
    size_t S = w->by_state ? p->n_states : 1, width = 12;
    for (size_t a = 1; a < n_actions; a++)
        for (size_t s = 0; s < S; s++) {
            char head[200];
            rate_head(head, sizeof head, p, w, a, s);
            width = strlen(head) > width ? strlen(head) : width;
        }
    return (int)width;
}

static void print_rate_heads(FILE *out, const lop_problem *p, const lop_sweep_result *w,
                             size_t n_actions)
{
    size_t S = w->by_state ? p->n_states : 1;
    int width = rate_width(p, w, n_actions);
    for (size_t a = 1; a < n_actions; a++)
        for (size_t s = 0; s < S; s++) {
            char head[200];
            rate_head(head, sizeof head, p, w, a, s);
            fprintf(out, "  %*s", width, head);
        }
}

static void print_rates(FILE *out, const lop_problem *p, const lop_sweep_result *w,
                        const double *rates, size_t n_actions)
{
    size_t S = w->by_state ? p->n_states : 1;
    int width = rate_width(p, w, n_actions);
    for (size_t a = 1; a < n_actions; a++)
        for (size_t s = 0; s < S; s++) {
            if (rates)
                fprintf(out, "  %*.6g", width, rates[a * S + s]);
            else
                fprintf(out, "  %*s", width, "-");
        }
}

/* Writes to buf a point's switch points in order, "-2.20531, 1.20531" ("none" when the
 * action never changes), the first SWITCHES_LISTED and "and N more" beyond them. */
static void switch_list(char *buf, size_t size, const lop_sweep_point *pt)
{
    size_t at = 0;
    snprintf(buf, size, "none");
    for (size_t q = 0; q < pt->n_switches && q < SWITCHES_LISTED && at < size; q++) {
        int k = snprintf(buf + at, size - at, "%s%.6g", q ? ", " : "", pt->switches[q].x);
        at += k > 0 ? (size_t)k : 0;
    }
    if (pt->n_switches > SWITCHES_LISTED && at < size)
        snprintf(buf + at, size - at, " and %zu more", pt->n_switches - SWITCHES_LISTED);
}

/* Says above a path sweep's table what its switch-point column lists. */
static void print_switch_note(FILE *out, const lop_problem *p, const lop_results *r)
{
    if (p->estimate || !r->has_rule || r->rule.numeric_channel < 0)
        return;
    char measure[160];
    lop_report_measurement_name(measure, sizeof measure,
                                &p->channels[r->rule.numeric_channel]);
    fprintf(out, "  switch points: where the Bayes action changes along %s, in order%s\n",
            measure, r->rule.n_columns > 0 ? ", of every outcome row together (the "
            "CSV and JSON give each one's row)" : "");
}

static void print_path_sweep(FILE *out, const lop_problem *p, const lop_results *r,
                             const lop_sweep_result *w)
{
    const lop_sweep_spec *spec = w->spec;
    size_t n = w->nx * w->ny, shown = n < SWEEP_ROWS ? n : SWEEP_ROWS;
    size_t cols = rate_columns(p, w, p->n_actions);
    int sw_width = 16;
    for (size_t k = 0; !p->estimate && k < shown; k++) {
        char sw[128];
        switch_list(sw, sizeof sw, &w->points[shown_index(k, shown, n)]);
        sw_width = (int)strlen(sw) > sw_width ? (int)strlen(sw) : sw_width;
    }
    print_switch_note(out, p, r);
    fprintf(out, "  %14.14s", LOP_SWEEP_AXIS(spec, 'x'));
    if (spec->y)
        fprintf(out, "  %14.14s", LOP_SWEEP_AXIS(spec, 'y'));
    fprintf(out, "  %12s  %12s  %14s", risk_word(p), "EVPI",
            p->estimate ? "case estimate" : "case action");
    if (p->estimate)
        fprintf(out, "  %-24s", "estimates within 1%");
    else
        fprintf(out, "  %-*s", sw_width, "switch points");
    if (cols)
        print_rate_heads(out, p, w, p->n_actions);
    fputc('\n', out);
    for (size_t k = 0; k < shown; k++) {
        const lop_sweep_point *pt = &w->points[shown_index(k, shown, n)];
        fprintf(out, "  %14.6g", pt->x);
        if (spec->y)
            fprintf(out, "  %14.6g", pt->y);
        if (pt->computed)
            fprintf(out, "  %12.6g  %12.6g", lop_problem_oriented(p, pt->bayes_risk), pt->evpi);
        else
            fprintf(out, "  %12s  %12s", "-", "-");
        if (p->estimate) {
            char range[64] = "-";
            if (pt->flatness.computed)
                snprintf(range, sizeof range, "%.6g to %.6g", pt->flatness.range[0].from,
                         pt->flatness.range[0].to);
            fprintf(out, "  %14.6g  %-24s", pt->case_estimate, range);
        } else {
            char sw[128];
            switch_list(sw, sizeof sw, pt);
            fprintf(out, "  %14s  %-*s", p->actions[pt->case_action], sw_width, sw);
            if (cols)
                print_rates(out, p, w, pt->rates, p->n_actions);
        }
        fputc('\n', out);
    }
    if (shown < n)
        fprintf(out, "  (%zu of %zu points; all of them in the JSON output)\n", shown, n);
}

static void print_threshold_row(FILE *out, const lop_problem *p, const lop_sweep_result *w,
                                size_t j)
{
    const lop_threshold_row *row = &w->rows[j];
    const char *indent = w->spec->y ? "    " : "  ";
    if (w->spec->y)
        fprintf(out, "  %s = %.6g\n", w->spec->y, row->y);
    if (row->sdt)
        fprintf(out, "%sd' = %.6g (two labelled states, equal-variance gaussian evidence)\n",
                indent, row->d_prime);
    size_t cols = rate_columns(p, w, 2);
    fprintf(out, "%s%14s", indent, "threshold");
    if (cols)
        print_rate_heads(out, p, w, 2);
    fprintf(out, "  %15s", p->payoff ? "expected payoff" : "expected loss");
    if (row->sdt)
        fprintf(out, "  %10s  %10s", "c", "beta");
    fputc('\n', out);
    size_t n = w->nx, shown = n < SWEEP_ROWS ? n : SWEEP_ROWS, nearest = n;
    double gap = INFINITY;
    for (size_t k = 0; row->has_bayes_threshold && k < shown; k++) {
        const lop_sweep_point *pt = &w->points[j * n + shown_index(k, shown, n)];
        if (fabs(pt->x - row->bayes_threshold) < gap) {
            gap = fabs(pt->x - row->bayes_threshold);
            nearest = k;
        }
    }
    for (size_t k = 0; k < shown; k++) {
        const lop_sweep_point *pt = &w->points[j * n + shown_index(k, shown, n)];
        fprintf(out, "%s%14.6g", indent, pt->x);
        if (cols)
            print_rates(out, p, w, pt->rates, 2);
        fprintf(out, "  %15.6g", lop_problem_oriented(p, pt->expected_loss));
        if (row->sdt)
            fprintf(out, "  %10.4g  %10.4g", pt->criterion, pt->beta);
        fputs(k == nearest ? "   <- nearest the Bayes threshold\n" : "\n", out);
    }
    if (shown < n)
        fprintf(out, "%s(%zu of %zu thresholds; all of them in the JSON output)\n", indent,
                shown, n);
    if (!row->has_bayes_threshold) {
        fprintf(out, "%sNo threshold beats always choosing one action (%s %.6g %s)\n", indent,
                lop_problem_orientation(p), lop_problem_oriented(p, row->bayes_threshold_loss),
                units(p));
        return;
    }
    fprintf(out, "%sBayes threshold: %.10g (%s %.6g %s per decision)\n", indent,
            row->bayes_threshold, p->payoff ? "payoff" : "loss",
            lop_problem_oriented(p, row->bayes_threshold_loss), units(p));
    lop_report_text_flatness(out, p, &row->flatness, "Thresholds", indent);
}

static void print_sweep(FILE *out, const lop_problem *p, const lop_results *r,
                        const lop_sweep_result *w)
{
    const lop_sweep_spec *spec = w->spec;
    if (w->threshold) {
        char measure[160];
        lop_report_threshold_measurement(measure, sizeof measure, p);
        fprintf(out, "\nSweep %s: thresholds on %s from %.6g to %.6g (%zu points); %s at or "
                     "above the threshold, %s below\n",
                spec->name, measure, spec->x_from, spec->x_to, w->nx,
                p->actions[1], p->actions[0]);
        for (size_t j = 0; j < w->ny; j++)
            print_threshold_row(out, p, w, j);
        return;
    }
    fprintf(out, "\nSweep %s: %s from %.6g to %.6g (%zu points)", spec->name, spec->x,
            spec->x_from, spec->x_to, spec->x_points);
    if (spec->y)
        fprintf(out, " by %s from %.6g to %.6g (%zu points)", spec->y, spec->y_from, spec->y_to,
                spec->y_points);
    fprintf(out, "; scores in %s\n", units(p));
    print_path_sweep(out, p, r, w);
}

/* A goal in words: "the switch point", "the rate of choosing say_yes", ... */
static const char *goal_words(const lop_problem *p, const lop_design_spec *d, char *buf,
                              size_t size)
{
    switch (d->goal) {
    case LOP_GOAL_SWITCH_POINT:
        return "the switch point";
    case LOP_GOAL_RISK:
        return p->payoff ? "the Bayes payoff" : "the Bayes risk";
    case LOP_GOAL_ACTION:
        return "the case's Bayes action";
    case LOP_GOAL_CHOICE_RATE:
        break;
    }
    snprintf(buf, size, "the rate of choosing %s", p->actions[d->goal_action]);
    return buf;
}

static void print_design(FILE *out, const lop_problem *p, const lop_design_result *d)
{
    const lop_design_spec *spec = d->spec;
    char goal[160];
    const char *name = goal_words(p, spec, goal, sizeof goal);
    fprintf(out, "\nDesign %s: %s from %.6g to %.6g, so that ", spec->name, spec->vary,
            spec->from, spec->to);
    if (spec->goal == LOP_GOAL_ACTION)
        fprintf(out, "the case's Bayes action becomes %s\n", p->actions[spec->goal_action]);
    else
        fprintf(out, "%s is %.6g\n", name, spec->equals);
    if (d->reached) {
        fprintf(out, "  %s = %.10g", spec->vary, d->value);
        if (spec->goal == LOP_GOAL_ACTION)
            fprintf(out, " (where %s ties with the best other action)",
                    p->actions[spec->goal_action]);
        else
            fprintf(out, " (%s there: %.10g)", name, d->achieved);
        fprintf(out, "; %zu problems solved\n", d->evaluations);
        return;
    }
    fputs("  not reached in the bracket", out);
    if (d->note)
        fprintf(out, ": %s", d->note);
    if (spec->goal == LOP_GOAL_ACTION) {
        fputs("; the case's Bayes action over the bracket: ", out);
        for (size_t i = 0; i < d->n_seen; i++)
            fprintf(out, "%s%s", i ? ", " : "", p->actions[d->seen[i]]);
        fputc('\n', out);
        return;
    }
    if (d->range_lo <= d->range_hi) {
        fprintf(out, "; over the bracket %s spans ", name);
        print_end(out, d->range_lo);
        fputs(" to ", out);
        print_end(out, d->range_hi);
    }
    fputc('\n', out);
}

void lop_report_text_studies(FILE *out, const lop_problem *p, const lop_results *r)
{
    if (r->value.present)
        print_value(out, p, r);
    for (size_t k = 0; k < r->n_sweeps; k++)
        print_sweep(out, p, r, &r->sweeps[k]);
    for (size_t k = 0; k < r->n_designs; k++)
        print_design(out, p, &r->designs[k]);
}
