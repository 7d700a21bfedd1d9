/* test_choose.c — how choose carries a sweep to a longer horizon than it was run over.
 *
 * The rows are built here with errors that follow a power law exactly (C h^p), so the
 * answer is known in advance from the rule itself (README.md, "Choosing a method"): each
 * run's max |dE| grows by its own drift law, (N'/N)^q, or not at all when it is bounded.
 * tests/check_choose.py checks the same command on real runs. */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "choose.h"

#define MEASURED_PERIODS 1000.0

/* A run of `method` at step h over MEASURED_PERIODS periods of 2 pi, with max |dE| =
 * energy and the drift exponent q (its class as the writer names it). */
static dm_summary_row row(const char *method, double h, double energy, double q)
{
    dm_summary_row r;
    memset(&r, 0, sizeof r);
    snprintf(r.run_id, sizeof r.run_id, "spring-k1.%s-h%.17g", method, h);
    snprintf(r.method, sizeof r.method, "%s", method);
    snprintf(r.status, sizeof r.status, "ok");
    snprintf(r.drift_class, sizeof r.drift_class, "%s",
             dm_drift_class_name(dm_drift_classify(q)));
    r.h = h;
    r.rtol = NAN;
    r.period_exact = 2.0 * M_PI;
    r.force_evals_per_period = 2.0 * M_PI / h;
    r.steps = (uint64_t)llround(MEASURED_PERIODS * r.force_evals_per_period);
    r.force_evals = r.steps;
    r.force_evals_per_period = (double)r.force_evals / MEASURED_PERIODS;
    r.wall_seconds = 1e-8 * (double)r.force_evals;
    r.max_energy_error = energy;
    r.phase_error_per_period = 0.1 * energy;
    r.drift_exponent = q;
    return r;
}

/* The one answer for rows (one group) and target t. */
static dm_choice choose_for(const dm_summary_row *rows, size_t n, dm_target t)
{
    dm_choice *c = NULL;
    size_t nc = 0;
    bool all = false;
    dm_error err = { 0 };
    assert_int_equal(dm_choose(rows, n, &t, &c, &nc, &all, &err), DM_OK);
    assert_int_equal(nc, 1);
    dm_choice one = c[0];
    free(c);
    print_message("%s: ranked %d basis %s x %.17g E %.6g factor %.6g rule '%s' why '%s'\n",
                  one.method, one.ranked, dm_choice_basis_name(one.basis), one.x,
                  one.energy_error, one.horizon_factor, one.horizon_rule, one.why_not);
    return one;
}

/* ... for a target on max |dE| alone. */
static dm_choice choose_one(const dm_summary_row *rows, size_t n, double energy, double periods)
{
    return choose_for(rows, n, (dm_target){ .max_energy_error = energy,
                                            .phase_per_period = NAN, .periods = periods });
}

static const double steps_h[4] = { 0.1, 0.05, 0.025, 0.0125 };

/* A fourth-order method whose coarsest step drifts linearly (near its stability limit)
 * while the three finer ones are bounded: over 1000 times the horizon the coarse error
 * grows 1000 times and the finer ones not at all. The finest run (2.44e-8) meets 1e-7 as
 * it is. Before each run had its own law, the coarse run's exponent was applied to all:
 * no run met the target and the fitted step came out 4 times finer than the finest. */
static void a_coarse_drift_does_not_spread_to_bounded_steps(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("yoshida4", steps_h[i], 1e-4 * pow(steps_h[i] / 0.1, 4), i == 0 ? 1.0 : 0.05);
    dm_choice c = choose_one(r, 4, 1e-7, 1e3 * MEASURED_PERIODS);
    assert_true(c.ranked);
    assert_int_equal(c.basis, DM_BASIS_MEASURED);
    assert_true(c.x == 0.0125);
    assert_true(c.energy_error == r[3].max_energy_error);
    assert_true(c.horizon_factor == 1.0);
    assert_string_equal(c.horizon_rule, "bounded");
    assert_int_equal(c.n_points, 4); /* the fit at the horizon has them all ... */
    /* ... and the grown coarse point bends its line (orders 14 then 4: rms 0.82 decades
     * off it): no step is read off it, where the measured line alone would give one */
    c = choose_one(r, 4, 1e-8, 1e3 * MEASURED_PERIODS);
    assert_false(c.ranked);
    assert_non_null(strstr(c.why_not, "energy fit at the horizon asked cannot be read"));
}

