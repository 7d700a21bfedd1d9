/* test_wisdom_holman.c — the exact Kepler drift in universal variables and the
 * Wisdom-Holman splitting built on it (J. Wisdom, M. Holman, Astron. J. 102 (1991)
 * 1528; J. M. A. Danby, Fundamentals of Celestial Mechanics, 2nd ed. (1988)).
 *
 * References for the checks: the Stumpff functions against their closed forms in long
 * double; the drift against the Kepler problem's exact solution (problems/kepler.c,
 * Kepler's equation), on hyperbolic orbits against the conserved energy, angular
 * momentum and eccentricity vector and against itself (drifts compose); the method on
 * two bodies against the same exact solution, on the outer solar system against
 * Stormer-Verlet. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"
#include "kepler.h"
#include "nbody.h"

#define SRC "/tmp/dm-test-nbody/wh.yaml"
#define OUT "/tmp/dm-test-nbody/wh.h5"
#include "dm_outer_solar.h"

static int make_folder(void **state)
{
    (void)state;
    return system("mkdir -p /tmp/dm-test-nbody");
}

/* c2 = (1 - cos sqrt x) / x, c3 = (sqrt x - sin sqrt x) / x^(3/2), and the cosh, sinh
 * forms below 0 (Danby, section 6.9, from memory), in long double. */
static void stumpff_functions_match_their_closed_forms(void **state)
{
    (void)state;
    static const double xs[] = { -400, -50, -3, -0.2, -1e-3, 1e-3, 0.2, 1, 3, 9.8, 50, 400 };
    for (size_t i = 0; i < sizeof xs / sizeof xs[0]; i++) {
        long double x = xs[i], c0, c1, c2, c3;
        if (x > 0) {
            long double r = sqrtl(x);
            c0 = cosl(r);
            c1 = sinl(r) / r;
            c2 = (1 - cosl(r)) / x;
            c3 = (r - sinl(r)) / (x * r);
        } else {
            long double r = sqrtl(-x);
            c0 = coshl(r);
            c1 = sinhl(r) / r;
            c2 = (coshl(r) - 1) / -x;
            c3 = (sinhl(r) - r) / (-x * r);
        }
        double c[4];
        dm_stumpff(xs[i], c);
        print_message("x = %g: c0..c3 %.17g %.17g %.17g %.17g\n", xs[i], c[0], c[1], c[2], c[3]);
        /* c0 and c1 of a large positive x are sines and cosines near zero: absolute */
        assert_true(fabs(c[0] - (double)c0) < 1e-12 * fmax(1.0, fabs((double)c0)));
        assert_true(fabs(c[1] - (double)c1) < 1e-12 * fmax(1.0, fabs((double)c1)));
        assert_close(c[2], (double)c2, 1e-12);
        assert_close(c[3], (double)c3, 1e-11);
    }
    double c[4];
    dm_stumpff(0.0, c);
    assert_true(c[0] == 1.0 && c[1] == 1.0 && c[2] == 0.5 && c[3] == 1.0 / 6.0);
}

/* The drift on bound orbits of eccentricity 0 to 0.99, over times up to several
 * periods, against the Kepler problem's exact solution (Kepler's equation, an
 * independent route). */
static void kepler_drift_follows_the_exact_ellipse(void **state)
{
    (void)state;
    static const double eccentricities[] = { 0.0, 0.3, 0.6, 0.9, 0.99 };
    const char *keys[] = { "mu", "semi_major_axis", "eccentricity" };
    for (size_t k = 0; k < sizeof eccentricities / sizeof eccentricities[0]; k++) {
        double values[] = { 2.5, 1.7, eccentricities[k] };
        dm_instance inst;
        dm_error err = { 0 };
        assert_int_equal(dm_instance_init(&inst, dm_problem_find("kepler"), 3, keys, values,
                                          &err), DM_OK);
        double worst = 0.0;
        for (int j = -13; j <= 40; j++) {
            double t = inst.period * j / 7.3;
            double x[3] = { inst.q0[0], inst.q0[1], 0 }, v[3] = { inst.p0[0], inst.p0[1], 0 };
            assert_int_equal(dm_kepler_drift(2.5, x, v, t), 0);
            double q[2], p[2];
            inst.problem->exact(&inst, t, q, p);
            double speed = hypot(p[0], p[1]), r = hypot(q[0], q[1]);
            worst = fmax(worst, hypot(x[0] - q[0], x[1] - q[1]) / r);
            worst = fmax(worst, hypot(v[0] - p[0], v[1] - p[1]) / speed);
            assert_true(x[2] == 0.0 && v[2] == 0.0);
        }
        print_message("e = %g: largest relative difference %.3g\n", eccentricities[k], worst);
        assert_true(worst < 1e-10);
    }
}

