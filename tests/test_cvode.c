/* test_cvode.c — the CVODE adapter: accuracy against the exact pendulum, error control,
 * the stop time, failure reporting, restart, and the energy drift of BDF. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_mode.h>
#include <gsl/gsl_sf_elljac.h>
#include <gsl/gsl_sf_ellint.h>

#include "cvode.h"
#include "method.h"
#include "problem.h"

/* ---- the outside reference: the exact pendulum, from GSL ----
 * theta'' = -sin theta from theta(0) = theta0, theta'(0) = 0 (libration), with
 * k = sin(theta0 / 2), m = k^2, k' = sqrt(1 - m), u = t + K(m):
 *   sin(theta / 2) = k sn(u | m) = k cn(t | m) / dn(t | m),
 *   theta'         = 2 k cn(u | m) = -2 k k' sn(t | m) / dn(t | m)
 * (common practice; from memory of Abramowitz & Stegun 16.8 for the quarter-period
 * shifts), the Jacobi functions and K computed by GSL. */
static void pendulum_reference(double theta0, double t, double *q, double *p)
{
    double k = sin(0.5 * theta0);
    double m = k * k;
    double K = gsl_sf_ellint_Kcomp(fabs(k), GSL_PREC_DOUBLE); /* GSL takes the modulus */
    double u = fmod(t, 4.0 * K);                             /* sn, cn, dn have period 4K */
    double sn, cn, dn;
    gsl_sf_elljac_e(u, m, &sn, &cn, &dn);
    *q = 2.0 * asin(k * cn / dn);
    *p = -2.0 * k * sqrt(1.0 - m) * sn / dn;
}

static const dm_instance *pendulum(double amplitude)
{
    static dm_instance inst;
    const dm_problem *problem = dm_problem_find("pendulum");
    assert_non_null(problem);
    const char *keys[] = { "amplitude" };
    double values[] = { amplitude };
    dm_error err;
    assert_int_equal(dm_instance_init(&inst, problem, 1, keys, values, &err), DM_OK);
    /* The reference above is for theta'' = -sin theta: the problem's own starting
     * state and energy must be that pendulum's. */
    assert_true(inst.q0[0] == amplitude && inst.p0[0] == 0.0);
    assert_close(inst.energy, -cos(amplitude), 1e-15);
    return &inst;
}

static const dm_method *method(const char *id)
{
    const dm_method *m = dm_method_find(id);
    assert_non_null(m);
    return m;
}

/* ---- a plain driver: steps until t_stop, the way the harness does ---- */
typedef struct run {
    double x[2 * DM_MAX_DOF];   /* the final state */
    double t;                    /* the final time */
    dm_counts counts;
    dm_status status;
    dm_error error;
    bool passed_stop;            /* some step ended beyond t_stop */
    /* energy error |H - H0| maxima over the first and the last tenth of the run */
    double energy_first_tenth, energy_last_tenth;
} run;

static void integrate(const dm_method *m, const dm_instance *inst, double rtol, double atol,
                      double t_stop, bool watch_energy, run *r)
{
    memset(r, 0, sizeof *r);
    const int dof = inst->dof;
    double buf[2][2 * DM_MAX_DOF];
    memcpy(buf[0], inst->q0, (size_t)dof * sizeof(double));
    memcpy(buf[0] + dof, inst->p0, (size_t)dof * sizeof(double));
    dm_point a = { .t = 0.0, .x = buf[0], .potential = NAN };
    dm_point b = { .t = 0.0, .x = buf[1], .potential = NAN };
    dm_point *from = &a, *to = &b;
    dm_method_config config = { .rtol = rtol, .atol = atol, .t_stop = t_stop };
    dm_stepper *s = dm_stepper_create(m, inst, &config, from, &r->error);
    assert_non_null(s);
    double direction = t_stop > 0 ? 1.0 : -1.0;
    while (from->t != t_stop) {
        r->status = dm_stepper_step(s, from, to);
        if (r->status != DM_OK) {
            r->error = s->error;
            break;
        }
        if ((to->t - t_stop) * direction > 0)
            r->passed_stop = true;
        if (watch_energy) {
            double de = fabs(dm_instance_energy(inst, to->x, to->x + dof) - inst->energy);
            if (fabs(to->t) <= 0.1 * fabs(t_stop) && de > r->energy_first_tenth)
                r->energy_first_tenth = de;
            if (fabs(to->t) >= 0.9 * fabs(t_stop) && de > r->energy_last_tenth)
                r->energy_last_tenth = de;
        }
        dm_point *swap = from;
        from = to;
        to = swap;
    }
    r->t = from->t;
    memcpy(r->x, from->x, (size_t)(2 * dof) * sizeof(double));
    r->counts = *dm_stepper_counts(s);
    dm_stepper_destroy(s);
}

