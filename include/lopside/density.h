/* A grid posterior as a continuous density. Cell i of a grid s[0..n-1] runs between the
 * midpoints to its neighbours (the end cells are halves) and holds the mass p[i]. The
 * density's node values are v_i = p_i / width_i, and between neighbouring points it is a
 * quadratic: the line through (s_k, v_k) and (s_{k+1}, v_{k+1}) corrected by the
 * curvature the neighbouring second differences estimate, with the line's mass. A line
 * alone (the density continuous and piecewise linear) errs by h²/2·t(1-t)·f'' at the
 * position t in its interval: its cumulative and quantiles converge smoothly, but the
 * best position of a tolerance window, where the densities at the two band ends are
 * equal, wanders by O(h²) with where the ends fall in their intervals, and Richardson's
 * rule (accuracy.h) fails on it. The corrected density errs by a smooth O(h²) and an
 * O(h³) remainder. Each piece keeps the mass of the line, so the density integrates to
 * sum p exactly, and stays >= 0 (the correction is capped where it would not). It may
 * step by O(h³) at a state; its cumulative, a cubic in each interval, is continuous.
 * Quantiles, window masses, window maxima and integrals of piecewise-polynomial losses
 * against it converge as O(h²) with no oscillating term of that order.
 *
 * A piece is written as q(t) = a[0] + a[1]·t + a[2]·t² with t = (u - s_k)/(s_{k+1} - s_k)
 * in [0, 1]; its mass from s_k to s_k + t·h is h·lop_density_mass(a, t). No allocation. */
#ifndef LOPSIDE_DENSITY_H
#define LOPSIDE_DENSITY_H

#include <stddef.h>

/* Returns the width of cell i of the grid s[0..n-1] (n >= 2): between the midpoints to its
 * neighbours, the first and last cells ending at s[0] and s[n-1]. */
double lop_density_width(const double *s, size_t n, size_t i);

/* Writes the node values v[i] = p[i]·factor[i] / width_i (factor NULL: 1) and returns
 * sum p[i]·factor[i], the density's integral. */
double lop_density_nodes(const double *s, const double *p, const double *factor, size_t n,
                         double *v);

/* Writes piece k (0 <= k < n - 1) of the density with node values v[0..n-1]. */
void lop_density_piece(const double *s, const double *v, size_t n, size_t k, double a[3]);

/* Writes the same piece from the masses p (node values p[i]·factor[i] / width_i, factor
 * NULL: 1), without an array of node values. */
void lop_density_piece_of(const double *s, const double *p, const double *factor, size_t n,
                          size_t k, double a[3]);

/* Returns the integral of the piece a over [0, t]: a0·t + a1·t²/2 + a2·t³/3. */
double lop_density_mass(const double a[3], double t);

/* Returns the integral of the piece a times t over [0, t]: a0·t²/2 + a1·t³/3 + a2·t⁴/4. */
double lop_density_moment(const double a[3], double t);

/* Returns the value of the piece a at t. */
double lop_density_at(const double a[3], double t);

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
