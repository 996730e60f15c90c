/* Helpers shared by the unit tests beyond those of main.c: configs from text, input
 * errors checked field by field, and the equal-variance detection problem with its
 * closed-form expected loss. */
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

void test_check_error(const lop_error *err, int line, const char *section, const char *key,
                      const char *fragment)
{
    char text[1024], want[256];
    lop_error_format(err, text, sizeof text);
    ck_assert_msg(err->status == LOP_EINPUT, "not an input error: %s", text);
    ck_assert_msg(strcmp(err->file, "test.ini") == 0, "file: %s", text);
    ck_assert_msg(err->line == line, "line %d expected: %s", line, text);
    ck_assert_msg(strcmp(err->section, section) == 0, "section [%s] expected: %s", section, text);
    ck_assert_msg(strcmp(err->key, key) == 0, "key `%s` expected: %s", key, text);
    ck_assert_msg(strstr(err->message, fragment) != NULL, "`%s` expected: %s", fragment, text);
    snprintf(want, sizeof want, "test.ini:%d: [%s] ", line, section);
    ck_assert_msg(strncmp(text, want, strlen(want)) == 0, "form `%s...` expected: %s", want, text);
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
