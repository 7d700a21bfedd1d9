/* test_pendulum.c — the pendulum's closed-form periods against GSL quadrature, its exact
 * solutions against the equation of motion, its section crossings, facts of the trade
 * and every class of bad input. */
#include "dm_test_util.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_sf_ellint.h>

#include "problem.h"

static dm_status make(dm_instance *inst, const char *k1, double v1, const char *k2, double v2,
                      dm_error *err)
{
    const char *keys[2] = { k1, k2 };
    double values[2] = { v1, v2 };
    return dm_instance_init(inst, dm_problem_find("pendulum"), k2 ? 2 : 1, keys, values, err);
}

static dm_instance must_make(const char *k1, double v1, const char *k2, double v2)
{
    dm_instance inst;
    dm_error err = { 0 };
    dm_status s = make(&inst, k1, v1, k2, v2, &err);
    if (s != DM_OK) {
        print_error("%s\n", err.msg);
        fail();
    }
    return inst;
}

/* ---- independent quadrature of T = closed integral of dtheta / theta' ---- */

typedef struct quad_par {
    double g, theta0, c;
} quad_par;

/* Libration: T = 4 int_0^theta0 dtheta / sqrt(2 g (cos theta - cos theta0)). In
 * d = theta0 - theta, cos theta - cos theta0 = 2 sin(d/2) sin(theta0 - d/2), and
 * sin(theta0 - d/2) = sin(delta0 + d/2) with delta0 = pi - theta0 taken exactly: next to
 * the separatrix the orbit spends most of its time where theta0 - d/2 is within 1e-6 of
 * pi, and forming theta0 - d/2 there would lose 10 digits. GSL qaws carries the weight
 * d^-1/2; this is the smooth rest. */
static double libration_integrand(double d, void *vp)
{
    const quad_par *p = vp;
    double sinc = d > 0.0 ? sin(0.5 * d) / d : 0.5;
    return 1.0 / sqrt(4.0 * p->g * sinc * sin(p->c + 0.5 * d));
}

/* Rotation: T = int_{-pi}^{pi} dtheta / sqrt(2 (E + g cos theta)) with
 * 2 (E + g cos theta) = (p0^2 - 4 g) + 4 g sin^2(psi/2), psi = pi - theta, for the start
 * theta = 0, p = p0; integrated in psi so that the peak at the top (width ~ sqrt(E - g))
 * is sampled at points known to full relative precision. */
static double rotation_integrand(double psi, void *vp)
{
    const quad_par *p = vp;
    double sh = sin(0.5 * psi);
    return 1.0 / sqrt(p->c + 4.0 * p->g * sh * sh);
}

static double quadrature_period(const dm_instance *inst)
{
    gsl_set_error_handler_off();
    double g = inst->param[0];
    quad_par par = { .g = g, .theta0 = fabs(inst->q0[0]) };
    gsl_integration_workspace *w = gsl_integration_workspace_alloc(2000);
    double result = NAN, abserr = NAN;
    int status;
    if (inst->regime == 0) {
        gsl_integration_qaws_table *table = gsl_integration_qaws_table_alloc(-0.5, 0.0, 0, 0);
        gsl_function f = { libration_integrand, &par };
        /* pi - theta0 to ~1e-32: M_PI - theta0 is exact (Sterbenz), plus pi's tail. */
        par.c = (M_PI - par.theta0) + 1.2246467991473531772e-16;
        status = gsl_integration_qaws(&f, 0.0, par.theta0, table, 0.0, 2e-14, 2000, w,
                                      &result, &abserr);
        gsl_integration_qaws_table_free(table);
        result *= 4.0;
    } else {
        double p0 = inst->p0[0];
        par.c = fma(p0, p0, -4.0 * g);
        gsl_function f = { rotation_integrand, &par };
        status = gsl_integration_qags(&f, 0.0, M_PI, 0.0, 2e-14, 2000, w, &result, &abserr);
        result *= 2.0;
    }
    gsl_integration_workspace_free(w);
    /* GSL may report that 2e-14 is out of reach while its answer is well inside 1e-12;
     * the comparison below is the judge, but a hard failure is not acceptable. */
    if (!(status == GSL_SUCCESS || status == GSL_EROUND)) {
        print_error("GSL quadrature status %d (%s), result %.17g +- %.3g\n", status,
                    gsl_strerror(status), result, abserr);
        fail();
    }
    return result;
}

