/* test_kepler.c — the planar Kepler problem: the period against GSL quadrature of the
 * radial motion, Kepler's equation solved to machine precision over the whole (M, e)
 * range, the exact orbit against its equations of motion and its invariants, the
 * section, and the refusal of unbound or meaningless orbits. */
#include "dm_test_util.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include "kepler.h"
#include "problem.h"

static const dm_problem *kepler(void)
{
    const dm_problem *p = dm_problem_find("kepler");
    assert_non_null(p);
    return p;
}

static dm_instance make(double mu, double a, double e)
{
    const char *keys[] = { "mu", "semi_major_axis", "eccentricity" };
    const double values[] = { mu, a, e };
    dm_instance inst;
    dm_error err;
    dm_error_clear(&err);
    dm_status st = dm_instance_init(&inst, kepler(), 3, keys, values, &err);
    if (st != DM_OK)
        print_error("unexpected error: %s\n", err.msg);
    assert_int_equal(st, DM_OK);
    return inst;
}

/* ---- the period from the radial motion ----
 * From the starting state alone: energy E = |p|^2 / 2 - mu / r and angular momentum
 * L = q x p give r'^2 = 2 (E + mu / r) - L^2 / r^2, whose zeros (the roots of
 * 2 E r^2 + 2 mu r - L^2) are periapsis and apoapsis; T = 2 int_{rp}^{ra} dr / r'.
 * GSL's qaws weight (r - rp)^-1/2 (ra - r)^-1/2 takes the end singularities, and
 * f(r) = sqrt((r - rp)(ra - r)) / r' is evaluated from r' as defined, directly. */
typedef struct radial {
    double mu, E, L, rp, ra;
} radial;

static double radial_f(double r, void *params)
{
    const radial *k = params;
    double w = (r - k->rp) * (k->ra - r);
    if (w > 0.0025 * (k->ra - k->rp) * (k->ra - k->rp)) {
        /* the bulk (more than ~5% of the span from either end): r' as defined */
        double rdot2 = 2.0 * (k->E + k->mu / r) - k->L * k->L / (r * r);
        return sqrt(w / rdot2);
    }
    /* Near a turning point the three terms of r'^2 cancel; there r'^2 is evaluated as
     * the quadratic it is, (2 E r^2 + 2 mu r - L^2) / r^2 = -2 E (r - rp)(ra - r) / r^2,
     * so f = r / sqrt(-2 E). (The test below checks both forms agree in the bulk.) */
    return r / sqrt(-2.0 * k->E);
}

static double period_by_radial_quadrature(const dm_instance *inst, double *abserr)
{
    const double *q = inst->q0, *p = inst->p0;
    radial k = { .mu = inst->param[0] };
    double r0 = hypot(q[0], q[1]);
    k.E = 0.5 * (p[0] * p[0] + p[1] * p[1]) - k.mu / r0;
    k.L = q[0] * p[1] - q[1] * p[0];
    /* roots of 2 E r^2 + 2 mu r - L^2 = 0, the stable way round (E < 0) */
    double disc = sqrt(k.mu * k.mu + 2.0 * k.E * k.L * k.L);
    k.ra = -(k.mu + disc) / (2.0 * k.E);
    k.rp = -k.L * k.L / (2.0 * k.E * k.ra);
    /* where the two forms of r'^2 overlap they agree: the roots belong to E and L */
    for (int i = 1; i < 20; i++) {
        double r = k.rp + (k.ra - k.rp) * i / 20.0;
        double direct = 2.0 * (k.E + k.mu / r) - k.L * k.L / (r * r);
        double factored = -2.0 * k.E * (r - k.rp) * (k.ra - r) / (r * r);
        assert_close(factored, direct, 1e-12);
    }
    gsl_integration_workspace *w = gsl_integration_workspace_alloc(2000);
    gsl_integration_qaws_table *t = gsl_integration_qaws_table_alloc(-0.5, -0.5, 0, 0);
    gsl_function F = { .function = radial_f, .params = &k };
    double result = NAN, err = NAN;
    int st = gsl_integration_qaws(&F, k.rp, k.ra, t, 0.0, 2e-14, 2000, w, &result, &err);
    if (st != GSL_SUCCESS)
        print_message("GSL qaws status %d: %s\n", st, gsl_strerror(st));
    gsl_integration_qaws_table_free(t);
    gsl_integration_workspace_free(w);
    *abserr = 2.0 * err;
    return 2.0 * result;
}

