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

static double harmonic_dV(void *data, double q)
{
    double w = *(double *)data;
    return w * w * q;
}

static double pendulum_V(void *data, double q)
{
    (void)data;
    return -cos(q);
}

static double pendulum_dV(void *data, double q)
{
    (void)data;
    return sin(q);
}

static double quartic_V(void *data, double q)
{
    (void)data;
    return 0.25 * q * q * q * q;
}

static double quartic_dV(void *data, double q)
{
    (void)data;
    return q * q * q;
}

static double morse_V(void *data, double q)
{
    (void)data;
    double s = expm1(-q);
    return s * s;
}

static double morse_dV(void *data, double q)
{
    (void)data;
    double s = expm1(-q);
    return -2.0 * s * (s + 1.0);
}

/* V = x^2 (x^2 - 2) / 4, with x^2 - 2 by one rounding (fma): next to the separatrix the
 * energy of a start then carries no cancellation. */
static double well_V(void *data, double q)
{
    (void)data;
    return 0.25 * (q * q) * fma(q, q, -2.0);
}

static double well_dV(void *data, double q)
{
    (void)data;
    return q * fma(q, q, -1.0);
}

/* Each orbit is integrated twice: without V' (path 0) and with it (path 1). */
static const char *const path_name[2] = { "without V'", "with V'" };

static dm_orbit orbit_ok(dm_potential_fn V, dm_potential_fn dV, void *data, double m, double E,
                         double q0)
{
    dm_orbit o;
    dm_error err = { 0 };
    if (dm_orbit_period(V, dV, data, m, E, q0, 1e6, "test", &o, &err) != DM_OK)
        fail_msg("%s", err.msg);
    return o;
}

/* Harmonic oscillator: T = 2 pi / w at every amplitude, times sqrt(m) (common practice). */
static void harmonic_period_is_2pi_over_w(void **state)
{
    (void)state;
    double w = 2.7;
    for (int path = 0; path < 2; path++) {
        dm_potential_fn dV = path ? harmonic_dV : NULL;
        double tol = path ? 1e-15 : 1e-13; /* measured: 2.5e-14 without V', 2.1e-16 with */
        for (double E = 1e-6; E < 1e6; E *= 37.0) {
            dm_orbit o = orbit_ok(harmonic_V, dV, &w, 1.0, E, 0.0);
            assert_close(o.period, 2.0 * M_PI / w, tol);
        }
        /* mass 4: twice the period */
        dm_orbit o = orbit_ok(harmonic_V, dV, &w, 4.0, 1.0, 0.0);
        assert_close(o.period, 4.0 * M_PI / w, tol);
    }
}

/* Pendulum V = -cos q from rest at theta0: T = 4 K(m), m = sin^2(theta0/2) (common
 * practice), K from GSL (gsl_sf_ellint_Kcomp takes the modulus k = sin(theta0/2)); next
 * to the separatrix against our own K(m1 = cos^2(theta0/2)), itself checked against
 * mpmath (tests/test_elliptic.c). */
static void pendulum_period_matches_the_elliptic_integral(void **state)
{
    (void)state;
    const double amplitudes[] = { 0.1, 1.0, 2.0, 2.5, 3.0, 3.1 };
    for (int path = 0; path < 2; path++) {
        dm_potential_fn dV = path ? pendulum_dV : NULL;
        for (size_t i = 0; i < sizeof amplitudes / sizeof amplitudes[0]; i++) {
            double th = amplitudes[i];
            dm_orbit o = orbit_ok(pendulum_V, dV, NULL, 1.0, -cos(th), th);
            double T = 4.0 * gsl_sf_ellint_Kcomp(sin(0.5 * th), GSL_PREC_DOUBLE);
            print_message("pendulum %g %s: %.17g against %.17g (%d evaluations)\n", th,
                          path_name[path], o.period, T, o.evaluations);
            /* without V': 1e-12 where E - V is well conditioned; at 3.1 rad the slope of V
             * at the turning points is 0.04 and the rounding of E - V in double limits it
             * to a few 1e-12. With V' (measured against mpmath 4 ellipk((1 + E)/2) at 40
             * digits): 7e-16, and 5e-15 at 3.1 */
            assert_close(o.period, T, path ? (th < 3.05 ? 2e-15 : 1e-14)
                                           : (th < 3.05 ? 1e-12 : 1e-11));
            assert_close(o.q_plus, th, 1e-12);
        }
        /* 1e-4 below the separatrix, by energy: theta0 from E, K from m1 (measured 1.3e-11
         * without V', 4e-14 with); 1e-9 and 1e-12 below it the period cannot be integrated
         * to 3e-10 in double precision: refused */
        double E = 1.0 - 1e-4;
        dm_orbit o = orbit_ok(pendulum_V, dV, NULL, 1.0, E, 0.0);
        double T = 4.0 * dm_ellipk_m1(0.5 * (1.0 - E)); /* cos^2(theta0/2) = (1 - E)/2 */
        print_message("pendulum E = 1 - 1e-4 %s: %.17g against %.17g (est. %.1e)\n",
                      path_name[path], o.period, T, o.error_estimate);
        assert_close(o.period, T, path ? 1e-13 : 3e-10);
        for (double gap = 1e-9; gap >= 1e-12; gap *= 1e-3) {
            dm_error err = { 0 };
            assert_int_equal(dm_orbit_period(pendulum_V, dV, NULL, 1.0, 1.0 - gap, 0.0, 1e6,
                                             "p", &o, &err), DM_EINPUT);
            assert_non_null(strstr(err.msg, "separatrix"));
        }
    }
}