/* The states every check below runs on: both regimes, g != 1, and energies within 1e-6
 * and much closer of the separatrix E = g on both sides. */
typedef struct start_case {
    const char *key;
    double value, g;
} start_case;

static const start_case cases[] = {
    { "amplitude", 0.1, 1.0 },          { "amplitude", 1.0, 1.0 },
    { "amplitude", 2.5, 1.0 },          { "amplitude", -2.0, 2.3 },
    { "amplitude", 3.14, 1.0 },         { "energy", 0.3, 1.0 },
    { "energy", 1.0 - 1e-6, 1.0 },      { "energy", 1.0 - 1e-9, 1.0 },
    { "energy", 1.0 - 1e-12, 1.0 },     { "energy", 2.3 * (1.0 - 1e-7), 2.3 },
    { "energy", 1.5, 1.0 },             { "energy", 7.0, 2.3 },
    { "energy", 1.0 + 1e-6, 1.0 },      { "energy", 1.0 + 1e-9, 1.0 },
    { "energy", 1.0 + 1e-12, 1.0 },     { "energy", 2.3 * (1.0 + 1e-7), 2.3 },
};
#define N_STATES (sizeof cases / sizeof cases[0])

static dm_instance state_instance(size_t i)
{
    return must_make(cases[i].key, cases[i].value, "g_over_l", cases[i].g);
}

static void period_at_amplitude_2_5_is_10_323162865869115(void **state)
{
    dm_instance inst = must_make("amplitude", 2.5, NULL, 0);
    /* mpmath: 4 * ellipk(sin(mpf(2.5)/2)**2) = 10.32316286586911534945. */
    assert_close(inst.period, 10.323162865869115, 2.0 * DBL_EPSILON);
    assert_string_equal(inst.problem->regimes[inst.regime].id, "libration");

    char out[4096], err[4096];
    int rc = dm_run_capture(DM_EXE " period pendulum amplitude=2.5", out, sizeof out, err,
                            sizeof err);
    assert_int_equal(rc, 0);
    assert_non_null(strstr(out, "10.32316286586911"));
}

static void closed_form_periods_match_gsl_quadrature_in_both_regimes(void **state)
{
    double worst = 0.0;
    for (size_t i = 0; i < N_STATES; i++) {
        dm_instance inst = state_instance(i);
        double expect_regime = cases[i].key[0] == 'e' && cases[i].value > cases[i].g;
        assert_int_equal(inst.regime, (int)expect_regime);
        double T = quadrature_period(&inst);
        worst = fmax(worst, dm_rel_diff(inst.period, T));
        assert_close(inst.period, T, 1e-12); /* GSL qaws / qags quadrature */
    }
    print_message("period vs quadrature: max relative difference %.2e\n", worst);
}

static void rotation_period_is_2_k_K_of_k_squared_over_w0(void **state)
{
    /* The formula as our references state it, T = 2 k K(k^2) / w0 with
     * k^2 = 2 / (1 + E / w0^2) (common practice), with K from GSL (gsl_sf_ellint_Kcomp
     * takes the modulus k), against the quadrature of the same orbit and our period. */
    const double energies[] = { 1.2, 3.0, 5.0, 40.0 }, gs[] = { 1.0, 2.0 };
    for (int i = 0; i < 4; i++) {
        for (int j = 0; j < 2; j++) {
            dm_instance inst = must_make("energy", energies[i] * gs[j], "g_over_l", gs[j]);
            double w0 = sqrt(gs[j]);
            double k = sqrt(2.0 / (1.0 + inst.energy / gs[j]));
            double T = 2.0 * k * gsl_sf_ellint_Kcomp(k, GSL_PREC_DOUBLE) / w0;
            assert_close(T, quadrature_period(&inst), 1e-12);
            assert_close(inst.period, T, 1e-13);
        }
    }
}