/* H, L and the eccentricity vector of a two-body state. */
static void orbit_constants(double mu, const double *x, const double *v, double *out)
{
    double r = sqrt(x[0] * x[0] + x[1] * x[1] + x[2] * x[2]);
    double L[3] = { x[1] * v[2] - x[2] * v[1], x[2] * v[0] - x[0] * v[2],
                    x[0] * v[1] - x[1] * v[0] };
    out[0] = 0.5 * (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]) - mu / r;
    for (int k = 0; k < 3; k++)
        out[1 + k] = L[k];
    double vxL[3] = { v[1] * L[2] - v[2] * L[1], v[2] * L[0] - v[0] * L[2],
                      v[0] * L[1] - v[1] * L[0] };
    for (int k = 0; k < 3; k++)
        out[4 + k] = vxL[k] / mu - x[k] / r;
}

/* Hyperbolic and parabolic passes, through periapsis and back: the orbit's constants
 * hold, two drifts make one, and a drift back returns. */
static void kepler_drift_takes_hyperbolic_and_parabolic_passes(void **state)
{
    (void)state;
    static const double eccentricities[] = { 1.0, 1.01, 1.5, 3.0, 30.0 };
    const double mu = 1.3, rp = 0.4;
    for (size_t k = 0; k < sizeof eccentricities / sizeof eccentricities[0]; k++) {
        double e = eccentricities[k];
        /* periapsis at rp on the x axis, in a tilted plane */
        double speed = sqrt(mu * (1.0 + e) / rp);
        double x0[3] = { rp, 0, 0 }, v0[3] = { 0, speed * 0.8, speed * 0.6 };
        double before[7], after[7];
        orbit_constants(mu, x0, v0, before);
        double worst = 0.0;
        for (int j = -5; j <= 5; j++) {
            double t = 3.0 * j;
            double x[3] = { x0[0], x0[1], x0[2] }, v[3] = { v0[0], v0[1], v0[2] };
            assert_int_equal(dm_kepler_drift(mu, x, v, t), 0);
            orbit_constants(mu, x, v, after);
            worst = fmax(worst, fabs(after[0] - before[0]) / (mu / rp));
            for (int c = 1; c < 7; c++)
                worst = fmax(worst, fabs(after[c] - before[c]) /
                                        (c < 4 ? sqrt(mu * rp * (1 + e)) : 1.0 + e));
            /* t/2 twice is t; and back again */
            double y[3] = { x0[0], x0[1], x0[2] }, w[3] = { v0[0], v0[1], v0[2] };
            assert_int_equal(dm_kepler_drift(mu, y, w, 0.5 * t), 0);
            assert_int_equal(dm_kepler_drift(mu, y, w, 0.5 * t), 0);
            double size = sqrt(x[0] * x[0] + x[1] * x[1] + x[2] * x[2]);
            for (int c = 0; c < 3; c++)
                worst = fmax(worst, fabs(y[c] - x[c]) / size);
            /* back again: rounding at the distance reached, carried back */
            assert_int_equal(dm_kepler_drift(mu, x, v, -t), 0);
            for (int c = 0; c < 3; c++)
                worst = fmax(worst, fabs(x[c] - x0[c]) / fmax(size, rp));
        }
        print_message("e = %g: largest relative change %.3g\n", e, worst);
        assert_true(worst < 1e-10);
    }
}

/* Two bodies in Jacobi coordinates: the interaction vanishes, so each step is the exact
 * Kepler motion. After 30 steps of a third of a period of an e = 0.7 orbit (where
 * Stormer-Verlet has no digit left) the energy is kept to 1e-12 and the relative state
 * is the exact one (Kepler's equation) and that of the same 30 drifts applied directly
 * to 1e-9: what differs is rounding (1e-15 at the first step), which the orbit's shear
 * (a change of energy changes the mean motion) carries along the track, most at each
 * periapsis pass: measured 1.6e-10 after these 10 periods, 3e-12 at 30 steps a period,
 * 3e-9 after 100 periods. */
