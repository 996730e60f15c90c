/* [loss] or [payoff]: a row per action over finite states, bands (`cuts`) or lines
 * (`at`) over a grid of states, or a loss curve for estimates. Everything is stored as
 * a loss; a payoff is negated here, once. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/util/interp.h"
#include "lopside/model/curve_family.h"
#include "lopside/model/prior.h"
#include "lopside/input/keys.h"
#include "lopside/util/strutil.h"
#include "problem_build.h"

static const char *const curve_keys[] = {"scale", "under", "over", "a", "half_width", "below",
                                         "above", "inside", "outside", "error", "value"};

#define COUNT(x) (sizeof(x) / sizeof(x)[0])

/* The prefix that makes a key an action's row whatever its label (`row.cuts`). */
#define ROW_PREFIX "row."

/* Returns the index of the action labelled `label`, -1 when none is. */
static long action_index(const lop_problem *p, const char *label)
{
    for (size_t k = 0; k < p->n_actions; k++)
        if (strcmp(p->actions[k], label) == 0)
            return (long)k;
    return -1;
}

/* Returns what key means in choices over these states, NULL when nothing: `cuts` and
 * `at` on a grid of states. Curve keys belong to estimates, which have no labels, so a
 * label such as `a` or `value` written as a key can only be that action's row. */
static const char *choice_key(const lop_problem *p, const char *key)
{
    if (p->states_kind != LOP_STATES_GRID)
        return NULL;
    if (strcmp(key, "cuts") == 0)
        return "the band edges";
    return strcmp(key, "at") == 0 ? "the points of the lines" : NULL;
}

/* Keys of the other modes (rows, cuts, at, curve) are mistakes, not ignored; a key that
 * is an action's label is that action's row. */
static lop_status reject_keys(builder *b, const char *section, const char *const *keys,
                              size_t n, const char *why)
{
    for (size_t i = 0; i < n; i++) {
        const lop_entry *e = pb_find(b, section, keys[i]);
        if (e && action_index(b->p, keys[i]) < 0)
            return pb_error(b, e->line, section, e->key, "%s", why);
    }
    return LOP_OK;
}

/* Checks that the row of action a is given once: as `row.LABEL`, or as `LABEL` when that
 * key means nothing else here; where it does (`cuts` on a grid of states), the plain
 * key is that meaning only when `row.LABEL` is there too, and ambiguous without it. */
static lop_status check_row_once(builder *b, const char *section, size_t a)
{
    const char *label = b->p->actions[a];
    char sub_key[256];
    snprintf(sub_key, sizeof sub_key, ROW_PREFIX "%s", label);
    const lop_entry *plain = pb_find(b, section, label), *sub = pb_find(b, section, sub_key);
    const char *meaning = choice_key(b->p, label);
    if (plain && !sub && meaning)
        return pb_error(b, plain->line, section, label,
                        "`%s` is an action of [actions] labels and also the key of %s of a "
                        "grid of states, so this line is ambiguous: write the action's row as "
                        "`" ROW_PREFIX "%s = ...` (and %s as `%s = ...`)",
                        label, meaning, label, meaning, label);
    if (plain && sub && !meaning) {
        const lop_entry *later = plain->line > sub->line ? plain : sub;
        return pb_error(b, later->line, section, later->key,
                        "the row of `%s` is given twice (as `%s` on line %d and as `%s` on "
                        "line %d); keep one",
                        label, label, plain->line, sub_key, sub->line);
    }
    return LOP_OK;
}

/* Allocates the loss matrix; every non-format key must name an action, plainly or as
 * `row.LABEL`, and each action's row is given once. */
static lop_status check_rows(builder *b, const char *section)
{
    lop_problem *p = b->p;
    p->loss = calloc(p->n_actions * p->n_states, sizeof *p->loss);
    if (!p->loss)
        return pb_no_memory(b);
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (strcmp(e->section, section) != 0)
            continue;
        bool sub = strncmp(e->key, ROW_PREFIX, strlen(ROW_PREFIX)) == 0;
        const char *label = sub ? e->key + strlen(ROW_PREFIX) : e->key;
        long a = action_index(p, label);
        if (a >= 0) {
            if (check_row_once(b, section, (size_t)a) != LOP_OK)
                return b->err->status;
            continue;
        }
        if (!sub && lop_keys_find(section, e->key))
            continue;
        const char *near = lop_nearest(label, p->actions, p->n_actions);
        if (!near && !sub)
            near = lop_keys_suggest(section, e->key);
        return pb_error(b, e->line, section, e->key,
                        "not an action of [actions] labels%s%s%s%s",
                        near ? "; did you mean `" : "", near && sub ? ROW_PREFIX : "",
                        near ? near : "", near ? "`?" : "");
    }
    return LOP_OK;
}

