/* table_check.c — symmetry and measured order of a method (table_check.h). */
#include <math.h>
#include <string.h>

#include "table_check.h"

bool dm_splitting_is_symmetric(const dm_splitting *t)
{
    /* the operations in order: kick_first alternates K D K D ...; the reversed sequence
     * must start with the same kind and carry the same coefficients */
    int n = t->n_kick + t->n_drift;
    double coef[256];
    bool kick[256];
    if (n > 256)
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

/* The largest |q| and |p| (Euclidean, over the degrees of freedom) of the exact orbit,
 * from 1024 points of one period: the scales that make the global error unit-free. */
static void orbit_scales(const dm_instance *inst, double *q_scale, double *p_scale)
{
    int d = inst->dof;
    double qe[DM_MAX_DOF], pe[DM_MAX_DOF];
    *q_scale = *p_scale = 0.0;
    for (int k = 0; k < 1024; k++) {
        inst->problem->exact(inst, inst->period * k / 1024.0, qe, pe);
        double sq = 0.0, sp = 0.0;
        for (int j = 0; j < d; j++) {
            sq += qe[j] * qe[j];
            sp += pe[j] * pe[j];
        }
        *q_scale = fmax(*q_scale, sqrt(sq));
        *p_scale = fmax(*p_scale, sqrt(sp));
    }
    if (!(*q_scale > 0.0))
        *q_scale = 1.0;
    if (!(*p_scale > 0.0))
        *p_scale = 1.0;
}

/* The largest unit-free distance to the exact solution over the n steps of one period
 * (infinite when a step fails or the state is no longer finite). */
static dm_status period_error(const dm_method *m, const dm_instance *inst, long n,
                              double q_scale, double p_scale, double *out, dm_error *err)
{
    int d = inst->dof;
    double h = inst->period / (double)n;
    double buf[2][2 * DM_MAX_DOF];
    memcpy(buf[0], inst->q0, sizeof(double) * (size_t)d);
    memcpy(buf[0] + d, inst->p0, sizeof(double) * (size_t)d);
    dm_point a = { .t = 0.0, .x = buf[0], .potential = NAN };
    dm_point b = { .t = 0.0, .x = buf[1], .potential = NAN };
    dm_point *cur = &a, *nxt = &b;
    dm_method_config config = { .h = h, .t_stop = inst->period, .plain_steps = true };
    dm_stepper *s = dm_stepper_create(m, inst, &config, cur, err);
    if (s == NULL)
        return err->code;
    double worst = 0.0;
    for (long i = 0; i < n && worst < INFINITY; i++) {
        if (dm_stepper_step(s, cur, nxt) != DM_OK) {
            worst = INFINITY;
            break;
        }
        dm_point *tmp = cur;
        cur = nxt;
        nxt = tmp;
        double qe[DM_MAX_DOF], pe[DM_MAX_DOF], sum = 0.0;
        inst->problem->exact(inst, cur->t, qe, pe);
        for (int j = 0; j < d; j++) {
            double dq = (cur->x[j] - qe[j]) / q_scale, dp = (cur->x[d + j] - pe[j]) / p_scale;
            sum += dq * dq + dp * dp;
        }
        double e = sqrt(sum);
        worst = isfinite(e) ? fmax(worst, e) : INFINITY;
    }
    *out = worst;
    dm_stepper_destroy(s);
    return DM_OK;
}

dm_status dm_measure_order(const dm_method *method, const dm_instance *inst,
                           dm_measured_order *out, dm_error *err)
{
    memset(out, 0, sizeof *out);
    out->order = out->error_constant = NAN;
    out->used = -1;
    if (inst->problem->exact == NULL)
        return dm_error_set(err, DM_EINPUT, "%s: no exact solution to measure an order "
                            "against", inst->problem->id);
    double q_scale, p_scale;
    orbit_scales(inst, &q_scale, &p_scale);
    double work = 0.0, per_step = method->force_evals_per_step > 0
                                      ? method->force_evals_per_step : 1;
    for (int k = 0; k < DM_MEASURE_LEVELS; k++) {
        long n = 8L << k;
        work += per_step * (double)n;
        if (work > DM_MEASURE_WORK)
            break;
        dm_status st = period_error(method, inst, n, q_scale, p_scale, &out->errors[k], err);
        if (st != DM_OK)
            return st;
        out->steps_per_period[k] = (double)n;
        out->levels = k + 1;
        if (k > 0 && out->errors[k - 1] <= DM_MEASURE_COARSE &&
            out->errors[k] >= DM_MEASURE_FLOOR && out->errors[k] > 0.0) {
            /* two usable pairs in a row that agree: the order has settled */
            bool settled = out->used == k - 1 &&
                           fabs(log2(out->errors[k - 2] / out->errors[k - 1]) -
                                log2(out->errors[k - 1] / out->errors[k])) <
                               DM_MEASURE_SETTLED;
            out->used = k;
            if (settled)
                break;
        }
        if (out->errors[k] < DM_MEASURE_FLOOR)
            break;
    }
    if (out->used < 0)
        return DM_OK;
    int k = out->used;
    out->order = log2(out->errors[k - 1] / out->errors[k]);
    double p = round(out->order);
    out->error_constant = out->errors[k] / pow(1.0 / out->steps_per_period[k], p);
    return DM_OK;
}
