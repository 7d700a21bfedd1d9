/* test_symplectic.c — the geometric properties each method table claims: symplecticity
 * of the one-step map, time symmetry, and what they buy over long runs (bounded energy
 * error against the drift of a non-symplectic method). */
#include "dm_method_test.h"

#include <float.h>

/* ---- symplecticity: J^T Omega J = Omega for the one-step map's Jacobian J ----
 * (Hairer, Lubich, Wanner, Geometric Numerical Integration, 2nd ed. (2006),
 * Definition VI.2.2). J by central differences with a relative step of 1e-5: the
 * truncation error is ~1e-10 and the round-off ~1e-11, well below the 1e-9 bound. */

static void one_step(const dm_method *m, const dm_instance *inst, double h, const double *x0,
                     double *x1)
{
    dm_test_run(m, inst, h, 1, x0, x1);
}

static double symplecticity_defect(const dm_method *m, const dm_instance *inst, double h,
                                   const double *x0)
{
    int dof = inst->dof, n = 2 * dof;
    static double jac[2 * DM_MAX_DOF][2 * DM_MAX_DOF]; /* 4.7 MB: not on the stack */
    for (int j = 0; j < n; j++) {
        double xp[2 * DM_MAX_DOF], xm[2 * DM_MAX_DOF], yp[2 * DM_MAX_DOF], ym[2 * DM_MAX_DOF];
        memcpy(xp, x0, (size_t)n * sizeof *xp);
        memcpy(xm, x0, (size_t)n * sizeof *xm);
        double delta = 1e-5 * fmax(1.0, fabs(x0[j]));
        xp[j] += delta;
        xm[j] -= delta;
        double width = xp[j] - xm[j]; /* the step really taken, after rounding */
        one_step(m, inst, h, xp, yp);
        one_step(m, inst, h, xm, ym);
        for (int i = 0; i < n; i++)
            jac[i][j] = (yp[i] - ym[i]) / width;
    }
    /* (J^T Omega J)_{ab} = sum_k J_{k a} J_{k+dof, b} - J_{k+dof, a} J_{k b}. */
    double worst = 0.0;
    for (int a = 0; a < n; a++)
        for (int b = 0; b < n; b++) {
            double v = 0.0;
            for (int k = 0; k < dof; k++)
                v += jac[k][a] * jac[k + dof][b] - jac[k + dof][a] * jac[k][b];
            double omega = (a < dof && b == a + dof) ? 1.0 : (b < dof && a == b + dof) ? -1.0 : 0.0;
            worst = fmax(worst, fabs(v - omega));
        }
    return worst;
}

/* Symplectic methods: defect <= 1e-9 at h = 0.1 and at h = 0.4 (round-off and
 * differencing only, ~1e-12..1e-10). Not symplectic (explicit Euler, RK4): a defect
 * that is a property of the map, not noise: above 1e-6 at h = 0.4, at h = 0.1 still a
 * thousand times above the symplectic methods' noise, and shrinking at least like
 * h^(p+1) between the two steps (the local error is O(h^(p+1)); for explicit Euler the
 * defect is h^2 A^T Omega A exactly, A = f'; RK4's measures one order better, h^6). */
static void check_symplecticity(const dm_instance *inst, const double *x0)
{
    int failures = 0;
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (m->adaptive)
            continue;
        double small = symplecticity_defect(m, inst, 0.1, x0);
        double large = symplecticity_defect(m, inst, 0.4, x0);
        double rate = log(large / small) / log(4.0);
        bool ok = m->symplectic
                      ? small <= 1e-9 && large <= 1e-9
                      : large > 1e-6 && small > 1e-9 && rate > m->order + 1 - 0.5;
        char rate_text[32] = "";
        if (!m->symplectic)
            snprintf(rate_text, sizeof rate_text, ", shrinks like h^%.2f", rate);
        print_message("%s: %-11s |J^T Omega J - Omega| = %.2e at h = 0.1, %.2e at h = 0.4"
                      " (%s%s)%s\n", inst->problem->id, m->id, small, large,
                      m->symplectic ? "symplectic" : "not symplectic", rate_text,
                      ok ? "" : "  <-- FAILS");
        failures += !ok;
    }
    assert_int_equal(failures, 0);
}