/* 4th-order central difference of the exact solution. */
static void exact_derivative(const dm_instance *inst, double t, double h, double *dq, double *dp)
{
    double q[4], p[4];
    const double off[4] = { -2.0, -1.0, 1.0, 2.0 };
    for (int i = 0; i < 4; i++)
        inst->problem->exact(inst, t + off[i] * h, &q[i], &p[i]);
    *dq = (8.0 * (q[2] - q[1]) - (q[3] - q[0])) / (12.0 * h);
    *dp = (8.0 * (p[2] - p[1]) - (p[3] - p[0])) / (12.0 * h);
}

static void exact_solutions_obey_the_equation_of_motion_and_conserve_energy(void **state)
{
    double worst_energy = 0.0, worst_q = 0.0, worst_p = 0.0;
    for (size_t i = 0; i < N_STATES; i++) {
        dm_instance inst = state_instance(i);
        const dm_problem *pb = inst.problem;
        double g = inst.param[0], w0 = sqrt(g);
        double q, p;
        pb->exact(&inst, 0.0, &q, &p);
        assert_true(fabs(q - inst.q0[0]) <= 2.0 * DBL_EPSILON * fabs(inst.q0[0]));
        assert_true(fabs(p - inst.p0[0]) <= 2.0 * DBL_EPSILON * fabs(inst.p0[0]));
        /* Energy scale: w0^2 = g, half the potential's range (common practice). */
        double vscale = 2.0 * w0 + fabs(inst.p0[0]), fscale = g;
        double h = 1e-3 / w0;
        for (int k = 0; k <= 600; k++) {
            double t = 3.0 * inst.period * k / 600.0 + 0.01 * k / w0;
            pb->exact(&inst, t, &q, &p);
            double e = fabs(dm_instance_energy(&inst, &q, &p) - inst.energy) / g;
            worst_energy = fmax(worst_energy, e);
            assert_true(e <= 1e-13);
            double dq, dp, v, grad;
            exact_derivative(&inst, t, h, &dq, &dp);
            pb->velocity(&inst, &p, &v);
            pb->force(&inst, &q, &grad);
            worst_q = fmax(worst_q, fabs(dq - v) / vscale);
            worst_p = fmax(worst_p, fabs(dp + grad) / fscale);
            assert_true(fabs(dq - v) <= 1e-9 * vscale);
            assert_true(fabs(dp + grad) <= 1e-9 * fscale);
        }
    }
    print_message("exact: energy drift %.2e (of g), dq/dt %.2e, dp/dt %.2e (of scale)\n",
                  worst_energy, worst_q, worst_p);
}

static void first_crossing_is_the_first_upward_pass_through_the_section(void **state)
{
    for (size_t i = 0; i < N_STATES; i++) {
        dm_instance inst = state_instance(i);
        const dm_section *s = &inst.section;
        double t = inst.first_crossing;
        assert_true(t > 0.0 && t <= inst.period);
        double q, p;
        inst.problem->exact(&inst, t, &q, &p);
        double off = q - s->level;
        if (s->wrap > 0)
            off -= s->wrap * nearbyint(off / s->wrap);
        assert_true(fabs(off) <= 1e-12 * (1.0 + fabs(q)));
        assert_true(p > 0.0); /* upward */
        /* The library's independent search (grid of 4096, then bisection) finds the same
         * first crossing, to within the time the orbit takes to move a few ulps of q at
         * the section (next to the separatrix a rotation creeps over the top at
         * p ~ sqrt(E - g)). */
        double t_search = dm_first_crossing_from_exact(&inst);
        double slack = 1e-12 * inst.period + 16.0 * DBL_EPSILON * (1.0 + fabs(q)) / p;
        if (!(fabs(t_search - t) <= slack)) {
            print_error("%s = %.17g: first_crossing %.17g, search %.17g, period %.17g\n",
                        cases[i].key, cases[i].value, t, t_search, inst.period);
            fail();
        }
    }
    dm_instance lib = must_make("amplitude", 1.0, NULL, 0);
    assert_true(lib.section.level == 0.0 && lib.section.wrap == 0.0);
    dm_instance rot = must_make("energy", 3.0, NULL, 0);
    assert_true(rot.section.level == M_PI && rot.section.wrap == 2.0 * M_PI);
}

