#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/keys.h"
#include "lopside/util/strutil.h"

static const lop_section_spec sections[] = {
    {"problem", false, false, "title and units of the problem"},
    {"states", false, false, "the hidden quantity: labels, values, or a grid"},
    {"prior", true, false, "belief about the state; [prior.NAME] for mixture parts"},
    {"evidence", true, false, "a measurement channel; [evidence.NAME] for several"},
    {"actions", false, false, "named choices, or an estimate of the state"},
    {"loss", false, false, "cost of each action in each state (lower is better)"},
    {"payoff", false, false, "gain of each action in each state (higher is better)"},
    {"value", false, false, "value of extra information"},
    {"sweep", true, true, "re-solve over a range of one or two settings"},
    {"design", true, true, "find the setting that meets a goal"},
    {"rule", true, true, "another decision rule to compare with the Bayes rule"},
    {"simulate", false, false, "simulated sessions"},
    {"output", false, false, "where to write JSON, CSV and the workbook"},
};

static const lop_key_spec keys[] = {
    {"problem", "title", LOP_KEY_TEXT, "", "",
     "name of the problem (required)"},
    {"problem", "notes", LOP_KEY_TEXT, "", "",
     "free text carried into the reports"},
    {"problem", "unit", LOP_KEY_TEXT, "", "",
     "unit of the state, e.g. ms"},
    {"problem", "score_unit", LOP_KEY_TEXT, "", "",
     "unit of loss or payoff, e.g. points"},
    {"problem", "accuracy", LOP_KEY_NUMBER, "1e-12 to 0.1", "1e-6",
     "error allowed in every number, relative to its scale"},
    {"problem", "refine", LOP_KEY_WHOLE, "-2 to 20", "0",
     "halve the grids' steps this many times before solving"},

    {"states", "labels", LOP_KEY_WORDS, "", "",
     "named states: clean, contaminated"},
    {"states", "values", LOP_KEY_NUMBERS, "increasing", "",
     "numeric states: 1, 2, 4, 8"},
    {"states", "from", LOP_KEY_NUMBER, "", "",
     "first point of a state grid"},
    {"states", "to", LOP_KEY_NUMBER, "> from", "",
     "last point of a state grid"},
    {"states", "points", LOP_KEY_WHOLE, ">= 2", "1001",
     "number of grid points"},
    {"states", "step", LOP_KEY_NUMBER, "> 0", "",
     "grid spacing instead of points"},
    {"states", "max_points", LOP_KEY_WHOLE, ">= 2", "1000000",
     "raise the limit of 1,000,000 grid points"},

    {"prior", "weights", LOP_KEY_NUMBERS, ">= 0", "",
     "finite states: one non-negative weight per state"},
    {"prior", "family", LOP_KEY_CHOICE, "", "",
     "grid states: uniform, normal, lognormal, gamma, beta, student, "
                              "exponential, table, mixture"},
    {"prior", "low", LOP_KEY_NUMBER, "", "the first state",
     "uniform: lower end"},
    {"prior", "high", LOP_KEY_NUMBER, "> low", "the last state",
     "uniform: upper end"},
    {"prior", "mean", LOP_KEY_NUMBER, "", "",
     "normal or exponential: mean"},
    {"prior", "sd", LOP_KEY_NUMBER, "> 0", "",
     "normal: standard deviation"},
    {"prior", "median", LOP_KEY_NUMBER, "> 0", "",
     "lognormal: median"},
    {"prior", "log_sd", LOP_KEY_NUMBER, "> 0", "",
     "lognormal: sd of the log"},
    {"prior", "shape", LOP_KEY_NUMBER, "> 0", "",
     "gamma: shape"},
    {"prior", "scale", LOP_KEY_NUMBER, "> 0", "",
     "gamma or student: scale"},
    {"prior", "alpha", LOP_KEY_NUMBER, "> 0", "",
     "beta: alpha"},
    {"prior", "beta", LOP_KEY_NUMBER, "> 0", "",
     "beta: beta"},
    {"prior", "center", LOP_KEY_NUMBER, "", "",
     "student: center"},
    {"prior", "df", LOP_KEY_NUMBER, "> 0", "",
     "student: degrees of freedom"},
    {"prior", "at", LOP_KEY_NUMBERS, "increasing", "",
     "table: increasing points"},
    {"prior", "density", LOP_KEY_NUMBERS, ">= 0", "",
     "table: density at each point (>= 0)"},
    {"prior", "parts", LOP_KEY_WORDS, "", "",
     "mixture: names of the [prior.NAME] parts"},
    {"prior", "weight", LOP_KEY_NUMBER, "> 0", "",
     "mixture part: its weight"},

    {"evidence", "outcomes", LOP_KEY_WORDS, "", "",
     "outcome labels of a table channel"},
    {"evidence", "given.*", LOP_KEY_NUMBERS, "0 to 1, summing to 1", "",
     "given.STATE = P(outcome | STATE), one per outcome"},
    {"evidence", "noise", LOP_KEY_CHOICE, "", "",
     "gaussian, scalar, lognormal, poisson or binomial"},
    {"evidence", "mean", LOP_KEY_NUMBERS, "", "",
     "finite states: mean per state (or one for all)"},
    {"evidence", "sd", LOP_KEY_NUMBERS, "> 0", "",
     "gaussian: sd (finite states: one or one per state)"},
    {"evidence", "repeats", LOP_KEY_WHOLE, ">= 1", "1",
     "independent measurements per decision"},
    {"evidence", "observed", LOP_KEY_NUMBERS, "", "",
     "the case at hand: one value or label per repeat"},
    {"evidence", "grid_from", LOP_KEY_NUMBER, "", "",
     "first measurement point of the rule table"},
    {"evidence", "grid_to", LOP_KEY_NUMBER, "> grid_from", "",
     "last measurement point of the rule table"},
    {"evidence", "grid_points", LOP_KEY_WHOLE, ">= 2",
     "201; on a grid of states more for narrow noise (a quarter sd apart, up to 20001)",
     "measurement points of the rule table"},
    {"evidence", "response", LOP_KEY_CHOICE, "", "identity",
     "r(s): identity, linear, power, saturating, logistic, table"},
    {"evidence", "weber", LOP_KEY_NUMBER, "> 0", "",
     "scalar noise: Weber fraction (sd = weber r(s))"},
    {"evidence", "sd_floor", LOP_KEY_NUMBER, ">= 0", "0",
     "scalar noise: smallest sd"},
    {"evidence", "log_sd", LOP_KEY_NUMBER, "> 0", "",
     "lognormal noise: sd of the log"},
    {"evidence", "window", LOP_KEY_NUMBER, "> 0", "1",
     "poisson noise: counting window"},
    {"evidence", "trials", LOP_KEY_WHOLE, ">= 1", "",
     "binomial noise: trials per measurement"},
    {"evidence", "offset", LOP_KEY_NUMBER, "", "",
     "linear or power response: offset"},
    {"evidence", "slope", LOP_KEY_NUMBER, "", "",
     "linear response: slope"},
    {"evidence", "gain", LOP_KEY_NUMBER, "", "",
     "power response: gain"},
    {"evidence", "exponent", LOP_KEY_NUMBER, "", "",
     "power or saturating response: exponent"},
    {"evidence", "base", LOP_KEY_NUMBER, "", "",
     "saturating response: base"},
    {"evidence", "top", LOP_KEY_NUMBER, "", "",
     "saturating response: top"},
    {"evidence", "half", LOP_KEY_NUMBER, "> 0", "",
     "saturating response: half"},
    {"evidence", "low", LOP_KEY_NUMBER, "", "",
     "logistic response: low"},
    {"evidence", "high", LOP_KEY_NUMBER, "", "",
     "logistic response: high"},
    {"evidence", "mid", LOP_KEY_NUMBER, "", "",
     "logistic response: mid"},
    {"evidence", "width", LOP_KEY_NUMBER, "!= 0", "",
     "logistic response: width"},
    {"evidence", "at", LOP_KEY_NUMBERS, "increasing", "",
     "table response: points"},
    {"evidence", "value", LOP_KEY_NUMBERS, "", "",
     "table response: values"},

    {"actions", "labels", LOP_KEY_WORDS, "", "",
     "named actions; ties go to the earlier label"},
    {"actions", "estimate", LOP_KEY_YES_NO, "", "no",
     "yes: the action is an estimate of the state"},
    {"actions", "from", LOP_KEY_NUMBER, "", "the first state",
     "estimate grid: first point"},
    {"actions", "to", LOP_KEY_NUMBER, "> from", "the last state",
     "estimate grid: last point"},
    {"actions", "points", LOP_KEY_WHOLE, ">= 2", "the states' points",
     "estimate grid: number of points"},

    {"loss", "*", LOP_KEY_NUMBERS, "", "",
     "ACTION or row.ACTION = one loss per state, band or `at` point"},
    {"loss", "cuts", LOP_KEY_NUMBERS, "increasing", "",
     "grid states: band edges (a state on a cut is in the upper band)"},
    {"loss", "at", LOP_KEY_NUMBERS, "increasing", "",
     "grid states: points of a piecewise-linear loss"},
    {"loss", "curve", LOP_KEY_CHOICE, "", "",
     "estimates: squared, absolute, linlin, quadquad, linex, "
                            "tolerance, points"},
    {"loss", "relative", LOP_KEY_YES_NO, "", "no",
     "estimates: yes divides the error by the state"},
    {"loss", "scale", LOP_KEY_NUMBER, "> 0", "1",
     "squared, absolute, linex: multiplier"},
    {"loss", "under", LOP_KEY_NUMBER, "> 0", "",
     "linlin, quadquad: weight of under-estimates"},
    {"loss", "over", LOP_KEY_NUMBER, "> 0", "",
     "linlin, quadquad: weight of over-estimates"},
    {"loss", "a", LOP_KEY_NUMBER, "!= 0", "",
     "linex: asymmetry (a > 0 punishes over-estimates more)"},
    {"loss", "half_width", LOP_KEY_NUMBER, "> 0", "",
     "tolerance: band -half_width <= error <= half_width"},
    {"loss", "below", LOP_KEY_NUMBER, ">= 0", "",
     "tolerance: band reaches this far below"},
    {"loss", "above", LOP_KEY_NUMBER, ">= 0", "",
     "tolerance: band reaches this far above (below + above > 0)"},
    {"loss", "inside", LOP_KEY_NUMBER, "", "0",
     "tolerance: score inside the band"},
    {"loss", "outside", LOP_KEY_NUMBER, "", "",
     "tolerance: score outside the band"},
    {"loss", "error", LOP_KEY_NUMBERS, "increasing", "",
     "points: increasing errors"},
    {"loss", "value", LOP_KEY_NUMBERS, "", "",
     "points: score at each error"},
    {"payoff", "*", LOP_KEY_NUMBERS, "", "",
     "ACTION or row.ACTION = one payoff per state, band or `at` point"},
    {"payoff", "cuts", LOP_KEY_NUMBERS, "increasing", "",
     "grid states: band edges"},
    {"payoff", "at", LOP_KEY_NUMBERS, "increasing", "",
     "grid states: points of a piecewise-linear payoff"},
    {"payoff", "curve", LOP_KEY_CHOICE, "", "",
     "estimates: tolerance or points"},
    {"payoff", "relative", LOP_KEY_YES_NO, "", "no",
     "estimates: yes divides the error by the state"},
    {"payoff", "half_width", LOP_KEY_NUMBER, "> 0", "",
     "tolerance: band -half_width <= error <= half_width"},
    {"payoff", "below", LOP_KEY_NUMBER, ">= 0", "",
     "tolerance: band reaches this far below"},
    {"payoff", "above", LOP_KEY_NUMBER, ">= 0", "",
     "tolerance: band reaches this far above (below + above > 0)"},
    {"payoff", "inside", LOP_KEY_NUMBER, "", "",
     "tolerance: payoff inside the band"},
    {"payoff", "outside", LOP_KEY_NUMBER, "", "",
     "tolerance: payoff outside the band"},
    {"payoff", "error", LOP_KEY_NUMBERS, "increasing", "",
     "points: increasing errors"},
    {"payoff", "value", LOP_KEY_NUMBERS, "", "",
     "points: payoff at each error"},
    {"payoff", "scale", LOP_KEY_NUMBER, "", "",
     "(loss curves only)"},
    {"payoff", "under", LOP_KEY_NUMBER, "", "",
     "(loss curves only)"},
    {"payoff", "over", LOP_KEY_NUMBER, "", "",
     "(loss curves only)"},
    {"payoff", "a", LOP_KEY_NUMBER, "", "",
     "(loss curves only)"},

    {"rule", "kind", LOP_KEY_CHOICE, "", "",
     "posterior_mean, posterior_median, posterior_mode, "
                           "max_likelihood, threshold, believed"},
    {"rule", "at", LOP_KEY_NUMBER, "", "",
     "threshold: the second action is chosen at or above it"},
    {"rule", "PATH", LOP_KEY_NUMBER, "", "",
     "believed: a path and the number it believes, e.g. prior.sd"},

    {"value", "channels", LOP_KEY_WORDS, "", "all",
     "channels to price"},
    {"value", "up_to", LOP_KEY_WHOLE, "1 to 1000", "5",
     "extra repeats to price, 1 to up_to"},
    {"value", "cost", LOP_KEY_NUMBER, ">= 0", "0",
     "cost per extra measurement in score units"},

    {"sweep", "x", LOP_KEY_PATH, "", "",
     "a path, or rule.threshold"},
    {"sweep", "x_from", LOP_KEY_NUMBER, "", "",
     "first value of x"},
    {"sweep", "x_to", LOP_KEY_NUMBER, "", "",
     "last value of x"},
    {"sweep", "x_points", LOP_KEY_WHOLE, ">= 2", "21",
     "points along x"},
    {"sweep", "y", LOP_KEY_PATH, "", "",
     "optional second path"},
    {"sweep", "y_from", LOP_KEY_NUMBER, "", "",
     "first value of y"},
    {"sweep", "y_to", LOP_KEY_NUMBER, "", "",
     "last value of y"},
    {"sweep", "y_points", LOP_KEY_WHOLE, ">= 2", "21",
     "points along y"},

    {"design", "vary", LOP_KEY_PATH, "", "",
     "the path to set"},
    {"design", "from", LOP_KEY_NUMBER, "", "",
     "lower end of the bracket"},
    {"design", "to", LOP_KEY_NUMBER, "", "",
     "upper end of the bracket"},
    {"design", "goal", LOP_KEY_CHOICE, "", "",
     "switch_point, choice_rate.ACTION, risk or action"},
    {"design", "equals", LOP_KEY_TEXT, "", "",
     "the target value (an action label for `action`)"},

    {"simulate", "sessions", LOP_KEY_WHOLE, ">= 1", "1000",
     "simulated sessions"},
    {"simulate", "trials", LOP_KEY_WHOLE, ">= 1", "100",
     "decisions per session"},
    {"simulate", "seed", LOP_KEY_WHOLE, ">= 0", "1",
     "seed of the random generator"},
    {"simulate", "rules", LOP_KEY_WORDS, "", "bayes",
     "bayes and [rule.NAME] names"},
    {"simulate", "floor", LOP_KEY_NUMBER, "", "",
     "report the share of sessions whose total is below it"},

    {"output", "json", LOP_KEY_TEXT, "", "",
     "JSON results, relative to the problem file"},
    {"output", "csv", LOP_KEY_TEXT, "", "",
     "folder of CSV tables, relative to the problem file"},
    {"output", "workbook", LOP_KEY_TEXT, "", "",
     "XLSX workbook, relative to the problem file"},
};