static void two_bodies_are_integrated_exactly(void **state)
{
    (void)state;
    const double m1 = 1.0, m2 = 0.05, mu = m1 + m2; /* G = 1 */
    dm_nbody pair;
    dm_instance two, kepler;
    dm_error err = { 0 };
    two_bodies_and_kepler(m1, m2, 1.3, 0.7, &pair, &two, &kepler);
    const dm_method *wh = dm_method_find("wisdom-holman");
    assert_non_null(wh);
    dm_method_config mc = { .h = kepler.period / 3.0 };
    double buf[2][2 * DM_MAX_DOF];
    memcpy(buf[0], two.q0, 6 * sizeof(double));
    memcpy(buf[0] + 6, two.p0, 6 * sizeof(double));
    dm_point pt[2] = { { 0, buf[0], NAN }, { 0, buf[1], NAN } };
    dm_stepper *s = dm_stepper_create(wh, &two, &mc, &pt[0], &err);
    assert_non_null(s);
    double worst = 0.0, worst_energy = 0.0;
    /* the same 30 Kepler drifts applied to the relative state directly */
    double xr[3] = { kepler.q0[0], kepler.q0[1], 0 }, vr[3] = { kepler.p0[0], kepler.p0[1], 0 };
    double worst_drifts = 0.0;
    for (int k = 0; k < 30; k++) {
        assert_int_equal(dm_stepper_step(s, &pt[k % 2], &pt[(k + 1) % 2]), DM_OK);
        const dm_point *at = &pt[(k + 1) % 2];
        const double *x = at->x;
        double q[2], p[2];
        kepler.problem->exact(&kepler, at->t, q, p);
        double r = hypot(q[0], q[1]), speed = hypot(p[0], p[1]);
        for (int c = 0; c < 2; c++) {
            worst = fmax(worst, fabs(x[3 + c] - x[c] - q[c]) / r);
            worst = fmax(worst, fabs(x[9 + c] / m2 - x[6 + c] / m1 - p[c]) / speed);
        }
        assert_int_equal(dm_kepler_drift(mu, xr, vr, mc.h), 0);
        for (int c = 0; c < 2; c++) {
            worst_drifts = fmax(worst_drifts, fabs(x[3 + c] - x[c] - xr[c]) / r);
            worst_drifts = fmax(worst_drifts, fabs(x[9 + c] / m2 - x[6 + c] / m1 - vr[c]) / speed);
        }
        double H = two.problem->kinetic(&two, x + 6) + at->potential;
        worst_energy = fmax(worst_energy, fabs(H / two.energy - 1.0));
    }
    print_message("two bodies, h = T/3, 30 steps: against the exact orbit %.3g, against the "
                  "drifts alone %.3g, energy %.3g\n", worst, worst_drifts, worst_energy);
    assert_true(worst_energy < 1e-12);
    assert_true(worst < 1e-9);
    assert_true(worst_drifts < 1e-9);
    dm_stepper_destroy(s);
}

/* The outer solar system at a 10-day step over 10^5 days: the energy error of
 * Wisdom-Holman is at least 100 times below Stormer-Verlet's (a fact of the trade: its
 * error carries the planets' mass ratio, about 10^-3), second order as the step halves,
 * and momentum and angular momentum are kept to rounding; Jupiter's measured period is
 * within 1 % of its sidereal period, 4332.6 days (a fact of the trade, from memory). */
static void wisdom_holman_beats_verlet_on_the_outer_solar_system(void **state)
{
    (void)state;
    char *text = outer_suite(1e5, 500, "  - {method: verlet, h: 10}\n"
                                       "  - {method: wisdom-holman, h: [10, 5]}\n");
    dm_suite suite;
    dm_error err = { 0 };
    if (dm_suite_parse(&suite, text, strlen(text), SRC, NULL, &err) != DM_OK)
        fail_msg("%s", err.msg);
    dm_run_result r[3];
    for (int i = 0; i < 3; i++) {
        assert_int_equal(dm_run(&suite.runs[i], &r[i], NULL, &err), DM_OK);
        assert_int_equal(r[i].status, DM_RUN_OK);
    }
    double verlet = r[0].metrics.max_energy_error, wh10 = r[1].metrics.max_energy_error;
    double wh5 = r[2].metrics.max_energy_error;
    double order = log(wh10 / wh5) / log(2.0);
    print_message("max |dE|: verlet %.4g, wisdom-holman %.4g (ratio %.1f); at h = 5 %.4g: "
                  "order %.3f\n", verlet, wh10, verlet / wh10, wh5, order);
    assert_true(verlet >= 100.0 * wh10);
    assert_true(fabs(order - 2.0) < 0.1);
    for (int i = 1; i < 3; i++) {
        const double *e = r[i].metrics.max_invariant_error;
        print_message("momentum %.3g, angular momentum %.3g, centre of mass %.3g; Jupiter's "
                      "period %.3f days\n", e[0], e[1], e[2], r[i].metrics.period_measured);
        assert_true(e[0] < 1e-12 && e[1] < 1e-12 && e[2] < 1e-12);
        assert_true(fabs(r[i].metrics.period_measured / 4332.6 - 1.0) < 0.01);
    }
    for (int i = 0; i < 3; i++)
        dm_run_result_free(&r[i]);
    dm_suite_free(&suite);
    free(text);
}

