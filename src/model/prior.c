#include <float.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_sf_erf.h>
#include <gsl/gsl_sf_gamma.h>

#include "lopside/input/parse.h"
#include "lopside/model/prior.h"
#include "lopside/util/strutil.h"

#define MAX_PARAMS 3
/* A cell mass below this many times the smallest double has lost digits to underflow
 * in the difference of tails: its log comes from the log tails or the log density. */
#define TINY_MASS (1e20 * DBL_MIN)
#define LOG_SQRT_2PI 0.91893853320467274178
#define SQRT_2 1.41421356237309504880
#define LOG_2 0.69314718055994530942
#define LOG_PI 1.14472988584940017414

typedef enum { KIND_CDF, KIND_TABLE, KIND_MIXTURE } family_kind;

/* One tail of a distribution at x, given its parameters in the order of the keys. */
typedef double (*tail_fn)(const double *par, double x);

typedef struct {
    const char *name;
    family_kind kind;
    const char *keys[MAX_PARAMS + 1]; /* NULL after the last */
    unsigned positive;                /* bit i: keys[i] must be > 0 */
    bool grid_defaults;               /* uniform: keys default to the grid's range */
    double support_lo, support_hi;    /* P = 0 at or below lo, Q = 0 at or above hi */
    tail_fn lower, upper;             /* P(X <= x) and P(X > x) */
    tail_fn log_lower, log_upper;     /* their logs far out, where they underflow; NULL:
                                         no closed form, the density stands in */
    tail_fn log_density;              /* log of the density at x inside the support */
} family_spec;

/* uniform on [low, high]: P = (x - low)/(high - low) clipped to [0, 1] (gsl_cdf_flat_P). */
static double uniform_P(const double *k, double x) { return gsl_cdf_flat_P(x, k[0], k[1]); }
static double uniform_Q(const double *k, double x) { return gsl_cdf_flat_Q(x, k[0], k[1]); }

/* normal: P = Phi((x - mean)/sd) (gsl_cdf_gaussian_P of x - mean with sigma = sd). */
static double normal_P(const double *k, double x) { return gsl_cdf_gaussian_P(x - k[0], k[1]); }
static double normal_Q(const double *k, double x) { return gsl_cdf_gaussian_Q(x - k[0], k[1]); }

/* lognormal with median m: log X ~ N(log m, log_sd) (gsl_cdf_lognormal_P, zeta = log m). */
static double lognormal_P(const double *k, double x)
{
    return gsl_cdf_lognormal_P(x, log(k[0]), k[1]);
}
static double lognormal_Q(const double *k, double x)
{
    return gsl_cdf_lognormal_Q(x, log(k[0]), k[1]);
}

/* gamma: P = gamma_inc(shape, x/scale)/Gamma(shape), the regularized lower incomplete
 * gamma function (gsl_cdf_gamma_P with a = shape, b = scale). */
static double gamma_P(const double *k, double x) { return gsl_cdf_gamma_P(x, k[0], k[1]); }
static double gamma_Q(const double *k, double x) { return gsl_cdf_gamma_Q(x, k[0], k[1]); }

/* beta: P = I_x(alpha, beta), the regularized incomplete beta function (gsl_cdf_beta_P). */
static double beta_P(const double *k, double x) { return gsl_cdf_beta_P(x, k[0], k[1]); }
static double beta_Q(const double *k, double x) { return gsl_cdf_beta_Q(x, k[0], k[1]); }

/* student: location-scale t, P = T_df((x - center)/scale) (gsl_cdf_tdist_P with nu = df). */
static double student_P(const double *k, double x)
{
    return gsl_cdf_tdist_P((x - k[0]) / k[1], k[2]);
}
static double student_Q(const double *k, double x)
{
    return gsl_cdf_tdist_Q((x - k[0]) / k[1], k[2]);
}

/* exponential: P = 1 - exp(-x/mean) (gsl_cdf_exponential_P with mu = mean). */
static double exponential_P(const double *k, double x) { return gsl_cdf_exponential_P(x, k[0]); }
static double exponential_Q(const double *k, double x) { return gsl_cdf_exponential_Q(x, k[0]); }