#define COUNT(a) (sizeof(a) / sizeof(a)[0])

const lop_section_spec *lop_keys_section(const char *kind)
{
    for (size_t i = 0; i < COUNT(sections); i++)
        if (strcmp(sections[i].kind, kind) == 0)
            return &sections[i];
    return NULL;
}

static bool key_matches(const char *pattern, const char *key)
{
    size_t n = strlen(pattern);
    if (strcmp(pattern, "*") == 0 || strcmp(pattern, "PATH") == 0)
        return false; /* free-form keys are checked by the caller */
    if (n >= 2 && strcmp(pattern + n - 2, ".*") == 0)
        return strncmp(pattern, key, n - 1) == 0 && key[n - 1] != '\0';
    return strcmp(pattern, key) == 0;
}

const lop_key_spec *lop_keys_find(const char *kind, const char *key)
{
    for (size_t i = 0; i < COUNT(keys); i++)
        if (strcmp(keys[i].kind, kind) == 0 && key_matches(keys[i].key, key))
            return &keys[i];
    return NULL;
}

const char *lop_keys_suggest(const char *kind, const char *key)
{
    const char *best = NULL;
    size_t best_d = (size_t)-1;
    for (size_t i = 0; i < COUNT(keys); i++) {
        if (strcmp(keys[i].kind, kind) != 0 || strcmp(keys[i].key, "*") == 0 ||
            strcmp(keys[i].key, "PATH") == 0)
            continue;
        size_t d = lop_edit_distance(key, keys[i].key);
        if (d < best_d) {
            best_d = d;
            best = keys[i].key;
        }
    }
    return best && lop_close_enough(best_d, strlen(key)) ? best : NULL;
}