static void kepler_period_matches_gsl_quadrature_of_the_radial_motion(void **state)
{
    /* (mu, a, e); e = 0 has no radial motion and is left to the third-law test */
    const double cases[][3] = {
        { 1.0, 1.0, 0.1 },  { 1.0, 1.0, 0.5 },      { 1.0, 1.0, 0.9 },
        { 1.0, 1.0, 0.99 }, { 39.5, 5.2, 0.048 },   { 0.3, 0.02, 0.7 },
        { 2.0, 7.0, 0.97 },
    };
    double worst = 0.0;
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        dm_instance inst = make(cases[i][0], cases[i][1], cases[i][2]);
        double abserr;
        double T_quad = period_by_radial_quadrature(&inst, &abserr); /* GSL qaws */
        double rel = dm_rel_diff(inst.period, T_quad);
        worst = rel > worst ? rel : worst;
        print_message("kepler mu=%g a=%g e=%g: T=%.17g quad=%.17g rel=%.2e (GSL est %.1e)\n",
                      cases[i][0], cases[i][1], cases[i][2], inst.period, T_quad, rel,
                      abserr / T_quad);
        assert_close(inst.period, T_quad, 1e-12);
    }
    print_message("kepler worst period vs radial quadrature: %.2e\n", worst);
}

/* ---- Kepler's equation ----
 * Residual f(E) = E - e sin E - M evaluated in long double, with E - sin E by its own
 * series at small E so the reference itself does not cancel. */
static long double residual_ld(double E_d, double e_d, double M_d)
{
    long double E = E_d, e = e_d, M = M_d;
    long double x = fabsl(E), x_minus_sin;
    if (x < 1.0L) {
        long double x2 = x * x, term = x * x2 / 6.0L;
        x_minus_sin = term;
        for (int k = 2; k < 16; k++) {
            term *= -x2 / (long double)((2 * k) * (2 * k + 1));
            x_minus_sin += term;
        }
    } else {
        x_minus_sin = x - sinl(x);
    }
    if (E < 0)
        x_minus_sin = -x_minus_sin;
    return (1.0L - e) * E + e * x_minus_sin - M;
}

