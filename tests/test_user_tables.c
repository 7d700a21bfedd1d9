/* test_user_tables.c — methods typed as tables in a suite (harness/suite_table.c,
 * integrators/user_table.c): what the checks find on tables whose answer is known, and
 * every class of bad table refused in one line at the node it is about. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"
#include "user_table.h"

#define SRC "t.yaml"
#define HEAD "horizon: {periods: 10}\noutput: /tmp/dm-test-user-tables.h5\n" \
             "problems:\n  - {problem: harmonic}\nmethods:\n"
/* With HEAD, the table's entry is on line 6. */

/* Yoshida's triple jump to 17 digits: x1 = 1 / (2 - 2^(1/3)), x0 = 1 - 2 x1 (H. Yoshida,
 * Phys. Lett. A 150 (1990) 262; the digits are the doubles of integrators/yoshida.c). */
#define Y4_W "[1.3512071919596578, -1.7024143839193153, 1.3512071919596578]"
#define Y4_KICK "[0.67560359597982889, -0.17560359597982877, -0.17560359597982877, " \
                "0.67560359597982889]"
#define Y4_DRIFT Y4_W
#define RK4_A "[[], [0.5], [0, 0.5], [0, 0, 1]]"
#define RK4_B "[0.16666666666666666, 0.33333333333333331, 0.33333333333333331, " \
              "0.16666666666666666]"

static dm_status parse(const char *entry, dm_suite *suite, dm_error *err)
{
    static char text[16384];
    int w = snprintf(text, sizeof text, HEAD "%s", entry);
    assert_true(w > 0 && (size_t)w < sizeof text);
    return dm_suite_parse(suite, text, strlen(text), SRC, NULL, err);
}

static const dm_user_table *parse_table(const char *entry, dm_suite *suite)
{
    dm_error err;
    if (parse(entry, suite, &err) != DM_OK) {
        print_error("unexpected error: %s\n", err.msg);
        fail();
    }
    assert_int_equal(suite->n_tables, 1);
    return suite->tables[0];
}

static int mismatches; /* every refusal is tried; the test fails at its end */

/* Refused with DM_EINPUT, one line, starting with `where` and containing `needle`,
 * nothing kept. */
static void expect_error_impl(const char *entry, const char *where, const char *needle,
                              const char *file, int line)
{
    dm_suite suite;
    dm_error err;
    dm_status st = parse(entry, &suite, &err);
    bool ok = st == DM_EINPUT && strncmp(err.msg, where, strlen(where)) == 0 &&
              strstr(err.msg, needle) != NULL && strchr(err.msg, '\n') == NULL &&
              suite.runs == NULL && suite.tables == NULL;
    if (!ok) {
        print_error("status %d, message:\n  %s\nexpected prefix '%s' and '%s'\n", (int)st,
                    st == DM_OK ? "(none: the suite was accepted)" : err.msg, where, needle);
        if (st == DM_OK)
            dm_suite_free(&suite);
        print_error("at %s:%d\n", file, line);
        mismatches++;
    }
}
#define expect_error(e, w, n) expect_error_impl((e), (w), (n), __FILE__, __LINE__)

/* The triple jump typed three ways is the built-in table, number for number, and is
 * found symmetric and of order 4 by measurement; a second entry may give the same table
 * again under its name. */
