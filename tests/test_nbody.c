/* test_nbody.c — the gravitational N-body problem against published data and against
 * the built-in Kepler problem; the invariants, the measured period and the refusals of
 * the suite reader.
 *
 * The outer solar system is that of E. Hairer, C. Lubich, G. Wanner, Geometric
 * Numerical Integration, 2nd ed. (2006), section I.2.4: the Sun (with the inner planets'
 * mass), Jupiter, Saturn, Uranus, Neptune, Pluto in AU, days and solar masses, G =
 * 2.95912208286e-4. The table is typed from memory of the book as listed in the
 * project's shared references; outer_solar_system_data_gives_the_known_periods checks
 * it against the planets' known periods, and tests/check_nbody.py computes its energy
 * and Jupiter's osculating period again with numpy. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"
#include "nbody.h"
#include "dm_outer_solar.h"

#define SRC "/tmp/dm-test-nbody/s.yaml"
#define OUT "/tmp/dm-test-nbody/out.h5"

static int make_folder(void **state)
{
    (void)state;
    return system("mkdir -p /tmp/dm-test-nbody");
}

static void parse_ok(const char *text, dm_suite *suite)
{
    dm_error err = { 0 };
    if (dm_suite_parse(suite, text, strlen(text), SRC, NULL, &err) != DM_OK)
        fail_msg("suite refused: %s", err.msg);
}

/* Runs every run of a suite text; results[] gets them (free with free_results). */
static dm_run_result *run_all(const char *text, dm_suite *suite)
{
    parse_ok(text, suite);
    dm_run_result *r = calloc(suite->n_runs, sizeof *r);
    assert_non_null(r);
    for (size_t i = 0; i < suite->n_runs; i++) {
        dm_error err = { 0 };
        assert_int_equal(dm_run(&suite->runs[i], &r[i], NULL, &err), DM_OK);
        if (r[i].status != DM_RUN_OK)
            fail_msg("%s: %s", suite->runs[i].id, r[i].reason);
    }
    return r;
}

static void free_all(dm_suite *suite, dm_run_result *r)
{
    for (size_t i = 0; i < suite->n_runs; i++)
        dm_run_result_free(&r[i]);
    free(r);
    dm_suite_free(suite);
}

/* Largest |dE| over the buckets ending in [from, to) of the horizon's fraction. */
static double max_de_between(const dm_series *s, double from, double to)
{
    double t_end = s->time[s->n - 1], m = 0.0;
    for (size_t i = 0; i < s->n; i++)
        if (s->time[i] >= from * t_end && s->time[i] < to * t_end)
            m = fmax(m, fmax(fabs(s->energy_error_min[i]), fabs(s->energy_error_max[i])));
    return m;
}

/* The sidereal periods in days of Jupiter, Saturn, Uranus, Neptune and Pluto (a fact of
 * the trade, from memory): 4332.6, 10759, 30687, 60190, 90560. Each body's osculating
 * period about the Sun, 2 pi sqrt(a^3 / mu), mu = G (m_sun + m), a from the vis-viva
 * law 1 / a = 2 / r - v^2 / mu, lies within 3 % of it (osculating elements of the
 * outer planets differ from the mean ones by up to about 1 %, mostly Jupiter and Saturn
 * perturbing each other). */
static void outer_solar_system_data_gives_the_known_periods(void **state)
{
    (void)state;
    static const double known[] = { 4332.6, 10759.0, 30687.0, 60190.0, 90560.0 };
    char *text = outer_suite(1000.0, 8, "  - {method: verlet, h: 10}\n");
    dm_suite suite;
    parse_ok(text, &suite);
    double G;
    const dm_nbody *d = dm_nbody_of(&suite.runs[0].inst, &G);
    assert_non_null(d);
    assert_int_equal(d->n, 6);
    for (int i = 1; i < 6; i++) {
        double mu = G * (d->mass[0] + d->mass[i]), r2 = 0.0, v2 = 0.0;
        for (int k = 0; k < 3; k++) {
            double x = d->position[i][k] - d->position[0][k];
            double v = d->velocity[i][k] - d->velocity[0][k];
            r2 += x * x;
            v2 += v * v;
        }
        double a = 1.0 / (2.0 / sqrt(r2) - v2 / mu);
        double T = 2.0 * M_PI * sqrt(a * a * a / mu);
        print_message("%s: osculating period %.1f days (known %.1f)\n", d->name[i], T,
                      known[i - 1]);
        assert_true(fabs(T / known[i - 1] - 1.0) < 0.03);
    }
    free(text);
    dm_suite_free(&suite);
}

