/* [evidence] and [evidence.NAME]: outcome tables over named states, and numeric
 * measurements (a noise family around a response r(s), or a mean per named state). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_sf_gamma.h>

#include "lopside/model/evidence.h"
#include "lopside/model/response.h"
#include "lopside/util/strutil.h"
#include "lopside/input/keys.h"
#include "problem_build.h"

/* Measurement points of the rule table when the file gives none: the least, for grid
 * states more where the noise is narrow (rule_grid.c); keys.c states the same. */
#define GRID_POINTS_DEFAULT 201

/* A likelihood row must sum to 1 within this (format.md). */
#define ROW_SUM_TOLERANCE 1e-6
#define REPEATS_MAX 1000000
#define GRID_POINTS_MAX 1000000

typedef struct {
    const char *name;
    lop_noise noise;
    const char *keys[2];   /* the family's own keys */
    bool summarizable;     /* repeats have a one-number summary */
} noise_spec;

static const noise_spec noises[] = {
    {"gaussian", LOP_NOISE_GAUSSIAN, {"sd", "mean"}, true},
    {"scalar", LOP_NOISE_SCALAR, {"weber", "sd_floor"}, false},
    {"lognormal", LOP_NOISE_LOGNORMAL, {"log_sd"}, true},
    {"poisson", LOP_NOISE_POISSON, {"window"}, true},
    {"binomial", LOP_NOISE_BINOMIAL, {"trials"}, true},
};

static const char *const family_keys[] = {"sd", "mean", "weber", "sd_floor", "log_sd",
                                          "window", "trials"};

#define COUNT(x) (sizeof(x) / sizeof(x)[0])

static bool is_evidence_section(const char *section)
{
    return strcmp(section, "evidence") == 0 || strncmp(section, "evidence.", 9) == 0;
}

static bool is_table_key(const char *key)
{
    return strcmp(key, "outcomes") == 0 || strncmp(key, "given.", 6) == 0 ||
           strcmp(key, "repeats") == 0 || strcmp(key, "observed") == 0;
}

static lop_status build_table_channel(builder *b, lop_channel *c)
{
    lop_problem *p = b->p;
    const lop_entry *e = pb_find(b, c->section, "outcomes");
    lop_list list;
    if (lop_parse_labels(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    pb_take_list(&list, &c->outcomes, &c->n_outcomes);
    if (c->n_outcomes < 2)
        return pb_error(b, e->line, c->section, "outcomes",
                           "a channel needs at least two outcomes");
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *g = &b->cfg->entries[i];
        if (strcmp(g->section, c->section) == 0 && !is_table_key(g->key))
            return pb_error(b, g->line, c->section, g->key,
                            "applies to numeric measurements (noise = ...), not to an "
                            "outcome table");
    }
    c->given = calloc(p->n_states * c->n_outcomes, sizeof *c->given);
    if (!c->given)
        return pb_no_memory(b);
    /* Rows named after states that do not exist are misspellings. */
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *g = &b->cfg->entries[i];
        if (strcmp(g->section, c->section) != 0 || strncmp(g->key, "given.", 6) != 0)
            continue;
        bool known = false;
        for (size_t s = 0; s < p->n_states; s++)
            known |= strcmp(g->key + 6, p->state_labels[s]) == 0;
        if (!known) {
            const char *near = lop_nearest(g->key + 6, p->state_labels, p->n_states);
            return pb_error(b, g->line, c->section, g->key,
                               "`%s` is not a state%s%s%s", g->key + 6,
                               near ? "; did you mean `given." : "", near ? near : "",
                               near ? "`?" : "");
        }
    }
    for (size_t s = 0; s < p->n_states; s++) {
        char key[160];
        snprintf(key, sizeof key, "given.%s", p->state_labels[s]);
        const lop_entry *g = pb_find(b, c->section, key);
        if (!g)
            return pb_error(b, c->line, c->section, key,
                               "missing: give P(outcome | %s) for each outcome (%zu)",
                               p->state_labels[s], c->n_outcomes);
        double *row;
        size_t n;
        if (lop_parse_numbers(b->cfg, g, &row, &n, b->err) != LOP_OK)
            return b->err->status;
        if (n != c->n_outcomes) {
            free(row);
            return pb_error(b, g->line, c->section, key,
                               "expected one probability per outcome (%zu), found %zu",
                               c->n_outcomes, n);
        }
        double sum = 0;
        for (size_t k = 0; k < n; k++) {
            if (row[k] < 0 || row[k] > 1) {
                double bad = row[k];
                free(row);
                return pb_error(b, lop_entry_item_line(g, k), c->section, key,
                                "probability %zu is %g: probabilities lie in [0, 1]",
                                   k + 1, bad);
            }
            sum += row[k];
        }
        if (fabs(sum - 1) > ROW_SUM_TOLERANCE) {
            free(row);
            return pb_error(b, g->line, c->section, key,
                               "the probabilities sum to %.9g; each row must sum to 1 "
                               "(within %g)",
                               sum, ROW_SUM_TOLERANCE);
        }
        memcpy(&c->given[s * c->n_outcomes], row, n * sizeof *row);
        free(row);
    }
    return LOP_OK;
}