static void kepler_equation_solver_reaches_machine_precision_on_a_grid(void **state)
{
    const double eccentricities[] = { 0.0, 1e-12, 0.5, 0.9, 0.99, 0.999999 };
    /* mean anomalies: zero, tiny, a uniform grid over [0, 2 pi], and hard against 2 pi */
    double grid[256];
    int n = 0;
    const double tiny[] = { 0.0, 1e-300, 1e-200, 1e-100, 1e-30, 1e-16, 1e-12, 1e-9,
                            1e-6, 1e-4, 1e-3, 1e-2 };
    for (size_t i = 0; i < sizeof tiny / sizeof tiny[0]; i++) {
        grid[n++] = tiny[i];
        if (tiny[i] > 0)
            grid[n++] = 2.0 * M_PI - tiny[i] * 4.0; /* 2 pi - 4 tiny stays below 2 pi */
    }
    grid[n++] = nextafter(2.0 * M_PI, 0.0);
    grid[n++] = 2.0 * M_PI;
    for (int k = 1; k < 180; k++)
        grid[n++] = 2.0 * M_PI * k / 180.0 + 1e-3 * sin(k);
    assert_true(n <= 256);

    int worst_iters = 0;
    for (size_t j = 0; j < sizeof eccentricities / sizeof eccentricities[0]; j++) {
        double e = eccentricities[j];
        double worst = 0.0;
        long total = 0;
        int most = 0;
        for (int i = 0; i < n; i++) {
            double M = grid[i];
            int iters = -1;
            double E = dm_kepler_solve(M, e, &iters);
            assert_true(isfinite(E));
            assert_true(iters >= 0 && iters <= 200);
            total += iters;
            most = iters > most ? iters : most;
            /* machine precision: within a few roundings of M itself, or of E times the
             * slope 1 - e cos E (one ulp of E moves f by that much) */
            double slope = 1.0 - e * cos(E);
            double scale = fmax(fabs(M), fabs(E) * slope);
            double res = (double)fabsl(residual_ld(E, e, M));
            double units = scale > 0 ? res / (DBL_EPSILON * scale) : res;
            worst = units > worst ? units : worst;
            if (!(units <= 4.0))
                print_error("e=%.17g M=%.17g: E=%.17g residual %.3e = %.2f eps\n", e, M, E,
                            res, units);
            assert_true(units <= 4.0);
            /* E lies on the branch of M: |E - M| <= e */
            assert_true(fabs(E - M) <= e + 4.0 * DBL_EPSILON * fabs(M));
        }
        print_message("kepler equation e=%g: worst residual %.2f eps (of max(M, E f')), "
                      "iterations mean %.2f, most %d over %d mean anomalies\n",
                      e, worst, (double)total / n, most, n);
        worst_iters = most > worst_iters ? most : worst_iters;
    }
    /* Safeguarded Newton from a good starter: a handful of steps, never the bisection
     * worst case (~55 steps). */
    assert_true(worst_iters <= 6);
}

static void kepler_equation_solver_converges_for_random_anomalies_and_eccentricities(void **state)
{
    /* 200000 pseudo-random (M, e): M uniform on [-4 pi, 4 pi], e uniform on [0, 1) for
     * half of them and 1 - 10^-u (u uniform on [0, 6]) for the other half. */
    unsigned long long seed = 0x2545F4914F6CDD1DULL;
    int most = 0;
    long total = 0;
    double worst = 0.0;
    const int n = 200000;
    for (int i = 0; i < n; i++) {
        seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;
        double u1 = (double)(seed >> 11) / 9007199254740992.0;
        seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;
        double u2 = (double)(seed >> 11) / 9007199254740992.0;
        double M = (u1 - 0.5) * 8.0 * M_PI;
        double e = (i % 2) ? u2 * 0.999999 : 1.0 - pow(10.0, -6.0 * u2);
        int iters;
        double E = dm_kepler_solve(M, e, &iters);
        total += iters;
        most = iters > most ? iters : most;
        double scale = fmax(fabs(M), fabs(E) * (1.0 - e * cos(E)));
        double units = (double)fabsl(residual_ld(E, e, M)) / (DBL_EPSILON * scale);
        worst = units > worst ? units : worst;
        if (!(units <= 8.0))
            print_error("e=%.17g M=%.17g: E=%.17g residual %.2f eps\n", e, M, E, units);
        assert_true(units <= 8.0); /* |M| up to 4 pi: its reduction adds a rounding */
    }
    print_message("kepler equation, %d random (M, e): worst residual %.2f eps, iterations "
                  "mean %.2f, most %d\n", n, worst, (double)total / n, most);
    assert_true(most <= 6);
}

static void kepler_equation_solver_is_odd_and_periodic_in_the_mean_anomaly(void **state)
{
    const double e = 0.93;
    for (double M = 0.01; M < 3.2; M += 0.21) {
        double E = dm_kepler_solve(M, e, NULL);
        assert_true(dm_kepler_solve(-M, e, NULL) == -E);
        assert_close(dm_kepler_solve(M + 6.0 * M_PI, e, NULL), E + 6.0 * M_PI, 1e-14);
        assert_close(dm_kepler_solve(M - 4.0 * M_PI, e, NULL), E - 4.0 * M_PI, 1e-14);
    }
}

