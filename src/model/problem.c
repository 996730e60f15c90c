#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/keys.h"
#include "lopside/model/posterior.h"
#include "lopside/model/prior.h"
#include "lopside/model/problem.h"
#include "lopside/util/strutil.h"
#include "problem_build.h"

/* A step must divide the grid's range this exactly (relative to the range). */
#define STEP_SLACK 1e-9

lop_status pb_error(builder *b, int line, const char *section, const char *key,
                    const char *fmt, ...)
{
    char message[LOP_ERROR_TEXT];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(message, sizeof message, fmt, ap);
    va_end(ap);
    return lop_error_input(b->err, b->cfg->path, line, section, key, "%s", message);
}

lop_status pb_no_memory(builder *b)
{
    return lop_error_run(b->err, "out of memory");
}

const lop_entry *pb_find(builder *b, const char *section, const char *key)
{
    return lop_config_find(b->cfg, section, key);
}

int pb_section_line(builder *b, const char *section)
{
    const lop_section *s = lop_config_section(b->cfg, section);
    return s ? s->line : 0;
}

lop_status pb_number(builder *b, const char *section, const char *key, bool required,
                     double fallback, double *out)
{
    const lop_entry *e = pb_find(b, section, key);
    if (!e) {
        if (required)
            return pb_error(b, pb_section_line(b, section), section, key, "missing (required)");
        *out = fallback;
        return LOP_OK;
    }
    return lop_parse_number(b->cfg, e, false, out, b->err);
}

void pb_take_list(lop_list *list, char ***items, size_t *n)
{
    *items = list->items;
    *n = list->n;
    list->items = NULL;
    list->n = 0;
    lop_list_free(list);
}

/* Splits "evidence.swab" into kind "evidence" and name "swab" (empty when absent). */
static void split_section(const char *section, char *kind, size_t size, const char **name)
{
    const char *dot = strchr(section, '.');
    size_t n = dot ? (size_t)(dot - section) : strlen(section);
    snprintf(kind, size, "%.*s", (int)n, section);
    *name = dot ? dot + 1 : "";
}

static lop_status check_sections(builder *b)
{
    for (size_t i = 0; i < b->cfg->n_sections; i++) {
        const lop_section *s = &b->cfg->sections[i];
        char kind[96];
        const char *name;
        split_section(s->name, kind, sizeof kind, &name);
        const lop_section_spec *spec = lop_keys_section(kind);
        if (!spec) {
            const char *near = lop_keys_suggest_section(kind);
            return pb_error(b, s->line, s->name, NULL, "unknown section%s%s%s",
                            near ? "; did you mean [" : "", near ? near : "",
                            near ? "]?" : "");
        }
        if (name[0] && !spec->named)
            return pb_error(b, s->line, s->name, NULL,
                            "[%s] takes no name after a dot; write [%s]", kind, kind);
        if (s->name[strlen(kind)] == '.' && !name[0])
            return pb_error(b, s->line, s->name, NULL, "a name must follow the dot");
        if (spec->name_required && !name[0])
            return pb_error(b, s->line, s->name, NULL, "give the section a name: [%s.NAME]",
                            kind);
        for (size_t j = 0; j < i; j++)
            if (strcmp(b->cfg->sections[j].name, s->name) == 0)
                return pb_error(b, s->line, s->name, NULL,
                                "section given twice (first on line %d)",
                                b->cfg->sections[j].line);
    }
    if (lop_config_section(b->cfg, "loss") && lop_config_section(b->cfg, "payoff"))
        return pb_error(b, pb_section_line(b, "payoff"), "payoff", NULL,
                        "give exactly one of [loss] and [payoff] ([loss] is on line %d)",
                        pb_section_line(b, "loss"));
    return LOP_OK;
}

/* Every key must be known in its section and handled by this version. Action rows of
 * [loss]/[payoff] and the override paths of [rule.NAME] are checked where they are
 * read. */
