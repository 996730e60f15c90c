#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_sf_gamma.h>

#include "lopside/model/evidence.h"

#define LOG_SQRT_2PI 0.91893853320467274178

/* Returns log P(outcome | state s) of one draw of a table channel (-inf when 0). */
static double log_outcome(const lop_channel *c, size_t s, size_t outcome)
{
    return log(c->given[s * c->n_outcomes + outcome]);
}

/* log n! - sum log k_i! + sum k_i log p_i, with 0·log 0 = 0 (multinomial pmf). */
double lop_evidence_log_counts(const lop_channel *c, size_t s, const size_t *counts)
{
    double ll = gsl_sf_lnfact((unsigned)c->repeats);
    for (size_t o = 0; o < c->n_outcomes; o++) {
        if (counts[o] == 0)
            continue;
        ll += (double)counts[o] * log_outcome(c, s, o) -
              gsl_sf_lnfact((unsigned)counts[o]);
    }
    return ll;
}

bool lop_evidence_is_count(const lop_channel *c)
{
    return c->noise == LOP_NOISE_POISSON || c->noise == LOP_NOISE_BINOMIAL;
}

static double log_normal_density(double x, double mean, double sd)
{
    double z = (x - mean) / sd;
    return -0.5 * z * z - log(sd) - LOG_SQRT_2PI;
}

/* The summary of n repeats is N(center, spread/sqrt n) for gaussian noise; its log is
 * N(log center, spread/sqrt n) for lognormal noise. */
static double summary_sd(const lop_channel *c, size_t s, size_t n)
{
    return c->spread[s] / sqrt((double)n);
}

double lop_evidence_log_summary(const lop_channel *c, size_t s, double x, size_t n)
{
    double r = c->center[s];
    switch (c->noise) {
    case LOP_NOISE_GAUSSIAN:
    case LOP_NOISE_SCALAR:
        return log_normal_density(x, r, summary_sd(c, s, n));
    case LOP_NOISE_LOGNORMAL:
        if (!(x > 0))
            return -INFINITY;
        /* Density of x = exp(mean of logs): the normal density of log x over x. */
        return log_normal_density(log(x), log(r), summary_sd(c, s, n)) - log(x);
    case LOP_NOISE_POISSON: {
        /* Sum of n counts ~ Poisson(n·window·r): k log mu - mu - ln k!. */
        double mu = (double)n * c->window * r;
        if (mu == 0)
            return x == 0 ? 0 : -INFINITY;
        return x * log(mu) - mu - gsl_sf_lnfact((unsigned)x);
    }
    case LOP_NOISE_BINOMIAL: {
        /* Sum of n binomial counts ~ Binomial(n·trials, r). */
        unsigned trials = (unsigned)(n * c->trials), k = (unsigned)x;
        if (x > trials)
            return -INFINITY;
        if (r == 0)
            return k == 0 ? 0 : -INFINITY;
        if (r == 1)
            return k == trials ? 0 : -INFINITY;
        return gsl_sf_lnchoose(trials, k) + x * log(r) + (trials - x) * log1p(-r);
    }
    }
    return NAN;
}

/* Returns P(X <= k) of the count summary of n repeats in state s (k a whole number or
 * -1): Poisson(n·window·r) or Binomial(n·trials, r), with the degenerate rates 0 and 1
 * (GSL's CDFs refuse a Poisson mean of 0). */
static double count_cdf(const lop_channel *c, size_t s, double k, size_t n)
{
    double r = c->center[s];
    if (k < 0)
        return 0;
    if (c->noise == LOP_NOISE_POISSON) {
        double mu = (double)n * c->window * r;
        return mu > 0 ? gsl_cdf_poisson_P((unsigned)k, mu) : 1;
    }
    double trials = (double)(n * c->trials);
    if (k >= trials || r <= 0)
        return 1;
    return r >= 1 ? 0 : gsl_cdf_binomial_P((unsigned)k, r, (unsigned)trials);
}

