/* The loss curves of estimates as a table: each family's name in the file, whether it
 * may be a payoff, its keys, and the numbers that define it once read. The reader checks
 * names and keys against it; `check` and the writers show a curve from it. */
#ifndef LOPSIDE_CURVE_FAMILY_H
#define LOPSIDE_CURVE_FAMILY_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/model/curve.h"

/* A number of a read curve: its name and where lop_curve keeps it. */
typedef struct {
    const char *name;
    size_t offset;           /* offsetof(lop_curve, field), a double */
    bool score;              /* a loss or payoff (turned to the file's orientation) */
} lop_curve_number;

typedef struct {
    const char *name;        /* `curve = NAME` */
    lop_curve_kind kind;
    bool payoff_allowed;     /* may be given in [payoff] */
    const char *keys[5];     /* the file's keys besides `curve` and `relative` */
    lop_curve_number numbers[4]; /* what defines it once read (points: also its knots) */
} lop_curve_family;

/* Returns the table of curve families, and writes how many to *n. */
const lop_curve_family *lop_curve_families(size_t *n);

/* Returns the family of kind. */
const lop_curve_family *lop_curve_family_of(lop_curve_kind kind);

/* Returns the family named name, or NULL. */
const lop_curve_family *lop_curve_family_named(const char *name);

/* Returns true when key is one of the family's keys. */
bool lop_curve_family_has(const lop_curve_family *f, const char *key);

/* Returns the value of number k of the family in c (as stored: losses). */
double lop_curve_number_value(const lop_curve *c, const lop_curve_number *k);

/* Returns the number of characters of a one-line description of c written to buf (as
 * snprintf): its name and numbers, e.g. "linlin: under 0.01, over 0.03", the knots of a
 * points curve, and "relative" when the error is relative; score numbers are multiplied
 * by score_sign (-1 shows a payoff as written). */
int lop_curve_describe(const lop_curve *c, double score_sign, char *buf, size_t size);

#endif
