/* test_double_well.c — the quartic double well's closed-form periods against GSL
 * quadrature, its exact solutions against the equation of motion, its section crossings,
 * facts of the trade and every class of bad input. */
#include "dm_test_util.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_sf_ellint.h>

#include "problem.h"

enum { P_A, P_B };

static dm_status make(dm_instance *inst, size_t n, const char *const *keys,
                      const double *values, dm_error *err)
{
    return dm_instance_init(inst, dm_problem_find("double_well"), n, keys, values, err);
}

typedef struct start_case {
    const char *key;
    double value, a, b, side;
} start_case;

static dm_instance must_make(const start_case *c)
{
    const char *keys[4] = { c->key, "a", "b", "side" };
    double values[4] = { c->value, c->a, c->b, c->side };
    size_t n = c->key[0] == 'e' ? 4 : 3;
    dm_instance inst;
    dm_error err = { 0 };
    if (make(&inst, n, keys, values, &err) != DM_OK) {
        print_error("%s\n", err.msg);
        fail();
    }
    return inst;
}

/* Both regimes, both wells, starts at the outer and the inner turning point, a, b != 1,
 * and energies within 1e-6 and much closer of the separatrix E = 0 on both sides. Near
 * the separatrix b is a power of two so that the test's own b x0^2 - 2a (one fma) is
 * exact enough to be a reference. */
static const start_case cases[] = {
    { "amplitude", 1.3, 1, 1, 0 },       { "amplitude", -1.05, 1, 1, 0 },
    { "amplitude", 1.414, 1, 1, 0 },     { "amplitude", 0.5, 1, 1, 0 },
    { "amplitude", -0.3, 1, 1, 0 },      { "amplitude", 1e-4, 1, 1, 0 },
    { "amplitude", 1.0, 3, 4, 0 },       { "amplitude", 0.5, 3, 4, 0 },
    { "amplitude", 2.0, 1, 1, 0 },       { "amplitude", -1.6, 1, 1, 0 },
    { "amplitude", 1.3, 3, 4, 0 },       { "amplitude", 2.5, 0.7, 1.9, 0 },
    { "energy", -0.1, 1, 1, 1 },         { "energy", -0.1, 1, 1, -1 },
    { "energy", -1e-6, 1, 1, 1 },        { "energy", -1e-9, 1, 1, -1 },
    { "energy", -1e-12, 1, 1, 1 },       { "energy", -1e-7, 2, 0.5, 1 },
    { "energy", 0.5, 1, 1, 1 },          { "energy", 0.5, 1, 1, -1 },
    { "energy", 1e-6, 1, 1, 1 },         { "energy", 1e-9, 1, 1, -1 },
    { "energy", 1e-12, 1, 1, 1 },        { "energy", 1e-7, 3, 4, 1 },
};
#define N_CASES (sizeof cases / sizeof cases[0])

/* ---- independent quadrature of T = closed integral of dx / x' ---- */

typedef struct quad_par {
    double b, outer, inner; /* inner: B (one well) or C with C^2 = A^2 - 2a/b (over) */
} quad_par;

/* One well: 2 (E - V) = (b/2) (A - x)(A + x)(x - B)(x + B) (E - V is a quadratic in x^2
 * with roots A^2, B^2); GSL qaws carries (x - B)^-1/2 (A - x)^-1/2. */
static double one_well_integrand(double x, void *vp)
{
    const quad_par *p = vp;
    return 1.0 / sqrt(0.5 * p->b * (p->outer + x) * (x + p->inner));
}

/* Over the barrier: 2 (E - V) = (b/2) (A - x)(A + x)(x^2 + C^2); qaws carries
 * (A - x)^-1/2. */
static double over_barrier_integrand(double x, void *vp)
{
    const quad_par *p = vp;
    return 1.0 / sqrt(0.5 * p->b * (p->outer + x) * (x * x + p->inner * p->inner));
}

