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

/* Special Nystrom trees with 1 .. 5 vertices: 1, 1, 2, 3, 6 (counted by hand from the
 * definition: a fat root over meagre leaves and meagre vertices each over one fat
 * subtree; e.g. with 4 vertices {L, L, L}, {L, M(F)}, {M(F(L))}). */
static void nystrom_trees_are_counted(void **state)
{
    (void)state;
    static const size_t count[] = { 0, 1, 1, 2, 3, 6 };
    for (int n = 1; n <= 5; n++)
        assert_int_equal(dm_nystrom_tree_count(n), count[n]);
}

static int nystrom_order_of(const double *abar, const double *bbar, const double *b,
                            const double *c, int s)
{
    dm_order_report r;
    dm_rkn_order(abar, bbar, b, c, s, 6, 1e-13, &r);
    for (int n = 1; n <= r.checked_to; n++)
        print_message("  order %d: worst residual %.2e\n", n, r.worst[n]);
    return r.order;
}

/* A splitting of kicks b_i and drifts is a Nystrom table for T quadratic in p: a stage at
 * each kick, c_i the drifts before it, abar_ij = b_j (c_i - c_j), bbar_i = b_i (1 - c_i)
 * (the kick-drift sequence written out). */
static int splitting_as_nystrom(const double *kick, const double *drift, int n_kick)
{
    double c[16], abar[16 * 16] = { 0 }, bbar[16];
    double t = 0.0;
    for (int i = 0; i < n_kick; i++) {
        c[i] = t;
        t += i < n_kick - 1 ? drift[i] : 0.0;
    }
    for (int i = 0; i < n_kick; i++) {
        bbar[i] = kick[i] * (1 - c[i]);
        for (int j = 0; j < i; j++)
            abar[i * n_kick + j] = kick[j] * (c[i] - c[j]);
    }
    return nystrom_order_of(abar, bbar, kick, c, n_kick);
}

/* Tables of known order: Nystrom's fourth-order method (E. J. Nystrom 1925; Hairer,
 * Norsett, Wanner, section II.14, from memory; its order 4 also shown with mpmath by
 * tests/check_published_table.py); the Nystrom form of RK4 (abar = A^2, bbar = b A, same
 * b and c: Hairer, Norsett, Wanner, section II.14) of order 4; Stormer-Verlet as a
 * splitting, order 2; Blanes and Moan's SRKN_6^b (J. Comput. Appl. Math. 142 (2002) 313,
 * Table 3; mpmath: tests/check_published_table.py), order 4. One coefficient moved
 * breaks each. */
static void nystrom_tables_reach_their_order(void **state)
{
    (void)state;
    const double c[] = { 0, 0.5, 0.5, 1 };
    const double b[] = { 1.0 / 6, 1.0 / 3, 1.0 / 3, 1.0 / 6 };
    double ny_abar[] = { 0, 0, 0, 0, 0.125, 0, 0, 0, 0.125, 0, 0, 0, 0, 0, 0.5, 0 };
    const double ny_bbar[] = { 1.0 / 6, 1.0 / 6, 1.0 / 6, 0 };
    assert_int_equal(nystrom_order_of(ny_abar, ny_bbar, b, c, 4), 4);
    ny_abar[4] = 0.126;
    assert_true(nystrom_order_of(ny_abar, ny_bbar, b, c, 4) < 4);
    const double rk4_abar[] = { 0, 0, 0, 0, 0, 0, 0, 0, 0.25, 0, 0, 0, 0, 0.5, 0, 0 };
    const double rk4_bbar[] = { 1.0 / 6, 1.0 / 6, 1.0 / 6, 0 };
    assert_int_equal(nystrom_order_of(rk4_abar, rk4_bbar, b, c, 4), 4);

    const double verlet_kick[] = { 0.5, 0.5 }, verlet_drift[] = { 1.0 };
    assert_int_equal(splitting_as_nystrom(verlet_kick, verlet_drift, 2), 2);
    const double k1 = 0.0829844064174052, k2 = 0.396309801498368, k3 = -0.0390563049223486;
    const double d1 = 0.245298957184271, d2 = 0.604872665711080;
    const double k4 = 1 - 2 * (k1 + k2 + k3), d3 = 0.5 - (d1 + d2);
    double bm_kick[] = { k1, k2, k3, k4, k3, k2, k1 };
    const double bm_drift[] = { d1, d2, d3, d3, d2, d1 };
    /* 15 published digits: the conditions hold to about 1e-15 */
    assert_int_equal(splitting_as_nystrom(bm_kick, bm_drift, 7), 4);
    bm_kick[1] += 1e-3; /* the sum kept, the symmetry broken */
    bm_kick[3] -= 1e-3;
    assert_true(splitting_as_nystrom(bm_kick, bm_drift, 7) < 4);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(rooted_trees_are_counted_as_published),
        cmocka_unit_test(published_tables_reach_their_order),
        cmocka_unit_test(a_wrong_coefficient_is_caught),
        cmocka_unit_test(nystrom_trees_are_counted),
        cmocka_unit_test(nystrom_tables_reach_their_order),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