static void yoshida4_typed_is_the_built_in_table_and_measures_order_4(void **state)
{
    (void)state;
    const char *forms[] = {
        "  - {table: {name: j4, order: 4, compose: verlet, weights: " Y4_W "}, h: 0.1}\n",
        "  - {table: {name: j4, order: 4, kick: " Y4_KICK ", drift: " Y4_DRIFT "}, h: 0.1}\n",
        "  - {table: {name: j4, order: 4, mirror: true, first: kick, kick: [0.67560359597982889,"
        " -0.17560359597982877], drift: [1.3512071919596578, -1.7024143839193153]}, h: 0.1}\n"
        "  - {table: {name: j4, order: 4, mirror: true, first: kick, kick: [0.67560359597982889,"
        " -0.17560359597982877], drift: [1.3512071919596578, -1.7024143839193153]}, h: 0.05}\n",
    };
    const dm_splitting *y4 = dm_method_find("yoshida4")->splitting;
    for (size_t i = 0; i < sizeof forms / sizeof forms[0]; i++) {
        dm_suite suite;
        const dm_user_table *t = parse_table(forms[i], &suite);
        const dm_splitting *s = t->method.splitting;
        assert_int_equal(s->kick_first, y4->kick_first);
        assert_int_equal(s->n_kick, y4->n_kick);
        assert_int_equal(s->n_drift, y4->n_drift);
        assert_memory_equal(s->kick, y4->kick, sizeof(double) * (size_t)y4->n_kick);
        assert_memory_equal(s->drift, y4->drift, sizeof(double) * (size_t)y4->n_drift);
        assert_true(t->findings.symmetric && t->method.symmetric && t->method.symplectic);
        assert_int_equal(t->findings.order_found, 4);
        assert_int_equal(t->method.force_evals_per_step, 3);
        assert_string_equal(t->findings.order_basis, "measured");
        for (int k = 0; k < 2; k++)
            assert_true(fabs(t->findings.measured[k].order - 4) < 0.1);
        dm_suite_free(&suite);
    }
}

/* The classical RK4 typed in the suite meets the order conditions to order 4 and not 5
 * (Butcher 2008: RK4 has order exactly 4), is not symmetric, and runs rk4's steps. */
static void rk4_typed_meets_the_conditions_to_order_4(void **state)
{
    (void)state;
    dm_suite suite;
    const dm_user_table *t =
        parse_table("  - {table: {name: k4, order: 4, a: " RK4_A ", b: " RK4_B
                    ", c: [0, 0.5, 0.5, 1]}, h: 0.1}\n", &suite);
    assert_int_equal(t->findings.order_found, 4);
    assert_int_equal(t->findings.conditions_checked_to, 5);
    assert_true(t->findings.condition_residual[4] < 1e-15);
    assert_true(t->findings.condition_residual[5] > 1e-3);
    assert_false(t->findings.symmetric);
    const dm_method *m = &t->method;
    assert_int_equal(m->family, DM_FAMILY_RUNGE_KUTTA);
    assert_int_equal(m->force_evals_per_step, 4);
    assert_memory_equal(m->tableau, dm_method_find("rk4")->tableau, sizeof *m->tableau);
    assert_ptr_equal(m->step, dm_method_find("rk4")->step);
    dm_suite_free(&suite);
}

/* A deliberately wrong coefficient is caught. RK4 with a32 = 0.5001: the second-order
 * condition sum b_i c_i = 1/2 fails, so order 1, not 4 (an error, unless the table is
 * experimental: then it runs, with both orders known). The triple jump with its two
 * middle kicks moved apart by 0.01 (the sums still 1): the table is no longer symmetric
 * and its order measures 1 on both problems. */
static void a_wrong_coefficient_gives_order_1_not_4(void **state)
{
    (void)state;
    expect_error("  - {table: {name: k4, order: 4, a: [[], [0.5], [0, 0.5001], [0, 0, 1]], b: "
                 RK4_B "}, h: 0.1}\n", SRC ":6:31: ",
                 "claims order 4 but meets the order conditions to order 1 only");
    assert_int_equal(mismatches, 0);
    const char *wrong_kick = "[0.67560359597982889, -0.18560359597982877, "
                             "-0.16560359597982877, 0.67560359597982889]";
    char entry[1024];
    snprintf(entry, sizeof entry, "  - {table: {name: j4, order: 4, kick: %s, drift: "
             Y4_DRIFT "}, h: 0.1}\n", wrong_kick);
    expect_error(entry, SRC ":6:31: ", "claims order 4 but reaches 1 (measured 1.0");
    assert_int_equal(mismatches, 0);
    /* coefficients that sum to 1 in doubles but overflow the test: said so, not "0" */
    expect_error("  - {table: {name: huge, order: 1, kick: [1e300, -1e300, 1], drift: [0.5, "
                 "0.5]}, h: 0.1}\n", SRC ":6:33: ",
                 "claims order 1 but its convergence test gave no finite error");
    assert_int_equal(mismatches, 0);
    snprintf(entry, sizeof entry, "  - {table: {name: j4, order: 4, experimental: true, "
             "kick: %s, drift: " Y4_DRIFT "}, h: 0.1}\n", wrong_kick);
    dm_suite suite;
    const dm_user_table *t = parse_table(entry, &suite);
    print_message("perturbed triple jump: measured %.3f (harmonic), %.3f (pendulum)\n",
                  t->findings.measured[0].order, t->findings.measured[1].order);
    assert_int_equal(t->findings.order_found, 1);
    assert_false(t->findings.symmetric);
    assert_int_equal(t->method.order, 4); /* the claim, kept beside what was found */
    assert_int_equal(suite.n_runs, 1);
    dm_suite_free(&suite);
}