static double quadrature_period(const dm_instance *inst)
{
    gsl_set_error_handler_off();
    double a = inst->param[P_A], b = inst->param[P_B], x0 = fabs(inst->q0[0]);
    /* b x0^2 - 2a; the other turning point from Vieta, A^2 + B^2 = 2a/b. */
    double d = fma(b * x0, x0, -2.0 * a);
    quad_par par = { .b = b };
    gsl_integration_workspace *w = gsl_integration_workspace_alloc(2000);
    double result = NAN, abserr = NAN;
    int status;
    if (d < 0.0) {
        double other = sqrt(-d / b);
        par.outer = fmax(x0, other);
        par.inner = fmin(x0, other);
        gsl_integration_qaws_table *t = gsl_integration_qaws_table_alloc(-0.5, -0.5, 0, 0);
        gsl_function f = { one_well_integrand, &par };
        status = gsl_integration_qaws(&f, par.inner, par.outer, t, 0.0, 2e-14, 2000, w,
                                      &result, &abserr);
        gsl_integration_qaws_table_free(t);
        result *= 2.0;
    } else {
        par.outer = x0;
        par.inner = sqrt(d / b);
        gsl_integration_qaws_table *t = gsl_integration_qaws_table_alloc(0.0, -0.5, 0, 0);
        gsl_function f = { over_barrier_integrand, &par };
        status = gsl_integration_qaws(&f, 0.0, x0, t, 0.0, 2e-14, 2000, w, &result, &abserr);
        gsl_integration_qaws_table_free(t);
        result *= 4.0;
    }
    gsl_integration_workspace_free(w);
    if (!(status == GSL_SUCCESS || status == GSL_EROUND)) {
        print_error("GSL quadrature status %d (%s)\n", status, gsl_strerror(status));
        fail();
    }
    return result;
}

static void closed_form_periods_match_gsl_quadrature_in_both_regimes(void **state)
{
    double worst = 0.0;
    int seen[2] = { 0, 0 };
    for (size_t i = 0; i < N_CASES; i++) {
        dm_instance inst = must_make(&cases[i]);
        seen[inst.regime]++;
        double T = quadrature_period(&inst);
        worst = fmax(worst, dm_rel_diff(inst.period, T));
        if (dm_rel_diff(inst.period, T) > 1e-12)
            print_error("case %zu: %s = %g\n", i, cases[i].key, cases[i].value);
        assert_close(inst.period, T, 1e-12); /* GSL qaws quadrature */
    }
    assert_true(seen[0] >= 8 && seen[1] >= 8);
    print_message("period vs quadrature: max relative difference %.2e\n", worst);
}