/* max(|q - q_ref|, |p - p_ref|) of a pendulum run at its final time. */
static double pendulum_global_error(double theta0, const run *r)
{
    double q, p;
    pendulum_reference(theta0, r->t, &q, &p);
    return fmax(fabs(r->x[0] - q), fabs(r->x[1] - p));
}

static void check_counts_consistent(const char *id, const dm_counts *c, bool jacobian)
{
    assert_true(c->steps > 0);
    assert_true(c->steps <= c->rhs_evals);
    /* every right-hand side costs one force and one velocity evaluation */
    assert_true(c->force_evals == c->rhs_evals);
    assert_true(c->velocity_evals >= c->rhs_evals);
    assert_true(c->nonlin_iters > 0);
    if (jacobian)
        assert_true(c->jac_evals > 0 && c->jac_evals <= c->steps);
    else
        assert_true(c->jac_evals == 0);
    printf("  %-12s steps %llu, rhs %llu, jac %llu, error-test fails %llu, "
           "conv fails %llu, nonlinear iters %llu\n",
           id, (unsigned long long)c->steps, (unsigned long long)c->rhs_evals,
           (unsigned long long)c->jac_evals, (unsigned long long)c->error_test_fails,
           (unsigned long long)c->conv_fails, (unsigned long long)c->nonlin_iters);
}

/* ---- tests ---- */

static void cvode_bdf_and_adams_reach_1e7_global_error_on_pendulum_at_rtol_1e10(void **state)
{
    /* amplitude 1 rad; at 2.5 rad (near the separatrix, m = 0.9) rtol = 1e-10 leaves
     * 5.6e-6 (BDF) and 4.0e-7 (Adams) at t = 100 */
    const double theta0 = 1.0, t_end = 100.0;
    const dm_instance *inst = pendulum(theta0);
    const char *ids[] = { "cvode-bdf", "cvode-adams" };
    for (int i = 0; i < 2; i++) {
        run r;
        integrate(method(ids[i]), inst, 1e-10, 1e-13, t_end, false, &r);
        assert_int_equal(r.status, DM_OK);
        assert_true(r.t == t_end);
        double e = pendulum_global_error(theta0, &r);
        printf("  %-12s rtol 1e-10: global error at t = 100: %.3e\n", ids[i], e);
        check_counts_consistent(ids[i], &r.counts, i == 0);
        assert_true(e < 1e-7);
    }
}

