/* reference.h — a reference trajectory in the wider type dm_quad (problem.h), for the
 * global error of problems with no closed-form solution: the recursive triple jump
 * (H. Yoshida, Phys. Lett. A 150 (1990) 262; M. Suzuki, Phys. Lett. A 146 (1990) 319)
 * built up from kick-drift-kick Stormer-Verlet to order 8, 27 Verlet steps a step, its
 * weights computed in dm_quad from their closed forms
 *     gamma1 = 1 / (2 - 2^(1/(p+1))), gamma2 = -2^(1/(p+1)) / (2 - 2^(1/(p+1)))
 * for p = 2, 4, 6, so they hold every digit of the type. It needs the problem's
 * gradient_quad and velocity_quad.
 *
 * Order 8 rather than 6 or 10: to reach an error eps over a time, a method of order p
 * with s forces a step takes about s eps^(-1/p) forces (its error constant aside). At
 * eps = 1e-24 order 6 (9 forces) costs (9/27) 1e-24^(1/8 - 1/6) = 3.3 times order 8's,
 * and order 10 (81 forces) 3 (1e-24)^(1/8 - 1/10) = 0.76 times, before its larger error
 * constant (the negative middle weight of each level multiplies it); 8 is the cheaper
 * or as cheap over the errors we aim at, 1e-20 to 1e-28.
 *
 * The state lives on the grid t = k h (k counted, never a running sum of h); the state
 * at any other time is one shorter step from the grid point before it, taken on a copy,
 * so the states asked for do not change the grid: the reference at a time is the same
 * whichever times were asked before (the buckets of a run do not change it). */
#ifndef DM_REFERENCE_H
#define DM_REFERENCE_H

#include <stdint.h>

#include "dm_error.h"
#include "problem.h"

#define DM_REFERENCE_ORDER 8
#define DM_REFERENCE_STAGES 27

/* The 27 weights of the order-8 triple jump, summing to 1. */
void dm_reference_weights(dm_quad w[DM_REFERENCE_STAGES]);

typedef struct dm_reference {
    const dm_instance *inst;
    dm_quad w[DM_REFERENCE_STAGES];
    dm_quad h;                       /* the step */
    uint64_t k;                      /* steps taken: x is the state at t = k h */
    dm_quad x[2 * DM_MAX_DOF];       /* q then p */
    dm_quad grad[DM_MAX_DOF];        /* grad V at x's q */
    dm_quad y[2 * DM_MAX_DOF];       /* scratch: the copy stepped off the grid */
    dm_quad gy[DM_MAX_DOF];
    uint64_t forces;                 /* gradient_quad evaluations */
} dm_reference;

/* Starts *r at the instance's (q0, p0) (the doubles, exactly) with step h > 0. Refuses a
 * problem without gradient_quad (DM_EINPUT, one line naming it). */
dm_status dm_reference_start(dm_reference *r, const dm_instance *inst, double h,
                             dm_error *err);

/* One step of h on the grid. */
void dm_reference_step(dm_reference *r);

/* The state at time t >= 0 into out (q then p, 2 dof values): the grid is stepped to
 * the last point at or before t (from the start again when t lies before the grid's
 * point), then one step of the rest taken on a copy. */
void dm_reference_state_at(dm_reference *r, dm_quad t, dm_quad *out);

#endif