/* A fifth-order energy error (C h^5) drifting linearly at every step: over 10 times
 * the horizon every error grows 10 times, so the step is where C h^5 = target / 10:
 * h = 0.1 (1e-7 / 1e-3)^(1/5), inside the measured range. */
static void linear_drift_grows_every_error_alike(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("rk4", steps_h[i], 1e-3 * pow(steps_h[i] / 0.1, 5), 1.0);
    dm_choice c = choose_one(r, 4, 1e-6, 10.0 * MEASURED_PERIODS);
    assert_true(c.ranked);
    assert_int_equal(c.basis, DM_BASIS_INTERPOLATED);
    double h = 0.1 * pow(1e-4, 0.2);
    assert_true(fabs(c.x / h - 1.0) < 1e-12);
    assert_true(fabs(c.horizon_factor / 10.0 - 1.0) < 1e-12);
    assert_string_equal(c.horizon_rule, "exponent 1.00");
    /* the same sweep at its own horizon: the step where C h^5 = 1e-6 */
    c = choose_one(r, 4, 1e-6, NAN);
    assert_true(fabs(c.x / (0.1 * pow(1e-3, 0.2)) - 1.0) < 1e-12);
    assert_string_equal(c.horizon_rule, "measured horizon");
}

/* Runs of different drift exponents: each grows by its own. Half-order steps apart,
 * errors C h^4 with exponents 1 at the two coarse steps and 0.5 (round-off walking) at
 * the two fine ones: over 100 times the horizon they grow 100 and 10 times, the line
 * through them bends (orders 4, 7.3, 4: rms 0.22 decades off it) and the answer is the
 * finest run as measured if it meets the target, else none. */
static void each_run_grows_by_its_own_exponent(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("verlet", steps_h[i], 1e-4 * pow(steps_h[i] / 0.1, 4), i < 2 ? 1.0 : 0.5);
    dm_choice c = choose_one(r, 4, 2.5e-7, 100.0 * MEASURED_PERIODS);
    assert_true(c.ranked);
    assert_int_equal(c.basis, DM_BASIS_MEASURED);
    assert_true(c.x == 0.0125);
    assert_true(fabs(c.horizon_factor / 10.0 - 1.0) < 1e-12);
    assert_true(fabs(c.energy_error / (10.0 * r[3].max_energy_error) - 1.0) < 1e-12);
    assert_string_equal(c.horizon_rule, "exponent 0.50");
    c = choose_one(r, 4, 2e-7, 100.0 * MEASURED_PERIODS);
    assert_false(c.ranked);
    assert_non_null(strstr(c.why_not, "energy fit at the horizon asked cannot be read"));
}

/* A run whose drift exponent is unmeasured cannot be carried to a longer horizon: it
 * drops out of the fit there; when every run's is, nothing can be said. */
static void unmeasured_exponents_are_not_extended(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("verlet", steps_h[i], 1e-4 * pow(steps_h[i] / 0.1, 2), i == 3 ? NAN : 0.0);
    /* the finest (unmeasured) run would meet 1e-6 as measured; over a longer horizon
     * only the three bounded ones count, and the line through them (order 2) gives
     * h = 0.1 (1e-6 / 1e-4)^(1/2) = 0.01, 2.5 times finer than the finest of them */
    dm_choice c = choose_one(r, 4, 1e-6, 10.0 * MEASURED_PERIODS);
    assert_true(c.ranked);
    assert_int_equal(c.basis, DM_BASIS_EXTRAPOLATED);
    assert_true(fabs(c.x / 0.01 - 1.0) < 1e-12);
    assert_true(fabs(c.beyond / 2.5 - 1.0) < 1e-12);
    assert_int_equal(c.n_points, 3);
    for (int i = 0; i < 4; i++)
        r[i] = row("verlet", steps_h[i], 1e-4 * pow(steps_h[i] / 0.1, 2), NAN);
    c = choose_one(r, 4, 1e-6, 10.0 * MEASURED_PERIODS);
    assert_false(c.ranked);
    assert_non_null(strstr(c.why_not, "cannot extend"));
    c = choose_one(r, 4, 1e-6, MEASURED_PERIODS); /* its own horizon: nothing to extend */
    assert_true(c.ranked);
}