static lop_status build_measurement_grid(builder *b, lop_channel *c)
{
    const lop_entry *from = pb_find(b, c->section, "grid_from");
    const lop_entry *to = pb_find(b, c->section, "grid_to");
    const lop_entry *points = pb_find(b, c->section, "grid_points");
    if ((from != NULL) != (to != NULL)) {
        const lop_entry *given = from ? from : to;
        return pb_error(b, given->line, c->section, given->key,
                        "give grid_from and grid_to together");
    }
    bool counts = c->noise == LOP_NOISE_POISSON || c->noise == LOP_NOISE_BINOMIAL;
    if (counts && points)
        return pb_error(b, points->line, c->section, "grid_points",
                        "counts are measured on the integers; give grid_from and grid_to "
                        "to limit them");
    if (from) {
        if (lop_parse_number(b->cfg, from, false, &c->grid_from, b->err) != LOP_OK ||
            lop_parse_number(b->cfg, to, false, &c->grid_to, b->err) != LOP_OK)
            return b->err->status;
        if (!(c->grid_to > c->grid_from))
            return pb_error(b, to->line, c->section, "grid_to",
                            "grid_to (%g) must be above grid_from (%g)", c->grid_to,
                            c->grid_from);
        if (counts && (c->grid_from < 0 || c->grid_from != floor(c->grid_from) ||
                       c->grid_to != floor(c->grid_to)))
            return pb_error(b, from->line, c->section, "grid_from",
                            "counts are whole numbers >= 0: give whole grid_from and grid_to");
        c->grid_given = true;
    }
    c->grid_points = GRID_POINTS_DEFAULT;
    c->grid_points_given = points != NULL;
    if (points &&
        lop_parse_count(b->cfg, points, 2, GRID_POINTS_MAX, &c->grid_points, b->err) != LOP_OK)
        return b->err->status;
    return LOP_OK;
}

static const noise_spec *find_noise(builder *b, const lop_channel *c, const lop_entry *e)
{
    for (size_t i = 0; i < COUNT(noises); i++)
        if (strcmp(noises[i].name, e->value) == 0)
            return &noises[i];
    char *names[COUNT(noises)];
    for (size_t i = 0; i < COUNT(noises); i++)
        names[i] = (char *)noises[i].name;
    const char *near = lop_nearest(e->value, names, COUNT(noises));
    pb_error(b, e->line, c->section, "noise",
             "unknown noise `%s`%s%s%s; known: gaussian, scalar, lognormal, poisson, binomial",
             e->value, near ? " (did you mean `" : "", near ? near : "", near ? "`?)" : "");
    return NULL;
}

static bool family_has(const noise_spec *spec, const char *key)
{
    return (spec->keys[0] && strcmp(spec->keys[0], key) == 0) ||
           (spec->keys[1] && strcmp(spec->keys[1], key) == 0);
}

/* Reads a number for every state: one value for all, or (finite states) one per state. */
static lop_status per_state(builder *b, const lop_channel *c, const char *key, double **out)
{
    const lop_problem *p = b->p;
    const lop_entry *e = pb_find(b, c->section, key);
    if (p->states_kind == LOP_STATES_GRID) {
        double v;
        if (lop_parse_number(b->cfg, e, false, &v, b->err) != LOP_OK)
            return b->err->status;
        *out = malloc(p->n_states * sizeof **out);
        if (!*out)
            return pb_no_memory(b);
        for (size_t s = 0; s < p->n_states; s++)
            (*out)[s] = v;
        return LOP_OK;
    }
    return lop_parse_per_state(b->cfg, e, p->n_states, key, out, b->err);
}