static lop_status check_keys(builder *b)
{
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (e->section[0] == '\0')
            return pb_error(b, e->line, NULL, e->key, "a key before any [section] header");
        char kind[96];
        const char *name;
        split_section(e->section, kind, sizeof kind, &name);
        const lop_key_spec *spec = lop_keys_find(kind, e->key);
        bool free_form = strcmp(kind, "loss") == 0 || strcmp(kind, "payoff") == 0 ||
                         (strcmp(kind, "rule") == 0 && strchr(e->key, '.'));
        if (!spec && free_form)
            continue;
        if (!spec) {
            const char *near = lop_keys_suggest(kind, e->key);
            return pb_error(b, e->line, e->section, e->key, "unknown key%s%s%s",
                            near ? "; did you mean `" : "", near ? near : "",
                            near ? "`?" : "");
        }
    }
    return LOP_OK;
}

static lop_status require_section(builder *b, const char *section, const char *what)
{
    if (!lop_config_section(b->cfg, section))
        return pb_error(b, 0, section, NULL, "missing section: %s", what);
    return LOP_OK;
}

static lop_status take_text(builder *b, const char *section, const char *key, bool required,
                            char **out)
{
    const lop_entry *e = pb_find(b, section, key);
    if (!e) {
        if (required)
            return pb_error(b, pb_section_line(b, section), section, key, "missing (required)");
        *out = lop_strdup("");
    } else {
        if (required && e->value[0] == '\0')
            return pb_error(b, e->line, section, key, "the value is empty");
        *out = lop_strdup(e->value);
        /* A continued text reads as one line in reports. */
        for (char *c = *out; c && *c; c++)
            if (*c == '\n')
                *c = ' ';
    }
    return *out ? LOP_OK : pb_no_memory(b);
}

static lop_status build_problem_section(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "problem", "[problem] with at least a title") != LOP_OK)
        return LOP_EINPUT;
    if (take_text(b, "problem", "title", true, &p->title) != LOP_OK ||
        take_text(b, "problem", "notes", false, &p->notes) != LOP_OK ||
        take_text(b, "problem", "unit", false, &p->unit) != LOP_OK ||
        take_text(b, "problem", "score_unit", false, &p->score_unit) != LOP_OK ||
        pb_number(b, "problem", "accuracy", false, lop_keys_default("problem", "accuracy"),
                  &p->accuracy) != LOP_OK)
        return b->err->status;
    const lop_entry *acc = pb_find(b, "problem", "accuracy");
    if (acc && !(p->accuracy >= 1e-12 && p->accuracy <= 0.1))
        return pb_error(b, acc->line, "problem", "accuracy",
                        "expected a number from 1e-12 to 0.1 (an error relative to each "
                        "number's scale), found %s", acc->value);
    double levels;
    if (pb_number(b, "problem", "refine", false, lop_keys_default("problem", "refine"), &levels) != LOP_OK)
        return b->err->status;
    const lop_entry *refine = pb_find(b, "problem", "refine");
    if (refine &&
        !(levels >= LOP_REFINE_MIN && levels <= LOP_REFINE_MAX && levels == floor(levels)))
        return pb_error(b, refine->line, "problem", "refine",
                        "expected a whole number from %d (a quarter of the cells) to %d, "
                        "found %s", LOP_REFINE_MIN, LOP_REFINE_MAX, refine->value);
    p->refine = (int)levels;
    return LOP_OK;
}