/* Stormer-Verlet at a 10-day step over 10^5 days: the energy error stays bounded (its
 * largest value over the second half of the run is not above 1.5 times that over the
 * first half: a linear drift would double it) and falls as h^2 when the step halves
 * (Hairer, Lubich, Wanner, ch. I and X: a symmetric second-order method's bounded energy
 * error, O(h^2); the order 2 from memory of the book). RK4 at the same step drifts, and
 * the same check catches it. */
static void verlet_energy_error_is_bounded_and_of_order_two(void **state)
{
    (void)state;
    char *text = outer_suite(1e5, 1000, "  - {method: verlet, h: [10, 5]}\n"
                                        "  - {method: rk4, h: 10}\n");
    dm_suite suite;
    dm_run_result *r = run_all(text, &suite);
    double e10 = r[0].metrics.max_energy_error, e5 = r[1].metrics.max_energy_error;
    double order = log(e10 / e5) / log(2.0);
    print_message("verlet max |dE|: %.4g at h = 10, %.4g at h = 5: order %.4f\n", e10, e5,
                  order);
    assert_true(e10 < 1e-4);
    assert_true(fabs(order - 2.0) < 0.05);
    for (int i = 0; i < 2; i++) {
        double first = max_de_between(&r[i].series, 0.0, 0.5);
        double second = max_de_between(&r[i].series, 0.5, 1.01);
        print_message("verlet h = %g: max |dE| first half %.4g, second half %.4g\n",
                      suite.runs[i].method_config.h, first, second);
        assert_true(second <= 1.5 * first);
    }
    double first = max_de_between(&r[2].series, 0.0, 0.5);
    double second = max_de_between(&r[2].series, 0.5, 1.01);
    print_message("rk4 h = 10: max |dE| first half %.4g, second half %.4g\n", first, second);
    assert_true(second > 1.5 * first);
    free(text);
    free_all(&suite, r);
}

/* Jupiter's period measured from the crossings of its orbit about the Sun lies within
 * 1 % of 4332.6 days (its sidereal period, a fact of the trade, from memory); the
 * figure does not depend on the buckets (bit for bit) nor on the units: the same system
 * in years (G in AU^3 / (solar mass year^2), velocities in AU / year) gives the same
 * period to rounding, and the same Lyapunov exponent per unit of time. */