/* log Phi(z) and log(1 - Phi(z)) without underflow: log(erfc(-z/sqrt 2)/2)
 * (gsl_sf_log_erfc, Abramowitz & Stegun 7.1.2). */
static double log_phi_lower(double z) { return gsl_sf_log_erfc(-z / SQRT_2) - LOG_2; }
static double log_phi_upper(double z) { return gsl_sf_log_erfc(z / SQRT_2) - LOG_2; }

static double normal_logP(const double *k, double x) { return log_phi_lower((x - k[0]) / k[1]); }
static double normal_logQ(const double *k, double x) { return log_phi_upper((x - k[0]) / k[1]); }
/* normal density: -z^2/2 - log(sd) - log sqrt(2 pi). */
static double normal_logf(const double *k, double x)
{
    double z = (x - k[0]) / k[1];
    return -0.5 * z * z - log(k[1]) - LOG_SQRT_2PI;
}

static double lognormal_logP(const double *k, double x)
{
    return log_phi_lower((log(x) - log(k[0])) / k[1]);
}
static double lognormal_logQ(const double *k, double x)
{
    return log_phi_upper((log(x) - log(k[0])) / k[1]);
}
/* lognormal density: the normal density of log x over x. */
static double lognormal_logf(const double *k, double x)
{
    double z = (log(x) - log(k[0])) / k[1];
    return -0.5 * z * z - log(k[1]) - LOG_SQRT_2PI - log(x);
}

/* exponential: log P = log(1 - exp(-x/mean)), log Q = -x/mean, log f = -x/mean - log mean. */
static double exponential_logP(const double *k, double x) { return log(-expm1(-x / k[0])); }
static double exponential_logQ(const double *k, double x) { return -x / k[0]; }
static double exponential_logf(const double *k, double x) { return -x / k[0] - log(k[0]); }

/* uniform density: 1/(high - low) inside. */
static double uniform_logf(const double *k, double x)
{
    return x < k[0] || x > k[1] ? -INFINITY : -log(k[1] - k[0]);
}

/* gamma density: (shape - 1) log x - x/scale - lgamma(shape) - shape log scale. */
static double gamma_logf(const double *k, double x)
{
    return (k[0] - 1) * log(x) - x / k[1] - gsl_sf_lngamma(k[0]) - k[0] * log(k[1]);
}

/* beta density: (alpha - 1) log x + (beta - 1) log(1 - x) - log B(alpha, beta). */
static double beta_logf(const double *k, double x)
{
    return (k[0] - 1) * log(x) + (k[1] - 1) * log1p(-x) - gsl_sf_lnbeta(k[0], k[1]);
}

/* location-scale t density: lgamma((df+1)/2) - lgamma(df/2) - log(sqrt(df pi) scale)
 * - (df+1)/2 log(1 + z^2/df). */
static double student_logf(const double *k, double x)
{
    double z = (x - k[0]) / k[1], df = k[2];
    return gsl_sf_lngamma((df + 1) / 2) - gsl_sf_lngamma(df / 2) -
           0.5 * (log(df) + LOG_PI) - log(k[1]) - (df + 1) / 2 * log1p(z * z / df);
}

#define POS(i) (1u << (i))

/* The families of format.md's [prior] table, in its order. */
static const family_spec families[] = {
    {"uniform", KIND_CDF, {"low", "high", NULL}, 0, true, -INFINITY, INFINITY, uniform_P,
     uniform_Q, NULL, NULL, uniform_logf},
    {"normal", KIND_CDF, {"mean", "sd", NULL}, POS(1), false, -INFINITY, INFINITY, normal_P,
     normal_Q, normal_logP, normal_logQ, normal_logf},
    {"lognormal", KIND_CDF, {"median", "log_sd", NULL}, POS(0) | POS(1), false, 0, INFINITY,
     lognormal_P, lognormal_Q, lognormal_logP, lognormal_logQ, lognormal_logf},
    {"gamma", KIND_CDF, {"shape", "scale", NULL}, POS(0) | POS(1), false, 0, INFINITY,
     gamma_P, gamma_Q, NULL, NULL, gamma_logf},
    {"beta", KIND_CDF, {"alpha", "beta", NULL}, POS(0) | POS(1), false, 0, 1, beta_P, beta_Q,
     NULL, NULL, beta_logf},
    {"student", KIND_CDF, {"center", "scale", "df", NULL}, POS(1) | POS(2), false, -INFINITY,
     INFINITY, student_P, student_Q, NULL, NULL, student_logf},
    {"exponential", KIND_CDF, {"mean", NULL}, POS(0), false, 0, INFINITY, exponential_P,
     exponential_Q, exponential_logP, exponential_logQ, exponential_logf},
    {"table", KIND_TABLE, {"at", "density", NULL}, 0, false, -INFINITY, INFINITY, NULL, NULL,
     NULL, NULL, NULL},
    {"mixture", KIND_MIXTURE, {"parts", NULL}, 0, false, -INFINITY, INFINITY, NULL, NULL, NULL,
     NULL, NULL},
};

