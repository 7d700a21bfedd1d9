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
/* The separation, unit-free (below): far above the rounding of the state (1e-16
 * relative) and far below any size of the orbit. */
#define D0 1e-9

/* The distance of x and y in phase space with positions in units of |q0| and momenta in
 * units of |p0| (each 1 when it is 0), so that it, the start of the shadow and the
 * exponent times the time unit do not depend on the units of the problem. */
double dm_phase_distance(const double *x, const double *y, int dof, const double scale[2])
{
    double s = 0.0;
    for (int i = 0; i < 2 * dof; i++) {
        double d = (y[i] - x[i]) / scale[i >= dof];
        s += d * d;
    }
    return sqrt(s);
}

static double norm(const double *v, int n)
{
    double s = 0.0;
    for (int i = 0; i < n; i++)
        s += v[i] * v[i];
    return sqrt(s);
}

void dm_phase_scale(const dm_instance *inst, double scale[2])
{
    scale[0] = norm(inst->q0, inst->dof);
    scale[1] = norm(inst->p0, inst->dof);
    for (int k = 0; k < 2; k++)
        scale[k] = scale[k] > 0.0 ? scale[k] : 1.0;
}

double dm_lyapunov_exponent(const dm_run_spec *spec, uint64_t steps, dm_error *err)
{
    const dm_instance *inst = &spec->inst;
    if (spec->method->adaptive || steps == 0)
        return NAN;
    const int dof = inst->dof, n = 2 * dof;
    double x[2][2 * DM_MAX_DOF], y[2][2 * DM_MAX_DOF];
    memcpy(x[0], inst->q0, sizeof(double) * (size_t)dof);
    memcpy(x[0] + dof, inst->p0, sizeof(double) * (size_t)dof);
    double scale[2];
    dm_phase_scale(inst, scale);
    for (int i = 0; i < n; i++) /* along the diagonal: every component moved */
        y[0][i] = x[0][i] + D0 * scale[i >= dof] / sqrt((double)n);
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
        double d = dm_phase_distance(x[cur], y[cur], dof, scale);
        if (!(d > 0.0) || !isfinite(d))
            break;
        sum += log(d / D0);
        for (int i = 0; i < n; i++)
            y[cur][i] = x[cur][i] + (y[cur][i] - x[cur][i]) * (D0 / d);
        /* the shadow moved: its caches (the force at its old position) are stale */
        dm_stepper_restart(sy, &py[cur]);
        if (k == steps)
            result = sum / (px[cur].t > 0.0 ? px[cur].t : NAN);
    }
    dm_stepper_destroy(sx);
    dm_stepper_destroy(sy);
    return result;
}