/* The same upper tail, P(X > k), computed directly so a small one keeps its digits. */
static double count_sf(const lop_channel *c, size_t s, double k, size_t n)
{
    double r = c->center[s];
    if (k < 0)
        return 1;
    if (c->noise == LOP_NOISE_POISSON) {
        double mu = (double)n * c->window * r;
        return mu > 0 ? gsl_cdf_poisson_Q((unsigned)k, mu) : 0;
    }
    double trials = (double)(n * c->trials);
    if (k >= trials || r <= 0)
        return 0;
    return r >= 1 ? 1 : gsl_cdf_binomial_Q((unsigned)k, r, (unsigned)trials);
}

double lop_evidence_summary_mass(const lop_channel *c, size_t s, double lo, double hi,
                                 size_t n)
{
    if (!(hi > lo))
        return 0;
    if (lop_evidence_is_count(c)) {
        /* Counts lo <= X < hi: P(X <= ceil(hi) - 1) - P(X <= ceil(lo) - 1). */
        double a = lo == -INFINITY ? -1 : ceil(lo) - 1;
        double b = hi == INFINITY ? INFINITY : ceil(hi) - 1;
        if (b == INFINITY)
            return count_sf(c, s, a, n);
        if (count_cdf(c, s, a, n) > 0.5)
            return count_sf(c, s, a, n) - count_sf(c, s, b, n);
        return count_cdf(c, s, b, n) - count_cdf(c, s, a, n);
    }
    double sd = summary_sd(c, s, n), m = c->center[s];
    if (c->noise == LOP_NOISE_LOGNORMAL) {
        lo = lo > 0 ? log(lo) : -INFINITY;
        hi = hi > 0 ? log(hi) : -INFINITY;
        m = log(m);
    }
    double zl = (lo - m) / sd, zh = (hi - m) / sd;
    if (zl > 0) /* both in the upper tail: the Q form keeps precision */
        return gsl_cdf_ugaussian_Q(zl) - gsl_cdf_ugaussian_Q(zh);
    return gsl_cdf_ugaussian_P(zh) - gsl_cdf_ugaussian_P(zl);
}

double lop_evidence_summary_quantile(const lop_channel *c, size_t s, double q, size_t n)
{
    double r = c->center[s];
    switch (c->noise) {
    case LOP_NOISE_GAUSSIAN:
    case LOP_NOISE_SCALAR:
        return r + summary_sd(c, s, n) * gsl_cdf_ugaussian_Pinv(q);
    case LOP_NOISE_LOGNORMAL:
        return exp(log(r) + summary_sd(c, s, n) * gsl_cdf_ugaussian_Pinv(q));
    case LOP_NOISE_POISSON:
    case LOP_NOISE_BINOMIAL: {
        /* GSL has no discrete inverse: bisect on the CDF over the whole numbers. */
        double mu = (double)n * c->window * r;
        unsigned lo = 0, hi = c->noise == LOP_NOISE_BINOMIAL
                                  ? (unsigned)(n * c->trials)
                                  : (unsigned)(mu + 50 * sqrt(mu + 1) + 50);
        while (lo < hi) {
            unsigned mid = lo + (hi - lo) / 2;
            if (count_cdf(c, s, mid, n) >= q)
                hi = mid;
            else
                lo = mid + 1;
        }
        return lo;
    }
    }
    return NAN;
}