/* Every class of bad table, each refused in one line at the node it is about: the entry,
 * the numbers, the forms and lengths, consistency. */
static void bad_tables_are_refused_where_they_are_wrong(void **state)
{
    (void)state;
    /* the entry and the table as such */
    expect_error("  - {table: [1, 2], h: 0.1}\n", SRC ":6:13: ", "table must be a mapping");
    expect_error("  - {table: {name: x, order: 1, kick: [1], drift: [1], first: kick}, "
                 "method: verlet, h: 0.1}\n", SRC ":6:70: ", "either method or table");
    expect_error("  - {table: {name: x, order: 2, kicks: [1]}, h: 0.1}\n", SRC ":6:33: ",
                 "unknown table key 'kicks' (did you mean 'kick'?)");
    expect_error("  - {table: {order: 2, kick: [1], drift: [1], first: kick}, h: 0.1}\n",
                 SRC ":6:13: ", "a table lacks 'name'");
    expect_error("  - {table: {name: x, kick: [1], drift: [1], first: kick}, h: 0.1}\n",
                 SRC ":6:13: ", "a table lacks 'order'");
    expect_error("  - {table: {name: a.b, order: 2, kick: [1], drift: [1]}, h: 0.1}\n",
                 SRC ":6:20: ", "has the character '.'");
    expect_error("  - {table: {name: verlet, order: 2, kick: [1], drift: [1]}, h: 0.1}\n",
                 SRC ":6:20: ", "is a built-in method's");
    expect_error("  - {table: {name: x, order: 9, kick: [1], drift: [1]}, h: 0.1}\n",
                 SRC ":6:30: ", "order = 9 is out of range");
    expect_error("  - {table: {name: x, order: 2.5, kick: [1], drift: [1]}, h: 0.1}\n",
                 SRC ":6:30: ", "order = 2.5 is out of range");
    /* numbers */
    expect_error("  - {table: {name: x, order: 1, kick: [.nan], drift: [1]}, h: 0.1}\n",
                 SRC ":6:40: ", "kick: '.nan' is not a finite number");
    expect_error("  - {table: {name: x, order: 1, kick: [1], drift: [1e400]}, h: 0.1}\n",
                 SRC ":6:52: ", "drift: '1e400' is not a finite number");
    expect_error("  - {table: {name: x, order: 1, kick: [\"1\"], drift: [1]}, h: 0.1}\n",
                 SRC ":6:40: ", "found the quoted string");
    expect_error("  - {table: {name: x, order: 1, kick: 1, drift: [1]}, h: 0.1}\n",
                 SRC ":6:39: ", "kick must be a list of numbers");
    /* forms and lengths */
    expect_error("  - {table: {name: x, order: 1, kick: [1], weights: [1]}, h: 0.1}\n",
                 SRC ":6:13: ", "the keys of two forms");
    expect_error("  - {table: {name: x, order: 1}, h: 0.1}\n", SRC ":6:13: ",
                 "no coefficients");
    expect_error("  - {table: {name: x, order: 1, kick: [1]}, h: 0.1}\n", SRC ":6:39: ",
                 "kick without drift");
    expect_error("  - {table: {name: x, order: 1, weights: [1]}, h: 0.1}\n", SRC ":6:42: ",
                 "weights without compose");
    expect_error("  - {table: {name: x, order: 1, kick: [0.5, 0.5, 0], drift: [1]}, h: 0.1}\n",
                 SRC ":6:61: ", "3 kick and 1 drift coefficients");
    expect_error("  - {table: {name: x, order: 1, kick: [1], drift: [1]}, h: 0.1}\n",
                 SRC ":6:39: ", "say which comes first");
    expect_error("  - {table: {name: x, order: 1, first: drift, kick: [0.5, 0.5], drift: [1]}, "
                 "h: 0.1}\n", SRC ":6:53: ", "first: drift does not fit");
    char many[2048] = "  - {table: {name: x, order: 1, first: kick, kick: [";
    for (int i = 0; i < 65; i++)
        strcat(many, i ? ", 0" : "1");
    strcat(many, "], drift: [1]}, h: 0.1}\n");
    expect_error(many, SRC ":6:52: ", "kick lists 65 coefficients (expected at most 64)");
    /* consistency */
    expect_error("  - {table: {name: x, order: 2, kick: [0.5, 0.6], drift: [1]}, h: 0.1}\n",
                 SRC ":6:39: ", "the kick coefficients sum to 1.1000000000000001");
    expect_error("  - {table: {name: x, order: 2, kick: [0.5, 0.5], drift: [0.9]}, h: 0.1}\n",
                 SRC ":6:58: ", "the drift coefficients sum to 0.90000000000000002");
    expect_error("  - {table: {name: x, order: 4, compose: verlet, weights: [1.35, -1.7, 1.36]}"
                 ", h: 0.1}\n", SRC ":6:59: ", "the weights sum to");
    expect_error("  - {table: {name: x, order: 2, compose: symeuler-a, weights: [1]}, h: 0.1}\n",
                 SRC ":6:42: ", "unknown symmetric splitting to compose 'symeuler-a'");
    expect_error("  - {table: {name: x, order: 4, mirror: true, compose: verlet, weights: "
                 "[0.5, 0.5]}, h: 0.1}\n", SRC ":6:73: ", "the weights sum to 1.5");
    assert_int_equal(mismatches, 0);
}

