/* test_henon_heiles.c — the Henon-Heiles problem (M. Henon, C. Heiles, Astron. J. 69
 * (1964) 73; H and the escape energy 1/6 as the project's shared references give them,
 * from memory of the paper): its start, its force, its return time in the harmonic
 * limit (common practice: at small energy x oscillates with frequency 1, so it crosses
 * x = 0 upward every 2 pi), Stormer-Verlet's bounded second-order energy error on a
 * regular orbit, and its refusals. */
#include "dm_test_util.h"

#include <math.h>
#include <string.h>

#include "harness.h"

static const dm_problem *hh(void)
{
    const dm_problem *p = dm_problem_find("henon_heiles");
    assert_non_null(p);
    return p;
}

static dm_status make(dm_instance *inst, double E, double y, double py, dm_error *err)
{
    const char *keys[] = { "energy", "start_y", "start_py" };
    const double values[] = { E, y, py };
    return dm_instance_init(inst, hh(), 3, keys, values, err);
}

/* The start lies on x = 0 with px > 0 and has the energy asked for; the force is the
 * gradient of the potential (central differences, step 1e-5: error about 1e-10). */
static void start_and_force_are_those_of_the_hamiltonian(void **state)
{
    (void)state;
    dm_instance inst;
    dm_error err = { 0 };
    assert_int_equal(make(&inst, 0.125, 0.2, -0.1, &err), DM_OK);
    assert_true(inst.q0[0] == 0.0 && inst.p0[0] > 0.0);
    assert_close(dm_instance_energy(&inst, inst.q0, inst.p0), 0.125, 1e-15);
    const double points[][2] = { { 0.1, 0.2 }, { -0.3, 0.4 }, { 0.5, -0.35 } };
    for (size_t k = 0; k < 3; k++) {
        double g[2], q[2] = { points[k][0], points[k][1] };
        double V = inst.problem->force(&inst, q, g);
        /* H - kinetic, written out from the paper's Hamiltonian */
        double x = q[0], y = q[1];
        assert_close(V, 0.5 * (x * x + y * y) + x * x * y - y * y * y / 3.0, 1e-15);
        for (int c = 0; c < 2; c++) {
            double a[2] = { q[0], q[1] }, b[2] = { q[0], q[1] };
            a[c] += 1e-5;
            b[c] -= 1e-5;
            double fd = (inst.problem->potential(&inst, a) - inst.problem->potential(&inst, b)) / 2e-5;
            assert_true(fabs(fd - g[c]) < 1e-9);
        }
    }
}

static dm_run_result run_suite(const char *text, dm_suite *suite)
{
    dm_error err = { 0 };
    if (dm_suite_parse(suite, text, strlen(text), "hh.yaml", "/tmp/dm-test-hh.h5", &err) != DM_OK)
        fail_msg("%s", err.msg);
    dm_run_result r;
    assert_int_equal(dm_run(&suite->runs[0], &r, NULL, &err), DM_OK);
    assert_int_equal(r.status, DM_RUN_OK);
    return r;
}

/* At E = 1e-6 the motion is the harmonic oscillator's to O(E): the measured return time
 * to x = 0 is 2 pi to 1e-4 (Verlet's own phase error at 2000 steps a return is about
 * 4e-7), whatever the buckets. */
static void return_time_tends_to_two_pi_in_the_harmonic_limit(void **state)
{
    (void)state;
    char text[512];
    dm_suite s1, s2;
    snprintf(text, sizeof text, "horizon: {time: %.17g}\nbuckets: 16\nproblems:\n"
             "  - {problem: henon_heiles, energy: 1.0e-6, start_y: 0.0005}\n"
             "methods:\n  - {method: verlet, h: %.17g}\n", 200 * M_PI, M_PI / 1000);
    dm_run_result a = run_suite(text, &s1);
    char *b16 = strstr(text, "buckets: 16");
    memcpy(b16, "buckets: 99", 11);
    dm_run_result b = run_suite(text, &s2);
    print_message("return time %.12f (2 pi = %.12f) over %llu crossings\n",
                  a.metrics.period_measured, 2 * M_PI, (unsigned long long)a.crossings.total);
    assert_true(a.crossings.total >= 99);
    assert_close(a.metrics.period_measured, 2 * M_PI, 1e-4);
    assert_memory_equal(&a.metrics.period_measured, &b.metrics.period_measured, sizeof(double));
    assert_true(isnan(a.metrics.phase_error_per_period) && isnan(a.metrics.period_exact));
    dm_run_result_free(&a);
    dm_run_result_free(&b);
    dm_suite_free(&s1);
    dm_suite_free(&s2);
}

