/* lyapunov.c — an estimate of the largest Lyapunov exponent of a run's orbit, when the
 * suite asks for it (`lyapunov: true`): the renormalised nearby trajectory of
 * G. Benettin, L. Galgani, A. Giorgilli, J.-M. Strelcyn, Meccanica 15 (1980) 9-20 and
 * 21-30. A shadow starts a distance d0 away in phase space; the orbit and the shadow are
 * stepped by the run's own method and step; every RENORM_STEPS steps their distance d
 * is measured, log(d / d0) added up, and the shadow pulled back to distance d0 along
 * their separation. The exponent is the sum over the time covered, in 1 / (the
 * problem's time unit): about 0 (falling like log t / t) on a regular orbit, positive
 * on a chaotic one; beyond a time of about 1 / exponent a chaotic run's global error
 * means nothing. It is computed in a pass of its own after the run, from the start,
 * over the run's steps (so a run continued from a checkpoint gets the same number), and
 * costs two more trajectories. Fixed-step methods only (an adaptive method would step
 * the two trajectories differently): NaN otherwise. */
#include <math.h>
#include <string.h>

#include "harness.h"

#define RENORM_STEPS 10
/* d0 relative to |x0| (the size of the starting state; 1 when it is 0): far above the
 * rounding of the state (1e-16 relative) and far below any size of the orbit. */
#define D0_RELATIVE 1e-9

static double distance(const double *x, const double *y, int n)
{
    double s = 0.0;
    for (int i = 0; i < n; i++)
        s += (y[i] - x[i]) * (y[i] - x[i]);
    return sqrt(s);
}

double dm_lyapunov_exponent(const dm_run_spec *spec, uint64_t steps, dm_error *err)
{
    const dm_instance *inst = &spec->inst;
    if (spec->method->adaptive || steps == 0)
        return NAN;
    const int n = 2 * inst->dof;
    double x[2][2 * DM_MAX_DOF], y[2][2 * DM_MAX_DOF];
    memcpy(x[0], inst->q0, sizeof(double) * (size_t)inst->dof);
    memcpy(x[0] + inst->dof, inst->p0, sizeof(double) * (size_t)inst->dof);
    double size = 0.0;
    for (int i = 0; i < n; i++)
        size += x[0][i] * x[0][i];
    size = sqrt(size);
    const double d0 = D0_RELATIVE * (size > 0.0 ? size : 1.0);
    for (int i = 0; i < n; i++) /* along the diagonal: every component moved */
        y[0][i] = x[0][i] + d0 / sqrt((double)n);
    dm_point px[2] = { { 0.0, x[0], NAN }, { 0.0, x[1], NAN } };
    dm_point py[2] = { { 0.0, y[0], NAN }, { 0.0, y[1], NAN } };
    dm_method_config mc = spec->method_config;
    mc.plain_steps = true;
    dm_stepper *sx = dm_stepper_create(spec->method, inst, &mc, &px[0], err);
    dm_stepper *sy = sx ? dm_stepper_create(spec->method, inst, &mc, &py[0], err) : NULL;
    double sum = 0.0, result = NAN;
    int cur = 0;
    for (uint64_t k = 1; sy != NULL && k <= steps; k++) {
        if (dm_stepper_step(sx, &px[cur], &px[1 - cur]) != DM_OK ||
            dm_stepper_step(sy, &py[cur], &py[1 - cur]) != DM_OK)
            break;
        cur = 1 - cur;
        if (k % RENORM_STEPS != 0 && k != steps)
            continue;
        double d = distance(x[cur], y[cur], n);
        if (!(d > 0.0) || !isfinite(d))
            break;
        sum += log(d / d0);
        for (int i = 0; i < n; i++)
            y[cur][i] = x[cur][i] + (y[cur][i] - x[cur][i]) * (d0 / d);
        /* the shadow moved: its caches (the force at its old position) are stale */
        dm_stepper_restart(sy, &py[cur]);
        if (k == steps)
            result = sum / (px[cur].t > 0.0 ? px[cur].t : NAN);
    }
    dm_stepper_destroy(sx);
    dm_stepper_destroy(sy);
    return result;
}
