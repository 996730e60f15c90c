#include "lopside/util/interp.h"

double lop_interp_linear(const double *x, const double *y, size_t n, double at)
{
    if (at <= x[0])
        return y[0];
    if (at >= x[n - 1])
        return y[n - 1];
    size_t hi = lop_count_at_most(x, n, at), lo = hi - 1; /* x[lo] <= at < x[hi] */
    double t = (at - x[lo]) / (x[hi] - x[lo]);
    return y[lo] + t * (y[hi] - y[lo]);
}

size_t lop_count_at_most(const double *a, size_t n, double v)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (a[mid] <= v)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}
