/* test_suite.c — the suite reader: what a valid suite expands to, and that every kind
 * of bad input is refused before anything runs, with one line naming FILE:LINE:COLUMN.
 *
 * Methods are taken from the registry by their properties (a splitting method, a
 * fixed-step method that is not a splitting, an adaptive one), never by a fixed list;
 * the problem is the harmonic oscillator, whose period 2 pi / omega is exact. */
#include "dm_test_util.h"

#include <fcntl.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "harness.h"

#define SRC "s.yaml"
#define OUT "/tmp/dm-test-suite.h5"

static const dm_method *splitting_method, *plain_fixed_method, *adaptive_method;

static int find_methods(void **state)
{
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (!m->adaptive && m->splitting != NULL && splitting_method == NULL)
            splitting_method = m;
        if (!m->adaptive && m->splitting == NULL && plain_fixed_method == NULL)
            plain_fixed_method = m;
        if (m->adaptive && adaptive_method == NULL)
            adaptive_method = m;
    }
    return splitting_method && plain_fixed_method && adaptive_method ? 0 : -1;
}

/* Replaces FIXED, PLAIN, ADAPT and OUT in a template by the registry's method ids and
 * the output path. */
static char *fill(const char *tmpl)
{
    static const char *const tokens[] = { "FIXED", "PLAIN", "ADAPT", "OUT" };
    const char *values[] = { splitting_method->id, plain_fixed_method->id,
                             adaptive_method->id, OUT };
    size_t cap = strlen(tmpl) * 4 + 256, used = 0;
    char *out = malloc(cap);
    assert_non_null(out);
    for (const char *s = tmpl; *s;) {
        bool replaced = false;
        for (size_t k = 0; k < 4; k++) {
            size_t tl = strlen(tokens[k]);
            if (strncmp(s, tokens[k], tl) == 0) {
                size_t vl = strlen(values[k]);
                memcpy(out + used, values[k], vl);
                used += vl;
                s += tl;
                replaced = true;
                break;
            }
        }
        if (!replaced)
            out[used++] = *s++;
    }
    out[used] = '\0';
    return out;
}

static dm_status parse(const char *tmpl, dm_suite *suite, dm_error *err)
{
    char *text = fill(tmpl);
    dm_status st = dm_suite_parse(suite, text, strlen(text), SRC, NULL, err);
    free(text);
    return st;
}

static void parse_ok(const char *tmpl, dm_suite *suite)
{
    dm_error err;
    if (parse(tmpl, suite, &err) != DM_OK) {
        print_error("unexpected error: %s\n", err.msg);
        fail();
    }
}

/* The suite must be refused with DM_EINPUT, one line, starting exactly with `where`
 * ("s.yaml:LINE:COLUMN: ") and containing `needle`. */
static void expect_error_impl(const char *tmpl, const char *where, const char *needle,
                              const char *file, int line)
{
    dm_suite suite;
    dm_error err;
    dm_status st = parse(tmpl, &suite, &err);
    bool ok = st == DM_EINPUT && err.code == DM_EINPUT &&
              strncmp(err.msg, where, strlen(where)) == 0 && strstr(err.msg, needle) != NULL &&
              strchr(err.msg, '\n') == NULL && suite.runs == NULL && suite.n_runs == 0 &&
              suite.text == NULL;
    if (!ok) {
        print_error("status %d, message:\n  %s\nexpected prefix '%s' and '%s'\n", (int)st,
                    st == DM_OK ? "(none: the suite was accepted)" : err.msg, where, needle);
        if (st == DM_OK)
            dm_suite_free(&suite);
        _fail(file, line);
    }
}
#define expect_error(t, w, n) expect_error_impl((t), (w), (n), __FILE__, __LINE__)

#define HEAD "horizon: {periods: 10}\noutput: OUT\n"
#define PROB "problems:\n  - {problem: harmonic}\n"
#define METH "methods:\n  - {h: 0.1, method: FIXED}\n"
/* With HEAD, PROB and METH: line 4 is the problem entry, line 6 the method entry. */

static uint64_t fnv1a64_reference(const char *s)
{
    /* FNV-1a 64-bit: offset basis 14695981039346656037, prime 1099511628211
     * (from memory of the FNV reference by Fowler, Noll and Vo, isthe.com/chongo/tech/comp/fnv). */
    uint64_t h = UINT64_C(14695981039346656037);
    for (; *s; s++) {
        h ^= (unsigned char)*s;
        h *= UINT64_C(1099511628211);
    }
    return h;
}

static const dm_run_spec *find_run(const dm_suite *s, const char *id)
{
    for (size_t i = 0; i < s->n_runs; i++)
        if (strcmp(s->runs[i].id, id) == 0)
            return &s->runs[i];
    return NULL;
}

/* ---- valid suites ---- */

