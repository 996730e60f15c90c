#include <string.h>

#include "lopside/keys.h"
#include "lopside/strutil.h"

static const lop_section_spec sections[] = {
    {"problem", false, false, true, "title and units of the problem"},
    {"states", false, false, true, "the hidden quantity: labels, values, or a grid"},
    {"prior", true, false, true, "belief about the state; [prior.NAME] for mixture parts"},
    {"evidence", true, false, true, "a measurement channel; [evidence.NAME] for several"},
    {"actions", false, false, true, "named choices, or an estimate of the state"},
    {"loss", false, false, true, "cost of each action in each state (lower is better)"},
    {"payoff", false, false, true, "gain of each action in each state (higher is better)"},
    {"value", false, false, true, "value of extra information"},
    {"sweep", true, true, true, "re-solve over a range of one or two settings"},
    {"design", true, true, true, "find the setting that meets a goal"},
    {"rule", true, true, true, "another decision rule to compare with the Bayes rule"},
    {"simulate", false, false, true, "simulated sessions"},
    {"output", false, false, true, "where to write JSON, CSV and the workbook"},
};

static const lop_key_spec keys[] = {
    {"problem", "title", true, "name of the problem (required)"},
    {"problem", "notes", true, "free text carried into the reports"},
    {"problem", "unit", true, "unit of the state, e.g. ms"},
    {"problem", "score_unit", true, "unit of loss or payoff, e.g. points"},

    {"states", "labels", true, "named states: clean, contaminated"},
    {"states", "values", true, "numeric states: 1, 2, 4, 8"},
    {"states", "from", true, "first point of a state grid"},
    {"states", "to", true, "last point of a state grid"},
    {"states", "points", true, "number of grid points (default 1001)"},
    {"states", "step", true, "grid spacing instead of points"},
    {"states", "max_points", true, "raise the limit of 1,000,000 grid points"},

    {"prior", "weights", true, "finite states: one non-negative weight per state"},
    {"prior", "family", true, "grid states: uniform, normal, lognormal, gamma, beta, student, "
                              "exponential, table, mixture"},
    {"prior", "low", true, "uniform: lower end (default: the grid)"},
    {"prior", "high", true, "uniform: upper end (default: the grid)"},
    {"prior", "mean", true, "normal or exponential: mean"},
    {"prior", "sd", true, "normal: standard deviation"},
    {"prior", "median", true, "lognormal: median"},
    {"prior", "log_sd", true, "lognormal: sd of the log"},
    {"prior", "shape", true, "gamma: shape"},
    {"prior", "scale", true, "gamma or student: scale"},
    {"prior", "alpha", true, "beta: alpha"},
    {"prior", "beta", true, "beta: beta"},
    {"prior", "center", true, "student: center"},
    {"prior", "df", true, "student: degrees of freedom"},
    {"prior", "at", true, "table: increasing points"},
    {"prior", "density", true, "table: density at each point (>= 0)"},
    {"prior", "parts", true, "mixture: names of the [prior.NAME] parts"},
    {"prior", "weight", true, "mixture part: its weight"},

    {"evidence", "outcomes", true, "outcome labels of a table channel"},
    {"evidence", "given.*", true, "given.STATE = P(outcome | STATE), one per outcome"},
    {"evidence", "noise", true, "gaussian, scalar, lognormal, poisson or binomial"},
    {"evidence", "mean", true, "finite states: mean per state (or one for all)"},
    {"evidence", "sd", true, "gaussian: sd (finite states: one or one per state)"},
    {"evidence", "repeats", true, "independent measurements per decision (default 1)"},
    {"evidence", "observed", true, "the case at hand: one value or label per repeat"},
    {"evidence", "grid_from", true, "first measurement point of the rule table"},
    {"evidence", "grid_to", true, "last measurement point of the rule table"},
    {"evidence", "grid_points", true, "measurement points of the rule table (default 201)"},
    {"evidence", "response", true, "r(s): identity, linear, power, saturating, logistic, table"},
    {"evidence", "weber", true, "scalar noise: Weber fraction (sd = weber r(s))"},
    {"evidence", "sd_floor", true, "scalar noise: smallest sd (default 0)"},
    {"evidence", "log_sd", true, "lognormal noise: sd of the log"},
    {"evidence", "window", true, "poisson noise: counting window (default 1)"},
    {"evidence", "trials", true, "binomial noise: trials per measurement"},
    {"evidence", "offset", true, "linear or power response: offset"},
    {"evidence", "slope", true, "linear response: slope"},
    {"evidence", "gain", true, "power response: gain"},
    {"evidence", "exponent", true, "power or saturating response: exponent"},
    {"evidence", "base", true, "saturating response: base"},
    {"evidence", "top", true, "saturating response: top"},
    {"evidence", "half", true, "saturating response: half"},
    {"evidence", "low", true, "logistic response: low"},
    {"evidence", "high", true, "logistic response: high"},
    {"evidence", "mid", true, "logistic response: mid"},
    {"evidence", "width", true, "logistic response: width"},
    {"evidence", "at", true, "table response: points"},
    {"evidence", "value", true, "table response: values"},

    {"actions", "labels", true, "named actions; ties go to the earlier label"},
    {"actions", "estimate", true, "yes: the action is an estimate of the state"},
    {"actions", "from", true, "estimate grid: first point (default: the states)"},
    {"actions", "to", true, "estimate grid: last point"},
    {"actions", "points", true, "estimate grid: number of points"},

    {"loss", "*", true, "ACTION = one loss per state, band or `at` point"},
    {"loss", "cuts", true, "grid states: band edges (a state on a cut is in the upper band)"},
    {"loss", "at", true, "grid states: points of a piecewise-linear loss"},
    {"loss", "curve", true, "estimates: squared, absolute, linlin, quadquad, linex, "
                            "tolerance, points"},
    {"loss", "relative", true, "estimates: yes divides the error by the state"},
    {"loss", "scale", true, "squared, absolute, linex: multiplier (default 1)"},
    {"loss", "under", true, "linlin, quadquad: weight of under-estimates"},
    {"loss", "over", true, "linlin, quadquad: weight of over-estimates"},
    {"loss", "a", true, "linex: asymmetry (a > 0 punishes over-estimates more)"},
    {"loss", "half_width", true, "tolerance: band -half_width <= error <= half_width"},
    {"loss", "below", true, "tolerance: band reaches this far below"},
    {"loss", "above", true, "tolerance: band reaches this far above"},
    {"loss", "inside", true, "tolerance: score inside the band"},
    {"loss", "outside", true, "tolerance: score outside the band"},
    {"loss", "error", true, "points: increasing errors"},
    {"loss", "value", true, "points: score at each error"},
    {"payoff", "*", true, "ACTION = one payoff per state, band or `at` point"},
    {"payoff", "cuts", true, "grid states: band edges"},
    {"payoff", "at", true, "grid states: points of a piecewise-linear payoff"},
    {"payoff", "curve", true, "estimates: tolerance or points"},
    {"payoff", "relative", true, "estimates: yes divides the error by the state"},
    {"payoff", "half_width", true, "tolerance: band -half_width <= error <= half_width"},
    {"payoff", "below", true, "tolerance: band reaches this far below"},
    {"payoff", "above", true, "tolerance: band reaches this far above"},
    {"payoff", "inside", true, "tolerance: payoff inside the band"},
    {"payoff", "outside", true, "tolerance: payoff outside the band"},
    {"payoff", "error", true, "points: increasing errors"},
    {"payoff", "value", true, "points: payoff at each error"},
    {"payoff", "scale", true, "(loss curves only)"},
    {"payoff", "under", true, "(loss curves only)"},
    {"payoff", "over", true, "(loss curves only)"},
    {"payoff", "a", true, "(loss curves only)"},

    {"rule", "kind", true, "posterior_mean, posterior_median, posterior_mode, "
                           "max_likelihood, threshold, believed"},
    {"rule", "at", true, "threshold: the second action is chosen at or above it"},
    {"rule", "PATH", true, "believed: a path and the number it believes, e.g. prior.sd"},

    {"value", "channels", true, "channels to price (default: all)"},
    {"value", "up_to", true, "extra repeats to price, 1 to up_to (default 5)"},
    {"value", "cost", true, "cost per extra measurement in score units (default 0)"},

    {"sweep", "x", true, "a path, or rule.threshold"},
    {"sweep", "x_from", true, "first value of x"},
    {"sweep", "x_to", true, "last value of x"},
    {"sweep", "x_points", true, "points along x (default 21)"},
    {"sweep", "y", true, "optional second path"},
    {"sweep", "y_from", true, "first value of y"},
    {"sweep", "y_to", true, "last value of y"},
    {"sweep", "y_points", true, "points along y (default 21)"},

    {"design", "vary", true, "the path to set"},
    {"design", "from", true, "lower end of the bracket"},
    {"design", "to", true, "upper end of the bracket"},
    {"design", "goal", true, "switch_point, choice_rate.ACTION, risk or action"},
    {"design", "equals", true, "the target value (an action label for `action`)"},

    {"simulate", "sessions", true, "simulated sessions (default 1000)"},
    {"simulate", "trials", true, "decisions per session (default 100)"},
    {"simulate", "seed", true, "seed of the random generator (default 1)"},
    {"simulate", "rules", true, "bayes and [rule.NAME] names (default bayes)"},
    {"simulate", "floor", true, "report the share of sessions whose total is below it"},

    {"output", "json", true, "JSON results, relative to the problem file"},
    {"output", "csv", true, "folder of CSV tables, relative to the problem file"},
    {"output", "workbook", true, "XLSX workbook, relative to the problem file"},
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
    fputs("Problem file reference (keys marked * are part of the format but not handled\n"
          "by this version yet; a file using them is rejected with its line).\n",
          out);
    for (size_t s = 0; s < COUNT(sections); s++) {
        fprintf(out, "\n[%s]%s  %s\n", sections[s].kind,
                sections[s].supported ? "" : " *", sections[s].help);
        if (sections[s].named)
            fprintf(out, "  (also [%s.NAME])\n", sections[s].kind);
        for (size_t i = 0; i < COUNT(keys); i++) {
            if (strcmp(keys[i].kind, sections[s].kind) != 0)
                continue;
            const char *shown = strcmp(keys[i].key, "*") == 0 ? "ACTION" : keys[i].key;
            fprintf(out, "  %-12s%s %s\n", shown, keys[i].supported ? " " : "*",
                    keys[i].help);
        }
    }
}