/* A regular orbit at E = 1/12: Verlet's energy error is bounded over 2000 time units and
 * falls as h^2 (Hairer, Lubich, Wanner, ch. I and X, from memory). */
static void verlet_energy_error_is_of_order_two_on_a_regular_orbit(void **state)
{
    (void)state;
    double e[2];
    for (int k = 0; k < 2; k++) {
        char text[512];
        snprintf(text, sizeof text, "horizon: {time: 2000}\nbuckets: 200\nproblems:\n"
                 "  - {problem: henon_heiles, energy: 0.08333333333333333, start_y: 0.1}\n"
                 "methods:\n  - {method: verlet, h: %g}\n", k == 0 ? 0.05 : 0.025);
        dm_suite s;
        dm_run_result r = run_suite(text, &s);
        e[k] = r.metrics.max_energy_error;
        dm_run_result_free(&r);
        dm_suite_free(&s);
    }
    double order = log(e[0] / e[1]) / log(2.0);
    print_message("max |dE| %.4g at h = 0.05, %.4g at h = 0.025: order %.3f\n", e[0], e[1], order);
    assert_true(e[0] < 1e-3);
    assert_true(fabs(order - 2.0) < 0.1);
}

/* At or above the escape energy, outside the bounded basin, or with no point of the
 * energy on the section, the state is refused in one line. */
static void states_outside_the_bounded_basin_are_refused(void **state)
{
    (void)state;
    dm_instance inst;
    dm_error err = { 0 };
    assert_int_equal(make(&inst, 1.0 / 6.0, 0.0, 0.0, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "energy"));
    assert_int_equal(make(&inst, 0.1, 1.0, 0.0, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "start_y"));
    assert_int_equal(make(&inst, 0.01, 0.3, 0.0, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "no point of energy"));
    assert_null(strchr(err.msg, '\n'));
}

/* The surface of section kept at each crossing. On Kepler's orbit (section y = 0 going
 * up) the exact points are all the periapsis, x = a (1 - e), p_x = 0: the interpolated
 * points of a sixth-order run (Yoshida) are within its error of it (Verlet's orbit
 * precesses, 2e-4 over these 50 periods at 4000 steps a period: a method's figure). On
 * Henon-Heiles every point (y, p_y) at x = 0 satisfies p_y^2 / 2 + V(0, y) <= E (p_x^2 / 2
 * is the rest), up to the run's energy error. */
