#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/util/interp.h"
#include "lopside/input/parse.h"
#include "lopside/model/response.h"
#include "lopside/util/strutil.h"

typedef struct {
    const char *name;
    lop_response_kind kind;
    const char *keys[4];  /* required keys, NULL-terminated */
} response_spec;

static const response_spec specs[] = {
    {"identity", LOP_RESPONSE_IDENTITY, {NULL}},
    {"linear", LOP_RESPONSE_LINEAR, {"offset", "slope", NULL}},
    {"power", LOP_RESPONSE_POWER, {"offset", "gain", "exponent", NULL}},
    {"saturating", LOP_RESPONSE_SATURATING, {"base", "top", "half", "exponent"}},
    {"logistic", LOP_RESPONSE_LOGISTIC, {"low", "high", "mid", "width"}},
    {"table", LOP_RESPONSE_TABLE, {"at", "value", NULL}},
};

static const char *const all_keys[] = {"offset", "slope", "gain", "exponent", "base", "top",
                                       "half", "low", "high", "mid", "width", "at", "value"};

#define COUNT(a) (sizeof(a) / sizeof(a)[0])

bool lop_response_is_key(const char *key)
{
    for (size_t i = 0; i < COUNT(all_keys); i++)
        if (strcmp(all_keys[i], key) == 0)
            return true;
    return false;
}

static double *field(lop_response *r, const char *key)
{
    if (strcmp(key, "offset") == 0) return &r->offset;
    if (strcmp(key, "slope") == 0) return &r->slope;
    if (strcmp(key, "gain") == 0) return &r->gain;
    if (strcmp(key, "exponent") == 0) return &r->exponent;
    if (strcmp(key, "base") == 0) return &r->base;
    if (strcmp(key, "top") == 0) return &r->top;
    if (strcmp(key, "half") == 0) return &r->half;
    if (strcmp(key, "low") == 0) return &r->low;
    if (strcmp(key, "high") == 0) return &r->high;
    if (strcmp(key, "mid") == 0) return &r->mid;
    if (strcmp(key, "width") == 0) return &r->width;
    return NULL;
}

static bool needs(const response_spec *spec, const char *key)
{
    for (size_t i = 0; i < 4 && spec->keys[i]; i++)
        if (strcmp(spec->keys[i], key) == 0)
            return true;
    return false;
}

static lop_status read_table(const lop_config *cfg, const char *section, lop_response *r,
                             lop_error *err)
{
    const lop_entry *at = lop_config_find(cfg, section, "at");
    const lop_entry *value = lop_config_find(cfg, section, "value");
    size_t n_at, n_value;
    if (lop_parse_numbers(cfg, at, &r->at, &n_at, err) != LOP_OK ||
        lop_parse_numbers(cfg, value, &r->value, &n_value, err) != LOP_OK)
        return err->status;
    if (n_at != n_value)
        return lop_error_input(err, cfg->path, value->line, section, "value",
                               "expected one value per `at` point (%zu), found %zu", n_at,
                               n_value);
    for (size_t i = 1; i < n_at; i++)
        if (!(r->at[i] > r->at[i - 1]))
            return lop_error_input(err, cfg->path, at->line, section, "at",
                                   "points must increase (entry %zu is %g after %g)", i + 1,
                                   r->at[i], r->at[i - 1]);
    r->n_points = n_at;
    return LOP_OK;
}

lop_status lop_response_read(const lop_config *cfg, const char *section, lop_response *r,
                             lop_error *err)
{
    memset(r, 0, sizeof *r);
    const lop_entry *e = lop_config_find(cfg, section, "response");
    const response_spec *spec = &specs[0];
    if (e) {
        spec = NULL;
        for (size_t i = 0; i < COUNT(specs); i++)
            if (strcmp(specs[i].name, e->value) == 0)
                spec = &specs[i];
        if (!spec) {
            const char *best = NULL;
            size_t best_d = (size_t)-1;
            for (size_t i = 0; i < COUNT(specs); i++) {
                size_t d = lop_edit_distance(e->value, specs[i].name);
                if (d < best_d)
                    best_d = d, best = specs[i].name;
            }
            bool near = lop_close_enough(best_d, strlen(e->value));
            return lop_error_input(err, cfg->path, e->line, section, "response",
                                   "unknown response `%s`%s%s%s; known: identity, linear, "
                                   "power, saturating, logistic, table",
                                   e->value, near ? " (did you mean `" : "", near ? best : "",
                                   near ? "`?)" : "");
        }
    }
    r->kind = spec->kind;
    /* Keys of other responses are mistakes, not silently ignored settings. */
    for (size_t i = 0; i < COUNT(all_keys); i++) {
        const lop_entry *k = lop_config_find(cfg, section, all_keys[i]);
        if (k && !needs(spec, all_keys[i]))
            return lop_error_input(err, cfg->path, k->line, section, all_keys[i],
                                   "does not belong to response `%s`", spec->name);
        if (!k && needs(spec, all_keys[i]))
            return lop_error_input(err, cfg->path,
                                   e ? e->line : lop_config_section(cfg, section)->line,
                                   section, all_keys[i], "missing: response `%s` needs it",
                                   spec->name);
    }
    if (spec->kind == LOP_RESPONSE_TABLE)
        return read_table(cfg, section, r, err);
    for (size_t i = 0; i < 4 && spec->keys[i]; i++) {
        const lop_entry *k = lop_config_find(cfg, section, spec->keys[i]);
        if (lop_parse_number(cfg, k, false, field(r, spec->keys[i]), err) != LOP_OK)
            return err->status;
    }
    const char *positive = spec->kind == LOP_RESPONSE_SATURATING ? "half"
                           : spec->kind == LOP_RESPONSE_LOGISTIC ? "width"
                                                                 : NULL;
    if (positive && !(*field(r, positive) > 0))
        return lop_error_input(err, cfg->path, lop_config_find(cfg, section, positive)->line,
                               section, positive, "must be > 0");
    return LOP_OK;
}

double lop_response_eval(const lop_response *r, double s)
{
    switch (r->kind) {
    case LOP_RESPONSE_IDENTITY:
        return s;
    case LOP_RESPONSE_LINEAR:
        return r->offset + r->slope * s;
    case LOP_RESPONSE_POWER:
        return r->offset + r->gain * pow(s, r->exponent);
    case LOP_RESPONSE_SATURATING: {
        /* Hyperbolic ratio (Naka-Rushton): base + top s^n / (s^n + half^n). */
        double sn = pow(s, r->exponent), hn = pow(r->half, r->exponent);
        return r->base + r->top * sn / (sn + hn);
    }
    case LOP_RESPONSE_LOGISTIC:
        return r->low + (r->high - r->low) / (1 + exp(-(s - r->mid) / r->width));
    case LOP_RESPONSE_TABLE:
        return lop_interp_linear(r->at, r->value, r->n_points, s);
    }
    return NAN;
}

void lop_response_clear(lop_response *r)
{
    free(r->at);
    free(r->value);
    memset(r, 0, sizeof *r);
}
