/* Drawing simulated trials: a state from the prior, the outcome counts of every table
 * channel and the summary of the numeric channel's repeats, each from the same model the
 * engine's rule assumes (evidence.c): gaussian N(center, spread/√n), scalar
 * N(center, spread), lognormal exp(N(log center, spread/√n)), poisson
 * Poisson(n·window·center), binomial Binomial(n·trials, center). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/studies/simulate.h"
#include "simulate_private.h"

/* C(m, j) by the multiplicative formula; every partial product is itself a binomial
 * coefficient, so the division is exact. 0 when j > m. */
static size_t choose(size_t m, size_t j)
{
    if (j > m)
        return 0;
    if (j > m - j)
        j = m - j;
    size_t c = 1;
    for (size_t t = 1; t <= j; t++)
        c = c * (m - j + t) / t;
    return c;
}

/* The rule table lists count vectors from (n, 0, ..., 0) in reverse-lexicographic
 * order. The vectors before v are those larger at the first position where they differ:
 * at position i, with r_i draws left, every first entry u in (v_i, r_i] leaves r_i - u
 * draws to the k-1-i later outcomes, C(r_i - u + k-2-i, k-2-i) ways; summed over u
 * (the hockey-stick identity) that is C(r_i - v_i + k-2-i, k-1-i). */
size_t lop_simulate_counts_rank(const size_t *counts, size_t k)
{
    if (k == 2)
        return counts[1];
    size_t left = 0, rank = 0;
    for (size_t i = 0; i < k; i++)
        left += counts[i];
    for (size_t i = 0; i + 1 < k; i++) {
        size_t d = k - 2 - i;
        rank += choose(left - counts[i] + d, d + 1);
        left -= counts[i];
    }
    return rank;
}

static void clear_tables(sim_draw *d)
{
    for (size_t t = 0; d->tables && t < d->n_tables; t++) {
        free(d->tables[t].cum);
        free(d->tables[t].p);
        free(d->tables[t].last);
    }
    free(d->tables);
    d->tables = NULL;
}

static void clear_numeric(sim_draw *d)
{
    for (size_t j = 0; d->numeric && j < d->n_numeric; j++) {
        free(d->numeric[j].loc);
        free(d->numeric[j].scale);
    }
    free(d->numeric);
    d->numeric = NULL;
}

void sim_draw_clear(sim_draw *d)
{
    free(d->state_cum);
    if (d->alias)
        gsl_ran_discrete_free(d->alias);
    clear_tables(d);
    clear_numeric(d);
    memset(d, 0, sizeof *d);
}

static int init_table(sim_table *tb, const lop_channel *c, size_t n_states)
{
    size_t k = c->n_outcomes;
    tb->k = k;
    tb->repeats = c->repeats;
    tb->cum = malloc(n_states * k * sizeof *tb->cum);
    tb->p = malloc(n_states * k * sizeof *tb->p);
    tb->last = malloc(n_states * sizeof *tb->last);
    size_t *top = calloc(k, sizeof *top);
    if (!tb->cum || !tb->p || !tb->last || !top) {
        free(top);
        return -1;
    }
    for (size_t s = 0; s < n_states; s++) {
        double cum = 0;
        tb->last[s] = 0;
        for (size_t o = 0; o < k; o++) {
            double q = c->given[s * k + o];
            tb->p[s * k + o] = q;
            cum += q;
            tb->cum[s * k + o] = cum;
            if (q > 0)
                tb->last[s] = o;
        }
    }
    /* The last vector, (0, ..., 0, n), has the largest rank. */
    top[k - 1] = c->repeats;
    tb->n_vectors = lop_simulate_counts_rank(top, k) + 1;
    free(top);
    return 0;
}

static int init_numeric(sim_numeric *nm, const lop_channel *c, size_t n_states)
{
    double root_n = sqrt((double)c->repeats);
    nm->c = c;
    nm->loc = malloc(n_states * sizeof *nm->loc);
    nm->scale = malloc(n_states * sizeof *nm->scale);
    if (!nm->loc || !nm->scale)
        return -1;
    for (size_t s = 0; s < n_states; s++) {
        double r = c->center[s];
        switch (c->noise) {
        case LOP_NOISE_GAUSSIAN:
        case LOP_NOISE_SCALAR: /* the mean of n repeats (scalar noise: n = 1) */
            nm->loc[s] = r;
            nm->scale[s] = c->spread[s] / root_n;
            break;
        case LOP_NOISE_LOGNORMAL: /* the mean of the logs */
            nm->loc[s] = log(r);
            nm->scale[s] = c->spread[s] / root_n;
            break;
        case LOP_NOISE_POISSON: /* the sum of n counts */
            nm->loc[s] = (double)c->repeats * c->window * r;
            nm->scale[s] = 0;
            break;
        case LOP_NOISE_BINOMIAL: /* the sum of n binomial counts */
            nm->loc[s] = r;
            nm->scale[s] = 0;
            break;
        }
    }
    nm->binomial_n = (unsigned)(c->repeats * c->trials);
    return 0;
}