static void force_and_hessian_are_the_derivatives_of_the_potential(void **state)
{
    dm_instance inst = must_make("g_over_l", 2.3, NULL, 0);
    const dm_problem *pb = inst.problem;
    for (double q = -7.0; q <= 7.0; q += 0.31) {
        double grad, h = 1e-5, hess, gp, gm;
        double v = pb->force(&inst, &q, &grad);
        assert_true(v == pb->potential(&inst, &q));
        double qp = q + h, qm = q - h;
        double fd = (pb->potential(&inst, &qp) - pb->potential(&inst, &qm)) / (2.0 * h);
        assert_true(fabs(fd - grad) <= 1e-9);
        pb->hessian(&inst, &q, &hess);
        pb->force(&inst, &qp, &gp);
        pb->force(&inst, &qm, &gm);
        assert_true(fabs((gp - gm) / (2.0 * h) - hess) <= 1e-9);
    }
}

static void small_amplitude_period_tends_to_2_pi_sqrt_l_over_g(void **state)
{
    /* T -> 2 pi sqrt(L/g), and T / T0 = 1 + theta0^2 / 16 + ... (common practice). */
    dm_instance inst = must_make("amplitude", 1e-3, "g_over_l", 4.0);
    double T0 = 2.0 * M_PI / 2.0;
    assert_close(inst.period / T0 - 1.0, 1e-6 / 16.0, 1e-5);
    /* 1e-5 rad: T / T0 - 1 = 6.25e-12, still told from round-off */
    assert_close(must_make("amplitude", 1e-5, "g_over_l", 4.0).period, T0, 1e-11);
    /* 1e-8 rad: H0 - V_min = 5e-17 beside V = -1, below what a run in double precision
     * resolves (issue 12): refused, as energy -0.9999999999999999 is */
    dm_instance tiny;
    dm_error err;
    assert_int_equal(make(&tiny, "amplitude", 1e-8, "g_over_l", 4.0, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "below what double precision resolves"));
    assert_int_equal(make(&tiny, "energy", -0.9999999999999999, NULL, 0, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "the energy scale H0 - V_min is 1.11e-16"));
}

static void handbook_period_ratios_at_30_60_and_90_degrees(void **state)
{
    /* T / (2 pi sqrt(L/g)) = 1.01741, 1.07318, 1.18034 at 30, 60, 90 degrees: from memory
     * of the handbook tables of 2 K(sin^2(theta0/2)) / pi (Abramowitz & Stegun Table
     * 17.1), quoted to 6 digits. */
    const double deg[] = { 30.0, 60.0, 90.0 }, ratio[] = { 1.01741, 1.07318, 1.18034 };
    for (int i = 0; i < 3; i++) {
        dm_instance inst = must_make("amplitude", deg[i] * M_PI / 180.0, NULL, 0);
        assert_true(fabs(inst.period / (2.0 * M_PI) - ratio[i]) <= 5e-6);
    }
}

static void hanging_rest_and_inverted_state_energies(void **state)
{
    dm_instance inst2;
    dm_error err;
    /* Nondimensional pendulum: hanging at rest E = -1 = v_min, inverted state E = +1
     * (the separatrix) (common practice). */
    dm_instance inst = must_make("amplitude", 1e-5, NULL, 0);
    assert_true(inst.has_v_min && inst.v_min == -1.0);
    assert_close(inst.energy, -1.0, 1e-10);
    dm_instance near_top = must_make("amplitude", M_PI - 1e-6, NULL, 0);
    assert_close(near_top.energy, 1.0, 1e-12);
    /* pi - 1e-9: E = 1 - 5e-19 rounds to 1, the separatrix, in the run's double
     * precision: refused (issue 12) */
    assert_int_equal(make(&inst2, "amplitude", M_PI - 1e-9, NULL, 0, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "outside the libration regime"));
    assert_int_equal(make(&inst2, "energy", -1.0, NULL, 0, &err), DM_EINPUT);
    assert_int_equal(make(&inst2, "energy", 1.0, NULL, 0, &err), DM_EINPUT);
}