static void periods_agree_with_the_textbook_forms_for_a_equal_b_equal_1(void **state)
{
    /* The a = b = 1 forms (common practice; our REFERENCES.md), K from GSL
     * (gsl_sf_ellint_Kcomp takes the modulus sqrt(m)):
     * one well T = 2 sqrt2 K(m) / A, A^2 = 1 + sqrt(1 + 4E), B^2 = 1 - sqrt(1 + 4E),
     * m = (A^2 - B^2) / A^2; over the barrier T = 4 K(m) / w, w^2 = sqrt(1 + 4E),
     * m = A^2 / (2 w^2). */
    const double energies[] = { -0.2, -0.1, -0.01, 0.05, 0.3, 2.0 };
    for (int i = 0; i < 6; i++) {
        double E = energies[i];
        start_case c = { "energy", E, 1, 1, 1 };
        dm_instance inst = must_make(&c);
        double s = sqrt(1.0 + 4.0 * inst.energy), A2 = 1.0 + s, T;
        if (E < 0) {
            double m = (A2 - (1.0 - s)) / A2;
            T = 2.0 * M_SQRT2 * gsl_sf_ellint_Kcomp(sqrt(m), GSL_PREC_DOUBLE) / sqrt(A2);
            assert_string_equal(inst.problem->regimes[inst.regime].id, "one_well");
        } else {
            double m = A2 / (2.0 * s);
            T = 4.0 * gsl_sf_ellint_Kcomp(sqrt(m), GSL_PREC_DOUBLE) / sqrt(s);
            assert_string_equal(inst.problem->regimes[inst.regime].id, "over_barrier");
        }
        assert_close(inst.period, T, 1e-13);
    }
}

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
    for (size_t i = 0; i < N_CASES; i++) {
        dm_instance inst = must_make(&cases[i]);
        const dm_problem *pb = inst.problem;
        double a = inst.param[P_A], b = inst.param[P_B];
        double q, p;
        pb->exact(&inst, 0.0, &q, &p);
        assert_true(q == inst.q0[0] && p == inst.p0[0]);
        /* Scales: energy |E| + depth a^2/(4b); speed sqrt(2 (E - v_min)); force at the
         * outer turning point a A + b A^3 (common practice). */
        double escale = fabs(inst.energy) + fabs(inst.v_min);
        double A = sqrt((a + sqrt(a * a + 4.0 * b * inst.energy)) / b);
        double vscale = sqrt(2.0 * (inst.energy - inst.v_min)), fscale = a * A + b * A * A * A;
        double h = 1e-3 / sqrt(a);
        for (int k = 0; k <= 600; k++) {
            double t = 3.0 * inst.period * k / 600.0 + 0.01 * k;
            pb->exact(&inst, t, &q, &p);
            double e = fabs(dm_instance_energy(&inst, &q, &p) - inst.energy) / escale;
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
        /* One period later the orbit is back at the start. */
        pb->exact(&inst, inst.period, &q, &p);
        assert_true(fabs(q - inst.q0[0]) <= 1e-12 * A);
    }
    print_message("exact: energy drift %.2e (of scale), dq/dt %.2e, dp/dt %.2e (of scale)\n",
                  worst_energy, worst_q, worst_p);
}

static void first_crossing_is_the_first_upward_pass_through_the_section(void **state)
{
    for (size_t i = 0; i < N_CASES; i++) {
        dm_instance inst = must_make(&cases[i]);
        double a = inst.param[P_A], b = inst.param[P_B];
        double t = inst.first_crossing;
        assert_true(t > 0.0 && t <= inst.period);
        /* Sections: the bottom of the start's well in one well, x = 0 over the barrier. */
        double level = inst.regime == 0 ? copysign(sqrt(a / b), inst.q0[0]) : 0.0;
        assert_true(inst.section.coord == 0 && inst.section.wrap == 0.0);
        assert_true(fabs(inst.section.level - level) <= 2.0 * DBL_EPSILON * fabs(level));
        double q, p;
        inst.problem->exact(&inst, t, &q, &p);
        assert_true(fabs(q - level) <= 1e-12 * (1.0 + fabs(level)));
        assert_true(p > 0.0);
        double t_search = dm_first_crossing_from_exact(&inst);
        assert_true(fabs(t_search - t) <= 1e-12 * inst.period);
    }
}

static void minima_saddle_and_curvatures_of_the_unit_double_well(void **state)
{
    /* V = -x^2/2 + x^4/4: minima x = +-1 with V = -1/4, saddle x = 0 with V = 0;
     * V'' = 2 at the minima and -1 at the saddle (common practice). */
    start_case c = { "amplitude", 1.3, 1, 1, 0 };
    dm_instance inst = must_make(&c);
    const dm_problem *pb = inst.problem;
    assert_true(inst.has_v_min && inst.v_min == -0.25);
    const double xs[3] = { -1.0, 0.0, 1.0 }, vs[3] = { -0.25, 0.0, -0.25 },
                 hs[3] = { 2.0, -1.0, 2.0 };
    for (int i = 0; i < 3; i++) {
        double grad, hess;
        assert_true(pb->force(&inst, &xs[i], &grad) == vs[i]);
        assert_true(grad == 0.0);
        pb->hessian(&inst, &xs[i], &hess);
        assert_true(hess == hs[i]);
    }
    for (double x = -2.0; x <= 2.0; x += 0.13) {
        double grad, hess, gp, gm, h = 1e-5, xp = x + h, xm = x - h;
        double v = pb->force(&inst, &x, &grad);
        assert_true(v == pb->potential(&inst, &x));
        assert_true(fabs((pb->potential(&inst, &xp) - pb->potential(&inst, &xm)) / (2 * h) -
                         grad) <= 1e-9);
        pb->hessian(&inst, &x, &hess);
        pb->force(&inst, &xp, &gp);
        pb->force(&inst, &xm, &gm);
        assert_true(fabs((gp - gm) / (2 * h) - hess) <= 1e-8);
    }
}