static lop_status build_grid_states(builder *b)
{
    lop_problem *p = b->p;
    const lop_entry *points = pb_find(b, "states", "points");
    const lop_entry *step = pb_find(b, "states", "step");
    double from, to, limit;
    if (pb_number(b, "states", "from", true, 0, &from) != LOP_OK ||
        pb_number(b, "states", "to", true, 0, &to) != LOP_OK ||
        pb_number(b, "states", "max_points", false, lop_keys_default("states", "max_points"),
                  &limit) != LOP_OK)
        return b->err->status;
    if (!(to > from))
        return pb_error(b, pb_find(b, "states", "to")->line, "states", "to",
                        "`to` (%g) must be above `from` (%g)", to, from);
    if (!isfinite(to - from))
        return pb_error(b, pb_find(b, "states", "to")->line, "states", "to",
                        "the range from %g to %g is too wide to divide into cells", from, to);
    const lop_entry *max_entry = pb_find(b, "states", "max_points");
    if (max_entry && (limit < 2 || limit != floor(limit)))
        return pb_error(b, max_entry->line, "states", "max_points",
                        "expected a whole number of at least 2, found `%s`", max_entry->value);
    if (points && step)
        return pb_error(b, step->line, "states", "step",
                        "give points or step, not both (points on line %d)", points->line);
    double n = lop_keys_default("states", "points");
    const lop_entry *size_entry = points ? points : step;
    if (points) {
        size_t count;
        if (lop_parse_count(b->cfg, points, 2, (size_t)-1 / 2, &count, b->err) != LOP_OK)
            return b->err->status;
        n = (double)count;
    } else if (step) {
        double h;
        if (lop_parse_number(b->cfg, step, false, &h, b->err) != LOP_OK)
            return b->err->status;
        if (!(h > 0))
            return pb_error(b, step->line, "states", "step", "must be > 0");
        double cells = (to - from) / h;
        if (fabs(cells - round(cells)) > STEP_SLACK * fmax(1, cells))
            return pb_error(b, step->line, "states", "step",
                            "step %g does not divide the range %g to %g into whole cells", h,
                            from, to);
        n = round(cells) + 1;
    }
    n = lop_problem_refined_cells(n - 1, p->refine) + 1;
    if (n > limit)
        return pb_error(b, size_entry ? size_entry->line : pb_section_line(b, "states"),
                        "states", size_entry ? size_entry->key : "points",
                        "%.0f grid points exceed the limit of %.0f; raise it with "
                        "`max_points = %.0f` in [states] if the machine has the memory",
                        n, limit, n);
    p->states_kind = LOP_STATES_GRID;
    p->n_states = (size_t)n;
    p->step = (to - from) / (n - 1);
    p->state_values = malloc(p->n_states * sizeof *p->state_values);
    if (!p->state_values)
        return pb_no_memory(b);
    for (size_t i = 0; i < p->n_states; i++)
        p->state_values[i] = from + p->step * (double)i;
    p->state_values[p->n_states - 1] = to;
    return LOP_OK;
}

static lop_status build_states(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "states", "[states] with labels, values, or from and to") != LOP_OK)
        return LOP_EINPUT;
    const lop_entry *labels = pb_find(b, "states", "labels");
    const lop_entry *values = pb_find(b, "states", "values");
    const lop_entry *from = pb_find(b, "states", "from");
    int given = (labels != NULL) + (values != NULL) + (from != NULL);
    if (given > 1) {
        const lop_entry *second = from ? from : values;
        return pb_error(b, second->line, "states", second->key,
                        "give one of labels, values, or a grid (from, to, points or step)");
    }
    if (given == 0)
        return pb_error(b, pb_section_line(b, "states"), "states", NULL,
                        "give `labels = a, b, ...`, `values = 1, 2, ...`, or a grid with "
                        "`from`, `to` and `points` or `step`");
    static const char *const grid_keys[] = {"to", "points", "step", "max_points"};
    if (!from)
        for (size_t i = 0; i < sizeof grid_keys / sizeof *grid_keys; i++) {
            const lop_entry *g = pb_find(b, "states", grid_keys[i]);
            if (g)
                return pb_error(b, g->line, "states", g->key,
                                "belongs to a grid of states, which needs `from` too");
        }
    if (from)
        return build_grid_states(b);
    if (labels) {
        lop_list list;
        if (lop_parse_labels(b->cfg, labels, &list, b->err) != LOP_OK)
            return b->err->status;
        p->states_kind = LOP_STATES_LABELS;
        pb_take_list(&list, &p->state_labels, &p->n_states);
        if (p->n_states < 2)
            return pb_error(b, labels->line, "states", "labels",
                            "a decision under uncertainty needs at least two states");
        return LOP_OK;
    }
    p->states_kind = LOP_STATES_VALUES;
    if (lop_parse_numbers(b->cfg, values, &p->state_values, &p->n_states, b->err) != LOP_OK)
        return b->err->status;
    if (p->n_states < 2)
        return pb_error(b, values->line, "states", "values",
                        "a decision under uncertainty needs at least two states");
    lop_list list;
    if (lop_parse_list(b->cfg, values, &list, b->err) != LOP_OK)
        return b->err->status;
    pb_take_list(&list, &p->state_labels, &p->n_states);
    for (size_t i = 0; i < p->n_states; i++)
        for (size_t j = 0; j < i; j++)
            if (p->state_values[i] == p->state_values[j])
                return pb_error(b, lop_entry_item_line(values, i), "states", "values",
                                "duplicate value %s (entries %zu and %zu)",
                                p->state_labels[i], j + 1, i + 1);
    /* Quantiles, estimates and switch points read the states in order. */
    for (size_t i = 1; i < p->n_states; i++)
        if (p->state_values[i] < p->state_values[i - 1])
            return pb_error(b, lop_entry_item_line(values, i), "states", "values",
                            "values must increase: entry %zu (%s) comes after %s", i + 1,
                            p->state_labels[i], p->state_labels[i - 1]);
    return LOP_OK;
}