static void suite_expands_variants_times_method_values_in_file_order(void **state)
{
    dm_suite s;
    parse_ok("name: expand-check\n" HEAD
             "problems:\n"
             "  - {problem: harmonic, omega: [1, 2]}\n"
             "methods:\n"
             "  - {method: FIXED, steps_per_period: {from: 16, to: 64, factor: 2}}\n"
             "  - {method: FIXED, h: 0.05}\n"
             "  - {method: ADAPT, rtol: [1.0e-6, 1.0e-9]}\n",
             &s);
    assert_string_equal(s.name, "expand-check");
    assert_string_equal(s.output, OUT);
    assert_string_equal(s.source, SRC);
    assert_int_equal(s.n_runs, 12);
    const char *F = splitting_method->id, *A = adaptive_method->id;
    char expect[12][DM_RUN_ID_MAX];
    const char *parts[2] = { "harmonic-omega1", "harmonic-omega2" };
    for (int v = 0; v < 2; v++) {
        snprintf(expect[6 * v + 0], DM_RUN_ID_MAX, "%s.%s-n16", parts[v], F);
        snprintf(expect[6 * v + 1], DM_RUN_ID_MAX, "%s.%s-n32", parts[v], F);
        snprintf(expect[6 * v + 2], DM_RUN_ID_MAX, "%s.%s-n64", parts[v], F);
        snprintf(expect[6 * v + 3], DM_RUN_ID_MAX, "%s.%s-h0.05", parts[v], F);
        snprintf(expect[6 * v + 4], DM_RUN_ID_MAX, "%s.%s-rtol1e-06", parts[v], A);
        snprintf(expect[6 * v + 5], DM_RUN_ID_MAX, "%s.%s-rtol1e-09", parts[v], A);
    }
    for (int i = 0; i < 12; i++)
        assert_string_equal(s.runs[i].id, expect[i]);

    /* h from steps_per_period is period / n; the harmonic period is 2 pi / omega
     * (exact, common practice). */
    const dm_run_spec *r = &s.runs[6 + 1]; /* omega 2, n = 32 */
    assert_int_equal(r->step_setting, DM_SET_BY_STEPS_PER_PERIOD);
    assert_close(r->step_value, 32.0, 0.0);
    assert_close(r->inst.period, M_PI, 1e-15);
    assert_close(r->method_config.h, M_PI / 32.0, 1e-15);
    assert_close(r->t_end, 10.0 * M_PI, 1e-15);
    assert_close(r->periods, 10.0, 0.0);
    assert_close(r->method_config.t_stop, r->t_end, 0.0);
    assert_ptr_equal(r->method, splitting_method);
    assert_int_equal(r->samples, 4096);
    assert_int_equal(r->n_given, 1);
    assert_string_equal(r->given_keys[0], "omega");
    assert_close(r->given_values[0], 2.0, 0.0);

    const dm_run_spec *a = &s.runs[4];
    assert_int_equal(a->step_setting, DM_SET_BY_RTOL);
    assert_close(a->method_config.rtol, 1e-6, 0.0);
    /* atol not given: the CVODE adapter's rule, a thousandth of rtol, written out. */
    assert_close(a->method_config.atol, 1e-9, 1e-15);
    assert_close(a->t_end, 20.0 * M_PI, 1e-15);

    /* Sweeps: one per (variant, entry) with >= 2 step values, runs in step order. */
    assert_int_equal(s.n_sweeps, 4);
    char name[DM_RUN_ID_MAX];
    snprintf(name, sizeof name, "harmonic-omega1.%s", F);
    assert_string_equal(s.sweeps[0].name, name);
    assert_int_equal(s.sweeps[0].step_setting, DM_SET_BY_STEPS_PER_PERIOD);
    assert_int_equal(s.sweeps[0].n_runs, 3);
    for (size_t k = 0; k < 3; k++)
        assert_int_equal(s.sweeps[0].runs[k], k);
    snprintf(name, sizeof name, "harmonic-omega1.%s", A);
    assert_string_equal(s.sweeps[1].name, name);
    assert_int_equal(s.sweeps[1].step_setting, DM_SET_BY_RTOL);
    assert_int_equal(s.sweeps[1].runs[0], 4);
    assert_int_equal(s.sweeps[1].runs[1], 5);
    snprintf(name, sizeof name, "harmonic-omega2.%s", F);
    assert_string_equal(s.sweeps[2].name, name);
    assert_int_equal(s.sweeps[2].runs[2], 8);
    assert_int_equal(s.runs[0].sweep, 0);
    assert_int_equal(s.runs[3].sweep, -1); /* a single h: no sweep */
    assert_int_equal(s.runs[5].sweep, 1);
    assert_int_equal(s.runs[11].sweep, 3);
    dm_suite_free(&s);
}

static void problem_part_of_id_follows_the_parameter_table_order(void **state)
{
    dm_suite s;
    parse_ok(HEAD "problems:\n  - {problem: harmonic, amplitude: [1, 3], omega: [2, 0.5]}\n"
             METH, &s);
    assert_int_equal(s.n_runs, 4);
    /* harmonic's table lists omega before amplitude; the first parameter is outermost. */
    const char *F = splitting_method->id;
    char id[DM_RUN_ID_MAX];
    const char *parts[4] = { "harmonic-omega2-amplitude1", "harmonic-omega2-amplitude3",
                             "harmonic-omega0.5-amplitude1", "harmonic-omega0.5-amplitude3" };
    for (int i = 0; i < 4; i++) {
        snprintf(id, sizeof id, "%s.%s-h0.1", parts[i], F);
        assert_string_equal(s.runs[i].id, id);
        assert_string_equal(s.runs[i].given_keys[0], "omega");
        assert_string_equal(s.runs[i].given_keys[1], "amplitude");
    }
    assert_close(s.runs[3].inst.q0[0], 3.0, 0.0);
    assert_close(s.runs[3].inst.period, 4.0 * M_PI, 1e-15);
    dm_suite_free(&s);
}

