/* test_registry.c — every table in the problem and method registries keeps the rules its
 * interface states (problems/include/problem.h, integrators/include/method.h): required
 * fields set, optional ones consistent, one kind of method each, defaults that set up. A
 * new problem or method is checked here without a line of test written for it. */
#include <math.h>
#include <string.h>

#include "dm_test_util.h"
#include "method.h"
#include "problem.h"

static bool in_range(const dm_param *p, double v)
{
    bool below = (p->flags & DM_PARAM_MIN_OPEN) ? !(v > p->min) : !(v >= p->min);
    bool above = (p->flags & DM_PARAM_MAX_OPEN) ? !(v < p->max) : !(v <= p->max);
    return !below && !above;
}

static void every_problem_table_sets_its_required_fields(void **state)
{
    (void)state;
    assert_true(dm_problem_count >= 1);
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pb = dm_problems[i];
        print_message("problem %s\n", pb->id ? pb->id : "(null)");
        assert_non_null(pb->id);
        assert_true(strlen(pb->id) > 0);
        assert_non_null(pb->name);
        assert_true(pb->dof >= 1 && pb->dof <= DM_MAX_DOF);
        assert_true(pb->n_params >= 0 && pb->n_params <= DM_MAX_PARAMS);
        assert_true(pb->n_regimes >= 1 && pb->n_regimes <= DM_MAX_REGIMES);
        assert_non_null(pb->setup);
        assert_non_null(pb->potential);
        assert_non_null(pb->force);
        assert_non_null(pb->kinetic);
        assert_non_null(pb->velocity);
        /* optional, but all or nothing */
        assert_true(pb->n_invariants >= 0 && pb->n_invariants <= DM_MAX_INVARIANTS);
        assert_true((pb->n_invariants > 0) == (pb->invariants != NULL));
        for (int k = 0; k < pb->n_invariants; k++)
            assert_non_null(pb->invariant_names[k]);
        for (int k = 0; k < pb->n_regimes; k++) {
            assert_non_null(pb->regimes[k].id);
            assert_non_null(pb->regimes[k].meaning);
        }
        for (int k = 0; k < pb->n_params; k++) {
            const dm_param *p = &pb->params[k];
            assert_non_null(p->name);
            assert_non_null(p->meaning);
            assert_true(p->min <= p->max);
            /* every default is a value the user could have given */
            if (!in_range(p, p->fallback))
                fail_msg("%s: default %s = %g lies outside its range", pb->id, p->name,
                         p->fallback);
            for (int j = 0; j < k; j++)
                assert_string_not_equal(p->name, pb->params[j].name);
        }
        for (size_t j = 0; j < i; j++)
            assert_string_not_equal(pb->id, dm_problems[j]->id);
        assert_ptr_equal(dm_problem_find(pb->id), pb);
    }
    assert_null(dm_problem_find("no-such-problem"));
}

/* With no parameter given, every problem sets up a state with a finite period whose
 * recorded energy is H(q0, p0), and its force returns the same V as its potential. */
static void every_problem_sets_up_with_its_defaults(void **state)
{
    (void)state;
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pb = dm_problems[i];
        dm_instance inst;
        dm_error err = { 0 };
        dm_status st = dm_test_instance_defaults(&inst, pb, &err);
        if (st != DM_OK)
            fail_msg("%s with its defaults: %s", pb->id, err.msg);
        if (pb->no_period) { /* NaN, never a made-up number */
            assert_true(isnan(inst.period) && isnan(inst.first_crossing));
        } else {
            assert_true(isfinite(inst.period) && inst.period > 0.0);
            assert_true(inst.first_crossing > 0.0 && inst.first_crossing <= inst.period);
        }
        if (pb->needs_data) { /* without its data the problem is refused */
            dm_instance bare;
            assert_int_equal(dm_instance_init(&bare, pb, 0, NULL, NULL, &err), DM_EINPUT);
        }
        assert_true(inst.regime >= 0 && inst.regime < pb->n_regimes);
        assert_true(inst.dof >= 1 && inst.dof <= pb->dof);
        assert_true(inst.section.coord >= 0 && inst.section.coord < inst.dof);
        assert_true(!inst.section.relative ||
                    (inst.section.ref >= 0 && inst.section.ref + 2 < inst.dof &&
                     inst.section.coord + 2 < inst.dof &&
                     fabs(hypot(hypot(inst.section.normal[0], inst.section.normal[1]),
                                inst.section.normal[2]) - 1.0) < 1e-12));
        assert_true(inst.section.wrap >= 0.0);
        assert_close(inst.energy, dm_instance_energy(&inst, inst.q0, inst.p0), 1e-15);
        double grad[DM_MAX_DOF];
        double V = pb->force(&inst, inst.q0, grad);
        assert_true(V == pb->potential(&inst, inst.q0));
        for (int k = 0; k < inst.dof; k++)
            assert_true(isfinite(grad[k]));
    }
}

/* The first of a few points on the exact orbit (q0 and seven more over a period, or
 * q0 alone without an exact solution) where the problem's gradient does not write the
 * grad V its force writes, bit for bit; -1 when they agree everywhere. The fused loops
 * use gradient where the per-step paths of other methods use force, so the two must be
 * the same numbers. */
