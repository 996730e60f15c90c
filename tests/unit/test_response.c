/* Response functions r(s) against their closed forms at points where the value is known
 * exactly (or nearly), and the errors of their keys with file:line. */
#include <stdio.h>

#include "lopside/model/response.h"
#include "testutil.h"

/* Closed forms evaluated a different way: rounding only. */
#define R_TOL 1e-14

/* Reads the response of [evidence] with the given keys; returns the status. */
static lop_status read_response(const char *keys, lop_response *r, lop_error *err)
{
    char text[512];
    snprintf(text, sizeof text, "[evidence]\nnoise = gaussian\n%s", keys);
    lop_config *cfg = test_config(text);
    memset(err, 0, sizeof *err);
    lop_status st = lop_response_read(cfg, "evidence", r, err);
    lop_config_free(cfg);
    return st;
}

/* Returns the response of keys; fails the test when it does not read. */
static lop_response response_of(const char *keys)
{
    lop_response r;
    lop_error err;
    ck_assert_msg(read_response(keys, &r, &err) == LOP_OK, "%s", err.message);
    return r;
}

/* Checks that keys read as a response of the given kind with r(s) = want at each of the
 * n points {s, want}. */
static void check_points(const char *keys, lop_response_kind kind, const double (*points)[2],
                         size_t n)
{
    lop_response r = response_of(keys);
    ck_assert_int_eq(r.kind, kind);
    for (size_t i = 0; i < n; i++)
        ck_assert_msg(fabs(lop_response_eval(&r, points[i][0]) - points[i][1]) <=
                          R_TOL * fmax(1, fabs(points[i][1])),
                      "%s: r(%g) = %.17g, expected %.17g", keys, points[i][0],
                      lop_response_eval(&r, points[i][0]), points[i][1]);
    lop_response_clear(&r);
}

#define CHECK_POINTS(keys, kind, points) \
    check_points(keys, kind, points, sizeof points / sizeof *points)

START_TEST(identity_when_no_response_is_given)
{
    static const double points[][2] = {{-3, -3}, {0, 0}, {2.5, 2.5}, {1e6, 1e6}};
    CHECK_POINTS("", LOP_RESPONSE_IDENTITY, points);
    CHECK_POINTS("response = identity\n", LOP_RESPONSE_IDENTITY, points);
}
END_TEST

START_TEST(linear_is_offset_plus_slope_times_s)
{
    static const double points[][2] = {{0, 2}, {4, 0}, {-3, 3.5}, {1, 1.5}};
    CHECK_POINTS("response = linear\noffset = 2\nslope = -0.5\n", LOP_RESPONSE_LINEAR, points);
}
END_TEST

/* A power law (Stevens's psychophysical law, common practice): offset + gain s^n; with
 * n = 1/2 the square root, with n = 2 the square. */
START_TEST(power_is_offset_plus_gain_times_s_to_the_exponent)
{
    static const double root[][2] = {{4, 7}, {2.25, 5.5}, {0, 1}, {100, 31}};
    CHECK_POINTS("response = power\noffset = 1\ngain = 3\nexponent = 0.5\n", LOP_RESPONSE_POWER,
                 root);
    static const double square[][2] = {{3, 4.5}, {-2, 2}, {0.1, 0.005}};
    CHECK_POINTS("response = power\noffset = 0\ngain = 0.5\nexponent = 2\n", LOP_RESPONSE_POWER,
                 square);
}
END_TEST

/* Naka-Rushton (hyperbolic ratio): base + top s^n / (s^n + half^n). At s = half it is
 * base + top/2 whatever n (the semi-saturation constant; Naka & Rushton 1966, from
 * memory); at 0 the base; with n = 2, half = 3: at 6, 36/45 of top; at 1, 1/10 of it;
 * far above half nearly base + top (3e4: top/(1 + 1e-8)). */
START_TEST(saturating_is_the_naka_rushton_function)
{
    static const double squared[][2] = {
        {0, 0.1}, {3, 1.1}, {6, 0.1 + 2 * 36.0 / 45.0}, {1, 0.1 + 0.2}, {3e4, 0.1 + 2 / (1 + 1e-8)},
    };
    CHECK_POINTS("response = saturating\nbase = 0.1\ntop = 2\nhalf = 3\nexponent = 2\n",
                 LOP_RESPONSE_SATURATING, squared);
    static const double shallow[][2] = {{0.2, 0.5}, {0, 0}};
    CHECK_POINTS("response = saturating\nbase = 0\ntop = 1\nhalf = 0.2\nexponent = 0.7\n",
                 LOP_RESPONSE_SATURATING, shallow);
}
END_TEST

/* low + (high - low) / (1 + exp(-(s - mid)/width)): the midpoint of low and high at mid,
 * three quarters of the way at mid + width·ln 3 (1/(1 + 1/3)), a quarter at mid - width·ln 3,
 * and r(mid + d) + r(mid - d) = low + high. */