static void symplectic_methods_preserve_the_symplectic_form_on_pendulum(void **state)
{
    if (!dm_test_problem_or_skip("pendulum"))
        skip();
    const char *keys[] = { "amplitude" };
    const double values[] = { 2.0 };
    dm_instance inst = dm_test_instance("pendulum", 1, keys, values);
    double x0[2] = { 1.1, 0.9 }; /* a generic point: force and velocity both nonzero */
    check_symplecticity(&inst, x0);
}

static void symplectic_methods_preserve_the_symplectic_form_on_double_well(void **state)
{
    if (!dm_test_problem_or_skip("double_well"))
        skip();
    dm_instance inst = dm_test_instance("double_well", 0, NULL, NULL);
    double x0[2] = { 0.6, -0.4 };
    check_symplecticity(&inst, x0);
}

static void symplectic_methods_preserve_the_symplectic_form_on_kepler(void **state)
{
    if (!dm_test_problem_or_skip("kepler"))
        skip();
    dm_instance inst = dm_test_instance("kepler", 0, NULL, NULL);
    double x0[4] = { 0.7, 0.4, -0.5, 1.0 }; /* 4x4 J: couples both degrees of freedom */
    check_symplecticity(&inst, x0);
}

/* ---- symmetry: a symmetric method retraces its steps when h changes sign ----
 * (Hairer, Lubich, Wanner 2006, Definition V.1.4: Phi_{-h} = Phi_h^{-1}.) */

static double return_error(const dm_method *m, const dm_instance *inst, double h, long steps)
{
    int n = 2 * inst->dof;
    double a[2 * DM_MAX_DOF], b[2 * DM_MAX_DOF], x0[2 * DM_MAX_DOF];
    dm_test_start(inst, x0);
    memcpy(a, x0, (size_t)n * sizeof *a);
    dm_point from = { .x = a }, to = { .x = b };
    dm_stepper *s = dm_test_stepper(m, inst, h, false, &from);
    for (int pass = 0; pass < 2; pass++) {
        if (pass == 1)
            assert_int_equal(dm_stepper_set_step(s, -h, &from), DM_OK);
        for (long i = 0; i < steps; i++) {
            assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
            dm_point swap = from;
            from = to;
            to = swap;
        }
    }
    double err = 0.0, size = 0.0;
    for (int c = 0; c < n; c++) {
        err = fmax(err, fabs(from.x[c] - x0[c]));
        size = fmax(size, fabs(x0[c]));
    }
    assert_true(fabs(from.t) < 1e-9); /* back at t = 0 too */
    dm_stepper_destroy(s);
    return err / size;
}

static void check_symmetry(const dm_instance *inst, double h, long steps)
{
    int failures = 0;
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (m->adaptive)
            continue;
        double err = return_error(m, inst, h, steps);
        /* Symmetric: back to the start up to round-off. Not symmetric: the forward
         * and backward errors add up, O(h) for the first-order methods. */
        bool ok = m->symmetric ? err <= 1e-12 : true;
        if (!m->symmetric && m->order == 1)
            ok = err > 1e-4;
        print_message("%s: %-11s %ld steps forward and back: relative error %.2e%s\n",
                      inst->problem->id, m->id, steps, err, ok ? "" : "  <-- FAILS");
        failures += !ok;
    }
    assert_int_equal(failures, 0);
}

static void symmetric_methods_retrace_their_steps_on_harmonic_oscillator(void **state)
{
    dm_instance inst = dm_test_instance("harmonic", 0, NULL, NULL);
    check_symmetry(&inst, 0.05, 2000);
}