/* Fourth-order central difference of the exact solution at t. */
static void derivative(const dm_instance *inst, double t, double h, double *dq, double *dp)
{
    double q[4][2], p[4][2];
    const double off[4] = { -2.0, -1.0, 1.0, 2.0 };
    for (int k = 0; k < 4; k++)
        inst->problem->exact(inst, t + off[k] * h, q[k], p[k]);
    for (int i = 0; i < 2; i++) {
        dq[i] = (q[0][i] - 8.0 * q[1][i] + 8.0 * q[2][i] - q[3][i]) / (12.0 * h);
        dp[i] = (p[0][i] - 8.0 * p[1][i] + 8.0 * p[2][i] - p[3][i]) / (12.0 * h);
    }
}

static void kepler_exact_orbit_satisfies_hamiltons_equations(void **state)
{
    const double eccentricities[] = { 0.0, 0.3, 0.7, 0.9 };
    for (size_t j = 0; j < sizeof eccentricities / sizeof eccentricities[0]; j++) {
        double mu = 1.3, a = 2.1, e = eccentricities[j];
        dm_instance inst = make(mu, a, e);
        double rp = a * (1.0 - e);
        /* the fastest time scale is the periapsis passage, ~ sqrt(rp^3 / mu) */
        double h = 2e-3 * sqrt(rp * rp * rp / mu);
        double vmax = inst.p0[1], gmax = mu / (rp * rp), worst = 0.0;
        for (int k = 0; k < 41; k++) {
            double t = 0.123 * inst.period * k;
            double q[2], p[2], v[2], g[2], dq[2], dp[2];
            inst.problem->exact(&inst, t, q, p);
            inst.problem->velocity(&inst, p, v);
            inst.problem->force(&inst, q, g);
            derivative(&inst, t, h, dq, dp);
            for (int i = 0; i < 2; i++) {
                double e1 = fabs(dq[i] - v[i]) / vmax, e2 = fabs(dp[i] + g[i]) / gmax;
                worst = fmax(worst, fmax(e1, e2));
            }
        }
        print_message("kepler e=%g: worst |dq/dt - p|, |dp/dt + grad V| %.2e\n", e, worst);
        assert_true(worst < 1e-8); /* h^4 truncation and eps / h round-off ~1e-11 */
    }
}

static void kepler_exact_orbit_conserves_energy_angular_momentum_and_runge_lenz(void **state)
{
    const double eccentricities[] = { 0.0, 0.2, 0.6, 0.9, 0.99, 0.999999 };
    for (size_t j = 0; j < sizeof eccentricities / sizeof eccentricities[0]; j++) {
        double mu = 0.8, a = 3.0, e = eccentricities[j];
        dm_instance inst = make(mu, a, e);
        double inv0[3];
        inst.problem->invariants(&inst, inst.q0, inst.p0, inv0);
        /* the starting values are what theory says (common practice):
         * L = sqrt(mu a (1 - e^2)), eccentricity vector A / mu = (e, 0) */
        assert_close(inv0[0], sqrt(mu * a * (1.0 - e) * (1.0 + e)), 1e-14);
        assert_true(fabs(inv0[1] - e) < 1e-14);
        assert_true(inv0[2] == 0.0);
        /* H(q0, p0) = T + V with (|T| + |V|) / |H| = (3 + e) / (1 - e) */
        assert_close(dm_instance_energy(&inst, inst.q0, inst.p0), -mu / (2.0 * a),
                     4e-16 * (3.0 + e) / (1.0 - e));
        double worst_h = 0.0, worst_h_plain = 0.0, worst_l = 0.0, worst_a = 0.0;
        for (int k = 0; k <= 2000; k++) {
            double t = 5.0 * inst.period * k / 2000.0 + 1.7e-4 * k;
            double q[2], p[2], inv[3];
            inst.problem->exact(&inst, t, q, p);
            inst.problem->invariants(&inst, q, p, inv);
            /* evaluating H = T + V cannot do better than eps (|T| + |V|) */
            double terms = inst.problem->kinetic(&inst, p) - inst.problem->potential(&inst, q);
            double cond = terms / fabs(inst.energy);
            double rel_h = dm_rel_diff(dm_instance_energy(&inst, q, p), inst.energy);
            worst_h = fmax(worst_h, rel_h / cond);
            worst_h_plain = fmax(worst_h_plain, rel_h);
            worst_l = fmax(worst_l, dm_rel_diff(inv[0], inv0[0]));
            /* the eccentricity vector is dimensionless (0 on a circle): differences */
            worst_a = fmax(worst_a, fmax(fabs(inv[1] - inv0[1]), fabs(inv[2] - inv0[2])));
        }
        print_message("kepler e=%g over 5 periods: energy %.2e relative (%.2e per unit of "
                      "(|T|+|V|)/|H|), L %.2e, eccentricity vector %.2e\n",
                      e, worst_h_plain, worst_h, worst_l, worst_a);
        assert_true(worst_h < 1e-13);
        if (e <= 0.9) /* (|T| + |V|) / |H| <= 39: plainly relative as well */
            assert_true(worst_h_plain < 1e-13);
        assert_true(worst_l < 1e-13);
        assert_true(worst_a < 1e-13);
    }
}