/* Reads action a's row of `width` numbers from its entry (required): `row.LABEL`, else
 * `LABEL` unless that key means something else here. */
static lop_status read_row(builder *b, const char *section, size_t a, size_t width,
                           const char *what, double **row)
{
    const char *label = b->p->actions[a];
    char sub_key[256];
    snprintf(sub_key, sizeof sub_key, ROW_PREFIX "%s", label);
    const char *meaning = choice_key(b->p, label);
    const lop_entry *e = pb_find(b, section, sub_key);
    if (!e && !meaning)
        e = pb_find(b, section, label);
    if (!e && meaning)
        return pb_error(b, pb_section_line(b, section), section, sub_key,
                        "missing: every action needs a row with one value per %s; `%s` is "
                        "also the key of %s, so write the row of action `%s` as `%s = ...`",
                        what, label, meaning, label, sub_key);
    if (!e)
        return pb_error(b, pb_section_line(b, section), section, label,
                        "missing: every action needs a row with one value per %s", what);
    size_t n;
    if (lop_parse_numbers(b->cfg, e, row, &n, b->err) != LOP_OK)
        return b->err->status;
    if (n != width) {
        free(*row);
        *row = NULL;
        return pb_error(b, e->line, section, e->key, "expected one value per %s (%zu), found %zu",
                        what, width, n);
    }
    return LOP_OK;
}

static lop_status read_increasing(builder *b, const char *section, const char *key,
                                  double **out, size_t *n)
{
    const lop_entry *e = pb_find(b, section, key);
    if (lop_parse_numbers(b->cfg, e, out, n, b->err) != LOP_OK)
        return b->err->status;
    for (size_t i = 1; i < *n; i++)
        if (!((*out)[i] > (*out)[i - 1]))
            return pb_error(b, e->line, section, key,
                            "entries must increase (entry %zu is %g after %g)", i + 1,
                            (*out)[i], (*out)[i - 1]);
    return LOP_OK;
}


/* Writes to *out (n_states x (n_cuts + 1), caller frees) the share of each state cell's
 * prior mass that lies in each band, so a band edge falls exactly where the file puts
 * it, wherever that is in a cell (on a grid point it splits the cell in two). A cell
 * the prior gives no mass is split by length. */
static lop_status band_shares(builder *b, const double *cuts, size_t n_cuts, double **out)
{
    lop_problem *p = b->p;
    size_t width = n_cuts + 1;
    double *share = calloc(p->n_states * width, sizeof *share);
    double *log_piece = malloc(width * sizeof *log_piece);
    if (!share || !log_piece) {
        free(share);
        free(log_piece);
        return pb_no_memory(b);
    }
    double from = p->state_values[0], to = p->state_values[p->n_states - 1];
    size_t band = 0;
    for (size_t s = 0; s < p->n_states; s++) {
        double lo = fmax(from, p->state_values[s] - p->step / 2);
        double hi = fmin(to, p->state_values[s] + p->step / 2);
        while (band < n_cuts && cuts[band] <= lo)
            band++;
        double *row = &share[s * width];
        if (band == n_cuts || cuts[band] >= hi) {
            row[band] = 1;
            continue;
        }
        /* Cuts inside the cell: the prior mass of each piece, in logs, shifted by the
         * largest before exp. */
        double top = -INFINITY;
        size_t first = band;
        for (double a = lo; a < hi; band++) {
            double z = band < n_cuts && cuts[band] < hi ? cuts[band] : hi;
            if (lop_prior_log_interval(b->cfg, a, z, from, to, &log_piece[band], b->err) !=
                LOP_OK) {
                free(share);
                free(log_piece);
                return b->err->status;
            }
            top = fmax(top, log_piece[band]);
            row[band] = z - a;
            a = z;
        }
        band--; /* the band of the cell's upper edge */
        double sum = 0;
        for (size_t k = first; k <= band; k++) {
            if (top > -INFINITY)
                row[k] = exp(log_piece[k] - top);
            sum += row[k];
        }
        for (size_t k = first; k <= band; k++)
            row[k] /= sum;
    }
    free(log_piece);
    *out = share;
    return LOP_OK;
}

