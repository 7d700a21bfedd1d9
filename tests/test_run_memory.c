/* test_run_memory.c — a suite whose runs' series would not fit the memory limit is
 * refused before anything runs (one line naming where, exit 2 from the command), the
 * limit can be raised, and running out of memory during a suite ends in exit 1 with
 * the runs done written, never a crash. */
#include "dm_test_util.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "harness.h"

/* What a finished run really holds, counted from its arrays. */
static double held_bytes(const dm_run_result *r)
{
    size_t arrays = 4 + (r->series.global_error != NULL);
    for (int k = 0; k < DM_MAX_INVARIANTS; k++)
        arrays += r->series.invariant_error[k] != NULL;
    size_t crossing_arrays = 3 + 2 * (r->crossings.section_q != NULL);
    return (double)(sizeof *r + sizeof(double) * (arrays * r->series.capacity +
                                                  crossing_arrays * r->crossings.capacity));
}

static const char *suite_of(const char *problem, const char *samples, const char *limit)
{
    static char text[512];
    snprintf(text, sizeof text,
             "name: memory\nhorizon: {periods: 2}\nsamples: %s\n%s"
             "problems:\n  - {problem: %s}\nmethods:\n  - {method: verlet, steps_per_period: 16}\n",
             samples, limit, problem);
    return text;
}

static void the_estimate_is_what_a_run_holds(void **state)
{
    (void)state;
    const char *problems[] = { "harmonic", "kepler", "pendulum" };
    const char *samples[] = { "10", "5000" };
    for (int p = 0; p < 3; p++)
        for (int s = 0; s < 2; s++) {
            dm_suite suite;
            dm_error err = { 0 };
            const char *text = suite_of(problems[p], samples[s], "");
            assert_int_equal(dm_suite_parse(&suite, text, strlen(text), "m.yaml", "/tmp/m.h5",
                                             &err), DM_OK);
            dm_run_result r;
            assert_int_equal(dm_run(&suite.runs[0], &r, NULL, &err), DM_OK);
            assert_true(dm_run_memory_bytes(&suite.runs[0]) == held_bytes(&r));
            dm_run_result_free(&r);
            dm_suite_free(&suite);
        }
}

static void a_suite_above_the_limit_is_refused(void **state)
{
    (void)state;
    dm_suite suite;
    dm_error err = { 0 };
    /* Kepler: 4 series, the exact solution's, 3 invariants' and 5 crossing arrays (with
     * the surface of section) of 10^7 doubles, 0.97 GiB: above a limit of 0.5, below the
     * default */
    const char *text = suite_of("kepler", "10000000", "memory_limit_gib: 0.5\n");
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), "m.yaml", "/tmp/m.h5", &err),
                     DM_EINPUT);
    assert_non_null(strstr(err.msg, "m.yaml:4:"));
    assert_non_null(strstr(err.msg, "memory_limit_gib = 0.5"));
    assert_null(strchr(err.msg, '\n'));
    text = suite_of("kepler", "10000000", "");
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), "m.yaml", "/tmp/m.h5", &err),
                     DM_OK);
    dm_suite_free(&suite);
    text = suite_of("kepler", "10000000", "memory_limit_gib: -1\n");
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), "m.yaml", "/tmp/m.h5", &err),
                     DM_EINPUT);
}

static void out_of_memory_keeps_the_runs_done(void **state)
{
    (void)state;
#if defined(__SANITIZE_ADDRESS__) || defined(__has_feature)
#if defined(__SANITIZE_ADDRESS__)
#define DM_UNDER_ASAN 1
#elif __has_feature(address_sanitizer)
#define DM_UNDER_ASAN 1
#endif
#endif
#ifdef DM_UNDER_ASAN
    /* AddressSanitizer reserves terabytes of address space for its shadow memory, so an
     * address-space limit (ulimit -v) stops the program before it starts: this case is
     * for the plain build (the README's test command runs it). */
    skip();
#endif
    char dir[] = "/tmp/dm-memory-XXXXXX";
    assert_non_null(mkdtemp(dir));
    char path[128], cmd[1024], out[8192], err[2048];
    snprintf(path, sizeof path, "%s/s.yaml", dir);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    /* Each run's series are freed once written, so memory does not add up over runs:
     * two harmonic runs of 0.64 GB each (5 series and 3 crossing arrays of 10^7
     * doubles) fit one after the other under a 0.83 GiB address-space limit, then the
     * Kepler run (11 arrays, 0.88 GB) does not: calloc fails, and the harmonic runs
     * (first: equal cost, suite order) are in the file. */
    fprintf(f, "name: oom\noutput: %s/r.h5\nhorizon: {periods: 10}\nsamples: 10000000\n"
               "problems:\n  - {problem: harmonic, omega: [1, 2]}\n  - {problem: kepler}\n"
               "methods:\n  - {method: verlet, steps_per_period: 16}\n", dir);
    fclose(f);
    snprintf(cmd, sizeof cmd, "ulimit -v 870000; '%s' run '%s' -j 1", DM_EXE, path);
    int status = dm_run_capture(cmd, out, sizeof out, err, sizeof err);
    assert_int_equal(status, 1);
    assert_non_null(strstr(err, "out of memory"));
    assert_non_null(strstr(out, "(2 of 3 runs"));
    snprintf(path, sizeof path, "%s/r.h5", dir);
    assert_int_equal(access(path, R_OK), 0);
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    assert_int_equal(system(cmd), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(the_estimate_is_what_a_run_holds),
        cmocka_unit_test(a_suite_above_the_limit_is_refused),
        cmocka_unit_test(out_of_memory_keeps_the_runs_done),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