/* A drifting energy moves the period with it: the phase error per period of a run
 * whose energy grows is not carried to a longer horizon (the phase error grows as t^2
 * under a linear drift: measured 95 times the carried figure on a Kepler RK4 run over
 * 100 times its horizon). Bounded runs keep it. */
static void phase_is_carried_only_with_a_bounded_energy(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("rk4", steps_h[i], 1e-3 * pow(steps_h[i] / 0.1, 5), 1.0);
    dm_target t = { .max_energy_error = 1e-4, .phase_per_period = 1e-3,
                    .periods = 10.0 * MEASURED_PERIODS };
    dm_choice one = choose_for(r, 4, t);
    assert_false(one.ranked);
    assert_non_null(strstr(one.why_not, "does not hold over 10000"));
    t.periods = MEASURED_PERIODS; /* its own horizon: both targets read off the lines */
    assert_true(choose_for(r, 4, t).ranked);
    /* an energy target alone: ranked, its phase not predicted, and said why */
    one = choose_one(r, 4, 1e-4, 10.0 * MEASURED_PERIODS);
    assert_true(one.ranked);
    assert_true(isnan(one.phase_per_period));
    assert_non_null(strstr(one.not_predicted, "energy drifts"));
    for (int i = 0; i < 4; i++) /* bounded: carried as measured */
        r[i] = row("verlet", steps_h[i], 1e-4 * pow(steps_h[i] / 0.1, 2), 0.0);
    one = choose_one(r, 4, 1e-5, 10.0 * MEASURED_PERIODS);
    assert_true(one.ranked);
    assert_false(isnan(one.phase_per_period));
    assert_string_equal(one.not_predicted, "");
}

/* A bounded error does not stay under the walk of the rounding errors: over 10^9
 * periods of 64 steps (6.4e10 steps) round-off reaches 4 eps sqrt(steps) = 2.2e-10 (our
 * floor, the sweep fits' own), so a run bounded at 1e-13 over 1000 periods does not meet
 * 1e-10 there, and neither does any step the fit gives. */
static void a_longer_horizon_never_predicts_under_round_off(void **state)
{
    (void)state;
    const double h = 2.0 * M_PI / 64.0;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++) /* 64, 128, 256, 512 steps a period, order 8 */
        r[i] = row("yoshida8", h / (1 << i), 1e-13 * pow(0.5, 8 * i), 0.0);
    dm_choice c = choose_one(r, 4, 1e-10, 1e9);
    assert_false(c.ranked);
    assert_true(isinf(c.closeness) || c.closeness > 1.0);
    double floor64 = 4.0 * DBL_EPSILON * sqrt(64.0 * 1e9);
    c = choose_one(r, 1, 1e-9, 1e9); /* the 64-step run alone meets 1e-9 */
    assert_true(c.ranked);
    assert_true(fabs(c.energy_error / floor64 - 1.0) < 1e-9);
    assert_true(fabs(c.horizon_factor / (floor64 / 1e-13) - 1.0) < 1e-9);
}

/* At the measured horizon too, a step read off a fit is never predicted under the
 * round-off floor of its steps (4 eps sqrt(steps) in max |dE|, 0.25 eps sqrt(steps) in
 * the phase per period): an eighth-order sweep (1e-6 (h/0.1)^8, its finest run left out
 * of the fits as round-off) asked for 1e-13 gave h = 0.01334 as if the line went on
 * (a tester ran such a step: 164 times over). A run that meets the target as measured
 * is the answer; with none, the method is refused. */