static void jupiter_period_is_measured_whatever_the_buckets_and_units(void **state)
{
    (void)state;
    char *coarse = outer_suite(1e5, 16, "  - {method: verlet, h: 10}\n");
    /* the Lyapunov exponent too (harness/lyapunov.c: its distance is unit-free) */
    char *with_key = malloc(strlen(coarse) + 32);
    assert_non_null(with_key);
    char *buckets = strstr(coarse, "buckets:");
    assert_non_null(buckets);
    snprintf(with_key, strlen(coarse) + 32, "%.*slyapunov: true\n%s", (int)(buckets - coarse),
             coarse, buckets);
    free(coarse);
    coarse = with_key;
    char *fine = outer_suite(1e5, 2000, "  - {method: verlet, h: 10}\n");
    dm_suite s1, s2;
    dm_run_result *r1 = run_all(coarse, &s1), *r2 = run_all(fine, &s2);
    double P = r1[0].metrics.period_measured;
    print_message("Jupiter: %.6f days over %llu crossings\n", P,
                  (unsigned long long)r1[0].crossings.total);
    assert_true(fabs(P / 4332.6 - 1.0) < 0.01);
    assert_true(r1[0].crossings.total >= 20);
    assert_memory_equal(&P, &r2[0].metrics.period_measured, sizeof P);
    assert_true(isnan(r1[0].metrics.period_exact) && isnan(r1[0].metrics.phase_error_per_period));

    /* the same bodies in years: t' = t / Y, v' = v Y, G' = G Y^2 */
    const double Y = 365.25;
    char years[8192];
    snprintf(years, sizeof years,
             "output: " OUT "\nhorizon: {time: %.17g}\nbuckets: 100\nlyapunov: true\nproblems:\n"
             "  - problem: nbody\n    G: %.17g\n    units: AU, years, solar masses\n"
             "    period_of: {body: Jupiter, around: Sun}\n    bodies:\n",
             1e5 / Y, 2.95912208286e-4 * Y * Y);
    const dm_nbody *d = dm_nbody_of(&s1.runs[0].inst, NULL);
    for (int i = 0; i < d->n; i++) {
        size_t used = strlen(years);
        snprintf(years + used, sizeof years - used,
                 "      - {name: %s, mass: %.17g, position: [%.17g, %.17g, %.17g], "
                 "velocity: [%.17g, %.17g, %.17g]}\n",
                 d->name[i], d->mass[i], d->position[i][0], d->position[i][1],
                 d->position[i][2], d->velocity[i][0] * Y, d->velocity[i][1] * Y,
                 d->velocity[i][2] * Y);
    }
    size_t used = strlen(years);
    snprintf(years + used, sizeof years - used, "methods:\n  - {method: verlet, h: %.17g}\n",
             10.0 / Y);
    dm_suite s3;
    dm_run_result *r3 = run_all(years, &s3);
    print_message("in years: %.12f years = %.9f days\n", r3[0].metrics.period_measured,
                  r3[0].metrics.period_measured * Y);
    assert_close(r3[0].metrics.period_measured * Y, P, 1e-9);
    assert_close(r3[0].metrics.max_energy_error, r1[0].metrics.max_energy_error, 1e-6);
    /* a regular orbit over 23 of Jupiter's periods: about log t / t, the same per day */
    print_message("Lyapunov exponent: %.6g per day, %.6g per year / 365.25\n",
                  r1[0].metrics.lyapunov_exponent, r3[0].metrics.lyapunov_exponent / Y);
    assert_true(r1[0].metrics.lyapunov_exponent > 0.0 && r1[0].metrics.lyapunov_exponent < 1e-3);
    /* to the rounding of a separation of 1e-9 (1e-7 of it at each of 1000 measurements) */
    assert_close(r3[0].metrics.lyapunov_exponent / Y, r1[0].metrics.lyapunov_exponent, 1e-5);
    free(coarse);
    free(fine);
    free_all(&s1, r1);
    free_all(&s2, r2);
    free_all(&s3, r3);
}

/* Splitting methods conserve total momentum exactly in exact arithmetic (each kick
 * adds forces that cancel in pairs, Newton's third law) and angular momentum (kicks
 * along q_i - q_j, drifts along p_i): what is left is rounding. The invariants are
 * unit-free (nbody.c); below 1e-12 means rounding over 10^4 steps. RK4 conserves the
 * momentum (a linear invariant) but not the angular momentum, and the check sees it. */
static void splitting_methods_conserve_momentum_and_angular_momentum(void **state)
{
    (void)state;
    char methods[2048] = "";
    int n = 0;
    for (size_t i = 0; i < dm_method_count; i++)
        if (dm_methods[i]->splitting != NULL) {
            size_t used = strlen(methods);
            snprintf(methods + used, sizeof methods - used, "  - {method: %s, h: 20}\n",
                     dm_methods[i]->id);
            n++;
        }
    strcat(methods, "  - {method: rk4, h: 20}\n");
    char *text = outer_suite(2e5, 100, methods);
    dm_suite suite;
    dm_run_result *r = run_all(text, &suite);
    for (int i = 0; i <= n; i++) {
        const double *e = r[i].metrics.max_invariant_error;
        print_message("%-40s momentum %.3g, angular momentum %.3g, centre of mass %.3g\n",
                      suite.runs[i].id, e[0], e[1], e[2]);
        assert_true(e[0] < 1e-12);
        assert_true(e[2] < 1e-12);
        if (i < n)
            assert_true(e[1] < 1e-12);
        else
            assert_true(e[1] > 1e-10); /* RK4 */
    }
    free(text);
    free_all(&suite, r);
}

/* The N-body fused loop (problems/nbody.c: a copy with the degrees of freedom constant
 * up to 8 bodies, a run-time count above) and the per-step path give the same run bit
 * for bit: every series, the crossings and the closest approach, for 6 bodies (a
 * constant) and for 12 (the outer solar system twice, the second copy far away). */
/* The outer solar system and a copy of it 1000 AU away: 12 bodies, above the fused
 * loop's constant sizes. */
