/* order_conditions.h — the order a Runge-Kutta table really has, from its coefficients.
 *
 * A table (A, b) of s stages has order p on autonomous problems (ours all are) when,
 * for every rooted tree t with at most p vertices, its elementary weight b^T Phi(t)
 * equals 1 / gamma(t) (J. C. Butcher, Numerical Methods for Ordinary Differential
 * Equations, 2nd ed., Wiley 2008: 1, 2, 4, 8, 17, 37, 85, 200 conditions for orders 1 to
 * 8; the rooted trees with n vertices number 1, 1, 2, 4, 9, 20, 48, 115, OEIS A000081).
 * The nodes c do not enter. The weights are summed in
 * quad precision (IEEE binary128, gcc's libquadmath) from the coefficients as given, so
 * a condition's residual shows the table's own error, not the summation's: a table
 * typed to 17 digits meets its conditions to about 1e-16, a wrong coefficient misses
 * them by far more.
 */
#ifndef DM_ORDER_CONDITIONS_H
#define DM_ORDER_CONDITIONS_H

#include <stddef.h>

#define DM_ORDER_MAX 8         /* trees are checked up to this order */
#define DM_STAGES_MAX 32

/* The number of rooted trees with n vertices (n = 1 .. DM_ORDER_MAX), as generated. */
size_t dm_rooted_tree_count(int n);

typedef struct dm_order_report {
    int order;                 /* the largest p whose every condition holds */
    int checked_to;            /* conditions were checked up to this order */
    double worst[DM_ORDER_MAX + 1]; /* largest |b^T Phi(t) gamma(t) - 1| among trees of
                                       each order (index 1 .. checked_to) */
} dm_order_report;

/* Checks the table's conditions up to max_order (<= DM_ORDER_MAX), each against the
 * tolerance tol (e.g. 1e-13 for coefficients typed to 17 digits). a is s x s row-major
 * (explicit tables have zeros on and above the diagonal, but any table is checked). */
void dm_rk_order(const double *a, const double *b, int s, int max_order, double tol,
                 dm_order_report *report);

#endif
