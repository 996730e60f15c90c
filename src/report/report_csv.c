/* The CSV folder: one RFC 4180 file per table (UTF-8, a header row, `.` as the decimal
 * point, numbers as the shortest decimal that reads back to the same double, CRLF line
 * ends), and index.csv listing them.
 *
 * Safety: every file is written to a temporary beside its target inside the folder; only
 * when all of them (and the run's other outputs) are complete are they renamed into
 * place, index.csv last. A failure while writing removes every temporary and leaves
 * every old file untouched. Files of an
 * earlier run that this run does not write stay; index.csv names the files of this run.
 * The folder itself (and any missing parent) is created when missing. */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>

#include "lopside/model/curve_family.h"
#include "lopside/util/outfile.h"
#include "lopside/report/report.h"
#include "lopside/util/strutil.h"
#include "report_csv_private.h"

/* --- low-level output ------------------------------------------------------------- */

const char *csv_score_unit(const lop_problem *p)
{
    return p->score_unit[0] ? p->score_unit : "units";
}

bool csv_taken(const csv_set *set, const char *name)
{
    for (size_t i = 0; i < set->n; i++)
        if (strcasecmp(set->files[i].name, name) == 0)
            return true;
    return false;
}

bool csv_begin(csv_set *set, const char *name, const char *holds)
{
    if (set->status != LOP_OK)
        return false;
    if (set->n == set->cap) {
        size_t cap = set->cap ? 2 * set->cap : 32;
        csv_file *grown = realloc(set->files, cap * sizeof *grown);
        if (!grown) {
            set->status = lop_error_run(set->err, "out of memory");
            return false;
        }
        set->files = grown;
        set->cap = cap;
    }
    csv_file *f = &set->files[set->n];
    memset(f, 0, sizeof *f);
    snprintf(f->name, sizeof f->name, "%s", name);
    snprintf(f->holds, sizeof f->holds, "%s", holds);
    size_t n = strlen(set->dir) + strlen(name) + 2;
    char *path = malloc(n);
    if (!path) {
        set->status = lop_error_run(set->err, "out of memory");
        return false;
    }
    snprintf(path, n, "%s/%s", set->dir, name);
    set->status = lop_outfile_open(&f->out, path, set->err);
    free(path);
    if (set->status != LOP_OK)
        return false;
    set->n++;
    set->cur = f;
    set->fields = 0;
    return true;
}

void csv_str(csv_set *set, const char *s)
{
    FILE *out = set->cur->out.file;
    if (set->fields++)
        fputc(',', out);
    if (!s)
        s = "";
    if (!strpbrk(s, ",\"\r\n")) {
        fputs(s, out);
        return;
    }
    fputc('"', out);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', out);
        fputc(*s, out);
    }
    fputc('"', out);
}

void csv_num(csv_set *set, double v)
{
    char buf[LOP_NUMBER_MAX];
    if (isnan(v))
        snprintf(buf, sizeof buf, "nan");
    else if (isinf(v))
        snprintf(buf, sizeof buf, "%s", v > 0 ? "inf" : "-inf");
    else
        lop_shortest_number(v, buf, sizeof buf);
    csv_str(set, buf);
}

void csv_finite(csv_set *set, double v)
{
    if (isfinite(v))
        csv_num(set, v);
    else
        csv_str(set, "");
}

void csv_size(csv_set *set, size_t v)
{
    char buf[32];
    snprintf(buf, sizeof buf, "%zu", v);
    csv_str(set, buf);
}

void csv_state(csv_set *set, size_t s)
{
    if (lop_problem_numeric_states(set->p))
        csv_num(set, set->p->state_values[s]);
    else
        csv_str(set, set->p->state_labels[s]);
}

void csv_end_line(csv_set *set, bool data)
{
    fputs("\r\n", set->cur->out.file);
    set->fields = 0;
    if (data)
        set->cur->rows++;
}

void csv_header(csv_set *set, const char *const *names)
{
    for (size_t i = 0; names[i]; i++)
        csv_str(set, names[i]);
    csv_end_line(set, false);
}

void csv_end(csv_set *set)
{
    if (!set->cur)
        return;
    lop_outfile *out = &set->cur->out;
    set->cur = NULL;
    if (set->status == LOP_OK)
        set->status = lop_outfile_finish(out, set->err);
}