/* The same for the Runge-Kutta forms, the count of tables and names. */
static void bad_runge_kutta_tables_are_refused_where_they_are_wrong(void **state)
{
    (void)state;
    /* Butcher tableaux */
    expect_error("  - {table: {name: x, order: 1, a: [[], [1]], b: [1]}, h: 0.1}\n",
                 SRC ":6:36: ", "a has 2 rows and b 1 weights");
    expect_error("  - {table: {name: x, order: 1, a: [[], [1, 0, 0]], b: [0.5, 0.5]}, h: 0.1}\n",
                 SRC ":6:41: ", "row 2 of a has 3 entries");
    expect_error("  - {table: {name: x, order: 1, a: [[0.5, 0], [1, 0]], b: [0.5, 0.5]}, "
                 "h: 0.1}\n", SRC ":6:37: ", "a11 = 0.5 is on or above the diagonal");
    expect_error("  - {table: {name: x, order: 1, a: [[], [1]], b: [0.5, 0.6]}, h: 0.1}\n",
                 SRC ":6:50: ", "the weights b sum to 1.1");
    expect_error("  - {table: {name: x, order: 1, a: [[], [1]], b: [0.5, 0.5], c: [0, 0.9]}, "
                 "h: 0.1}\n", SRC ":6:65: ", "c2 = 0.90000000000000002 is not the sum 1");
    expect_error("  - {table: {name: x, order: 1, mirror: true, a: [[]], b: [1]}, h: 0.1}\n",
                 SRC ":6:41: ", "mirror applies to kick/drift and weights only");
    /* Runge-Kutta-Nystrom tables */
    expect_error("  - {table: {name: x, order: 1, abar: [[]], bbar: [0.5], b: [1]}, h: 0.1}\n",
                 SRC ":6:39: ", "abar without c");
    expect_error("  - {table: {name: x, order: 1, abar: [[]], bbar: [0.4], b: [1], c: [0]}, "
                 "h: 0.1}\n", SRC ":6:51: ", "the weights bbar sum to 0.40000000000000002 "
                 "(expected 1/2");
    expect_error("  - {table: {name: x, order: 1, abar: [[]], bbar: [0.25, 0.25], b: [1], "
                 "c: [0]}, h: 0.1}\n", SRC ":6:51: ", "bbar has 2 weights and b 1");
    expect_error("  - {table: {name: x, order: 1, a: [[]], bbar: [0.5], b: [1]}, h: 0.1}\n",
                 SRC ":6:13: ", "the keys of two forms");
    /* at most 64 tables */
    char *many_tables = malloc(65 * 128 + 1);
    assert_non_null(many_tables);
    many_tables[0] = '\0';
    for (int i = 0; i < 65; i++)
        sprintf(many_tables + strlen(many_tables),
                "  - {table: {name: t%d, order: 1, compose: verlet, weights: [1]}, h: 0.1}\n", i);
    expect_error(many_tables, SRC ":70:13: ", "more than 64 tables in one suite");
    free(many_tables);
    /* one name, two tables */
    expect_error("  - {table: {name: x, order: 2, compose: verlet, weights: [1]}, h: 0.1}\n"
                 "  - {table: {name: x, order: 2, compose: verlet-dkd, weights: [1]}, h: 0.1}\n",
                 SRC ":7:20: ", "table x is given twice with other coefficients");
    assert_int_equal(mismatches, 0);
}