static void a_fitted_step_is_never_under_round_off(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("yoshida8", steps_h[i], 1e-6 * pow(steps_h[i] / 0.1, 8), 0.0);
    dm_choice c = choose_one(r, 4, 1e-13, NAN);
    assert_true(c.ranked);
    assert_int_equal(c.basis, DM_BASIS_MEASURED);
    assert_true(c.x == steps_h[3]);
    c = choose_one(r, 3, 1e-13, NAN);
    assert_false(c.ranked);
    assert_non_null(strstr(c.why_not, "round-off alone reaches max |dE|"));
    /* the phase alike: 0.1 of the energy here, 6e-15 at the finest step */
    dm_target t = { .max_energy_error = 1.0, .phase_per_period = 1e-14, .periods = NAN };
    c = choose_for(r, 4, t);
    assert_true(c.ranked);
    assert_true(c.x == steps_h[3]);
    c = choose_for(r, 3, t);
    assert_false(c.ranked);
    assert_non_null(strstr(c.why_not, "round-off alone reaches phase/per"));
}

/* An error carried to 1/10 or more is outside the regime its law was measured in: a
 * step near the method's stability limit (a Kepler Yoshida 4 step recommended for 0.2
 * over 1000 periods, predicted 0.118, diverged at 626 periods). Not ranked. */
static void a_carried_error_of_a_tenth_is_refused(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("yoshida4", steps_h[i], 1e-2 * pow(steps_h[i] / 0.1, 4), 1.0);
    /* the coarsest run alone: 1e-2 x 20 = 0.2 meets 0.5, but not as an answer, and its
     * closeness does not read as met */
    dm_choice c = choose_one(r, 1, 0.5, 20.0 * MEASURED_PERIODS);
    assert_false(c.ranked);
    assert_non_null(strstr(c.why_not, "would be 0.2:"));
    assert_true(isinf(c.closeness));
    /* with a finer run, the cheapest run that meets it inside the regime: the next step
     * (1e-2 / 16 x 20 = 0.0125; two runs make no fit), not a refusal of the whole
     * method (a tester's harmonic RK4 was refused though its 64-step run carried
     * 7.95e-3 to a target of 0.5) */
    c = choose_one(r, 2, 0.5, 20.0 * MEASURED_PERIODS);
    assert_true(c.ranked);
    assert_int_equal(c.basis, DM_BASIS_MEASURED);
    assert_true(c.x == steps_h[1]);
    assert_true(fabs(c.energy_error / 0.0125 - 1.0) < 1e-12);
    /* with the sweep, the line is read no further than just under 1/10: a looser target
     * gets the step of 1/10, not a finer run (nor a refusal) */
    for (int k = 0; k < 2; k++) {
        c = choose_one(r, 4, k ? 0.15 : 0.5, 20.0 * MEASURED_PERIODS);
        assert_true(c.ranked);
        assert_int_equal(c.basis, DM_BASIS_INTERPOLATED);
        assert_true(fabs(c.x / (0.1 * pow(0.0999 / 0.2, 0.25)) - 1.0) < 1e-9);
        assert_true(c.energy_error < 0.1);
    }
    c = choose_one(r, 1, 0.5, MEASURED_PERIODS); /* as measured: the run did it */
    assert_true(c.ranked);
}

/* With both targets, the step is read off the fit that binds, and whether it is inside
 * that fit's range (interpolated) or beyond it (extrapolated) is judged on that fit
 * alone: here the phase fit lacks the finest run (no phase figure), so a phase target
 * met at h = 0.02 lies beyond its finest step 0.025, though inside the energy fit's. */
static void the_binding_fit_names_the_basis(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("verlet", steps_h[i], 1e-4 * pow(steps_h[i] / 0.1, 4), 0.0);
    r[3].phase_error_per_period = NAN;
    dm_target t = { .max_energy_error = 1e-3, .periods = NAN,
                    .phase_per_period = 1e-5 * pow(0.2, 4) }; /* 0.1 C (h/0.1)^4 at 0.02 */
    dm_choice c = choose_for(r, 4, t);
    assert_true(c.ranked);
    assert_int_equal(c.basis, DM_BASIS_EXTRAPOLATED);
    assert_true(fabs(c.x / 0.02 - 1.0) < 1e-12);
    assert_true(fabs(c.beyond / 1.25 - 1.0) < 1e-12);
}

/* The horizon the runs measured is that of the ok runs, not of the first row (a coarse
 * run that diverged early), and a run covers up to one step past its horizon: asked for
 * that horizon, the answer is at the measured horizon, not "(longer)". */
