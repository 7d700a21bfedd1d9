/* test_suite_regressions.c — inputs the fuzzer (tests/fuzz_suite.c) or the fault tests
 * found to break the suite reader, each fed back exactly as found or reduced to its
 * core. The raw fuzzer inputs are also in tests/fuzz_corpus/regression-*.yaml, so every
 * fuzzing run starts from them.
 *
 * Some of these fail only in the sanitizer build (CI builds every test with
 * -fsanitize=address,undefined -fno-sanitize-recover=all): an undefined conversion
 * gives no wrong answer in a release build, but UBSan aborts on it. */
#include "dm_test_util.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

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

/* Fuzzer finding: a typed table's `order: 3.3e42` was converted to int before the range
 * check's verdict was looked at (undefined behaviour; UBSan aborted in suite_table.c). */
static void a_table_order_out_of_range_is_refused_without_converting_it(void **state)
{
    size_t n;
    const char *text = read_corpus("regression-table-order-huge.yaml", &n);
    expect_refused(text, n, SRC ":6:30: ", "order = 3333333333333333333333333333333333333333334 "
                   "is out of range (expected a whole number in [1, 8])");
    const char *reduced = "horizon: {periods: 1}\nproblems: [{problem: harmonic}]\n"
                          "methods: [{table: {name: t, order: -1e300, kick: [0.5, 0.5], "
                          "drift: [1]}, h: 0.1}]\n";
    expect_refused(reduced, strlen(reduced), SRC ":3:", "order = -1e300 is out of range");
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
    /* the error points at the repeated value (the last D) and the first one's line */
    const char *last_d = strstr(twin, ",1]");
    const char *line_start = last_d;
    while (line_start > twin && line_start[-1] != '\n')
        line_start--;
    char where[64];
    snprintf(where, sizeof where, SRC ":4:%d: ", (int)(last_d - line_start) + 2);
    expect_refused(twin, strlen(twin), where,
                   "run morse-D1-alpha1-mass1-energy0.1.verlet-n10 is given twice (first at "
                   "line 4");
}

#define SMALL_REST "horizon: {periods: 3}\nproblems: [{problem: harmonic}]\n"

/* Issue 12, item 8: a factor next to 1 gave values that round together, escaped the
 * cap on distinct values and never ended (UBSan: signed overflow of the step counter).
 * Refused at once, whole or not. */
static void a_range_factor_next_to_one_is_refused_at_once(void **state)
{
    (void)state;
    const char *whole = SMALL_REST "methods: [{method: verlet, steps_per_period: {from: 1, "
                        "to: 100, factor: 1.000000000000001}}]\n";
    clock_t t0 = clock();
    expect_refused(whole, strlen(whole), SRC ":3:", "takes more than 100000 steps");
    const char *real = SMALL_REST "methods: [{method: verlet, h: {from: 0.1, to: 0.2, "
                       "factor: 1.0000000000000002}}]\n";
    expect_refused(real, strlen(real), SRC ":3:", "takes more than 100000 steps");
    /* a factor whose steps are few but whose values meet in one double: 1 + 2^-52 from
     * 1 to 1 + 2^-51 gives 1, 1 + 2^-52, 1 + 2^-51 (distinct); a factor of 1 + 2^-53
     * rounds to 1 and is refused as 1 */
    const char *one = SMALL_REST "methods: [{method: verlet, h: {from: 0.1, to: 0.2, "
                      "factor: 1.00000000000000001}}]\n";
    expect_refused(one, strlen(one), SRC ":3:", "range factor is 1");
    assert_true((double)(clock() - t0) / CLOCKS_PER_SEC < 2.0);
}

/* Item 9: 100,000 levels of nesting took the document loader most of a minute; the
 * depth is capped before it runs. */