/* Pure quartic V = q^4/4 at amplitude A: x = A cn(A t | 1/2), T = 4 K(1/2) / A (common
 * practice); K(1/2) = 1.8540746773013719 (A&S table 17.1, mpmath ellipk(0.5)). */
static void quartic_period_is_4K_half_over_amplitude(void **state)
{
    (void)state;
    for (int path = 0; path < 2; path++)
        for (double A = 0.01; A < 200.0; A *= 3.7) {
            dm_orbit o = orbit_ok(quartic_V, path ? quartic_dV : NULL, NULL, 1.0,
                                  0.25 * A * A * A * A, A);
            /* measured: 5e-14 without V', 2.1e-16 with */
            assert_close(o.period, 4.0 * 1.8540746773013719 / A, path ? 1e-15 : 1e-12);
        }
}

/* Morse with D = alpha = m = 1: T = 2 pi / sqrt(2 (1 - E)) (common practice), up to
 * 1e-6 below dissociation (where V is within 1e-3 of E over half the orbit, so E - V
 * keeps 4 digits fewer). */
static void morse_period_matches_the_closed_form(void **state)
{
    (void)state;
    const double energies[] = { 1e-4, 0.3, 0.9, 0.999 };
    for (int path = 0; path < 2; path++) {
        dm_potential_fn dV = path ? morse_dV : NULL;
        for (size_t i = 0; i < sizeof energies / sizeof energies[0]; i++) {
            double E = energies[i];
            dm_orbit o = orbit_ok(morse_V, dV, NULL, 1.0, E, 0.0);
            print_message("morse E = %g %s: %d evaluations\n", E, path_name[path],
                          o.evaluations);
            /* measured without V': 2.4e-13, 4.9e-12 at 0.999; with: 3.3e-16, 1.2e-14 */
            assert_close(o.period, 2.0 * M_PI / sqrt(2.0 * (1.0 - E)),
                         path ? (E < 0.95 ? 1e-15 : 5e-14) : (E < 0.95 ? 1e-12 : 1e-9));
        }
        /* 1e-6 below dissociation the outer turning point is too flat: refused */
        dm_orbit o;
        dm_error err = { 0 };
        assert_int_equal(dm_orbit_period(morse_V, dV, NULL, 1.0, 1.0 - 1e-6, 0.0, 1e6, "m", &o,
                                         &err), DM_EINPUT);
    }
}

/* Double well V = -x^2/2 + x^4/4 at 1e-6 on each side of its separatrix E = 0, 1e-9 above,
 * against the built-in problem's closed form (checked against mpmath in
 * tests/check_separatrix.py) for the same energy. */