#define N_FAMILIES (sizeof families / sizeof *families)

/* One distribution: the whole [prior], or one [prior.NAME] part of a mixture. */
typedef struct {
    const family_spec *family;
    const char *section;     /* owned by the config */
    int family_line;
    double par[MAX_PARAMS];
    double *at, *density;    /* table */
    size_t m;
    double total;            /* table: integral of the density as given */
    double weight;           /* mixture part: as given */
} part;

/* The intervals whose masses are wanted, [x[i], x[i+1]] for i + 1 < n (x increasing),
 * and the state range [lo, hi] that a uniform without low or high spans. */
typedef struct {
    const double *x;
    size_t n;
    double lo, hi;
} grid;

static void part_free(part *pt)
{
    free(pt->at);
    free(pt->density);
    pt->at = pt->density = NULL;
}

static const family_spec *find_family(const char *name)
{
    for (size_t i = 0; i < N_FAMILIES; i++)
        if (strcmp(families[i].name, name) == 0)
            return &families[i];
    return NULL;
}

/* Writes "a, b, c" of the NULL-terminated words into buf. */
static void join(char *buf, size_t size, const char *const *words)
{
    size_t used = 0;
    buf[0] = '\0';
    for (size_t i = 0; words[i] && used < size; i++) {
        int n = snprintf(buf + used, size - used, "%s%s", i ? ", " : "", words[i]);
        used += n > 0 ? (size_t)n : 0;
    }
}

static void family_names(char *buf, size_t size)
{
    const char *names[N_FAMILIES + 1];
    for (size_t i = 0; i < N_FAMILIES; i++)
        names[i] = families[i].name;
    names[N_FAMILIES] = NULL;
    join(buf, size, names);
}

static lop_status unknown_family(const lop_config *cfg, const lop_entry *fe, lop_error *err)
{
    const char *best = NULL;
    size_t best_d = (size_t)-1;
    for (size_t i = 0; i < N_FAMILIES; i++) {
        size_t d = lop_edit_distance(fe->value, families[i].name);
        if (d < best_d) {
            best_d = d;
            best = families[i].name;
        }
    }
    char names[160];
    family_names(names, sizeof names);
    if (fe->value[0] == '\0')
        return lop_error_input(err, cfg->path, fe->line, fe->section, fe->key,
                               "the value is empty: expected one of %s", names);
    if (best && lop_close_enough(best_d, strlen(fe->value)))
        return lop_error_input(err, cfg->path, fe->line, fe->section, fe->key,
                               "unknown family `%s`; did you mean `%s`? (families: %s)",
                               fe->value, best, names);
    return lop_error_input(err, cfg->path, fe->line, fe->section, fe->key,
                           "unknown family `%s` (families: %s)", fe->value, names);
}

