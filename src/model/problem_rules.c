/* [rule.NAME]: other ways to decide, compared with the Bayes rule. A `believed` rule
 * is the Bayes rule of the problem with some numbers changed (paths), re-built here. */
#include <stdlib.h>
#include <string.h>

#include "lopside/input/path.h"
#include "lopside/util/strutil.h"
#include "problem_build.h"

static const struct {
    const char *name;
    lop_rule_kind kind;
    bool estimates;   /* needs estimates (true) or choices (false) */
} kinds[] = {
    {"posterior_mean", LOP_RULE_KIND_MEAN, true},
    {"posterior_median", LOP_RULE_KIND_MEDIAN, true},
    {"posterior_mode", LOP_RULE_KIND_MODE, true},
    {"max_likelihood", LOP_RULE_KIND_MAX_LIKELIHOOD, true},
    {"threshold", LOP_RULE_KIND_THRESHOLD, false},
    {"believed", LOP_RULE_KIND_BELIEVED, false},
};

#define COUNT(x) (sizeof(x) / sizeof(x)[0])

const char *lop_rule_kind_name(lop_rule_kind kind)
{
    for (size_t k = 0; k < COUNT(kinds); k++)
        if (kinds[k].kind == kind)
            return kinds[k].name;
    return "unknown";
}

static lop_status build_believed(builder *b, const char *section, lop_rule_spec *r)
{
    lop_config *copy = lop_config_copy(b->cfg);
    if (!copy)
        return pb_no_memory(b);
    size_t overrides = 0;
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (strcmp(e->section, section) != 0 || !strchr(e->key, '.'))
            continue;
        if (strncmp(e->key, "rule.", 5) == 0 || strncmp(e->key, "output.", 7) == 0) {
            lop_config_free(copy);
            return pb_error(b, e->line, section, e->key,
                            "a believed problem may change the model, not other rules or "
                            "outputs");
        }
        lop_path path;
        lop_path_site site = {section, e->key, e->line};
        if (lop_path_parse(copy, e->key, &site, &path, b->err) != LOP_OK ||
            lop_path_set(copy, &path, e->value, &site, b->err) != LOP_OK) {
            lop_config_free(copy);
            return b->err->status;
        }
        overrides++;
    }
    if (overrides == 0) {
        lop_config_free(copy);
        return pb_error(b, r->line, section, NULL,
                        "a believed rule changes at least one number of the problem, e.g. "
                        "`prior.sd = 20`");
    }
    lop_error inner = {0};
    r->believed = pb_build_nested(copy, &inner);
    lop_config_free(copy);
    if (!r->believed) {
        /* The believed problem's own complaint, placed at the rule that made it. */
        return pb_error(b, inner.line ? inner.line : r->line, section, NULL,
                        "the believed problem is invalid: [%s] %s: %s", inner.section,
                        inner.key, inner.message);
    }
    const lop_problem *p = b->p, *bp = r->believed;
    bool same = bp->estimate == p->estimate && bp->n_actions == p->n_actions;
    for (size_t a = 0; same && a < p->n_actions; a++)
        same = strcmp(bp->actions[a], p->actions[a]) == 0;
    if (!same)
        return pb_error(b, r->line, section, NULL,
                        "the believed problem must keep the same actions");
    return LOP_OK;
}

static lop_status build_rule(builder *b, const lop_section *s, lop_rule_spec *r)
{
    lop_problem *p = b->p;
    r->line = s->line;
    r->name = lop_strdup(s->name + 5);
    if (!r->name)
        return pb_no_memory(b);
    const lop_entry *kind = pb_find(b, s->name, "kind");
    if (!kind)
        return pb_error(b, s->line, s->name, "kind",
                        "missing: posterior_mean, posterior_median, posterior_mode, "
                        "max_likelihood, threshold or believed");
    size_t k = 0;
    while (k < COUNT(kinds) && strcmp(kinds[k].name, kind->value) != 0)
        k++;
    if (k == COUNT(kinds)) {
        char *names[COUNT(kinds)];
        for (size_t i = 0; i < COUNT(kinds); i++)
            names[i] = (char *)kinds[i].name;
        const char *near = lop_nearest(kind->value, names, COUNT(kinds));
        return pb_error(b, kind->line, s->name, "kind", "unknown kind `%s`%s%s%s",
                        kind->value, near ? "; did you mean `" : "", near ? near : "",
                        near ? "`?" : "");
    }
    r->kind = kinds[k].kind;
    if (r->kind != LOP_RULE_KIND_BELIEVED && kinds[k].estimates != p->estimate)
        return pb_error(b, kind->line, s->name, "kind", "`%s` rules need %s", kinds[k].name,
                        kinds[k].estimates ? "estimates (`[actions] estimate = yes`)"
                                           : "named actions");
    const lop_entry *at = pb_find(b, s->name, "at");
    if (r->kind == LOP_RULE_KIND_THRESHOLD) {
        if (p->n_actions != 2 || lop_problem_numeric_channels(p) != 1)
            return pb_error(b, kind->line, s->name, "kind",
                            "a threshold rule needs two actions and one numeric channel");
        if (pb_number(b, s->name, "at", true, 0, &r->at) != LOP_OK)
            return b->err->status;
    } else if (at) {
        return pb_error(b, at->line, s->name, "at", "belongs to a threshold rule");
    }
    for (size_t i = 0; i < b->cfg->n_entries; i++) {
        const lop_entry *e = &b->cfg->entries[i];
        if (strcmp(e->section, s->name) == 0 && strchr(e->key, '.') &&
            r->kind != LOP_RULE_KIND_BELIEVED)
            return pb_error(b, e->line, s->name, e->key,
                            "paths that change the problem belong to a `believed` rule");
    }
    if (!p->n_channels)
        return pb_error(b, s->line, s->name, NULL,
                        "rules decide on evidence: the problem has no [evidence]");
    return r->kind == LOP_RULE_KIND_BELIEVED ? build_believed(b, s->name, r) : LOP_OK;
}

lop_status pb_build_rules(builder *b)
{
    lop_problem *p = b->p;
    size_t n = 0;
    for (size_t i = 0; i < b->cfg->n_sections; i++)
        n += strncmp(b->cfg->sections[i].name, "rule.", 5) == 0;
    if (!n)
        return LOP_OK;
    p->rules = calloc(n, sizeof *p->rules);
    if (!p->rules)
        return pb_no_memory(b);
    for (size_t i = 0; i < b->cfg->n_sections; i++) {
        const lop_section *s = &b->cfg->sections[i];
        if (strncmp(s->name, "rule.", 5) != 0)
            continue;
        if (build_rule(b, s, &p->rules[p->n_rules++]) != LOP_OK)
            return b->err->status;
    }
    return LOP_OK;
}
