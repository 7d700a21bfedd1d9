/* test_runner.c — the runner's monitors and metrics on runs whose answers are known. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "harness.h"

/* A run spec with at most one problem parameter (dm_test_make_spec). */
static void make_spec(dm_run_spec *spec, const char *problem, const char *key, double value,
                      const char *method, double steps_per_period, double rtol,
                      double periods, size_t samples)
{
    const char *keys[1] = { key };
    double values[1] = { value };
    dm_test_make_spec(spec, problem, key ? 1 : 0, keys, values, method, steps_per_period, rtol,
                      periods, samples, 0);
}

static void run_ok(const dm_run_spec *spec, dm_run_result *r)
{
    dm_error err = { 0 };
    assert_int_equal(dm_run(spec, r, NULL, &err), DM_OK);
    if (r->status != DM_RUN_OK)
        print_error("run %s: %s\n", spec->id, r->reason);
    assert_int_equal(r->status, DM_RUN_OK);
}

/* Hairer, Lubich & Wanner, Geometric Numerical Integration (2006): Störmer–Verlet on
 * q'' = -w^2 q turns with the numerical frequency w~ = (2/h) arcsin(w h / 2), so each
 * period the phase advances by 2 pi (w / w~ - 1) against the exact one. */
static void verlet_phase_error_per_period_matches_numerical_frequency(void **state)
{
    dm_run_spec spec;
    const double n = 64.0, w = 1.0;
    make_spec(&spec, "harmonic", NULL, 0, "verlet", n, 0, 1e5, 1024);
    dm_run_result r;
    run_ok(&spec, &r);
    double h = spec.method_config.h;
    double w_num = (2.0 / h) * asin(w * h / 2.0);
    double expected = 2.0 * M_PI * (w / w_num - 1.0);
    assert_close(r.metrics.phase_error_per_period, expected, 1e-8);
    assert_true(r.crossings.total >= 99999);
    dm_run_result_free(&r);
}

/* The closed-form period is the reference (tests of problems/ check it against
 * quadrature). Yoshida's triple jump at 256 steps per period is 4th order in its period
 * error, so doubling the steps cuts it 16-fold (Yoshida 1990), and at 1024 steps it
 * reproduces the closed form to 1e-9. (At 256 steps its own period error is about
 * 8e-8 relative: that is the method, not the measurement, as the h^4 ratio shows.) */
static void yoshida4_measures_pendulum_period_to_1e9(void **state)
{
    double err[3];
    const double steps[3] = { 256, 512, 1024 };
    for (int i = 0; i < 3; i++) {
        dm_run_spec spec;
        make_spec(&spec, "pendulum", "amplitude", 2.5, "yoshida4", steps[i], 0, 1000, 512);
        dm_run_result r;
        run_ok(&spec, &r);
        assert_true(r.crossings.total >= 999);
        err[i] = (r.metrics.period_measured - spec.inst.period) / spec.inst.period;
        dm_run_result_free(&r);
    }
    print_message("yoshida4 period rel. error at 256/512/1024 steps: %.3e %.3e %.3e\n", err[0],
                  err[1], err[2]);
    double order1 = log2(err[0] / err[1]), order2 = log2(err[1] / err[2]);
    assert_true(fabs(order1 - 4.0) < 0.15);
    assert_true(fabs(order2 - 4.0) < 0.15);
    assert_true(fabs(err[2]) <= 1e-9);
}

/* Common practice (backward error analysis, Hairer–Lubich–Wanner ch. IX and X): a
 * symplectic method's energy error stays bounded (exponent ~ 0), a non-symplectic
 * one drifts linearly (~ 1). */
static void drift_exponent_separates_verlet_from_rk4(void **state)
{
    dm_run_spec spec;
    dm_run_result r;
    make_spec(&spec, "pendulum", "amplitude", 2.0, "verlet", 32, 0, 1e4, 2048);
    run_ok(&spec, &r);
    double verlet = r.metrics.drift_exponent;
    dm_run_result_free(&r);
    /* (at 32 steps per period RK4 loses all the energy within 1e4 periods: swamped) */
    make_spec(&spec, "pendulum", "amplitude", 2.0, "rk4", 64, 0, 1e4, 2048);
    run_ok(&spec, &r);
    double rk4 = r.metrics.drift_exponent;
    dm_run_result_free(&r);
    print_message("drift exponent: verlet %.3f, rk4 %.3f\n", verlet, rk4);
    assert_true(verlet < 0.2);
    assert_true(rk4 > 0.8);
}

/* No peak is lost by thinning: the largest |dE| over the stored bucket extremes equals
 * the largest over every single step, recomputed here by a plain loop. */