static void expect_refusal(const char *k1, double v1, const char *k2, double v2,
                           const char *needle)
{
    dm_instance inst;
    dm_error err = { 0 };
    assert_int_equal(make(&inst, k1, v1, k2, v2, &err), DM_EINPUT);
    if (strstr(err.msg, needle) == NULL || strncmp(err.msg, "pendulum: ", 10) != 0 ||
        strchr(err.msg, '\n') != NULL) {
        print_error("message '%s' lacks '%s'\n", err.msg, needle);
        fail();
    }
}

static void every_bad_input_is_refused_with_a_message_naming_it(void **state)
{
    expect_refusal("amplitude", M_PI, NULL, 0, "separatrix");
    expect_refusal("amplitude", -M_PI, NULL, 0, "separatrix");
    expect_refusal("amplitude", 0.0, NULL, 0, "equilibrium");
    expect_refusal("amplitude", 3.5, NULL, 0, "amplitude = 3.5 is outside its range");
    /* as typed, not 3.2999999999999998 */
    expect_refusal("amplitude", 3.3, NULL, 0, "amplitude = 3.3 is outside its range");
    expect_refusal("amplitude", -4.0, NULL, 0, "amplitude = -4 is outside its range");
    expect_refusal("energy", 1.0, NULL, 0, "separatrix");
    expect_refusal("energy", 2.0, "g_over_l", 2.0, "separatrix");
    expect_refusal("energy", -1.0, NULL, 0, "equilibrium");
    expect_refusal("energy", -1.5, NULL, 0, "below the minimum");
    expect_refusal("energy", -1.0 - 1e-15, NULL, 0, "impossible");
    expect_refusal("energy", 1.0 + 1e-17, NULL, 0, "separatrix"); /* rounds to 1 */
    expect_refusal("g_over_l", 0.0, NULL, 0, "g_over_l = 0 is outside its range");
    expect_refusal("g_over_l", -1.0, NULL, 0, "g_over_l");
    expect_refusal("amplitude", 1.0, "energy", 0.5, "not both");
    expect_refusal("amplitud", 1.0, NULL, 0, "did you mean 'amplitude'");

    /* Through the command line: exit status 2 and one line on stderr. */
    char out[4096], err[4096];
    int rc = dm_run_capture(DM_EXE " period pendulum amplitude=3.141592653589793", out,
                            sizeof out, err, sizeof err);
    assert_int_equal(rc, 2);
    assert_non_null(strstr(err, "separatrix"));
    assert_true(strchr(err, '\n') == err + strlen(err) - 1);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(period_at_amplitude_2_5_is_10_323162865869115),
        cmocka_unit_test(closed_form_periods_match_gsl_quadrature_in_both_regimes),
        cmocka_unit_test(rotation_period_is_2_k_K_of_k_squared_over_w0),
        cmocka_unit_test(exact_solutions_obey_the_equation_of_motion_and_conserve_energy),
        cmocka_unit_test(first_crossing_is_the_first_upward_pass_through_the_section),
        cmocka_unit_test(force_and_hessian_are_the_derivatives_of_the_potential),
        cmocka_unit_test(small_amplitude_period_tends_to_2_pi_sqrt_l_over_g),
        cmocka_unit_test(handbook_period_ratios_at_30_60_and_90_degrees),
        cmocka_unit_test(hanging_rest_and_inverted_state_energies),
        cmocka_unit_test(every_bad_input_is_refused_with_a_message_naming_it),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