/* The suite form of a table reads back as the same table (its hash is the run's). */
static void the_stored_text_reads_back_as_the_same_table(void **state)
{
    (void)state;
    dm_suite a, b;
    const dm_user_table *t = parse_table(
        "  - {table: {name: j4, order: 4, reference: \"typed \\\"by hand\\\"\", mirror: true,"
        " first: kick, kick: [0.67560359597982889, -0.17560359597982877], drift: "
        "[1.3512071919596578, -1.7024143839193153]}, h: 0.1}\n", &a);
    char entry[DM_TABLE_TEXT_MAX + 64];
    snprintf(entry, sizeof entry, "  - {table: %s, h: 0.1}\n", t->text);
    const dm_user_table *u = parse_table(entry, &b);
    assert_string_equal(t->text, u->text);
    assert_string_equal(u->input.reference, "typed \"by hand\"");
    assert_string_equal(a.runs[0].config, b.runs[0].config);
    assert_memory_equal(t->kick, u->kick, sizeof t->kick);
    dm_suite_free(&a);
    dm_suite_free(&b);
}

/* Nystrom's fourth-order method for q'' = f(q) (E. J. Nystrom, Acta Soc. Sci. Fennicae 50
 * (1925); Hairer, Norsett, Wanner, Solving ODEs I, section II.14, from memory of the book;
 * tests/check_published_table.py shows its order 4 with mpmath). */
#define NYSTROM4 "abar: [[], [0.125], [0.125, 0], [0, 0, 0.5]], bbar: [0.16666666666666667, " \
                 "0.16666666666666667, 0.16666666666666667, 0], b: [0.16666666666666667, " \
                 "0.33333333333333333, 0.33333333333333333, 0.16666666666666667], " \
                 "c: [0, 0.5, 0.5, 1]"

/* Two RK4 steps of h/2 written as one 8-stage tableau (derived here, not published: the
 * first four stages are RK4's at h/2, the last four start from its result): order 4 by
 * its conditions, and longer than any shipped table, so the fused loop runs it through
 * its general shape; and Nystrom's method, measured order 4, not symmetric. The fused
 * loop and the per-step path give the same runs bit for bit, on one and on two degrees
 * of freedom, with the forces and velocities each counts. */
