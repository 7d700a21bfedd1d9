/* test_problem_limits.c — parameters that are each in range but together overflow
 * double precision are refused for every problem, through the library and the CLI; a
 * parameter's range as text, in messages and in `driftmark list`. */
#include "dm_test_util.h"

#include <math.h>
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

static void expect_unresolved(const char *problem, const char *key, double value,
                              const char *needle)
{
    dm_instance inst;
    dm_error err = { 0 };
    const char *keys[] = { key };
    const double values[] = { value };
    assert_int_equal(dm_instance_init(&inst, dm_problem_find(problem), 1, keys, values, &err),
                     DM_EINPUT);
    if (strstr(err.msg, needle) == NULL || strncmp(err.msg, problem, strlen(problem)) != 0) {
        print_error("%s = %g: message '%s' lacks '%s'\n", key, value, err.msg, needle);
        fail();
    }
}

/* Issue 12, item 10: each ran as `ok` with meaningless figures. */
static void states_a_run_cannot_resolve_are_refused(void **state)
{
    /* omega^2 = 1e-600 underflows to 0: H0 = V_min = 0 and the particle never moves */
    expect_unresolved("harmonic", "omega", 1e-300, "the energy scale H0 - V_min is 0");
    /* exp(-50) = 2e-22: E = D (1 - exp(-50))^2 rounds to D, the escape energy */
    expect_unresolved("morse", "amplitude", 50.0, "starting energy is 1, outside the bound");
    /* -1 + 1.1e-16: an energy scale of one ulp of V_min */
    expect_unresolved("pendulum", "energy", -0.9999999999999999, "1.11e-16 beside");
    /* the same problems a little inside the limit still set up */
    dm_instance inst;
    dm_error err;
    const char *k[] = { "omega" }, *a[] = { "amplitude" }, *e[] = { "energy" };
    assert_int_equal(dm_instance_init(&inst, dm_problem_find("harmonic"), 1, k,
                                      (const double[]){ 1e-150 }, &err), DM_OK);
    assert_int_equal(dm_instance_init(&inst, dm_problem_find("morse"), 1, a,
                                      (const double[]){ 20.0 }, &err), DM_OK);
    assert_int_equal(dm_instance_init(&inst, dm_problem_find("pendulum"), 1, e,
                                      (const double[]){ -0.9999999 }, &err), DM_OK);
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

static void range_text_shows_open_closed_and_infinite_bounds(void **state)
{
    char buf[96];
    const dm_param closed = { .name = "x", .min = -1.5, .max = 0.1 };
    dm_param_range_text(&closed, buf, sizeof buf);
    assert_string_equal(buf, "[-1.5, 0.1]");
    assert_false(dm_param_min_open(&closed));
    assert_false(dm_param_max_open(&closed));
    const dm_param half = { .name = "x", .min = 0.0, .max = 1.0, .flags = DM_PARAM_MAX_OPEN };
    dm_param_range_text(&half, buf, sizeof buf);
    assert_string_equal(buf, "[0, 1)");
    const dm_param open = { .name = "x", .min = 0.0, .max = INFINITY,
                            .flags = DM_PARAM_MIN_OPEN };
    dm_param_range_text(&open, buf, sizeof buf);
    assert_string_equal(buf, "(0, inf)");
    assert_true(dm_param_min_open(&open));
    assert_true(dm_param_max_open(&open)); /* an infinite bound is never reached */
    const dm_param any = { .name = "x", .min = -INFINITY, .max = INFINITY };
    dm_param_range_text(&any, buf, sizeof buf);
    assert_string_equal(buf, "(-inf, inf)");
}

/* The refusal and `list` show one range text: the pendulum's amplitude lies in
 * [-pi, pi], pi in its shortest round-trip form. */
static void refusal_and_list_show_the_same_range(void **state)
{
    const dm_problem *pb = dm_problem_find("pendulum");
    assert_non_null(pb);
    int i = dm_problem_param_index(pb, "amplitude");
    assert_true(i >= 0);
    char range[96];
    dm_param_range_text(&pb->params[i], range, sizeof range);
    assert_string_equal(range, "[-3.141592653589793, 3.141592653589793]");
    dm_instance inst;
    dm_error err = { 0 };
    const char *keys[] = { "amplitude" };
    const double values[] = { 4.0 };
    assert_int_equal(dm_instance_init(&inst, pb, 1, keys, values, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, range));
    char out[16384], errs[256];
    assert_int_equal(dm_run_capture(DM_EXE " list", out, sizeof out, errs, sizeof errs), 0);
    assert_non_null(strstr(out, range));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(overflowing_states_are_refused_by_the_library),
        cmocka_unit_test(overflowing_states_are_refused_by_the_cli),
        cmocka_unit_test(states_a_run_cannot_resolve_are_refused),
        cmocka_unit_test(range_text_shows_open_closed_and_infinite_bounds),
        cmocka_unit_test(refusal_and_list_show_the_same_range),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
