/* The floor of a rule's cost: evaluating the M·S gaussian log-likelihood terms alone,
 * with per-state constants as lopside's kernel has them, in parallel over measurement
 * points as lopside runs, and nothing else. No rule can be faster than this.
 * Usage: floor STATES MEASUREMENTS REPEATS; prints the median seconds of one pass. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int by_value(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

int main(int argc, char **argv)
{
    if (argc != 4) {
        fputs("usage: floor STATES MEASUREMENTS REPEATS\n", stderr);
        return 2;
    }
    long n_s = atol(argv[1]), n_m = atol(argv[2]), reps = atol(argv[3]);
    double *a = malloc((size_t)n_s * sizeof *a), *b = malloc((size_t)n_s * sizeof *b);
    double *k = malloc((size_t)n_s * sizeof *k), *t = malloc((size_t)reps * sizeof *t);
    if (!a || !b || !k || !t || n_s < 1 || n_m < 2 || reps < 1)
        return 1;
    for (long s = 0; s < n_s; s++) {
        a[s] = 100.0 * (double)s / (double)(n_s - 1);
        b[s] = 1 / 4.0;
        k[s] = -log(4.0) - 0.9189385332046727;
    }
    volatile double sink = 0;
    for (long r = 0; r < reps; r++) {
        double start = now(), total = 0;
#pragma omp parallel for reduction(+ : total) schedule(static)
        for (long m = 0; m < n_m; m++) {
            double x = -20 + 140.0 * (double)m / (double)(n_m - 1), sum = 0;
            for (long s = 0; s < n_s; s++) {
                double z = (x - a[s]) * b[s];
                sum += k[s] - 0.5 * z * z;
            }
            total += sum;
        }
        t[r] = now() - start;
        sink += total;
    }
    qsort(t, (size_t)reps, sizeof *t, by_value);
    printf("%.9f\n", t[reps / 2]);
    free(a);
    free(b);
    free(k);
    free(t);
    return sink == 0.123456789; /* keeps the sums alive */
}