static char *twelve_bodies_suite(const dm_nbody *d)
{
    char *text = malloc(8192);
    assert_non_null(text);
    size_t used = (size_t)snprintf(text, 8192, "output: " OUT "\nhorizon: {time: 3e4}\n"
                                   "buckets: 50\nproblems:\n  - problem: nbody\n"
                                   "    G: 2.95912208286e-4\n    units: AU, days, solar "
                                   "masses\n    period_of: {body: Jupiter, around: Sun}\n"
                                   "    bodies:\n");
    for (int copy = 0; copy < 2; copy++)
        for (int i = 0; i < d->n; i++)
            used += (size_t)snprintf(text + used, 8192 - used,
                                     "      - {name: %s%s, mass: %.17g, position: [%.17g, "
                                     "%.17g, %.17g], velocity: [%.17g, %.17g, %.17g]}\n",
                                     d->name[i], copy ? "-far" : "", d->mass[i],
                                     d->position[i][0] + 1000.0 * copy, d->position[i][1],
                                     d->position[i][2], d->velocity[i][0], d->velocity[i][1],
                                     d->velocity[i][2]);
    snprintf(text + used, 8192 - used, "methods:\n  - {method: yoshida4, h: 10}\n");
    return text;
}

static void fused_loop_and_per_step_path_agree_bit_for_bit(void **state)
{
    (void)state;
    dm_suite outer;
    char *six = outer_suite(3e4, 50, "  - {method: yoshida4, h: 10}\n");
    parse_ok(six, &outer);
    char *twelve = twelve_bodies_suite(dm_nbody_of(&outer.runs[0].inst, NULL));
    const char *texts[2] = { six, twelve };
    for (int k = 0; k < 2; k++) {
        dm_suite suite;
        parse_ok(texts[k], &suite);
        assert_int_equal(suite.runs[0].inst.dof, 18 * (k + 1));
        dm_run_spec plain = suite.runs[0];
        plain.method_config.plain_steps = true;
        dm_run_result a, b;
        dm_error err = { 0 };
        assert_int_equal(dm_run(&suite.runs[0], &a, NULL, &err), DM_OK);
        assert_int_equal(dm_run(&plain, &b, NULL, &err), DM_OK);
        assert_int_equal(a.series.n, b.series.n);
        assert_memory_equal(a.series.energy_error_max, b.series.energy_error_max,
                            a.series.n * sizeof(double));
        assert_memory_equal(a.series.invariant_error[1], b.series.invariant_error[1],
                            a.series.n * sizeof(double));
        assert_true(a.crossings.total >= 6);
        assert_int_equal(a.crossings.total, b.crossings.total);
        assert_memory_equal(a.crossings.time, b.crossings.time, a.crossings.n * sizeof(double));
        assert_memory_equal(&a.metrics.closest_approach, &b.metrics.closest_approach,
                            sizeof(double));
        dm_run_result_free(&a);
        dm_run_result_free(&b);
        dm_suite_free(&suite);
    }
    dm_suite_free(&outer);
    free(six);
    free(twelve);
}

/* Two bodies are the Kepler problem in relative coordinates, mu = G (m1 + m2): Verlet
 * on the barycentric pair and Verlet on the built-in Kepler problem are the same map in
 * exact arithmetic, so after 10^4 steps their relative states agree to rounding, and
 * their energy errors (both relative to |H0|) agree. */