int sim_draw_init(sim_draw *d, const lop_problem *p, const lop_rule_result *rule)
{
    memset(d, 0, sizeof *d);
    d->p = p;
    d->n_states = p->n_states;
    if (p->n_states <= SIM_SCAN_STATES) {
        d->state_cum = malloc(p->n_states * sizeof *d->state_cum);
        if (!d->state_cum)
            goto fail;
        double cum = 0;
        for (size_t s = 0; s < p->n_states; s++) {
            cum += p->prior[s];
            d->state_cum[s] = cum;
            if (p->prior[s] > 0)
                d->state_last = s;
        }
    } else {
        /* Walker's alias method (gsl_ran_discrete): O(1) per draw after O(S) set-up. */
        d->alias = gsl_ran_discrete_preproc(p->n_states, p->prior);
        if (!d->alias)
            goto fail;
    }
    for (size_t i = 0; i < p->n_channels; i++) {
        d->n_tables += p->channels[i].kind == LOP_CHANNEL_TABLE;
        d->n_numeric += p->channels[i].kind != LOP_CHANNEL_TABLE;
    }
    d->tables = calloc(d->n_tables ? d->n_tables : 1, sizeof *d->tables);
    d->numeric = calloc(d->n_numeric ? d->n_numeric : 1, sizeof *d->numeric);
    if (!d->tables || !d->numeric)
        goto fail;
    d->max_k = 1;
    for (size_t i = 0, t = 0, j = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE) {
            if (init_numeric(&d->numeric[j++], c, p->n_states) != 0)
                goto fail;
            continue;
        }
        if (init_table(&d->tables[t], c, p->n_states) != 0)
            goto fail;
        d->tables[t].column = d->n_columns;
        d->n_columns += c->n_outcomes;
        if (c->n_outcomes > d->max_k)
            d->max_k = c->n_outcomes;
        t++;
    }
    /* Rows: the last table channel varies fastest (rule.c). */
    size_t stride = 1;
    for (size_t t = d->n_tables; t-- > 0;) {
        d->tables[t].stride = stride;
        stride *= d->tables[t].n_vectors;
    }
    /* The generic path tabulates the rule on a grid only; measurements beyond it are
     * decided as at its nearest end, and counted. */
    if (rule->computed && !rule->exact && rule->n_grid > 0) {
        d->track_grid = true;
        d->grid_lo = rule->grid[0];
        d->grid_hi = rule->grid[rule->n_grid - 1];
    }
    return 0;
fail:
    sim_draw_clear(d);
    return -1;
}

/* The first outcome whose cumulative probability exceeds u (inverse CDF), never past the
 * last outcome of positive probability. */
static size_t draw_outcome(const double *cum, size_t last, double u)
{
    size_t o = 0;
    while (o < last && u >= cum[o])
        o++;
    return o;
}

/* The summary of the repeats of numeric channel nm in state s. */
static double draw_summary(const sim_numeric *nm, gsl_rng *rng, size_t s)
{
    switch (nm->c->noise) {
    case LOP_NOISE_GAUSSIAN:
    case LOP_NOISE_SCALAR:
        return nm->loc[s] + gsl_ran_gaussian_ziggurat(rng, nm->scale[s]);
    case LOP_NOISE_LOGNORMAL:
        return exp(nm->loc[s] + gsl_ran_gaussian_ziggurat(rng, nm->scale[s]));
    case LOP_NOISE_POISSON:
        return nm->loc[s] > 0 ? (double)gsl_ran_poisson(rng, nm->loc[s]) : 0;
    case LOP_NOISE_BINOMIAL:
        return (double)gsl_ran_binomial(rng, nm->loc[s], nm->binomial_n);
    }
    return 0;
}

bool sim_draw_trial(const sim_draw *d, gsl_rng *rng, unsigned *scratch, sim_trial *t)
{
    size_t s = d->alias ? gsl_ran_discrete(rng, d->alias)
                        : draw_outcome(d->state_cum, d->state_last, gsl_rng_uniform(rng));
    t->state = s;
    size_t row = 0;
    for (size_t i = 0; i < d->n_tables; i++) {
        const sim_table *tb = &d->tables[i];
        const double *cum = &tb->cum[s * tb->k];
        size_t *counts = &t->counts[tb->column];
        size_t rank;
        if (tb->repeats == 1) {
            /* One draw: its count vector is the unit vector of the outcome, whose rank is
             * the outcome's index. */
            rank = draw_outcome(cum, tb->last[s], gsl_rng_uniform(rng));
            if (d->all_counts) {
                memset(counts, 0, tb->k * sizeof *counts);
                counts[rank] = 1;
            }
        } else if (tb->repeats <= SIM_REPEATS_ONE_BY_ONE) {
            memset(counts, 0, tb->k * sizeof *counts);
            for (size_t r = 0; r < tb->repeats; r++)
                counts[draw_outcome(cum, tb->last[s], gsl_rng_uniform(rng))]++;
            rank = lop_simulate_counts_rank(counts, tb->k);
        } else {
            gsl_ran_multinomial(rng, tb->k, (unsigned)tb->repeats, &tb->p[s * tb->k], scratch);
            for (size_t o = 0; o < tb->k; o++)
                counts[o] = scratch[o];
            rank = lop_simulate_counts_rank(counts, tb->k);
        }
        row += rank * tb->stride;
    }
    t->row = row;
    for (size_t j = 0; j < d->n_numeric; j++)
        t->xs[j] = draw_summary(&d->numeric[j], rng, s);
    t->x = d->n_numeric ? t->xs[0] : 0;
    return d->track_grid && (t->x < d->grid_lo || t->x > d->grid_hi);
}