static void cvode_global_error_falls_as_rtol_tightens(void **state)
{
    const double theta0 = 2.5, t_end = 100.0;
    const dm_instance *inst = pendulum(theta0);
    const char *ids[] = { "cvode-bdf", "cvode-adams" };
    const double rtols[] = { 1e-6, 1e-7, 1e-8, 1e-9 };
    for (int i = 0; i < 2; i++) {
        double previous = INFINITY, first = 0;
        uint64_t previous_steps = 0;
        for (int j = 0; j < 4; j++) {
            run r;
            integrate(method(ids[i]), inst, rtols[j], 0.0, t_end, false, &r);
            assert_int_equal(r.status, DM_OK);
            double e = pendulum_global_error(theta0, &r);
            printf("  %-12s rtol %.0e: global error %.3e, steps %llu\n", ids[i], rtols[j], e,
                   (unsigned long long)r.counts.steps);
            check_counts_consistent(ids[i], &r.counts, i == 0);
            assert_true(e < previous);                    /* tighter rtol, smaller error */
            assert_true(r.counts.steps > previous_steps); /* ... bought with more steps */
            if (j == 0)
                first = e;
            previous = e;
            previous_steps = r.counts.steps;
        }
        /* Three decades of rtol buy at least two decades of global error: the error
         * follows the tolerance (tolerance proportionality, common practice), it does
         * not merely wobble downwards. */
        assert_true(previous < 1e-2 * first);
    }
}

static void cvode_last_step_lands_exactly_on_t_stop(void **state)
{
    const double theta0 = 1.0;
    const dm_instance *inst = pendulum(theta0);
    const char *ids[] = { "cvode-bdf", "cvode-adams" };
    /* a horizon no step size is likely to hit by accident, forwards and backwards */
    const double stops[] = { 7.3, -7.3 };
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++) {
            run r;
            integrate(method(ids[i]), inst, 1e-8, 0.0, stops[j], false, &r);
            assert_int_equal(r.status, DM_OK);
            assert_false(r.passed_stop);
            assert_true(r.t == stops[j]);
            /* and the state there is the orbit's state at t_stop, not at a nearby time */
            double e = pendulum_global_error(theta0, &r);
            printf("  %-12s t_stop %+.1f: landed at %.17g, error %.2e\n", ids[i], stops[j],
                   r.t, e);
            assert_true(e < 1e-5);
        }
}

static void cvode_refuses_to_step_past_t_stop(void **state)
{
    const dm_instance *inst = pendulum(1.0);
    double x0[2] = { inst->q0[0], inst->p0[0] }, x1[2];
    dm_point a = { 0.0, x0, NAN }, b = { 0.0, x1, NAN };
    dm_method_config config = { .rtol = 1e-6, .t_stop = 0.5 };
    dm_error err;
    dm_stepper *s = dm_stepper_create(method("cvode-adams"), inst, &config, &a, &err);
    assert_non_null(s);
    dm_point *from = &a, *to = &b;
    while (from->t != 0.5) {
        assert_int_equal(dm_stepper_step(s, from, to), DM_OK);
        dm_point *swap = from;
        from = to;
        to = swap;
    }
    /* one more step would pass t_stop: refused, and nothing moved */
    double t_before = to->t;
    assert_int_not_equal(dm_stepper_step(s, from, to), DM_OK);
    assert_non_null(strstr(s->error.msg, "t_stop"));
    assert_true(to->t == t_before);
    dm_stepper_destroy(s);
}

static void cvode_failure_gives_solver_error_with_cvode_flag_name(void **state)
{
    const dm_instance *inst = pendulum(1.0);
    const char *ids[] = { "cvode-bdf", "cvode-adams" };
    for (int i = 0; i < 2; i++) {
        run r;
        /* rtol = 1e-30 is far below double rounding: CVODE must give up with
         * CV_TOO_MUCH_ACC (its documented flag for a tolerance that cannot be met). */
        integrate(method(ids[i]), inst, 1e-30, 0.0, 10.0, false, &r);
        printf("  %-12s: %s\n", ids[i], r.error.msg);
        assert_int_equal(r.status, DM_ESOLVER);
        assert_int_equal(r.error.code, DM_ESOLVER);
        assert_non_null(strstr(r.error.msg, "CV_TOO_MUCH_ACC"));
        assert_non_null(strstr(r.error.msg, ids[i]));
        assert_non_null(strstr(r.error.msg, "t = "));
        assert_non_null(strstr(r.error.msg, "steps"));
        assert_true(r.t < 10.0);
    }
}

