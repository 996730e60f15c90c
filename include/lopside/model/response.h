/* Response functions r(s): what a numeric state does to the measured quantity. */
#ifndef LOPSIDE_RESPONSE_H
#define LOPSIDE_RESPONSE_H

#include "lopside/input/config.h"
#include "lopside/util/error.h"

typedef enum {
    LOP_RESPONSE_IDENTITY,
    LOP_RESPONSE_LINEAR,
    LOP_RESPONSE_POWER,
    LOP_RESPONSE_SATURATING,
    LOP_RESPONSE_LOGISTIC,
    LOP_RESPONSE_TABLE,
} lop_response_kind;

typedef struct {
    lop_response_kind kind;
    double offset, slope;            /* linear; power uses offset too */
    double gain, exponent;           /* power; saturating uses exponent too */
    double base, top, half;          /* saturating */
    double low, high, mid, width;    /* logistic */
    size_t n_points;                 /* table */
    double *at, *value;
} lop_response;

/* Returns LOP_OK after reading the response keys of channel `section` into r (identity
 * when `response` is absent); the caller frees with lop_response_clear. */
lop_status lop_response_read(const lop_config *cfg, const char *section, lop_response *r,
                             lop_error *err);

/* Returns r(s). */
double lop_response_eval(const lop_response *r, double s);

/* Frees what r owns and leaves it the identity. */
void lop_response_clear(lop_response *r);

/* Returns true when key is one of the response keys of the format. */
bool lop_response_is_key(const char *key);

#endif
