#include "lopside/interp.h"

double lop_interp_linear(const double *x, const double *y, size_t n, double at)
{
    if (at <= x[0])
        return y[0];
    if (at >= x[n - 1])
        return y[n - 1];
    size_t lo = 0, hi = n - 1; /* x[lo] < at < x[hi] */
    while (hi - lo > 1) {
        size_t mid = lo + (hi - lo) / 2;
        if (x[mid] <= at)
            lo = mid;
        else
            hi = mid;
    }
    double t = (at - x[lo]) / (x[hi] - x[lo]);
    return y[lo] + t * (y[hi] - y[lo]);
}
