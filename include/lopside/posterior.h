/* Normalizing log weights into probabilities. */
#ifndef LOPSIDE_POSTERIOR_H
#define LOPSIDE_POSTERIOR_H

#include <stddef.h>

/* Returns log(sum exp(logw)) and writes exp(logw - that) to p (log-sum-exp);
 * returns -inf and writes zeros when every weight is zero. */
double lop_posterior_normalize(const double *logw, size_t n, double *p);

#endif