static void geometric_ranges_include_their_end_and_round_steps_to_whole_numbers(void **state)
{
    dm_suite s;
    parse_ok(HEAD PROB "methods:\n"
             "  - {method: FIXED, steps_per_period: {from: 16, to: 1024, factor: 2}}\n"
             "  - {method: FIXED, h: {from: 0.1, to: 0.0125, factor: 0.5}}\n"
             "  - {method: FIXED, steps_per_period: {from: 10, to: 30, factor: 1.3}}\n",
             &s);
    assert_int_equal(s.n_runs, 7 + 4 + 5);
    for (int k = 0; k < 7; k++)
        assert_close(s.runs[k].step_value, 16.0 * pow(2.0, k), 0.0);
    assert_close(s.runs[7].step_value, 0.1, 0.0);
    assert_close(s.runs[9].step_value, 0.025, 1e-15);
    assert_close(s.runs[10].step_value, 0.0125, 0.0); /* the end itself, exactly */
    /* 10 * 1.3^k = 10, 13, 16.9, 21.97, 28.561 rounded to whole steps per period. */
    const double whole[5] = { 10, 13, 17, 22, 29 };
    for (int k = 0; k < 5; k++)
        assert_close(s.runs[11 + k].step_value, whole[k], 0.0);
    assert_int_equal(s.n_sweeps, 3);
    dm_suite_free(&s);
}

static void hashes_are_stable_distinct_and_fnv1a_of_the_config_text(void **state)
{
    /* The same suite written differently: block style, other key order, comments,
     * another name (names do not change the numbers). */
    dm_suite a, b, c;
    parse_ok("name: one\n" HEAD "problems:\n  - {problem: harmonic, omega: [1, 2]}\n"
             "methods:\n  - {method: FIXED, h: [0.1, 0.05]}\n"
             "  - {method: ADAPT, rtol: 1.0e-8}\n",
             &a);
    parse_ok("# a comment\nmethods:\n  - h: [0.1, 0.05]\n    method: FIXED\n"
             "  - {rtol: 1.0e-8, method: ADAPT}\n"
             "problems:\n  - problem: harmonic\n    omega: [1, 2]\n"
             "output: OUT\nname: two\nhorizon:\n  periods: 10\n",
             &b);
    parse_ok("name: one\nsamples: 1024\n" HEAD
             "problems:\n  - {problem: harmonic, omega: [1, 2]}\n"
             "methods:\n  - {method: FIXED, h: [0.1, 0.05]}\n"
             "  - {method: ADAPT, rtol: 1.0e-8}\n",
             &c);
    assert_int_equal(a.n_runs, 6);
    assert_int_equal(b.n_runs, 6);
    for (size_t i = 0; i < a.n_runs; i++) {
        assert_int_equal(strlen(a.runs[i].hash), 16);
        assert_int_equal(strspn(a.runs[i].hash, "0123456789abcdef"), 16);
        char expect[DM_HASH_HEX];
        snprintf(expect, sizeof expect, "%016" PRIx64, fnv1a64_reference(a.runs[i].config));
        assert_string_equal(a.runs[i].hash, expect);
        assert_string_equal(a.runs[i].id, b.runs[i].id);
        assert_string_equal(a.runs[i].config, b.runs[i].config);
        assert_string_equal(a.runs[i].hash, b.runs[i].hash);
        /* samples changes the stored numbers, so it changes the hash */
        assert_string_not_equal(a.runs[i].hash, c.runs[i].hash);
        for (size_t j = 0; j < i; j++)
            assert_string_not_equal(a.runs[i].hash, a.runs[j].hash);
    }
    /* The config names everything that changes the numbers. */
    const char *cfg = a.runs[1].config; /* omega 1, h 0.05 */
    assert_non_null(strstr(cfg, "problem=harmonic"));
    assert_non_null(strstr(cfg, "omega=1 "));
    assert_non_null(strstr(cfg, "amplitude=1 "));
    assert_non_null(strstr(cfg, "given=omega"));
    assert_non_null(strstr(cfg, "h=0.050000000000000003"));
    assert_non_null(strstr(cfg, "compensated=false"));
    assert_non_null(strstr(cfg, "samples=4096"));
    assert_non_null(strstr(cfg, "energy_limit=1"));
    assert_non_null(strstr(cfg, "t_end=62.831853071795862"));
    assert_non_null(strstr(a.runs[2].config, "rtol=1e-08 atol=1.0000000000000001e-11"));
    /* FNV-1a test vectors: "" -> cbf29ce484222325, "a" -> af63dc4c8601ec8c (from memory
     * of the FNV reference test suite): the reference above is the published function. */
    assert_true(fnv1a64_reference("") == UINT64_C(0xcbf29ce484222325));
    assert_true(fnv1a64_reference("a") == UINT64_C(0xaf63dc4c8601ec8c));
    dm_suite_free(&a);
    dm_suite_free(&b);
    dm_suite_free(&c);
}