/* Problems that are not N-body with a dominant first body are refused before anything
 * runs, at the method entry, in one line. */
static void problems_without_a_dominant_mass_are_refused(void **state)
{
    (void)state;
    static const struct { const char *text, *where, *what; } cases[] = {
        { "output: " OUT "\nhorizon: {periods: 10}\nproblems:\n  - {problem: kepler}\n"
          "methods:\n  - {method: wisdom-holman, h: 0.1}\n",
          SRC ":6:5:", "runs N-body problems only, not kepler" },
        { "output: " OUT "\nhorizon: {time: 10}\nproblems:\n  - problem: nbody\n    G: 1\n"
          "    units: u\n    bodies:\n"
          "      - {mass: 1, position: [-1, 0, 0], velocity: [0, -0.3, 0]}\n"
          "      - {mass: 1, position: [1, 0, 0], velocity: [0, 0.3, 0]}\n"
          "methods:\n  - {method: wisdom-holman, h: 0.1}\n",
          SRC ":11:5:", "needs a dominant first body" },
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        dm_suite suite;
        dm_error err = { 0 };
        dm_status st = dm_suite_parse(&suite, cases[i].text, strlen(cases[i].text), SRC, NULL,
                                      &err);
        print_message("%s\n", err.msg);
        assert_int_equal(st, DM_EINPUT);
        assert_true(strncmp(err.msg, cases[i].where, strlen(cases[i].where)) == 0);
        assert_non_null(strstr(err.msg, cases[i].what));
    }
}

/* Stopped at every bucket end and continued from its checkpoint, a run ends bit for bit
 * as one never stopped: Wisdom-Holman (its Jacobi state and kick restored, not
 * recomputed) and Stormer-Verlet through the N-body fused loop (its closest approach
 * carried in the checkpoint too). */
static void a_stopped_run_continues_bit_for_bit(void **state)
{
    (void)state;
    char *text = outer_suite(3e3, 7, "  - {method: wisdom-holman, h: 10}\n"
                                     "  - {method: verlet, h: 10}\n");
    dm_suite suite;
    dm_error err = { 0 };
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, NULL, &err), DM_OK);
    for (size_t i = 0; i < suite.n_runs; i++) {
        dm_run_result whole, part;
        assert_int_equal(dm_run(&suite.runs[i], &whole, NULL, &err), DM_OK);
        int stops = dm_test_run_stopping_everywhere(&suite.runs[i], &part);
        print_message("%s: %d stops\n", suite.runs[i].id, stops);
        assert_true(stops >= 5);
        assert_int_equal(part.status, DM_RUN_OK);
        assert_memory_equal(whole.series.energy_error, part.series.energy_error,
                            whole.series.n * sizeof(double));
        assert_memory_equal(whole.series.invariant_error[1], part.series.invariant_error[1],
                            whole.series.n * sizeof(double));
        assert_memory_equal(&whole.metrics.max_energy_error, &part.metrics.max_energy_error,
                            sizeof(double));
        assert_memory_equal(&whole.metrics.period_measured, &part.metrics.period_measured,
                            sizeof(double));
        assert_memory_equal(&whole.metrics.closest_approach, &part.metrics.closest_approach,
                            sizeof(double));
        assert_true(whole.metrics.closest_approach > 0.0);
        dm_run_result_free(&whole);
        dm_run_result_free(&part);
    }
    dm_suite_free(&suite);
    free(text);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(stumpff_functions_match_their_closed_forms),
        cmocka_unit_test(kepler_drift_follows_the_exact_ellipse),
        cmocka_unit_test(kepler_drift_takes_hyperbolic_and_parabolic_passes),
        cmocka_unit_test(two_bodies_are_integrated_exactly),
        cmocka_unit_test(wisdom_holman_beats_verlet_on_the_outer_solar_system),
        cmocka_unit_test(problems_without_a_dominant_mass_are_refused),
        cmocka_unit_test(a_stopped_run_continues_bit_for_bit),
    };
    return cmocka_run_group_tests(tests, make_folder, NULL);
}
