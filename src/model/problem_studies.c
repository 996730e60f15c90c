/* [value], [sweep.NAME], [design.NAME] and [simulate]: what to study around the problem.
 * Paths are checked here against the file's sections; whether a value along a sweep or
 * design keeps the problem valid is found when it is re-built at that point. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/keys.h"
#include "lopside/input/path.h"
#include "lopside/util/strutil.h"
#include "lopside/model/study.h"
#include "problem_build.h"

#define SWEEP_POINTS_MAX 100000
/* Points of one sweep in all (x points times y points). */
#define SWEEP_TOTAL_MAX 1000000
#define SESSIONS_MAX 100000000
#define TRIALS_MAX 100000000

/* A path must name a key of a section present: one the file gives, or one the format
 * knows for that kind of section (`evidence.ear.repeats` may be absent and default to
 * 1); rule.threshold is the one special path of sweeps. */
static lop_status check_path(builder *b, const char *section, const lop_entry *e,
                             lop_path *parsed)
{
    lop_path_site site = {section, e->key, e->line};
    if (lop_path_parse(b->cfg, e->value, &site, parsed, b->err) != LOP_OK)
        return b->err->status;
    char kind[LOP_PATH_PART];
    snprintf(kind, sizeof kind, "%.*s", (int)strcspn(parsed->section, "."), parsed->section);
    bool free_form = strcmp(kind, "loss") == 0 || strcmp(kind, "payoff") == 0 ||
                     strcmp(kind, "rule") == 0;
    if (lop_config_find(b->cfg, parsed->section, parsed->key) ||
        lop_keys_find(kind, parsed->key) || free_form)
        return LOP_OK;
    const char *near = lop_keys_suggest(kind, parsed->key);
    return pb_error(b, e->line, section, e->key,
                    "the path `%s` names nothing: [%s] has no key `%s`%s%s%s", e->value,
                    parsed->section, parsed->key, near ? "; did you mean `" : "",
                    near ? near : "", near ? "`?" : "");
}

static lop_status take_path(builder *b, const char *section, const char *key, bool special_ok,
                            char **out, lop_path *parsed, int *line)
{
    const lop_entry *e = pb_find(b, section, key);
    if (!e)
        return pb_error(b, pb_section_line(b, section), section, key,
                        "missing: a path such as `prior.sd` or `payoff.say_yes[2]`");
    *line = e->line;
    *out = lop_strdup(e->value);
    if (!*out)
        return pb_no_memory(b);
    if (special_ok && strcmp(e->value, "rule.threshold") == 0)
        return LOP_OK;
    char *special[] = {"rule.threshold"};
    bool has_section = false;
    for (size_t i = 0; i < b->cfg->n_sections && !has_section; i++) {
        size_t n = strlen(b->cfg->sections[i].name);
        has_section = strncmp(e->value, b->cfg->sections[i].name, n) == 0 && e->value[n] == '.';
    }
    if (special_ok && !has_section && lop_nearest(e->value, special, 1))
        return pb_error(b, e->line, section, key,
                        "`%s` names nothing; did you mean `rule.threshold` (every threshold "
                        "of a two-action problem)?", e->value);
    /* Studies re-build the model: a path into another study or an output changes
     * nothing that is solved. */
    static const char *const not_model[] = {"value.", "sweep.", "design.", "simulate.",
                                            "output.", "rule."};
    for (size_t i = 0; i < sizeof not_model / sizeof *not_model; i++)
        if (strncmp(e->value, not_model[i], strlen(not_model[i])) == 0)
            return pb_error(b, e->line, section, key,
                            "`%s` is not part of the model that is re-solved; vary a number "
                            "of [prior], [evidence], [loss] or [payoff], [states] or "
                            "[actions]",
                            e->value);
    return check_path(b, section, e, parsed);
}

const char *lop_sweep_axis_label(const lop_sweep_spec *w, char axis, char *buf, size_t size)
{
    if (axis == 'x' && strcmp(w->x, "rule.threshold") == 0) {
        snprintf(buf, size, "threshold");
        return buf;
    }
    return lop_path_label(axis == 'x' ? &w->x_path : &w->y_path, buf, size);
}