static void bucket_extremes_keep_every_peak(void **state)
{
    dm_run_spec spec;
    make_spec(&spec, "pendulum", "amplitude", 3.0, "verlet", 40, 0, 50, 16);
    dm_run_result r;
    run_ok(&spec, &r);

    const dm_instance *inst = &spec.inst;
    double buf[2][2 * DM_MAX_DOF] = { { inst->q0[0], inst->p0[0] } };
    dm_point a = { 0.0, buf[0], NAN }, b = { 0.0, buf[1], NAN };
    dm_point *cur = &a, *nxt = &b;
    dm_error err = { 0 };
    dm_stepper *s = dm_stepper_create(spec.method, inst, &spec.method_config, cur, &err);
    assert_non_null(s);
    double H0 = dm_instance_energy(inst, inst->q0, inst->p0), peak = 0.0;
    for (uint64_t k = 0; k < r.metrics.steps; k++) {
        assert_int_equal(dm_stepper_step(s, cur, nxt), DM_OK);
        double dE = (dm_instance_energy(inst, nxt->x, nxt->x + 1) - H0) / r.metrics.energy_scale;
        peak = fmax(peak, fabs(dE));
        dm_point *t = cur;
        cur = nxt;
        nxt = t;
    }
    dm_stepper_destroy(s);
    assert_true(r.series.n == 16);
    double stored = 0.0;
    for (size_t i = 0; i < r.series.n; i++) {
        stored = fmax(stored, fabs(r.series.energy_error_min[i]));
        stored = fmax(stored, fabs(r.series.energy_error_max[i]));
        assert_true(r.series.energy_error_min[i] <= r.series.energy_error[i]);
        assert_true(r.series.energy_error[i] <= r.series.energy_error_max[i]);
    }
    assert_close(stored, peak, 1e-15);
    assert_close(r.metrics.max_energy_error, peak, 1e-15);
    /* 50 periods of 40 steps; the last bucket ends on the horizon. */
    assert_true(r.metrics.steps == 2000);
    assert_close(r.series.time[r.series.n - 1], spec.t_end, 1e-15);
    dm_run_result_free(&r);
}

/* Crossings stay within a fixed budget however long the run, thinned evenly. */
static void crossing_store_stays_within_budget(void **state)
{
    dm_run_spec spec;
    make_spec(&spec, "harmonic", NULL, 0, "verlet", 16, 0, 1000, 64);
    dm_run_result r;
    run_ok(&spec, &r);
    /* Verlet turns at w~ = (2/h) arcsin(w h / 2) (Hairer–Lubich–Wanner 2006), so it
     * crosses t_end w~ / (2 pi) times, within one. */
    double h = spec.method_config.h;
    double turns = spec.t_end * (2.0 / h) * asin(h / 2.0) / (2.0 * M_PI);
    assert_true(fabs((double)r.crossings.total - turns) <= 1.0);
    assert_true(r.crossings.n <= r.crossings.capacity);
    assert_true(r.crossings.stride >= 16);
    for (size_t i = 0; i < r.crossings.n; i++)
        assert_true((uint64_t)r.crossings.number[i] % r.crossings.stride == 0);
    dm_run_result_free(&r);
}

/* The same run twice gives the same numbers bit for bit. */
static void same_run_twice_is_bit_identical(void **state)
{
    dm_run_spec spec;
    make_spec(&spec, "pendulum", "amplitude", 1.0, "yoshida4", 50, 0, 200, 128);
    dm_run_result a, b;
    run_ok(&spec, &a);
    run_ok(&spec, &b);
    assert_int_equal(a.series.n, b.series.n);
    assert_memory_equal(a.series.energy_error, b.series.energy_error, a.series.n * sizeof(double));
    assert_memory_equal(a.series.energy_error_max, b.series.energy_error_max,
                        a.series.n * sizeof(double));
    assert_int_equal(a.crossings.n, b.crossings.n);
    assert_memory_equal(a.crossings.time, b.crossings.time, a.crossings.n * sizeof(double));
    dm_run_result_free(&a);
    dm_run_result_free(&b);
}

/* Kepler: angular momentum is conserved by every splitting method to round-off
 * (common practice: symplectic splittings of central-force problems preserve it). */
static void verlet_conserves_kepler_angular_momentum(void **state)
{
    dm_run_spec spec;
    make_spec(&spec, "kepler", "eccentricity", 0.6, "verlet", 500, 0, 100, 64);
    dm_run_result r;
    run_ok(&spec, &r);
    assert_true(r.series.n_invariants >= 1);
    assert_true(r.metrics.max_invariant_error[0] < 1e-12);
    assert_true(r.metrics.max_global_error > 0.0);
    dm_run_result_free(&r);
}