/* Every key of the section must belong to its family (plus `weight` in a part). */
static lop_status check_keys(const lop_config *cfg, const part *pt, bool is_part,
                             lop_error *err)
{
    const family_spec *f = pt->family;
    for (size_t i = 0; i < cfg->n_entries; i++) {
        const lop_entry *e = &cfg->entries[i];
        if (strcmp(e->section, pt->section) != 0 || strcmp(e->key, "family") == 0 ||
            (is_part && strcmp(e->key, "weight") == 0))
            continue;
        const char *best = is_part ? "weight" : NULL;
        size_t best_d = best ? lop_edit_distance(e->key, best) : (size_t)-1;
        bool known = false;
        for (size_t k = 0; f->keys[k]; k++) {
            if (strcmp(e->key, f->keys[k]) == 0)
                known = true;
            size_t d = lop_edit_distance(e->key, f->keys[k]);
            if (d < best_d) {
                best_d = d;
                best = f->keys[k];
            }
        }
        if (known)
            continue;
        char keys[96];
        join(keys, sizeof keys, f->keys);
        bool near = best && lop_close_enough(best_d, strlen(e->key));
        return lop_error_input(
            err, cfg->path, e->line, e->section, e->key,
            "`%s` is not a key of the %s family (its keys: %s%s)%s%s%s%s", e->key, f->name,
            keys, is_part ? ", and weight in a part" : "",
            f->kind == KIND_MIXTURE ? "; each part's keys go in its [prior.NAME] section" : "",
            near ? "; did you mean `" : "", near ? best : "", near ? "`?" : "");
    }
    return LOP_OK;
}

static int section_line(const lop_config *cfg, const char *section)
{
    const lop_section *s = lop_config_section(cfg, section);
    return s ? s->line : 0;
}

/* Reads the parameters of a family with a CDF, with their bounds. */
static lop_status read_params(const lop_config *cfg, const grid *g, part *pt, lop_error *err)
{
    const family_spec *f = pt->family;
    const lop_entry *given[MAX_PARAMS] = {NULL};
    for (size_t k = 0; f->keys[k]; k++) {
        const lop_entry *e = lop_config_find(cfg, pt->section, f->keys[k]);
        given[k] = e;
        if (!e && f->grid_defaults) {
            pt->par[k] = k == 0 ? g->lo : g->hi;
            continue;
        }
        if (!e)
            return lop_error_input(err, cfg->path, section_line(cfg, pt->section),
                                   pt->section, f->keys[k],
                                   "missing: the %s family needs `%s`", f->name,
                                   f->keys[k]);
        if (lop_parse_number(cfg, e, false, &pt->par[k], err) != LOP_OK)
            return err->status;
        if ((f->positive & POS(k)) && !(pt->par[k] > 0))
            return lop_error_input(err, cfg->path, e->line, e->section, e->key,
                                   "must be > 0 for the %s family, found %s", f->name,
                                   e->value);
    }
    if (f->grid_defaults && !(pt->par[0] < pt->par[1])) {
        const lop_entry *e = given[1] ? given[1] : given[0];
        return lop_error_input(err, cfg->path, e->line, e->section, e->key,
                               "low (%.15g%s) must be below high (%.15g%s)", pt->par[0],
                               given[0] ? "" : ", the grid's `from`", pt->par[1],
                               given[1] ? "" : ", the grid's `to`");
    }
    return LOP_OK;
}

/* Returns the integral over [at[k], at[k+1]] of the density: the trapezoid, exact for a
 * linear function. */
static double trapezoid(double a, double b, double fa, double fb)
{
    return (b - a) * (fa + fb) / 2;
}