static lop_status build_value(builder *b)
{
    lop_problem *p = b->p;
    const lop_section *sec = lop_config_section(b->cfg, "value");
    if (!sec)
        return LOP_OK;
    lop_value_spec *v = &p->value;
    v->present = true;
    v->line = sec->line;
    if (!p->n_channels)
        return pb_error(b, sec->line, "value", NULL,
                        "the value of information needs [evidence] channels to price");
    double up_to;
    if (pb_number(b, "value", "up_to", false, lop_keys_default("value", "up_to"), &up_to) != LOP_OK ||
        pb_number(b, "value", "cost", false, lop_keys_default("value", "cost"), &v->cost) != LOP_OK)
        return b->err->status;
    if (up_to < 1 || up_to != floor(up_to) || up_to > 1000)
        return pb_error(b, pb_find(b, "value", "up_to")->line, "value", "up_to",
                        "expected a whole number from 1 to 1000");
    v->up_to = (size_t)up_to;
    if (v->cost < 0)
        return pb_error(b, pb_find(b, "value", "cost")->line, "value", "cost",
                        "a cost is >= 0 (in score units per extra measurement)");
    v->channels = malloc(p->n_channels * sizeof *v->channels);
    if (!v->channels)
        return pb_no_memory(b);
    const lop_entry *e = pb_find(b, "value", "channels");
    if (!e) {
        for (size_t i = 0; i < p->n_channels; i++)
            v->channels[v->n_channels++] = i;
        return LOP_OK;
    }
    lop_list list;
    if (lop_parse_list(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    char **names = malloc(p->n_channels * sizeof *names);
    if (!names) {
        lop_list_free(&list);
        return pb_no_memory(b);
    }
    for (size_t i = 0; i < p->n_channels; i++)
        names[i] = p->channels[i].name[0] ? p->channels[i].name : "evidence";
    lop_status st = LOP_OK;
    for (size_t k = 0; k < list.n && st == LOP_OK; k++) {
        long found = -1;
        for (size_t i = 0; i < p->n_channels; i++)
            if (strcmp(names[i], list.items[k]) == 0)
                found = (long)i;
        if (found < 0) {
            const char *near = lop_nearest(list.items[k], names, p->n_channels);
            st = pb_error(b, list.lines[k], "value", "channels",
                          "`%s` is not a channel%s%s%s", list.items[k],
                          near ? "; did you mean `" : "", near ? near : "", near ? "`?" : "");
        } else {
            v->channels[v->n_channels++] = (size_t)found;
        }
    }
    free(names);
    lop_list_free(&list);
    return st;
}

static lop_status read_axis(builder *b, const char *section, const char *axis, char **path,
                            lop_path *parsed, double *from, double *to, size_t *points,
                            int *line)
{
    char key[16];
    snprintf(key, sizeof key, "%s_from", axis);
    if (take_path(b, section, axis, true, path, parsed, line) != LOP_OK ||
        pb_number(b, section, key, true, 0, from) != LOP_OK)
        return b->err->status;
    snprintf(key, sizeof key, "%s_to", axis);
    if (pb_number(b, section, key, true, 0, to) != LOP_OK)
        return b->err->status;
    snprintf(key, sizeof key, "%s_points", axis);
    const lop_entry *e = pb_find(b, section, key);
    *points = (size_t)lop_keys_default("sweep", "x_points");
    if (e && lop_parse_count(b->cfg, e, 2, SWEEP_POINTS_MAX, points, b->err) != LOP_OK)
        return b->err->status;
    if (*to == *from)
        return pb_error(b, pb_find(b, section, key[0] == 'x' ? "x_to" : "y_to")->line, section,
                        key[0] == 'x' ? "x_to" : "y_to", "the range is empty (from = to)");
    return LOP_OK;
}

static lop_status build_sweep(builder *b, const lop_section *sec, lop_sweep_spec *w)
{
    lop_problem *p = b->p;
    w->name = lop_strdup(sec->name + 6);
    w->line = sec->line;
    if (!w->name)
        return pb_no_memory(b);
    if (read_axis(b, sec->name, "x", &w->x, &w->x_path, &w->x_from, &w->x_to, &w->x_points,
                  &w->x_line) != LOP_OK)
        return b->err->status;
    if (strcmp(w->x, "rule.threshold") == 0 &&
        (p->estimate || p->n_actions != 2 || lop_problem_numeric_channels(p) != 1))
        return pb_error(b, w->x_line, sec->name, "x",
                        "rule.threshold sweeps need two actions and one numeric channel");
    static const char *const y_keys[] = {"y", "y_from", "y_to", "y_points"};
    bool any_y = false;
    for (size_t i = 0; i < 4; i++)
        any_y |= pb_find(b, sec->name, y_keys[i]) != NULL;
    if (!any_y)
        return LOP_OK;
    if (read_axis(b, sec->name, "y", &w->y, &w->y_path, &w->y_from, &w->y_to, &w->y_points,
                  &w->y_line) != LOP_OK)
        return b->err->status;
    if (strcmp(w->y, "rule.threshold") == 0)
        return pb_error(b, w->y_line, sec->name, "y", "rule.threshold may only be the x axis");
    if ((double)w->x_points * (double)w->y_points > SWEEP_TOTAL_MAX)
        return pb_error(b, pb_find(b, sec->name, "y_points")
                               ? pb_find(b, sec->name, "y_points")->line
                               : w->y_line,
                        sec->name, "y_points",
                        "x_points times y_points is %zu points; a sweep holds at most %d",
                        w->x_points * w->y_points, SWEEP_TOTAL_MAX);
    return LOP_OK;
}

/* Every point of a sweep must give a valid problem: re-built here, so `check` finds a
 * bad point as `run` would, and nothing is computed or written before. */
static lop_status check_sweep_points(builder *b, const lop_sweep_spec *w)
{
    bool threshold = strcmp(w->x, "rule.threshold") == 0;
    size_t nx = threshold ? 1 : w->x_points, ny = w->y ? w->y_points : 1;
    lop_path paths[2];
    size_t n_paths = 0;
    if (!threshold)
        paths[n_paths++] = w->x_path;
    if (w->y)
        paths[n_paths++] = w->y_path;
    if (!n_paths)
        return LOP_OK;
    lop_config *scratch = lop_config_copy(b->cfg);
    if (!scratch)
        return pb_no_memory(b);
    char section[128];
    snprintf(section, sizeof section, "sweep.%s", w->name);
    lop_path_site site = {section, threshold ? "y" : "x", threshold ? w->y_line : w->x_line};
    lop_status st = LOP_OK;
    for (size_t j = 0; j < ny && st == LOP_OK; j++) {
        for (size_t i = 0; i < nx && st == LOP_OK; i++) {
            double values[2];
            size_t k = 0;
            if (!threshold)
                values[k++] = lop_study_axis(w->x_from, w->x_to, w->x_points, i);
            if (w->y)
                values[k++] = lop_study_axis(w->y_from, w->y_to, w->y_points, j);
            char where[64];
            snprintf(where, sizeof where, "point %zu of %zu", j * nx + i + 1, nx * ny);
            lop_problem *model =
                lop_study_model_at(scratch, paths, values, n_paths, where, &site, b->err);
            if (!model)
                st = b->err->status;
            lop_problem_free(model);
        }
    }
    lop_config_free(scratch);
    return st;
}

/* Both ends of a design's bracket must give a valid problem (the bracket is checked
 * before any root is sought). */
static lop_status check_design_bracket(builder *b, const lop_design_spec *d)
{
    lop_config *scratch = lop_config_copy(b->cfg);
    if (!scratch)
        return pb_no_memory(b);
    char section[128];
    snprintf(section, sizeof section, "design.%s", d->name);
    lop_path_site site = {section, "vary", d->vary_line};
    lop_status st = LOP_OK;
    /* A point inside the bracket too: a key that takes whole numbers (repeats, points)
     * cannot be varied continuously, and should fail here rather than mid-search. */
    static const char *const where[] = {"the bracket's `from`", "the bracket's `to`",
                                        "a value inside the bracket"};
    for (int k = 0; k < 3 && st == LOP_OK; k++) {
        double v = k == 0 ? d->from : k == 1 ? d->to : d->from + 0.4142 * (d->to - d->from);
        lop_problem *model = lop_study_model_at(scratch, &d->vary_path, &v, 1, where[k], &site,
                                                b->err);
        if (!model)
            st = b->err->status;
        lop_problem_free(model);
    }
    lop_config_free(scratch);
    return st;
}

static lop_status build_design(builder *b, const lop_section *sec, lop_design_spec *d)
{
    lop_problem *p = b->p;
    d->name = lop_strdup(sec->name + 7);
    d->line = sec->line;
    if (!d->name)
        return pb_no_memory(b);
    if (take_path(b, sec->name, "vary", false, &d->vary, &d->vary_path, &d->vary_line) !=
            LOP_OK ||
        pb_number(b, sec->name, "from", true, 0, &d->from) != LOP_OK ||
        pb_number(b, sec->name, "to", true, 0, &d->to) != LOP_OK)
        return b->err->status;
    if (!(d->to > d->from))
        return pb_error(b, pb_find(b, sec->name, "to")->line, sec->name, "to",
                        "the bracket needs `to` (%g) above `from` (%g)", d->to, d->from);
    const lop_entry *goal = pb_find(b, sec->name, "goal");
    const lop_entry *equals = pb_find(b, sec->name, "equals");
    if (!goal || !equals)
        return pb_error(b, sec->line, sec->name, goal ? "equals" : "goal",
                        "missing: a design needs `goal` (switch_point, choice_rate.ACTION, "
                        "risk or action) and `equals`");
    const char *g = goal->value;
    if (strcmp(g, "switch_point") == 0) {
        d->goal = LOP_GOAL_SWITCH_POINT;
        if (p->estimate || lop_problem_numeric_channels(p) != 1)
            return pb_error(b, goal->line, sec->name, "goal",
                            "switch_point needs choices and one numeric channel");
    } else if (strcmp(g, "risk") == 0) {
        d->goal = LOP_GOAL_RISK;
    } else if (strncmp(g, "choice_rate.", 12) == 0 || strcmp(g, "action") == 0) {
        bool rate = g[0] == 'c';
        d->goal = rate ? LOP_GOAL_CHOICE_RATE : LOP_GOAL_ACTION;
        if (p->estimate)
            return pb_error(b, goal->line, sec->name, "goal", "`%s` needs named actions", g);
        const char *label = rate ? g + 12 : equals->value;
        long a = -1;
        for (size_t i = 0; i < p->n_actions; i++)
            if (strcmp(p->actions[i], label) == 0)
                a = (long)i;
        if (a < 0) {
            const char *near = lop_nearest(label, p->actions, p->n_actions);
            return pb_error(b, rate ? goal->line : equals->line, sec->name,
                            rate ? "goal" : "equals", "`%s` is not an action%s%s%s", label,
                            near ? "; did you mean `" : "", near ? near : "", near ? "`?" : "");
        }
        d->goal_action = (size_t)a;
        if (!rate)
            return LOP_OK;
        if (!p->n_channels)
            return pb_error(b, goal->line, sec->name, "goal",
                            "choice rates need [evidence]: without it one action is always "
                            "chosen");
    } else {
        return pb_error(b, goal->line, sec->name, "goal",
                        "unknown goal `%s`; known: switch_point, choice_rate.ACTION, risk, "
                        "action",
                        g);
    }
    if (lop_parse_number(b->cfg, equals, false, &d->equals, b->err) != LOP_OK)
        return b->err->status;
    if (d->goal == LOP_GOAL_CHOICE_RATE && (d->equals < 0 || d->equals > 1))
        return pb_error(b, equals->line, sec->name, "equals", "a choice rate lies in [0, 1]");
    return LOP_OK;
}

static lop_status build_simulate(builder *b)
{
    lop_problem *p = b->p;
    const lop_section *sec = lop_config_section(b->cfg, "simulate");
    if (!sec)
        return LOP_OK;
    lop_simulate_spec *m = &p->simulate;
    m->present = true;
    m->line = sec->line;
    const lop_entry *e;
    m->sessions = (size_t)lop_keys_default("simulate", "sessions");
    m->trials = (size_t)lop_keys_default("simulate", "trials");
    if (((e = pb_find(b, "simulate", "sessions")) &&
         lop_parse_count(b->cfg, e, 1, SESSIONS_MAX, &m->sessions, b->err) != LOP_OK) ||
        ((e = pb_find(b, "simulate", "trials")) &&
         lop_parse_count(b->cfg, e, 1, TRIALS_MAX, &m->trials, b->err) != LOP_OK))
        return b->err->status;
    size_t seed = (size_t)lop_keys_default("simulate", "seed");
    if ((e = pb_find(b, "simulate", "seed")) &&
        lop_parse_count(b->cfg, e, 0, 4294967295u, &seed, b->err) != LOP_OK)
        return b->err->status;
    m->seed = (unsigned long)seed;
    if ((e = pb_find(b, "simulate", "floor"))) {
        if (lop_parse_number(b->cfg, e, false, &m->floor, b->err) != LOP_OK)
            return b->err->status;
        m->floor_given = true;
    }
    e = pb_find(b, "simulate", "rules");
    lop_list list = {0};
    if (e && lop_parse_list(b->cfg, e, &list, b->err) != LOP_OK)
        return b->err->status;
    m->rules = malloc((list.n ? list.n : 1) * sizeof *m->rules);
    if (!m->rules) {
        lop_list_free(&list);
        return pb_no_memory(b);
    }
    if (!e)
        m->rules[m->n_rules++] = -1;
    lop_status st = LOP_OK;
    for (size_t k = 0; k < list.n && st == LOP_OK; k++) {
        long found = strcmp(list.items[k], "bayes") == 0 ? -1 : -2;
        for (size_t r = 0; found == -2 && r < p->n_rules; r++)
            if (strcmp(p->rules[r].name, list.items[k]) == 0)
                found = (long)r;
        if (found == -2)
            st = pb_error(b, list.lines[k], "simulate", "rules",
                          "`%s` is neither `bayes` nor a [rule.NAME] of this file",
                          list.items[k]);
        else
            m->rules[m->n_rules++] = found;
    }
    lop_list_free(&list);
    if (st == LOP_OK && !p->n_channels)
        st = pb_error(b, sec->line, "simulate", NULL,
                      "a simulation draws measurements: the problem has no [evidence]");
    return st;
}

lop_status pb_build_studies(builder *b)
{
    lop_problem *p = b->p;
    size_t n_sweeps = 0, n_designs = 0;
    for (size_t i = 0; i < b->cfg->n_sections; i++) {
        n_sweeps += strncmp(b->cfg->sections[i].name, "sweep.", 6) == 0;
        n_designs += strncmp(b->cfg->sections[i].name, "design.", 7) == 0;
    }
    p->sweeps = calloc(n_sweeps ? n_sweeps : 1, sizeof *p->sweeps);
    p->designs = calloc(n_designs ? n_designs : 1, sizeof *p->designs);
    if (!p->sweeps || !p->designs)
        return pb_no_memory(b);
    for (size_t i = 0; i < b->cfg->n_sections; i++) {
        const lop_section *sec = &b->cfg->sections[i];
        lop_status st = LOP_OK;
        if (strncmp(sec->name, "sweep.", 6) == 0)
            st = build_sweep(b, sec, &p->sweeps[p->n_sweeps++]);
        else if (strncmp(sec->name, "design.", 7) == 0)
            st = build_design(b, sec, &p->designs[p->n_designs++]);
        if (st != LOP_OK)
            return st;
    }
    if (build_value(b) != LOP_OK || build_simulate(b) != LOP_OK)
        return b->err->status;
    for (size_t i = 0; i < p->n_sweeps; i++)
        if (check_sweep_points(b, &p->sweeps[i]) != LOP_OK)
            return b->err->status;
    for (size_t i = 0; i < p->n_designs; i++)
        if (check_design_bracket(b, &p->designs[i]) != LOP_OK)
            return b->err->status;
    p->source = lop_config_copy(b->cfg);
    return p->source ? LOP_OK : pb_no_memory(b);
}

lop_problem *lop_problem_build_model(const lop_config *cfg, lop_error *err)
{
    return pb_build_nested(cfg, err);
}

void pb_free_studies(lop_problem *p)
{
    free(p->value.channels);
    for (size_t i = 0; i < p->n_sweeps; i++) {
        free(p->sweeps[i].name);
        free(p->sweeps[i].x);
        free(p->sweeps[i].y);
    }
    free(p->sweeps);
    for (size_t i = 0; i < p->n_designs; i++) {
        free(p->designs[i].name);
        free(p->designs[i].vary);
    }
    free(p->designs);
    free(p->simulate.rules);
    lop_config_free(p->source);
}
