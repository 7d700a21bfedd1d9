/* test_morse.c — the Morse oscillator: closed-form period against GSL quadrature,
 * exact solution against its equations of motion, energy conservation, the section
 * crossing, the small-amplitude limit, and every refusal of a state with no period. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include "problem.h"

static const dm_problem *morse(void)
{
    const dm_problem *p = dm_problem_find("morse");
    assert_non_null(p);
    return p;
}

/* Builds a Morse instance from "key", value pairs; fails the test on error. */
static dm_instance make(size_t n, const char *const *keys, const double *values)
{
    dm_instance inst;
    dm_error err;
    dm_error_clear(&err);
    dm_status st = dm_instance_init(&inst, morse(), n, keys, values, &err);
    if (st != DM_OK)
        print_error("unexpected error: %s\n", err.msg);
    assert_int_equal(st, DM_OK);
    return inst;
}

/* ---- the period as the closed orbit integral T = 2 int_{u1}^{u2} du / u' ----
 * u = x - xe, y = exp(-alpha u); the turning points are y1,2 = 1 +- c, c = sqrt(E / D),
 * so E - V = D ((c^2 - (1 - y)^2) = D (y - y2)(y1 - y) exactly, and
 * u' = sqrt(2 D (y - y2)(y1 - y) / m). The inverse-square-root end singularities are
 * GSL's qaws weight (u - u1)^-1/2 (u2 - u)^-1/2; the remaining factor
 *   f(u) = sqrt(m / (2 D)) sqrt((u - u1) / (y1 - y) * (u2 - u) / (y - y2))
 * is smooth, and y1 - y = -y1 expm1(-alpha (u - u1)), y - y2 = y2 expm1(-alpha (u - u2))
 * keep it accurate right up to the turning points. None of this uses the closed form. */
typedef struct morse_quad {
    double D, alpha, m, u1, u2, y1, y2;
} morse_quad;

/* (u - u1) / (y1 - y) = du / (-y1 expm1(-alpha du)), du = u - u1 >= 0 */
static double inner_ratio(double du, double y1, double alpha)
{
    return du == 0.0 ? 1.0 / (alpha * y1) : du / (-y1 * expm1(-alpha * du));
}

/* (u2 - u) / (y - y2) = du / (y2 expm1(alpha du)), du = u2 - u >= 0 */
static double outer_ratio(double du, double y2, double alpha)
{
    return du == 0.0 ? 1.0 / (alpha * y2) : du / (y2 * expm1(alpha * du));
}

static double morse_quad_f(double u, void *params)
{
    const morse_quad *q = params;
    double inner = inner_ratio(u - q->u1, q->y1, q->alpha);
    double outer = outer_ratio(q->u2 - u, q->y2, q->alpha);
    return sqrt(q->m / (2.0 * q->D)) * sqrt(inner * outer);
}

/* The period of the orbit through the turning point x0 (at rest), by quadrature. Its
 * c = |1 - y0| = sqrt(E / D), y0 = exp(-alpha (x0 - xe)), is taken in long double (64-bit
 * significand) from the double x0: the period belongs to the state started, and next to
 * dissociation 1 - c needs more digits than a double evaluation of y0 keeps. */
static double morse_period_by_quadrature(double D, double alpha, double m, double x0,
                                         double xe, double *abserr)
{
    long double y0 = expl(-(long double)alpha * ((long double)x0 - (long double)xe));
    long double cl = fabsl(1.0L - y0);
    double c = (double)cl;
    morse_quad q = { .D = D, .alpha = alpha, .m = m };
    q.y1 = 1.0 + c;
    q.y2 = (double)(1.0L - cl); /* 1 - c without cancellation near E = D */
    q.u1 = -log1p(c) / alpha;
    q.u2 = -log(q.y2) / alpha;
    gsl_integration_workspace *w = gsl_integration_workspace_alloc(2000);
    gsl_integration_qaws_table *t = gsl_integration_qaws_table_alloc(-0.5, -0.5, 0, 0);
    gsl_function F = { .function = morse_quad_f, .params = &q };
    double result = NAN, err = NAN;
    int st = gsl_integration_qaws(&F, q.u1, q.u2, t, 0.0, 2e-14, 2000, w, &result, &err);
    if (st != GSL_SUCCESS)
        print_message("GSL qaws status %d: %s\n", st, gsl_strerror(st));
    gsl_integration_qaws_table_free(t);
    gsl_integration_workspace_free(w);
    /* 2e-14 asked (GSL's floor is 50 eps): at the last digits GSL may report a
     * roundoff status, but its estimate is still returned and judged by the caller. */
    *abserr = 2.0 * err;
    return 2.0 * result;
}

