/* test_cli_period.c — `driftmark period` and `driftmark list` through the built
 * executable: what they print, and that every kind of bad input is one line on stderr,
 * nothing on stdout and exit status 2. */
#include "dm_test_util.h"

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_mode.h>
#include <gsl/gsl_sf_ellint.h>

#include "method.h"
#include "problem.h"

enum { OUT_SIZE = 1 << 16 };
static char out[OUT_SIZE], err[OUT_SIZE];

static int run(const char *args)
{
    char cmd[1024];
    snprintf(cmd, sizeof cmd, "'%s' %s", DM_EXE, args);
    return dm_run_capture(cmd, out, sizeof out, err, sizeof err);
}

/* The number after "key": in a one-object JSON line. */
static double json_number(const char *text, const char *key)
{
    char pattern[128];
    snprintf(pattern, sizeof pattern, "\"%s\": ", key);
    const char *at = strstr(text, pattern);
    if (at == NULL)
        print_error("no %s in: %s\n", pattern, text);
    assert_non_null(at);
    char *end;
    double v = strtod(at + strlen(pattern), &end);
    assert_true(end != at + strlen(pattern));
    return v;
}

static dm_instance library_instance(const char *id, size_t n, const char *const *keys,
                                    const double *values)
{
    dm_instance inst;
    dm_error e;
    dm_error_clear(&e);
    assert_int_equal(dm_instance_init(&inst, dm_problem_find(id), n, keys, values, &e), DM_OK);
    return inst;
}

static void period_json_reports_the_librarys_closed_form_numbers_exactly(void **state)
{
    assert_int_equal(run("period morse D=2 alpha=0.7 amplitude=0.3 --json"), 0);
    assert_string_equal(err, "");
    const char *keys[] = { "D", "alpha", "amplitude" };
    const double values[] = { 2.0, 0.7, 0.3 };
    dm_instance inst = library_instance("morse", 3, keys, values);
    /* %.17g reads back as the same double */
    assert_true(json_number(out, "period") == inst.period);
    assert_true(json_number(out, "energy") == inst.energy);
    assert_true(json_number(out, "first_crossing") == inst.first_crossing);
    assert_non_null(strstr(out, "\"problem\": \"morse\""));
    assert_non_null(strstr(out, "\"regime\": \"bound\""));
    assert_non_null(strstr(out, "\"q0\": [0.29999999999999999]"));
    /* and the closed form itself, 2 pi sqrt(m) / (alpha sqrt(2 (D - E))) */
    assert_close(inst.period, 2.0 * M_PI / (0.7 * sqrt(2.0 * (2.0 - inst.energy))), 1e-14);
    assert_int_equal((int)(strchr(out, '\n') - out) + 1, (int)strlen(out)); /* one line */

    /* --json anywhere, Kepler's third law */
    assert_int_equal(run("period --json kepler semi_major_axis=4 mu=2 eccentricity=0.6"), 0);
    assert_close(json_number(out, "period"), 2.0 * M_PI * sqrt(64.0 / 2.0), 1e-15);
    assert_close(json_number(out, "energy"), -2.0 / 8.0, 1e-15);
    assert_true(json_number(out, "first_crossing") == json_number(out, "period"));
}

static void period_text_names_regime_energy_period_state_and_crossing(void **state)
{
    assert_int_equal(run("period kepler eccentricity=0.25"), 0);
    assert_string_equal(err, "");
    const char *labels[] = { "problem", "regime", "energy", "period", "q0", "p0",
                             "first_crossing" };
    for (size_t i = 0; i < sizeof labels / sizeof labels[0]; i++) {
        char line[64];
        snprintf(line, sizeof line, "\n%s ", labels[i]);
        if (strncmp(out, line + 1, strlen(line + 1)) != 0 && strstr(out, line) == NULL)
            print_error("no line '%s' in:\n%s", labels[i], out);
        assert_true(strncmp(out, line + 1, strlen(line + 1)) == 0 || strstr(out, line));
    }
    assert_non_null(strstr(out, "6.2831853071795862")); /* 2 pi, printed %.17g */
    assert_non_null(strstr(out, "bound"));
}

/* The quadrature check of the period says why it does not apply, in words that do not
 * contradict the lines above it: a rotation has no turning points (not "unbounded"), and
 * a start next to a separatrix whose energy, evaluated without cancellation, lies below
 * V(q0) in double arithmetic is not "impossible" (the program built it). Where it
 * applies it agrees with the closed form (the pendulum's 4 K(m), GSL in the test above). */
static void period_check_says_why_it_does_not_apply(void **state)
{
    (void)state;
    assert_int_equal(run("period pendulum energy=1.5"), 0);
    assert_non_null(strstr(out, "rotation"));
    assert_non_null(strstr(out, "period_check    - (a rotation has no turning points"));
    assert_null(strstr(out, "unbounded"));
    assert_int_equal(run("period double_well energy=-1e-9"), 0);
    assert_non_null(strstr(out, "period_check    - (V(q0) = "));
    assert_null(strstr(out, "impossible"));
    assert_int_equal(run("period pendulum amplitude=2.5"), 0);
    const char *check = strstr(out, "period_check    ");
    assert_non_null(check);
    assert_non_null(strstr(check, "relative difference"));
}

