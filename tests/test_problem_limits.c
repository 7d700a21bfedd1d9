/* test_problem_limits.c — parameters that are each in range but together overflow
 * double precision are refused for every problem, through the library and the CLI. */
#include "dm_test_util.h"

#include <stdio.h>
#include <string.h>

#include "problem.h"

static void expect_refused(const char *problem, size_t n, const char *const *keys,
                           const double *values)
{
    dm_instance inst;
    dm_error err = { 0 };
    const dm_problem *pb = dm_problem_find(problem);
    assert_non_null(pb);
    assert_int_equal(dm_instance_init(&inst, pb, n, keys, values, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "beyond double precision"));
    assert_non_null(strstr(err.msg, problem));
}

static void overflowing_states_are_refused_by_the_library(void **state)
{
    const char *k1[] = { "omega" };
    const double v1[] = { 1e160 }; /* w^2 = 1e320 overflows: infinite energy */
    expect_refused("harmonic", 1, k1, v1);
    const char *k2[] = { "energy", "b" };
    const double v2[] = { 1e300, 1e300 };
    expect_refused("double_well", 2, k2, v2);
}

static void overflowing_states_are_refused_by_the_cli(void **state)
{
    char out[4096], err[4096];
    int rc = dm_run_capture(DM_EXE " period harmonic omega=1e160", out, sizeof out, err,
                            sizeof err);
    assert_int_equal(rc, 2);
    assert_string_equal(out, "");
    assert_non_null(strstr(err, "beyond double precision"));
    assert_int_equal((int)(strchr(err, '\n') - err + 1), (int)strlen(err)); /* one line */
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(overflowing_states_are_refused_by_the_library),
        cmocka_unit_test(overflowing_states_are_refused_by_the_cli),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