/* The location of one measurement in each state: a mean per named state, or r(s). */
static lop_status build_centers(builder *b, lop_channel *c)
{
    lop_problem *p = b->p;
    const lop_entry *mean = pb_find(b, c->section, "mean");
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (strcmp(e->section, c->section) == 0 &&
            (strcmp(e->key, "response") == 0 || lop_response_is_key(e->key))) {
            if (p->states_kind == LOP_STATES_LABELS)
                return pb_error(b, e->line, c->section, e->key,
                                "a response r(s) needs numeric states; named states take "
                                "`mean` per state");
            if (mean)
                return pb_error(b, e->line, c->section, e->key,
                                "give `mean` per state or a response, not both");
        }
    }
    if (mean) {
        if (p->states_kind == LOP_STATES_GRID)
            return pb_error(b, mean->line, c->section, "mean",
                            "a grid of states takes a response r(s) (`response = linear`, "
                            "...), not a mean per state");
        return per_state(b, c, "mean", &c->center);
    }
    if (p->states_kind == LOP_STATES_LABELS)
        return pb_error(b, c->line, c->section, "mean",
                        "missing: named states need the measurement's mean per state");
    lop_response r;
    if (lop_response_read(b->cfg, c->section, &r, b->err) != LOP_OK) {
        lop_response_clear(&r);
        return b->err->status;
    }
    c->center = malloc(p->n_states * sizeof *c->center);
    if (!c->center) {
        lop_response_clear(&r);
        return pb_no_memory(b);
    }
    for (size_t s = 0; s < p->n_states; s++)
        c->center[s] = lop_response_eval(&r, p->state_values[s]);
    lop_response_clear(&r);
    return LOP_OK;
}

/* The response must give every family a valid parameter at every state. */
static lop_status check_centers(builder *b, const lop_channel *c)
{
    const lop_problem *p = b->p;
    const lop_entry *noise = pb_find(b, c->section, "noise");
    for (size_t s = 0; s < p->n_states; s++) {
        double r = c->center[s], x = p->state_values ? p->state_values[s] : NAN;
        const char *wrong = NULL;
        if (!isfinite(r))
            wrong = "is not a finite number for";
        else if (c->noise == LOP_NOISE_LOGNORMAL && !(r > 0))
            wrong = "must be > 0 for";
        else if (c->noise == LOP_NOISE_POISSON && r < 0)
            wrong = "must be >= 0 for";
        else if (c->noise == LOP_NOISE_BINOMIAL && (r < 0 || r > 1))
            wrong = "must lie in [0, 1] for";
        else if (!(c->spread[s] > 0) && c->noise != LOP_NOISE_POISSON &&
                 c->noise != LOP_NOISE_BINOMIAL)
            return pb_error(b, noise->line, c->section, "noise",
                            "the measurement's sd at state %g is %g: it must be > 0 (with "
                            "scalar noise, give sd_floor > 0 for states where r(s) <= 0)",
                            x, c->spread[s]);
        if (wrong) {
            char where[64];
            if (p->state_labels)
                snprintf(where, sizeof where, "%s", p->state_labels[s]);
            else
                snprintf(where, sizeof where, "%g", x);
            /* Blame the response when the file gave one: that is what to change. */
            const lop_entry *resp = pb_find(b, c->section, "response");
            const lop_entry *at = resp ? resp : noise;
            return pb_error(b, at->line, c->section, at->key,
                            "the response at state %s is %g, which %s `%s` noise", where, r,
                            wrong, noise->value);
        }
    }
    return LOP_OK;
}

/* Counts go to GSL as unsigned ints: every count the channel can produce must fit. */
static lop_status check_count_range(builder *b, const lop_channel *c)
{
    const double most = 4294967295.0;
    if (c->noise == LOP_NOISE_BINOMIAL && (double)c->repeats * (double)c->trials > most)
        return pb_error(b, pb_find(b, c->section, "trials")->line, c->section, "trials",
                        "repeats x trials is %.0f successes at most; the limit is %.0f",
                        (double)c->repeats * (double)c->trials, most);
    if (c->noise != LOP_NOISE_POISSON)
        return LOP_OK;
    for (size_t s = 0; s < b->p->n_states; s++) {
        double mu = (double)c->repeats * c->window * c->center[s];
        if (mu + 50 * sqrt(mu + 1) + 50 > most)
            return pb_error(b, pb_find(b, c->section, "noise")->line, c->section, "noise",
                            "the expected count %g at some state is too large: counts up to "
                            "%.0f are supported",
                            mu, most);
    }
    return LOP_OK;
}