static lop_status build_grid_prior(builder *b)
{
    lop_problem *p = b->p;
    const lop_entry *weights = pb_find(b, "prior", "weights");
    if (weights)
        return pb_error(b, weights->line, "prior", "weights",
                        "a grid of states takes a prior `family`, not weights");
    p->prior = malloc(p->n_states * sizeof *p->prior);
    p->log_prior = malloc(p->n_states * sizeof *p->log_prior);
    if (!p->prior || !p->log_prior)
        return pb_no_memory(b);
    p->prior_given_sum = 1;
    if (lop_prior_grid(b->cfg, p->state_values, p->n_states, p->step, p->log_prior,
                       &p->prior_outside, b->err) != LOP_OK)
        return b->err->status;
    for (size_t i = 0; i < p->n_states; i++)
        p->prior[i] = exp(p->log_prior[i]);
    lop_posterior_summarize(p->state_values, p->n_states, true, p->prior, &p->prior_summary);
    return LOP_OK;
}

static lop_status build_prior(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "prior", "[prior] with weights or a family") != LOP_OK)
        return LOP_EINPUT;
    if (p->states_kind == LOP_STATES_GRID)
        return build_grid_prior(b);
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (strncmp(e->section, "prior", 5) == 0 && strcmp(e->key, "weights") != 0)
            return pb_error(b, e->line, e->section, e->key,
                            "finite states take `weights`; families are for a grid of states");
    }
    const lop_entry *e = pb_find(b, "prior", "weights");
    if (!e)
        return pb_error(b, pb_section_line(b, "prior"), "prior", "weights",
                        "missing: give one non-negative weight per state (%zu)", p->n_states);
    size_t n;
    if (lop_parse_numbers(b->cfg, e, &p->prior, &n, b->err) != LOP_OK)
        return b->err->status;
    if (n != p->n_states)
        return pb_error(b, e->line, "prior", "weights",
                        "expected one weight per state (%zu), found %zu", p->n_states, n);
    double sum = 0;
    for (size_t i = 0; i < n; i++) {
        if (p->prior[i] < 0)
            return pb_error(b, lop_entry_item_line(e, i), "prior", "weights",
                            "weight %zu (%s) is negative: weights must be >= 0", i + 1,
                            p->state_labels[i]);
        sum += p->prior[i];
    }
    if (!(sum > 0))
        return pb_error(b, e->line, "prior", "weights",
                        "the weights sum to 0: at least one state needs weight");
    p->log_prior = malloc(n * sizeof *p->log_prior);
    if (!p->log_prior)
        return pb_no_memory(b);
    for (size_t i = 0; i < n; i++) {
        p->prior[i] /= sum;
        p->log_prior[i] = log(p->prior[i]);
    }
    p->prior_given_sum = sum;
    return LOP_OK;
}