static lop_status build_choice_scores(builder *b, const char *section)
{
    lop_problem *p = b->p;
    double sign = p->payoff ? -1 : 1;
    static const char *const curve_only[] = {"curve", "relative", "scale", "under", "over",
                                             "a", "half_width", "below", "above", "inside",
                                             "outside", "error", "value"};
    if (reject_keys(b, section, curve_only, COUNT(curve_only),
                    "belongs to a loss curve of estimates (`[actions] estimate = yes`)") != LOP_OK ||
        check_rows(b, section) != LOP_OK)
        return b->err->status;
    const lop_entry *cuts = pb_find(b, section, "cuts");
    const lop_entry *at = pb_find(b, section, "at");
    if (p->states_kind != LOP_STATES_GRID) {
        static const char *const grid_only[] = {"cuts", "at"};
        if (reject_keys(b, section, grid_only, 2,
                        "belongs to a grid of states; finite states take one value per "
                        "state in each action's row") != LOP_OK)
            return LOP_EINPUT;
        for (size_t a = 0; a < p->n_actions; a++) {
            double *row = NULL;
            if (read_row(b, section, a, p->n_states, "state", &row) != LOP_OK)
                return b->err->status;
            for (size_t s = 0; s < p->n_states; s++)
                p->loss[a * p->n_states + s] = sign * row[s];
            free(row);
        }
        return LOP_OK;
    }
    if ((cuts != NULL) == (at != NULL))
        return pb_error(b, cuts ? at->line : pb_section_line(b, section), section,
                        cuts ? "at" : NULL,
                        "a grid of states takes either `cuts` (bands) or `at` (lines), "
                        "exactly one");
    double *knots = NULL;
    size_t n_knots;
    if (read_increasing(b, section, cuts ? "cuts" : "at", &knots, &n_knots) != LOP_OK) {
        free(knots);
        return b->err->status;
    }
    size_t width = cuts ? n_knots + 1 : n_knots;
    double *share = NULL;
    lop_status st = cuts ? band_shares(b, knots, n_knots, &share) : LOP_OK;
    /* least[band]: the least loss of any action in the band, for the loss with the state
     * known; a cell split by a cut averages it over its bands, as it does each loss. */
    double *least = cuts ? malloc(width * sizeof *least) : NULL;
    if (cuts && st == LOP_OK && !least)
        st = pb_no_memory(b);
    for (size_t k = 0; least && k < width; k++)
        least[k] = INFINITY;
    for (size_t a = 0; a < p->n_actions && st == LOP_OK; a++) {
        double *row = NULL;
        st = read_row(b, section, a, width, cuts ? "band" : "`at` point", &row);
        for (size_t k = 0; least && st == LOP_OK && k < width; k++)
            least[k] = fmin(least[k], sign * row[k]);
        for (size_t s = 0; st == LOP_OK && s < p->n_states; s++) {
            double v = 0;
            if (cuts) {
                for (size_t band = 0; band < width; band++)
                    if (share[s * width + band] > 0)
                        v += share[s * width + band] * row[band];
            } else {
                v = lop_interp_linear(knots, row, n_knots, p->state_values[s]);
            }
            p->loss[a * p->n_states + s] = sign * v;
        }
        free(row);
    }
    if (cuts && st == LOP_OK) {
        p->perfect = calloc(p->n_states, sizeof *p->perfect);
        if (!p->perfect)
            st = pb_no_memory(b);
        for (size_t s = 0; st == LOP_OK && s < p->n_states; s++)
            for (size_t band = 0; band < width; band++)
                if (share[s * width + band] > 0)
                    p->perfect[s] += share[s * width + band] * least[band];
    }
    free(least);
    free(share);
    free(knots);
    return st;
}

/* A curve parameter out of its range is reported at its own line. */
static lop_status check_param(builder *b, const char *section, const char *key, bool ok,
                              const char *must)
{
    const lop_entry *e = pb_find(b, section, key);
    if (ok || !e)
        return LOP_OK;
    return pb_error(b, e->line, section, key, "must be %s, found %s", must, e->value);
}