static void atol_and_compensated_show_in_ids_and_repeated_sweep_names_get_a_suffix(void **state)
{
    dm_suite s;
    parse_ok(HEAD PROB "methods:\n"
             "  - {method: FIXED, h: [0.1, 0.05]}\n"
             "  - {method: FIXED, h: [0.1, 0.05], compensated: true}\n"
             "  - {method: ADAPT, rtol: 1.0e-6, atol: 1.0e-12}\n",
             &s);
    assert_int_equal(s.n_runs, 5);
    char id[DM_RUN_ID_MAX];
    snprintf(id, sizeof id, "harmonic.%s-h0.05-compensated", splitting_method->id);
    const dm_run_spec *r = find_run(&s, id);
    assert_non_null(r);
    assert_true(r->method_config.compensated);
    assert_non_null(strstr(r->config, "compensated=true"));
    snprintf(id, sizeof id, "harmonic.%s-rtol1e-06-atol1e-12", adaptive_method->id);
    r = find_run(&s, id);
    assert_non_null(r);
    assert_close(r->method_config.atol, 1e-12, 0.0);
    assert_int_equal(s.n_sweeps, 2);
    char name[DM_RUN_ID_MAX];
    snprintf(name, sizeof name, "harmonic.%s", splitting_method->id);
    assert_string_equal(s.sweeps[0].name, name);
    snprintf(name, sizeof name, "harmonic.%s-2", splitting_method->id);
    assert_string_equal(s.sweeps[1].name, name);
    dm_suite_free(&s);
}

static void defaults_and_time_horizon_are_applied(void **state)
{
    dm_suite s;
    parse_ok("horizon: {time: 50}\noutput: OUT\n" PROB METH, &s);
    assert_string_equal(s.name, "s"); /* the source's stem */
    assert_close(s.energy_limit, 1.0, 0.0);
    assert_int_equal(s.step_budget, 10000000000ull);
    assert_int_equal(s.runs[0].samples, 4096);
    assert_close(s.runs[0].t_end, 50.0, 0.0);
    assert_close(s.runs[0].periods, 50.0 / (2.0 * M_PI), 1e-15);
    assert_non_null(s.text);
    assert_non_null(strstr(s.text, "horizon: {time: 50}"));
    dm_suite_free(&s);

    parse_ok(HEAD PROB METH "samples: 100\nenergy_limit: 0.25\nstep_budget: 1.0e6\n", &s);
    assert_int_equal(s.runs[0].samples, 100);
    assert_close(s.energy_limit, 0.25, 0.0);
    assert_int_equal(s.step_budget, 1000000);
    dm_suite_free(&s);

    /* buckets, and samples its older name: the same setting */
    parse_ok(HEAD PROB METH "buckets: 300\n", &s);
    assert_int_equal(s.runs[0].samples, 300);
    char hash[sizeof s.runs[0].hash];
    snprintf(hash, sizeof hash, "%s", s.runs[0].hash);
    dm_suite_free(&s);
    parse_ok(HEAD PROB METH "samples: 300\n", &s);
    assert_int_equal(s.runs[0].samples, 300);
    assert_string_equal(s.runs[0].hash, hash);
    dm_suite_free(&s);
    expect_error(HEAD PROB METH "buckets: 300\nsamples: 300\n", SRC ":8:1: ",
                 "both buckets and samples given");
    expect_error(HEAD PROB METH "samples: 300\nbuckets: 300\n", SRC ":8:1: ",
                 "both buckets and samples given");
    expect_error(HEAD PROB METH "buckets: 0\n", SRC ":7:10: ",
                 "buckets = 0 is out of range");
}

static void output_defaults_to_results_dir_which_must_exist(void **state)
{
    char cwd[4096];
    assert_non_null(getcwd(cwd, sizeof cwd));
    char dir[] = "/tmp/dm_test_suite_XXXXXX";
    assert_non_null(mkdtemp(dir));
    assert_int_equal(chdir(dir), 0);
    /* No output key and no results/ here: refused at the document start. */
    expect_error("name: study\nhorizon: {periods: 10}\n" PROB METH, SRC ":1:1: ",
                 "output directory 'results' of the default output results/NAME.h5 does not "
                 "exist");
    assert_int_equal(mkdir("results", 0755), 0);
    dm_suite s;
    parse_ok("name: study\nhorizon: {periods: 10}\n" PROB METH, &s);
    assert_string_equal(s.output, "results/study.h5");
    dm_suite_free(&s);
    assert_int_equal(rmdir("results"), 0);
    assert_int_equal(chdir(cwd), 0);
    assert_int_equal(rmdir(dir), 0);
}

static void suite_load_reads_a_file_and_names_it_in_errors(void **state)
{
    char dir[] = "/tmp/dm_test_suite_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char path[64];
    snprintf(path, sizeof path, "%s/study.yaml", dir);
    int fd = open(path, O_WRONLY | O_CREAT | O_TRUNC, 0644);
    assert_true(fd >= 0);
    char *text = fill(HEAD PROB "methods:\n  - {h: 0.1, method: FIXEDx}\n");
    assert_int_equal(write(fd, text, strlen(text)), (ssize_t)strlen(text));
    close(fd);
    free(text);
    dm_suite s;
    dm_error err;
    assert_int_equal(dm_suite_load(&s, path, NULL, &err), DM_EINPUT);
    char where[128];
    snprintf(where, sizeof where, "%s:6:22: unknown method '%sx' (did you mean '%s'?)", path,
             splitting_method->id, splitting_method->id);
    assert_string_equal(err.msg, where);
    unlink(path);
    rmdir(dir);
    assert_int_equal(dm_suite_load(&s, "/nonexistent-dm/suite.yaml", NULL, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "/nonexistent-dm/suite.yaml"));
    assert_null(strchr(err.msg, '\n'));
}

static void default_suite_is_the_compiled_in_text(void **state)
{
    /* Its output is relative to the source tree's top (results/ lives there). */
    char cwd[4096];
    assert_non_null(getcwd(cwd, sizeof cwd));
    assert_int_equal(chdir(DM_SOURCE_DIR), 0);
    dm_suite s;
    dm_error err;
    dm_status st = dm_suite_default(&s, NULL, &err);
    assert_int_equal(chdir(cwd), 0);
    if (st != DM_OK) {
        print_error("default suite refused: %s\n", err.msg);
        fail();
    }
    assert_string_equal(s.source, "(built-in default suite)");
    assert_string_equal(s.text, dm_default_suite_text);
    assert_true(s.n_runs > 0);
    dm_suite_free(&s);
}

