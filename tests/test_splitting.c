/* test_splitting.c — the splitting engine (out-of-place steps, FSAL, potential at the
 * end, backward steps, compensated sums) and the harmonic-oscillator oracles of the
 * Störmer–Verlet and symplectic Euler maps. */
#include "dm_method_test.h"

#include <float.h>

/* ---- helpers: the harmonic oscillator q'' = -w^2 q, H = p^2/2 + w^2 q^2/2 ---- */

static const double omega = 1.3; /* any w > 0: the oracles below hold for all */

static dm_instance harmonic(void)
{
    const char *keys[] = { "omega", "amplitude" };
    const double values[] = { omega, 0.8 };
    return dm_test_instance("harmonic", 2, keys, values);
}

/* Verlet KDK's modified energy on the harmonic oscillator,
 * p^2/2 + (1 - h^2 w^2 / 4) w^2 q^2 / 2, conserved exactly by the map (Hairer, Lubich,
 * Wanner, Geometric Numerical Integration, 2nd ed. (2006), ch. I, from memory of the
 * book; also follows from the one-step matrix below). */
static double verlet_modified_energy(double q, double p, double h)
{
    return 0.5 * p * p + (1.0 - 0.25 * h * h * omega * omega) * 0.5 * omega * omega * q * q;
}

/* The quadratic form conserved by a linear map M = [[a, b], [c, d]] of det 1 acting on
 * (q, p): S = c q^2 + (d - a) q p - b p^2 (M^T S M = S, checked by expanding). For
 * symplectic Euler it gives, after dividing by -2h:
 *   kick then drift (q1 = q0 + h p1, p1 = p0 - h w^2 q0; a = 1 - h^2 w^2, b = h,
 *   c = -h w^2, d = 1):   H~a = p^2/2 + w^2 q^2/2 - h w^2 q p / 2;
 *   drift then kick (q1 = q0 + h p0, p1 = p0 - h w^2 q1; a = 1, b = h, c = -h w^2,
 *   d = 1 - h^2 w^2):     H~b = p^2/2 + w^2 q^2/2 + h w^2 q p / 2.
 * These are the modified Hamiltonians of symplectic Euler on the harmonic oscillator
 * (Hairer, Lubich, Wanner 2006, ch. IX, where the series terminates for linear
 * problems: from memory of the book); derived here, not quoted. */
static double symeuler_invariant(double q, double p, double h, double sign)
{
    double w2 = omega * omega;
    return 0.5 * p * p + 0.5 * w2 * q * q + sign * 0.5 * h * w2 * q * p;
}

/* Runs `steps` steps and returns the largest relative deviation of invariant(q, p). */
static double max_invariant_drift(const char *method, double h, long steps,
                                  double (*invariant)(double, double, double, double),
                                  double sign)
{
    dm_instance inst = harmonic();
    double a[2] = { inst.q0[0], inst.p0[0] }, b[2];
    dm_point from = { .t = 0.0, .x = a }, to = { .x = b };
    dm_stepper *s = dm_test_stepper(dm_test_method(method), &inst, h, false, &from);
    double i0 = invariant(a[0], a[1], h, sign), worst = 0.0;
    for (long i = 0; i < steps; i++) {
        assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
        worst = fmax(worst, fabs(invariant(to.x[0], to.x[1], h, sign) - i0) / fabs(i0));
        dm_point swap = from;
        from = to;
        to = swap;
    }
    dm_stepper_destroy(s);
    return worst;
}

static double verlet_invariant(double q, double p, double h, double unused)
{
    (void)unused;
    return verlet_modified_energy(q, p, h);
}

static double plain_energy(double q, double p, double h, double unused)
{
    (void)h;
    (void)unused;
    return 0.5 * p * p + 0.5 * omega * omega * q * q;
}

/* ---- oracles ---- */

static void verlet_conserves_modified_energy_of_harmonic_oscillator(void **state)
{
    double h = 0.1;
    double drift = max_invariant_drift("verlet", h, 1000000, verlet_invariant, 0.0);
    double energy = max_invariant_drift("verlet", h, 1000, plain_energy, 0.0);
    print_message("verlet: modified energy drift over 1e6 steps %.3g, plain energy %.3g\n",
                  drift, energy);
    /* Round-off only: 1e6 steps of ~1 ulp each, at worst linear growth (common
     * practice: Brouwer 1937 gives sqrt(N) for unbiased rounding). */
    assert_true(drift < 1e6 * DBL_EPSILON);
    /* ... while H itself oscillates at O(h^2): the oracle is not trivially met. */
    assert_true(energy > 1e-4);
}