static void two_bodies_are_the_kepler_problem(void **state)
{
    (void)state;
    const double m1 = 1.0, m2 = 0.5;
    dm_nbody pair;
    dm_instance two, kepler;
    dm_error err = { 0 };
    two_bodies_and_kepler(m1, m2, 1.0, 0.6, &pair, &two, &kepler);
    assert_close(two.energy, m1 * m2 / (m1 + m2) * kepler.energy, 1e-14);

    dm_method_config mc = { .h = kepler.period / 200.0 };
    const dm_method *verlet = dm_method_find("verlet");
    double xk[2][2 * DM_MAX_DOF], xn[2][2 * DM_MAX_DOF];
    memcpy(xk[0], kepler.q0, 2 * sizeof(double));
    memcpy(xk[0] + 2, kepler.p0, 2 * sizeof(double));
    memcpy(xn[0], two.q0, 6 * sizeof(double));
    memcpy(xn[0] + 6, two.p0, 6 * sizeof(double));
    dm_point pk[2] = { { 0, xk[0], NAN }, { 0, xk[1], NAN } };
    dm_point pn[2] = { { 0, xn[0], NAN }, { 0, xn[1], NAN } };
    dm_stepper *sk = dm_stepper_create(verlet, &kepler, &mc, &pk[0], &err);
    dm_stepper *sn = dm_stepper_create(verlet, &two, &mc, &pn[0], &err);
    assert_non_null(sk);
    assert_non_null(sn);
    const int steps = 10000;
    for (int k = 0; k < steps; k++) {
        assert_int_equal(dm_stepper_step(sk, &pk[k % 2], &pk[(k + 1) % 2]), DM_OK);
        assert_int_equal(dm_stepper_step(sn, &pn[k % 2], &pn[(k + 1) % 2]), DM_OK);
    }
    const double *x = pn[steps % 2].x, *y = pk[steps % 2].x;
    double worst = 0.0;
    for (int c = 0; c < 2; c++) {
        double q = x[3 + c] - x[c];              /* relative position */
        double v = x[6 + 3 + c] / m2 - x[6 + c] / m1; /* relative velocity = p / mred */
        worst = fmax(worst, fabs(q - y[c]));
        worst = fmax(worst, fabs(v - y[2 + c]));
    }
    print_message("relative state against Kepler after %d steps: %.3g\n", steps, worst);
    assert_true(worst < 1e-10);
    assert_true(fabs(x[5] - x[2]) < 1e-15); /* the motion stays in its plane */
    dm_stepper_destroy(sk);
    dm_stepper_destroy(sn);
}

/* period_of on eccentric two-body orbits against Kepler's third law for the relative
 * orbit (closed form: a = -G M / (2 E), E = v^2 / 2 - G M / r per unit reduced mass,
 * T = 2 pi sqrt(a^3 / (G M)), M the two masses; J. M. A. Danby, Fundamentals of Celestial
 * Mechanics, 2nd ed., 1988). Wisdom-Holman is exact on two bodies (no interaction kick),
 * so the measured period must be T to the crossings' interpolation, at every step up to
 * T / 20: the counted crossing may not be one a step can jump (the section used to be
 * a coordinate plane the body stays on one side of for a sliver of each orbit, and a
 * step of T / 20 gave 2.6 T at e = 0.9, 55 T at e = 0.988). One start is at periapsis in
 * the plane z = 0 (e = 0.9 and 0.988), one tilted out of it (e = 0.96), one mid-orbit
 * in no coordinate plane, one circular (no apsidal line). */
static void eccentric_orbit_period_is_measured_at_large_steps(void **state)
{
    (void)state;
    static const struct {
        double x[3], v[3];
        double h[4]; /* steps (0: none), the largest about T / 20 */
    } starts[] = {
        { { 0.1, 0, 0 }, { 0, 4.3600458713125825, 0 }, { 0.3, 0.1, 0.01 } },
        { { 0.01, 0, 0 }, { 0, 14.10673601213519, 0 }, { 0.239, 0.1, 0.05, 0.01 } },
        /* periapsis speed sqrt(G M (1 + e) / r) at e = 0.96, tilted by 0.3 rad */
        { { 0.04, 0, 0 },
          { 0, 7.0034991254372265 * 0.955336489125606, 7.0034991254372265 * 0.29552020666133955 },
          { 0.314, 0.1, 0.0125 } },
        { { -0.3, 0.25, 0.1 }, { -1.1, -1.7, 0.6 }, { 0.87, 0.35, 0.035 } },
        /* circular (speed sqrt(G M / r)): the plane through the starting radius */
        { { 1, 0, 0 }, { 0, 1.000499875062461, 0 }, { 0.31, 0.031 } },
    };
    const double M = 1.001;
    int wrong = 0;
    for (size_t k = 0; k < sizeof starts / sizeof starts[0]; k++) {
        const double *x = starts[k].x, *v = starts[k].v;
        double r = sqrt(x[0] * x[0] + x[1] * x[1] + x[2] * x[2]);
        double E = 0.5 * (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]) - M / r;
        double a = -M / (2.0 * E), T = 2.0 * M_PI * sqrt(a * a * a / M);
        double l[3] = { x[1] * v[2] - x[2] * v[1], x[2] * v[0] - x[0] * v[2],
                        x[0] * v[1] - x[1] * v[0] };
        double e = sqrt(fmax(0.0, 1.0 - (l[0] * l[0] + l[1] * l[1] + l[2] * l[2]) / (M * a)));
        for (size_t j = 0; j < 4 && starts[k].h[j] > 0.0; j++) {
            double h = starts[k].h[j];
            assert_true(h < T / 19.0);
            char text[2048];
            snprintf(text, sizeof text,
                     "output: " OUT "\nhorizon: {time: %.17g}\nbuckets: 10\nproblems:\n"
                     "  - problem: nbody\n    G: 1\n    units: code\n"
                     "    period_of: {body: B, around: A}\n    bodies:\n"
                     "      - {name: A, mass: 1, position: [0, 0, 0], velocity: [0, 0, 0]}\n"
                     "      - {name: B, mass: 1.0e-3, position: [%.17g, %.17g, %.17g], "
                     "velocity: [%.17g, %.17g, %.17g]}\n"
                     "methods:\n  - {method: wisdom-holman, h: %.17g}\n",
                     101.3 * T, x[0], x[1], x[2], v[0], v[1], v[2], h);
            dm_suite suite;
            dm_run_result *res = run_all(text, &suite);
            double P = res[0].metrics.period_measured;
            print_message("e = %.4f, T = %.9f, h = %g = T/%.1f: measured %.9f over %llu "
                          "crossings (%.2e)\n", e, T, h, T / h, P,
                          (unsigned long long)res[0].crossings.total, P / T - 1.0);
            wrong += !(fabs(P / T - 1.0) < 1e-8) || res[0].crossings.total < 100 ||
                     res[0].period_note[0] != '\0';
            free_all(&suite, res);
        }
    }
    assert_int_equal(wrong, 0);
}

