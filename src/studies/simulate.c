/* [simulate]: sessions of trials under the Bayes rule and other rules, all rules on the
 * same simulated trials. Sessions are cut into blocks of a fixed size (a function of
 * `trials` only); each block has its own GSL Mersenne Twister seeded from the seed and
 * the block's index, its sums are kept apart and combined in block order, so the numbers
 * do not depend on the number of threads. OpenMP over blocks. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>
#include <omp.h>

#include "lopside/model/curve.h"
#include "lopside/studies/simulate.h"
#include "lopside/util/strutil.h"
#include "simulate_private.h"

/* The 97.5% quantile of the standard normal: a 95% interval is mean ± Z95·se. */
#define Z95 1.959963984540054
/* At most this many bins in the histogram of session totals. */
#define HISTOGRAM_BINS 40
/* A stop request is checked this often inside a block (trials; a power of 2, minus 1). */
#define STOP_CHECK_MASK 0xffffu
/* Above this share of measurements beyond the rule's grid, the report warns. */
#define OUTSIDE_WARN 1e-3

/* Sums of one block for one rule, in loss orientation; losses are shifted by the rule's
 * reference value so the sum of squares keeps its precision (a shifted-data variance). */
typedef struct {
    double sum, sum_sq;
    double error, abs_error;  /* estimates */
} block_sums;

typedef struct {
    const lop_problem *p;
    const sim_draw *draw;
    const sim_decider *deciders;  /* per active rule */
    size_t n_active;
    const double *shift;          /* per active rule: the reference loss */
    size_t sessions, trials, per_block, n_blocks;
    unsigned long seed;
    size_t n_rate_states;
    double **totals;              /* per active rule: oriented total per session */
    block_sums *sums;             /* n_blocks x n_active */
    size_t *choices;              /* n_active x n_actions x n_rate_states (shared) */
    size_t *state_trials;         /* n_rate_states (shared) */
    size_t outside;
    const lop_simulate_control *ctl;
    size_t done;
    int stopped, failed, threads;
} sim_job;

/* The seed of block b: splitmix64 (Steele, Lea & Flood 2014) mixes the user's seed into
 * 32 bits, then murmur3's 32-bit finalizer, a bijection, spreads consecutive blocks so
 * that every block of a run gets a different Mersenne Twister seed. */
static unsigned long block_seed(unsigned long seed, size_t block)
{
    uint64_t z = (uint64_t)seed + UINT64_C(0x9E3779B97F4A7C15);
    z = (z ^ (z >> 30)) * UINT64_C(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94D049BB133111EB);
    z ^= z >> 31;
    uint32_t h = (uint32_t)z + (uint32_t)block;
    h ^= h >> 16;
    h *= 0x85EBCA6Bu;
    h ^= h >> 13;
    h *= 0xC2B2AE35u;
    h ^= h >> 16;
    return h;
}

static bool stop_requested(const sim_job *job)
{
    return job->ctl && job->ctl->stop && *job->ctl->stop;
}

/* Per-thread space: the generator, scratch for count vectors and the tallies. */
typedef struct {
    gsl_rng *rng;
    size_t *counts;
    unsigned *scratch;
    double *xs, *work;
    double *session;              /* per active rule */
    block_sums *sums;             /* per active rule, for the block at hand */
    size_t *choices, *state_trials;
    size_t outside;
} thread_space;

static void thread_space_free(thread_space *t)
{
    if (!t)
        return;
    gsl_rng_free(t->rng);
    free(t->counts);
    free(t->scratch);
    free(t->xs);
    free(t->work);
    free(t->session);
    free(t->sums);
    free(t->choices);
    free(t->state_trials);
    free(t);
}

