/* table_check.c — symmetry and measured order of a method (table_check.h). */
#include <math.h>
#include <string.h>

#include "table_check.h"

bool dm_splitting_is_symmetric(const dm_splitting *t)
{
    /* the operations in order: kick_first alternates K D K D ...; the reversed sequence
     * must start with the same kind and carry the same coefficients */
    int n = t->n_kick + t->n_drift;
    double coef[2 * 64];
    bool kick[2 * 64];
    if (n > 2 * 64)
        return false;
    int ik = 0, id = 0;
    bool k = t->kick_first;
    for (int i = 0; i < n; i++, k = !k) {
        kick[i] = k;
        coef[i] = k ? t->kick[ik++] : t->drift[id++];
    }
    for (int i = 0; i < n / 2; i++) {
        int j = n - 1 - i;
        if (kick[i] != kick[j])
            return false;
        if (fabs(coef[i] - coef[j]) > 1e-14 * fmax(fabs(coef[i]), fabs(coef[j])))
            return false;
    }
    return true;
}

/* The global error (phase-space distance to the exact solution) after `steps` steps of
 * h = T / n. */
static dm_status global_error(const dm_method *m, const dm_instance *inst, double h,
                              long steps, double *out, dm_error *err)
{
    int d = inst->dof;
    double buf[2][2 * DM_MAX_DOF];
    memcpy(buf[0], inst->q0, sizeof(double) * (size_t)d);
    memcpy(buf[0] + d, inst->p0, sizeof(double) * (size_t)d);
    dm_point a = { .t = 0.0, .x = buf[0], .potential = NAN };
    dm_point b = { .t = 0.0, .x = buf[1], .potential = NAN };
    dm_point *cur = &a, *nxt = &b;
    dm_method_config config = { .h = h, .t_stop = h * (double)steps, .plain_steps = true };
    dm_stepper *s = dm_stepper_create(m, inst, &config, cur, err);
    if (s == NULL)
        return err->code;
    for (long i = 0; i < steps; i++) {
        if (dm_stepper_step(s, cur, nxt) != DM_OK) {
            dm_status st = dm_error_set(err, DM_ENUMERIC, "%s", s->error.msg);
            dm_stepper_destroy(s);
            return st;
        }
        dm_point *tmp = cur;
        cur = nxt;
        nxt = tmp;
    }
    double qe[DM_MAX_DOF], pe[DM_MAX_DOF], sum = 0.0;
    inst->problem->exact(inst, cur->t, qe, pe);
    for (int j = 0; j < d; j++) {
        double dq = cur->x[j] - qe[j], dp = cur->x[d + j] - pe[j];
        sum += dq * dq + dp * dp;
    }
    *out = sqrt(sum);
    dm_stepper_destroy(s);
    return DM_OK;
}

dm_status dm_measure_order(const dm_method *method, const dm_instance *inst, double periods,
                           int n, dm_measured_order *out, dm_error *err)
{
    memset(out, 0, sizeof *out);
    if (inst->problem->exact == NULL)
        return dm_error_set(err, DM_EINPUT, "%s: no exact solution to measure an order "
                            "against", inst->problem->id);
    out->h = inst->period / n;
    for (int k = 0; k < 3; k++) {
        long steps = (long)llround(periods * n) << k;
        dm_status st = global_error(method, inst, out->h / (double)(1 << k), steps,
                                    &out->errors[k], err);
        if (st != DM_OK)
            return st;
    }
    out->order = log2(out->errors[1] / out->errors[2]);
    out->error_constant = out->errors[2] / pow(out->h / 4.0, out->order);
    return DM_OK;
}