static void verlet_numerical_frequency_satisfies_cos_relation(void **state)
{
    dm_instance inst = harmonic();
    const dm_method *m = dm_test_method("verlet");
    double h = 0.25;
    /* The one-step matrix, column by column (the map is linear). */
    double mat[2][2];
    for (int col = 0; col < 2; col++) {
        double x0[2] = { col == 0, col == 1 }, x1[2];
        dm_test_run(m, &inst, h, 1, x0, x1);
        mat[0][col] = x1[0];
        mat[1][col] = x1[1];
    }
    double det = mat[0][0] * mat[1][1] - mat[0][1] * mat[1][0];
    double half_trace = 0.5 * (mat[0][0] + mat[1][1]);
    /* cos(w~ h) = 1 - h^2 w^2 / 2 (Hairer, Lubich, Wanner 2006, ch. I; REFERENCES.md). */
    double cos_expected = 1.0 - 0.5 * h * h * omega * omega;
    print_message("verlet one-step matrix: det - 1 = %.3g, tr/2 - (1 - h^2 w^2/2) = %.3g\n",
                  det - 1.0, half_trace - cos_expected);
    assert_close(det, 1.0, 4 * DBL_EPSILON);
    assert_close(half_trace, cos_expected, 4 * DBL_EPSILON);

    /* The phase after many steps: from (A, 0) the exact discrete solution is
     * q_n = A cos(n w~ h), with w~ = arccos(1 - h^2 w^2/2) / h. */
    long steps = 100000;
    double x0[2] = { inst.q0[0], inst.p0[0] }, x1[2];
    dm_test_run(m, &inst, h, steps, x0, x1);
    double theta = acos(cos_expected);
    double q_discrete = inst.q0[0] * cos((double)steps * theta);
    double q_true = inst.q0[0] * cos((double)steps * omega * h);
    print_message("verlet after 1e5 steps: q - A cos(n w~ h) = %.3g, q - A cos(n w h) = %.3g\n",
                  x1[0] - q_discrete, x1[0] - q_true);
    /* Phase error n * d(theta) with |d(theta)| ~ a few ulps of theta, times A. */
    assert_true(fabs(x1[0] - q_discrete) < 1e-9);
    assert_true(fabs(x1[0] - q_true) > 1e-2); /* the true frequency is visibly different */
}

static void symplectic_euler_kick_then_drift_conserves_its_quadratic_invariant(void **state)
{
    double h = 0.1;
    double own = max_invariant_drift("symeuler-a", h, 1000000, symeuler_invariant, -1.0);
    double other = max_invariant_drift("symeuler-a", h, 1000, symeuler_invariant, +1.0);
    print_message("symeuler-a: own invariant drift %.3g, the other variant's %.3g\n", own,
                  other);
    assert_true(own < 1e6 * DBL_EPSILON);
    assert_true(other > 1e-3); /* the sign matters: the derivation is checked */
}

static void symplectic_euler_drift_then_kick_conserves_its_quadratic_invariant(void **state)
{
    double h = 0.1;
    double own = max_invariant_drift("symeuler-b", h, 1000000, symeuler_invariant, +1.0);
    double other = max_invariant_drift("symeuler-b", h, 1000, symeuler_invariant, -1.0);
    print_message("symeuler-b: own invariant drift %.3g, the other variant's %.3g\n", own,
                  other);
    assert_true(own < 1e6 * DBL_EPSILON);
    assert_true(other > 1e-3);
}

/* ---- the engine ---- */

static void verlet_kdk_costs_one_force_evaluation_per_step(void **state)
{
    dm_instance inst = harmonic();
    double x0[2] = { inst.q0[0], inst.p0[0] }, x1[2];
    dm_counts c = dm_test_run(dm_test_method("verlet"), &inst, 0.01, 10000, x0, x1);
    /* The first step evaluates both kicks; every later one reuses the last force. */
    assert_int_equal(c.steps, 10000);
    assert_int_equal(c.force_evals, 10001);
    assert_int_equal(c.velocity_evals, 10000);
    c = dm_test_run(dm_test_method("verlet-dkd"), &inst, 0.01, 10000, x0, x1);
    assert_int_equal(c.force_evals, 10000);
    assert_int_equal(c.velocity_evals, 20000);
}

