/* FFT correlation for any shift-invariant loss on a lattice: the expected loss of every
 * estimate as one correlation of the posterior with the sampled loss, O(n log n). */
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_fft_halfcomplex.h>
#include <gsl/gsl_fft_real.h>

#include "lopside/model/curve.h"

/* Grid points this close to the lattice (relative to the largest coordinate) lie on it:
 * a grid made as from + i·step is off by a few rounding units. */
#define LATTICE_RELATIVE (64 * DBL_EPSILON)

struct lop_curve_fft {
    size_t n_states, n_estimates;
    size_t n;                       /* padded length, n >= n_states + n_estimates - 1 */
    double *spectrum;               /* halfcomplex transform of the loss samples */
    double *buf;                    /* n: the posterior, transformed in place */
    gsl_fft_real_wavetable *real;
    gsl_fft_halfcomplex_wavetable *half;
    gsl_fft_real_workspace *work;
};

/* ---- FFT correlation -------------------------------------------------------------- */

/* Returns the least n >= need (and >= 2) whose prime factors are 2, 3 and 5, the sizes
 * GSL's mixed-radix real FFT handles fastest. */
size_t lop_curve_fft_size(size_t need)
{
    for (size_t n = need < 2 ? 2 : need;; n++) {
        size_t m = n;
        while (m % 2 == 0)
            m /= 2;
        while (m % 3 == 0)
            m /= 3;
        while (m % 5 == 0)
            m /= 5;
        if (m == 1)
            return n;
    }
}

void lop_curve_fft_free(lop_curve_fft *f)
{
    if (!f)
        return;
    free(f->spectrum);
    free(f->buf);
    gsl_fft_real_wavetable_free(f->real);
    gsl_fft_halfcomplex_wavetable_free(f->half);
    gsl_fft_real_workspace_free(f->work);
    free(f);
}

lop_curve_fft *lop_curve_fft_new(const double *loss, size_t n_states, size_t n_estimates)
{
    if (n_states == 0 || n_estimates == 0)
        return NULL;
    lop_curve_fft *f = calloc(1, sizeof *f);
    if (!f)
        return NULL;
    size_t samples = n_states + n_estimates - 1;
    f->n_states = n_states;
    f->n_estimates = n_estimates;
    f->n = lop_curve_fft_size(samples);
    f->spectrum = calloc(f->n, sizeof *f->spectrum);
    f->buf = calloc(f->n, sizeof *f->buf);
    f->real = gsl_fft_real_wavetable_alloc(f->n);
    f->half = gsl_fft_halfcomplex_wavetable_alloc(f->n);
    f->work = gsl_fft_real_workspace_alloc(f->n);
    if (!f->spectrum || !f->buf || !f->real || !f->half || !f->work)
        goto fail;
    memcpy(f->spectrum, loss, samples * sizeof *loss);
    if (gsl_fft_real_transform(f->spectrum, 1, f->n, f->real, f->work) != GSL_SUCCESS)
        goto fail;
    return f;
fail:
    lop_curve_fft_free(f);
    return NULL;
}

/* Multiplies halfcomplex array a by b in place (GSL's mixed-radix layout: a[0] real, then
 * pairs (re, im) of frequencies 1 .. (n-1)/2, then the real Nyquist term when n is even). */
static void halfcomplex_multiply(double *a, const double *b, size_t n)
{
    a[0] *= b[0];
    for (size_t k = 1; 2 * k < n; k++) {
        double re = a[2 * k - 1], im = a[2 * k];
        a[2 * k - 1] = re * b[2 * k - 1] - im * b[2 * k];
        a[2 * k] = re * b[2 * k] + im * b[2 * k - 1];
    }
    if (n % 2 == 0)
        a[n - 1] *= b[n - 1];
}

/* el[j] = c[j + S - 1] with c the circular convolution of p (zero-padded) and the loss
 * samples; n >= S + E - 1 keeps the terms used free of wrap-around (convolution theorem;
 * Press et al., Numerical Recipes, sec. 13.1). */
void lop_curve_fft_expected(lop_curve_fft *f, const double *p, double *el)
{
    memcpy(f->buf, p, f->n_states * sizeof *p);
    memset(f->buf + f->n_states, 0, (f->n - f->n_states) * sizeof *f->buf);
    gsl_fft_real_transform(f->buf, 1, f->n, f->real, f->work);
    halfcomplex_multiply(f->buf, f->spectrum, f->n);
    gsl_fft_halfcomplex_inverse(f->buf, 1, f->n, f->half, f->work);
    memcpy(el, f->buf + f->n_states - 1, f->n_estimates * sizeof *el);
}

/* Returns true when v[0..n-1] lies within tol of first + i·step. */
static bool on_lattice(const double *v, size_t n, double first, double step, double tol)
{
    for (size_t i = 0; i < n; i++)
        if (fabs(v[i] - (first + (double)i * step)) > tol)
            return false;
    return true;
}

bool lop_curve_lattice(const double *states, size_t n_states, const double *estimates,
                       size_t n_estimates, double *h, long *k0)
{
    if (n_states < 2 || n_estimates < 2)
        return false;
    double step = (states[n_states - 1] - states[0]) / (double)(n_states - 1);
    double big = fmax(fmax(fabs(states[0]), fabs(states[n_states - 1])),
                      fmax(fabs(estimates[0]), fabs(estimates[n_estimates - 1])));
    double tol = LATTICE_RELATIVE * fmax(big, step);
    if (!(step > 0) || !on_lattice(states, n_states, states[0], step, tol) ||
        !on_lattice(estimates, n_estimates, estimates[0], step, tol))
        return false;
    double offset = (estimates[0] - states[n_states - 1]) / step;
    if (!(fabs(offset) < 1e15))
        return false;
    double k = round(offset);
    if (fabs(estimates[0] - states[n_states - 1] - k * step) > tol)
        return false;
    *h = step;
    *k0 = (long)k;
    return true;
}