/* ---- bad input: every class, with its exact location ---- */

static void yaml_syntax_errors_give_libyaml_problem_and_mark(void **state)
{
    /* An unclosed flow list on line 3: libyaml notices at the end of the input. */
    expect_error(HEAD "problems: [a, b\n", SRC ":4:1: ",
                 "YAML syntax error: did not find expected ',' or ']' (while parsing a flow "
                 "sequence at line 3, column 11)");
    expect_error(HEAD " problems:\n", SRC ":3:10: ",
                 "YAML syntax error: mapping values are not allowed");
    expect_error(HEAD PROB METH "---\nname: second\n", SRC ":8:1: ", "a second YAML document");
    expect_error("", SRC ":1:1: ", "the suite is empty");
    expect_error("- 1\n- 2\n", SRC ":1:1: ", "the suite must be a mapping, found a list");
}

static void unknown_keys_are_refused_at_every_level_with_a_hint(void **state)
{
    expect_error("horizn: {periods: 10}\noutput: OUT\n" PROB METH, SRC ":1:1: ",
                 "unknown key 'horizn' (did you mean 'horizon'?)");
    expect_error(HEAD PROB METH "colour: red\n", SRC ":7:1: ",
                 "unknown key 'colour' (expected one of: name, output, horizon, buckets, "
                 "energy_limit, step_budget, problems, methods, memory_limit_gib, samples, "
                 "lyapunov, reference, reference_tolerance, reference_force_evals)");
    expect_error("horizon: {perods: 10}\noutput: OUT\n" PROB METH, SRC ":1:11: ",
                 "unknown horizon key 'perods' (did you mean 'periods'?)");
    expect_error(HEAD "problems:\n  - {problem: harmonic, amplitde: 2}\n" METH, SRC ":4:25: ",
                 "unknown harmonic parameter 'amplitde' (did you mean 'amplitude'?)");
    expect_error(HEAD "problems:\n  - {problem: harmonic, mass: 2}\n" METH, SRC ":4:25: ",
                 "unknown harmonic parameter 'mass' (expected one of: omega, amplitude, "
                 "energy)");
    expect_error(HEAD PROB "methods:\n  - {stpes_per_period: 8, method: FIXED}\n",
                 SRC ":6:6: ", "unknown method key 'stpes_per_period' (did you mean "
                 "'steps_per_period'?)");
    expect_error(HEAD PROB "methods:\n  - {h: {from: 0.1, to: 0.01, factr: 0.5}, method: FIXED}\n",
                 SRC ":6:31: ", "unknown range key 'factr' (did you mean 'factor'?)");
    expect_error("horizon: {periods: 10}\nhorizon: {periods: 20}\noutput: OUT\n" PROB METH,
                 SRC ":2:1: ", "key 'horizon' given twice (first at line 1)");
}

static void unknown_problem_or_method_gets_did_you_mean(void **state)
{
    expect_error(HEAD "problems:\n  - {problem: harmonc}\n" METH, SRC ":4:15: ",
                 "unknown problem 'harmonc' (did you mean 'harmonic'?)");
    char expect[160];
    snprintf(expect, sizeof expect, "unknown method '%sx' (did you mean '%s'?)",
             splitting_method->id, splitting_method->id);
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, method: FIXEDx}\n", SRC ":6:22: ", expect);
    expect_error(HEAD "problems:\n  - {omega: 2}\n" METH, SRC ":4:5: ",
                 "problems entry lacks 'problem'");
}

static void wrong_types_are_refused(void **state)
{
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: 2.5x}\n" METH, SRC ":4:32: ",
                 "harmonic omega: '2.5x' is not a finite number");
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: {a: 1}}\n" METH,
                 SRC ":4:32: ", "harmonic omega must be a number or a list of numbers, found "
                 "a mapping");
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: .nan}\n" METH, SRC ":4:32: ",
                 "'.nan' is not a finite number");
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: nan}\n" METH, SRC ":4:32: ",
                 "'nan' is not a finite number");
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: inf}\n" METH, SRC ":4:32: ",
                 "'inf' is not a finite number");
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: 1e999}\n" METH, SRC ":4:32: ",
                 "'1e999' is not a finite number");
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: \"2\"}\n" METH, SRC ":4:32: ",
                 "found the quoted string \"2\"");
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: []}\n" METH, SRC ":4:32: ",
                 "harmonic omega is an empty list");
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, compensated: yes, method: FIXED}\n",
                 SRC ":6:27: ", "compensated: 'yes' is not a boolean (expected true or false)");
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, compensated: 1, method: FIXED}\n",
                 SRC ":6:27: ", "compensated: '1' is not a boolean");
    expect_error(HEAD PROB METH "samples: {a: 1}\n", SRC ":7:10: ",
                 "samples must be a number, found a mapping");
    expect_error(HEAD PROB "methods:\n  - {h: [0.1, x], method: FIXED}\n", SRC ":6:15: ",
                 "h: 'x' is not a finite number");
    expect_error(HEAD PROB "methods:\n  - {h: , method: FIXED}\n", SRC ":6:9: ",
                 "h has no value (expected a number)");
    expect_error("horizon: 5\noutput: OUT\n" PROB METH, SRC ":1:10: ",
                 "horizon must be a mapping, found a scalar");
    expect_error(HEAD "problems: harmonic\n" METH, SRC ":3:11: ",
                 "problems must be a list, found a scalar");
    expect_error(HEAD PROB "methods:\n  - FIXED\n", SRC ":6:5: ",
                 "a methods entry must be a mapping, found a scalar");
    expect_error("name: a/b\n" HEAD PROB METH, SRC ":1:7: ", "name 'a/b' contains '/'");
}