/* Returns 0 after creating dir and any missing parent, -1 with errno set. */
static int make_folder(const char *dir)
{
    char *path = malloc(strlen(dir) + 1);
    if (!path)
        return -1;
    strcpy(path, dir);
    int rc = 0;
    for (char *s = path + 1;; s++) {
        if (*s != '/' && *s != '\0')
            continue;
        char keep = *s;
        *s = '\0';
        if (mkdir(path, 0777) != 0 && errno != EEXIST) {
            rc = -1;
            break;
        }
        *s = keep;
        if (!keep)
            break;
    }
    int e = errno;
    struct stat st;
    if (rc == 0 && (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode))) {
        rc = -1;
        e = errno ? errno : ENOTDIR;
        if (stat(dir, &st) == 0)
            e = ENOTDIR;
    }
    free(path);
    errno = e;
    return rc;
}

/* --- shared with the workbook --------------------------------------------------------- */

/* Appends to buf[*at..size) what fmt says, never past the end. */
static void append(char *buf, size_t size, size_t *at, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

static void append(char *buf, size_t size, size_t *at, const char *fmt, ...)
{
    if (*at >= size)
        return;
    va_list ap;
    va_start(ap, fmt);
    int k = vsnprintf(buf + *at, size - *at, fmt, ap);
    va_end(ap);
    if (k > 0)
        *at = *at + (size_t)k < size ? *at + (size_t)k : size;
}

void lop_report_row_given(char *buf, size_t size, const lop_problem *p,
                          const lop_rule_result *rule, size_t row)
{
    size_t at = 0, col = 0;
    buf[0] = '\0';
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        const size_t *counts = &rule->counts[row * rule->n_columns + col];
        append(buf, size, &at, "%s", col ? "; " : "");
        if (c->repeats == 1) {
            for (size_t o = 0; o < c->n_outcomes; o++)
                if (counts[o])
                    append(buf, size, &at, "%s = %s", lop_report_channel_name(c),
                           c->outcomes[o]);
        } else {
            append(buf, size, &at, "%s:", lop_report_channel_name(c));
            for (size_t o = 0; o < c->n_outcomes; o++)
                append(buf, size, &at, "%s %s %zu", o ? "," : "", c->outcomes[o], counts[o]);
        }
        col += c->n_outcomes;
    }
}

const char *lop_report_noise_name(const lop_channel *c)
{
    static const char *const names[] = {"gaussian", "scalar", "lognormal", "poisson",
                                        "binomial"};
    if (c->kind == LOP_CHANNEL_TABLE)
        return "table";
    return (size_t)c->noise < sizeof names / sizeof names[0] ? names[c->noise] : "noise";
}

/* --- one function per table; each returns early when its data is absent ------------ */

static void summary_text(csv_set *set, const char *quantity, const char *value,
                         const char *unit)
{
    csv_str(set, quantity);
    csv_str(set, value);
    csv_str(set, unit);
    csv_end_line(set, true);
}

static void summary_number(csv_set *set, const char *quantity, double value,
                           const char *unit)
{
    csv_str(set, quantity);
    csv_num(set, value);
    csv_str(set, unit);
    csv_end_line(set, true);
}