static void deep_nesting_is_refused_before_the_loader(void **state)
{
    (void)state;
    const size_t depth = 100000;
    char *text = malloc(2 * depth + 8);
    assert_non_null(text);
    memcpy(text, "a: ", 3);
    memset(text + 3, '[', depth);
    memset(text + 3 + depth, ']', depth);
    text[3 + 2 * depth] = '\n';
    clock_t t0 = clock();
    expect_refused(text, 4 + 2 * depth, SRC ":1:", "nested more than 64 deep");
    assert_true((double)(clock() - t0) / CLOCKS_PER_SEC < 2.0);
    free(text);
    /* a suite's own few levels pass */
    const char *ok = SMALL_REST "methods: [{method: verlet, h: [0.1, 0.05]}]\n";
    dm_suite suite;
    dm_error err;
    assert_int_equal(dm_suite_parse(&suite, ok, strlen(ok), SRC, OUT, &err), DM_OK);
    dm_suite_free(&suite);
}

/* Item 9: `run /dev/zero` read until memory ran out, a FIFO blocked forever, and a
 * suite larger than 1 MiB is no suite. */
static void only_regular_files_of_at_most_1_MiB_are_read(void **state)
{
    (void)state;
    dm_suite suite;
    dm_error err;
    assert_int_equal(dm_suite_load(&suite, "/dev/zero", OUT, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "not a regular file"));
    assert_int_equal(dm_suite_load(&suite, "/tmp", OUT, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "is a directory"));
    char fifo[64];
    snprintf(fifo, sizeof fifo, "/tmp/dm-test-fifo-%ld", (long)getpid());
    unlink(fifo);
    assert_int_equal(mkfifo(fifo, 0600), 0);
    assert_int_equal(dm_suite_load(&suite, fifo, OUT, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "not a regular file"));
    dm_summary_row *rows = NULL;
    size_t n = 0;
    assert_int_equal(dm_results_read_summary(fifo, &rows, &n, &err), DM_EINPUT);
    assert_null(rows);
    unlink(fifo);
    /* 1 MiB + 1 bytes of comment after a valid suite */
    char big[64];
    snprintf(big, sizeof big, "/tmp/dm-test-big-%ld.yaml", (long)getpid());
    FILE *f = fopen(big, "wb");
    assert_non_null(f);
    fputs(SMALL_REST "methods: [{method: verlet, h: 0.1}]\n#", f);
    for (long i = ftell(f); i <= DM_SUITE_MAX_BYTES; i++)
        fputc('x', f);
    fclose(f);
    assert_int_equal(dm_suite_load(&suite, big, OUT, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "expected at most 1048576"));
    unlink(big);
}

/* Item 11: a name with a newline made a file name with a newline; a !!str-tagged
 * scalar was read as a number. */
static void names_with_control_bytes_and_text_tagged_numbers_are_refused(void **state)
{
    (void)state;
    const char *nl = "name: \"a\\nb\"\n" SMALL_REST "methods: [{method: verlet, h: 0.1}]\n";
    expect_refused(nl, strlen(nl), SRC ":1:7: ", "name 'a\\nb' contains a control character");
    const char *esc = "output: \"/tmp/a\\eb.h5\"\n" SMALL_REST
                      "methods: [{method: verlet, h: 0.1}]\n";
    dm_suite suite;
    dm_error err;
    /* with no -o the suite's own output is checked */
    assert_int_equal(dm_suite_parse(&suite, esc, strlen(esc), SRC, NULL, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "'/tmp/a\\x1bb.h5' contains a control character"));
    const char *tagged = SMALL_REST "methods: [{method: verlet, h: !!str 0.1}]\n";
    expect_refused(tagged, strlen(tagged), SRC ":3:", "'0.1' tagged !!str");
    /* an explicit !!float is a number, as is an untagged one */
    const char *fl = SMALL_REST "methods: [{method: verlet, h: !!float 0.1}]\n";
    assert_int_equal(dm_suite_parse(&suite, fl, strlen(fl), SRC, OUT, &err), DM_OK);
    assert_true(suite.runs[0].method_config.h == 0.1);
    dm_suite_free(&suite);
}