/* Beyond half the period a step can jump crossings whatever the plane: the period
 * measured is then dropped (NaN, with a note naming the osculating period) rather than
 * reported. Two bodies at e = 0.9, T = 6.19629 (Kepler's third law, as above): at
 * h = 3.4 and 4.5 the crossings give 7.53 and 16.4; at h = 3.0 (T / 2.07) the period is
 * still right and kept. */
static void a_period_from_missed_crossings_is_dropped(void **state)
{
    (void)state;
    const double M = 1.001, v = 4.3600458713125825, a = -M / (v * v - 2.0 * M / 0.1);
    const double T = 2.0 * M_PI * sqrt(a * a * a / M), steps[] = { 3.0, 3.4, 4.5 };
    for (size_t j = 0; j < 3; j++) {
        char text[2048];
        snprintf(text, sizeof text,
                 "output: " OUT "\nhorizon: {time: 628.3}\nbuckets: 10\nproblems:\n"
                 "  - problem: nbody\n    G: 1\n    units: code\n"
                 "    period_of: {body: B, around: A}\n    bodies:\n"
                 "      - {name: A, mass: 1, position: [0, 0, 0], velocity: [0, 0, 0]}\n"
                 "      - {name: B, mass: 1.0e-3, position: [0.1, 0, 0], "
                 "velocity: [0, 4.3600458713125825, 0]}\n"
                 "methods:\n  - {method: wisdom-holman, h: %g}\n", steps[j]);
        dm_suite suite;
        dm_run_result *res = run_all(text, &suite);
        print_message("h = %g: period %.9g, note '%s'\n", steps[j],
                      res[0].metrics.period_measured, res[0].period_note);
        if (j == 0) {
            assert_true(fabs(res[0].metrics.period_measured / T - 1.0) < 1e-5);
            assert_true(res[0].period_note[0] == '\0');
        } else {
            assert_true(isnan(res[0].metrics.period_measured));
            assert_non_null(strstr(res[0].period_note, "crossings missed"));
            assert_non_null(strstr(res[0].period_note, "6.19629"));
        }
        free_all(&suite, res);
    }
}

/* Each kind of bad N-body input is refused with one line FILE:LINE:COLUMN naming it. */
static int refusal_failures;

static void refused(const char *text, const char *where, const char *what)
{
    dm_suite suite;
    dm_error err = { 0 };
    dm_status st = dm_suite_parse(&suite, text, strlen(text), SRC, NULL, &err);
    if (st != DM_EINPUT || strncmp(err.msg, where, strlen(where)) != 0 ||
        strstr(err.msg, what) == NULL || strchr(err.msg, '\n') != NULL)
        refusal_failures++, print_error("expected '%s ... %s', got (%d) '%s'\n", where, what,
                                        (int)st, err.msg);
}

#define HEAD "output: " OUT "\nhorizon: {time: 100}\nproblems:\n  - problem: nbody\n"
#define TWO                                                                               \
    "    bodies:\n      - {name: a, mass: 1, position: [0, 0, 0], velocity: [0, 0, 0]}\n"   \
    "      - {name: b, mass: 0.001, position: [1, 0, 0], velocity: [0, 1, 0]}\n"