START_TEST(logistic_meets_its_closed_form_points)
{
    const double points[][2] = {{10, 3}, {10 + 2 * log(3.0), 4}, {10 - 2 * log(3.0), 2}};
    CHECK_POINTS("response = logistic\nlow = 1\nhigh = 5\nmid = 10\nwidth = 2\n",
                 LOP_RESPONSE_LOGISTIC, points);
    lop_response r = response_of("response = logistic\nlow = 1\nhigh = 5\nmid = 10\nwidth = 2\n");
    for (double d = 0.5; d < 30; d *= 2)
        ck_assert_close(lop_response_eval(&r, 10 + d) + lop_response_eval(&r, 10 - d), 6, R_TOL);
    lop_response_clear(&r);
}
END_TEST

/* A table is linear between its points and flat beyond the first and last. */
START_TEST(table_interpolates_linearly_and_is_flat_outside)
{
    static const char keys[] = "response = table\nat = 0, 1, 3\nvalue = 0, 2, 10\n";
    static const double points[][2] = {{0.5, 1}, {1, 2}, {2, 6}, {2.5, 8}, {-1, 0}, {5, 10}};
    CHECK_POINTS(keys, LOP_RESPONSE_TABLE, points);
    /* Clearing frees the table and leaves the identity. */
    lop_response r = response_of(keys);
    ck_assert_uint_eq(r.n_points, 3);
    lop_response_clear(&r);
    ck_assert_int_eq(r.kind, LOP_RESPONSE_IDENTITY);
    ck_assert_ptr_null(r.at);
    ck_assert_double_eq(lop_response_eval(&r, 5), 5);
}
END_TEST

/* Bad response keys: the error names test.ini, the line to change, the key and why.
 * Lines: 1 [evidence], 2 noise, 3 onwards the keys given. */
START_TEST(bad_responses_are_errors_at_their_lines)
{
    static const struct {
        const char *keys, *key, *message;
        int line;
    } cases[] = {
        {"response = linaer\n", "response", "did you mean `linear`", 3},
        {"response = zigzag\n", "response", "known: identity, linear", 3},
        {"response = power\noffset = 1\ngain = 2\nslope = 1\nexponent = 1\n", "slope",
         "does not belong to response `power`", 6},
        {"slope = 2\n", "slope", "does not belong to response `identity`", 3},
        {"response = power\noffset = 1\ngain = 2\n", "exponent", "missing", 3},
        {"response = saturating\nbase = 0\ntop = 1\nhalf = 0\nexponent = 1\n", "half",
         "must be > 0", 6},
        {"response = logistic\nlow = 0\nhigh = 1\nmid = 0\nwidth = -1\n", "width",
         "must be > 0", 7},
        {"response = linear\noffset = 1x\nslope = 1\n", "offset", "", 4},
        {"response = table\nat = 0, 2, 1\nvalue = 1, 2, 3\n", "at", "must increase", 4},
        {"response = table\nat = 0, 1\nvalue = 1, 2, 3\n", "value", "one value per", 5},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        lop_response r;
        lop_error err;
        ck_assert_int_eq(read_response(cases[i].keys, &r, &err), LOP_EINPUT);
        lop_response_clear(&r);
        test_check_error(&err, cases[i].line, "evidence", cases[i].key, cases[i].message);
    }
}
END_TEST

START_TEST(response_keys_are_known)
{
    static const char *const keys[] = {"offset", "slope", "gain", "exponent", "base",
                                       "top", "half", "low", "high", "mid", "width", "at",
                                       "value"};
    for (size_t i = 0; i < sizeof keys / sizeof *keys; i++)
        ck_assert_msg(lop_response_is_key(keys[i]), "%s", keys[i]);
    ck_assert(!lop_response_is_key("response"));
    ck_assert(!lop_response_is_key("sd"));
    ck_assert(!lop_response_is_key("mean"));
    ck_assert(!lop_response_is_key("Slope"));
}
END_TEST

Suite *suite_response(void)
{
    Suite *s = suite_create("response");
    TCase *tc = tcase_create("response");
    tcase_add_test(tc, identity_when_no_response_is_given);
    tcase_add_test(tc, linear_is_offset_plus_slope_times_s);
    tcase_add_test(tc, power_is_offset_plus_gain_times_s_to_the_exponent);
    tcase_add_test(tc, saturating_is_the_naka_rushton_function);
    tcase_add_test(tc, logistic_meets_its_closed_form_points);
    tcase_add_test(tc, table_interpolates_linearly_and_is_flat_outside);
    tcase_add_test(tc, bad_responses_are_errors_at_their_lines);
    tcase_add_test(tc, response_keys_are_known);
    suite_add_tcase(s, tc);
    return s;
}
