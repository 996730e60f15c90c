#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_sf_gamma.h>

#include "lopside/keys.h"
#include "lopside/parse.h"
#include "lopside/problem.h"
#include "lopside/strutil.h"

/* A likelihood row must sum to 1 within this (format.md). */
#define ROW_SUM_TOLERANCE 1e-6
#define REPEATS_MAX 1000000
#define GRID_POINTS_MAX 1000000
#define GRID_POINTS_DEFAULT 201

/* Everything the builders share: the file, the error, the problem so far. */
typedef struct {
    const lop_config *cfg;
    lop_error *err;
    lop_problem *p;
} builder;

static lop_status input_error(builder *b, int line, const char *section, const char *key,
                              const char *fmt, ...) __attribute__((format(printf, 5, 6)));

static lop_status input_error(builder *b, int line, const char *section, const char *key,
                              const char *fmt, ...)
{
    char message[LOP_ERROR_TEXT];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(message, sizeof message, fmt, ap);
    va_end(ap);
    return lop_error_input(b->err, b->cfg->path, line, section, key, "%s", message);
}

static lop_status no_memory(builder *b)
{
    return lop_error_run(b->err, "out of memory");
}

static const lop_entry *find(builder *b, const char *section, const char *key)
{
    return lop_config_find(b->cfg, section, key);
}

static int section_line(builder *b, const char *section)
{
    const lop_section *s = lop_config_section(b->cfg, section);
    return s ? s->line : 0;
}

/* Splits "evidence.swab" into kind "evidence" and name "swab" (empty when absent). */
static void split_section(const char *section, char *kind, size_t size, const char **name)
{
    const char *dot = strchr(section, '.');
    size_t n = dot ? (size_t)(dot - section) : strlen(section);
    snprintf(kind, size, "%.*s", (int)n, section);
    *name = dot ? dot + 1 : "";
}

static bool is_evidence_section(const char *section)
{
    return strcmp(section, "evidence") == 0 || strncmp(section, "evidence.", 9) == 0;
}

static const char *nearest(const char *word, char **choices, size_t n)
{
    const char *best = NULL;
    size_t best_d = (size_t)-1;
    for (size_t i = 0; i < n; i++) {
        size_t d = lop_edit_distance(word, choices[i]);
        if (d < best_d) {
            best_d = d;
            best = choices[i];
        }
    }
    return best && lop_close_enough(best_d, strlen(word)) ? best : NULL;
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
            return input_error(b, s->line, s->name, NULL,
                               "unknown section%s%s%s", near ? "; did you mean [" : "",
                               near ? near : "", near ? "]?" : "");
        }
        if (!spec->supported)
            return input_error(b, s->line, s->name, NULL,
                               "this section is part of the format but not supported by "
                               "this version of lopside yet");
        if (name[0] && !spec->named)
            return input_error(b, s->line, s->name, NULL,
                               "[%s] takes no name after a dot; write [%s]", kind, kind);
        if (s->name[strlen(kind)] == '.' && !name[0])
            return input_error(b, s->line, s->name, NULL, "a name must follow the dot");
        if (strcmp(kind, "prior") == 0 && name[0])
            return input_error(b, s->line, s->name, NULL,
                               "mixture parts of a grid prior are not supported by this "
                               "version of lopside yet");
        for (size_t j = 0; j < i; j++)
            if (strcmp(b->cfg->sections[j].name, s->name) == 0)
                return input_error(b, s->line, s->name, NULL,
                                   "section given twice (first on line %d)",
                                   b->cfg->sections[j].line);
    }
    if (lop_config_section(b->cfg, "loss") && lop_config_section(b->cfg, "payoff"))
        return input_error(b, section_line(b, "payoff"), "payoff", NULL,
                           "give exactly one of [loss] and [payoff] ([loss] is on line %d)",
                           section_line(b, "loss"));
    return LOP_OK;
}