static lop_status build_estimates(builder *b)
{
    lop_problem *p = b->p;
    const lop_entry *e = pb_find(b, "actions", "estimate");
    if (strcmp(e->value, "yes") != 0)
        return pb_error(b, e->line, "actions", "estimate",
                        "expected `yes` (for named actions give `labels` instead)");
    if (!lop_problem_numeric_states(p))
        return pb_error(b, e->line, "actions", "estimate",
                        "estimates need numeric states (values or a grid), not labels");
    p->estimate = true;
    const lop_entry *from = pb_find(b, "actions", "from");
    const lop_entry *to = pb_find(b, "actions", "to");
    const lop_entry *points = pb_find(b, "actions", "points");
    if (!from && !to && !points) {
        p->n_estimates = p->n_states;
        p->estimates = malloc(p->n_states * sizeof *p->estimates);
        if (!p->estimates)
            return pb_no_memory(b);
        memcpy(p->estimates, p->state_values, p->n_states * sizeof *p->estimates);
        return LOP_OK;
    }
    p->estimates_given = true;
    double lo = p->state_values[0], hi = p->state_values[p->n_states - 1];
    if (pb_number(b, "actions", "from", false, lo, &lo) != LOP_OK ||
        pb_number(b, "actions", "to", false, hi, &hi) != LOP_OK)
        return b->err->status;
    p->n_estimates = p->n_states;
    if (points &&
        lop_parse_count(b->cfg, points, 2, LOP_GRID_POINTS_LIMIT, &p->n_estimates, b->err) !=
            LOP_OK)
        return b->err->status;
    if (!(hi > lo))
        return pb_error(b, to ? to->line : from->line, "actions", to ? "to" : "from",
                        "the estimate grid needs `to` (%g) above `from` (%g)", hi, lo);
    p->estimates = malloc(p->n_estimates * sizeof *p->estimates);
    if (!p->estimates)
        return pb_no_memory(b);
    for (size_t i = 0; i < p->n_estimates; i++)
        p->estimates[i] = lo + (hi - lo) * (double)i / (double)(p->n_estimates - 1);
    return LOP_OK;
}

