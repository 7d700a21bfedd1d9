/* test_order_conditions.c — the order of Runge-Kutta tables from their coefficients
 * (integrators/order_conditions.c), on tables whose order is known. */
#include "dm_test_util.h"

#include <math.h>

#include "order_conditions.h"

/* Rooted trees with n vertices: 1, 1, 2, 4, 9, 20, 48, 115 (OEIS A000081; their running
 * sums 1, 2, 4, 8, 17, 37, 85, 200 are the counts of order conditions in J. C. Butcher,
 * Numerical Methods for ODEs, 2nd ed., 2008). */
static void rooted_trees_are_counted_as_published(void **state)
{
    (void)state;
    static const size_t count[] = { 0, 1, 1, 2, 4, 9, 20, 48, 115 };
    for (int n = 1; n <= DM_ORDER_MAX; n++)
        assert_int_equal(dm_rooted_tree_count(n), count[n]);
}

static int order_of(const double *a, const double *b, int s)
{
    dm_order_report r;
    dm_rk_order(a, b, s, 6, 1e-13, &r);
    for (int n = 1; n <= r.checked_to; n++)
        print_message("  order %d: worst residual %.2e\n", n, r.worst[n]);
    return r.order;
}

/* Tables of known order (common practice; Hairer, Norsett, Wanner, Solving ODEs I, 2nd
 * ed. 1993, section II.1): explicit Euler 1, Heun's third-order method 3, the classical
 * RK4 4, Kutta's 3/8 rule 4. */
static void published_tables_reach_their_order(void **state)
{
    (void)state;
    const double euler_a[] = { 0 }, euler_b[] = { 1 };
    assert_int_equal(order_of(euler_a, euler_b, 1), 1);
    const double heun3_a[] = { 0, 0, 0, 1.0 / 3, 0, 0, 0, 2.0 / 3, 0 };
    const double heun3_b[] = { 0.25, 0, 0.75 };
    assert_int_equal(order_of(heun3_a, heun3_b, 3), 3);
    const double rk4_a[] = { 0, 0, 0, 0, 0.5, 0, 0, 0, 0, 0.5, 0, 0, 0, 0, 1, 0 };
    const double rk4_b[] = { 1.0 / 6, 1.0 / 3, 1.0 / 3, 1.0 / 6 };
    assert_int_equal(order_of(rk4_a, rk4_b, 4), 4);
    const double r38_a[] = { 0, 0, 0, 0, 1.0 / 3, 0, 0, 0, -1.0 / 3, 1, 0, 0, 1, -1, 1, 0 };
    const double r38_b[] = { 0.125, 0.375, 0.375, 0.125 };
    assert_int_equal(order_of(r38_a, r38_b, 4), 4);
}

/* One wrong coefficient of RK4 (a32 = 0.5001 for 1/2) breaks the second-order condition
 * sum b_i c_i = 1/2: order 1, not 4. A b that does not sum to 1: order 0. */
static void a_wrong_coefficient_is_caught(void **state)
{
    (void)state;
    const double a[] = { 0, 0, 0, 0, 0.5, 0, 0, 0, 0, 0.5001, 0, 0, 0, 0, 1, 0 };
    const double b[] = { 1.0 / 6, 1.0 / 3, 1.0 / 3, 1.0 / 6 };
    assert_int_equal(order_of(a, b, 4), 1);
    const double a2[] = { 0, 0, 0, 0, 0.5, 0, 0, 0, 0, 0.5, 0, 0, 0, 0, 1, 0 };
    const double b2[] = { 1.0 / 6 + 1e-6, 1.0 / 3, 1.0 / 3, 1.0 / 6 };
    assert_int_equal(order_of(a2, b2, 4), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(rooted_trees_are_counted_as_published),
        cmocka_unit_test(published_tables_reach_their_order),
        cmocka_unit_test(a_wrong_coefficient_is_caught),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
