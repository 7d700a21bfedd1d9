/* test_common.c — the shared helpers: number parsing and "did you mean". */
#include "dm_test_util.h"

#include <math.h>
#include <string.h>

#include "dm_error.h"

static void parse_double_accepts_plain_numbers(void **state)
{
    double v;
    assert_int_equal(dm_parse_double("2.5", &v), 0);
    assert_true(v == 2.5);
    assert_int_equal(dm_parse_double("-1e-3", &v), 0);
    assert_true(v == -1e-3);
}

static void parse_double_rejects_junk_nan_inf_and_overflow(void **state)
{
    double v;
    assert_int_not_equal(dm_parse_double("", &v), 0);
    assert_int_not_equal(dm_parse_double("2.5x", &v), 0);
    assert_int_not_equal(dm_parse_double("nan", &v), 0);
    assert_int_not_equal(dm_parse_double("inf", &v), 0);
    assert_int_not_equal(dm_parse_double("-Infinity", &v), 0);
    assert_int_not_equal(dm_parse_double("1e999", &v), 0);
    assert_int_not_equal(dm_parse_double(" ", &v), 0);
}

static void suggest_finds_close_misspellings_only(void **state)
{
    const char *names[] = { "verlet", "verlet-dkd", "yoshida4", "rk4" };
    assert_string_equal(dm_suggest("verlett", names, 4), "verlet");
    assert_string_equal(dm_suggest("yoshida5", names, 4), "yoshida4");
    assert_null(dm_suggest("pendulum", names, 4));
}

static void error_prefix_keeps_the_message(void **state)
{
    dm_error e;
    dm_error_set(&e, DM_EINPUT, "unknown method '%s'", "verlett");
    dm_error_prefix(&e, "%s:%d:%d: ", "suite.yaml", 12, 9);
    assert_string_equal(e.msg, "suite.yaml:12:9: unknown method 'verlett'");
    assert_int_equal(e.code, DM_EINPUT);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(parse_double_accepts_plain_numbers),
        cmocka_unit_test(parse_double_rejects_junk_nan_inf_and_overflow),
        cmocka_unit_test(suggest_finds_close_misspellings_only),
        cmocka_unit_test(error_prefix_keeps_the_message),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
