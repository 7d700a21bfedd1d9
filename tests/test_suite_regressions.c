/* test_suite_regressions.c — inputs the fuzzer (tests/fuzz_suite.c) or the fault tests
 * found to break the suite reader, each fed back exactly as found or reduced to its
 * core. The raw fuzzer inputs are also in tests/fuzz_corpus/regression-*.yaml, so every
 * fuzzing run starts from them.
 *
 * Some of these fail only in the sanitizer build (CI builds every test with
 * -fsanitize=address,undefined -fno-sanitize-recover=all): an undefined conversion
 * gives no wrong answer in a release build, but UBSan aborts on it. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"

#define SRC "r.yaml"
#define OUT "/tmp/dm-test-suite-regressions.h5"

static char *read_corpus(const char *name, size_t *length)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/tests/fuzz_corpus/%s", DM_SOURCE_DIR, name);
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        print_error("cannot open %s\n", path);
        fail();
    }
    static char buf[65536];
    *length = fread(buf, 1, sizeof buf, f);
    fclose(f);
    return buf;
}

/* Refused with DM_EINPUT in one line starting "r.yaml:LINE:COLUMN: " and containing
 * `needle`, leaving the suite empty. */
static void expect_refused(const char *text, size_t length, const char *where,
                           const char *needle)
{
    dm_suite suite;
    dm_error err;
    dm_status st = dm_suite_parse(&suite, text, length, SRC, OUT, &err);
    bool ok = st == DM_EINPUT && strncmp(err.msg, where, strlen(where)) == 0 &&
              strstr(err.msg, needle) != NULL && strchr(err.msg, '\n') == NULL &&
              strchr(err.msg, '\r') == NULL && suite.runs == NULL && suite.text == NULL;
    if (!ok) {
        print_error("status %d, message:\n  %s\nexpected prefix '%s' and '%s'\n", (int)st,
                    st == DM_OK ? "(accepted)" : err.msg, where, needle);
        if (st == DM_OK)
            dm_suite_free(&suite);
        fail();
    }
}

/* Fuzzer finding: `samples: -3` converted -3.0 to size_t before the range check's
 * verdict was looked at (undefined behaviour; UBSan aborted in suite.c). */
static void negative_samples_are_refused_without_converting_them(void **state)
{
    size_t n;
    const char *text = read_corpus("regression-negative-samples.yaml", &n);
    expect_refused(text, n, SRC ":2:10: ", "samples = -3 is out of range");
    const char *reduced = "samples: -3\nhorizon: {periods: 1}\n"
                          "problems: [{problem: harmonic}]\nmethods: [{method: verlet, h: 0.1}]\n";
    expect_refused(reduced, strlen(reduced), SRC ":1:10: ",
                   "samples = -3 is out of range (expected a whole number in [1, 10000000])");
    const char *huge = "samples: -1e300\nhorizon: {periods: 1}\n"
                       "problems: [{problem: harmonic}]\nmethods: [{method: verlet, h: 0.1}]\n";
    expect_refused(huge, strlen(huge), SRC ":1:10: ", "samples = -1e300 is out of range");
}

/* Fuzzer finding: a scalar holding a line break (here a folded multi-line plain scalar
 * inside a flow mapping) was quoted verbatim in the error, which then ran over two
 * lines. Control characters are now written as escapes. */
static void control_characters_in_quoted_input_keep_the_error_on_one_line(void **state)
{
    size_t n;
    const char *text = read_corpus("regression-newline-in-message.yaml", &n);
    dm_suite suite;
    dm_error err;
    assert_int_equal(dm_suite_parse(&suite, text, n, SRC, OUT, &err), DM_EINPUT);
    assert_null(strchr(err.msg, '\n'));
    assert_true(strncmp(err.msg, SRC ":4:", strlen(SRC ":4:")) == 0);

    const char *quoted = "horizon: {periods: 1}\nproblems: [{problem: \"harm\\nonic\\t\\x01\"}]\n"
                         "methods: [{method: verlet, h: 0.1}]\n";
    expect_refused(quoted, strlen(quoted), SRC ":2:22: ",
                   "unknown problem 'harm\\nonic\\t\\x01' (did you mean 'harmonic'?)");
    const char *block = "horizon: {periods: 1}\nproblems:\n  - problem: |\n      harmonic\n"
                        "      oscillator\nmethods: [{method: verlet, h: 0.1}]\n";
    expect_refused(block, strlen(block), SRC ":3:14: ",
                   "unknown problem 'harmonic\\noscillator\\n'");
}

/* Found while writing the fault tests: a NUL written as "\0" inside a quoted scalar cut
 * the text short, so "harmonic\0x" ran the harmonic oscillator. */
static void a_nul_inside_a_quoted_scalar_is_refused_not_cut_short(void **state)
{
    const char *text = "horizon: {periods: 1}\nproblems: [{problem: \"harmonic\\0x\"}]\n"
                       "methods: [{method: verlet, h: 0.1}]\n";
    expect_refused(text, strlen(text), SRC ":2:22: ", "is cut by a NUL character");
    const char *key = "horizon: {periods: 1}\nproblems: [{problem: harmonic}]\n"
                      "methods: [{method: verlet, \"h\\0junk\": 0.1}]\n";
    expect_refused(key, strlen(key), SRC ":3:28: ", "text 'h' is cut by a NUL character");
}