static void cvode_restart_at_the_start_reproduces_a_fresh_run_and_keeps_counting(void **state)
{
    const double theta0 = 2.5, t_mid = 20.0, t_end = 40.0;
    const dm_instance *inst = pendulum(theta0);
    const char *ids[] = { "cvode-bdf", "cvode-adams" };
    for (int i = 0; i < 2; i++) {
        run fresh;
        integrate(method(ids[i]), inst, 1e-9, 0.0, t_end, false, &fresh);
        assert_int_equal(fresh.status, DM_OK);

        double x0[2] = { inst->q0[0], inst->p0[0] }, x1[2];
        dm_point a = { 0.0, x0, NAN }, b = { 0.0, x1, NAN };
        dm_method_config config = { .rtol = 1e-9, .t_stop = t_end };
        dm_error err;
        dm_stepper *s = dm_stepper_create(method(ids[i]), inst, &config, &a, &err);
        assert_non_null(s);
        dm_point *from = &a, *to = &b;
        bool restarted = false;
        dm_counts before = { 0 };
        while (from->t != t_end) {
            assert_int_equal(dm_stepper_step(s, from, to), DM_OK);
            dm_point *swap = from;
            from = to;
            to = swap;
            if (!restarted && from->t >= t_mid) {
                /* back to the starting point: CVODE must forget its history there */
                before = *dm_stepper_counts(s);
                from->t = 0.0;
                from->x[0] = inst->q0[0];
                from->x[1] = inst->p0[0];
                assert_int_equal(dm_stepper_restart(s, from), DM_OK);
                restarted = true;
            }
        }
        /* CVODE after CVodeReInit is CVODE afresh: the same steps, the same numbers */
        assert_true(from->x[0] == fresh.x[0] && from->x[1] == fresh.x[1]);
        /* counts carry over the restart (CVodeReInit zeroes CVODE's own counters) */
        assert_true(before.steps > 0);
        const dm_counts *after = dm_stepper_counts(s);
        assert_true(after->steps == before.steps + fresh.counts.steps);
        assert_true(after->rhs_evals == before.rhs_evals + fresh.counts.rhs_evals);
        assert_true(after->jac_evals == before.jac_evals + fresh.counts.jac_evals);
        assert_true(after->nonlin_iters == before.nonlin_iters + fresh.counts.nonlin_iters);
        assert_true(after->force_evals == after->rhs_evals);
        printf("  %-12s restart at t = 0 from t = %g: steps %llu = %llu + %llu\n", ids[i],
               t_mid, (unsigned long long)after->steps, (unsigned long long)before.steps,
               (unsigned long long)fresh.counts.steps);
        dm_stepper_destroy(s);
    }
}