static lop_status check_curve_params(builder *b, const char *section)
{
    const lop_curve *c = &b->p->curve;
    if (check_param(b, section, "scale", c->scale > 0, "> 0") != LOP_OK ||
        check_param(b, section, "under", c->under > 0, "> 0") != LOP_OK ||
        check_param(b, section, "over", c->over > 0, "> 0") != LOP_OK ||
        check_param(b, section, "a", c->a != 0, "a number other than 0") != LOP_OK)
        return LOP_EINPUT;
    if (c->kind != LOP_CURVE_TOLERANCE)
        return LOP_OK;
    if (check_param(b, section, "half_width", c->above > 0, "> 0") != LOP_OK ||
        check_param(b, section, "below", c->below >= 0, ">= 0") != LOP_OK ||
        check_param(b, section, "above", c->above >= 0, ">= 0") != LOP_OK)
        return LOP_EINPUT;
    /* A band of no width holds a continuous state with probability 0: every estimate
     * would score `outside`, which is never what a file with a tolerance means. */
    if (!(c->below + c->above > 0))
        return check_param(b, section, "above", false,
                           "> 0 when below is 0 (a band of no width holds no state)");
    if (c->relative && c->below >= 1)
        return check_param(b, section, pb_find(b, section, "below") ? "below" : "half_width",
                           false, "below 1 when relative = yes (the band reaches down to "
                                  "estimate/(1 - below))");
    return LOP_OK;
}

static lop_status read_curve_params(builder *b, const char *section,
                                    const lop_curve_family *spec)
{
    lop_problem *p = b->p;
    lop_curve *c = &p->curve;
    double sign = p->payoff ? -1 : 1;
    bool scaled = spec->kind == LOP_CURVE_SQUARED || spec->kind == LOP_CURVE_ABSOLUTE ||
                  spec->kind == LOP_CURVE_LINEX;
    bool sided = spec->kind == LOP_CURVE_LINLIN || spec->kind == LOP_CURVE_QUADQUAD;
    if ((scaled && pb_number(b, section, "scale", false, lop_keys_default("loss", "scale"), &c->scale) != LOP_OK) ||
        (sided && (pb_number(b, section, "under", true, 0, &c->under) != LOP_OK ||
                   pb_number(b, section, "over", true, 0, &c->over) != LOP_OK)) ||
        (spec->kind == LOP_CURVE_LINEX && pb_number(b, section, "a", true, 0, &c->a) != LOP_OK))
        return b->err->status;
    if (spec->kind == LOP_CURVE_TOLERANCE) {
        const lop_entry *half = pb_find(b, section, "half_width");
        const lop_entry *below = pb_find(b, section, "below");
        const lop_entry *above = pb_find(b, section, "above");
        if (half && (below || above))
            return pb_error(b, half->line, section, "half_width",
                            "give half_width, or below and above, not both");
        if (half) {
            if (lop_parse_number(b->cfg, half, false, &c->above, b->err) != LOP_OK)
                return b->err->status;
            c->below = c->above;
        } else if (pb_number(b, section, "below", true, 0, &c->below) != LOP_OK ||
                   pb_number(b, section, "above", true, 0, &c->above) != LOP_OK) {
            return b->err->status;
        }
        /* [loss]: inside defaults to 0 and outside is required; [payoff]: the reverse
         * would be odd, so both are required there. */
        if (pb_number(b, section, "inside", p->payoff, lop_keys_default("loss", "inside"), &c->inside) != LOP_OK ||
            pb_number(b, section, "outside", true, 0, &c->outside) != LOP_OK)
            return b->err->status;
        c->inside *= sign;
        c->outside *= sign;
    }
    if (spec->kind == LOP_CURVE_POINTS) {
        size_t n_value;
        if (!pb_find(b, section, "error") || !pb_find(b, section, "value"))
            return pb_error(b, pb_section_line(b, section), section,
                            pb_find(b, section, "error") ? "value" : "error",
                            "missing: a `points` curve needs `error` and `value` lists");
        if (read_increasing(b, section, "error", &p->curve_error, &c->n_points) != LOP_OK ||
            lop_parse_numbers(b->cfg, pb_find(b, section, "value"), &p->curve_value, &n_value,
                              b->err) != LOP_OK)
            return b->err->status;
        if (n_value != c->n_points)
            return pb_error(b, pb_find(b, section, "value")->line, section, "value",
                            "expected one value per error point (%zu), found %zu", c->n_points,
                            n_value);
        for (size_t i = 0; i < n_value; i++)
            p->curve_value[i] *= sign;
        c->error = p->curve_error;
        c->value = p->curve_value;
    }
    return LOP_OK;
}

