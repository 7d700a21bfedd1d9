/* test_orbit_period.c — periods by quadrature (problems/orbit_period.c) against closed
 * forms whose sources are named, and the refusals. */
#include "dm_test_util.h"

#include <float.h>
#include <math.h>
#include <string.h>

#include <gsl/gsl_sf_ellint.h>

#include "elliptic.h"
#include "orbit_period.h"
#include "problem.h"

typedef struct power {
    int k;
} power;

static double x_to_k(void *data, double x)
{
    return pow(x, ((power *)data)->k);
}

/* The rule itself: Kronrod 15 points integrate polynomials of degree <= 22 exactly,
 * Gauss 7 points those of degree <= 13, and not beyond (common practice: 3n+1 and
 * 2n-1 for n = 7). Exact integrals of x^k on [-1, 2]. */
static void kronrod_rule_is_exact_to_its_degree(void **state)
{
    (void)state;
    for (int k = 0; k <= 24; k++) {
        power p = { k };
        double g7, k15 = dm_kronrod15(x_to_k, &p, -1.0, 2.0, &g7);
        double exact = (pow(2.0, k + 1) - pow(-1.0, k + 1)) / (k + 1);
        double ek = fabs(k15 - exact) / fabs(exact), eg = fabs(g7 - exact) / fabs(exact);
        if (k <= 22)
            assert_true(ek < 1e-14);
        if (k <= 13)
            assert_true(eg < 1e-14);
        if (k == 14)
            assert_true(eg > 1e-8); /* and Gauss 7 is not exact beyond */
    }
}

static double harmonic_V(void *data, double q)
{
    double w = *(double *)data;
    return 0.5 * w * w * q * q;
}

static double pendulum_V(void *data, double q)
{
    (void)data;
    return -cos(q);
}

static double quartic_V(void *data, double q)
{
    (void)data;
    return 0.25 * q * q * q * q;
}

static double morse_V(void *data, double q)
{
    (void)data;
    double s = expm1(-q);
    return s * s;
}

/* V = x^2 (x^2 - 2) / 4, with x^2 - 2 by one rounding (fma): next to the separatrix the
 * energy of a start then carries no cancellation. */
static double well_V(void *data, double q)
{
    (void)data;
    return 0.25 * (q * q) * fma(q, q, -2.0);
}

static dm_orbit orbit_ok(dm_potential_fn V, void *data, double m, double E, double q0)
{
    dm_orbit o;
    dm_error err = { 0 };
    if (dm_orbit_period(V, data, m, E, q0, 1e6, "test", &o, &err) != DM_OK)
        fail_msg("%s", err.msg);
    return o;
}

/* Harmonic oscillator: T = 2 pi / w at every amplitude, times sqrt(m) (common practice). */
static void harmonic_period_is_2pi_over_w(void **state)
{
    (void)state;
    double w = 2.7;
    for (double E = 1e-6; E < 1e6; E *= 37.0) {
        dm_orbit o = orbit_ok(harmonic_V, &w, 1.0, E, 0.0);
        assert_close(o.period, 2.0 * M_PI / w, 1e-13);
    }
    dm_orbit o = orbit_ok(harmonic_V, &w, 4.0, 1.0, 0.0); /* mass 4: twice the period */
    assert_close(o.period, 4.0 * M_PI / w, 1e-13);
}

/* Pendulum V = -cos q from rest at theta0: T = 4 K(m), m = sin^2(theta0/2) (common
 * practice), K from GSL (gsl_sf_ellint_Kcomp takes the modulus k = sin(theta0/2)); next
 * to the separatrix against our own K(m1 = cos^2(theta0/2)), itself checked against
 * mpmath (tests/test_elliptic.c). */
static void pendulum_period_matches_the_elliptic_integral(void **state)
{
    (void)state;
    const double amplitudes[] = { 0.1, 1.0, 2.0, 2.5, 3.0, 3.1 };
    for (size_t i = 0; i < sizeof amplitudes / sizeof amplitudes[0]; i++) {
        double th = amplitudes[i];
        dm_orbit o = orbit_ok(pendulum_V, NULL, 1.0, -cos(th), th);
        double T = 4.0 * gsl_sf_ellint_Kcomp(sin(0.5 * th), GSL_PREC_DOUBLE);
        print_message("pendulum %g: %.17g against %.17g (%d evaluations)\n", th, o.period, T,
                      o.evaluations);
        /* 1e-12 where E - V is well conditioned; at 3.1 rad the slope of V at the turning
         * points is 0.04 and the rounding of E - V in double limits it to a few 1e-12 */
        assert_close(o.period, T, th < 3.05 ? 1e-12 : 1e-11);
        assert_close(o.q_plus, th, 1e-12);
    }
    /* 1e-4 below the separatrix, by energy: theta0 from E, K from m1; 1e-9 and 1e-12
     * below it the period cannot be integrated to 3e-10 in double precision: refused */
    double E = 1.0 - 1e-4;
    dm_orbit o = orbit_ok(pendulum_V, NULL, 1.0, E, 0.0);
    double T = 4.0 * dm_ellipk_m1(0.5 * (1.0 - E)); /* cos^2(theta0/2) = (1 - E)/2 */
    print_message("pendulum E = 1 - 1e-4: %.17g against %.17g (est. %.1e)\n", o.period, T,
                  o.error_estimate);
    assert_close(o.period, T, 3e-10);
    for (double gap = 1e-9; gap >= 1e-12; gap *= 1e-3) {
        dm_error err = { 0 };
        assert_int_equal(dm_orbit_period(pendulum_V, NULL, 1.0, 1.0 - gap, 0.0, 1e6, "p", &o,
                                         &err), DM_EINPUT);
        assert_non_null(strstr(err.msg, "separatrix"));
    }
}

