#include <math.h>

#include <gsl/gsl_sf_gamma.h>

#include "lopside/evidence.h"

#define LOG_SQRT_2PI 0.91893853320467274178

double lop_evidence_log_outcome(const lop_channel *c, size_t s, size_t outcome)
{
    return log(c->given[s * c->n_outcomes + outcome]);
}

double lop_evidence_sd_of_mean(const lop_channel *c, size_t s)
{
    return c->sd[s] / sqrt((double)c->repeats);
}

double lop_evidence_log_mean(const lop_channel *c, size_t s, double x, size_t n)
{
    double sd = c->sd[s] / sqrt((double)n);
    double z = (x - c->mean[s]) / sd;
    return -0.5 * z * z - log(sd) - LOG_SQRT_2PI;
}

/* log n! - sum log k_i! + sum k_i log p_i, with 0·log 0 = 0 (multinomial pmf). */
double lop_evidence_log_counts(const lop_channel *c, size_t s, const size_t *counts)
{
    double ll = gsl_sf_lnfact((unsigned)c->repeats);
    for (size_t o = 0; o < c->n_outcomes; o++) {
        if (counts[o] == 0)
            continue;
        ll += (double)counts[o] * lop_evidence_log_outcome(c, s, o) -
              gsl_sf_lnfact((unsigned)counts[o]);
    }
    return ll;
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
                        ll[s] += (double)k * lop_evidence_log_outcome(c, s, o);
                }
            } else {
                for (size_t r = 0; r < c->n_observed; r++)
                    ll[s] += lop_evidence_log_mean(c, s, c->observed_value[r], 1);
            }
        }
    }
}