static void table_summary(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_results *r = set->r;
    const lop_case_result *c = &r->kase;
    const char *unit = csv_score_unit(p);
    char holds[512];
    snprintf(holds, sizeof holds, "headline numbers of the case, the rule and the value of "
             "information (scores in %s, as %s) and provenance with the simulation's seed: one "
             "quantity per line, named as in the JSON or as the workbook's defined names",
             unit, lop_problem_orientation(p));
    if (!csv_begin(set, "summary.csv", holds))
        return;
    static const char *const head[] = {"quantity", "value", "unit", NULL};
    csv_header(set, head);
    summary_text(set, "title", p->title, "");
    summary_text(set, "notes", p->notes, "");
    summary_text(set, "orientation", lop_problem_orientation(p), "");
    if (p->estimate) {
        char curve[1024];
        lop_curve_describe(&p->curve, p->payoff ? -1 : 1, curve, sizeof curve);
        summary_text(set, "curve", curve, "");
        summary_number(set, "bayes_estimate", c->bayes_estimate, p->unit);
        summary_number(set, p->payoff ? "expected_payoff" : "expected_loss",
                       lop_problem_oriented(p, c->bayes_estimate_loss), unit);
    } else {
        summary_text(set, "bayes_action", p->actions[c->bayes_action], "");
        summary_number(set, p->payoff ? "expected_payoff" : "expected_loss",
                       lop_problem_oriented(p, c->expected_loss[c->bayes_action]), unit);
        summary_text(set, "runner_up", p->actions[c->runner_up], "");
        summary_number(set, "margin", c->margin, unit);
    }
    if (!p->estimate && c->n_tied > 1) {
        char ties[512] = "";
        for (size_t t = 0, at = 0; t < c->n_tied && at < sizeof ties; t++) {
            int k = snprintf(ties + at, sizeof ties - at, "%s%s", t ? " " : "",
                             p->actions[c->tied[t]]);
            at += k > 0 ? (size_t)k : 0;
        }
        summary_text(set, "ties", ties, "");
    }
    summary_number(set, "evpi", c->evpi, unit);
    if (c->numeric) {
        summary_number(set, "posterior_mean", c->summary.mean, p->unit);
        summary_number(set, "posterior_sd", c->summary.sd, p->unit);
        summary_number(set, "posterior_median", c->summary.median, p->unit);
        summary_number(set, "posterior_mode", c->summary.mode, p->unit);
        summary_number(set, "posterior_q05", c->summary.q05, p->unit);
        summary_number(set, "posterior_q95", c->summary.q95, p->unit);
    }
    if (r->has_rule) {
        const lop_rule_result *rule = &r->rule;
        if (rule->computed)
            summary_number(set, p->payoff ? "bayes_payoff" : "bayes_risk",
                  lop_problem_oriented(p, rule->bayes_risk), unit);
        else
            summary_text(set, "rule_not_computed", rule->not_computed_why, "");
        summary_number(set, p->payoff ? "prior_only_payoff" : "prior_only_risk",
              lop_problem_oriented(p, rule->prior_only_risk), unit);
        if (!p->estimate)
            summary_text(set, "prior_only_action", p->actions[rule->prior_only_action], "");
        if (rule->computed)
            summary_number(set, "value_of_evidence", rule->prior_only_risk - rule->bayes_risk, unit);
    }
    const lop_value_result *v = &r->value;
    if (v->present && v->computed) {
        summary_number(set, "evpi_design", v->evpi, unit);
        summary_number(set, "value_cost", p->value.cost, unit);
        if (v->has_best) {
            summary_text(set, "best_extra_channel",
                         lop_report_channel_name(&p->channels[v->best_channel]), "");
            summary_number(set, "best_extra_n", (double)v->best_n, "measurements");
            summary_number(set, "best_extra_net", v->best_net, unit);
        }
    } else if (v->present) {
        summary_text(set, "value_not_computed", v->not_computed_why, "");
    }
    summary_text(set, "tool", "lopside", "");
    summary_text(set, "version", LOP_VERSION, "");
    summary_text(set, "input_path", set->prov->input_path, "");
    summary_text(set, "input_sha256", set->prov->sha256, "");
    summary_text(set, "generated", set->prov->generated, "UTC");
    if (set->prov->has_seed || r->simulation.run) {
        char seed[32];
        snprintf(seed, sizeof seed, "%llu", set->prov->has_seed
                                                ? set->prov->seed
                                                : (unsigned long long)r->simulation.seed);
        summary_text(set, "seed", seed, "");
    }
    csv_end(set);
}