static lop_status build_noise_channel(builder *b, lop_channel *c)
{
    lop_problem *p = b->p;
    const lop_entry *noise = pb_find(b, c->section, "noise");
    const noise_spec *spec = find_noise(b, c, noise);
    if (!spec)
        return LOP_EINPUT;
    c->kind = LOP_CHANNEL_NOISE;
    c->noise = spec->noise;
    if (p->states_kind == LOP_STATES_LABELS && spec->noise != LOP_NOISE_GAUSSIAN)
        return pb_error(b, noise->line, c->section, "noise",
                        "named states take gaussian noise with a mean per state; `%s` noise "
                        "needs numeric states",
                        spec->name);
    if (pb_find(b, c->section, "outcomes"))
        return pb_error(b, pb_find(b, c->section, "outcomes")->line, c->section, "outcomes",
                        "give either an outcome table or noise, not both");
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (strcmp(e->section, c->section) != 0)
            continue;
        bool family_key = false;
        for (size_t k = 0; k < COUNT(family_keys); k++)
            family_key |= strcmp(family_keys[k], e->key) == 0;
        if ((family_key && !family_has(spec, e->key)) || strncmp(e->key, "given.", 6) == 0)
            return pb_error(b, e->line, c->section, e->key, "does not belong to `%s` noise",
                            spec->name);
    }
    if (build_centers(b, c) != LOP_OK)
        return b->err->status;
    c->spread = calloc(p->n_states, sizeof *c->spread);
    if (!c->spread)
        return pb_no_memory(b);
    switch (spec->noise) {
    case LOP_NOISE_GAUSSIAN: {
        if (!pb_find(b, c->section, "sd"))
            return pb_error(b, c->line, c->section, "sd",
                            "missing: gaussian noise needs `sd`%s",
                            p->states_kind == LOP_STATES_GRID ? "" : " (one value or one per state)");
        double *sd;
        if (per_state(b, c, "sd", &sd) != LOP_OK)
            return b->err->status;
        memcpy(c->spread, sd, p->n_states * sizeof *sd);
        free(sd);
        for (size_t s = 0; s < p->n_states; s++)
            if (!(c->spread[s] > 0))
                return pb_error(b, pb_find(b, c->section, "sd")->line, c->section, "sd",
                                "sd%s%s is %g: an sd must be > 0",
                                p->state_labels ? " for state " : "",
                                p->state_labels ? p->state_labels[s] : "", c->spread[s]);
        break;
    }
    case LOP_NOISE_SCALAR: {
        double weber, floor_sd;
        if (pb_number(b, c->section, "weber", true, 0, &weber) != LOP_OK ||
            pb_number(b, c->section, "sd_floor", false, lop_keys_default("evidence", "sd_floor"),
                      &floor_sd) != LOP_OK)
            return b->err->status;
        if (!(weber > 0))
            return pb_error(b, pb_find(b, c->section, "weber")->line, c->section, "weber",
                            "must be > 0");
        if (floor_sd < 0)
            return pb_error(b, pb_find(b, c->section, "sd_floor")->line, c->section,
                            "sd_floor", "must be >= 0");
        /* Scalar (Weber) noise: sd = max(weber·r(s), sd_floor). */
        for (size_t s = 0; s < p->n_states; s++)
            c->spread[s] = fmax(weber * c->center[s], floor_sd);
        break;
    }
    case LOP_NOISE_LOGNORMAL: {
        double log_sd;
        if (pb_number(b, c->section, "log_sd", true, 0, &log_sd) != LOP_OK)
            return b->err->status;
        if (!(log_sd > 0))
            return pb_error(b, pb_find(b, c->section, "log_sd")->line, c->section, "log_sd",
                            "must be > 0");
        for (size_t s = 0; s < p->n_states; s++)
            c->spread[s] = log_sd;
        break;
    }
    case LOP_NOISE_POISSON:
        if (pb_number(b, c->section, "window", false, lop_keys_default("evidence", "window"),
                      &c->window) != LOP_OK)
            return b->err->status;
        if (!(c->window > 0))
            return pb_error(b, pb_find(b, c->section, "window")->line, c->section, "window",
                            "must be > 0");
        break;
    case LOP_NOISE_BINOMIAL: {
        const lop_entry *t = pb_find(b, c->section, "trials");
        if (!t)
            return pb_error(b, c->line, c->section, "trials",
                            "missing: binomial noise needs `trials`");
        if (lop_parse_count(b->cfg, t, 1, 100000000, &c->trials, b->err) != LOP_OK)
            return b->err->status;
        break;
    }
    }
    if (check_centers(b, c) != LOP_OK)
        return LOP_EINPUT;
    if (check_count_range(b, c) != LOP_OK)
        return LOP_EINPUT;
    if (c->repeats > 1 && !spec->summarizable)
        return pb_error(b, pb_find(b, c->section, "repeats")->line, c->section, "repeats",
                        "`%s` noise has no one-number summary of repeated measurements; "
                        "use repeats = 1 or gaussian, lognormal, poisson or binomial noise",
                        spec->name);
    return build_measurement_grid(b, c);
}
/* Observed values of a numeric channel must be possible measurements of its noise. */
static lop_status check_observed_values(builder *b, const lop_channel *c,
                                        const lop_entry *e)
{
    for (size_t i = 0; i < c->n_observed; i++) {
        double x = c->observed_value[i];
        bool counts = c->noise == LOP_NOISE_POISSON || c->noise == LOP_NOISE_BINOMIAL;
        if (counts && (x < 0 || x != floor(x)))
            return pb_error(b, lop_entry_item_line(e, i), c->section, "observed",
                            "observation %zu is %g: counts are whole numbers >= 0", i + 1, x);
        if (c->noise == LOP_NOISE_BINOMIAL && x > (double)c->trials)
            return pb_error(b, lop_entry_item_line(e, i), c->section, "observed",
                            "observation %zu is %g successes out of %zu trials", i + 1, x,
                            c->trials);
        if (c->noise == LOP_NOISE_LOGNORMAL && !(x > 0))
            return pb_error(b, lop_entry_item_line(e, i), c->section, "observed",
                            "observation %zu is %g: lognormal measurements are > 0", i + 1, x);
    }
    return LOP_OK;
}