static int gradient_disagrees_with_force(const dm_instance *inst)
{
    const dm_problem *pb = inst->problem;
    if (pb->gradient == NULL)
        return -1; /* the default is force() itself */
    int n_points = pb->exact != NULL ? 8 : 1;
    for (int j = 0; j < n_points; j++) {
        double q[DM_MAX_DOF], p[DM_MAX_DOF], from_force[DM_MAX_DOF], alone[DM_MAX_DOF];
        if (j == 0)
            memcpy(q, inst->q0, sizeof q);
        else
            pb->exact(inst, inst->period * j / n_points, q, p);
        (void)pb->force(inst, q, from_force);
        pb->gradient(inst, q, alone);
        if (memcmp(from_force, alone, (size_t)inst->dof * sizeof(double)) != 0)
            return j;
    }
    return -1;
}

static void every_gradient_writes_what_force_writes(void **state)
{
    (void)state;
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pb = dm_problems[i];
        dm_instance inst;
        dm_error err = { 0 };
        assert_int_equal(dm_test_instance_defaults(&inst, pb, &err), DM_OK);
        int j = gradient_disagrees_with_force(&inst);
        if (j >= 0)
            fail_msg("%s: gradient() and force() write different grad V at point %d", pb->id, j);
    }
}

/* The check catches a gradient one ulp off: the pendulum's table with a wrong one. */
static void wrong_gradient(const dm_instance *inst, const double *q, double *grad)
{
    inst->problem->force(inst, q, grad);
    grad[0] = nextafter(grad[0], INFINITY);
}

static void a_gradient_one_ulp_off_is_caught(void **state)
{
    (void)state;
    const dm_problem *real = dm_problem_find("pendulum");
    assert_non_null(real);
    dm_problem fake = *real;
    fake.gradient = wrong_gradient;
    dm_instance inst;
    dm_error err = { 0 };
    assert_int_equal(dm_instance_init(&inst, &fake, 0, NULL, NULL, &err), DM_OK);
    assert_int_equal(gradient_disagrees_with_force(&inst), 0);
    fake.gradient = NULL; /* the default: force() itself */
    assert_int_equal(gradient_disagrees_with_force(&inst), -1);
    double g1[DM_MAX_DOF], g2[DM_MAX_DOF];
    dm_problem_gradient(&fake)(&inst, inst.q0, g1);
    (void)fake.force(&inst, inst.q0, g2);
    assert_memory_equal(g1, g2, sizeof(double));
}

static void every_method_table_is_one_kind_and_sets_its_required_fields(void **state)
{
    (void)state;
    assert_true(dm_method_count >= 1);
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        print_message("method %s\n", m->id ? m->id : "(null)");
        assert_non_null(m->id);
        assert_true(strlen(m->id) > 0);
        assert_non_null(m->name);
        assert_non_null(m->reference);
        assert_true(m->order >= 1);
        assert_true(m->adaptive == (m->family == DM_FAMILY_ADAPTIVE));
        if (m->variable_order)  /* only a method choosing its steps chooses its order */
            assert_true(m->adaptive);
        if (m->adaptive)
            assert_int_equal(m->force_evals_per_step, 0);
        else if (m->family != DM_FAMILY_IMPLICIT) /* implicit: iterations decide */
            assert_true(m->force_evals_per_step >= 1);
        if (m->splitting != NULL) {
            assert_int_equal(m->family, DM_FAMILY_SPLITTING);
            assert_null(m->create);
            assert_null(m->step);
            assert_null(m->restart);
            assert_null(m->destroy);
            const dm_splitting *t = m->splitting;
            /* kick_first: K D K ... so n_kick = n_drift or n_drift + 1; else the mirror */
            if (t->kick_first)
                assert_true(t->n_kick == t->n_drift || t->n_kick == t->n_drift + 1);
            else
                assert_true(t->n_drift == t->n_kick || t->n_drift == t->n_kick + 1);
            double sk = 0.0, sd = 0.0;
            for (int k = 0; k < t->n_kick; k++)
                sk += t->kick[k];
            for (int k = 0; k < t->n_drift; k++)
                sd += t->drift[k];
            /* consistency (order >= 1): each family of coefficients sums to 1 */
            assert_close(sk, 1.0, 1e-14);
            assert_close(sd, 1.0, 1e-14);
        } else {
            /* a splitting with its own steps splits a problem's structure: it says
             * which problems it takes */
            if (m->family == DM_FAMILY_SPLITTING)
                assert_non_null(m->check_problem);
            assert_non_null(m->create);
            assert_non_null(m->step);
            assert_non_null(m->restart);
            assert_non_null(m->destroy);
        }
        for (size_t j = 0; j < i; j++)
            assert_string_not_equal(m->id, dm_methods[j]->id);
        assert_ptr_equal(dm_method_find(m->id), m);
    }
    assert_null(dm_method_find("no-such-method"));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(every_problem_table_sets_its_required_fields),
        cmocka_unit_test(every_problem_sets_up_with_its_defaults),
        cmocka_unit_test(every_gradient_writes_what_force_writes),
        cmocka_unit_test(a_gradient_one_ulp_off_is_caught),
        cmocka_unit_test(every_method_table_is_one_kind_and_sets_its_required_fields),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