static void restart_and_foreign_buffers_drop_the_force_cache(void **state)
{
    dm_instance inst = harmonic();
    double a[2] = { inst.q0[0], inst.p0[0] }, b[2], c[2];
    dm_point pa = { .x = a }, pb = { .x = b }, pc = { .x = c };
    dm_stepper *s = dm_test_stepper(dm_test_method("verlet"), &inst, 0.1, false, &pa);
    assert_int_equal(dm_stepper_step(s, &pa, &pb), DM_OK);
    assert_int_equal(s->counts.force_evals, 2);
    assert_int_equal(dm_stepper_step(s, &pb, &pa), DM_OK); /* continuation: FSAL */
    assert_int_equal(s->counts.force_evals, 3);
    assert_int_equal(dm_stepper_restart(s, &pa), DM_OK);
    assert_int_equal(dm_stepper_step(s, &pa, &pb), DM_OK); /* after restart: fresh force */
    assert_int_equal(s->counts.force_evals, 5);
    memcpy(c, b, sizeof c);
    pc.t = pb.t;
    assert_int_equal(dm_stepper_step(s, &pc, &pa), DM_OK); /* not the last `to`: fresh */
    assert_int_equal(s->counts.force_evals, 7);
    /* The cache never changes the result: the same step from a copy agrees exactly. */
    double d[2];
    dm_point pd = { .x = d };
    assert_int_equal(dm_stepper_step(s, &pb, &pd), DM_OK);
    assert_true(d[0] == a[0] && d[1] == a[1]);
    dm_stepper_destroy(s);
}

static void step_is_out_of_place_and_leaves_from_untouched(void **state)
{
    dm_instance inst = harmonic();
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (m->adaptive || !dm_test_method_takes(m, &inst))
            continue;
        double a[2] = { inst.q0[0], 0.3 }, b[2] = { NAN, NAN };
        dm_point from = { .t = 1.5, .x = a }, to = { .x = b };
        dm_stepper *s = dm_test_stepper(m, &inst, 0.1, false, &from);
        assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
        assert_true(a[0] == inst.q0[0] && a[1] == 0.3);
        assert_true(isfinite(b[0]) && isfinite(b[1]));
        assert_true(to.t == 1.5 + 0.1);
        dm_stepper_destroy(s);
    }
}

static void step_reports_potential_at_the_end_only_after_a_final_kick(void **state)
{
    dm_instance inst = harmonic();
    const char *kick_last[] = { "verlet", "symeuler-b", "yoshida4", "yoshida6", "yoshida8",
                                "suzuki4", "optimized4" };
    const char *drift_last[] = { "verlet-dkd", "symeuler-a" };
    for (size_t k = 0; k < 7 + 2; k++) {
        bool expect = k < 7;
        const char *id = expect ? kick_last[k] : drift_last[k - 7];
        double a[2] = { inst.q0[0], 0.2 }, b[2];
        dm_point from = { .x = a }, to = { .x = b };
        dm_stepper *s = dm_test_stepper(dm_test_method(id), &inst, 0.05, false, &from);
        for (int i = 0; i < 3; i++) {
            assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
            if (expect)
                assert_true(to.potential == inst.problem->potential(&inst, to.x));
            else
                assert_true(isnan(to.potential));
            dm_point swap = from;
            from = to;
            to = swap;
        }
        dm_stepper_destroy(s);
    }
}

static void negative_step_integrates_backward(void **state)
{
    dm_instance inst = harmonic();
    double x0[2] = { inst.q0[0], inst.p0[0] }, x1[2], q, p;
    double h = -1e-3;
    dm_counts c = dm_test_run(dm_test_method("verlet"), &inst, h, 2000, x0, x1);
    assert_int_equal(c.steps, 2000);
    inst.problem->exact(&inst, 2000 * h, &q, &p);
    /* Global error of a 2nd-order method: ~ t h^2 w^3 A / 24 (common practice). */
    assert_true(fabs(x1[0] - q) < 1e-6 && fabs(x1[1] - p) < 1e-6);
    assert_true(fabs(x1[1] - inst.p0[0]) > 0.1); /* it did move, towards negative time */
    assert_true(x1[1] > 0.0); /* p = -A w sin(w t) > 0 for t slightly below 0 */
}

static void time_is_origin_plus_steps_times_h(void **state)
{
    dm_instance inst = harmonic();
    double a[2] = { inst.q0[0], inst.p0[0] }, b[2];
    dm_point from = { .t = 0.25, .x = a }, to = { .x = b };
    double h = 0.1; /* not a binary fraction: a running sum would drift */
    dm_stepper *s = dm_test_stepper(dm_test_method("verlet"), &inst, h, false, &from);
    for (int i = 1; i <= 100000; i++) {
        assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
        if (to.t != 0.25 + (double)i * h)
            fail_msg("step %d: t = %.17g, expected %.17g", i, to.t, 0.25 + (double)i * h);
        dm_point swap = from;
        from = to;
        to = swap;
    }
    dm_stepper_destroy(s);
}

