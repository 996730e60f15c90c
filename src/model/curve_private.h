/* Private to curve.c and curve_cells.c: the workspace, and the cell model's paths that
 * curve.c dispatches to. */
#ifndef LOPSIDE_CURVE_PRIVATE_H
#define LOPSIDE_CURVE_PRIVATE_H

#include <stdbool.h>
#include <stddef.h>

#include <gsl/gsl_min.h>
#include <gsl/gsl_roots.h>

#include "lopside/model/curve.h"

/* Cumulative weights within this fraction of the total count as equal when the minimum
 * of an absolute or linlin loss may be flat, and expected losses within this fraction of
 * the loss scale count as one plateau: far above the rounding of an O(S) sum, far below
 * any real difference. */
#define CURVE_TIE_RELATIVE 1e-11

struct lop_curve_work {
    lop_curve c;                    /* c.error and c.value point into knots */
    double *knots;                  /* points: errors, then values */
    double *slope;                  /* points: slope of each of the P - 1 pieces */
    size_t n_states, n_estimates;
    double *s, *x;                  /* copies of the grids */
    double *inv_s;                  /* relative: 1 / s */
    double *pre[3];                 /* prefix sums over states, n_states + 1 each */
    size_t *count;                  /* points: per knot, the states with error >= it */
    double *el;                     /* n_estimates: grid Bayes estimates */
    lop_curve_method method;
    lop_curve_fft *fft;
    gsl_root_fsolver *solver;       /* relative linex */
    gsl_min_fminimizer *minimizer;  /* points, continuous estimates */

    bool cells;                     /* LOP_CURVE_CELLS, and at least two states */
    bool continuous;                /* LOP_CURVE_CONTINUOUS */
    double *node;                   /* cells: the density's n_states node values */
    double *poly;                   /* cells: 3 coefficients per piece (density.h) */
    double *cand;                   /* continuous tolerance: the breaks, then candidates */
    double *cand_el;                /* continuous tolerance: the candidates' losses */
    double range_lo, range_hi;      /* where a convex curve's minimizer is looked for */

    /* Sums of the posterior of the current call. */
    const double *p;                /* the posterior itself (borrowed) */
    double mass;                    /* sum p */
    double center;                  /* m1 = sum p·s / mass */
    double spread;                  /* squared: sum p·d²; relative: sum p·(1/s - mu)² */
    double inv_mean;                /* relative squared: mu = sum p/s / mass */
    double log_phi, z_sum;          /* linex: log sum p·phi(z), sum p·z, z = -a·d */
};

/* Returns true when the curve integrates over the cells of w (see LOP_CURVE_CELLS). */
bool curve_by_cells(const lop_curve_work *w);

/* Returns the expected loss given the posterior mass inside a tolerance band. */
double curve_tolerance_el(const lop_curve_work *w, double in);

/* Returns the posterior mass of the states inside the tolerance band at x (pre[0] the
 * cumulative posterior), by the tests of lop_curve_loss. */
double curve_points_window(const lop_curve_work *w, double x);

/* Over cells (absolute, linlin, tolerance, points), once w->p and w->center are set: writes the
 * density's pieces of the weight (p, or p/s for relative absolute and linlin) to w->poly,
 * pre[0][k] = the weight below state k and, with moments, pre[1][k] = the moment about
 * m1 below it. */
void cells_prepare(lop_curve_work *w, bool moments);

/* Returns the expected linlin loss of estimate x over the density. */
double cells_linlin_at(const lop_curve_work *w, double x, double under, double over);

/* Returns the minimizer of the density's linlin loss: the quantile under/(under + over)
 * of the weight; the middle of the interval of minimizers when it is flat. */
double cells_linlin_bayes(const lop_curve_work *w, double under, double over);

/* Returns the expected loss of a points curve at x over the density (after
 * cells_prepare with moments), finding each knot's piece from hints[knot] (OUTSIDE,
 * i.e. SIZE_MAX, to search afresh; estimates taken in increasing order walk forward). */
double cells_points_at(const lop_curve_work *w, double x, size_t *hints);

/* Returns the posterior mass of the tolerance band at x over the density (after
 * cells_prepare). */
double cells_window(const lop_curve_work *w, double x);

/* Returns the expected loss of estimate x under p over the density (curves by cells
 * only), piece by piece from p alone: the direct reference for the paths above. */
double cells_direct(const lop_curve_work *w, const double *p, double x);

/* Returns the best estimate of a tolerance curve over all reals and writes its expected
 * loss to *el. Over cells the window's mass is a cubic between breaks (where a band end
 * meets a state), so its best value is at a break or a root of its quadratic slope; over
 * points it is a step function, best at a break. pre[0] must hold the cumulative. */
double curve_tolerance_bayes(lop_curve_work *w, double *el);

#endif