/* Every key must be known in its section and handled by this version. Action rows of
 * [loss]/[payoff] are checked where the actions are known. */
static lop_status check_keys(builder *b)
{
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (e->section[0] == '\0')
            return input_error(b, e->line, NULL, e->key,
                               "a key before any [section] header");
        char kind[96];
        const char *name;
        split_section(e->section, kind, sizeof kind, &name);
        const lop_key_spec *spec = lop_keys_find(kind, e->key);
        bool free_form = strcmp(kind, "loss") == 0 || strcmp(kind, "payoff") == 0;
        if (!spec && free_form)
            continue;
        if (!spec) {
            const char *near = lop_keys_suggest(kind, e->key);
            return input_error(b, e->line, e->section, e->key, "unknown key%s%s%s",
                               near ? "; did you mean `" : "", near ? near : "",
                               near ? "`?" : "");
        }
        if (!spec->supported)
            return input_error(b, e->line, e->section, e->key,
                               "this key is part of the format but not supported by this "
                               "version of lopside yet");
    }
    return LOP_OK;
}

static lop_status require_section(builder *b, const char *section, const char *what)
{
    if (!lop_config_section(b->cfg, section))
        return input_error(b, 0, section, NULL, "missing section: %s", what);
    return LOP_OK;
}

static lop_status take_text(builder *b, const char *section, const char *key, bool required,
                            char **out)
{
    const lop_entry *e = find(b, section, key);
    if (!e) {
        if (required)
            return input_error(b, section_line(b, section), section, key, "missing (required)");
        *out = lop_strdup("");
    } else {
        if (required && e->value[0] == '\0')
            return input_error(b, e->line, section, key, "the value is empty");
        *out = lop_strdup(e->value);
        /* A continued text reads as one line in reports. */
        for (char *c = *out; c && *c; c++)
            if (*c == '\n')
                *c = ' ';
    }
    return *out ? LOP_OK : no_memory(b);
}

static lop_status build_problem_section(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "problem", "[problem] with at least a title") != LOP_OK)
        return LOP_EINPUT;
    if (take_text(b, "problem", "title", true, &p->title) != LOP_OK ||
        take_text(b, "problem", "notes", false, &p->notes) != LOP_OK ||
        take_text(b, "problem", "unit", false, &p->unit) != LOP_OK ||
        take_text(b, "problem", "score_unit", false, &p->score_unit) != LOP_OK)
        return b->err->status;
    return LOP_OK;
}

/* Moves the items of list into *items (the problem owns them from now on). */
static void take_list(lop_list *list, char ***items, size_t *n)
{
    *items = list->items;
    *n = list->n;
    list->items = NULL;
    list->n = 0;
    lop_list_free(list);
}

static lop_status build_states(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "states", "[states] with labels or values") != LOP_OK)
        return LOP_EINPUT;
    const lop_entry *labels = find(b, "states", "labels");
    const lop_entry *values = find(b, "states", "values");
    if (labels && values)
        return input_error(b, values->line, "states", "values",
                           "give labels or values, not both (labels on line %d)",
                           labels->line);
    if (!labels && !values)
        return input_error(b, section_line(b, "states"), "states", NULL,
                           "give `labels = a, b, ...` or `values = 1, 2, ...`");
    if (labels) {
        lop_list list;
        if (lop_parse_labels(b->cfg, labels, &list, b->err) != LOP_OK)
            return b->err->status;
        p->states_kind = LOP_STATES_LABELS;
        take_list(&list, &p->state_labels, &p->n_states);
        if (p->n_states < 2)
            return input_error(b, labels->line, "states", "labels",
                               "a decision under uncertainty needs at least two states");
        return LOP_OK;
    }
    p->states_kind = LOP_STATES_VALUES;
    if (lop_parse_numbers(b->cfg, values, &p->state_values, &p->n_states, b->err) != LOP_OK)
        return b->err->status;
    if (p->n_states < 2)
        return input_error(b, values->line, "states", "values",
                           "a decision under uncertainty needs at least two states");
    lop_list list;
    if (lop_parse_list(b->cfg, values, &list, b->err) != LOP_OK)
        return b->err->status;
    take_list(&list, &p->state_labels, &p->n_states);
    for (size_t i = 0; i < p->n_states; i++)
        for (size_t j = 0; j < i; j++)
            if (p->state_values[i] == p->state_values[j])
                return input_error(b, values->line, "states", "values",
                                   "duplicate value %s (entries %zu and %zu)",
                                   p->state_labels[i], j + 1, i + 1);
    return LOP_OK;
}