/* One bad command: status 2, nothing on stdout, exactly one line on stderr holding
 * `needle`. */
static void expect_bad(const char *args, const char *needle)
{
    int rc = run(args);
    size_t len = strlen(err);
    const char *nl = strchr(err, '\n');
    bool one_line = len > 0 && nl == err + len - 1;
    if (rc != 2 || out[0] != '\0' || !one_line || strstr(err, needle) == NULL)
        print_error("driftmark %s\n  status %d, stdout '%s', stderr '%s' (wanted '%s')\n",
                    args, rc, out, err, needle);
    assert_int_equal(rc, 2);
    assert_string_equal(out, "");
    assert_true(one_line);
    assert_non_null(strstr(err, needle));
}

static void period_refuses_every_kind_of_bad_input_with_one_line_and_status_2(void **state)
{
    expect_bad("period", "missing PROBLEM");
    expect_bad("period morce", "unknown problem 'morce' (did you mean 'morse'?)");
    expect_bad("period keplr --json", "did you mean 'kepler'");
    expect_bad("period xyzzy", "unknown problem 'xyzzy'");
    expect_bad("period morse amplitud=0.2", "unknown parameter 'amplitud' (did you mean "
                                            "'amplitude'?)");
    expect_bad("period kepler eccentricty=0.2", "did you mean 'eccentricity'");
    expect_bad("period morse amplitude=2.5x", "not a finite number: '2.5x'");
    expect_bad("period morse amplitude=nan", "not a finite number: 'nan'");
    expect_bad("period morse amplitude=inf", "not a finite number: 'inf'");
    expect_bad("period morse amplitude=-inf", "not a finite number");
    expect_bad("period morse amplitude=1e999", "not a finite number: '1e999'");
    expect_bad("period morse amplitude=", "not a finite number");
    expect_bad("period morse amplitude", "not of the form key=value");
    expect_bad("period morse =3", "not of the form key=value");
    expect_bad("period morse D=-1", "D = -1 is outside its range (0, inf)");
    expect_bad("period kepler eccentricity=1", "eccentricity = 1 is outside its range [0, 1)");
    expect_bad("period kepler eccentricity=1.5", "outside its range");
    expect_bad("period kepler semi_major_axis=0", "semi_major_axis = 0 is outside");
    expect_bad("period kepler semi_major_axis=-3", "outside its range");
    expect_bad("period kepler mu=-1", "mu = -1 is outside");
    expect_bad("period morse amplitude=0.1 energy=0.1", "give either amplitude or energy, "
                                                       "not both");
    expect_bad("period morse amplitude=0.1 amplitude=0.2", "given twice");
    expect_bad("period morse energy=1", "unbound and has no period");
    expect_bad("period morse D=3 energy=4.5 --json", "unbound and has no period");
    expect_bad("period morse amplitude=-0.8", "unbound and has no period");
    expect_bad("period morse amplitude=0", "equilibrium");
    expect_bad("period harmonic amplitude=0", "equilibrium");
    expect_bad("period morse --bogus", "unknown option '--bogus'");
    expect_bad("period morse -q", "unknown option '-q'");
    if (dm_problem_find("pendulum") != NULL) {
        /* a state with no period: the separatrix, amplitude pi (theta0 = pi) */
        expect_bad("period pendulum amplitude=3.141592653589793", "separatrix");
    }
    expect_bad("list --bogus", "unknown option '--bogus'");
    expect_bad("list extra", "unexpected argument 'extra'");
}

static void period_of_the_pendulum_is_four_complete_elliptic_integrals(void **state)
{
    if (dm_problem_find("pendulum") == NULL) {
        print_message("pendulum not registered yet: skipped\n");
        skip();
    }
    assert_int_equal(run("period pendulum amplitude=2.5 --json"), 0);
    /* T = 4 K(m), m = sin^2(theta0 / 2) (REFERENCES.md, pendulum libration); GSL takes
     * the modulus k = sin(theta0 / 2). */
    double expected = 4.0 * gsl_sf_ellint_Kcomp(sin(1.25), GSL_PREC_DOUBLE);
    double period = json_number(out, "period");
    print_message("pendulum amplitude 2.5: driftmark %.17g, GSL 4 K %.17g\n", period,
                  expected);
    assert_close(period, expected, 1e-14);
    /* mpmath 4 * ellipk(sin(1.25)**2) at 30 digits: 10.3231628658691153494546351917 */
    assert_close(period, 10.3231628658691153, 1e-15);
    assert_non_null(strstr(out, "\"regime\": \"libration\""));
}