/* Every stored error is unit-free: the same orbit (same eccentricity, same steps per
 * period) in other units of length and time - here unit values, a bound orbit in
 * kilometres and seconds around the Earth (mu = 398600.4418 km^3/s^2, a fact of the
 * trade from memory; any value serves) and one in metres around the Sun - gives the
 * same energy and invariant errors to 1e-12 and phase errors to 1e-11. (The global error is a
 * phase-space distance, so it carries units: it is not compared.) */
static void kepler_errors_do_not_depend_on_the_units(void **state)
{
    static const double units[][2] = { { 1.0, 1.0 }, { 398600.4418, 7000.0 },
                                       { 1.32712440018e20, 1.496e11 }, { 0.8, 3.0 } };
    const double e = 0.6;
    dm_run_result first;
    for (size_t u = 0; u < sizeof units / sizeof units[0]; u++) {
        dm_run_spec spec;
        make_spec(&spec, "kepler", "eccentricity", e, "yoshida4", 64, 0, 50, 32);
        const char *keys[3] = { "mu", "semi_major_axis", "eccentricity" };
        double values[3] = { units[u][0], units[u][1], e };
        dm_error err = { 0 };
        assert_int_equal(dm_instance_init(&spec.inst, spec.inst.problem, 3, keys, values, &err),
                         DM_OK);
        spec.t_end = 50 * spec.inst.period;
        spec.method_config.h = spec.inst.period / 64;
        spec.method_config.t_stop = spec.t_end;
        dm_run_result r;
        run_ok(&spec, &r);
        assert_int_equal(r.series.n_invariants, 3);
        print_message("mu %g a %g: max errors L %.3e e_x %.3e e_y %.3e, energy %.3e\n",
                      units[u][0], units[u][1], r.metrics.max_invariant_error[0],
                      r.metrics.max_invariant_error[1], r.metrics.max_invariant_error[2],
                      r.metrics.max_energy_error);
        if (u == 0) {
            first = r;
            /* the comparison means something only if there is an error to compare */
            assert_true(r.metrics.max_invariant_error[1] > 1e-8);
            assert_true(r.metrics.max_invariant_error[2] > 1e-8);
            continue;
        }
        assert_int_equal(r.series.n, first.series.n);
        for (size_t i = 0; i < r.series.n; i++) {
            assert_true(fabs(r.series.energy_error[i] - first.series.energy_error[i]) <= 1e-12);
            for (int k = 0; k < 3; k++)
                assert_true(fabs(r.series.invariant_error[k][i] -
                                 first.series.invariant_error[k][i]) <= 1e-12);
        }
        assert_int_equal(r.crossings.n, first.crossings.n);
        double worst = 0.0;
        for (size_t i = 0; i < r.crossings.n; i++)
            worst = fmax(worst, fabs(r.crossings.phase_error[i] - first.crossings.phase_error[i]));
        print_message("  phase errors differ by at most %.3e (last %.3e)\n", worst,
                      first.crossings.phase_error[first.crossings.n - 1]);
        /* the phase sums the located crossing times over 50 periods: a few 1e-12 of
         * rounding (not of units) separate the runs */
        assert_true(worst <= 1e-11);
        dm_run_result_free(&r);
    }
    dm_run_result_free(&first);
}

/* A pendulum just over the top (E = 1.01 g) under RK4 at 24 steps per period loses
 * energy (common practice: RK4 is dissipative on oscillators) until it swings back
 * instead of going over: the exact orbit rotates forever, so the run must say its
 * numerical orbit crossed the separatrix. Verlet's bounded error at this step stays
 * below the 1 % gap and keeps rotating. */
static void a_numerical_orbit_that_crosses_a_separatrix_is_reported(void **state)
{
    dm_run_spec spec;
    dm_run_result r;
    make_spec(&spec, "pendulum", "energy", 1.01, "rk4", 24, 0, 300, 64);
    run_ok(&spec, &r);
    print_message("rk4: '%s'\n", r.regime_change);
    assert_true(strncmp(r.regime_change, "rotation -> libration at t = ", 29) == 0);
    dm_run_result_free(&r);
    make_spec(&spec, "pendulum", "energy", 1.01, "verlet", 24, 0, 300, 64);
    run_ok(&spec, &r);
    assert_string_equal(r.regime_change, "");
    dm_run_result_free(&r);
}