/* Reads a table: strictly increasing `at`, one density >= 0 per point, not all zero. */
static lop_status read_table(const lop_config *cfg, part *pt, lop_error *err)
{
    const lop_entry *at = lop_config_find(cfg, pt->section, "at");
    const lop_entry *density = lop_config_find(cfg, pt->section, "density");
    int line = section_line(cfg, pt->section);
    if (!at)
        return lop_error_input(err, cfg->path, line, pt->section, "at",
                               "missing: the table family needs `at` (increasing points)");
    if (!density)
        return lop_error_input(err, cfg->path, line, pt->section, "density",
                               "missing: the table family needs `density` (one value >= 0 "
                               "per point of `at`)");
    size_t md;
    if (lop_parse_numbers(cfg, at, &pt->at, &pt->m, err) != LOP_OK ||
        lop_parse_numbers(cfg, density, &pt->density, &md, err) != LOP_OK)
        return err->status;
    if (pt->m < 2)
        return lop_error_input(err, cfg->path, at->line, at->section, at->key,
                               "a table needs at least two points, found %zu", pt->m);
    for (size_t i = 1; i < pt->m; i++)
        if (!(pt->at[i] > pt->at[i - 1]))
            return lop_error_input(err, cfg->path, at->line, at->section, at->key,
                                   "points must increase strictly: entry %zu (%.15g) is not "
                                   "above entry %zu (%.15g)",
                                   i + 1, pt->at[i], i, pt->at[i - 1]);
    if (md != pt->m)
        return lop_error_input(err, cfg->path, density->line, density->section,
                               density->key,
                               "expected one density per point of `at` (%zu, line %d), "
                               "found %zu",
                               pt->m, at->line, md);
    for (size_t i = 0; i < md; i++)
        if (pt->density[i] < 0)
            return lop_error_input(err, cfg->path, density->line, density->section,
                                   density->key, "entry %zu is negative (%.15g): a density "
                                   "must be >= 0", i + 1, pt->density[i]);
    pt->total = 0;
    for (size_t k = 0; k + 1 < pt->m; k++)
        pt->total += trapezoid(pt->at[k], pt->at[k + 1], pt->density[k], pt->density[k + 1]);
    if (!(pt->total > 0) || !isfinite(pt->total))
        return lop_error_input(err, cfg->path, density->line, density->section, density->key,
                               pt->total > 0 ? "the area under the table is too large to "
                                               "represent"
                                             : "the density is 0 everywhere: the table puts "
                                               "no mass anywhere");
    return LOP_OK;
}

/* Reads one distribution from section: [prior] itself, or a mixture part (is_part). */
static lop_status read_part(const lop_config *cfg, const char *section, bool is_part,
                            const grid *g, part *pt, lop_error *err)
{
    pt->section = section;
    const lop_entry *fe = lop_config_find(cfg, section, "family");
    if (!fe) {
        char names[160];
        family_names(names, sizeof names);
        return lop_error_input(err, cfg->path, section_line(cfg, section), section,
                               "family",
                               "missing: states on a grid need `family =` one of %s%s",
                               names, is_part ? "" : " (`weights` are for listed states)");
    }
    pt->family_line = fe->line;
    pt->family = find_family(fe->value);
    if (!pt->family)
        return unknown_family(cfg, fe, err);
    if (is_part && pt->family->kind == KIND_MIXTURE)
        return lop_error_input(err, cfg->path, fe->line, fe->section, fe->key,
                               "a part of a mixture cannot itself be a mixture: list every "
                               "part in [prior] parts");
    if (check_keys(cfg, pt, is_part, err) != LOP_OK)
        return err->status;
    if (pt->family->kind == KIND_CDF && read_params(cfg, g, pt, err) != LOP_OK)
        return err->status;
    if (pt->family->kind == KIND_TABLE && read_table(cfg, pt, err) != LOP_OK)
        return err->status;
    if (is_part) {
        const lop_entry *we = lop_config_find(cfg, section, "weight");
        if (!we)
            return lop_error_input(err, cfg->path, section_line(cfg, section), section,
                                   "weight", "missing: each part of a mixture needs a "
                                             "weight (>= 0; the weights are normalized)");
        if (lop_parse_number(cfg, we, false, &pt->weight, err) != LOP_OK)
            return err->status;
        if (pt->weight < 0)
            return lop_error_input(err, cfg->path, we->line, we->section, we->key,
                                   "must be >= 0, found %s", we->value);
    }
    return LOP_OK;
}

/* Returns the [prior.NAME] section record of part name, or NULL. */
static const lop_section *part_section(const lop_config *cfg, const char *name)
{
    for (size_t i = 0; i < cfg->n_sections; i++) {
        const char *s = cfg->sections[i].name;
        if (strncmp(s, "prior.", 6) == 0 && strcmp(s + 6, name) == 0)
            return &cfg->sections[i];
    }
    return NULL;
}