static thread_space *thread_space_new(const sim_job *job)
{
    thread_space *t = calloc(1, sizeof *t);
    if (!t)
        return NULL;
    size_t n_choices =
        job->p->estimate ? 1 : job->n_active * job->p->n_actions * job->n_rate_states;
    t->rng = gsl_rng_alloc(gsl_rng_mt19937);
    const sim_draw *d = job->draw;
    t->counts = malloc((d->n_columns ? d->n_columns : 1) * sizeof *t->counts);
    t->scratch = malloc(d->max_k * sizeof *t->scratch);
    t->xs = malloc((d->n_numeric ? d->n_numeric : 1) * sizeof *t->xs);
    t->work = malloc((2 * job->p->n_states + job->p->n_actions + 1) * sizeof *t->work);
    t->session = malloc(job->n_active * sizeof *t->session);
    t->sums = malloc(job->n_active * sizeof *t->sums);
    t->choices = calloc(n_choices, sizeof *t->choices);
    t->state_trials = calloc(job->n_rate_states, sizeof *t->state_trials);
    if (!t->rng || !t->counts || !t->scratch || !t->xs || !t->work || !t->session || !t->sums ||
        !t->choices || !t->state_trials) {
        thread_space_free(t);
        return NULL;
    }
    return t;
}

/* Simulates the sessions of block b. Returns false when stopped on request. */
static bool run_block(sim_job *job, thread_space *t, size_t b)
{
    const lop_problem *p = job->p;
    const double sign = p->payoff ? -1 : 1;
    const size_t n_active = job->n_active, A = p->n_actions, R = job->n_rate_states;
    block_sums *sums = t->sums;
    memset(sums, 0, n_active * sizeof *sums);
    gsl_rng_set(t->rng, block_seed(job->seed, b));
    size_t first = b * job->per_block;
    size_t last = first + job->per_block < job->sessions ? first + job->per_block : job->sessions;
    sim_trial tr = {.xs = t->xs, .counts = t->counts, .work = t->work};
    for (size_t sess = first; sess < last; sess++) {
        for (size_t k = 0; k < n_active; k++)
            t->session[k] = 0;
        for (size_t i = 0; i < job->trials; i++) {
            if ((i & STOP_CHECK_MASK) == STOP_CHECK_MASK && stop_requested(job))
                return false;
            t->outside += sim_draw_trial(job->draw, t->rng, t->scratch, &tr);
            size_t s = tr.state, col = R == 1 ? 0 : s;
            t->state_trials[col]++;
            for (size_t k = 0; k < n_active; k++) {
                const sim_decider *d = &job->deciders[k];
                double loss;
                if (p->estimate) {
                    double e = sim_decide_estimate(d, &tr), truth = p->state_values[s];
                    loss = lop_curve_loss(&p->curve, e, truth);
                    sums[k].error += e - truth;
                    sums[k].abs_error += fabs(e - truth);
                } else {
                    size_t a = sim_decide_action(d, &tr);
                    loss = p->loss[a * p->n_states + s];
                    t->choices[(k * A + a) * R + col]++;
                }
                t->session[k] += loss;
                double dl = loss - job->shift[k];
                sums[k].sum += dl;
                sums[k].sum_sq += dl * dl;
            }
        }
        for (size_t k = 0; k < n_active; k++)
            job->totals[k][sess] = sign * t->session[k];
    }
    memcpy(&job->sums[b * n_active], sums, n_active * sizeof *sums);
    return true;
}

static void run_blocks(sim_job *job)
{
#pragma omp parallel
    {
        thread_space *t = thread_space_new(job);
        if (!t) {
#pragma omp atomic write
            job->failed = 1;
        }
#pragma omp single
        job->threads = omp_get_num_threads();
#pragma omp for schedule(dynamic, 1)
        for (size_t b = 0; b < job->n_blocks; b++) {
            int skip;
#pragma omp atomic read
            skip = job->stopped;
            if (!t || skip)
                continue;
            if (stop_requested(job) || !run_block(job, t, b)) {
#pragma omp atomic write
                job->stopped = 1;
                continue;
            }
            size_t done;
#pragma omp atomic capture
            done = ++job->done;
            if (omp_get_thread_num() == 0 && job->ctl)
                lop_progress_step(job->ctl->progress,
                                  "simulating sessions (Ctrl-C stops, writing nothing)", done,
                                  job->n_blocks);
        }
        if (t) {
            /* Counts add up the same in any order. */
#pragma omp critical(lop_simulate_tally)
            {
                size_t n_choices =
                    job->p->estimate ? 0 : job->n_active * job->p->n_actions * job->n_rate_states;
                for (size_t i = 0; i < n_choices; i++)
                    job->choices[i] += t->choices[i];
                for (size_t i = 0; i < job->n_rate_states; i++)
                    job->state_trials[i] += t->state_trials[i];
                job->outside += t->outside;
            }
        }
        thread_space_free(t);
    }
}

