/* Loss curves of an estimate of a continuous state on a grid: the loss of one
 * estimate, the expected loss of every estimate of a grid under a posterior by a fast
 * path (moments, prefix sums, a sliding window, pieces, or FFT correlation), the same by
 * the direct double loop, and the Bayes estimate, a real number or a point of the grid.
 * No I/O; no allocation per call. */
#ifndef LOPSIDE_CURVE_H
#define LOPSIDE_CURVE_H

#include <stdbool.h>
#include <stddef.h>

typedef enum {
    LOP_CURVE_SQUARED,
    LOP_CURVE_ABSOLUTE,
    LOP_CURVE_LINLIN,
    LOP_CURVE_QUADQUAD,
    LOP_CURVE_LINEX,
    LOP_CURVE_TOLERANCE,
    LOP_CURVE_POINTS,
} lop_curve_kind;

/* A loss curve of the error e = estimate - state, or (relative) e = (estimate - state) /
 * state with every state > 0. Payoff curves are stored negated, as losses (format.md). */
typedef struct {
    lop_curve_kind kind;
    double scale;            /* squared, absolute, linex: > 0 (the file's default is 1) */
    double under, over;      /* linlin, quadquad: > 0; under for e < 0, over for e > 0 */
    double a;                /* linex: != 0 */
    double below, above;     /* tolerance: inside when -below <= e <= above */
    double inside, outside;  /* tolerance: the losses inside and outside the band */
    size_t n_points;         /* points: >= 1 knots, error increasing; linear between, */
    const double *error;     /* flat outside; the arrays are borrowed (the workspace */
    const double *value;     /* keeps its own copy) */
    bool relative;
} lop_curve;

/* How lop_curve_expected computes, fixed when the workspace is made. */
typedef enum {
    LOP_CURVE_BY_MOMENTS,     /* squared, linex: closed forms in posterior moments, O(S + E) */
    LOP_CURVE_BY_PREFIX_SUMS, /* absolute, linlin, quadquad: O(S + E) */
    LOP_CURVE_BY_WINDOW,      /* tolerance: O(S + E); over cells, or relative with
                                 below >= 1: O(E log S); the best real estimate over
                                 cells O(S) (O(S log S) for relative with below >= 1) */
    LOP_CURVE_BY_PIECES,      /* points: prefix sums per piece, O((S + E) P); relative
                                 estimates <= 0 by the direct sum, O(S) each */
    LOP_CURVE_BY_FFT,         /* points on one uniform lattice when cheaper: O(N log N) */
    LOP_CURVE_BY_DIRECT,      /* relative linex (no closed form): O(E S) */
} lop_curve_method;

/* Options of lop_curve_work_new, or-ed together.
 * LOP_CURVE_CELLS: the states are the points of a grid and each holds the mass of its cell
 * (between the midpoints to its neighbours; the first and last cells end at the first and
 * last state). Absolute, linlin, tolerance and (absolute-error) points curves then
 * integrate over the continuous density of those masses (density.h: a quadratic between
 * neighbouring states with the interval's mass, the cumulative a cubic): a band end, a
 * knot or a quantile inside an interval splits it exactly. Squared, quadquad and LINEX
 * curves keep the sum over points, the midpoint rule of the same integral: they are
 * smooth enough for it to be second-order with no oscillating term of that order, and
 * spreading the mass would only add the cells' own variance (Sheppard's correction,
 * h²/12).
 * LOP_CURVE_CONTINUOUS: the estimate is any real number; the estimates are then only the
 * grid the expected loss is shown on. Without it the estimates are the actions. */
enum { LOP_CURVE_CELLS = 1, LOP_CURVE_CONTINUOUS = 2 };

typedef struct lop_curve_work lop_curve_work;
typedef struct lop_curve_fft lop_curve_fft;

/* Returns NULL when c is a usable curve, else a sentence saying what is wrong. */
const char *lop_curve_invalid(const lop_curve *c);