static void missing_required_keys_are_named(void **state)
{
    expect_error(HEAD PROB, SRC ":1:1: ", "missing required key 'methods'");
    expect_error(HEAD METH, SRC ":1:1: ", "missing required key 'problems'");
    expect_error("output: OUT\n" PROB METH, SRC ":1:1: ", "missing required key 'horizon'");
    expect_error("horizon: {}\noutput: OUT\n" PROB METH, SRC ":1:10: ", "horizon is empty");
    expect_error(HEAD "problems: []\n" METH, SRC ":3:11: ", "problems is an empty list");
    expect_error(HEAD PROB "methods: []\n", SRC ":5:10: ", "methods is an empty list");
}

static void problem_parameter_errors_carry_the_entry_location(void **state)
{
    /* dm_instance_init's own messages, prefixed with where the entry starts. */
    expect_error(HEAD "problems:\n  - {problem: harmonic, omega: -2}\n" METH, SRC ":4:5: ",
                 "harmonic: omega = -2 is outside its range (0, inf)");
    expect_error(HEAD "problems:\n  - {problem: harmonic, amplitude: 0}\n" METH, SRC ":4:5: ",
                 "harmonic: zero amplitude is the equilibrium");
    expect_error(HEAD "problems:\n  - {problem: harmonic, amplitude: 1, energy: 2}\n" METH,
                 SRC ":4:5: ", "harmonic: give either amplitude or energy, not both");
    /* block style: the entry starts at its first key */
    expect_error(HEAD "problems:\n  - problem: harmonic\n    omega: [1, 0]\n" METH,
                 SRC ":4:5: ", "harmonic: omega = 0 is outside its range");
}

static void step_and_tolerance_values_are_checked(void **state)
{
    expect_error(HEAD PROB "methods:\n  - {h: 7, method: FIXED}\n", SRC ":6:9: ",
                 "h = 7 is not below the period 6.2831853071795862");
    expect_error(HEAD PROB "methods:\n  - {h: 0, method: FIXED}\n", SRC ":6:9: ",
                 "h = 0 must be positive");
    expect_error(HEAD PROB "methods:\n  - {h: -0.1, method: FIXED}\n", SRC ":6:9: ",
                 "h = -0.1 must be positive");
    expect_error(HEAD PROB "methods:\n  - {steps_per_period: 0, method: FIXED}\n",
                 SRC ":6:24: ", "steps_per_period = 0 is not a whole number >= 1");
    expect_error(HEAD PROB "methods:\n  - {steps_per_period: 2.5, method: FIXED}\n",
                 SRC ":6:24: ", "steps_per_period = 2.5 is not a whole number >= 1");
    expect_error(HEAD PROB "methods:\n  - {rtol: 1e-15, method: ADAPT}\n", SRC ":6:12: ",
                 "rtol = 1e-15 is outside [1e-14, 0.1]");
    expect_error(HEAD PROB "methods:\n  - {rtol: 0.5, method: ADAPT}\n", SRC ":6:12: ",
                 "rtol = 0.5 is outside [1e-14, 0.1]");
    expect_error(HEAD PROB "methods:\n  - {rtol: 1e-6, atol: 0, method: ADAPT}\n",
                 SRC ":6:24: ", "atol = 0 must be positive");
    expect_error(HEAD PROB "methods:\n  - {rtol: 1e-6, atol: -1, method: ADAPT}\n",
                 SRC ":6:24: ", "atol = -1 must be positive");
}

static void a_step_setting_that_does_not_fit_the_method_is_refused(void **state)
{
    char msg[200];
    snprintf(msg, sizeof msg, "%s is a fixed-step method: rtol does not apply",
             splitting_method->id);
    expect_error(HEAD PROB "methods:\n  - {rtol: 1e-6, method: FIXED}\n", SRC ":6:6: ", msg);
    snprintf(msg, sizeof msg, "%s chooses its own steps: h does not apply (expected rtol)",
             adaptive_method->id);
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, method: ADAPT}\n", SRC ":6:6: ", msg);
    snprintf(msg, sizeof msg, "%s chooses its own steps: steps_per_period does not apply",
             adaptive_method->id);
    expect_error(HEAD PROB "methods:\n  - {steps_per_period: 8, method: ADAPT}\n",
                 SRC ":6:6: ", msg);
    snprintf(msg, sizeof msg, "%s is a fixed-step method: atol does not apply",
             splitting_method->id);
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, atol: 1e-9, method: FIXED}\n", SRC ":6:14: ",
                 msg);
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, steps_per_period: 8, method: FIXED}\n",
                 SRC ":6:14: ", "steps_per_period given after h (expected exactly one of h, "
                 "steps_per_period, rtol)");
    snprintf(msg, sizeof msg, "%s needs a step (expected h: STEP or steps_per_period: N)",
             splitting_method->id);
    expect_error(HEAD PROB "methods:\n  - {method: FIXED}\n", SRC ":6:5: ", msg);
    snprintf(msg, sizeof msg, "%s needs a tolerance (expected rtol: TOL)", adaptive_method->id);
    expect_error(HEAD PROB "methods:\n  - {method: ADAPT}\n", SRC ":6:5: ", msg);
    snprintf(msg, sizeof msg, "%s: compensated summation applies to splitting methods only",
             plain_fixed_method->id);
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, compensated: true, method: PLAIN}\n",
                 SRC ":6:14: ", msg);
}