/* Rounds a bin width up to 1, 2 or 5 times a power of ten. */
static double nice_width(double raw)
{
    double mag = pow(10, floor(log10(raw)));
    static const double steps[] = {1, 2, 5, 10};
    for (size_t i = 0; i < sizeof steps / sizeof *steps; i++)
        if (steps[i] * mag >= raw)
            return steps[i] * mag;
    return 10 * mag;
}

/* Histogram of the session totals in bins of a round width; a total belongs to the bin
 * [edges[i], edges[i+1]) as compared with the stored edges. */
static int histogram(lop_simulated_rule *m, const double *x, size_t n, double lo_x, double hi_x)
{
    double w, lo;
    size_t nb;
    if (hi_x > lo_x) {
        w = nice_width((hi_x - lo_x) / HISTOGRAM_BINS);
        lo = floor(lo_x / w) * w;
        nb = (size_t)floor((hi_x - lo) / w) + 1;
        while (lo + (double)nb * w <= hi_x)
            nb++;
    } else {
        w = 1;
        lo = lo_x - 0.5;
        nb = 1;
    }
    m->n_bins = nb;
    m->edges = malloc((nb + 1) * sizeof *m->edges);
    m->counts = calloc(nb, sizeof *m->counts);
    if (!m->edges || !m->counts)
        return -1;
    for (size_t i = 0; i <= nb; i++)
        m->edges[i] = lo + (double)i * w;
    for (size_t j = 0; j < n; j++) {
        double u = floor((x[j] - lo) / w);
        size_t i = u > 0 ? (size_t)u : 0;
        if (i >= nb)
            i = nb - 1;
        while (i > 0 && x[j] < m->edges[i])
            i--;
        while (i + 1 < nb && x[j] >= m->edges[i + 1])
            i++;
        m->counts[i]++;
    }
    return 0;
}

