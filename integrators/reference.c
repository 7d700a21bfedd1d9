/* reference.c — the order-8 triple jump in dm_quad (reference.h). */
#include "reference.h"

#include <math.h>
#include <string.h>

/* 2^(1/k) to every digit of dm_quad: Newton's iteration on x^k = 2 from the double root
 * (each iteration doubles the digits: 16 -> 32 -> 64). */
static dm_quad root_of_two(int k)
{
    dm_quad x = pow(2.0, 1.0 / k);
    for (int it = 0; it < 4; it++) {
        dm_quad xk1 = 1;
        for (int j = 0; j < k - 1; j++)
            xk1 *= x;
        x -= (xk1 * x - 2) / (k * xk1);
    }
    return x;
}

void dm_reference_weights(dm_quad w[DM_REFERENCE_STAGES])
{
    int n = 1;
    w[0] = 1;
    for (int p = 2; p < DM_REFERENCE_ORDER; p += 2) {
        dm_quad r = root_of_two(p + 1);
        dm_quad g1 = 1 / (2 - r), g2 = -r / (2 - r);
        dm_quad prev[DM_REFERENCE_STAGES];
        memcpy(prev, w, sizeof(dm_quad) * (size_t)n);
        for (int i = 0; i < n; i++) {
            w[i] = g1 * prev[i];
            w[n + i] = g2 * prev[i];
            w[2 * n + i] = g1 * prev[i];
        }
        n *= 3;
    }
}

dm_status dm_reference_start(dm_reference *r, const dm_instance *inst, double h,
                             dm_error *err)
{
    const dm_problem *pb = inst->problem;
    if (pb->gradient_quad == NULL || pb->velocity_quad == NULL)
        return dm_error_set(err, DM_EINPUT, "problem %s has no reference trajectory (its "
                            "table has no gradient_quad)", pb->id);
    if (!(h > 0.0) || !isfinite(h))
        return dm_error_set(err, DM_EINPUT, "reference step %g (expected a finite h > 0)", h);
    const int n = inst->dof;
    r->inst = inst;
    dm_reference_weights(r->w);
    r->h = h;
    r->k = 0;
    for (int i = 0; i < n; i++) {
        r->x[i] = inst->q0[i];
        r->x[n + i] = inst->p0[i];
    }
    pb->gradient_quad(inst, r->x, r->grad);
    r->forces = 1;
    return DM_OK;
}

/* One composition step of size dt from x (its gradient g, kept current). */
static void compose(dm_reference *r, dm_quad *x, dm_quad *g, dm_quad dt)
{
    const dm_instance *inst = r->inst;
    const int n = inst->dof;
    dm_quad v[DM_MAX_DOF];
    for (int s = 0; s < DM_REFERENCE_STAGES; s++) {
        dm_quad c = r->w[s] * dt, half = c / 2;
        for (int i = 0; i < n; i++)
            x[n + i] -= half * g[i];
        inst->problem->velocity_quad(inst, x + n, v);
        for (int i = 0; i < n; i++)
            x[i] += c * v[i];
        inst->problem->gradient_quad(inst, x, g);
        for (int i = 0; i < n; i++)
            x[n + i] -= half * g[i];
    }
    r->forces += DM_REFERENCE_STAGES;
}

void dm_reference_step(dm_reference *r)
{
    compose(r, r->x, r->grad, r->h);
    r->k++;
}

void dm_reference_state_at(dm_reference *r, dm_quad t, dm_quad *out)
{
    const int n = r->inst->dof;
    /* the last grid point at or before t: k h is exact in dm_quad for k < 2^60 */
    dm_quad kq = t / r->h;
    uint64_t k = kq > 0 ? (uint64_t)kq : 0;
    while (k > 0 && (dm_quad)k * r->h > t)
        k--;
    while ((dm_quad)(k + 1) * r->h <= t)
        k++;
    if (k < r->k) { /* before the grid's point: from the start again */
        uint64_t forces = r->forces;
        (void)dm_reference_start(r, r->inst, (double)r->h, NULL);
        r->forces += forces;
    }
    while (r->k < k)
        dm_reference_step(r);
    dm_quad rest = t - (dm_quad)r->k * r->h;
    memcpy(out, r->x, sizeof(dm_quad) * 2 * (size_t)n);
    if (rest > 0) {
        memcpy(r->gy, r->grad, sizeof(dm_quad) * (size_t)n);
        compose(r, out, r->gy, rest);
    }
}