/* The fused loops (problems/include/dm_fused_loop.h) and the per-step path compute the
 * same operations in the same order: every stored number, count and metric agrees bit
 * for bit, for kick-first and drift-first splitting tables, with and without FSAL, for
 * explicit Runge-Kutta tableaux and the implicit midpoint rule (its iteration counts
 * too), in one and two degrees of freedom, through crossings of wrapped sections,
 * through a divergence and through a midpoint step that fails to converge. */
static void fused_loop_equals_per_step_path_bit_for_bit(void **state)
{
    enum { QUIET, DIVERGE, FAIL };
    static const struct {
        const char *problem, *key;
        double value;
        const char *method;
        double steps_per_period;
        int made_to;   /* DIVERGE: an energy limit just under the run's largest |dE|;
                          FAIL: a midpoint iteration cap the run soon needs more than */
    } cases[] = {
        { "pendulum", "amplitude", 2.5, "verlet", 64, QUIET },
        { "pendulum", "energy", 1.5, "verlet-dkd", 64, QUIET }, /* rotation: wrapped section */
        { "pendulum", "amplitude", 1.0, "symeuler-a", 50, QUIET },
        { "double_well", "energy", -0.1, "symeuler-b", 50, QUIET },
        { "morse", "energy", 0.6, "yoshida4", 40, QUIET },
        { "kepler", "eccentricity", 0.6, "yoshida6", 200, QUIET },
        { "harmonic", NULL, 0, "suzuki4", 30, QUIET },
        { "kepler", "eccentricity", 0.6, "verlet", 100, DIVERGE },
        { "pendulum", "amplitude", 2.5, "rk4", 64, QUIET },
        { "pendulum", "energy", 1.5, "rk4", 40, QUIET },
        { "kepler", "eccentricity", 0.6, "rk4", 200, QUIET },
        { "morse", "energy", 0.6, "euler", 400, DIVERGE },
        { "harmonic", NULL, 0, "rk4", 30, QUIET },
        { "pendulum", "amplitude", 2.5, "midpoint", 64, QUIET },
        { "pendulum", "energy", 1.5, "midpoint", 40, QUIET },
        { "kepler", "eccentricity", 0.6, "midpoint", 200, QUIET },
        { "double_well", "energy", 0.2, "midpoint", 50, QUIET },
        { "morse", "energy", 0.6, "midpoint", 16, FAIL },
    };
    for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
        dm_run_spec spec;
        make_spec(&spec, cases[c].problem, cases[c].key, cases[c].value, cases[c].method,
                  cases[c].steps_per_period, 0, 300, 100);
        dm_run_result fused, plain;
        dm_error err = { 0 };
        bool last = cases[c].made_to == DIVERGE;
        {   /* the method and problem do have a fused loop: the two paths differ */
            dm_fused_run probe = { 0 };
            memcpy(probe.x, spec.inst.q0, sizeof spec.inst.q0);
            dm_point start = { .t = 0.0, .x = probe.x, .potential = NAN };
            dm_stepper *st = dm_stepper_create(spec.method, &spec.inst, &spec.method_config,
                                               &start, &err);
            assert_non_null(st);
            assert_int_not_equal(dm_stepper_run_fused(st, &probe, 0), DM_FUSED_UNSUPPORTED);
            dm_stepper_destroy(st);
        }
        if (cases[c].made_to == FAIL) {
            /* the most iterations a step needed, less one, as the cap: this orbit
             * needs them again after a few buckets */
            assert_int_equal(dm_run(&spec, &fused, NULL, &err), DM_OK);
            assert_int_equal(fused.status, DM_RUN_OK);
            spec.method_config.max_iterations =
                (int)fused.metrics.counts.max_iters_in_step - 1;
            dm_run_result_free(&fused);
        }
        if (last) {
            /* a limit just under the run's own largest |dE|: it diverges where that
             * peak is first reached */
            assert_int_equal(dm_run(&spec, &fused, NULL, &err), DM_OK);
            spec.energy_limit = 0.999 * fused.metrics.max_energy_error;
            dm_run_result_free(&fused);
        }
        assert_int_equal(dm_run(&spec, &fused, NULL, &err), DM_OK);
        spec.method_config.plain_steps = true;
        assert_int_equal(dm_run(&spec, &plain, NULL, &err), DM_OK);
        print_message("%s %s: %s, %llu steps, %llu crossings %s\n", cases[c].problem,
                      cases[c].method, dm_run_status_name(fused.status),
                      (unsigned long long)fused.metrics.steps,
                      (unsigned long long)fused.crossings.total, fused.reason);
        assert_int_equal(fused.status, plain.status);
        assert_string_equal(fused.reason, plain.reason);
        assert_true(fused.metrics.steps == plain.metrics.steps);
        assert_true(fused.metrics.counts.force_evals == plain.metrics.counts.force_evals);
        assert_true(fused.metrics.counts.velocity_evals == plain.metrics.counts.velocity_evals);
        assert_true(fused.metrics.counts.nonlin_iters == plain.metrics.counts.nonlin_iters);
        assert_true(fused.metrics.counts.max_iters_in_step ==
                    plain.metrics.counts.max_iters_in_step);
        assert_int_equal(fused.series.n, plain.series.n);
        size_t bytes = fused.series.n * sizeof(double);
        assert_memory_equal(fused.series.time, plain.series.time, bytes);
        assert_memory_equal(fused.series.energy_error, plain.series.energy_error, bytes);
        assert_memory_equal(fused.series.energy_error_min, plain.series.energy_error_min, bytes);
        assert_memory_equal(fused.series.energy_error_max, plain.series.energy_error_max, bytes);
        assert_memory_equal(fused.series.global_error, plain.series.global_error, bytes);
        assert_true(fused.crossings.total == plain.crossings.total);
        assert_int_equal(fused.crossings.n, plain.crossings.n);
        assert_memory_equal(fused.crossings.time, plain.crossings.time,
                            fused.crossings.n * sizeof(double));
        assert_memory_equal(&fused.metrics.phase_error_per_period,
                            &plain.metrics.phase_error_per_period, sizeof(double));
        assert_memory_equal(&fused.metrics.max_energy_error, &plain.metrics.max_energy_error,
                            sizeof(double));
        if (cases[c].made_to == DIVERGE) {
            assert_int_equal(fused.status, DM_RUN_DIVERGED);
            /* the reason's two numbers, as printed, still say |dE| > limit */
            double printed_dE, printed_limit;
            assert_int_equal(sscanf(fused.reason, "energy error %lg beyond the limit %lg",
                                    &printed_dE, &printed_limit), 2);
            print_message("%s\n", fused.reason);
            assert_true(fabs(printed_dE) > printed_limit);
        } else if (cases[c].made_to == FAIL)
            assert_true(fused.status == DM_RUN_FAILED && fused.metrics.steps > 1000);
        else
            assert_true(fused.crossings.total > 100);
        dm_run_result_free(&fused);
        dm_run_result_free(&plain);
    }
}