const char *lop_keys_suggest_section(const char *kind)
{
    const char *best = NULL;
    size_t best_d = (size_t)-1;
    for (size_t i = 0; i < COUNT(sections); i++) {
        size_t d = lop_edit_distance(kind, sections[i].kind);
        if (d < best_d) {
            best_d = d;
            best = sections[i].kind;
        }
    }
    return best && lop_close_enough(best_d, strlen(kind)) ? best : NULL;
}

double lop_keys_default(const char *kind, const char *key)
{
    const lop_key_spec *spec = lop_keys_find(kind, key);
    char *end;
    double v = spec ? strtod(spec->fallback, &end) : NAN;
    return spec && spec->fallback[0] && *end == '\0' ? v : NAN;
}

const char *lop_keys_type_name(lop_key_type type)
{
    static const char *const names[] = {"text", "number", "whole number", "list of numbers",
                                        "list of labels", "word", "yes or no", "path"};
    return (size_t)type < COUNT(names) ? names[type] : "?";
}

/* The key as a reader writes it: ACTION for the rows of the scores. */
static const char *shown_key(const lop_key_spec *k)
{
    return strcmp(k->key, "*") == 0 ? "ACTION" : k->key;
}

void lop_keys_print_reference(FILE *out, bool markdown)
{
    if (markdown)
        fputs("| section | key | value | allowed | default | meaning |\n"
              "| --- | --- | --- | --- | --- | --- |\n", out);
    else
        fputs("Problem file reference: every section and key lopside reads.\n", out);
    for (size_t s = 0; s < COUNT(sections); s++) {
        const char *kind = sections[s].kind;
        if (!markdown) {
            fprintf(out, "\n[%s]  %s\n", kind, sections[s].help);
            if (sections[s].named)
                fprintf(out, "  (also [%s.NAME])\n", kind);
        }
        for (size_t i = 0; i < COUNT(keys); i++) {
            const lop_key_spec *k = &keys[i];
            if (strcmp(k->kind, kind) != 0)
                continue;
            if (markdown) {
                fprintf(out, "| `[%s%s]` | `%s` | %s | %s | %s | %s |\n", kind,
                        sections[s].name_required ? ".NAME" : "", shown_key(k),
                        lop_keys_type_name(k->type), k->bounds, k->fallback, k->help);
                continue;
            }
            fprintf(out, "  %-12s %s", shown_key(k), k->help);
            if (k->bounds[0] || k->fallback[0])
                fprintf(out, " (%s%s%s%s%s)", lop_keys_type_name(k->type),
                        k->bounds[0] ? " " : "", k->bounds, k->fallback[0] ? ", default " : "",
                        k->fallback);
            fputc('\n', out);
        }
    }
}