/* Every [prior.NAME] section must be a listed part of a mixture. */
static lop_status check_part_sections(const lop_config *cfg, const part *top,
                                      const lop_list *names, lop_error *err)
{
    const lop_entry *pe = lop_config_find(cfg, "prior", "parts");
    for (size_t i = 0; i < cfg->n_sections; i++) {
        const lop_section *s = &cfg->sections[i];
        if (strncmp(s->name, "prior.", 6) != 0)
            continue;
        if (top->family->kind != KIND_MIXTURE)
            return lop_error_input(err, cfg->path, s->line, s->name, NULL,
                                   "part sections belong to a mixture, but [prior] family "
                                   "is %s (line %d)",
                                   top->family->name, top->family_line);
        if (lop_list_index(names, s->name + 6) < 0)
            return lop_error_input(err, cfg->path, s->line, s->name, NULL,
                                   "not one of the parts listed in [prior] parts (line %d)",
                                   pe ? pe->line : 0);
    }
    return LOP_OK;
}

/* Reads the parts of a mixture into *parts (the caller frees them and names). */
static lop_status read_mixture(const lop_config *cfg, const grid *g, lop_list *names,
                               part **parts, lop_error *err)
{
    const lop_entry *pe = lop_config_find(cfg, "prior", "parts");
    if (!pe)
        return lop_error_input(err, cfg->path, section_line(cfg, "prior"), "prior", "parts",
                               "missing: the mixture family needs `parts =` the names of "
                               "its [prior.NAME] sections");
    if (lop_parse_labels(cfg, pe, names, err) != LOP_OK)
        return err->status;
    *parts = calloc(names->n, sizeof **parts);
    if (!*parts)
        return lop_error_run(err, "out of memory");
    for (size_t k = 0; k < names->n; k++)
        if (!part_section(cfg, names->items[k]))
            return lop_error_input(err, cfg->path, pe->line, pe->section, pe->key,
                                   "part `%s` has no [prior.%s] section", names->items[k],
                                   names->items[k]);
    double sum = 0;
    for (size_t k = 0; k < names->n; k++) {
        const lop_section *s = part_section(cfg, names->items[k]);
        if (read_part(cfg, s->name, true, g, &(*parts)[k], err) != LOP_OK)
            return err->status;
        sum += (*parts)[k].weight;
    }
    if (!(sum > 0) || !isfinite(sum))
        return lop_error_input(err, cfg->path, pe->line, pe->section, pe->key,
                               sum > 0 ? "the weights of the parts are too large to add"
                                       : "the weights of the parts sum to 0");
    for (size_t k = 0; k < names->n; k++)
        (*parts)[k].weight /= sum;
    return LOP_OK;
}

/* Returns true after writing both tails at x, each computed where it is the smaller one:
 * the tail below 1/2 comes from the library, the other as 1 minus it, so no small tail
 * is lost to cancellation. */
static bool tails(const part *pt, double x, double *p, double *q)
{
    const family_spec *f = pt->family;
    if (x <= f->support_lo) {
        *p = 0;
        *q = 1;
        return true;
    }
    if (x >= f->support_hi) {
        *p = 1;
        *q = 0;
        return true;
    }
    *p = f->lower(pt->par, x);
    if (*p > 0.5) {
        *q = f->upper(pt->par, x);
        *p = 1 - *q;
    } else {
        *q = 1 - *p;
    }
    return *p >= 0 && *p <= 1 && *q >= 0 && *q <= 1;
}

/* Returns log(e^a - e^b) for a >= b (-inf when they are equal). */
static double log_diff(double a, double b)
{
    return a == -INFINITY || b >= a ? -INFINITY : a + log1p(-exp(b - a));
}

/* Returns log(e^a + e^b). */
static double log_add(double a, double b)
{
    if (a < b) {
        double t = a;
        a = b;
        b = t;
    }
    return a == -INFINITY ? a : a + log1p(exp(b - a));
}

/* Returns the log of the mass of [a, b] given both tails at each end: P(b) - P(a) below
 * the median, Q(a) - Q(b) above it, 1 - P(a) - Q(b) across it, so a difference of two
 * small tails keeps its relative precision. Far out, where that difference underflows,
 * the log tails take over (log_diff), or, for a family without them, the log density at
 * the middle times the width (second-order accurate in the width). */
