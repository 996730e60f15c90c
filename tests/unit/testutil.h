/* Helpers shared by the unit tests: tolerance checks and problems from text. */
#ifndef LOPSIDE_TESTUTIL_H
#define LOPSIDE_TESTUTIL_H

#include <check.h>
#include <math.h>
#include <string.h>

#include "lopside/input/config.h"
#include "lopside/model/problem.h"
#include "lopside/studies/run.h"

/* |got - want| <= tol·max(1, |want|): relative for large values, absolute near zero. */
#define ck_assert_close(got, want, tol)                                                    \
    do {                                                                                   \
        double got_ = (got), want_ = (want), tol_ = (tol);                                 \
        ck_assert_msg(fabs(got_ - want_) <= tol_ * fmax(1.0, fabs(want_)),                 \
                      "%s = %.17g, expected %.17g (tolerance %g)", #got, got_, want_, tol_); \
    } while (0)

/* Returns the problem built from text; fails the test (with the error) when invalid. */
lop_problem *test_problem(const char *text);

/* Returns the error status of building text, with the error in *err. */
lop_status test_problem_error(const char *text, lop_error *err);

/* Returns solved results of p; fails the test on error. */
lop_results *test_solve(const lop_problem *p);

/* Returns the config read from text (name test.ini); fails the test when it does not read. */
lop_config *test_config(const char *text);

/* Checks that err is an input error of test.ini at line, [section] key, whose message
 * holds fragment, formatted `test.ini:LINE: [section] ...`; fails the test otherwise. */
void test_check_error(const lop_error *err, int line, const char *section, const char *key,
                      const char *fragment);

/* Returns the yes/no detection problem (states noise, signal; actions say_no, say_yes):
 * P(signal) p_signal, one gaussian reading N(0, 1) or N(d', 1), loss = {no|noise,
 * no|signal, yes|noise, yes|signal}, extra lines appended to [evidence.ear]. */
lop_problem *test_detection(double p_signal, double dprime, const double loss[4],
                            const char *extra);

/* Returns the expected loss of saying yes at or above t in that problem (normal CDFs). */
double test_detection_expected_loss(double p_signal, double dprime, const double loss[4],
                                    double t);

/* Returns the threshold of least expected loss in that problem (closed form). */
double test_detection_best_threshold(double p_signal, double dprime, const double loss[4]);

Suite *suite_config(void);
Suite *suite_parse(void);
Suite *suite_posterior(void);
Suite *suite_decide(void);
Suite *suite_rule(void);
Suite *suite_outfile(void);
Suite *suite_strutil(void);
Suite *suite_curve(void);
Suite *suite_accuracy(void);
Suite *suite_prior(void);
Suite *suite_value(void);
Suite *suite_sweep(void);
Suite *suite_design(void);
Suite *suite_simulate(void);
Suite *suite_evidence(void);
Suite *suite_rates(void);
Suite *suite_flatness(void);
Suite *suite_keys(void);
Suite *suite_path(void);
Suite *suite_problem(void);
Suite *suite_response(void);

#endif