static void kepler_third_law_holds_for_every_eccentricity(void **state)
{
    /* T^2 / a^3 = 4 pi^2 / mu whatever the eccentricity (Kepler's third law, common
     * practice), and E = -mu / (2 a). */
    const double mus[] = { 1.0, 39.47841760435743, 0.012 };
    const double axes[] = { 0.4, 1.0, 5.2, 30.1 };
    const double eccentricities[] = { 0.0, 0.4, 0.95 };
    for (size_t i = 0; i < 3; i++)
        for (size_t j = 0; j < 4; j++)
            for (size_t k = 0; k < 3; k++) {
                dm_instance inst = make(mus[i], axes[j], eccentricities[k]);
                double a = axes[j];
                assert_close(inst.period * inst.period / (a * a * a),
                             4.0 * M_PI * M_PI / mus[i], 1e-14);
                assert_close(inst.energy, -mus[i] / (2.0 * a), 1e-15);
            }
    /* the exact circular orbit keeps its radius and has speed sqrt(mu / a) */
    dm_instance inst = make(2.0, 3.0, 0.0);
    for (int k = 0; k < 50; k++) {
        double q[2], p[2];
        inst.problem->exact(&inst, 0.37 * k, q, p);
        assert_close(hypot(q[0], q[1]), 3.0, 1e-15);
        assert_close(hypot(p[0], p[1]), sqrt(2.0 / 3.0), 1e-15);
    }
}

static void kepler_starts_on_the_section_and_first_crosses_it_a_period_later(void **state)
{
    const double eccentricities[] = { 0.0, 0.5, 0.99 };
    for (size_t j = 0; j < 3; j++) {
        dm_instance inst = make(1.0, 1.0, eccentricities[j]);
        assert_int_equal(inst.section.coord, 1);
        assert_true(inst.section.level == 0.0);
        assert_true(inst.q0[1] == 0.0 && inst.p0[1] > 0.0); /* on it, moving upward */
        assert_true(inst.first_crossing == inst.period);
        assert_false(inst.has_v_min);
        double q[2], p[2];
        inst.problem->exact(&inst, 1e-3 * inst.period, q, p);
        assert_true(q[1] > 0.0);
        inst.problem->exact(&inst, inst.period * (1.0 - 1e-3), q, p);
        assert_true(q[1] < 0.0);
        inst.problem->exact(&inst, inst.period, q, p);
        assert_true(fabs(q[0] - inst.q0[0]) < 1e-15 && fabs(q[1]) < 1e-15);
        /* the library's generic bisection on the exact orbit agrees */
        assert_close(dm_first_crossing_from_exact(&inst), inst.period, 1e-12);
    }
}