/* Pure quartic V = q^4/4 at amplitude A: x = A cn(A t | 1/2), T = 4 K(1/2) / A (common
 * practice); K(1/2) = 1.8540746773013719 (A&S table 17.1, mpmath ellipk(0.5)). */
static void quartic_period_is_4K_half_over_amplitude(void **state)
{
    (void)state;
    for (double A = 0.01; A < 200.0; A *= 3.7) {
        dm_orbit o = orbit_ok(quartic_V, NULL, 1.0, 0.25 * A * A * A * A, A);
        assert_close(o.period, 4.0 * 1.8540746773013719 / A, 1e-12);
    }
}

/* Morse with D = alpha = m = 1: T = 2 pi / sqrt(2 (1 - E)) (common practice), up to
 * 1e-6 below dissociation (where V is within 1e-3 of E over half the orbit, so E - V
 * keeps 4 digits fewer). */
static void morse_period_matches_the_closed_form(void **state)
{
    (void)state;
    const double energies[] = { 1e-4, 0.3, 0.9, 0.999 };
    for (size_t i = 0; i < sizeof energies / sizeof energies[0]; i++) {
        double E = energies[i];
        dm_orbit o = orbit_ok(morse_V, NULL, 1.0, E, 0.0);
        assert_close(o.period, 2.0 * M_PI / sqrt(2.0 * (1.0 - E)), E < 0.95 ? 1e-12 : 1e-9);
    }
    /* 1e-6 below dissociation the outer turning point is too flat: refused */
    dm_orbit o;
    dm_error err = { 0 };
    assert_int_equal(dm_orbit_period(morse_V, NULL, 1.0, 1.0 - 1e-6, 0.0, 1e6, "m", &o, &err),
                     DM_EINPUT);
}

/* Double well V = -x^2/2 + x^4/4 at 1e-6 on each side of its separatrix E = 0, 1e-9 above,
 * against the built-in problem's closed form (checked against mpmath in
 * tests/check_separatrix.py) for the same energy. */
static void double_well_period_next_to_the_separatrix(void **state)
{
    (void)state;
    const double energies[] = { -1e-6, 1e-6, 1e-9, -0.2, 0.5 };
    for (size_t i = 0; i < sizeof energies / sizeof energies[0]; i++) {
        dm_instance inst;
        const char *keys[] = { "energy" };
        double values[] = { energies[i] };
        dm_error err = { 0 };
        assert_int_equal(dm_instance_init(&inst, dm_problem_find("double_well"), 1, keys,
                                          values, &err), DM_OK);
        /* the same state: its start, at rest, with the energy this V gives it */
        dm_orbit o = orbit_ok(well_V, NULL, 1.0, well_V(NULL, inst.q0[0]), inst.q0[0]);
        print_message("double well E = %g: %.17g against %.17g (%d evaluations, est. %.1e)\n",
                      energies[i], o.period, inst.period, o.evaluations, o.error_estimate);
        /* next to the separatrix the inner turning point's slope is sqrt(2) |E|^1/2: the
         * rounding of E - V in double limits the quadrature to about 1e-9 there */
        assert_close(o.period, inst.period, fabs(energies[i]) > 1e-3 ? 1e-12 : 1e-9);
    }
    /* in one well 1e-9 below the saddle the inner turning point is too flat: refused */
    dm_orbit o;
    dm_error err = { 0 };
    double x0 = sqrt(1.0 + sqrt(1.0 - 4e-9)); /* the outer turning point at E = -1e-9 */
    assert_int_equal(dm_orbit_period(well_V, NULL, 1.0, well_V(NULL, x0), x0, 1e6, "w", &o,
                                     &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "separatrix"));
}

static void refused(dm_potential_fn V, double E, double q0, const char *words)
{
    dm_orbit o;
    dm_error err = { 0 };
    assert_int_equal(dm_orbit_period(V, NULL, 1.0, E, q0, 1e3, "mine", &o, &err), DM_EINPUT);
    print_message("refused: %s\n", err.msg);
    assert_non_null(strstr(err.msg, "mine: "));
    assert_non_null(strstr(err.msg, words));
    assert_null(strchr(err.msg, '\n'));
}

static double line_V(void *data, double q)
{
    (void)data;
    return q;
}

static double log_V(void *data, double q)
{
    (void)data;
    return -log(q) + q; /* NaN for q < 0 */
}

static void bad_orbits_are_refused_in_one_line(void **state)
{
    (void)state;
    refused(line_V, 1.0, 0.0, "unbounded");           /* nothing stops it going down */
    refused(pendulum_V, 1.0, 0.0, "separatrix");      /* the separatrix itself: E - V
                                                         touches 0 at the top */
    refused(pendulum_V, -1.0, 0.0, "equilibrium");    /* at rest at the bottom */
    refused(quartic_V, -1.0, 0.0, "below");
    refused(log_V, 50.0, 1.0, "not finite");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(kronrod_rule_is_exact_to_its_degree),
        cmocka_unit_test(harmonic_period_is_2pi_over_w),
        cmocka_unit_test(pendulum_period_matches_the_elliptic_integral),
        cmocka_unit_test(quartic_period_is_4K_half_over_amplitude),
        cmocka_unit_test(morse_period_matches_the_closed_form),
        cmocka_unit_test(double_well_period_next_to_the_separatrix),
        cmocka_unit_test(bad_orbits_are_refused_in_one_line),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