/* Found while writing the fault tests: the suite's energy_limit went into each run's
 * configuration text and hash but never into the run itself, so the runner always
 * used its default of 1. */
static void the_suites_energy_limit_reaches_every_run(void **state)
{
    const char *text = "energy_limit: 2.5e-3\nhorizon: {periods: 1}\n"
                       "problems: [{problem: harmonic}, {problem: kepler}]\n"
                       "methods: [{method: verlet, h: [0.1, 0.05]}]\n";
    dm_suite suite;
    dm_error err;
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, OUT, &err), DM_OK);
    assert_int_equal(suite.n_runs, 4);
    for (size_t i = 0; i < suite.n_runs; i++) {
        assert_true(suite.runs[i].energy_limit == 2.5e-3);
        assert_non_null(strstr(suite.runs[i].config, "energy_limit=0.0025000000000000001"));
    }
    dm_suite_free(&suite);
    const char *plain = "horizon: {periods: 1}\nproblems: [{problem: harmonic}]\n"
                        "methods: [{method: verlet, h: 0.1}]\n";
    assert_int_equal(dm_suite_parse(&suite, plain, strlen(plain), SRC, OUT, &err), DM_OK);
    assert_true(suite.runs[0].energy_limit == 1.0); /* the documented default */
    dm_suite_free(&suite);
}

/* Found while writing the fault tests: parameters each inside their range whose
 * combination overflows gave a starting state with infinite energy (omega = 1e160:
 * V(q0) = omega^2 / 2 = inf) or an infinite starting position and a NaN period (a
 * double well with b = energy = 1e300); such runs were accepted and started from
 * infinities. */
static void parameters_whose_starting_state_overflows_are_refused(void **state)
{
    const char *omega = "horizon: {periods: 1}\nproblems:\n  - {problem: harmonic, omega: 1e160}\n"
                        "methods: [{method: cvode-adams, rtol: 1.0e-8}]\n";
    expect_refused(omega, strlen(omega), SRC ":3:5: ", "beyond double precision");
    const char *well = "horizon: {periods: 1}\nproblems:\n"
                       "  - {problem: double_well, energy: 1e300, b: 1e300}\n"
                       "methods: [{method: verlet, steps_per_period: 10}]\n";
    expect_refused(well, strlen(well), SRC ":3:5: ", "beyond double precision");
    /* the same problems with ordinary values still pass */
    const char *fine = "horizon: {periods: 1}\nproblems:\n  - {problem: harmonic, omega: 1e10}\n"
                       "  - {problem: double_well, energy: 3, b: 2}\n"
                       "methods: [{method: verlet, steps_per_period: 10}]\n";
    dm_suite suite;
    dm_error err;
    if (dm_suite_parse(&suite, fine, strlen(fine), SRC, OUT, &err) != DM_OK) {
        print_error("unexpected error: %s\n", err.msg);
        fail();
    }
    assert_int_equal(suite.n_runs, 2);
    dm_suite_free(&suite);
}

/* Fuzzer finding (a timeout): a suite expanding to 8748 runs took 4 s to validate
 * under the sanitizers, most of it comparing every new run id with every earlier one
 * as text. Ids are now compared by hash first; this checks the result is unchanged:
 * every run made, and a twin of the very first run, written last, still refused. */
static void a_large_suite_expands_fully_and_twins_are_still_found(void **state)
{
    size_t n;
    const char *text = read_corpus("regression-slow-expansion.yaml", &n);
    dm_suite suite;
    dm_error err;
    assert_int_equal(dm_suite_parse(&suite, text, n, SRC, OUT, &err), DM_OK);
    assert_int_equal(suite.n_runs, 9 * 9 * 10 * 2 * 6); /* D x alpha x mass x energy x n */
    assert_string_equal(suite.runs[0].id, "morse-D1-alpha1-mass1-energy0.1.verlet-n10");
    dm_suite_free(&suite);

    /* D = 1 again in place of the last D: D turns slowest, so the twin of run 0 is
     * run 8748, the first of the last block */
    char twin[2048];
    const char *d_list = "D: [1,2,3,4,526,7,8,9,10]";
    const char *at = strstr(text, d_list);
    assert_non_null(at);
    snprintf(twin, sizeof twin, "%.*sD: [1,2,3,4,526,7,8,9,1]%.*s", (int)(at - text), text,
             (int)(n - (size_t)(at - text) - strlen(d_list)), at + strlen(d_list));
    expect_refused(twin, strlen(twin), SRC ":6:41: ",
                   "run morse-D1-alpha1-mass1-energy0.1.verlet-n10 is given twice (first at "
                   "line 6");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(negative_samples_are_refused_without_converting_them),
        cmocka_unit_test(control_characters_in_quoted_input_keep_the_error_on_one_line),
        cmocka_unit_test(a_nul_inside_a_quoted_scalar_is_refused_not_cut_short),
        cmocka_unit_test(the_suites_energy_limit_reaches_every_run),
        cmocka_unit_test(parameters_whose_starting_state_overflows_are_refused),
        cmocka_unit_test(a_large_suite_expands_fully_and_twins_are_still_found),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