#define METHODS "methods:\n  - {method: verlet, h: 0.01}\n"

static void write_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

static void bad_bodies_are_refused_in_one_line(void **state)
{
    (void)state;
    refused(HEAD "    units: u\n" TWO METHODS, SRC ":4:5:", "needs G (the constant");
    refused(HEAD "    G: 1\n" TWO METHODS, SRC ":4:5:", "needs units");
    refused(HEAD "    G: 1\n    units: u\n" METHODS, SRC ":4:5:", "needs its bodies");
    refused(HEAD "    G: 1\n    units: u\n    bodies:\n"
                 "      - {name: a, mass: 1, position: [0, 0, 0], velocity: [0, 0, 0]}\n"
                 "      - {name: b, mass: 1, position: [1, 0, 0], velocity: [0, 1, 0]}\n"
                 "      - {mass: 1, position: [1, 0, 0], velocity: [0, 0, 1]}\n" METHODS,
            SRC ":4:5:", "body 'b' and body 3 start at the same position");
    refused(HEAD "    G: 1\n    units: u\n    bodies:\n"
                 "      - {name: a, mass: 1e-300, position: [0, 0, 0], velocity: [0, 0, 0]}\n"
                 "      - {name: b, mass: 1e-300, position: [1, 0, 0], velocity: [0, 1, 0]}\n"
                 METHODS,
            SRC ":4:5:", "momentum scale (0, 0 from total mass 2e-300");
    refused(HEAD "    G: 1\n    units: u\n    bodies:\n"
                 "      - {name: a, mass: 1, position: [0, 0, 0], velocity: [0, 0, 0]}\n" METHODS,
            SRC ":8:7:", "1 body (expected 2");
    refused(HEAD "    G: 1\n    units: u\n    bodies:\n"
                 "      - {name: a, mass: -1, position: [0, 0, 0], velocity: [0, 0, 0]}\n"
                 "      - {name: b, mass: 1, position: [1, 0, 0], velocity: [0, 1, 0]}\n" METHODS,
            SRC ":8:25:", "mass must be positive");
    refused(HEAD "    G: 1\n    units: u\n    bodies:\n"
                 "      - {name: a, mass: 1, position: [0, 0], velocity: [0, 0, 0]}\n"
                 "      - {name: b, mass: 1, position: [1, 0, 0], velocity: [0, 1, 0]}\n" METHODS,
            SRC ":8:38:", "list of 3 numbers");
    refused(HEAD "    G: 1\n    units: u\n    bodies:\n"
                 "      - {name: a, mass: 1, place: [0, 0, 0], velocity: [0, 0, 0]}\n" METHODS,
            SRC ":8:28:", "unknown body key 'place'");
    refused(HEAD "    G: 1\n    units: u\n" TWO "    period_of: {body: c, around: a}\n" METHODS,
            SRC ":10:23:", "no body is called");
    refused(HEAD "    G: 1\n    units: u\n" TWO "    period_of: {body: a, around: a}\n" METHODS,
            SRC ":10:16:", "one body twice");
    refused("output: " OUT "\nhorizon: {periods: 100}\nproblems:\n  - problem: nbody\n"
            "    G: 1\n    units: u\n" TWO METHODS,
            SRC ":2:20:", "give the horizon in time");
    refused(HEAD "    G: 1\n    units: u\n" TWO "methods:\n  - {method: verlet, "
                 "steps_per_period: 100}\n",
            SRC ":11:40:", "steps_per_period does not apply");
    refused(HEAD "    G: 1\n    units: u\n    bodies_file: b.csv\n" METHODS, SRC ":7:18:",
            "file_holds goes with bodies_file");
    refused(HEAD "    G: 1\n    units: u\n    bodies_file: b.csv\n    file_holds: speeds\n" METHODS,
            SRC ":8:17:", "expected velocities or momenta");
    refused(HEAD "    G: 1\n    units: u\n    bodies_file: none.csv\n    file_holds: momenta\n"
                 METHODS, SRC ":7:18:", "cannot open bodies file");

    /* the file's own errors name the file, its line and column */
    const char *file_suite = HEAD "    G: 1\n    units: u\n    bodies_file: b.csv\n"
                                  "    file_holds: velocities\n" METHODS;
    write_file("/tmp/dm-test-nbody/b.csv", "name, mass, x, y, z, vx, vy, vz\na, 1, 0, 0, 0\n");
    refused(file_suite, "/tmp/dm-test-nbody/b.csv:2:1:", "5 fields");
    write_file("/tmp/dm-test-nbody/b.csv", "# a comment\na, 1, 0, 0, 0, 0, 0, 0\n"
                                           "b, 1, 1, 0, zero, 0, 1, 0\n");
    refused(file_suite, "/tmp/dm-test-nbody/b.csv:3:13:", "'zero' is not a finite number");
    write_file("/tmp/dm-test-nbody/b.csv", "\"a\", 1, 0, 0, 0, 0, 0, 0\n");
    refused(file_suite, "/tmp/dm-test-nbody/b.csv:1:1:", "quoted fields are not read");
    write_file("/tmp/dm-test-nbody/b.csv", "a, 0, 0, 0, 0, 0, 0, 0\nb, 1, 1, 0, 0, 0, 1, 0\n");
    refused(file_suite, "/tmp/dm-test-nbody/b.csv:1:4:", "mass must be positive");
    char many[20000] = "";
    for (int i = 0; i <= DM_NBODY_MAX; i++) {
        size_t used = strlen(many);
        snprintf(many + used, sizeof many - used, "b%d, 1, %d, 0, 0, 0, 0, 0\n", i, i);
    }
    write_file("/tmp/dm-test-nbody/b.csv", many);
    refused(file_suite, "/tmp/dm-test-nbody/b.csv:129:1:", "more than 128 bodies");
    assert_int_equal(refusal_failures, 0);
}

