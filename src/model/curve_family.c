#include <stdio.h>
#include <string.h>

#include "lopside/model/curve_family.h"

#define NUMBER(field, is_score) {#field, offsetof(lop_curve, field), is_score}
#define COUNT(x) (sizeof(x) / sizeof(x)[0])

static const lop_curve_family families[] = {
    {"squared", LOP_CURVE_SQUARED, false, {"scale"}, {NUMBER(scale, false)}},
    {"absolute", LOP_CURVE_ABSOLUTE, false, {"scale"}, {NUMBER(scale, false)}},
    {"linlin", LOP_CURVE_LINLIN, false, {"under", "over"},
     {NUMBER(under, false), NUMBER(over, false)}},
    {"quadquad", LOP_CURVE_QUADQUAD, false, {"under", "over"},
     {NUMBER(under, false), NUMBER(over, false)}},
    {"linex", LOP_CURVE_LINEX, false, {"a", "scale"}, {NUMBER(a, false), NUMBER(scale, false)}},
    /* half_width is read into below and above, the band's two sides */
    {"tolerance", LOP_CURVE_TOLERANCE, true, {"half_width", "below", "above", "inside", "outside"},
     {NUMBER(below, false), NUMBER(above, false), NUMBER(inside, true), NUMBER(outside, true)}},
    {"points", LOP_CURVE_POINTS, true, {"error", "value"}, {{0}}},
};

const lop_curve_family *lop_curve_families(size_t *n)
{
    *n = COUNT(families);
    return families;
}

const lop_curve_family *lop_curve_family_of(lop_curve_kind kind)
{
    for (size_t i = 0; i < COUNT(families); i++)
        if (families[i].kind == kind)
            return &families[i];
    return NULL;
}

const lop_curve_family *lop_curve_family_named(const char *name)
{
    for (size_t i = 0; i < COUNT(families); i++)
        if (strcmp(families[i].name, name) == 0)
            return &families[i];
    return NULL;
}

bool lop_curve_family_has(const lop_curve_family *f, const char *key)
{
    for (size_t i = 0; i < COUNT(f->keys) && f->keys[i]; i++)
        if (strcmp(f->keys[i], key) == 0)
            return true;
    return false;
}

double lop_curve_number_value(const lop_curve *c, const lop_curve_number *k)
{
    double v;
    memcpy(&v, (const char *)c + k->offset, sizeof v);
    return v;
}

int lop_curve_describe(const lop_curve *c, double score_sign, char *buf, size_t size)
{
    const lop_curve_family *f = lop_curve_family_of(c->kind);
    size_t at = 0;
    int total = 0;
#define PUT(...)                                                                           \
    do {                                                                                   \
        int k_ = snprintf(buf + at, size > at ? size - at : 0, __VA_ARGS__);                \
        total += k_ > 0 ? k_ : 0;                                                          \
        at = (size_t)total < size ? (size_t)total : size;                                  \
    } while (0)
    PUT("%s", f ? f->name : "?");
    for (size_t i = 0; f && i < COUNT(f->numbers) && f->numbers[i].name; i++) {
        double v = lop_curve_number_value(c, &f->numbers[i]);
        /* + 0.0: a payoff of 0 shows as 0, not -0 */
        PUT("%s %s %.10g", i ? "," : ":", f->numbers[i].name,
            (f->numbers[i].score ? score_sign * v : v) + 0.0);
    }
    if (c->kind == LOP_CURVE_POINTS) {
        PUT(": (error, value)");
        for (size_t i = 0; i < c->n_points; i++)
            PUT("%s (%.10g, %.10g)", i ? "," : "", c->error[i], score_sign * c->value[i] + 0.0);
    }
    if (c->relative)
        PUT("; error relative to the state");
#undef PUT
    return total;
}