static void small_oscillations_in_a_well_have_period_2_pi_over_sqrt_2a(void **state)
{
    /* V''(bottom) = 2a, so T -> 2 pi / sqrt(2a) (common practice). a = 3, b = 4. */
    start_case c = { "energy", -9.0 / 16.0 + 1e-12, 3, 4, -1 };
    dm_instance inst = must_make(&c);
    assert_close(inst.period, 2.0 * M_PI / sqrt(6.0), 1e-9);
}

static void expect_refusal(size_t n, const char *const *keys, const double *values,
                           const char *needle)
{
    dm_instance inst;
    dm_error err = { 0 };
    assert_int_equal(make(&inst, n, keys, values, &err), DM_EINPUT);
    if (strstr(err.msg, needle) == NULL || strncmp(err.msg, "double_well: ", 13) != 0 ||
        strchr(err.msg, '\n') != NULL) {
        print_error("message '%s' lacks '%s'\n", err.msg, needle);
        fail();
    }
}

static void every_bad_input_is_refused_with_a_message_naming_it(void **state)
{
    const char *e[] = { "energy" }, *am[] = { "amplitude" };
    const char *es[] = { "energy", "side" }, *as[] = { "amplitude", "side" };
    const char *ab[] = { "amplitude", "a", "b" }, *both[] = { "amplitude", "energy" };
    expect_refusal(1, e, (double[]){ 0.0 }, "separatrix");
    expect_refusal(1, e, (double[]){ -0.25 }, "bottom of the wells");
    expect_refusal(1, e, (double[]){ -0.3 }, "below the minimum");
    expect_refusal(1, am, (double[]){ 0.0 }, "saddle");
    expect_refusal(1, am, (double[]){ 1.0 }, "bottom of a well");
    expect_refusal(1, am, (double[]){ -1.0 }, "bottom of a well");
    expect_refusal(1, am, (double[]){ M_SQRT2 }, "separatrix");
    expect_refusal(3, ab, (double[]){ sqrt(2.0 * 3.0 / 4.0), 3.0, 4.0 }, "separatrix");
    expect_refusal(3, ab, (double[]){ 1.0, 0.0, 1.0 }, "a = 0 is outside its range");
    expect_refusal(3, ab, (double[]){ 1.0, 1.0, -2.0 }, "b = -2 is outside its range");
    expect_refusal(2, es, (double[]){ -0.1, 0.5 }, "side = 0.5 must be +1");
    expect_refusal(2, es, (double[]){ -0.1, 2.0 }, "side = 2 is outside its range");
    expect_refusal(2, as, (double[]){ 1.3, -1.0 }, "side applies only with energy");
    expect_refusal(2, both, (double[]){ 1.3, -0.1 }, "not both");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(closed_form_periods_match_gsl_quadrature_in_both_regimes),
        cmocka_unit_test(periods_agree_with_the_textbook_forms_for_a_equal_b_equal_1),
        cmocka_unit_test(exact_solutions_obey_the_equation_of_motion_and_conserve_energy),
        cmocka_unit_test(first_crossing_is_the_first_upward_pass_through_the_section),
        cmocka_unit_test(minima_saddle_and_curvatures_of_the_unit_double_well),
        cmocka_unit_test(small_oscillations_in_a_well_have_period_2_pi_over_sqrt_2a),
        cmocka_unit_test(every_bad_input_is_refused_with_a_message_naming_it),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