/* Returns the loss of estimating state by estimate (relative: state > 0). */
double lop_curve_loss(const lop_curve *c, double estimate, double state);

/* Returns a workspace for c on the given grids (both strictly increasing and finite;
 * states > 0 when c is relative) with the LOP_CURVE_* options, or NULL when c is
 * invalid, a grid is not, or memory runs out. The workspace copies c, its knots and both
 * grids. One per thread. */
lop_curve_work *lop_curve_work_new(const lop_curve *c, const double *states, size_t n_states,
                                   const double *estimates, size_t n_estimates,
                                   unsigned options);

/* Frees w; NULL is a no-op. */
void lop_curve_work_free(lop_curve_work *w);

/* Returns the path lop_curve_expected takes for w. */
lop_curve_method lop_curve_work_method(const lop_curve_work *w);

/* Writes el[j], the expected loss of estimates[j] under p (sum_s p[s]·loss(estimates[j],
 * states[s]), or over the cells with LOP_CURVE_CELLS), for every estimate j, by the fast
 * path (p: n_states probabilities summing to 1; el: n_estimates). */
void lop_curve_expected(lop_curve_work *w, const double *p, double *el);

/* Writes the same el by the direct O(E·S) double loop: the reference for the fast paths. */
void lop_curve_expected_direct(const lop_curve_work *w, const double *p, double *el);

/* Returns the expected loss of the one estimate x under p by the direct O(S) sum. */
double lop_curve_expected_at(const lop_curve_work *w, const double *p, double x);

/* Returns the Bayes estimate under p and writes its expected loss to *el_min (may be
 * NULL). With LOP_CURVE_CONTINUOUS the best real number: squared the posterior mean
 * (relative: E[1/X]/E[1/X²]), absolute and linlin the quantile under/(under + over)
 * (relative: of the weights p/s), quadquad and relative LINEX the root of the convex
 * derivative, LINEX -(1/a)·log E[exp(-a·X)], tolerance the exact maximum of the window's
 * mass (over cells a cubic between breaks; over points a step function), points Brent's
 * method around the best estimate of the grid; on a plateau of equal expected losses, its
 * middle. Without it the best point of the
 * estimate grid (the actions): for convex curves the grid point next to the minimizer
 * that does better; for tolerance and points the best grid point (on a plateau its
 * middle point; of two plateaus, the first). */
double lop_curve_bayes(lop_curve_work *w, const double *p, double *el_min);

/* Returns the least loss of the curve over all errors: the expected loss with the state
 * known when the estimate is any real number. */
double lop_curve_least_loss(const lop_curve *c);

/* Returns true when states and estimates (at least two of each) lie on one uniform
 * lattice of spacing *h, so every error estimate - state is a multiple of h; then the
 * error of (estimates[0], states[S-1]) is (*k0)·h. */
bool lop_curve_lattice(const double *states, size_t n_states, const double *estimates,
                       size_t n_estimates, double *h, long *k0);

/* Returns an FFT correlation plan for any shift-invariant loss on a lattice, or NULL
 * when memory runs out. loss[t] (t = 0 .. n_states + n_estimates - 2) is the loss at
 * error (k0 + t)·h, as lop_curve_lattice defines k0 and h; the plan copies what it needs. */
lop_curve_fft *lop_curve_fft_new(const double *loss, size_t n_states, size_t n_estimates);

/* Frees f; NULL is a no-op. */
void lop_curve_fft_free(lop_curve_fft *f);

/* Returns the transform length used for `need` samples: the least n >= need (and >= 2)
 * whose prime factors are 2, 3 and 5, the sizes GSL's mixed-radix real FFT does fastest. */
size_t lop_curve_fft_size(size_t need);

/* Writes el[j] = sum_i p[i]·loss[j - i + n_states - 1] for every estimate j (el has
 * n_estimates entries), by zero-padded real FFTs. */
void lop_curve_fft_expected(lop_curve_fft *f, const double *p, double *el);

#endif