static lop_status build_actions(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "actions", "[actions] with labels or `estimate = yes`") != LOP_OK)
        return LOP_EINPUT;
    const lop_entry *e = pb_find(b, "actions", "labels");
    const lop_entry *est = pb_find(b, "actions", "estimate");
    if (e && est)
        return pb_error(b, est->line, "actions", "estimate",
                        "give labels or `estimate = yes`, not both");
    if (est)
        return build_estimates(b);
    static const char *const grid_keys[] = {"from", "to", "points"};
    for (size_t i = 0; i < 3; i++) {
        const lop_entry *g = pb_find(b, "actions", grid_keys[i]);
        if (g)
            return pb_error(b, g->line, "actions", g->key,
                            "belongs to an estimate grid (`estimate = yes`)");
    }
    if (!e)
        return pb_error(b, pb_section_line(b, "actions"), "actions", "labels",
                        "missing: name the actions, e.g. `labels = discard, keep`, or "
                        "give `estimate = yes`");
    lop_list list;
    if (lop_parse_labels(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    pb_take_list(&list, &p->actions, &p->n_actions);
    if (p->n_actions < 2)
        return pb_error(b, e->line, "actions", "labels", "a decision needs at least two actions");
    return LOP_OK;
}

static lop_status resolve_output(builder *b, const char *key, char **out)
{
    const lop_entry *e = pb_find(b, "output", key);
    if (!e || b->nested)
        return LOP_OK;
    if (e->value[0] == '\0')
        return pb_error(b, e->line, "output", key, "the value is empty: give a path");
    const char *slash = strrchr(b->cfg->path, '/');
    size_t dir = (e->value[0] == '/' || !slash) ? 0 : (size_t)(slash - b->cfg->path) + 1;
    size_t len = dir + strlen(e->value) + 1;
    *out = malloc(len);
    if (!*out)
        return pb_no_memory(b);
    snprintf(*out, len, "%.*s%s", (int)dir, b->cfg->path, e->value);
    return LOP_OK;
}

/* Builds the problem in cfg; `nested` for believed problems inside a [rule.NAME]. */
static lop_problem *build(const lop_config *cfg, bool nested, lop_error *err)
{
    lop_problem *p = calloc(1, sizeof *p);
    if (!p) {
        lop_error_run(err, "out of memory");
        return NULL;
    }
    builder b = {cfg, err, p, nested};
    p->path = lop_strdup(cfg->path);
    if (!p->path) {
        pb_no_memory(&b);
        goto fail;
    }
    if (check_sections(&b) != LOP_OK || check_keys(&b) != LOP_OK ||
        build_problem_section(&b) != LOP_OK || build_states(&b) != LOP_OK ||
        build_prior(&b) != LOP_OK || build_actions(&b) != LOP_OK ||
        pb_build_scores(&b) != LOP_OK || pb_build_channels(&b) != LOP_OK ||
        (!nested && (pb_build_rules(&b) != LOP_OK || pb_build_studies(&b) != LOP_OK)) ||
        resolve_output(&b, "json", &p->out_json) != LOP_OK ||
        resolve_output(&b, "csv", &p->out_csv) != LOP_OK ||
        resolve_output(&b, "workbook", &p->out_workbook) != LOP_OK)
        goto fail;
    return p;
fail:
    lop_problem_free(p);
    return NULL;
}

lop_problem *lop_problem_build(const lop_config *cfg, lop_error *err)
{
    return build(cfg, false, err);
}

lop_problem *pb_build_nested(const lop_config *cfg, lop_error *err)
{
    return build(cfg, true, err);
}

double lop_problem_refined_cells(double cells, int refine)
{
    return refine >= 0 ? cells * ldexp(1, refine) : fmax(1, ceil(ldexp(cells, refine)));
}

bool lop_problem_numeric_states(const lop_problem *p)
{
    return p->states_kind != LOP_STATES_LABELS;
}

size_t lop_problem_numeric_channels(const lop_problem *p)
{
    size_t n = 0;
    for (size_t i = 0; i < p->n_channels; i++)
        n += p->channels[i].kind != LOP_CHANNEL_TABLE;
    return n;
}

const char *lop_problem_orientation(const lop_problem *p)
{
    return p->payoff ? "payoff" : "loss";
}

double lop_problem_oriented(const lop_problem *p, double loss)
{
    return p->payoff ? -loss : loss;
}

static void free_strings(char **s, size_t n)
{
    if (!s)
        return;
    for (size_t i = 0; i < n; i++)
        free(s[i]);
    free(s);
}

void lop_problem_free(lop_problem *p)
{
    if (!p)
        return;
    for (size_t i = 0; i < p->n_channels; i++)
        pb_free_channel(&p->channels[i]);
    free(p->channels);
    for (size_t i = 0; i < p->n_rules; i++) {
        free(p->rules[i].name);
        lop_problem_free(p->rules[i].believed);
    }
    free(p->rules);
    pb_free_studies(p);
    free(p->path);
    free(p->title);
    free(p->notes);
    free(p->unit);
    free(p->score_unit);
    free_strings(p->state_labels, p->states_kind == LOP_STATES_GRID ? 0 : p->n_states);
    free(p->state_values);
    free(p->prior);
    free(p->perfect);
    free(p->log_prior);
    free_strings(p->actions, p->n_actions);
    free(p->estimates);
    free(p->loss);
    free(p->curve_error);
    free(p->curve_value);
    free(p->out_json);
    free(p->out_csv);
    free(p->out_workbook);
    free(p);
}