static void kepler_hessian_matches_differences_of_the_force(void **state)
{
    dm_instance inst = make(1.7, 1.0, 0.5);
    const double points[][2] = { { 0.5, 0.0 }, { -1.2, 0.7 }, { 0.3, -0.9 }, { 2.0, 2.0 } };
    for (size_t i = 0; i < 4; i++) {
        double hess[4], h = 1e-6;
        inst.problem->hessian(&inst, points[i], hess);
        double r = hypot(points[i][0], points[i][1]);
        double scale = 1.7 / (r * r * r);
        for (int j = 0; j < 2; j++) {
            double qp[2] = { points[i][0], points[i][1] }, qm[2] = { points[i][0], points[i][1] };
            qp[j] += h;
            qm[j] -= h;
            double gp[2], gm[2];
            inst.problem->force(&inst, qp, gp);
            inst.problem->force(&inst, qm, gm);
            for (int k = 0; k < 2; k++)
                assert_true(fabs(hess[k * 2 + j] - (gp[k] - gm[k]) / (2.0 * h)) < 1e-7 * scale);
        }
        double g[2];
        assert_close(inst.problem->force(&inst, points[i], g),
                     inst.problem->potential(&inst, points[i]), 1e-15);
    }
}

static void expect_refusal(size_t n, const char *const *keys, const double *values,
                           const char *needle)
{
    dm_instance inst;
    dm_error err;
    dm_error_clear(&err);
    dm_status st = dm_instance_init(&inst, kepler(), n, keys, values, &err);
    if (st != DM_EINPUT || strstr(err.msg, needle) == NULL)
        print_error("status %d, message '%s' (wanted '%s')\n", st, err.msg, needle);
    assert_int_equal(st, DM_EINPUT);
    assert_non_null(strstr(err.msg, needle));
    assert_non_null(strstr(err.msg, "kepler"));
    assert_null(strchr(err.msg, '\n'));
}

static void kepler_refuses_unbound_and_degenerate_orbits(void **state)
{
    const char *k_e[] = { "eccentricity" };
    const char *k_a[] = { "semi_major_axis" };
    const char *k_mu[] = { "mu" };
    expect_refusal(1, k_e, (double[]){ 1.0 }, "outside its range"); /* parabola */
    expect_refusal(1, k_e, (double[]){ 1.5 }, "outside its range"); /* hyperbola */
    expect_refusal(1, k_e, (double[]){ -0.1 }, "outside its range");
    expect_refusal(1, k_a, (double[]){ 0.0 }, "outside its range");
    expect_refusal(1, k_a, (double[]){ -2.0 }, "outside its range");
    expect_refusal(1, k_mu, (double[]){ 0.0 }, "outside its range");
    expect_refusal(1, k_mu, (double[]){ -1.0 }, "outside its range");
    expect_refusal(1, k_e, (double[]){ NAN }, "finite");
    expect_refusal(1, (const char *[]){ "eccentricty" }, (double[]){ 0.5 },
                   "did you mean 'eccentricity'");
    /* an orbit too large for its period to be a double */
    expect_refusal(2, (const char *[]){ "semi_major_axis", "mu" }, (double[]){ 1e300, 1e-300 },
                   "not a finite positive number");
}

int main(void)
{
    gsl_set_error_handler_off(); /* statuses are judged by the tests */
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(kepler_period_matches_gsl_quadrature_of_the_radial_motion),
        cmocka_unit_test(kepler_equation_solver_reaches_machine_precision_on_a_grid),
        cmocka_unit_test(kepler_equation_solver_converges_for_random_anomalies_and_eccentricities),
        cmocka_unit_test(kepler_equation_solver_is_odd_and_periodic_in_the_mean_anomaly),
        cmocka_unit_test(kepler_exact_orbit_satisfies_hamiltons_equations),
        cmocka_unit_test(kepler_exact_orbit_conserves_energy_angular_momentum_and_runge_lenz),
        cmocka_unit_test(kepler_third_law_holds_for_every_eccentricity),
        cmocka_unit_test(kepler_starts_on_the_section_and_first_crosses_it_a_period_later),
        cmocka_unit_test(kepler_hessian_matches_differences_of_the_force),
        cmocka_unit_test(kepler_refuses_unbound_and_degenerate_orbits),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