static void cvode_counts_asked_for_mid_run_match_the_steps_taken(void **state)
{
    /* The adapter reads CVODE's counters only when asked: counts asked for through
     * dm_stepper_counts in the middle of a run (t_stop far ahead, no failure, no
     * restart) must still be the work done so far. In CV_ONE_STEP mode every successful
     * call is exactly one internal step (CVODE's documented one-step mode), so the
     * steps must equal our own count of calls; the right-hand sides CVODE counts must
     * equal the force evaluations our right-hand side counted itself. */
    const dm_instance *inst = pendulum(2.5);
    const char *ids[] = { "cvode-bdf", "cvode-adams" };
    for (int i = 0; i < 2; i++) {
        double x0[2] = { inst->q0[0], inst->p0[0] }, x1[2];
        dm_point a = { 0.0, x0, NAN }, b = { 0.0, x1, NAN };
        dm_method_config config = { .rtol = 1e-8, .t_stop = 1e6 };
        dm_error err;
        dm_stepper *s = dm_stepper_create(method(ids[i]), inst, &config, &a, &err);
        assert_non_null(s);
        dm_point *from = &a, *to = &b;
        uint64_t taken = 0, previous_rhs = 0;
        for (int round = 0; round < 3; round++) {
            for (int k = 0; k < 150; k++) {
                assert_int_equal(dm_stepper_step(s, from, to), DM_OK);
                taken++;
                dm_point *swap = from;
                from = to;
                to = swap;
            }
            assert_true(from->t < 1e6);
            const dm_counts *c = dm_stepper_counts(s);
            assert_true(c->steps == taken);
            assert_true(c->rhs_evals == c->force_evals);
            assert_true(c->rhs_evals > previous_rhs);
            assert_true(c->nonlin_iters > 0);
            assert_true(c->max_iters_in_step > 0 && c->max_iters_in_step <= c->nonlin_iters);
            if (i == 0)
                assert_true(c->jac_evals > 0);
            previous_rhs = c->rhs_evals;
        }
        printf("  %-12s after %llu steps: rhs %llu, nonlinear iters %llu, most in a step %llu\n",
               ids[i], (unsigned long long)taken,
               (unsigned long long)dm_stepper_counts(s)->rhs_evals,
               (unsigned long long)dm_stepper_counts(s)->nonlin_iters,
               (unsigned long long)dm_stepper_counts(s)->max_iters_in_step);
        dm_stepper_destroy(s);
    }
}

static dm_instance kepler(double eccentricity)
{
    const char *keys[] = { "eccentricity" };
    double values[] = { eccentricity };
    dm_instance inst;
    dm_error err;
    assert_int_equal(dm_instance_init(&inst, dm_problem_find("kepler"), 1, keys, values, &err),
                     DM_OK);
    return inst;
}

/* y' = f(y) = (grad T(p), -grad V(q)), straight from the problem table. */
static void vector_field(const dm_instance *inst, const double *x, double *f)
{
    int dof = inst->dof;
    inst->problem->velocity(inst, x + dof, f);
    inst->problem->force(inst, x, f + dof);
    for (int i = 0; i < dof; i++)
        f[dof + i] = -f[dof + i];
}

static void cvode_jacobian_is_the_derivative_of_the_vector_field_on_kepler(void **state)
{
    /* Kepler (dof 2) has a full 2 x 2 Hessian, so a transposed, misplaced or
     * sign-flipped block of J = [[0, d2T/dp2], [-Hess V, 0]] shows. Reference: central
     * differences of f with step 1e-5 (error ~ 1e-10 |f^(3)|; common practice). */
    dm_instance inst = kepler(0.6);
    double points[3][4];
    memcpy(points[0], inst.q0, 2 * sizeof(double));
    memcpy(points[0] + 2, inst.p0, 2 * sizeof(double));
    inst.problem->exact(&inst, 1.3, points[1], points[1] + 2);
    inst.problem->exact(&inst, 4.1, points[2], points[2] + 2);
    for (int k = 0; k < 3; k++) {
        const double *x = points[k];
        double jac[16];
        assert_int_equal(dm_cvode_jacobian(&inst, x, jac), 4); /* 2 velocities a column */
        double scale = 0;
        for (int i = 0; i < 16; i++)
            scale = fmax(scale, fabs(jac[i]));
        for (int j = 0; j < 4; j++) {
            double xp[4], xm[4], fp[4], fm[4];
            memcpy(xp, x, sizeof xp);
            memcpy(xm, x, sizeof xm);
            double delta = 1e-5 * fmax(1.0, fabs(x[j]));
            xp[j] += delta;
            xm[j] -= delta;
            vector_field(&inst, xp, fp);
            vector_field(&inst, xm, fm);
            for (int i = 0; i < 4; i++) {
                double column_major = jac[j * 4 + i];
                double reference = (fp[i] - fm[i]) / (xp[j] - xm[j]);
                if (fabs(column_major - reference) > 1e-7 * scale)
                    fail_msg("point %d: J[%d][%d] = %.17g, difference quotient %.17g", k, i, j,
                             column_major, reference);
            }
        }
    }
}

