/* A grid posterior as a continuous density. Cell i of a grid s[0..n-1] runs between the
 * midpoints to its neighbours (the end cells are halves) and holds the mass p[i]. The
 * density is a quadratic in each interval between neighbouring states, fixed by three
 * numbers: the interval's mass (the parts of the two cells on its side of their states,
 * split by the slope the neighbours give; the masses sum to sum p exactly) and the
 * density's values at its two ends (the cells' averages corrected by the curvature the
 * neighbours give; shared by the intervals beside a state, so the density is continuous).
 * It errs by O(h³), every error term smooth: its cumulative, a cubic in each interval, its
 * quantiles, window masses and window maxima and integrals of piecewise-polynomial losses
 * against it converge with no term that oscillates with a point's position in its cell,
 * as Richardson's rule in the accuracy loop (accuracy.h) needs. (The piecewise-linear
 * density through the cells' averages would leave such a term of O(h²) in the best
 * position of a tolerance window, where the densities at the band's two ends are equal.)
 * The values are capped so that the density is >= 0; the caps change no mass.
 *
 * A piece is written as q(t) = a[0] + a[1]·t + a[2]·t² with t = (u - s_k)/(s_{k+1} - s_k)
 * in [0, 1]; its mass from s_k to s_k + t·h is h·lop_density_mass(a, t). No allocation. */
#ifndef LOPSIDE_DENSITY_H
#define LOPSIDE_DENSITY_H

#include <stddef.h>

/* Returns the width of cell i of the grid s[0..n-1] (n >= 2): between the midpoints to its
 * neighbours, the first and last cells ending at s[0] and s[n-1]. */
double lop_density_width(const double *s, size_t n, size_t i);

/* Writes the cells' averages v[i] = p[i]·factor[i] / width_i (factor NULL: 1) and
 * returns sum p[i]·factor[i], the density's integral. */
double lop_density_nodes(const double *s, const double *p, const double *factor, size_t n,
                         double *v);

/* The ring of lop_density_sweep: the values a piece needs lie within 6 states. */
#define LOP_DENSITY_RING 8

/* Walks the pieces of a grid's density in increasing order, each in O(1). */
typedef struct {
    const double *s, *p, *factor, *v;
    size_t n;
    size_t n_raw, n_right, n_mean, n_node;    /* the next index of each ring to fill */
    double raw[LOP_DENSITY_RING], right[LOP_DENSITY_RING];
    double mean[LOP_DENSITY_RING], node[LOP_DENSITY_RING], width[LOP_DENSITY_RING];
} lop_density_sweep;

/* Starts w on the grid s[0..n-1] (n >= 2) at piece k: of the node values v (the cells'
 * averages, as lop_density_nodes writes), or, with v NULL, of the masses p·factor
 * (factor NULL: 1). */
void lop_density_sweep_start(lop_density_sweep *w, const double *s, const double *p,
                             const double *factor, const double *v, size_t n, size_t k);

/* Writes piece k of w's density (k from the start, increasing by one each call). */
void lop_density_sweep_piece(lop_density_sweep *w, size_t k, double a[3]);

/* Returns the first piece that may have mass, reading masses p[0..n-1] (n >= 2) of
 * which those at or below `negligible` count as none: the interval before the first
 * state with mass; the density is taken as 0 before it. */
size_t lop_density_first_piece(const double *p, size_t n, double negligible);

/* Returns the last piece that may have mass (masses at or below `negligible` counting as
 * none): the interval after the last state with mass; the density is taken as 0 after it. */
size_t lop_density_last_piece(const double *p, size_t n, double negligible);

/* Writes piece k (0 <= k < n - 1) of the density of the masses p·factor (factor NULL:
 * 1) alone: O(1). */
void lop_density_piece_of(const double *s, const double *p, const double *factor, size_t n,
                          size_t k, double a[3]);

/* Inline: these run once or more per piece of every posterior, the engine's inner loop. */

/* Returns the integral of the piece a over [0, t]: a0·t + a1·t²/2 + a2·t³/3. */
static inline double lop_density_mass(const double a[3], double t)
{
    return t * (a[0] + t * (a[1] / 2 + t * a[2] / 3));
}

/* Returns the integral of the piece a times t over [0, t]: a0·t²/2 + a1·t³/3 + a2·t⁴/4. */
static inline double lop_density_moment(const double a[3], double t)
{
    return t * t * (a[0] / 2 + t * (a[1] / 3 + t * a[2] / 4));
}

/* Returns the value of the piece a at t. */
static inline double lop_density_at(const double a[3], double t)
{
    return a[0] + t * (a[1] + t * a[2]);
}

/* Returns the t in [0, 1] at which the piece's mass from 0 reaches goal (clamped to the
 * piece's mass): the root of the increasing cubic by Newton's method kept inside a
 * shrinking bracket (bisection when a step leaves it), started from the root of the
 * quadratic without the t³ term by the stable form 2g/(b + sqrt(b² + 2·c·g)). */
double lop_density_invert(const double a[3], double goal);

/* Writes out[j], the quantile at probability q[j] (q increasing, in (0, 1)) of the density
 * of the masses p over the grid s (n >= 2): the least u whose cumulative reaches
 * q[j]·sum p. Two passes, O(n). */
void lop_density_quantiles(const double *s, const double *p, size_t n, const double *q,
                           size_t n_q, double *out);

#endif