static void the_measured_horizon_is_the_ok_runs(void **state)
{
    (void)state;
    dm_summary_row r[5];
    r[0] = row("rk4", 0.2, 1.0, NAN);
    snprintf(r[0].status, sizeof r[0].status, "diverged");
    r[0].force_evals /= 100; /* 10 periods */
    for (int i = 0; i < 4; i++) {
        r[i + 1] = row("rk4", steps_h[i], 1e-3 * pow(steps_h[i] / 0.1, 5), 1.0);
        r[i + 1].force_evals += 1; /* the step that reaches the horizon */
    }
    dm_choice c = choose_one(r, 5, 1e-4, 10.0 * MEASURED_PERIODS);
    assert_true(c.ranked);
    assert_non_null(strstr(c.not_predicted, "measured over 1000.002 periods"));
    c = choose_one(r, 5, 1e-4, MEASURED_PERIODS);
    assert_string_equal(c.horizon_rule, "measured horizon");
    c = choose_one(r, 5, 1e-4, 0.5 * MEASURED_PERIODS);
    assert_string_equal(c.horizon_rule, "measured horizon (longer)");
}

/* Exponents that differ only past the two digits shown are one exponent. */
static void the_horizon_names_one_exponent_as_shown(void **state)
{
    (void)state;
    dm_summary_row r[4];
    const double q[4] = { 1.0041, 0.9994, 0.9971, 1.0001 };
    for (int i = 0; i < 4; i++)
        r[i] = row("rk4", steps_h[i], 1e-3 * pow(steps_h[i] / 0.1, 5), q[i]);
    dm_choice c = choose_one(r, 4, 1e-6, 10.0 * MEASURED_PERIODS);
    assert_true(c.ranked);
    assert_string_equal(c.horizon_rule, "exponent 1.00");
    r[0].drift_exponent = 1.02;
    c = choose_one(r, 4, 1e-6, 10.0 * MEASURED_PERIODS);
    assert_string_equal(c.horizon_rule, "exponents 1.00..1.02");
}

/* A run whose numerical orbit left its starting regime (a pendulum near its separatrix
 * going over the top at a coarse step) measured another orbit: it is in no fit and no
 * answer, even when its max |dE| meets the target (a tester's lantern at amplitude 3.1:
 * Verlet at 32 steps a period was recommended after going over the top). */
static void a_run_that_left_its_regime_is_no_answer(void **state)
{
    (void)state;
    dm_summary_row r[4];
    for (int i = 0; i < 4; i++)
        r[i] = row("verlet", steps_h[i], 1e-2 * pow(steps_h[i] / 0.1, 2), 0.0);
    snprintf(r[0].regime_change, sizeof r[0].regime_change, "libration -> rotation at t = 2.6");
    dm_choice c = choose_one(r, 4, 2e-2, NAN); /* the coarsest (1e-2) would meet it */
    assert_true(c.ranked);
    assert_true(c.x == steps_h[1]); /* the next one, as measured: the fit is not used
                                      past the coarsest step it has */
    assert_int_equal(c.n_points, 3);
    /* the same left in the middle of the range: the range is not trusted */
    snprintf(r[0].regime_change, sizeof r[0].regime_change, "%s", "");
    snprintf(r[1].regime_change, sizeof r[1].regime_change, "libration -> rotation at t = 9");
    c = choose_one(r, 4, 1e-3, NAN);
    assert_false(c.ranked);
    assert_non_null(strstr(c.why_not, "left its regime"));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(a_coarse_drift_does_not_spread_to_bounded_steps),
        cmocka_unit_test(linear_drift_grows_every_error_alike),
        cmocka_unit_test(each_run_grows_by_its_own_exponent),
        cmocka_unit_test(unmeasured_exponents_are_not_extended),
        cmocka_unit_test(phase_is_carried_only_with_a_bounded_energy),
        cmocka_unit_test(a_longer_horizon_never_predicts_under_round_off),
        cmocka_unit_test(a_carried_error_of_a_tenth_is_refused),
        cmocka_unit_test(the_horizon_names_one_exponent_as_shown),
        cmocka_unit_test(a_run_that_left_its_regime_is_no_answer),
        cmocka_unit_test(the_binding_fit_names_the_basis),
        cmocka_unit_test(the_measured_horizon_is_the_ok_runs),
        cmocka_unit_test(a_fitted_step_is_never_under_round_off),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