static void list_names_every_problem_parameter_regime_and_method(void **state)
{
    assert_int_equal(run("list"), 0);
    assert_string_equal(err, "");
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pr = dm_problems[i];
        assert_non_null(strstr(out, pr->id));
        for (int k = 0; k < pr->n_params; k++) {
            assert_non_null(strstr(out, pr->params[k].name));
            assert_non_null(strstr(out, pr->params[k].meaning));
        }
        for (int k = 0; k < pr->n_regimes; k++)
            assert_non_null(strstr(out, pr->regimes[k].id));
    }
    for (size_t i = 0; i < dm_method_count; i++) {
        assert_non_null(strstr(out, dm_methods[i]->id));
        assert_non_null(strstr(out, dm_methods[i]->name));
    }
    assert_non_null(strstr(out, "[0, 1)")); /* Kepler's eccentricity range */
}

static void list_json_is_one_object_with_every_problem_and_method(void **state)
{
    /* Debian's python3 parses it (an outside check of the hand-written JSON). */
    char args[512];
    snprintf(args, sizeof args,
             "list --json | /usr/bin/python3 -c 'import json, sys; d = json.load(sys.stdin); "
             "print(len(d[\"problems\"]), len(d[\"methods\"]), "
             "[p[\"id\"] for p in d[\"problems\"]].index(\"kepler\"), "
             "d[\"problems\"][0][\"parameters\"][0][\"name\"])'");
    assert_int_equal(run(args), 0);
    int np = -1, nm = -1, kepler_at = -1;
    char first_param[64] = "";
    assert_int_equal(sscanf(out, "%d %d %d %63s", &np, &nm, &kepler_at, first_param), 4);
    assert_int_equal(np, (int)dm_problem_count);
    assert_int_equal(nm, (int)dm_method_count);
    assert_true(dm_problems[kepler_at] == dm_problem_find("kepler"));
    assert_string_equal(first_param, dm_problems[0]->params[0].name);
}

/* The line of `list` that starts with a method's id, copied into line. */
static void method_line(const char *id, char *line, size_t size)
{
    char key[64];
    snprintf(key, sizeof key, "\n  %s ", id);
    const char *at = strstr(out, key);
    assert_non_null(at);
    at += 3;
    size_t n = strcspn(at, "\n");
    assert_true(n < size);
    memcpy(line, at, n);
    line[n] = '\0';
}

/* A method whose force count depends on its iterations shows the word, never 0; a
 * variable-order method shows its orders as a range, not one order. */
static void list_shows_iterative_forces_and_variable_orders_as_such(void **state)
{
    char line[512];
    for (int json = 0; json < 2; json++) {
        for (size_t i = 0; i < dm_method_count; i++) {
            const dm_method *m = dm_methods[i];
            char order[16];
            if (m->variable_order)
                snprintf(order, sizeof order, "1-%d", m->order);
            else
                snprintf(order, sizeof order, "%d", m->order);
            const char *forces = m->adaptive ? "adaptive"
                                 : m->force_evals_per_step == 0 ? "iterative" : NULL;
            if (!json) {
                assert_int_equal(run("list"), 0);
                method_line(m->id, line, sizeof line);
                print_message("%s\n", line);
                char want[96];
                snprintf(want, sizeof want, " %s ", order);
                assert_non_null(strstr(line, want));
                if (forces != NULL)
                    assert_non_null(strstr(line, forces));
                continue;
            }
            char args[700];
            snprintf(args, sizeof args,
                     "list --json | /usr/bin/python3 -c 'import json, sys; "
                     "m = [m for m in json.load(sys.stdin)[\"methods\"] if m[\"id\"] == \"%s\"][0]; "
                     "print(m[\"order\"], m[\"max_order\"], m[\"order_text\"], "
                     "m[\"force_evals_per_step\"], m[\"force_evals_text\"])'", m->id);
            assert_int_equal(run(args), 0);
            char want[128];
            if (m->variable_order)
                snprintf(want, sizeof want, "None %d %s", m->order, order);
            else
                snprintf(want, sizeof want, "%d %d %s", m->order, m->order, order);
            if (forces != NULL)
                snprintf(want + strlen(want), sizeof want - strlen(want), " None %s\n",
                         forces);
            else
                snprintf(want + strlen(want), sizeof want - strlen(want), " %d %d\n",
                         m->force_evals_per_step, m->force_evals_per_step);
            assert_string_equal(out, want);
        }
    }
    /* the two cases this is about, by name */
    assert_int_equal(run("list"), 0);
    if (dm_method_find("midpoint") != NULL) {
        method_line("midpoint", line, sizeof line);
        assert_non_null(strstr(line, " iterative "));
    }
    if (dm_method_find("cvode-bdf") != NULL) {
        method_line("cvode-bdf", line, sizeof line);
        assert_non_null(strstr(line, " 1-5 "));
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(period_json_reports_the_librarys_closed_form_numbers_exactly),
        cmocka_unit_test(period_text_names_regime_energy_period_state_and_crossing),
        cmocka_unit_test(period_check_says_why_it_does_not_apply),
        cmocka_unit_test(period_refuses_every_kind_of_bad_input_with_one_line_and_status_2),
        cmocka_unit_test(period_of_the_pendulum_is_four_complete_elliptic_integrals),
        cmocka_unit_test(list_names_every_problem_parameter_regime_and_method),
        cmocka_unit_test(list_json_is_one_object_with_every_problem_and_method),
        cmocka_unit_test(list_shows_iterative_forces_and_variable_orders_as_such),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
