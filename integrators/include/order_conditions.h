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

/* The same for an explicit Runge-Kutta-Nystrom table for y'' = f(y) (abar s x s
 * row-major): order p when sum_i b_i Phi_i(t) = 1 / gamma(t) for every special Nystrom
 * tree t with rho(t) <= p, and sum_i bbar_i Phi_i(t) = 1 / ((rho(t) + 1) gamma(t)) for
 * those with rho(t) <= p - 1 (Hairer, Norsett, Wanner, Solving ODEs I, 2nd ed. 1993,
 * section II.14; from memory of the book: order 3 reads sum b = 1, sum b c = 1/2,
 * sum b c^2 = 1/3, sum b abar 1 = 1/6, sum bbar = 1/2, sum bbar c = 1/6). The trees: a
 * fat root whose branches are meagre leaves (weight c_i) or meagre vertices over a fat
 * subtree (weight sum_j abar_ij Phi_j). Summed in quad precision like dm_rk_order. */
void dm_rkn_order(const double *abar, const double *bbar, const double *b, const double *c,
                  int s, int max_order, double tol, dm_order_report *report);
/* The number of special Nystrom trees with n vertices (n = 1 .. DM_ORDER_MAX). */
size_t dm_nystrom_tree_count(int n);

#endif