static void cvode_bdf_uses_the_hessian_jacobian_instead_of_difference_quotients(void **state)
{
    /* The same run with the Hessian hidden makes CVODE build J by its own difference
     * quotients; the counts tell the two apart. */
    dm_instance with_hessian = kepler(0.6);
    dm_problem no_hessian_problem = *with_hessian.problem;
    no_hessian_problem.hessian = NULL;
    dm_instance no_hessian = with_hessian;
    no_hessian.problem = &no_hessian_problem;

    const double t_end = 3.0 * with_hessian.period;
    run r_user, r_dq;
    integrate(method("cvode-bdf"), &with_hessian, 1e-9, 0.0, t_end, false, &r_user);
    integrate(method("cvode-bdf"), &no_hessian, 1e-9, 0.0, t_end, false, &r_dq);
    assert_int_equal(r_user.status, DM_OK);
    assert_int_equal(r_dq.status, DM_OK);
    check_counts_consistent("Hessian J", &r_user.counts, true);
    check_counts_consistent("CVODE DQ J", &r_dq.counts, true);
    /* Besides one right-hand side per Newton iteration, CVODE's dense difference
     * quotients cost one per column (2 dof = 4) per Jacobian; ours cost none, only
     * 2 dof velocities. */
    assert_true(r_dq.counts.rhs_evals >= r_dq.counts.nonlin_iters + 4 * r_dq.counts.jac_evals);
    assert_true(r_user.counts.rhs_evals < r_user.counts.nonlin_iters + r_user.counts.jac_evals);
    assert_true(r_user.counts.velocity_evals ==
                r_user.counts.rhs_evals + 4 * r_user.counts.jac_evals);
    assert_true(r_dq.counts.velocity_evals == r_dq.counts.rhs_evals);
}

static void cvode_bdf_energy_drifts_over_ten_thousand_pendulum_periods(void **state)
{
    /* BDF is neither symplectic nor symmetric: its energy error grows with time
     * instead of staying bounded (Hairer, Lubich, Wanner, Geometric Numerical
     * Integration, 2nd ed. (2006), ch. X, from memory). */
    const double theta0 = 1.0;
    const dm_instance *inst = pendulum(theta0);
    const double t_end = 1e4 * inst->period;
    run r;
    integrate(method("cvode-bdf"), inst, 1e-6, 0.0, t_end, true, &r);
    assert_int_equal(r.status, DM_OK);
    double ratio = r.energy_last_tenth / r.energy_first_tenth;
    printf("  cvode-bdf rtol 1e-6 over 1e4 periods (t = %.1f, %llu steps): max |dE| "
           "first tenth %.3e, last tenth %.3e, ratio %.1f\n",
           t_end, (unsigned long long)r.counts.steps, r.energy_first_tenth,
           r.energy_last_tenth, ratio);
    assert_true(ratio > 5.0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(cvode_bdf_and_adams_reach_1e7_global_error_on_pendulum_at_rtol_1e10),
        cmocka_unit_test(cvode_global_error_falls_as_rtol_tightens),
        cmocka_unit_test(cvode_last_step_lands_exactly_on_t_stop),
        cmocka_unit_test(cvode_refuses_to_step_past_t_stop),
        cmocka_unit_test(cvode_failure_gives_solver_error_with_cvode_flag_name),
        cmocka_unit_test(cvode_restart_at_the_start_reproduces_a_fresh_run_and_keeps_counting),
        cmocka_unit_test(cvode_counts_asked_for_mid_run_match_the_steps_taken),
        cmocka_unit_test(cvode_jacobian_is_the_derivative_of_the_vector_field_on_kepler),
        cmocka_unit_test(cvode_bdf_uses_the_hessian_jacobian_instead_of_difference_quotients),
        cmocka_unit_test(cvode_bdf_energy_drifts_over_ten_thousand_pendulum_periods),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