/* Means, intervals, percentiles, floor share, histogram and rates of one rule. */
static int summarize(const sim_job *job, size_t k, lop_simulated_rule *m)
{
    const lop_problem *p = job->p;
    double n = (double)job->sessions * (double)job->trials;
    double s1 = 0, s2 = 0, e1 = 0, e2 = 0;
    for (size_t b = 0; b < job->n_blocks; b++) {
        const block_sums *bs = &job->sums[b * job->n_active + k];
        s1 += bs->sum;
        s2 += bs->sum_sq;
        e1 += bs->error;
        e2 += bs->abs_error;
    }
    /* Shifted-data variance: var = (sum d² - (sum d)²/n) / (n - 1), d = loss - shift. */
    double mean = job->shift[k] + s1 / n;
    double var = n > 1 ? fmax(0, (s2 - s1 * s1 / n) / (n - 1)) : 0;
    double se = sqrt(var / n);
    double lo = mean - Z95 * se, hi = mean + Z95 * se;
    m->mean_per_trial = lop_problem_oriented(p, mean);
    m->sd_per_trial = sqrt(var);
    m->ci95[0] = p->payoff ? -hi : lo;
    m->ci95[1] = p->payoff ? -lo : hi;
    double t = (double)job->trials;
    m->mean_per_session = t * m->mean_per_trial;
    m->session_ci95[0] = t * m->ci95[0];
    m->session_ci95[1] = t * m->ci95[1];
    m->mean_error = e1 / n;
    m->mean_absolute_error = e2 / n;

    double *x = job->totals[k];
    size_t ns = job->sessions;
    double x_lo = x[0], x_hi = x[0];
    size_t below = 0;
    for (size_t i = 0; i < ns; i++) {
        x_lo = fmin(x_lo, x[i]);
        x_hi = fmax(x_hi, x[i]);
        below += p->simulate.floor_given && x[i] < p->simulate.floor;
    }
    m->below_floor = (double)below / (double)ns;
    if (histogram(m, x, ns, x_lo, x_hi) != 0)
        return -1;
    /* Percentiles by linear interpolation between order statistics (GSL's
     * gsl_stats_quantile_from_sorted_data: position (n - 1)·q). */
    gsl_sort(x, 1, ns);
    m->p05 = gsl_stats_quantile_from_sorted_data(x, 1, ns, 0.05);
    m->p50 = gsl_stats_quantile_from_sorted_data(x, 1, ns, 0.50);
    m->p95 = gsl_stats_quantile_from_sorted_data(x, 1, ns, 0.95);

    size_t R = job->n_rate_states;
    m->n_rate_states = R;
    m->state_trials = malloc(R * sizeof *m->state_trials);
    if (!m->state_trials)
        return -1;
    memcpy(m->state_trials, job->state_trials, R * sizeof *m->state_trials);
    if (!p->estimate) {
        size_t nc = p->n_actions * R;
        m->choices = malloc(nc * sizeof *m->choices);
        if (!m->choices)
            return -1;
        memcpy(m->choices, &job->choices[k * nc], nc * sizeof *m->choices);
    }
    return 0;
}

/* Fills the names, analytic risks and deciders of every listed rule; returns the number
 * that can be simulated, or (size_t)-1 when memory runs out. */
static size_t prepare_rules(const lop_problem *p, lop_results *r, sim_decider *dec,
                            size_t *active)
{
    lop_simulation *sim = &r->simulation;
    size_t n_active = 0;
    for (size_t i = 0; i < sim->n_rules; i++) {
        lop_simulated_rule *m = &sim->rules[i];
        long k = p->simulate.rules[i];
        m->rule = k;
        m->name = k < 0 ? "bayes" : p->rules[k].name;
        if (k < 0 && r->rule.computed) {
            m->has_analytic = true;
            m->analytic = lop_problem_oriented(p, r->rule.bayes_risk);
        } else if (k >= 0 && r->compared[k].computed) {
            m->has_analytic = true;
            m->analytic = lop_problem_oriented(p, r->compared[k].risk);
        }
        bool no_memory;
        const char *why = sim_decider_init(&dec[n_active], p, r, k, &no_memory);
        if (no_memory)
            return (size_t)-1;
        if (why) {
            sim_decider_clear(&dec[n_active]);
            m->not_simulated_why = lop_strdup(why);
            if (!m->not_simulated_why ||
                lop_results_warn(r, "[simulate] rules: %s was not simulated: %s", m->name,
                                 why) != 0)
                return (size_t)-1;
            continue;
        }
        m->simulated = true;
        active[n_active++] = i;
    }
    return n_active;
}

static void free_job(sim_job *job, sim_decider *dec, size_t n_dec)
{
    for (size_t k = 0; job->totals && k < job->n_active; k++)
        free(job->totals[k]);
    free(job->totals);
    free(job->sums);
    free(job->choices);
    free(job->state_trials);
    free((void *)job->shift);
    for (size_t k = 0; dec && k < n_dec; k++)
        sim_decider_clear(&dec[k]);
    free(dec);
}