static void symmetric_methods_retrace_their_steps_on_kepler(void **state)
{
    if (!dm_test_problem_or_skip("kepler"))
        skip();
    dm_instance inst = dm_test_instance("kepler", 0, NULL, NULL);
    check_symmetry(&inst, 0.01, 1000);
}

static void symmetric_methods_retrace_their_steps_on_pendulum(void **state)
{
    if (!dm_test_problem_or_skip("pendulum"))
        skip();
    const char *keys[] = { "amplitude" };
    const double values[] = { 2.0 };
    dm_instance inst = dm_test_instance("pendulum", 1, keys, values);
    check_symmetry(&inst, 0.05, 1000);
}

/* ---- the headline contrast: bounded energy error against drift ----
 * Over 10^4 periods of a large-amplitude pendulum, Störmer–Verlet's energy error stays
 * bounded (backward error analysis: it conserves a modified energy to O(h^2), Hairer,
 * Lubich, Wanner 2006, Theorem IX.8.1), while RK4's drifts linearly in time. */

typedef struct energy_record {
    double first_tenth, last_tenth;
} energy_record;

static energy_record energy_error_over_run(const char *id, const dm_instance *inst,
                                           int steps_per_period, long periods)
{
    const dm_method *m = dm_test_method(id);
    double h = inst->period / steps_per_period;
    long steps = periods * steps_per_period, tenth = steps / 10;
    double a[2] = { inst->q0[0], inst->p0[0] }, b[2];
    dm_point from = { .x = a }, to = { .x = b };
    dm_stepper *s = dm_test_stepper(m, inst, h, false, &from);
    energy_record r = { 0.0, 0.0 };
    double e0 = inst->energy;
    for (long i = 0; i < steps; i++) {
        assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
        double de = fabs(dm_instance_energy(inst, to.x, to.x + inst->dof) - e0);
        if (i < tenth)
            r.first_tenth = fmax(r.first_tenth, de);
        else if (i >= steps - tenth)
            r.last_tenth = fmax(r.last_tenth, de);
        dm_point swap = from;
        from = to;
        to = swap;
    }
    dm_stepper_destroy(s);
    return r;
}

static void verlet_energy_error_stays_bounded_while_rk4_drifts_on_pendulum(void **state)
{
    if (!dm_test_problem_or_skip("pendulum"))
        skip();
    const char *keys[] = { "amplitude" };
    const double values[] = { 2.0 };
    dm_instance inst = dm_test_instance("pendulum", 1, keys, values);
    long periods = 10000;
    energy_record v = energy_error_over_run("verlet", &inst, 40, periods);
    energy_record r = energy_error_over_run("rk4", &inst, 40, periods);
    print_message("pendulum amplitude 2, 1e4 periods, 40 steps per period: max |dE| "
                  "first/last tenth: verlet %.3e / %.3e (ratio %.2f), rk4 %.3e / %.3e "
                  "(ratio %.2f)\n", v.first_tenth, v.last_tenth, v.last_tenth / v.first_tenth,
                  r.first_tenth, r.last_tenth, r.last_tenth / r.first_tenth);
    assert_true(v.last_tenth <= 2.0 * v.first_tenth);
    assert_true(v.first_tenth <= 2.0 * v.last_tenth);
    assert_true(r.last_tenth > 5.0 * r.first_tenth);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(symplectic_methods_preserve_the_symplectic_form_on_pendulum),
        cmocka_unit_test(symplectic_methods_preserve_the_symplectic_form_on_double_well),
        cmocka_unit_test(symplectic_methods_preserve_the_symplectic_form_on_kepler),
        cmocka_unit_test(symmetric_methods_retrace_their_steps_on_harmonic_oscillator),
        cmocka_unit_test(symmetric_methods_retrace_their_steps_on_kepler),
        cmocka_unit_test(symmetric_methods_retrace_their_steps_on_pendulum),
        cmocka_unit_test(verlet_energy_error_stays_bounded_while_rk4_drifts_on_pendulum),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