static void a_long_tableau_runs_alike_in_the_fused_loop_and_step_by_step(void **state)
{
    (void)state;
    const char *suite_text =
        "horizon: {periods: 20}\noutput: /tmp/dm-test-user-tables.h5\nbuckets: 16\n"
        "problems:\n  - {problem: pendulum, amplitude: 2.5}\n"
        "  - {problem: kepler, eccentricity: 0.5}\nmethods:\n"
        "  - {table: {name: rk4x2, order: 4, b: [0.083333333333333333, 0.16666666666666667,"
        " 0.16666666666666667, 0.083333333333333333, 0.083333333333333333,"
        " 0.16666666666666667, 0.16666666666666667, 0.083333333333333333],"
        " a: [[], [0.25], [0, 0.25], [0, 0, 0.5],"
        " [0.083333333333333333, 0.16666666666666667, 0.16666666666666667, 0.083333333333333333],"
        " [0.083333333333333333, 0.16666666666666667, 0.16666666666666667, 0.083333333333333333,"
        " 0.25],"
        " [0.083333333333333333, 0.16666666666666667, 0.16666666666666667, 0.083333333333333333,"
        " 0, 0.25],"
        " [0.083333333333333333, 0.16666666666666667, 0.16666666666666667, 0.083333333333333333,"
        " 0, 0, 0.5]]}, steps_per_period: 64}\n"
        "  - {table: {name: ny4, order: 4, " NYSTROM4 "}, steps_per_period: 64}\n";
    dm_suite suite;
    dm_error err;
    if (dm_suite_parse(&suite, suite_text, strlen(suite_text), SRC, NULL, &err) != DM_OK) {
        print_error("%s\n", err.msg);
        fail();
    }
    assert_int_equal(suite.tables[0]->findings.order_found, 4);
    assert_int_equal(suite.tables[0]->method.tableau->stages, 8);
    assert_int_equal(suite.tables[1]->findings.order_found, 4);
    assert_int_equal(suite.tables[1]->method.nystrom->stages, 4);
    assert_false(suite.tables[1]->findings.symmetric);
    for (size_t i = 0; i < suite.n_runs; i++) {
        dm_run_spec spec = suite.runs[i];
        dm_run_result fused, plain;
        assert_int_equal(dm_run(&spec, &fused, NULL, &err), DM_OK);
        spec.method_config.plain_steps = true;
        assert_int_equal(dm_run(&spec, &plain, NULL, &err), DM_OK);
        print_message("%s: %s, %llu steps, max |dE| %.3e\n", spec.id,
                      dm_run_status_name(fused.status),
                      (unsigned long long)fused.metrics.steps, fused.metrics.max_energy_error);
        assert_int_equal(fused.status, DM_RUN_OK);
        assert_int_equal(plain.status, DM_RUN_OK);
        bool nystrom = spec.method->nystrom != NULL;
        uint64_t stages = nystrom ? 4 : 8;
        assert_true(fused.metrics.counts.force_evals == stages * fused.metrics.steps);
        assert_true(fused.metrics.counts.velocity_evals ==
                    (stages + nystrom) * fused.metrics.steps);
        assert_true(fused.metrics.counts.velocity_evals == plain.metrics.counts.velocity_evals);
        assert_true(fused.metrics.counts.force_evals == plain.metrics.counts.force_evals);
        assert_int_equal(fused.series.n, plain.series.n);
        size_t bytes = fused.series.n * sizeof(double);
        assert_memory_equal(fused.series.energy_error, plain.series.energy_error, bytes);
        assert_memory_equal(fused.series.energy_error_max, plain.series.energy_error_max, bytes);
        assert_memory_equal(fused.series.global_error, plain.series.global_error, bytes);
        dm_run_result_free(&fused);
        dm_run_result_free(&plain);
    }
    dm_suite_free(&suite);
}

/* A Nystrom table needs grad T linear in p: true for the built-in problems, false for a
 * relativistic kinetic energy T = sqrt(1 + p^2) (grad T = p / sqrt(1 + p^2)), for which
 * the suite refuses such a table (suite.c, make_run). */
static void relativistic_velocity(const dm_instance *inst, const double *p, double *v)
{
    (void)inst;
    v[0] = p[0] / sqrt(1 + p[0] * p[0]);
}

static void a_nystrom_table_needs_a_linear_velocity(void **state)
{
    (void)state;
    for (size_t i = 0; i < dm_problem_count; i++) {
        dm_instance inst;
        dm_error err;
        assert_int_equal(dm_test_instance_defaults(&inst, dm_problems[i], &err), DM_OK);
        assert_true(dm_velocity_is_linear(&inst));
    }
    dm_problem relativistic = { .id = "relativistic", .dof = 1,
                                .velocity = relativistic_velocity };
    dm_instance inst = { .problem = &relativistic, .dof = 1 };
    assert_false(dm_velocity_is_linear(&inst));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(yoshida4_typed_is_the_built_in_table_and_measures_order_4),
        cmocka_unit_test(rk4_typed_meets_the_conditions_to_order_4),
        cmocka_unit_test(a_wrong_coefficient_gives_order_1_not_4),
        cmocka_unit_test(bad_tables_are_refused_where_they_are_wrong),
        cmocka_unit_test(bad_runge_kutta_tables_are_refused_where_they_are_wrong),
        cmocka_unit_test(the_stored_text_reads_back_as_the_same_table),
        cmocka_unit_test(a_long_tableau_runs_alike_in_the_fused_loop_and_step_by_step),
        cmocka_unit_test(a_nystrom_table_needs_a_linear_velocity),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