/* Kahan-compensated sums (Kahan 1965) keep the small updates of a fine step: the
 * energy error of a long fine-step run is smaller than with plain sums. */
static void compensated_sums_reduce_round_off_of_long_fine_runs(void **state)
{
    dm_instance inst = harmonic();
    double h = 1e-4;
    long steps = 2000000;
    double worst[2];
    for (int comp = 0; comp < 2; comp++) {
        double a[2] = { inst.q0[0], inst.p0[0] }, b[2];
        dm_point from = { .x = a }, to = { .x = b };
        dm_stepper *s = dm_test_stepper(dm_test_method("verlet"), &inst, h, comp, &from);
        double e0 = verlet_modified_energy(a[0], a[1], h);
        worst[comp] = 0.0;
        for (long i = 0; i < steps; i++) {
            assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
            dm_point swap = from;
            from = to;
            to = swap;
        }
        worst[comp] = fabs(verlet_modified_energy(from.x[0], from.x[1], h) - e0) / e0;
        dm_stepper_destroy(s);
    }
    print_message("verlet h = 1e-4, 2e6 steps: modified-energy error plain %.3g, "
                  "compensated %.3g\n", worst[0], worst[1]);
    assert_true(worst[1] < 1e-14);
    assert_true(worst[1] < 0.1 * worst[0]);
}

/* With several degrees of freedom the compensated path must give the same trajectory
 * up to round-off: it changes how sums round, never what is summed. */
static void compensated_steps_agree_with_plain_ones_on_kepler(void **state)
{
    if (!dm_test_problem_or_skip("kepler"))
        skip();
    dm_instance inst = dm_test_instance("kepler", 0, NULL, NULL);
    const char *ids[] = { "verlet", "verlet-dkd", "yoshida4", "optimized4", "symeuler-b" };
    for (int k = 0; k < 5; k++) {
        double end[2][4];
        for (int comp = 0; comp < 2; comp++) {
            double a[4], b[4];
            dm_test_start(&inst, a);
            dm_point from = { .x = a }, to = { .x = b };
            dm_stepper *s = dm_test_stepper(dm_test_method(ids[k]), &inst, 0.01, comp, &from);
            for (int i = 0; i < 1000; i++) {
                assert_int_equal(dm_stepper_step(s, &from, &to), DM_OK);
                dm_point swap = from;
                from = to;
                to = swap;
            }
            memcpy(end[comp], from.x, sizeof end[comp]);
            dm_stepper_destroy(s);
        }
        double diff = 0.0;
        for (int c = 0; c < 4; c++)
            diff = fmax(diff, fabs(end[1][c] - end[0][c]));
        print_message("%s on kepler, 1000 steps: |compensated - plain| = %.2e\n", ids[k], diff);
        assert_true(diff < 1e-11);
        assert_true(diff > 0.0); /* the compensated path really ran */
    }
}

static void create_refuses_a_zero_step(void **state)
{
    dm_instance inst = harmonic();
    double a[2] = { 1, 0 };
    dm_point from = { .x = a };
    dm_method_config config = { .h = 0.0 };
    for (size_t i = 0; i < dm_method_count; i++) {
        if (dm_methods[i]->adaptive)
            continue;
        dm_error err = { 0 };
        assert_null(dm_stepper_create(dm_methods[i], &inst, &config, &from, &err));
        assert_int_equal(err.code, DM_EINPUT);
        assert_non_null(strstr(err.msg, "h = 0"));
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(verlet_conserves_modified_energy_of_harmonic_oscillator),
        cmocka_unit_test(verlet_numerical_frequency_satisfies_cos_relation),
        cmocka_unit_test(symplectic_euler_kick_then_drift_conserves_its_quadratic_invariant),
        cmocka_unit_test(symplectic_euler_drift_then_kick_conserves_its_quadratic_invariant),
        cmocka_unit_test(verlet_kdk_costs_one_force_evaluation_per_step),
        cmocka_unit_test(restart_and_foreign_buffers_drop_the_force_cache),
        cmocka_unit_test(step_is_out_of_place_and_leaves_from_untouched),
        cmocka_unit_test(step_reports_potential_at_the_end_only_after_a_final_kick),
        cmocka_unit_test(negative_step_integrates_backward),
        cmocka_unit_test(time_is_origin_plus_steps_times_h),
        cmocka_unit_test(compensated_sums_reduce_round_off_of_long_fine_runs),
        cmocka_unit_test(compensated_steps_agree_with_plain_ones_on_kepler),
        cmocka_unit_test(create_refuses_a_zero_step),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
