/* descent.h — a local minimum of a function of many variables reached from a start by
 * descending along its gradient (nonlinear conjugate gradients, Polak-Ribiere+, with
 * line searches on the directional derivative alone). The path uses only the gradient,
 * so adding a constant to the function moves neither it nor the point found: the energy
 * scale of a problem written as formulas (formula.c) is then a property of the system.
 * Setup only. */
#ifndef DM_DESCENT_H
#define DM_DESCENT_H

#include <stdbool.h>

#include "problem.h"

typedef enum dm_descent_end {
    DM_DESCENT_FOUND = 0,   /* x is a stationary point reached downhill from the start */
    DM_DESCENT_UNBOUNDED,   /* the path went beyond `reach` of the start: no minimum */
    DM_DESCENT_NOT_FINITE,  /* the gradient was not finite on the path */
    DM_DESCENT_NO_END       /* no convergence within the iteration budget */
} dm_descent_end;

/* From x (n values) downhill along grad; x ends at the point found. `reach` bounds the
 * largest distance (max norm) of the path from the start. */
dm_descent_end dm_descend(const dm_instance *inst, dm_gradient_fn grad, int n, double *x,
                          double reach);

#endif