static void morse_period_matches_gsl_quadrature_of_the_orbit_integral(void **state)
{
    /* (D, alpha, mass, E / D): a default well, a stiff light one, a wide heavy one, and
     * energies up to just below dissociation. */
    const double cases[][4] = {
        { 1.0, 1.0, 1.0, 0.1 },   { 1.0, 1.0, 1.0, 0.5 },       { 1.0, 1.0, 1.0, 0.9 },
        { 1.0, 1.0, 1.0, 0.999 }, { 1.0, 1.0, 1.0, 1.0 - 1e-6 }, { 4.7, 1.9, 0.35, 0.3 },
        { 0.02, 0.6, 12.0, 0.7 }, { 3.0, 2.5, 1.5, 1.0 - 1e-6 }, { 1.0, 1.0, 1.0, 1e-6 },
    };
    double worst = 0.0;
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        double D = cases[i][0], alpha = cases[i][1], m = cases[i][2];
        double E = cases[i][3] * D;
        const char *keys[] = { "D", "alpha", "mass", "energy", "xe" };
        const double values[] = { D, alpha, m, E, 0.75 };
        dm_instance inst = make(5, keys, values);
        double abserr;
        double T_quad = morse_period_by_quadrature(D, alpha, m, inst.q0[0], 0.75,
                                                   &abserr); /* GSL qaws */
        double rel = dm_rel_diff(inst.period, T_quad);
        if (rel > worst)
            worst = rel;
        print_message("morse D=%g alpha=%g m=%g E/D=%.10g: T=%.17g quad=%.17g rel=%.2e "
                      "(GSL error estimate %.1e)\n",
                      D, alpha, m, cases[i][3], inst.period, T_quad, rel, abserr / T_quad);
        assert_close(inst.period, T_quad, 1e-12);
    }
    print_message("morse worst period vs quadrature: %.2e\n", worst);
}

/* Fourth-order central difference of the exact solution at t. */
static void derivative(const dm_instance *inst, double t, double h, double *dq, double *dp)
{
    double q[4][1], p[4][1];
    const double off[4] = { -2.0, -1.0, 1.0, 2.0 };
    for (int k = 0; k < 4; k++)
        inst->problem->exact(inst, t + off[k] * h, q[k], p[k]);
    *dq = (q[0][0] - 8.0 * q[1][0] + 8.0 * q[2][0] - q[3][0]) / (12.0 * h);
    *dp = (p[0][0] - 8.0 * p[1][0] + 8.0 * p[2][0] - p[3][0]) / (12.0 * h);
}

static void morse_exact_solution_satisfies_hamiltons_equations(void **state)
{
    const double amplitudes[] = { -0.5, -0.05, 0.05, 0.8, 3.0 };
    for (size_t i = 0; i < sizeof amplitudes / sizeof amplitudes[0]; i++) {
        const char *keys[] = { "D", "alpha", "mass", "amplitude" };
        const double values[] = { 2.0, 1.3, 0.7, amplitudes[i] };
        dm_instance inst = make(4, keys, values);
        double T = inst.period;
        /* scales: the largest speed and force along the orbit */
        double vmax = sqrt(2.0 * inst.energy / 0.7), gmax = 0.0;
        for (int k = 0; k <= 400; k++) {
            double q[1], p[1], g[1];
            inst.problem->exact(&inst, T * k / 400.0, q, p);
            inst.problem->force(&inst, q, g);
            gmax = gmax > fabs(g[0]) ? gmax : fabs(g[0]);
        }
        /* the fastest time scale is the wall bounce ~ 1 / w0, not the period */
        double h = 2e-3 / (1.3 * sqrt(2.0 * 2.0 / 0.7)), worst = 0.0;
        for (int k = 0; k < 37; k++) {
            double t = 0.137 * T * k; /* about five periods, off any grid */
            double q[1], p[1], v[1], g[1], dq, dp;
            inst.problem->exact(&inst, t, q, p);
            inst.problem->velocity(&inst, p, v);
            inst.problem->force(&inst, q, g);
            derivative(&inst, t, h, &dq, &dp);
            double e1 = fabs(dq - v[0]) / vmax, e2 = fabs(dp + g[0]) / gmax;
            worst = e1 > worst ? e1 : worst;
            worst = e2 > worst ? e2 : worst;
            /* truncation h^4 f^(5) / 30 and round-off eps / h: both ~1e-11 here */
            assert_true(e1 < 1e-8);
            assert_true(e2 < 1e-8);
        }
        print_message("morse amplitude %g: worst |dq/dt - p/m|, |dp/dt + V'| %.2e\n",
                      amplitudes[i], worst);
    }
}