int lop_evidence_kernel_init(lop_evidence_kernel *kern, const lop_channel *c,
                             size_t n_states, size_t n)
{
    kern->c = c;
    kern->n_states = n_states;
    kern->repeats = n;
    kern->negligible = -INFINITY;
    kern->a = malloc(n_states * sizeof *kern->a);
    kern->b = malloc(n_states * sizeof *kern->b);
    kern->k = malloc(n_states * sizeof *kern->k);
    if (!kern->a || !kern->b || !kern->k) {
        lop_evidence_kernel_clear(kern);
        return -1;
    }
    for (size_t s = 0; s < n_states; s++) {
        double r = c->center[s];
        switch (c->noise) {
        case LOP_NOISE_GAUSSIAN:
        case LOP_NOISE_SCALAR:
        case LOP_NOISE_LOGNORMAL: {
            /* a: location, b: 1/sd, k: -log sd - log sqrt(2 pi). */
            double sd = summary_sd(c, s, n);
            kern->a[s] = c->noise == LOP_NOISE_LOGNORMAL ? log(r) : r;
            kern->b[s] = 1 / sd;
            kern->k[s] = -log(sd) - LOG_SQRT_2PI;
            break;
        }
        case LOP_NOISE_POISSON: {
            /* a: log mu, k: -mu; x·a + k, plus -ln x! added once per x. */
            double mu = (double)n * c->window * r;
            kern->a[s] = log(mu);
            kern->b[s] = 0;
            kern->k[s] = -mu;
            break;
        }
        case LOP_NOISE_BINOMIAL:
            /* a: log r, b: log(1 - r); x·a + (N - x)·b, plus ln C(N, x) once per x. */
            kern->a[s] = log(r);
            kern->b[s] = log1p(-r);
            kern->k[s] = 0;
            break;
        }
    }
    return 0;
}

/* 0·log 0 counts as 0: a state with r = 0 gives probability 1 to a count of 0. */
static double times_log(double x, double log_p)
{
    return x == 0 ? 0 : x * log_p;
}

void lop_evidence_kernel_eval(const lop_evidence_kernel *kern, double x,
                              const double *logprior, double *logw)
{
    const lop_channel *c = kern->c;
    size_t n = kern->n_states;
    const double *a = kern->a, *b = kern->b, *k = kern->k;
    switch (c->noise) {
    case LOP_NOISE_GAUSSIAN:
    case LOP_NOISE_SCALAR:
        for (size_t s = 0; s < n; s++) {
            double z = (x - a[s]) * b[s];
            logw[s] = logprior[s] + k[s] - 0.5 * z * z;
        }
        return;
    case LOP_NOISE_LOGNORMAL: {
        double lx = x > 0 ? log(x) : -INFINITY;
        for (size_t s = 0; s < n; s++) {
            double z = (lx - a[s]) * b[s];
            logw[s] = x > 0 ? logprior[s] + k[s] - 0.5 * z * z - lx : -INFINITY;
        }
        return;
    }
    case LOP_NOISE_POISSON: {
        double lf = gsl_sf_lnfact((unsigned)x);
        for (size_t s = 0; s < n; s++)
            logw[s] = logprior[s] + times_log(x, a[s]) + k[s] - lf;
        return;
    }
    case LOP_NOISE_BINOMIAL: {
        unsigned trials = (unsigned)(kern->repeats * c->trials);
        double lc = x <= trials ? gsl_sf_lnchoose(trials, (unsigned)x) : -INFINITY;
        for (size_t s = 0; s < n; s++)
            logw[s] = logprior[s] + lc + times_log(x, a[s]) + times_log(trials - x, b[s]);
        return;
    }
    }
}

void lop_evidence_kernel_clear(lop_evidence_kernel *kern)
{
    free(kern->a);
    free(kern->b);
    free(kern->k);
    kern->a = kern->b = kern->k = NULL;
}

void lop_evidence_add_observed(const lop_problem *p, double *ll)
{
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        for (size_t s = 0; s < p->n_states; s++) {
            if (c->kind == LOP_CHANNEL_TABLE) {
                /* Count first: one product per outcome keeps 1,000 repeats accurate. */
                for (size_t o = 0; o < c->n_outcomes; o++) {
                    size_t k = 0;
                    for (size_t r = 0; r < c->n_observed; r++)
                        k += c->observed_outcome[r] == o;
                    if (k)
                        ll[s] += (double)k * log_outcome(c, s, o);
                }
            } else {
                for (size_t r = 0; r < c->n_observed; r++)
                    ll[s] += lop_evidence_log_summary(c, s, c->observed_value[r], 1);
            }
        }
    }
}
