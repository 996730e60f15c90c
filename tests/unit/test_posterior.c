#include "lopside/model/posterior.h"
#include "testutil.h"

START_TEST(log_sum_exp_survives_huge_log_weights)
{
    /* exp(-2000) underflows; the normalized ratio is e^-1 : 1 all the same. */
    double logw[2] = {-2000.0, -2001.0}, p[2];
    double norm = lop_posterior_normalize(logw, 2, p);
    ck_assert_close(p[0], 1 / (1 + exp(-1.0)), 1e-15);
    ck_assert_close(p[1], exp(-1.0) / (1 + exp(-1.0)), 1e-15);
    ck_assert_close(norm, -2000.0 + log1p(exp(-1.0)), 1e-15);
}
END_TEST

START_TEST(zero_weights_stay_zero)
{
    double logw[3] = {-INFINITY, 0.0, -INFINITY}, p[3];
    lop_posterior_normalize(logw, 3, p);
    ck_assert_double_eq(p[0], 0);
    ck_assert_double_eq(p[1], 1);
    double none[2] = {-INFINITY, -INFINITY};
    ck_assert(isinf(lop_posterior_normalize(none, 2, p)));
}
END_TEST

Suite *suite_posterior(void)
{
    Suite *s = suite_create("posterior");
    TCase *tc = tcase_create("posterior");
    tcase_add_test(tc, log_sum_exp_survives_huge_log_weights);
    tcase_add_test(tc, zero_weights_stay_zero);
    suite_add_tcase(s, tc);
    return s;
}