/* Cost per period. Velocity Verlet needs one new force per step once the first is
 * known (Swope, Andersen, Berens & Wilson, J. Chem. Phys. 76, 637 (1982)), classical
 * RK4 four per step (Kutta, Z. Math. Phys. 46, 435 (1901)): at n steps per period over
 * P periods that is (n P + 1) / P and 4 n per period. A run that took no step has none. */
static void force_evals_per_period_is_the_methods_cost(void **state)
{
    const double n = 48.0, P = 25.0;
    dm_run_spec spec;
    dm_run_result r;
    make_spec(&spec, "pendulum", "amplitude", 2.0, "verlet", n, 0, P, 64);
    run_ok(&spec, &r);
    assert_close(r.metrics.force_evals_per_period, (n * P + 1.0) / P, 1e-12);
    dm_run_result_free(&r);

    make_spec(&spec, "pendulum", "amplitude", 2.0, "rk4", n, 0, P, 64);
    run_ok(&spec, &r);
    assert_close(r.metrics.force_evals_per_period, 4.0 * n, 1e-12);
    dm_run_result_free(&r);

    make_spec(&spec, "harmonic", NULL, 0, "verlet", n, 0, P, 64);
    spec.t_end = 0.0;
    run_ok(&spec, &r);
    assert_true(r.metrics.steps == 0);
    assert_true(isnan(r.metrics.force_evals_per_period));
    dm_run_result_free(&r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(verlet_phase_error_per_period_matches_numerical_frequency),
        cmocka_unit_test(yoshida4_measures_pendulum_period_to_1e9),
        cmocka_unit_test(drift_exponent_separates_verlet_from_rk4),
        cmocka_unit_test(bucket_extremes_keep_every_peak),
        cmocka_unit_test(crossing_store_stays_within_budget),
        cmocka_unit_test(same_run_twice_is_bit_identical),
        cmocka_unit_test(verlet_conserves_kepler_angular_momentum),
        cmocka_unit_test(kepler_errors_do_not_depend_on_the_units),
        cmocka_unit_test(a_numerical_orbit_that_crosses_a_separatrix_is_reported),
        cmocka_unit_test(fused_loop_equals_per_step_path_bit_for_bit),
        cmocka_unit_test(force_evals_per_period_is_the_methods_cost),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
