#include <string.h>

#include "lopside/keys.h"
#include "lopside/strutil.h"

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
    {"problem", "title", "name of the problem (required)"},
    {"problem", "notes", "free text carried into the reports"},
    {"problem", "unit", "unit of the state, e.g. ms"},
    {"problem", "score_unit", "unit of loss or payoff, e.g. points"},
    {"problem", "accuracy", "error allowed in every number, relative to its scale (1e-6)"},
    {"problem", "refine", "halve the grids' steps this many times before solving (0)"},

    {"states", "labels", "named states: clean, contaminated"},
    {"states", "values", "numeric states: 1, 2, 4, 8"},
    {"states", "from", "first point of a state grid"},
    {"states", "to", "last point of a state grid"},
    {"states", "points", "number of grid points (default 1001)"},
    {"states", "step", "grid spacing instead of points"},
    {"states", "max_points", "raise the limit of 1,000,000 grid points"},

    {"prior", "weights", "finite states: one non-negative weight per state"},
    {"prior", "family", "grid states: uniform, normal, lognormal, gamma, beta, student, "
                              "exponential, table, mixture"},
    {"prior", "low", "uniform: lower end (default: the grid)"},
    {"prior", "high", "uniform: upper end (default: the grid)"},
    {"prior", "mean", "normal or exponential: mean"},
    {"prior", "sd", "normal: standard deviation"},
    {"prior", "median", "lognormal: median"},
    {"prior", "log_sd", "lognormal: sd of the log"},
    {"prior", "shape", "gamma: shape"},
    {"prior", "scale", "gamma or student: scale"},
    {"prior", "alpha", "beta: alpha"},
    {"prior", "beta", "beta: beta"},
    {"prior", "center", "student: center"},
    {"prior", "df", "student: degrees of freedom"},
    {"prior", "at", "table: increasing points"},
    {"prior", "density", "table: density at each point (>= 0)"},
    {"prior", "parts", "mixture: names of the [prior.NAME] parts"},
    {"prior", "weight", "mixture part: its weight"},

    {"evidence", "outcomes", "outcome labels of a table channel"},
    {"evidence", "given.*", "given.STATE = P(outcome | STATE), one per outcome"},
    {"evidence", "noise", "gaussian, scalar, lognormal, poisson or binomial"},
    {"evidence", "mean", "finite states: mean per state (or one for all)"},
    {"evidence", "sd", "gaussian: sd (finite states: one or one per state)"},
    {"evidence", "repeats", "independent measurements per decision (default 1)"},
    {"evidence", "observed", "the case at hand: one value or label per repeat"},
    {"evidence", "grid_from", "first measurement point of the rule table"},
    {"evidence", "grid_to", "last measurement point of the rule table"},
    {"evidence", "grid_points", "measurement points of the rule table (default 201)"},
    {"evidence", "response", "r(s): identity, linear, power, saturating, logistic, table"},
    {"evidence", "weber", "scalar noise: Weber fraction (sd = weber r(s))"},
    {"evidence", "sd_floor", "scalar noise: smallest sd (default 0)"},
    {"evidence", "log_sd", "lognormal noise: sd of the log"},
    {"evidence", "window", "poisson noise: counting window (default 1)"},
    {"evidence", "trials", "binomial noise: trials per measurement"},
    {"evidence", "offset", "linear or power response: offset"},
    {"evidence", "slope", "linear response: slope"},
    {"evidence", "gain", "power response: gain"},
    {"evidence", "exponent", "power or saturating response: exponent"},
    {"evidence", "base", "saturating response: base"},
    {"evidence", "top", "saturating response: top"},
    {"evidence", "half", "saturating response: half"},
    {"evidence", "low", "logistic response: low"},
    {"evidence", "high", "logistic response: high"},
    {"evidence", "mid", "logistic response: mid"},
    {"evidence", "width", "logistic response: width"},
    {"evidence", "at", "table response: points"},
    {"evidence", "value", "table response: values"},

    {"actions", "labels", "named actions; ties go to the earlier label"},
    {"actions", "estimate", "yes: the action is an estimate of the state"},
    {"actions", "from", "estimate grid: first point (default: the states)"},
    {"actions", "to", "estimate grid: last point"},
    {"actions", "points", "estimate grid: number of points"},

    {"loss", "*", "ACTION or row.ACTION = one loss per state, band or `at` point"},
    {"loss", "cuts", "grid states: band edges (a state on a cut is in the upper band)"},
    {"loss", "at", "grid states: points of a piecewise-linear loss"},
    {"loss", "curve", "estimates: squared, absolute, linlin, quadquad, linex, "
                            "tolerance, points"},
    {"loss", "relative", "estimates: yes divides the error by the state"},
    {"loss", "scale", "squared, absolute, linex: multiplier (default 1)"},
    {"loss", "under", "linlin, quadquad: weight of under-estimates"},
    {"loss", "over", "linlin, quadquad: weight of over-estimates"},
    {"loss", "a", "linex: asymmetry (a > 0 punishes over-estimates more)"},
    {"loss", "half_width", "tolerance: band -half_width <= error <= half_width"},
    {"loss", "below", "tolerance: band reaches this far below"},
    {"loss", "above", "tolerance: band reaches this far above"},
    {"loss", "inside", "tolerance: score inside the band"},
    {"loss", "outside", "tolerance: score outside the band"},
    {"loss", "error", "points: increasing errors"},
    {"loss", "value", "points: score at each error"},
    {"payoff", "*", "ACTION or row.ACTION = one payoff per state, band or `at` point"},
    {"payoff", "cuts", "grid states: band edges"},
    {"payoff", "at", "grid states: points of a piecewise-linear payoff"},
    {"payoff", "curve", "estimates: tolerance or points"},
    {"payoff", "relative", "estimates: yes divides the error by the state"},
    {"payoff", "half_width", "tolerance: band -half_width <= error <= half_width"},
    {"payoff", "below", "tolerance: band reaches this far below"},
    {"payoff", "above", "tolerance: band reaches this far above"},
    {"payoff", "inside", "tolerance: payoff inside the band"},
    {"payoff", "outside", "tolerance: payoff outside the band"},
    {"payoff", "error", "points: increasing errors"},
    {"payoff", "value", "points: payoff at each error"},
    {"payoff", "scale", "(loss curves only)"},
    {"payoff", "under", "(loss curves only)"},
    {"payoff", "over", "(loss curves only)"},
    {"payoff", "a", "(loss curves only)"},

    {"rule", "kind", "posterior_mean, posterior_median, posterior_mode, "
                           "max_likelihood, threshold, believed"},
    {"rule", "at", "threshold: the second action is chosen at or above it"},
    {"rule", "PATH", "believed: a path and the number it believes, e.g. prior.sd"},

    {"value", "channels", "channels to price (default: all)"},
    {"value", "up_to", "extra repeats to price, 1 to up_to (default 5)"},
    {"value", "cost", "cost per extra measurement in score units (default 0)"},

    {"sweep", "x", "a path, or rule.threshold"},
    {"sweep", "x_from", "first value of x"},
    {"sweep", "x_to", "last value of x"},
    {"sweep", "x_points", "points along x (default 21)"},
    {"sweep", "y", "optional second path"},
    {"sweep", "y_from", "first value of y"},
    {"sweep", "y_to", "last value of y"},
    {"sweep", "y_points", "points along y (default 21)"},

    {"design", "vary", "the path to set"},
    {"design", "from", "lower end of the bracket"},
    {"design", "to", "upper end of the bracket"},
    {"design", "goal", "switch_point, choice_rate.ACTION, risk or action"},
    {"design", "equals", "the target value (an action label for `action`)"},

    {"simulate", "sessions", "simulated sessions (default 1000)"},
    {"simulate", "trials", "decisions per session (default 100)"},
    {"simulate", "seed", "seed of the random generator (default 1)"},
    {"simulate", "rules", "bayes and [rule.NAME] names (default bayes)"},
    {"simulate", "floor", "report the share of sessions whose total is below it"},

    {"output", "json", "JSON results, relative to the problem file"},
    {"output", "csv", "folder of CSV tables, relative to the problem file"},
    {"output", "workbook", "XLSX workbook, relative to the problem file"},
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

void lop_keys_print_reference(FILE *out)
{
    fputs("Problem file reference: every section and key lopside reads.\n", out);
    for (size_t s = 0; s < COUNT(sections); s++) {
        fprintf(out, "\n[%s]  %s\n", sections[s].kind, sections[s].help);
        if (sections[s].named)
            fprintf(out, "  (also [%s.NAME])\n", sections[s].kind);
        for (size_t i = 0; i < COUNT(keys); i++) {
            if (strcmp(keys[i].kind, sections[s].kind) != 0)
                continue;
            const char *shown = strcmp(keys[i].key, "*") == 0 ? "ACTION" : keys[i].key;
            fprintf(out, "  %-12s %s\n", shown, keys[i].help);
        }
    }
}