static lop_status build_curve(builder *b, const char *section)
{
    lop_problem *p = b->p;
    const lop_entry *e = pb_find(b, section, "curve");
    if (!e)
        return pb_error(b, pb_section_line(b, section), section, "curve",
                        "missing: estimates need a loss `curve` (squared, absolute, linlin, "
                        "quadquad, linex, tolerance or points)");
    const lop_curve_family *spec = lop_curve_family_named(e->value);
    if (!spec) {
        size_t n_families;
        const lop_curve_family *families = lop_curve_families(&n_families);
        char *names[16];
        for (size_t i = 0; i < n_families && i < COUNT(names); i++)
            names[i] = (char *)families[i].name;
        const char *near = lop_nearest(e->value, names, n_families < COUNT(names) ? n_families : COUNT(names));
        return pb_error(b, e->line, section, "curve",
                        "unknown curve `%s`%s%s%s; known: squared, absolute, linlin, "
                        "quadquad, linex, tolerance, points",
                        e->value, near ? " (did you mean `" : "", near ? near : "",
                        near ? "`?)" : "");
    }
    p->curve_line = e->line;
    if (p->payoff && !spec->payoff_allowed)
        return pb_error(b, e->line, section, "curve",
                        "`%s` is a loss curve: give it in [loss] (only tolerance and points "
                        "curves may be payoffs)",
                        spec->name);
    for (size_t i = 0; i < COUNT(curve_keys); i++) {
        const lop_entry *k = pb_find(b, section, curve_keys[i]);
        if (k && !lop_curve_family_has(spec, curve_keys[i]))
            return pb_error(b, k->line, section, k->key, "does not belong to curve `%s`",
                            spec->name);
    }
    static const char *const choice_only[] = {"cuts", "at"};
    if (reject_keys(b, section, choice_only, 2,
                    "belongs to choices over a grid of states, not to estimates") != LOP_OK)
        return LOP_EINPUT;
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *k = &b->cfg->entries[i];
        if (strcmp(k->section, section) == 0 && !lop_keys_find(section, k->key))
            return pb_error(b, k->line, section, k->key,
                            "estimates take a loss curve, not rows per action");
    }
    p->curve.kind = spec->kind;
    if (read_curve_params(b, section, spec) != LOP_OK)
        return b->err->status;
    const lop_entry *rel = pb_find(b, section, "relative");
    if (rel) {
        if (strcmp(rel->value, "yes") != 0 && strcmp(rel->value, "no") != 0)
            return pb_error(b, rel->line, section, "relative", "expected yes or no");
        p->curve.relative = strcmp(rel->value, "yes") == 0;
        for (size_t i = 0; p->curve.relative && i < p->n_states; i++)
            if (!(p->state_values[i] > 0))
                return pb_error(b, rel->line, section, "relative",
                                "relative errors divide by the state, so every state must be "
                                "> 0 (one is %g)",
                                p->state_values[i]);
    }
    if (check_curve_params(b, section) != LOP_OK)
        return LOP_EINPUT;
    const char *invalid = lop_curve_invalid(&p->curve);
    if (invalid)
        return pb_error(b, e->line, section, "curve", "%s", invalid);
    return LOP_OK;
}

lop_status pb_build_scores(builder *b)
{
    lop_problem *p = b->p;
    p->payoff = lop_config_section(b->cfg, "payoff") != NULL;
    const char *section = p->payoff ? "payoff" : "loss";
    if (!lop_config_section(b->cfg, section))
        return pb_error(b, 0, "loss", NULL,
                        "missing section: [loss] or [payoff] with one row per action%s",
                        p->estimate ? " (for estimates: a `curve`)" : "");
    return p->estimate ? build_curve(b, section) : build_choice_scores(b, section);
}
