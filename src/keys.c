#include <string.h>

#include "lopside/keys.h"
#include "lopside/strutil.h"

static const lop_section_spec sections[] = {
    {"problem", false, true, "title and units of the problem"},
    {"states", false, true, "the hidden quantity: labels, values, or a grid"},
    {"prior", true, true, "belief about the state before any evidence"},
    {"evidence", true, true, "a measurement channel; [evidence.NAME] for several"},
    {"actions", false, true, "what the decision maker can do"},
    {"loss", false, true, "cost of each action in each state (lower is better)"},
    {"payoff", false, true, "gain of each action in each state (higher is better)"},
    {"value", false, false, "value of extra information"},
    {"sweep", true, false, "re-solve over a range of one or two settings"},
    {"design", true, false, "find the setting that meets a goal"},
    {"rule", true, false, "another decision rule to compare with the Bayes rule"},
    {"simulate", false, false, "simulated sessions"},
    {"output", false, true, "where to write JSON, CSV and the workbook"},
};

static const lop_key_spec keys[] = {
    {"problem", "title", true, "name of the problem (required)"},
    {"problem", "notes", true, "free text carried into the reports"},
    {"problem", "unit", true, "unit of the state, e.g. ms"},
    {"problem", "score_unit", true, "unit of loss or payoff, e.g. points"},

    {"states", "labels", true, "named states: clean, contaminated"},
    {"states", "values", true, "numeric states: 1, 2, 4, 8"},
    {"states", "from", false, "first point of a state grid"},
    {"states", "to", false, "last point of a state grid"},
    {"states", "points", false, "number of grid points (default 1001)"},
    {"states", "step", false, "grid spacing instead of points"},

    {"prior", "weights", true, "one non-negative weight per state; normalized"},
    {"prior", "family", false, "distribution over a state grid"},
    {"prior", "low", false, "uniform: lower end"},
    {"prior", "high", false, "uniform: upper end"},
    {"prior", "mean", false, "normal or exponential: mean"},
    {"prior", "sd", false, "normal: standard deviation"},
    {"prior", "median", false, "lognormal: median"},
    {"prior", "log_sd", false, "lognormal: sd of the log"},
    {"prior", "shape", false, "gamma: shape"},
    {"prior", "scale", false, "gamma or student: scale"},
    {"prior", "alpha", false, "beta: alpha"},
    {"prior", "beta", false, "beta: beta"},
    {"prior", "center", false, "student: center"},
    {"prior", "df", false, "student: degrees of freedom"},
    {"prior", "at", false, "table: increasing points"},
    {"prior", "density", false, "table: density at each point"},
    {"prior", "parts", false, "mixture: names of the [prior.NAME] parts"},
    {"prior", "weight", false, "mixture part: its weight"},

    {"evidence", "outcomes", true, "outcome labels of a table channel"},
    {"evidence", "given.*", true, "given.STATE = P(outcome | STATE), one per outcome"},
    {"evidence", "noise", true, "distribution of a numeric measurement: gaussian"},
    {"evidence", "mean", true, "gaussian: mean, one value or one per state"},
    {"evidence", "sd", true, "gaussian: sd, one value or one per state"},
    {"evidence", "repeats", true, "independent measurements per decision (default 1)"},
    {"evidence", "observed", true, "the case at hand: one value or label per repeat"},
    {"evidence", "grid_from", true, "first measurement point of the rule table"},
    {"evidence", "grid_to", true, "last measurement point of the rule table"},
    {"evidence", "grid_points", true, "measurement points of the rule table (default 201)"},
    {"evidence", "response", false, "response function r(s) of numeric states"},
    {"evidence", "weber", false, "scalar noise: Weber fraction"},
    {"evidence", "sd_floor", false, "scalar noise: smallest sd"},
    {"evidence", "log_sd", false, "lognormal noise: sd of the log"},
    {"evidence", "window", false, "poisson noise: counting window"},
    {"evidence", "trials", false, "binomial noise: trials"},
    {"evidence", "offset", false, "linear or power response: offset"},
    {"evidence", "slope", false, "linear response: slope"},
    {"evidence", "gain", false, "power response: gain"},
    {"evidence", "exponent", false, "power or saturating response: exponent"},
    {"evidence", "base", false, "saturating response: base"},
    {"evidence", "top", false, "saturating response: top"},
    {"evidence", "half", false, "saturating response: half"},
    {"evidence", "low", false, "logistic response: low"},
    {"evidence", "high", false, "logistic response: high"},
    {"evidence", "mid", false, "logistic response: mid"},
    {"evidence", "width", false, "logistic response: width"},
    {"evidence", "at", false, "table response: points"},
    {"evidence", "value", false, "table response: values"},

    {"actions", "labels", true, "named actions; ties go to the earlier label"},
    {"actions", "estimate", false, "yes: the action is an estimate of the state"},
    {"actions", "from", false, "estimate grid: first point"},
    {"actions", "to", false, "estimate grid: last point"},
    {"actions", "points", false, "estimate grid: number of points"},

    {"loss", "*", true, "ACTION = one loss per state"},
    {"loss", "cuts", false, "grid states: band edges"},
    {"loss", "at", false, "grid states: points of a piecewise-linear loss"},
    {"loss", "curve", false, "estimates: loss curve of the error"},
    {"loss", "relative", false, "estimates: error divided by the state"},
    {"payoff", "*", true, "ACTION = one payoff per state"},
    {"payoff", "cuts", false, "grid states: band edges"},
    {"payoff", "at", false, "grid states: points of a piecewise-linear payoff"},
    {"payoff", "curve", false, "estimates: payoff curve of the error"},
    {"payoff", "relative", false, "estimates: error divided by the state"},

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
    if (strcmp(pattern, "*") == 0)
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
        if (strcmp(keys[i].kind, kind) != 0 || strcmp(keys[i].key, "*") == 0)
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