static void double_well_period_next_to_the_separatrix(void **state)
{
    (void)state;
    const double energies[] = { -1e-6, 1e-6, 1e-9, -0.2, 0.5 };
    for (int path = 0; path < 2; path++)
    for (size_t i = 0; i < sizeof energies / sizeof energies[0]; i++) {
        dm_instance inst;
        const char *keys[] = { "energy" };
        double values[] = { energies[i] };
        dm_error err = { 0 };
        assert_int_equal(dm_instance_init(&inst, dm_problem_find("double_well"), 1, keys,
                                          values, &err), DM_OK);
        /* the same state: its start, at rest, with the energy this V gives it */
        dm_orbit o = orbit_ok(well_V, path ? well_dV : NULL, NULL, 1.0,
                              well_V(NULL, inst.q0[0]), inst.q0[0]);
        print_message("double well E = %g %s: %.17g against %.17g (%d evaluations, est. "
                      "%.1e)\n", energies[i], path_name[path], o.period, inst.period,
                      o.evaluations, o.error_estimate);
        /* next to the separatrix the inner turning point's slope is sqrt(2) |E|^1/2: the
         * rounding of E - V in double limits the quadrature without V' to about 1e-9
         * there (measured 2.4e-10); with V' to 1.3e-14, and 6e-14 at 1e-9 above it (the
         * quadrature's tolerance); 1e-15 elsewhere (measured 1.7e-16) */
        double tol = fabs(energies[i]) > 1e-3 ? (path ? 1e-15 : 1e-12) : (path ? 1e-13 : 1e-9);
        assert_close(o.period, inst.period, tol);
    }
    /* in one well 1e-9 below the saddle the inner turning point is too flat: refused */
    dm_orbit o;
    dm_error err = { 0 };
    double x0 = sqrt(1.0 + sqrt(1.0 - 4e-9)); /* the outer turning point at E = -1e-9 */
    for (int path = 0; path < 2; path++) {
        assert_int_equal(dm_orbit_period(well_V, path ? well_dV : NULL, NULL, 1.0,
                                         well_V(NULL, x0), x0, 1e6, "w", &o, &err), DM_EINPUT);
        assert_non_null(strstr(err.msg, "separatrix"));
    }
}

