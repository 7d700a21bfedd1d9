/* cvode.h — the part of the CVODE adapter (cvode.c) that tests look at directly.
 * Private to integrators/ and tests/: the harness goes through method.h. */
#ifndef DM_CVODE_H
#define DM_CVODE_H

#include "problem.h"

/* The Jacobian of y' = f(y) = (grad T(p), -grad V(q)) at x = (q, p),
 *     J = [[0, d2T/dp2], [-Hess V(q), 0]],
 * written column-major into jac (2 dof x 2 dof, leading dimension 2 dof), which is
 * CVODE's dense-matrix layout. Needs inst->problem->hessian. Returns the number of
 * velocity() evaluations it made (d2T/dp2 is taken by central differences). */
int dm_cvode_jacobian(const dm_instance *inst, const double *x, double *jac);

#endif