static void surface_of_section_points_lie_on_the_section(void **state)
{
    (void)state;
    dm_suite s1, s2;
    const char *kepler = "horizon: {periods: 50}\nbuckets: 7\nproblems:\n"
                         "  - {problem: kepler, eccentricity: 0.5, semi_major_axis: 2}\n"
                         "methods:\n  - {method: yoshida6, steps_per_period: 400}\n";
    dm_run_result k = run_suite(kepler, &s1);
    assert_non_null(k.crossings.section_q);
    assert_true(k.crossings.n >= 49);
    double worst = 0.0;
    for (size_t i = 0; i < k.crossings.n; i++)
        worst = fmax(worst, fmax(fabs(k.crossings.section_q[i] - 1.0),
                                 fabs(k.crossings.section_p[i])));
    print_message("Kepler: %zu section points, farthest %.3g from the periapsis\n",
                  k.crossings.n, worst);
    assert_true(worst < 1e-4);
    const char *hh_text = "horizon: {time: 3000}\nbuckets: 1000\nproblems:\n"
                          "  - {problem: henon_heiles, energy: 0.125, start_y: 0.2}\n"
                          "methods:\n  - {method: yoshida4, h: 0.02}\n";
    dm_run_result h = run_suite(hh_text, &s2);
    assert_true(h.crossings.n > 100 && h.crossings.section_q != NULL);
    double above = -INFINITY;
    for (size_t i = 0; i < h.crossings.n; i++) {
        double y = h.crossings.section_q[i], py = h.crossings.section_p[i];
        above = fmax(above, 0.5 * py * py + 0.5 * y * y - y * y * y / 3.0 - 0.125);
    }
    print_message("Henon-Heiles E = 1/8: %zu points, largest p_y^2/2 + V(0, y) - E = %.3g "
                  "(max |dE| %.3g)\n", h.crossings.n, above, h.metrics.max_energy_error);
    assert_true(above <= 1e-6);
    dm_run_result_free(&k);
    dm_run_result_free(&h);
    dm_suite_free(&s1);
    dm_suite_free(&s2);
}

/* The largest Lyapunov exponent (Benettin et al., Meccanica 15 (1980) 9; renormalised
 * nearby trajectory): from a regular start at E = 1/12 (its surface of section is a
 * closed curve) it is near 0 and falls with the horizon (like log t / t: nearby regular
 * orbits part linearly); from a start at E = 0.1666, next to the escape energy where
 * most of the section is chaotic (Henon and Heiles, from memory), it is clearly
 * positive and settles as the horizon doubles. Absent unless asked; the buckets do not
 * enter it. */
static double exponent(double E, double y, double horizon, int buckets, bool ask)
{
    char text[512];
    snprintf(text, sizeof text, "horizon: {time: %g}\nbuckets: %d\n%sproblems:\n"
             "  - {problem: henon_heiles, energy: %.17g, start_y: %g}\n"
             "methods:\n  - {method: yoshida4, h: 0.02}\n", horizon, buckets,
             ask ? "lyapunov: true\n" : "", E, y);
    dm_suite s;
    dm_run_result r = run_suite(text, &s);
    double l = r.metrics.lyapunov_exponent;
    dm_run_result_free(&r);
    dm_suite_free(&s);
    return l;
}

static void lyapunov_exponent_tells_regular_from_chaotic(void **state)
{
    (void)state;
    double regular_short = exponent(1.0 / 12.0, 0.1, 2000, 100, true);
    double regular = exponent(1.0 / 12.0, 0.1, 20000, 100, true);
    double chaotic_half = exponent(0.1666, -0.1, 10000, 100, true);
    double chaotic = exponent(0.1666, -0.1, 20000, 100, true);
    double chaotic_other_buckets = exponent(0.1666, -0.1, 20000, 7, true);
    print_message("regular: %.3g over 2000, %.3g over 20000; chaotic: %.3g over 10000, %.3g "
                  "over 20000\n", regular_short, regular, chaotic_half, chaotic);
    assert_true(regular < 2e-3 && regular < 0.5 * regular_short);
    assert_true(chaotic > 0.05);
    assert_true(fabs(chaotic / chaotic_half - 1.0) < 0.3);
    assert_memory_equal(&chaotic, &chaotic_other_buckets, sizeof chaotic);
    assert_true(isnan(exponent(1.0 / 12.0, 0.1, 100, 10, false)));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(start_and_force_are_those_of_the_hamiltonian),
        cmocka_unit_test(return_time_tends_to_two_pi_in_the_harmonic_limit),
        cmocka_unit_test(verlet_energy_error_is_of_order_two_on_a_regular_orbit),
        cmocka_unit_test(states_outside_the_bounded_basin_are_refused),
        cmocka_unit_test(surface_of_section_points_lie_on_the_section),
        cmocka_unit_test(lyapunov_exponent_tells_regular_from_chaotic),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
