/* Helpers shared by the unit tests beyond those of main.c: configs from text and the
 * equal-variance detection problem with its closed-form expected loss. */
#include <stdio.h>

#include <gsl/gsl_cdf.h>

#include "testutil.h"

lop_config *test_config(const char *text)
{
    lop_error err = {0};
    lop_config *cfg = lop_config_read_text("test.ini", text, strlen(text), &err);
    ck_assert_msg(cfg != NULL, "config did not read: %s", err.message);
    return cfg;
}

lop_problem *test_detection(double p_signal, double dprime, const double loss[4],
                            const char *extra)
{
    char text[1024];
    snprintf(text, sizeof text,
             "[problem]\ntitle = detection\n[states]\nlabels = noise, signal\n"
             "[prior]\nweights = %.17g, %.17g\n"
             "[evidence.ear]\nnoise = gaussian\nmean = 0, %.17g\nsd = 1\n%s"
             "[actions]\nlabels = say_no, say_yes\n"
             "[loss]\nsay_no = %.17g, %.17g\nsay_yes = %.17g, %.17g\n",
             1 - p_signal, p_signal, dprime, extra, loss[0], loss[1], loss[2], loss[3]);
    return test_problem(text);
}

/* P(n)[L(no|n) Phi(t) + L(yes|n) Q(t)] + P(s)[L(no|s) Phi(t - d') + L(yes|s) Q(t - d')]. */
double test_detection_expected_loss(double p_signal, double dprime, const double loss[4],
                                    double t)
{
    return (1 - p_signal) *
               (loss[0] * gsl_cdf_ugaussian_P(t) + loss[2] * gsl_cdf_ugaussian_Q(t)) +
           p_signal * (loss[1] * gsl_cdf_ugaussian_P(t - dprime) +
                       loss[3] * gsl_cdf_ugaussian_Q(t - dprime));
}

/* Green & Swets (1966), from memory: the criterion of least expected loss is
 * x = d'/2 + ln(beta)/d', beta = (P(n)/P(s)) (L(yes|n) - L(no|n)) / (L(no|s) - L(yes|s)). */
double test_detection_best_threshold(double p_signal, double dprime, const double loss[4])
{
    double beta = ((1 - p_signal) / p_signal) * (loss[2] - loss[0]) / (loss[1] - loss[3]);
    return dprime / 2 + log(beta) / dprime;
}