static void bad_ranges_are_refused(void **state)
{
    expect_error(HEAD PROB "methods:\n  - {h: {from: 0.1, to: 0.01, factor: 1}, method: FIXED}\n",
                 SRC ":6:39: ", "h range factor is 1");
    expect_error(HEAD PROB "methods:\n  - {h: {from: 0.01, to: 0.1, factor: 0.5}, method: FIXED}\n",
                 SRC ":6:26: ", "h range goes down (factor 0.5) but to = 0.1 is above from");
    expect_error(HEAD PROB "methods:\n  - {h: {from: 0.1, to: 0.01, factor: 2}, method: FIXED}\n",
                 SRC ":6:25: ", "h range goes up (factor 2) but to = 0.01 is below from");
    expect_error(HEAD PROB "methods:\n  - {h: {from: 1.0e-3, to: 0.5, factor: 1.01}, method: FIXED}\n",
                 SRC ":6:9: ", "h range gives more than 100 values");
    expect_error(HEAD PROB "methods:\n  - {h: {from: 0.1, to: 0.01}, method: FIXED}\n",
                 SRC ":6:9: ", "h range lacks 'factor'");
    expect_error(HEAD PROB "methods:\n  - {h: {from: 0.1, to: -1, factor: 0.5}, method: FIXED}\n",
                 SRC ":6:25: ", "h to = -1 must be positive");
}

static void horizon_samples_and_budget_limits_are_enforced(void **state)
{
    expect_error("horizon: {periods: 0}\noutput: OUT\n" PROB METH, SRC ":1:20: ",
                 "horizon periods = 0 must be positive");
    expect_error("horizon: {periods: -3}\noutput: OUT\n" PROB METH, SRC ":1:20: ",
                 "horizon periods = -3 must be positive");
    expect_error("horizon: {periods: 2e12}\noutput: OUT\n" PROB METH, SRC ":1:20: ",
                 "horizon of 2e+12 periods is too long (expected at most 1e+12)");
    /* 1e13 time units of a period 2 pi are 1.59e12 periods */
    expect_error("horizon: {time: 1e13}\noutput: OUT\n" PROB METH, SRC ":1:17: ",
                 "horizon time 1e+13 is 1.59155e+12 periods of harmonic");
    expect_error("horizon: {time: 1, periods: 2}\noutput: OUT\n" PROB METH, SRC ":1:20: ",
                 "horizon gives both periods and time");
    expect_error(HEAD PROB METH "samples: 0\n", SRC ":7:10: ",
                 "samples = 0 is out of range (expected a whole number in [1, 10000000])");
    expect_error(HEAD PROB METH "samples: 10000001\n", SRC ":7:10: ",
                 "samples = 10000001 is out of range");
    expect_error(HEAD PROB METH "samples: 2.5\n", SRC ":7:10: ", "samples = 2.5 is out of range");
    expect_error(HEAD PROB METH "energy_limit: 0\n", SRC ":7:15: ",
                 "energy_limit = 0 must be positive");
    expect_error(HEAD PROB METH "step_budget: 0.5\n", SRC ":7:14: ",
                 "step_budget = 0.5 is out of range");
    /* 1e6 periods at 1e5 steps a period: 1e11 steps, above the default budget 1e10. */
    char id[160];
    snprintf(id, sizeof id, "run harmonic.%s-n100000 needs 1e+11 steps, more than the step "
             "budget of 1e+10", splitting_method->id);
    expect_error("horizon: {periods: 1.0e6}\noutput: OUT\n" PROB
                 "methods:\n  - {steps_per_period: 100000, method: FIXED}\n",
                 SRC ":6:24: ", id);
    snprintf(id, sizeof id, "run harmonic.%s-h0.1 needs 629 steps, more than the step budget "
             "of 100", splitting_method->id);
    expect_error(HEAD "step_budget: 100\n" PROB METH, SRC ":7:9: ", id);
}

static void duplicate_runs_are_refused(void **state)
{
    char msg[200];
    snprintf(msg, sizeof msg, "run harmonic.%s-h0.1 is given twice (first at line 6",
             splitting_method->id);
    expect_error(HEAD PROB "methods:\n  - {h: 0.1, method: FIXED}\n  - {h: 0.1, method: FIXED}\n",
                 SRC ":7:9: ", msg);
    expect_error(HEAD PROB "methods:\n  - {h: [0.1, 0.1], method: FIXED}\n", SRC ":6:15: ", msg);
    expect_error(HEAD PROB "methods:\n  - {h: [0.1, 0.1000001], method: FIXED}\n", SRC ":6:15: ",
                 "names two different runs (first at line 6; expected values that differ "
                 "within 6 significant digits)");
    /* two formula entries of one name that differ where the id does not show it (list
     * starts): the second entry is named, and what to do */
    expect_error("horizon: {time: 10}\noutput: OUT\nproblems:\n"
                 "  - {potential: \"x^2/2 + y^2/2\", coordinates: [x, y], q0: [1, 0], name: b}\n"
                 "  - {potential: \"x^2/2 + y^2/2\", coordinates: [x, y], q0: [2, 0], name: b}\n"
                 "methods:\n  - {h: 0.1, method: FIXED}\n",
                 SRC ":5:5: ", "two problems entries make runs of one name (expected a name: "
                 "of its own for each)");
    /* two problem entries that are the same variant: the error points at the second
     * entry and names the first (both runs share the one step value, which says
     * nothing) */
    expect_error(HEAD "problems:\n  - {problem: harmonic}\n  - {problem: harmonic}\n"
                 "methods:\n  - {h: 0.1, method: FIXED}\n",
                 SRC ":5:5: ", "is given twice (first at line 4;");
}