static lop_status build_observed(builder *b, lop_channel *c)
{
    const lop_entry *e = pb_find(b, c->section, "observed");
    if (!e)
        return LOP_OK;
    lop_list list;
    if (lop_parse_list(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    lop_status st = LOP_OK;
    if (list.n != c->repeats) {
        st = pb_error(b, e->line, c->section, "observed",
                      "expected one observation per repeat (%zu), found %zu", c->repeats,
                      list.n);
        goto done;
    }
    if (c->kind != LOP_CHANNEL_TABLE) {
        lop_list_free(&list);
        size_t n;
        if (lop_parse_numbers(b->cfg, e, &c->observed_value, &n, b->err) != LOP_OK)
            return b->err->status;
        c->n_observed = n;
        return check_observed_values(b, c, e);
    }
    c->n_observed = list.n;
    c->observed_outcome = malloc(list.n * sizeof *c->observed_outcome);
    if (!c->observed_outcome) {
        st = pb_no_memory(b);
        goto done;
    }
    for (size_t i = 0; i < list.n; i++) {
        long k = -1;
        for (size_t o = 0; o < c->n_outcomes; o++)
            if (strcmp(c->outcomes[o], list.items[i]) == 0)
                k = (long)o;
        if (k < 0) {
            const char *near = lop_nearest(list.items[i], c->outcomes, c->n_outcomes);
            st = pb_error(b, list.lines[i], c->section, "observed",
                          "`%s` is not an outcome of this channel%s%s%s", list.items[i],
                          near ? "; did you mean `" : "", near ? near : "", near ? "`?" : "");
            goto done;
        }
        c->observed_outcome[i] = (size_t)k;
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

/* Observations impossible under every state with prior weight leave no posterior. */
static lop_status check_observations_possible(builder *b)
{
    lop_problem *p = b->p;
    const lop_channel *last = NULL;
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].n_observed)
            last = &p->channels[i];
    if (!last)
        return LOP_OK;
    double *ll = calloc(p->n_states, sizeof *ll);
    if (!ll)
        return pb_no_memory(b);
    lop_evidence_add_observed(p, ll);
    bool possible = false;
    for (size_t s = 0; s < p->n_states && !possible; s++)
        possible = p->log_prior[s] > -INFINITY && ll[s] > -INFINITY;
    free(ll);
    if (possible)
        return LOP_OK;
    return pb_error(b, pb_find(b, last->section, "observed")->line, last->section, "observed",
                    "the observed values have probability 0 under every state with prior "
                    "weight");
}

lop_status pb_build_channels(builder *b)
{
    lop_problem *p = b->p;
    size_t n = 0;
    for (size_t i = 0; i < b->cfg->n_sections; i++)
        n += is_evidence_section(b->cfg->sections[i].name);
    if (n == 0)
        return LOP_OK;
    p->channels = calloc(n, sizeof *p->channels);
    if (!p->channels)
        return pb_no_memory(b);
    /* The rule table holds every combination of count vectors, each with a count per
     * outcome: bound both the rows and the cells. */
    double combinations = 1, columns = 0;
    const lop_entry *blame = NULL; /* the repeats of the table channel with the most */
    size_t most_repeats = 0;
    for (size_t i = 0; i < b->cfg->n_sections; i++) {
        const lop_section *s = &b->cfg->sections[i];
        if (!is_evidence_section(s->name))
            continue;
        lop_channel *c = &p->channels[p->n_channels++];
        c->section = lop_strdup(s->name);
        c->name = lop_strdup(strchr(s->name, '.') ? strchr(s->name, '.') + 1 : "");
        if (!c->section || !c->name)
            return pb_no_memory(b);
        c->line = s->line;
        c->repeats = (size_t)lop_keys_default("evidence", "repeats");
        const lop_entry *rep = pb_find(b, s->name, "repeats");
        if (rep && lop_parse_count(b->cfg, rep, 1, REPEATS_MAX, &c->repeats, b->err) != LOP_OK)
            return b->err->status;
        const lop_entry *table = pb_find(b, s->name, "outcomes");
        bool noise = pb_find(b, s->name, "noise") != NULL;
        if (!table && !noise)
            return pb_error(b, s->line, s->name, NULL,
                            "give `outcomes` with a given.STATE row per state, or `noise = "
                            "gaussian` (or scalar, lognormal, poisson, binomial)");
        if (table && !noise && p->states_kind == LOP_STATES_GRID)
            return pb_error(b, table->line, s->name, "outcomes",
                            "outcome tables need named or listed states; a grid of states "
                            "takes `noise` and a response");
        lop_status st = noise ? build_noise_channel(b, c) : build_table_channel(b, c);
        if (st != LOP_OK || build_observed(b, c) != LOP_OK)
            return b->err->status;
        if (c->kind == LOP_CHANNEL_TABLE) {
            combinations *= count_vectors(c->repeats, c->n_outcomes);
            columns += (double)c->n_outcomes;
            if (rep && c->repeats > most_repeats) {
                most_repeats = c->repeats;
                blame = rep;
            }
        }
    }
    if (combinations > LOP_RULE_COMBINATIONS_MAX ||
        combinations * (columns + (double)p->n_states) > LOP_RULE_CELLS_LIMIT) {
        int line = blame ? blame->line : p->channels[0].line;
        return pb_error(b, line, blame ? blame->section : NULL, blame ? "repeats" : NULL,
                        "the rule table would hold %.0f outcome combinations of %.0f counts "
                        "each, above the limit of %d combinations or %.0f counts in all: use "
                        "fewer repeats or outcomes",
                        combinations, columns, LOP_RULE_COMBINATIONS_MAX,
                        (double)LOP_RULE_CELLS_LIMIT);
    }
    return check_observations_possible(b);
}

void pb_free_channel(lop_channel *c)
{
    free(c->name);
    free(c->section);
    for (size_t o = 0; c->outcomes && o < c->n_outcomes; o++)
        free(c->outcomes[o]);
    free(c->outcomes);
    free(c->given);
    free(c->center);
    free(c->spread);
    free(c->observed_outcome);
    free(c->observed_value);
}