static void morse_exact_solution_conserves_energy_over_five_periods(void **state)
{
    const double ratios[] = { 1e-8, 0.2, 0.75, 0.99, 1.0 - 1e-6 };
    for (size_t i = 0; i < sizeof ratios / sizeof ratios[0]; i++) {
        const char *keys[] = { "D", "alpha", "mass", "energy" };
        const double values[] = { 1.7, 0.8, 2.2, ratios[i] * 1.7 };
        dm_instance inst = make(4, keys, values);
        double worst = 0.0;
        for (int k = 0; k <= 1000; k++) {
            double t = 5.0 * inst.period * k / 1000.0 + 1e-3 * k;
            double q[1], p[1];
            inst.problem->exact(&inst, t, q, p);
            double r = dm_rel_diff(dm_instance_energy(&inst, q, p), inst.energy);
            worst = r > worst ? r : worst;
        }
        print_message("morse E/D = %.10g: worst relative energy error of the exact orbit "
                      "%.2e\n", ratios[i], worst);
        assert_true(worst < 1e-13);
    }
}

static void morse_exact_solution_starts_at_rest_and_returns_each_period(void **state)
{
    const double amplitudes[] = { -0.69, -0.3, 0.4, 6.0 };
    for (size_t i = 0; i < sizeof amplitudes / sizeof amplitudes[0]; i++) {
        const char *keys[] = { "amplitude", "xe" };
        const double values[] = { amplitudes[i], -2.0 };
        dm_instance inst = make(2, keys, values);
        assert_true(inst.q0[0] == -2.0 + amplitudes[i]);
        assert_true(inst.p0[0] == 0.0);
        for (int n = 0; n <= 7; n++) {
            double q[1], p[1];
            inst.problem->exact(&inst, n * inst.period, q, p);
            assert_close(q[0], inst.q0[0], 1e-14);
            assert_true(fabs(p[0]) < 1e-14);
        }
    }
}

static void morse_first_crossing_is_the_upward_passage_through_xe(void **state)
{
    const double amplitudes[] = { -0.6, -1e-3, 1e-3, 0.9, 9.0 };
    for (size_t i = 0; i < sizeof amplitudes / sizeof amplitudes[0]; i++) {
        const char *keys[] = { "amplitude", "xe", "alpha" };
        const double values[] = { amplitudes[i], 1.5, 1.1 };
        dm_instance inst = make(3, keys, values);
        assert_true(inst.first_crossing > 0.0 && inst.first_crossing <= inst.period);
        double q[1], p[1];
        inst.problem->exact(&inst, inst.first_crossing, q, p);
        /* the time carries rounding eps t, the position that times the speed */
        double tol = 4e-16 * (1.0 + inst.first_crossing * fabs(p[0]));
        if (!(fabs(q[0] - 1.5) < tol))
            print_error("x(first_crossing) - xe = %.3e > %.3e\n", q[0] - 1.5, tol);
        assert_true(fabs(q[0] - 1.5) < tol);
        assert_true(p[0] > 0.0);
        /* the library's generic bisection on the exact orbit finds the same time */
        double t = dm_first_crossing_from_exact(&inst);
        assert_close(t, inst.first_crossing, 1e-12);
    }
    /* energy=E starts at the inner turning point, below xe */
    const char *keys[] = { "energy", "xe" };
    const double values[] = { 0.5, 1.5 };
    dm_instance inst = make(2, keys, values);
    assert_true(inst.q0[0] < 1.5);
    assert_close(inst.q0[0], 1.5 - log1p(sqrt(0.5)), 1e-15);
}

static void morse_small_amplitude_period_tends_to_the_harmonic_limit(void **state)
{
    /* T -> 2 pi / (alpha sqrt(2 D / m)) as the amplitude -> 0 (common practice: the
     * curvature of V at xe is 2 D alpha^2); the leading correction is (E / D) / 2. */
    const double D = 3.2, alpha = 0.45, m = 1.9;
    const double T0 = 2.0 * M_PI / (alpha * sqrt(2.0 * D / m));
    const double amplitudes[] = { 1e-3, -1e-5, 1e-7 };
    for (size_t i = 0; i < sizeof amplitudes / sizeof amplitudes[0]; i++) {
        const char *keys[] = { "D", "alpha", "mass", "amplitude" };
        const double values[] = { D, alpha, m, amplitudes[i] };
        dm_instance inst = make(4, keys, values);
        double eps = inst.energy / D;
        assert_true(inst.period > T0);
        assert_close(inst.period, T0, eps); /* relative excess ~ eps / 2 */
    }
}