/* Item 5: a 250-byte output name was found too long only when the file was written,
 * after every run. Now the temporary name is made (and removed) before any run. */
static void an_output_name_too_long_is_refused_before_the_runs(void **state)
{
    (void)state;
    char out[400];
    int w = snprintf(out, sizeof out, "/tmp/");
    memset(out + w, 'x', 250);
    snprintf(out + w + 250, sizeof out - (size_t)w - 250, ".h5");
    const char *text = SMALL_REST "methods: [{method: verlet, h: 0.1}]\n";
    dm_suite suite;
    dm_error err;
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, out, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "File name too long"));
    assert_int_equal(strncmp(err.msg, "command line: output '/tmp/xxx", 28), 0);
    /* an output from the command line is named as such, never as the suite's default */
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, "/nonexistent-dm/x.h5",
                                    &err), DM_EINPUT);
    assert_string_equal(err.msg, "command line: output directory '/nonexistent-dm' does not "
                        "exist (expected an existing, writable directory)");
    /* nothing is left behind by the check itself */
    char tmp[600];
    assert_int_equal(dm_results_temp_path(OUT, (long)getpid(), tmp, sizeof tmp), 0);
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, OUT, &err), DM_OK);
    dm_suite_free(&suite);
    assert_int_equal(access(tmp, F_OK), -1);
}

/* Item 6: a killed write left ".NAME.tmp-PID" behind for good. The next check of that
 * output removes those of dead processes, and only those. */
static void stale_temporary_files_of_dead_processes_are_removed(void **state)
{
    (void)state;
    pid_t child = fork();
    assert_true(child >= 0);
    if (child == 0)
        _exit(0);
    assert_int_equal(waitpid(child, NULL, 0), child); /* its pid is now free */
    char dead[600], alive[600], other[700];
    assert_int_equal(dm_results_temp_path(OUT, (long)child, dead, sizeof dead), 0);
    assert_int_equal(dm_results_temp_path(OUT, (long)getppid(), alive, sizeof alive), 0);
    snprintf(other, sizeof other, "%s-not-ours", dead);
    const char *names[] = { dead, alive, other };
    for (int i = 0; i < 3; i++) {
        FILE *f = fopen(names[i], "wb");
        assert_non_null(f);
        fclose(f);
    }
    const char *text = SMALL_REST "methods: [{method: verlet, h: 0.1}]\n";
    dm_suite suite;
    dm_error err;
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, OUT, &err), DM_OK);
    dm_suite_free(&suite);
    assert_int_equal(access(dead, F_OK), -1);
    assert_int_equal(access(alive, F_OK), 0);
    assert_int_equal(access(other, F_OK), 0);
    unlink(alive);
    unlink(other);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(negative_samples_are_refused_without_converting_them),
        cmocka_unit_test(a_table_order_out_of_range_is_refused_without_converting_it),
        cmocka_unit_test(control_characters_in_quoted_input_keep_the_error_on_one_line),
        cmocka_unit_test(a_nul_inside_a_quoted_scalar_is_refused_not_cut_short),
        cmocka_unit_test(the_suites_energy_limit_reaches_every_run),
        cmocka_unit_test(parameters_whose_starting_state_overflows_are_refused),
        cmocka_unit_test(a_large_suite_expands_fully_and_twins_are_still_found),
        cmocka_unit_test(a_range_factor_next_to_one_is_refused_at_once),
        cmocka_unit_test(deep_nesting_is_refused_before_the_loader),
        cmocka_unit_test(only_regular_files_of_at_most_1_MiB_are_read),
        cmocka_unit_test(names_with_control_bytes_and_text_tagged_numbers_are_refused),
        cmocka_unit_test(an_output_name_too_long_is_refused_before_the_runs),
        cmocka_unit_test(stale_temporary_files_of_dead_processes_are_removed),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
