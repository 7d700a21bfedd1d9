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

/* The order measured by halving the step on the pendulum (amplitude 1) is
 * each built-in table's published order, to 0.3. Over 0.3 of a period, not whole periods:
 * symplectic Euler is conjugate to a second-order method, and over many periods its
 * growing h^2 t error hides the bounded O(h) one (common practice; Hairer, Lubich,
 * Wanner, ch. VI). */
static void measured_order_is_the_published_one(void **state)
{
    (void)state;
    dm_instance inst;
    const char *keys[] = { "amplitude" };
    double values[] = { 1.0 };
    dm_error err = { 0 };
    assert_int_equal(dm_instance_init(&inst, dm_problem_find("pendulum"), 1, keys, values, &err),
                     DM_OK);
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (m->splitting == NULL)
            continue;
        /* high orders need coarser steps to stay above round-off */
        int n = m->order >= 6 ? 8 : m->order >= 4 ? 16 : 64;
        dm_measured_order o;
        assert_int_equal(dm_measure_order(m, &inst, 0.3, n, &o, &err), DM_OK);
        print_message("%-12s order %d measured %.3f (errors %.2e %.2e %.2e, constant %.3g)\n",
                      m->id, m->order, o.order, o.errors[0], o.errors[1], o.errors[2],
                      o.error_constant);
        assert_true(fabs(o.order - m->order) < 0.3);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(symmetry_is_read_off_every_built_in_table),
        cmocka_unit_test(measured_order_is_the_published_one),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