static lop_status build_prior(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "prior", "[prior] with one weight per state") != LOP_OK)
        return LOP_EINPUT;
    const lop_entry *e = find(b, "prior", "weights");
    if (!e)
        return input_error(b, section_line(b, "prior"), "prior", "weights",
                           "missing: give one non-negative weight per state (%zu)",
                           p->n_states);
    size_t n;
    if (lop_parse_numbers(b->cfg, e, &p->prior, &n, b->err) != LOP_OK)
        return b->err->status;
    if (n != p->n_states)
        return input_error(b, e->line, "prior", "weights",
                           "expected one weight per state (%zu), found %zu", p->n_states, n);
    double sum = 0;
    for (size_t i = 0; i < n; i++) {
        if (p->prior[i] < 0)
            return input_error(b, e->line, "prior", "weights",
                               "weight %zu (%s) is negative: weights must be >= 0", i + 1,
                               p->state_labels[i]);
        sum += p->prior[i];
    }
    if (!(sum > 0))
        return input_error(b, e->line, "prior", "weights",
                           "the weights sum to 0: at least one state needs weight");
    for (size_t i = 0; i < n; i++)
        p->prior[i] /= sum;
    p->prior_given_sum = sum;
    return LOP_OK;
}

static lop_status build_actions(builder *b)
{
    lop_problem *p = b->p;
    if (require_section(b, "actions", "[actions] with labels") != LOP_OK)
        return LOP_EINPUT;
    const lop_entry *e = find(b, "actions", "labels");
    if (!e)
        return input_error(b, section_line(b, "actions"), "actions", "labels",
                           "missing: name the actions, e.g. `labels = discard, keep`");
    lop_list list;
    if (lop_parse_labels(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    take_list(&list, &p->actions, &p->n_actions);
    if (p->n_actions < 2)
        return input_error(b, e->line, "actions", "labels",
                           "a decision needs at least two actions");
    for (size_t a = 0; a < p->n_actions; a++) {
        const lop_key_spec *clash = lop_keys_find("loss", p->actions[a]);
        if (clash)
            return input_error(b, e->line, "actions", "labels",
                               "`%s` is a key of [loss]/[payoff]; choose another label",
                               p->actions[a]);
    }
    return LOP_OK;
}

static lop_status build_scores(builder *b)
{
    lop_problem *p = b->p;
    p->payoff = lop_config_section(b->cfg, "payoff") != NULL;
    const char *section = p->payoff ? "payoff" : "loss";
    if (!p->payoff &&
        require_section(b, "loss", "[loss] or [payoff] with one row per action") != LOP_OK)
        return LOP_EINPUT;
    p->loss = calloc(p->n_actions * p->n_states, sizeof *p->loss);
    if (!p->loss)
        return no_memory(b);
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (strcmp(e->section, section) != 0 || lop_keys_find(section, e->key))
            continue;
        long a = -1;
        for (size_t k = 0; k < p->n_actions; k++)
            if (strcmp(p->actions[k], e->key) == 0)
                a = (long)k;
        if (a < 0) {
            const char *near = nearest(e->key, p->actions, p->n_actions);
            if (!near)
                near = lop_keys_suggest(section, e->key);
            return input_error(b, e->line, section, e->key,
                               "not an action of [actions] labels%s%s%s",
                               near ? "; did you mean `" : "", near ? near : "",
                               near ? "`?" : "");
        }
        double *row;
        size_t n;
        if (lop_parse_numbers(b->cfg, e, &row, &n, b->err) != LOP_OK)
            return b->err->status;
        if (n != p->n_states) {
            free(row);
            return input_error(b, e->line, section, e->key,
                               "expected one value per state (%zu), found %zu", p->n_states,
                               n);
        }
        for (size_t s = 0; s < n; s++)
            p->loss[(size_t)a * p->n_states + s] = p->payoff ? -row[s] : row[s];
        free(row);
    }
    for (size_t a = 0; a < p->n_actions; a++)
        if (!find(b, section, p->actions[a]))
            return input_error(b, section_line(b, section), section, p->actions[a],
                               "missing: every action needs a row with one value per state");
    return LOP_OK;
}

static lop_status build_table_channel(builder *b, lop_channel *c)
{
    lop_problem *p = b->p;
    const lop_entry *e = find(b, c->section, "outcomes");
    lop_list list;
    if (lop_parse_labels(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    take_list(&list, &c->outcomes, &c->n_outcomes);
    if (c->n_outcomes < 2)
        return input_error(b, e->line, c->section, "outcomes",
                           "a channel needs at least two outcomes");
    static const char *const gaussian_keys[] = {"mean", "sd", "grid_from", "grid_to",
                                                "grid_points"};
    for (size_t k = 0; k < sizeof gaussian_keys / sizeof *gaussian_keys; k++) {
        const lop_entry *g = find(b, c->section, gaussian_keys[k]);
        if (g)
            return input_error(b, g->line, c->section, g->key,
                               "applies to numeric measurements (noise = ...), not to an "
                               "outcome table");
    }
    c->given = calloc(p->n_states * c->n_outcomes, sizeof *c->given);
    if (!c->given)
        return no_memory(b);
    /* Rows named after states that do not exist are misspellings. */
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *g = &b->cfg->entries[i];
        if (strcmp(g->section, c->section) != 0 || strncmp(g->key, "given.", 6) != 0)
            continue;
        bool known = false;
        for (size_t s = 0; s < p->n_states; s++)
            known |= strcmp(g->key + 6, p->state_labels[s]) == 0;
        if (!known) {
            const char *near = nearest(g->key + 6, p->state_labels, p->n_states);
            return input_error(b, g->line, c->section, g->key,
                               "`%s` is not a state%s%s%s", g->key + 6,
                               near ? "; did you mean `given." : "", near ? near : "",
                               near ? "`?" : "");
        }
    }
    for (size_t s = 0; s < p->n_states; s++) {
        char key[160];
        snprintf(key, sizeof key, "given.%s", p->state_labels[s]);
        const lop_entry *g = find(b, c->section, key);
        if (!g)
            return input_error(b, c->line, c->section, key,
                               "missing: give P(outcome | %s) for each outcome (%zu)",
                               p->state_labels[s], c->n_outcomes);
        double *row;
        size_t n;
        if (lop_parse_numbers(b->cfg, g, &row, &n, b->err) != LOP_OK)
            return b->err->status;
        if (n != c->n_outcomes) {
            free(row);
            return input_error(b, g->line, c->section, key,
                               "expected one probability per outcome (%zu), found %zu",
                               c->n_outcomes, n);
        }
        double sum = 0;
        for (size_t k = 0; k < n; k++) {
            if (row[k] < 0 || row[k] > 1) {
                double bad = row[k];
                free(row);
                return input_error(b, g->line, c->section, key,
                                   "probability %zu is %g: probabilities lie in [0, 1]",
                                   k + 1, bad);
            }
            sum += row[k];
        }
        if (fabs(sum - 1) > ROW_SUM_TOLERANCE) {
            free(row);
            return input_error(b, g->line, c->section, key,
                               "the probabilities sum to %.9g; each row must sum to 1 "
                               "(within %g)",
                               sum, ROW_SUM_TOLERANCE);
        }
        memcpy(&c->given[s * c->n_outcomes], row, n * sizeof *row);
        free(row);
    }
    return LOP_OK;
}

static lop_status build_gaussian_channel(builder *b, lop_channel *c)
{
    lop_problem *p = b->p;
    const lop_entry *noise = find(b, c->section, "noise");
    if (strcmp(noise->value, "gaussian") != 0) {
        static const char *later[] = {"scalar", "lognormal", "poisson", "binomial"};
        for (size_t i = 0; i < sizeof later / sizeof *later; i++)
            if (strcmp(noise->value, later[i]) == 0)
                return input_error(b, noise->line, c->section, "noise",
                                   "`%s` noise is part of the format but not supported by "
                                   "this version of lopside yet",
                                   noise->value);
        return input_error(b, noise->line, c->section, "noise",
                           "unknown noise `%s`; this version knows `gaussian`", noise->value);
    }
    c->kind = LOP_CHANNEL_GAUSSIAN;
    const lop_entry *mean = find(b, c->section, "mean");
    const lop_entry *sd = find(b, c->section, "sd");
    if (!sd)
        return input_error(b, c->line, c->section, "sd",
                           "missing: gaussian noise needs `sd` (one value or one per state)");
    if (lop_parse_per_state(b->cfg, sd, p->n_states, "sd", &c->sd, b->err) != LOP_OK)
        return b->err->status;
    for (size_t s = 0; s < p->n_states; s++)
        if (!(c->sd[s] > 0))
            return input_error(b, sd->line, c->section, "sd",
                               "sd for state %s is %g: an sd must be > 0", p->state_labels[s],
                               c->sd[s]);
    if (mean) {
        if (lop_parse_per_state(b->cfg, mean, p->n_states, "mean", &c->mean, b->err) != LOP_OK)
            return b->err->status;
    } else if (p->states_kind == LOP_STATES_VALUES) {
        c->mean = malloc(p->n_states * sizeof *c->mean);
        if (!c->mean)
            return no_memory(b);
        memcpy(c->mean, p->state_values, p->n_states * sizeof *c->mean);
    } else {
        return input_error(b, c->line, c->section, "mean",
                           "missing: labelled states need the measurement's mean per state");
    }
    if (find(b, c->section, "outcomes"))
        return input_error(b, find(b, c->section, "outcomes")->line, c->section, "outcomes",
                           "give either an outcome table or noise, not both");

    const lop_entry *from = find(b, c->section, "grid_from");
    const lop_entry *to = find(b, c->section, "grid_to");
    const lop_entry *points = find(b, c->section, "grid_points");
    if ((from != NULL) != (to != NULL)) {
        const lop_entry *given = from ? from : to;
        return input_error(b, given->line, c->section, given->key,
                           "give grid_from and grid_to together");
    }
    if (from) {
        if (lop_parse_number(b->cfg, from, false, &c->grid_from, b->err) != LOP_OK ||
            lop_parse_number(b->cfg, to, false, &c->grid_to, b->err) != LOP_OK)
            return b->err->status;
        if (!(c->grid_to > c->grid_from))
            return input_error(b, to->line, c->section, "grid_to",
                               "grid_to (%g) must be above grid_from (%g)", c->grid_to,
                               c->grid_from);
        c->grid_given = true;
    }
    c->grid_points = GRID_POINTS_DEFAULT;
    if (points &&
        lop_parse_count(b->cfg, points, 2, GRID_POINTS_MAX, &c->grid_points, b->err) != LOP_OK)
        return b->err->status;
    return LOP_OK;
}

static lop_status build_observed(builder *b, lop_channel *c)
{
    const lop_entry *e = find(b, c->section, "observed");
    if (!e)
        return LOP_OK;
    lop_list list;
    if (lop_parse_list(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    lop_status st = LOP_OK;
    if (list.n != c->repeats) {
        st = input_error(b, e->line, c->section, "observed",
                         "expected one observation per repeat (%zu), found %zu", c->repeats,
                         list.n);
        goto done;
    }
    c->n_observed = list.n;
    if (c->kind == LOP_CHANNEL_TABLE) {
        c->observed_outcome = malloc(list.n * sizeof *c->observed_outcome);
        if (!c->observed_outcome) {
            st = no_memory(b);
            goto done;
        }
        for (size_t i = 0; i < list.n; i++) {
            long k = -1;
            for (size_t o = 0; o < c->n_outcomes; o++)
                if (strcmp(c->outcomes[o], list.items[i]) == 0)
                    k = (long)o;
            if (k < 0) {
                const char *near = nearest(list.items[i], c->outcomes, c->n_outcomes);
                st = input_error(b, list.lines[i], c->section, "observed",
                                 "`%s` is not an outcome of this channel%s%s%s",
                                 list.items[i], near ? "; did you mean `" : "",
                                 near ? near : "", near ? "`?" : "");
                goto done;
            }
            c->observed_outcome[i] = (size_t)k;
        }
    } else {
        lop_list_free(&list);
        size_t n;
        return lop_parse_numbers(b->cfg, e, &c->observed_value, &n, b->err);
    }
done:
    lop_list_free(&list);
    return st;
}

/* Number of count vectors of n repeats over k outcomes: C(n + k - 1, k - 1). */
static double count_vectors(size_t n, size_t k)
{
    return round(exp(gsl_sf_lnchoose((unsigned)(n + k - 1), (unsigned)(k - 1))));
}

static lop_status build_channels(builder *b)
{
    lop_problem *p = b->p;
    size_t n = 0;
    for (size_t i = 0; i < b->cfg->n_sections; i++)
        n += is_evidence_section(b->cfg->sections[i].name);
    if (n == 0)
        return LOP_OK;
    p->channels = calloc(n, sizeof *p->channels);
    if (!p->channels)
        return no_memory(b);
    double combinations = 1;
    const lop_entry *largest_repeats = NULL;
    for (size_t i = 0; i < b->cfg->n_sections; i++) {
        const lop_section *s = &b->cfg->sections[i];
        if (!is_evidence_section(s->name))
            continue;
        lop_channel *c = &p->channels[p->n_channels++];
        c->section = lop_strdup(s->name);
        c->name = lop_strdup(strchr(s->name, '.') ? strchr(s->name, '.') + 1 : "");
        if (!c->section || !c->name)
            return no_memory(b);
        c->line = s->line;
        c->repeats = 1;
        const lop_entry *rep = find(b, s->name, "repeats");
        if (rep && lop_parse_count(b->cfg, rep, 1, REPEATS_MAX, &c->repeats, b->err) != LOP_OK)
            return b->err->status;
        bool table = find(b, s->name, "outcomes") != NULL;
        bool noise = find(b, s->name, "noise") != NULL;
        if (!table && !noise)
            return input_error(b, s->line, s->name, NULL,
                               "give `outcomes` with a given.STATE row per state, or "
                               "`noise = gaussian` with mean and sd");
        lop_status st = noise ? build_gaussian_channel(b, c) : build_table_channel(b, c);
        if (st != LOP_OK || build_observed(b, c) != LOP_OK)
            return b->err->status;
        if (c->kind == LOP_CHANNEL_TABLE) {
            combinations *= count_vectors(c->repeats, c->n_outcomes);
            if (rep && (!largest_repeats || c->repeats > 1))
                largest_repeats = rep;
        }
    }
    if (combinations > LOP_RULE_COMBINATIONS_MAX) {
        int line = largest_repeats ? largest_repeats->line : p->channels[0].line;
        return input_error(b, line, largest_repeats ? largest_repeats->section : NULL,
                           largest_repeats ? "repeats" : NULL,
                           "the rule table would hold %.0f outcome combinations, above the "
                           "limit of %d: use fewer repeats or outcomes",
                           combinations, LOP_RULE_COMBINATIONS_MAX);
    }
    return LOP_OK;
}

/* Observations impossible under every state with prior weight leave no posterior. */
static lop_status check_observations_possible(builder *b)
{
    lop_problem *p = b->p;
    const lop_channel *last = NULL;
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].kind == LOP_CHANNEL_TABLE && p->channels[i].n_observed)
            last = &p->channels[i];
    if (!last)
        return LOP_OK;
    for (size_t s = 0; s < p->n_states; s++) {
        bool possible = p->prior[s] > 0;
        for (size_t i = 0; possible && i < p->n_channels; i++) {
            const lop_channel *c = &p->channels[i];
            for (size_t r = 0; c->kind == LOP_CHANNEL_TABLE && r < c->n_observed; r++)
                possible &= c->given[s * c->n_outcomes + c->observed_outcome[r]] > 0;
        }
        if (possible)
            return LOP_OK;
    }
    return input_error(b, find(b, last->section, "observed")->line, last->section,
                       "observed",
                       "the observed outcomes have probability 0 under every state with "
                       "prior weight");
}

static lop_status resolve_output(builder *b, const char *key, char **out)
{
    const lop_entry *e = find(b, "output", key);
    if (!e)
        return LOP_OK;
    if (e->value[0] == '\0')
        return input_error(b, e->line, "output", key, "the value is empty: give a path");
    const char *slash = strrchr(b->cfg->path, '/');
    size_t dir = (e->value[0] == '/' || !slash) ? 0 : (size_t)(slash - b->cfg->path) + 1;
    size_t len = dir + strlen(e->value) + 1;
    *out = malloc(len);
    if (!*out)
        return no_memory(b);
    snprintf(*out, len, "%.*s%s", (int)dir, b->cfg->path, e->value);
    return LOP_OK;
}

lop_problem *lop_problem_build(const lop_config *cfg, lop_error *err)
{
    lop_problem *p = calloc(1, sizeof *p);
    if (!p) {
        lop_error_run(err, "out of memory");
        return NULL;
    }
    builder b = {cfg, err, p};
    p->path = lop_strdup(cfg->path);
    if (!p->path) {
        no_memory(&b);
        goto fail;
    }
    if (check_sections(&b) != LOP_OK || check_keys(&b) != LOP_OK ||
        build_problem_section(&b) != LOP_OK || build_states(&b) != LOP_OK ||
        build_prior(&b) != LOP_OK || build_actions(&b) != LOP_OK ||
        build_scores(&b) != LOP_OK || build_channels(&b) != LOP_OK ||
        check_observations_possible(&b) != LOP_OK ||
        resolve_output(&b, "json", &p->out_json) != LOP_OK ||
        resolve_output(&b, "csv", &p->out_csv) != LOP_OK ||
        resolve_output(&b, "workbook", &p->out_workbook) != LOP_OK)
        goto fail;
    return p;
fail:
    lop_problem_free(p);
    return NULL;
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
    for (size_t i = 0; i < p->n_channels; i++) {
        lop_channel *c = &p->channels[i];
        free(c->name);
        free(c->section);
        free_strings(c->outcomes, c->n_outcomes);
        free(c->given);
        free(c->mean);
        free(c->sd);
        free(c->observed_outcome);
        free(c->observed_value);
    }
    free(p->channels);
    free(p->path);
    free(p->title);
    free(p->notes);
    free(p->unit);
    free(p->score_unit);
    free_strings(p->state_labels, p->n_states);
    free(p->state_values);
    free(p->prior);
    free_strings(p->actions, p->n_actions);
    free(p->loss);
    free(p->out_json);
    free(p->out_csv);
    free(p->out_workbook);
    free(p);
}