static void refused(dm_potential_fn V, dm_potential_fn dV, double E, double q0,
                    const char *words)
{
    dm_orbit o;
    dm_error err = { 0 };
    assert_int_equal(dm_orbit_period(V, dV, NULL, 1.0, E, q0, 1e3, "mine", &o, &err),
                     DM_EINPUT);
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

static double line_dV(void *data, double q)
{
    (void)data;
    (void)q;
    return 1.0;
}

static double log_V(void *data, double q)
{
    (void)data;
    return -log(q) + q; /* NaN for q < 0 */
}

static double log_dV(void *data, double q)
{
    (void)data;
    return -1.0 / q + 1.0;
}

/* not the derivative of quartic_V: 3 q^2 */
static double wrong_dV(void *data, double q)
{
    (void)data;
    return 3.0 * q * q;
}

/* V unbounded below at q = 0.3, which no sample of the search lands on: a pole and a
 * logarithm (found by a tester: -1/|q| was refused as "too close to a separatrix") */
static double pole_V(void *data, double q)
{
    (void)data;
    return -1.0 / fabs(q - 0.3);
}

static double pole_dV(void *data, double q)
{
    (void)data;
    return (q > 0.3 ? 1.0 : -1.0) / ((q - 0.3) * (q - 0.3));
}

static double ln_V(void *data, double q)
{
    (void)data;
    return log(fabs(q - 0.3));
}

static double ln_dV(void *data, double q)
{
    (void)data;
    return 1.0 / (q - 0.3);
}

/* a kink, not a singularity: V = |q| */
static double kink_V(void *data, double q)
{
    (void)data;
    return fabs(q);
}

static double kink_dV(void *data, double q)
{
    (void)data;
    return q > 0.0 ? 1.0 : q < 0.0 ? -1.0 : 0.0;
}

/* a cusp, infinite force but V bounded below: V = sqrt|q| */
static double cusp_V(void *data, double q)
{
    (void)data;
    return sqrt(fabs(q));
}

static double cusp_dV(void *data, double q)
{
    (void)data;
    return q == 0.0 ? 0.0 : (q > 0.0 ? 0.5 : -0.5) / sqrt(fabs(q));
}

static void bad_orbits_are_refused_in_one_line(void **state)
{
    (void)state;
    for (int path = 0; path < 2; path++) {
        /* nothing stops it going down */
        refused(line_V, path ? line_dV : NULL, 1.0, 0.0, "unbounded");
        /* the separatrix itself: E - V touches 0 at the top */
        refused(pendulum_V, path ? pendulum_dV : NULL, 1.0, 0.0, "separatrix");
        /* at rest at the bottom */
        refused(pendulum_V, path ? pendulum_dV : NULL, -1.0, 0.0, "equilibrium");
        refused(quartic_V, path ? quartic_dV : NULL, -1.0, 0.0, "below");
        refused(log_V, path ? log_dV : NULL, 50.0, 1.0, "not finite");
        /* the orbit through q0 = 1 at rest falls into the singularity at 0.3 */
        refused(pole_V, path ? pole_dV : NULL, pole_V(NULL, 1.0), 1.0,
                "V is unbounded below (singular) at q = 0.29999999999999");
        refused(ln_V, path ? ln_dV : NULL, ln_V(NULL, 1.0), 1.0,
                "V is unbounded below (singular) at q = 0.29999999999999");
        /* a kink is no singularity: V = |q| at E = 1 (m = 1) is a uniform deceleration
         * from speed sqrt(2) for a time sqrt(2), four times: T = 4 sqrt(2) */
        dm_orbit o = orbit_ok(kink_V, path ? kink_dV : NULL, NULL, 1.0, 1.0, 0.0);
        assert_close(o.period, 4.0 * sqrt(2.0), 1e-12);
        /* nor is a cusp: V = sqrt|q| at E = 1 (m = 1), q = u^2: T = 4 int_0^1 2u du /
         * sqrt(2 (1 - u)) = (8 / sqrt 2) B(2, 1/2) = 32 / (3 sqrt 2) (the Beta function,
         * Abramowitz and Stegun 6.2.1 and 6.2.2) */
        o = orbit_ok(cusp_V, path ? cusp_dV : NULL, NULL, 1.0, 1.0, 0.0);
        print_message("cusp %s: %.17g against %.17g\n", path_name[path], o.period,
                      32.0 / (3.0 * sqrt(2.0)));
        assert_close(o.period, 32.0 / (3.0 * sqrt(2.0)), 1e-9);
    }
    /* a derivative that is not V's */
    refused(quartic_V, wrong_dV, 1.0, 0.0, "derivative");
}

/* The cart on a bump, V = g (x^2/8 + b exp(-4 x^2)), g = 9.81, E = 6, mass 1, at five
 * bumps (found by a tester: without V' off by up to 4e-12), against mpmath 1.2.1 at 40
 * digits: T = 2 * quad(1 / sqrt(2 (E - V)), [q-, 0, q+]) by tanh-sinh at 60 digits' working
 * precision, q-+ by findroot of V = E; the same to 5e-33 by Gauss-Legendre after
 * q = c - d cos(phi). The script (mpmath given the doubles 9.81 and b):
 *     mp.mp.dps = 60; g = mp.mpf(9.81); E = mp.mpf(6)
 *     V = lambda x: g * (x**2 / 8 + b * mp.exp(-4 * x**2))
 *     qp = mp.findroot(lambda x: V(x) - E, 2.2); qm = mp.findroot(lambda x: V(x) - E, -2.2)
 *     T = 2 * mp.quad(lambda x: 1 / mp.sqrt(2 * (E - V(x))), [qm, 0, qp]) */
static double cart_b;

static double cart_V(void *data, double x)
{
    (void)data;
    return 9.81 * (x * x / 8.0 + cart_b * exp(-4.0 * x * x));
}

static double cart_dV(void *data, double x)
{
    (void)data;
    return 9.81 * (x / 4.0 - 8.0 * cart_b * x * exp(-4.0 * x * x));
}

static void cart_on_a_bump_matches_mpmath(void **state)
{
    (void)state;
    const double bumps[] = { 0.05, 0.1, 0.2, 0.3, 0.5 };
    const double mpmath_T[] = { 4.034933754799514888624772519052387822, /* mpmath, above */
                                4.059974483771161572949842588288923367,
                                4.118820744174777539870934682278666711,
                                4.194974003480130681991285638038304195,
                                4.482742758122611554143112792664104650 };
    for (size_t i = 0; i < sizeof bumps / sizeof bumps[0]; i++) {
        cart_b = bumps[i];
        dm_orbit o = orbit_ok(cart_V, cart_dV, NULL, 1.0, 6.0, 0.0);
        print_message("cart b = %g: %.17g against %.17g: %.1e (%d evaluations)\n", bumps[i],
                      o.period, mpmath_T[i], (o.period - mpmath_T[i]) / mpmath_T[i],
                      o.evaluations);
        assert_close(o.period, mpmath_T[i], 2e-15); /* measured: 5e-16 */
        /* V is even: the time from q- to 0 is a quarter of the period */
        double t = dm_orbit_time(cart_V, cart_dV, NULL, 1.0, 6.0, &o, 0.0);
        assert_close(t, 0.25 * o.period, 2e-15);
    }
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
        cmocka_unit_test(cart_on_a_bump_matches_mpmath),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
