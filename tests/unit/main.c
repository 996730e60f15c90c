/* The unit-test runner: every module's suite, then the closing count line. */
#include <stdio.h>
#include <stdlib.h>

#include "testutil.h"

lop_problem *test_problem(const char *text)
{
    lop_error err = {0};
    lop_config *cfg = lop_config_read_text("test.ini", text, strlen(text), &err);
    lop_problem *p = cfg ? lop_problem_build(cfg, &err) : NULL;
    lop_config_free(cfg);
    if (!p) {
        char line[1024];
        lop_error_format(&err, line, sizeof line);
        ck_abort_msg("problem did not build: %s", line);
    }
    return p;
}

lop_status test_problem_error(const char *text, lop_error *err)
{
    memset(err, 0, sizeof *err);
    lop_config *cfg = lop_config_read_text("test.ini", text, strlen(text), err);
    lop_problem *p = cfg ? lop_problem_build(cfg, err) : NULL;
    lop_problem_free(p);
    lop_config_free(cfg);
    return err->status;
}

lop_results *test_solve(const lop_problem *p)
{
    lop_error err = {0};
    lop_results *r = lop_run_solve(p, NULL, &err);
    ck_assert_msg(r != NULL, "solve failed: %s", err.message);
    return r;
}

int main(void)
{
    SRunner *runner = srunner_create(suite_config());
    srunner_add_suite(runner, suite_parse());
    srunner_add_suite(runner, suite_strutil());
    srunner_add_suite(runner, suite_posterior());
    srunner_add_suite(runner, suite_decide());
    srunner_add_suite(runner, suite_rule());
    srunner_add_suite(runner, suite_outfile());
    srunner_add_suite(runner, suite_curve());
    srunner_add_suite(runner, suite_accuracy());
    srunner_add_suite(runner, suite_prior());
    srunner_add_suite(runner, suite_value());
    srunner_add_suite(runner, suite_sweep());
    srunner_add_suite(runner, suite_design());
    srunner_add_suite(runner, suite_simulate());
    srunner_add_suite(runner, suite_evidence());
    srunner_add_suite(runner, suite_rates());
    srunner_add_suite(runner, suite_flatness());
    srunner_add_suite(runner, suite_keys());
    srunner_add_suite(runner, suite_path());
    srunner_add_suite(runner, suite_problem());
    srunner_add_suite(runner, suite_response());
    srunner_run_all(runner, CK_NORMAL);
    int run = srunner_ntests_run(runner);
    int failed = srunner_ntests_failed(runner);
    srunner_free(runner);
    printf("%d passed, %d failed\n", run - failed, failed);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