static void table_posterior(csv_set *set)
{
    const lop_problem *p = set->p;
    char holds[512];
    snprintf(holds, sizeof holds, "each state%s%s%s with its prior (normalized) and its "
             "posterior given every observed value",
             p->unit[0] ? " (" : "", p->unit, p->unit[0] ? ")" : "");
    if (!csv_begin(set, "posterior.csv", holds))
        return;
    static const char *const head[] = {"state", "prior", "posterior", NULL};
    csv_header(set, head);
    for (size_t s = 0; s < p->n_states; s++) {
        csv_state(set, s);
        csv_num(set, p->prior[s]);
        csv_num(set, set->r->kase.posterior[s]);
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void table_actions(csv_set *set)
{
    const lop_problem *p = set->p;
    if (p->estimate)
        return;
    char holds[512];
    snprintf(holds, sizeof holds, "the expected %s (%s) of each action for the case; "
             "bayes is 1 for the Bayes action", lop_problem_orientation(p), csv_score_unit(p));
    if (!csv_begin(set, "actions.csv", holds))
        return;
    const char *head[] = {"action", p->payoff ? "expected_payoff" : "expected_loss", "bayes",
                          NULL};
    csv_header(set, head);
    for (size_t a = 0; a < p->n_actions; a++) {
        csv_str(set, p->actions[a]);
        csv_num(set, lop_problem_oriented(p, set->r->kase.expected_loss[a]));
        csv_str(set, a == set->r->kase.bayes_action ? "1" : "0");
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void table_estimate_curve(csv_set *set)
{
    const lop_problem *p = set->p;
    if (!p->estimate)
        return;
    char holds[512];
    snprintf(holds, sizeof holds, "the expected %s (%s) of every estimate on the estimate "
             "grid, for the case", lop_problem_orientation(p), csv_score_unit(p));
    if (!csv_begin(set, "estimate_curve.csv", holds))
        return;
    const char *head[] = {"estimate", p->payoff ? "expected_payoff" : "expected_loss", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < p->n_estimates; i++) {
        csv_num(set, p->estimates[i]);
        csv_num(set, lop_problem_oriented(p, set->r->kase.estimate_curve[i]));
        csv_end_line(set, true);
    }
    csv_end(set);
}

/* The loss or payoff table as in the file: one line per action, one column per state
 * (finite states and choices; grid problems give bands or lines, shown by the JSON). */
static void table_scores(csv_set *set)
{
    const lop_problem *p = set->p;
    if (p->estimate || p->states_kind == LOP_STATES_GRID)
        return;
    char holds[512];
    snprintf(holds, sizeof holds, "the %s table of the file (%s): one line per action, one "
             "column per state", lop_problem_orientation(p), csv_score_unit(p));
    if (!csv_begin(set, p->payoff ? "payoff.csv" : "loss.csv", holds))
        return;
    csv_str(set, "action");
    for (size_t s = 0; s < p->n_states; s++)
        csv_state(set, s);
    csv_end_line(set, false);
    for (size_t a = 0; a < p->n_actions; a++) {
        csv_str(set, p->actions[a]);
        for (size_t s = 0; s < p->n_states; s++)
            csv_num(set, lop_problem_oriented(p, lop_problem_loss(p, a, s)));
        csv_end_line(set, true);
    }
    csv_end(set);
}

static size_t count_channels(const lop_problem *p, lop_channel_kind kind)
{
    size_t n = 0;
    for (size_t i = 0; i < p->n_channels; i++)
        n += p->channels[i].kind == kind;
    return n;
}

static void table_outcome_model(csv_set *set)
{
    const lop_problem *p = set->p;
    if (!count_channels(p, LOP_CHANNEL_TABLE))
        return;
    if (!csv_begin(set, "outcome_model.csv", "P(outcome | state) of every outcome-table "
                   "channel, one line per channel, state and outcome"))
        return;
    static const char *const head[] = {"channel", "state", "outcome", "probability", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        for (size_t s = 0; s < p->n_states; s++)
            for (size_t o = 0; o < c->n_outcomes; o++) {
                csv_str(set, lop_report_channel_name(c));
                csv_state(set, s);
                csv_str(set, c->outcomes[o]);
                csv_num(set, c->given[s * c->n_outcomes + o]);
                csv_end_line(set, true);
            }
    }
    csv_end(set);
}

static void table_noise_model(csv_set *set)
{
    const lop_problem *p = set->p;
    if (!count_channels(p, LOP_CHANNEL_NOISE))
        return;
    if (!csv_begin(set, "noise_model.csv", "the distribution of one measurement of every "
                   "numeric channel in each state: center is its location (gaussian: the "
                   "mean), spread its sd (lognormal: the sd of the log)"))
        return;
    static const char *const head[] = {"channel", "state", "noise", "center", "spread", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_NOISE)
            continue;
        for (size_t s = 0; s < p->n_states; s++) {
            csv_str(set, lop_report_channel_name(c));
            csv_state(set, s);
            csv_str(set, lop_report_noise_name(c));
            csv_num(set, c->center[s]);
            csv_num(set, c->spread[s]);
            csv_end_line(set, true);
        }
    }
    csv_end(set);
}

static void table_observations(csv_set *set)
{
    const lop_problem *p = set->p;
    size_t n = 0;
    for (size_t i = 0; i < p->n_channels; i++)
        n += p->channels[i].n_observed;
    if (!n)
        return;
    if (!csv_begin(set, "observations.csv", "the case at hand: every observed value, one "
                   "line per channel and repeat (an outcome label or a number)"))
        return;
    static const char *const head[] = {"channel", "repeat", "observed", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        for (size_t k = 0; k < c->n_observed; k++) {
            csv_str(set, lop_report_channel_name(c));
            csv_size(set, k + 1);
            if (c->kind == LOP_CHANNEL_TABLE)
                csv_str(set, c->outcomes[c->observed_outcome[k]]);
            else
                csv_num(set, c->observed_value[k]);
            csv_end_line(set, true);
        }
    }
    csv_end(set);
}

static void table_rule_table(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_rule_result *rule = &set->r->rule;
    if (!set->r->has_rule || !rule->computed || !rule->n_columns)
        return;
    bool decided = rule->numeric_channel < 0 && !p->estimate && rule->row_action;
    char holds[512];
    snprintf(holds, sizeof holds, "every combination of outcomes of the outcome-table "
             "channels (a label per channel with one repeat, counts per outcome with several) "
             "and its probability before any evidence%s", decided ? "; the Bayes action and "
             "its expected score given that row" : "");
    if (!csv_begin(set, "rule_table.csv", holds))
        return;
    csv_str(set, "row");
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        if (c->repeats == 1) {
            csv_str(set, lop_report_channel_name(c));
            continue;
        }
        for (size_t o = 0; o < c->n_outcomes; o++) {
            char name[256];
            snprintf(name, sizeof name, "%s:%s", lop_report_channel_name(c), c->outcomes[o]);
            csv_str(set, name);
        }
    }
    csv_str(set, "probability");
    if (decided) {
        csv_str(set, "action");
        csv_str(set, p->payoff ? "expected_payoff" : "expected_loss");
    }
    csv_end_line(set, false);
    for (size_t row = 0; row < rule->n_rows; row++) {
        csv_size(set, row + 1);
        size_t col = 0;
        for (size_t i = 0; i < p->n_channels; i++) {
            const lop_channel *c = &p->channels[i];
            if (c->kind != LOP_CHANNEL_TABLE)
                continue;
            const size_t *counts = &rule->counts[row * rule->n_columns + col];
            for (size_t o = 0; o < c->n_outcomes; o++) {
                if (c->repeats > 1)
                    csv_size(set, counts[o]);
                else if (counts[o])
                    csv_str(set, c->outcomes[o]);
            }
            col += c->n_outcomes;
        }
        csv_num(set, rule->row_probability[row]);
        if (decided) {
            csv_str(set, p->actions[rule->row_action[row]]);
            csv_num(set, lop_problem_oriented(p, rule->row_expected_loss[row]));
        }
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void table_rule_grid(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_rule_result *rule = &set->r->rule;
    if (!set->r->has_rule || !rule->computed || rule->numeric_channel < 0 || !rule->n_grid)
        return;
    if (p->estimate ? !rule->grid_estimate : !rule->grid_action)
        return;
    char holds[512], measure[160];
    lop_report_measurement_name(measure, sizeof measure, &p->channels[rule->numeric_channel]);
    snprintf(holds, sizeof holds, "the Bayes %s at every point x of the measurement grid "
             "of %s, for every row of rule_table.csv (row; given describes it)",
             p->estimate ? "estimate" : "action", measure);
    if (!csv_begin(set, "rule_grid.csv", holds))
        return;
    const char *head[] = {"row", "given", "x", p->estimate ? "estimate" : "action", NULL};
    csv_header(set, head);
    char given[1024];
    for (size_t row = 0; row < rule->n_rows; row++) {
        lop_report_row_given(given, sizeof given, p, rule, row);
        for (size_t i = 0; i < rule->n_grid; i++) {
            csv_size(set, row + 1);
            csv_str(set, given);
            csv_num(set, rule->grid[i]);
            if (p->estimate)
                csv_num(set, rule->grid_estimate[row * rule->n_grid + i]);
            else
                csv_str(set, p->actions[rule->grid_action[row * rule->n_grid + i]]);
            csv_end_line(set, true);
        }
    }
    csv_end(set);
}

static void table_switch_points(csv_set *set)
{
    const lop_problem *p = set->p;
    const lop_rule_result *rule = &set->r->rule;
    if (!set->r->has_rule || !rule->computed || rule->numeric_channel < 0 || p->estimate)
        return;
    char holds[512], measure[160];
    lop_report_measurement_name(measure, sizeof measure, &p->channels[rule->numeric_channel]);
    snprintf(holds, sizeof holds, "the values x of %s where the Bayes action changes, from the "
             "action below x to the one above, per row of rule_table.csv (empty when one action "
             "is best everywhere)", measure);
    if (!csv_begin(set, "switch_points.csv", holds))
        return;
    static const char *const head[] = {"row", "given", "x", "from", "to", NULL};
    csv_header(set, head);
    char given[1024];
    for (size_t k = 0; k < rule->n_switches; k++) {
        const lop_switch_point *sp = &rule->switches[k];
        lop_report_row_given(given, sizeof given, p, rule, sp->row);
        csv_size(set, sp->row + 1);
        csv_str(set, given);
        csv_num(set, sp->x);
        csv_str(set, p->actions[sp->from]);
        csv_str(set, p->actions[sp->to]);
        csv_end_line(set, true);
    }
    csv_end(set);
}

static void table_warnings(csv_set *set)
{
    if (!csv_begin(set, "warnings.csv", "the warnings of the run, one per line (none: only "
                   "the header)"))
        return;
    static const char *const head[] = {"warning", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < set->r->n_warnings; i++) {
        csv_str(set, set->r->warnings[i]);
        csv_end_line(set, true);
    }
    csv_end(set);
}

/* index.csv: one line per file written by this run (itself excluded). */
static void table_index(csv_set *set)
{
    size_t n = set->n;
    if (!csv_begin(set, "index.csv", "this list"))
        return;
    static const char *const head[] = {"file", "rows", "holds", NULL};
    csv_header(set, head);
    for (size_t i = 0; i < n; i++) {
        csv_str(set, set->files[i].name);
        csv_size(set, set->files[i].rows);
        csv_str(set, set->files[i].holds);
        csv_end_line(set, true);
    }
    csv_end(set);
}

lop_status lop_report_csv(const char *dir, const lop_problem *p, const lop_results *r,
                          const lop_provenance *prov, lop_outfile_list *pending,
                          lop_error *err)
{
    if (make_folder(dir) != 0)
        return lop_error_run(err, "cannot write %s: %s", dir, strerror(errno));
    csv_set *set = calloc(1, sizeof *set);
    if (!set)
        return lop_error_run(err, "out of memory");
    *set = (csv_set){.dir = dir, .p = p, .r = r, .prov = prov, .err = err, .status = LOP_OK};
    void (*const tables[])(csv_set *) = {
        table_summary,      table_posterior,   table_actions,
        table_estimate_curve, table_scores,       table_outcome_model, table_noise_model,
        table_observations, table_rule_table,  table_rule_grid,
        table_switch_points, csv_tables_studies, table_warnings, table_index,
    };
    for (size_t t = 0; t < sizeof tables / sizeof tables[0] && set->status == LOP_OK; t++)
        tables[t](set);
    csv_end(set);
    /* All complete: hand them over to be renamed, index.csv (the last) after the others. */
    for (size_t i = 0; i < set->n; i++) {
        if (set->status == LOP_OK)
            set->status = lop_outfile_defer(pending, &set->files[i].out, err);
        else
            lop_outfile_abandon(&set->files[i].out);
    }
    lop_status st = set->status;
    free(set->files);
    free(set);
    return st;
}