/* A file holding momenta gives the same bodies as one holding velocities (each momentum
 * divided by its mass once), and the bodies enter the run's configuration hash. */
static void a_file_of_momenta_gives_the_bodies_of_velocities(void **state)
{
    (void)state;
    write_file("/tmp/dm-test-nbody/v.csv", "name,mass,x,y,z,vx,vy,vz\n"
                                           "star, 2, 0, 0, 0, 0, 0, 0\n"
                                           "planet, 0.5, 1, 0, 0, 0, 1.5, 0.25\n");
    write_file("/tmp/dm-test-nbody/p.csv", "star, 2, 0, 0, 0, 0, 0, 0\n"
                                           "planet, 0.5, 1, 0, 0, 0, 0.75, 0.125\n");
    dm_suite sv, sp, s2;
    parse_ok(HEAD "    G: 1\n    units: u\n    bodies_file: v.csv\n    file_holds: velocities\n"
                  METHODS, &sv);
    parse_ok(HEAD "    G: 1\n    units: u\n    bodies_file: p.csv\n    file_holds: momenta\n"
                  METHODS, &sp);
    parse_ok(HEAD "    G: 1\n    units: u\n    bodies_file: p.csv\n    file_holds: velocities\n"
                  METHODS, &s2);
    const dm_instance *a = &sv.runs[0].inst, *b = &sp.runs[0].inst;
    assert_int_equal(a->dof, 6);
    assert_memory_equal(a->p0, b->p0, 6 * sizeof(double));
    assert_string_equal(sv.runs[0].hash, sp.runs[0].hash);
    assert_string_not_equal(sv.runs[0].hash, s2.runs[0].hash);
    assert_string_equal(sv.runs[0].data_source, "/tmp/dm-test-nbody/v.csv");
    dm_suite_free(&sv);
    dm_suite_free(&sp);
    dm_suite_free(&s2);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(outer_solar_system_data_gives_the_known_periods),
        cmocka_unit_test(verlet_energy_error_is_bounded_and_of_order_two),
        cmocka_unit_test(jupiter_period_is_measured_whatever_the_buckets_and_units),
        cmocka_unit_test(splitting_methods_conserve_momentum_and_angular_momentum),
        cmocka_unit_test(fused_loop_and_per_step_path_agree_bit_for_bit),
        cmocka_unit_test(two_bodies_are_the_kepler_problem),
        cmocka_unit_test(eccentric_orbit_period_is_measured_at_large_steps),
        cmocka_unit_test(a_period_from_missed_crossings_is_dropped),
        cmocka_unit_test(bad_bodies_are_refused_in_one_line),
        cmocka_unit_test(a_file_of_momenta_gives_the_bodies_of_velocities),
    };
    return cmocka_run_group_tests(tests, make_folder, NULL);
}