/* A suite of `omegas` x `amplitudes` harmonic oscillators under one method. */
static char *grid_suite(int omegas, int amplitudes)
{
    size_t size = 64 * (size_t)(omegas + amplitudes) + 512;
    char *text = malloc(size);
    assert_non_null(text);
    int w = snprintf(text, size, "horizon: {periods: 10}\nsamples: 8\nproblems:\n"
                                 "  - {problem: harmonic, omega: [");
    for (int i = 0; i < omegas; i++)
        w += snprintf(text + w, size - (size_t)w, "%s%d", i ? ", " : "", 1 + i);
    w += snprintf(text + w, size - (size_t)w, "], amplitude: [");
    for (int i = 0; i < amplitudes; i++)
        w += snprintf(text + w, size - (size_t)w, "%s%d", i ? ", " : "", 1 + i);
    snprintf(text + w, size - (size_t)w,
             "]}\nmethods:\n  - {method: %s, steps_per_period: 16}\n", splitting_method->id);
    return text;
}

/* 10^5 runs (a suite of many short runs: streamed to the file, their memory flat) are
 * read, every id checked against every other; one variant more is refused. */
static void a_suite_may_have_100000_runs_and_no_more(void **state)
{
    dm_suite suite;
    dm_error err = { 0 };
    char *text = grid_suite(1000, 100);
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, "/tmp/dm-grid.h5", &err),
                     DM_OK);
    assert_int_equal(suite.n_runs, DM_SUITE_MAX_RUNS);
    assert_string_not_equal(suite.runs[0].id, suite.runs[DM_SUITE_MAX_RUNS - 1].id);
    dm_suite_free(&suite);
    free(text);
    text = grid_suite(1000, 101);
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, "/tmp/dm-grid.h5", &err),
                     DM_EINPUT);
    assert_non_null(strstr(err.msg, "100000"));
    assert_null(strchr(err.msg, '\n'));
    free(text);
}

static void output_directory_must_exist(void **state)
{
    expect_error("horizon: {periods: 10}\noutput: /nonexistent-dm-dir/x.h5\n" PROB METH,
                 SRC ":2:9: ", "output directory '/nonexistent-dm-dir' does not exist");
    expect_error("horizon: {periods: 10}\noutput: /tmp/\n" PROB METH, SRC ":2:9: ",
                 "output '/tmp/' names a directory");
    expect_error("horizon: {periods: 10}\noutput: /tmp\n" PROB METH, SRC ":2:9: ",
                 "output '/tmp' is a directory");
    FILE *f = fopen("/tmp/dm-test-suite-plain-file", "w");
    assert_non_null(f);
    fclose(f);
    expect_error("horizon: {periods: 10}\noutput: /tmp/dm-test-suite-plain-file/x.h5\n" PROB
                 METH, SRC ":2:9: ",
                 "output directory '/tmp/dm-test-suite-plain-file' is not a directory");
    unlink("/tmp/dm-test-suite-plain-file");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(suite_expands_variants_times_method_values_in_file_order),
        cmocka_unit_test(problem_part_of_id_follows_the_parameter_table_order),
        cmocka_unit_test(geometric_ranges_include_their_end_and_round_steps_to_whole_numbers),
        cmocka_unit_test(hashes_are_stable_distinct_and_fnv1a_of_the_config_text),
        cmocka_unit_test(atol_and_compensated_show_in_ids_and_repeated_sweep_names_get_a_suffix),
        cmocka_unit_test(defaults_and_time_horizon_are_applied),
        cmocka_unit_test(output_defaults_to_results_dir_which_must_exist),
        cmocka_unit_test(suite_load_reads_a_file_and_names_it_in_errors),
        cmocka_unit_test(default_suite_is_the_compiled_in_text),
        cmocka_unit_test(yaml_syntax_errors_give_libyaml_problem_and_mark),
        cmocka_unit_test(unknown_keys_are_refused_at_every_level_with_a_hint),
        cmocka_unit_test(unknown_problem_or_method_gets_did_you_mean),
        cmocka_unit_test(wrong_types_are_refused),
        cmocka_unit_test(missing_required_keys_are_named),
        cmocka_unit_test(problem_parameter_errors_carry_the_entry_location),
        cmocka_unit_test(step_and_tolerance_values_are_checked),
        cmocka_unit_test(a_step_setting_that_does_not_fit_the_method_is_refused),
        cmocka_unit_test(bad_ranges_are_refused),
        cmocka_unit_test(horizon_samples_and_budget_limits_are_enforced),
        cmocka_unit_test(duplicate_runs_are_refused),
        cmocka_unit_test(a_suite_may_have_100000_runs_and_no_more),
        cmocka_unit_test(output_directory_must_exist),
    };
    return cmocka_run_group_tests(tests, find_methods, NULL);
}