static double log_cell(const part *pt, double a, double b, double pa, double qa, double pb,
                       double qb)
{
    const family_spec *f = pt->family;
    double m = pb <= 0.5 ? pb - pa : qa <= 0.5 ? qa - qb : (1 - pa) - qb;
    if (m > TINY_MASS || !(b > a))
        return m > 0 ? log(m) : -INFINITY;
    double lo = fmax(a, f->support_lo), hi = fmin(b, f->support_hi);
    if (!(hi > lo))
        return -INFINITY;
    if (f->log_lower && pb <= 0.5)
        return log_diff(f->log_lower(pt->par, hi), f->log_lower(pt->par, lo));
    if (f->log_upper && qa <= 0.5)
        return log_diff(f->log_upper(pt->par, lo), f->log_upper(pt->par, hi));
    return f->log_density(pt->par, 0.5 * (lo + hi)) + log(hi - lo);
}

/* Adds (in logs) w times the interval masses of a family with a CDF to log_mass, and w
 * times its mass beyond the outer edges to *outside. */
static lop_status add_cdf(const lop_config *cfg, const part *pt, double w, const grid *g,
                          double *log_mass, double *outside, lop_error *err)
{
    double pa = 0, qa = 1, pb = 0, qb = 1, log_w = log(w);
    for (size_t i = 0; i < g->n; i++) {
        double x = g->x[i];
        if (!tails(pt, x, &pb, &qb))
            return lop_error_input(err, cfg->path, pt->family_line, pt->section, "family",
                                   "the %s distribution could not be evaluated at %.15g",
                                   pt->family->name, x);
        if (i == 0)
            *outside += w * pb;
        else
            log_mass[i - 1] = log_add(log_mass[i - 1],
                                      log_w + log_cell(pt, g->x[i - 1], x, pa, qa, pb, qb));
        pa = pb;
        qa = qb;
    }
    *outside += w * qb;
    return LOP_OK;
}

/* Returns the integral of the table's density over [lo, hi] (lo <= hi, both increasing
 * from call to call; *j is the first segment that may overlap): the sum over the
 * overlapping segments of the trapezoid of the linear density on the overlap. */
static double table_integral(const part *pt, double lo, double hi, size_t *j)
{
    const double *x = pt->at, *d = pt->density;
    while (*j + 2 < pt->m && x[*j + 1] <= lo)
        (*j)++;
    double sum = 0;
    for (size_t k = *j; k + 1 < pt->m && x[k] < hi; k++) {
        double l = fmax(lo, x[k]), u = fmin(hi, x[k + 1]);
        if (!(u > l))
            continue;
        double slope = (d[k + 1] - d[k]) / (x[k + 1] - x[k]);
        sum += trapezoid(l, u, d[k] + slope * (l - x[k]), d[k] + slope * (u - x[k]));
    }
    return sum;
}

/* Adds (in logs) w times the table's interval masses (its density normalized by its
 * area) to log_mass, and w times its mass beyond the outer edges to *outside. */
static void add_table(const part *pt, double w, const grid *g, double *log_mass,
                      double *outside)
{
    size_t j = 0;
    double lo = g->x[0], hi = g->x[g->n - 1];
    double beyond = lo > pt->at[0] ? table_integral(pt, pt->at[0], lo, &j) : 0;
    for (size_t i = 0; i + 1 < g->n; i++)
        log_mass[i] = log_add(log_mass[i],
                              log(w * table_integral(pt, g->x[i], g->x[i + 1], &j) / pt->total));
    if (hi < pt->at[pt->m - 1])
        beyond += table_integral(pt, hi, pt->at[pt->m - 1], &j);
    *outside += w * beyond / pt->total;
}

static lop_status add_part(const lop_config *cfg, const part *pt, double w, const grid *g,
                           double *log_mass, double *outside, lop_error *err)
{
    if (w == 0)
        return LOP_OK;
    if (pt->family->kind == KIND_TABLE) {
        add_table(pt, w, g, log_mass, outside);
        return LOP_OK;
    }
    return add_cdf(cfg, pt, w, g, log_mass, outside, err);
}

/* Returns LOP_OK after writing the log prior masses of the intervals of g (not
 * renormalized) and the mass beyond its outer edges. */
