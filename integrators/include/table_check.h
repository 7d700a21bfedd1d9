/* table_check.h — what can be established about a splitting table on its own: whether
 * it is symmetric (time-reversible), and the order it reaches in practice, measured by
 * a short convergence test against a problem's exact solution (with the leading error
 * constant, which tells two methods of one order apart). For the user's own tables;
 * the built-in ones are checked the same way by the tests. Setup only. */
#ifndef DM_TABLE_CHECK_H
#define DM_TABLE_CHECK_H

#include <stdbool.h>

#include "method.h"

/* A splitting is symmetric when its sequence of kicks and drifts reads the same
 * backwards (each coefficient equal to its mirror to a relative 1e-14): then
 * Phi(-h) Phi(h) = identity (Hairer, Lubich, Wanner, Geometric Numerical Integration,
 * 2006, ch. V). */
bool dm_splitting_is_symmetric(const dm_splitting *table);

typedef struct dm_measured_order {
    double order;              /* log2 of the ratio of the global errors at h and h / 2 */
    double error_constant;     /* global error at the finest step over h^order */
    double errors[3];          /* global errors (phase-space distance) at h, h/2, h/4 */
    double h;                  /* the coarsest step */
} dm_measured_order;

/* Runs `method` on `inst` (which must have an exact solution) over `periods` periods
 * at n, 2n and 4n steps a period and measures the order from the last two. */
dm_status dm_measure_order(const dm_method *method, const dm_instance *inst, double periods,
                           int n, dm_measured_order *out, dm_error *err);

#endif