lop_status lop_simulate_run(const lop_problem *p, lop_results *r, const lop_simulate_control *ctl,
                            lop_error *err)
{
    const lop_simulate_spec *spec = &p->simulate;
    lop_simulation *sim = &r->simulation;
    if (!spec->present)
        return LOP_OK;
    sim->sessions = spec->sessions;
    sim->trials = spec->trials;
    sim->seed = spec->seed;
    sim->floor_given = spec->floor_given;
    sim->floor = spec->floor;
    sim->n_rules = spec->n_rules;
    sim->rules = calloc(spec->n_rules ? spec->n_rules : 1, sizeof *sim->rules);
    sim_decider *dec = calloc(spec->n_rules ? spec->n_rules : 1, sizeof *dec);
    size_t *active = calloc(spec->n_rules ? spec->n_rules : 1, sizeof *active);
    sim_draw draw = {0};
    sim_job job = {.p = p, .draw = &draw, .deciders = dec, .ctl = ctl};
    lop_status st = LOP_OK;
    if (!sim->rules || !dec || !active)
        goto no_memory;
    size_t n_active = prepare_rules(p, r, dec, active);
    if (n_active == (size_t)-1)
        goto no_memory;
    job.n_active = n_active;
    if (n_active == 0) {
        sim->run = true;
        goto done;
    }
    if (sim_draw_init(&draw, p, &r->rule) != 0)
        goto no_memory;
    for (size_t k = 0; k < n_active; k++)
        draw.all_counts |= dec[k].kind == SIM_DIRECT;

    job.sessions = spec->sessions;
    job.trials = spec->trials;
    job.seed = spec->seed;
    job.per_block = (LOP_SIMULATE_BLOCK_TRIALS + spec->trials - 1) / spec->trials;
    job.n_blocks = (spec->sessions + job.per_block - 1) / job.per_block;
    job.n_rate_states = p->states_kind == LOP_STATES_GRID ? 1 : p->n_states;
    double *shift = malloc(n_active * sizeof *shift);
    job.shift = shift;
    job.totals = calloc(n_active, sizeof *job.totals);
    job.sums = calloc(job.n_blocks * n_active, sizeof *job.sums);
    job.choices = calloc(n_active * p->n_actions * job.n_rate_states + 1, sizeof *job.choices);
    job.state_trials = calloc(job.n_rate_states, sizeof *job.state_trials);
    if (!shift || !job.totals || !job.sums || !job.choices || !job.state_trials)
        goto no_memory;
    for (size_t k = 0; k < n_active; k++) {
        const lop_simulated_rule *m = &sim->rules[active[k]];
        /* The analytic risk (or the prior-only risk) is close to the mean. */
        shift[k] = m->has_analytic ? lop_problem_oriented(p, m->analytic)
                                   : r->rule.prior_only_risk;
        job.totals[k] = malloc(spec->sessions * sizeof **job.totals);
        if (!job.totals[k]) {
            st = lop_error_run(err, "[simulate]: out of memory keeping %zu session totals "
                                    "of %zu rules; lower sessions",
                               spec->sessions, n_active);
            goto done;
        }
    }

    double t0 = omp_get_wtime();
    run_blocks(&job);
    sim->seconds = omp_get_wtime() - t0;
    if (job.failed)
        goto no_memory;
    if (job.stopped || stop_requested(&job)) {
        sim->interrupted = true;
        goto done;
    }
    for (size_t k = 0; k < n_active; k++)
        if (summarize(&job, k, &sim->rules[active[k]]) != 0)
            goto no_memory;
    sim->outside_grid = job.outside;
    sim->threads = job.threads;
    sim->run = true;
    double share = (double)job.outside / ((double)spec->sessions * (double)spec->trials);
    if (share > OUTSIDE_WARN &&
        lop_results_warn(r, "[simulate]: %.3g%% of the simulated measurements fell beyond the "
                            "rule's measurement grid and were decided as at its nearest end; "
                            "widen grid_from and grid_to",
                         100 * share) != 0)
        goto no_memory;
    goto done;
no_memory:
    st = lop_error_run(err, "[simulate]: out of memory");
done:
    free(active);
    sim_draw_clear(&draw);
    free_job(&job, dec, spec->n_rules);
    return st;
}