static lop_status log_masses(const lop_config *cfg, const grid *g, double *log_mass,
                             double *outside, lop_error *err)
{
    if (!lop_config_section(cfg, "prior"))
        return lop_error_input(err, cfg->path, 0, "prior", NULL,
                               "missing section: [prior] with a family for the states on "
                               "a grid");
    part top = {0};
    part *parts = NULL;
    lop_list names = {0};
    lop_status status = read_part(cfg, "prior", false, g, &top, err);
    if (status == LOP_OK && top.family->kind == KIND_MIXTURE)
        status = read_mixture(cfg, g, &names, &parts, err);
    if (status == LOP_OK)
        status = check_part_sections(cfg, &top, &names, err);
    if (status == LOP_OK) {
        for (size_t i = 0; i + 1 < g->n; i++)
            log_mass[i] = -INFINITY;
        *outside = 0;
        if (top.family->kind == KIND_MIXTURE) {
            /* mass = sum_k w_k mass_k with the weights normalized; likewise outside. */
            for (size_t k = 0; k < names.n && status == LOP_OK; k++)
                status = add_part(cfg, &parts[k], parts[k].weight, g, log_mass, outside, err);
        } else {
            status = add_part(cfg, &top, 1, g, log_mass, outside, err);
        }
    }
    if (parts)
        for (size_t k = 0; k < names.n; k++)
            part_free(&parts[k]);
    free(parts);
    lop_list_free(&names);
    part_free(&top);
    return status;
}

lop_status lop_prior_log_cells(const lop_config *cfg, const double *s, size_t n, double h,
                               double *log_mass, double *outside, lop_error *err)
{
    if (n < 2 || !(h > 0) || !isfinite(h))
        return lop_error_run(err, "a prior grid needs at least two points and a spacing > 0");
    double *x = malloc((n + 1) * sizeof *x);
    if (!x)
        return lop_error_run(err, "out of memory");
    /* Cell i is [s_i - h/2, s_i + h/2] clipped to the range [s_0, s_{n-1}]: the end
     * cells are halves, and the cells tile the range exactly. */
    x[0] = s[0];
    for (size_t i = 1; i < n; i++)
        x[i] = s[i] - h / 2;
    x[n] = s[n - 1];
    grid g = {x, n + 1, s[0], s[n - 1]};
    lop_status st = log_masses(cfg, &g, log_mass, outside, err);
    free(x);
    return st;
}

lop_status lop_prior_cells(const lop_config *cfg, const double *s, size_t n, double h,
                           double *mass, double *outside, lop_error *err)
{
    if (lop_prior_log_cells(cfg, s, n, h, mass, outside, err) != LOP_OK)
        return err->status;
    for (size_t i = 0; i < n; i++)
        mass[i] = exp(mass[i]);
    return LOP_OK;
}

lop_status lop_prior_log_interval(const lop_config *cfg, double lo, double hi,
                                  double range_lo, double range_hi, double *log_mass,
                                  lop_error *err)
{
    double x[2] = {lo, hi}, outside;
    grid g = {x, 2, range_lo, range_hi};
    return log_masses(cfg, &g, log_mass, &outside, err);
}

lop_status lop_prior_grid(const lop_config *cfg, const double *s, size_t n, double h,
                          double *log_mass, double *outside, lop_error *err)
{
    if (lop_prior_log_cells(cfg, s, n, h, log_mass, outside, err) != LOP_OK)
        return err->status;
    double top = -INFINITY;
    for (size_t i = 0; i < n; i++)
        top = fmax(top, log_mass[i]);
    double sum = 0;
    for (size_t i = 0; top > -INFINITY && i < n; i++)
        sum += exp(log_mass[i] - top);
    double log_inside = top + log(sum);
    /* The renormalized tail of a prior whose bulk lies elsewhere is a valid prior, but a
     * range holding less than a double's smallest number of its mass is a misplaced
     * grid or prior, not a question anyone asks. */
    if (!(log_inside > log(DBL_MIN))) {
        const lop_entry *fe = lop_config_find(cfg, "prior", "family");
        return lop_error_input(err, cfg->path, fe->line, fe->section, fe->key,
                               "the %s prior puts no mass on the grid's range %.10g to "
                               "%.10g (less than 1e-300 of it): move the grid or the prior",
                               fe->value, s[0], s[n - 1]);
    }
    for (size_t i = 0; i < n; i++)
        log_mass[i] -= log_inside;
    return LOP_OK;
}
