/* test_table_check.c — symmetry and measured order of splitting tables
 * (integrators/table_check.c), checked on every built-in table, whose published
 * properties are in the registry. */
#include "dm_test_util.h"

#include <math.h>

#include "method.h"
#include "problem.h"
#include "table_check.h"

/* The published symmetry of each built-in splitting (the `symmetric` field, with its
 * source in the table's reference) is what the table's coefficients show. */
static void symmetry_is_read_off_every_built_in_table(void **state)
{
    (void)state;
    int seen = 0;
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (m->splitting == NULL)
            continue;
        seen++;
        print_message("%-12s symmetric: published %d, read %d\n", m->id, m->symmetric,
                      dm_splitting_is_symmetric(m->splitting));
        assert_int_equal(dm_splitting_is_symmetric(m->splitting), m->symmetric);
    }
    assert_true(seen >= 5);
}

static void init_instance(dm_instance *inst, const char *problem, const char *key, double value,
                          const char *key2, double value2)
{
    const char *keys[] = { key, key2 };
    double values[] = { value, value2 };
    dm_error err = { 0 };
    assert_int_equal(dm_instance_init(inst, dm_problem_find(problem), key2 ? 2 : 1, keys,
                                      values, &err),
                     DM_OK);
}

/* The order measured by halving the step over one period, on the harmonic oscillator
 * and on the pendulum at amplitude 1, is each built-in table's published order (the
 * `order` of its table, with its source in the reference), to 0.3. The maximum of the
 * error over every step of the period is taken, not its value at the end: at whole
 * periods of the harmonic oscillator the O(h) error of symplectic Euler (conjugate to
 * a second-order method; Hairer, Lubich, Wanner, ch. VI) cancels. */
static void measured_order_is_the_published_one(void **state)
{
    (void)state;
    dm_instance inst[2];
    init_instance(&inst[0], "harmonic", "amplitude", 1.0, NULL, 0.0);
    init_instance(&inst[1], "pendulum", "amplitude", 1.0, NULL, 0.0);
    dm_error err = { 0 };
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (m->splitting == NULL && m->tableau == NULL)
            continue;
        for (int k = 0; k < 2; k++) {
            dm_measured_order o;
            assert_int_equal(dm_measure_order(m, &inst[k], &o, &err), DM_OK);
            print_message("%-12s %-9s order %d measured %.3f at n = %g (constant %.4g)\n",
                          m->id, inst[k].problem->id, m->order, o.order,
                          o.used >= 0 ? o.steps_per_period[o.used] : NAN, o.error_constant);
            assert_true(fabs(o.order - m->order) < 0.3);
        }
    }
}

/* Neither the order nor the error constant depends on the units: the harmonic
 * oscillator at omega = 1 and at omega = 7.3 with amplitude 1 and 40 (time and length
 * scaled), and the pendulum at g/L = 1 and 9.81 (time scaled), give the same figures to
 * 1e-6 (they differ only by rounding), from the same steps a period. */
static void measured_figures_do_not_depend_on_the_units(void **state)
{
    (void)state;
    dm_instance a, b, c, d;
    init_instance(&a, "harmonic", "omega", 1.0, "amplitude", 1.0);
    init_instance(&b, "harmonic", "omega", 7.3, "amplitude", 40.0);
    init_instance(&c, "pendulum", "g_over_l", 1.0, "amplitude", 1.0);
    init_instance(&d, "pendulum", "g_over_l", 9.81, "amplitude", 1.0);
    const dm_instance *pairs[2][2] = { { &a, &b }, { &c, &d } };
    const char *ids[] = { "verlet", "yoshida4", "symeuler-a", "rk4" };
    dm_error err = { 0 };
    for (size_t i = 0; i < sizeof ids / sizeof ids[0]; i++)
        for (int k = 0; k < 2; k++) {
            dm_measured_order x, y;
            const dm_method *m = dm_method_find(ids[i]);
            assert_int_equal(dm_measure_order(m, pairs[k][0], &x, &err), DM_OK);
            assert_int_equal(dm_measure_order(m, pairs[k][1], &y, &err), DM_OK);
            print_message("%-10s %-9s order %.6f %.6f constant %.6g %.6g\n", ids[i],
                          pairs[k][0]->problem->id, x.order, y.order, x.error_constant,
                          y.error_constant);
            assert_true(x.used == y.used);
            assert_true(fabs(x.order - y.order) < 1e-6);
            assert_true(fabs(x.error_constant / y.error_constant - 1) < 1e-6);
        }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(symmetry_is_read_off_every_built_in_table),
        cmocka_unit_test(measured_order_is_the_published_one),
        cmocka_unit_test(measured_figures_do_not_depend_on_the_units),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