static void morse_hessian_matches_differences_of_the_force(void **state)
{
    const char *keys[] = { "D", "alpha", "xe" };
    const double values[] = { 2.5, 1.7, 0.3 };
    dm_instance inst = make(3, keys, values);
    for (double x = -0.2; x < 3.0; x += 0.37) {
        double h = 1e-5, gp[1], gm[1], hess[1];
        double qp[1] = { x + h }, qm[1] = { x - h }, q[1] = { x };
        inst.problem->force(&inst, qp, gp);
        inst.problem->force(&inst, qm, gm);
        inst.problem->hessian(&inst, q, hess);
        double scale = 2.0 * 2.5 * 1.7 * 1.7 * exp(-1.7 * (x - 0.3)) * (1.0 + 2.0 * exp(-1.7 * (x - 0.3)));
        assert_true(fabs(hess[0] - (gp[0] - gm[0]) / (2.0 * h)) < 1e-8 * scale);
    }
    /* V = D (1 - y)^2 through force() and potential() agree */
    double q[1] = { 0.9 }, g[1];
    assert_true(inst.problem->force(&inst, q, g) == inst.problem->potential(&inst, q));
}

/* One refusal: DM_EINPUT and a message naming the problem and the cause. */
static void expect_refusal(size_t n, const char *const *keys, const double *values,
                           const char *needle)
{
    dm_instance inst;
    dm_error err;
    dm_error_clear(&err);
    dm_status st = dm_instance_init(&inst, morse(), n, keys, values, &err);
    if (st != DM_EINPUT || strstr(err.msg, needle) == NULL || strchr(err.msg, '\n'))
        print_error("status %d, message '%s' (wanted '%s')\n", st, err.msg, needle);
    assert_int_equal(st, DM_EINPUT);
    assert_non_null(strstr(err.msg, needle));
    assert_non_null(strstr(err.msg, "morse"));
    assert_null(strchr(err.msg, '\n'));
}

static void morse_refuses_unbound_equilibrium_and_bad_parameters(void **state)
{
    const char *k_energy[] = { "energy" };
    const char *k_amp[] = { "amplitude" };
    const char *k_de[] = { "D", "energy" };
    expect_refusal(1, k_energy, (double[]){ 1.0 }, "unbound");     /* E = D */
    expect_refusal(1, k_energy, (double[]){ 1.0 }, "no period");
    expect_refusal(1, k_energy, (double[]){ 7.5 }, "unbound");     /* E > D */
    expect_refusal(2, k_de, (double[]){ 0.3, 0.31 }, "unbound");
    /* x0 - xe < -ln 2 / alpha puts the start above the dissociation energy */
    expect_refusal(1, k_amp, (double[]){ -log(2.0) - 1e-9 }, "unbound");
    expect_refusal(1, k_amp, (double[]){ -40.0 }, "unbound");
    expect_refusal(1, k_amp, (double[]){ 0.0 }, "equilibrium");
    expect_refusal(1, k_energy, (double[]){ 0.0 }, "outside its range");
    expect_refusal(1, k_energy, (double[]){ -0.2 }, "outside its range");
    expect_refusal(2, (const char *[]){ "amplitude", "energy" }, (double[]){ 0.1, 0.1 },
                   "not both");
    expect_refusal(1, (const char *[]){ "D" }, (double[]){ 0.0 }, "outside its range");
    expect_refusal(1, (const char *[]){ "alpha" }, (double[]){ -1.0 }, "outside its range");
    expect_refusal(1, (const char *[]){ "mass" }, (double[]){ 0.0 }, "outside its range");
    expect_refusal(1, (const char *[]){ "mass" }, (double[]){ NAN }, "finite");
    expect_refusal(1, (const char *[]){ "D" }, (double[]){ INFINITY }, "finite");
    expect_refusal(1, (const char *[]){ "masss" }, (double[]){ 1.0 }, "did you mean 'mass'");
    /* an amplitude whose energy is exactly representable but just below D is bound */
    const char *keys[] = { "amplitude" };
    dm_instance inst = make(1, keys, (double[]){ -log(2.0) + 1e-6 });
    assert_true(inst.energy < 1.0 && isfinite(inst.period));
}

int main(void)
{
    gsl_set_error_handler_off(); /* statuses are judged by the tests */
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(morse_period_matches_gsl_quadrature_of_the_orbit_integral),
        cmocka_unit_test(morse_exact_solution_satisfies_hamiltons_equations),
        cmocka_unit_test(morse_exact_solution_conserves_energy_over_five_periods),
        cmocka_unit_test(morse_exact_solution_starts_at_rest_and_returns_each_period),
        cmocka_unit_test(morse_first_crossing_is_the_upward_passage_through_xe),
        cmocka_unit_test(morse_small_amplitude_period_tends_to_the_harmonic_limit),
        cmocka_unit_test(morse_hessian_matches_differences_of_the_force),
        cmocka_unit_test(morse_refuses_unbound_equilibrium_and_bad_parameters),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
