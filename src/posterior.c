#include <math.h>

#include "lopside/posterior.h"

double lop_posterior_normalize(const double *logw, size_t n, double *p)
{
    double top = -INFINITY;
    for (size_t i = 0; i < n; i++)
        if (logw[i] > top)
            top = logw[i];
    if (top == -INFINITY) {
        for (size_t i = 0; i < n; i++)
            p[i] = 0;
        return -INFINITY;
    }
    double sum = 0;
    for (size_t i = 0; i < n; i++) {
        p[i] = exp(logw[i] - top);
        sum += p[i];
    }
    for (size_t i = 0; i < n; i++)
        p[i] /= sum;
    return top + log(sum);
}
