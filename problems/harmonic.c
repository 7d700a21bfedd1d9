/* harmonic.c — the harmonic oscillator H = p^2/2 + w^2 q^2/2, the oracle problem:
 * everything about it, and about the methods run on it, is known exactly. */
#include <math.h>

#include "dm_fused_loop.h"
#include "problem.h"
#include "quad.h"

enum { P_OMEGA, P_AMPLITUDE, P_ENERGY };

static dm_status setup(dm_instance *inst, dm_error *err)
{
    double w = inst->param[P_OMEGA];
    double amplitude = inst->param[P_AMPLITUDE];
    if (inst->given & (1u << P_ENERGY))
        amplitude = sqrt(2.0 * inst->param[P_ENERGY]) / w;
    if (amplitude == 0.0)
        return dm_error_set(err, DM_EINPUT,
                            "harmonic: zero amplitude is the equilibrium (no oscillation)");
    inst->q0[0] = amplitude;
    inst->p0[0] = 0.0;
    inst->energy = 0.5 * w * w * amplitude * amplitude;
    inst->regime = 0;
    inst->period = 2.0 * M_PI / w;
    inst->has_v_min = true;
    inst->v_min = 0.0;
    inst->section = (dm_section){ .coord = 0, .level = 0.0, .wrap = 0.0 };
    /* q = A cos(w t) passes 0 upward at w t = 3 pi / 2 (for A > 0; A < 0 at pi / 2). */
    inst->first_crossing = (amplitude > 0 ? 0.75 : 0.25) * inst->period;
    return DM_OK;
}

static double potential(const dm_instance *inst, const double *q)
{
    double w = inst->param[P_OMEGA];
    return 0.5 * w * w * q[0] * q[0];
}

static void gradient(const dm_instance *inst, const double *q, double *grad)
{
    grad[0] = inst->param[P_OMEGA] * inst->param[P_OMEGA] * q[0];
}

static double force(const dm_instance *inst, const double *q, double *grad)
{
    gradient(inst, q, grad);
    double w2 = inst->param[P_OMEGA] * inst->param[P_OMEGA];
    return 0.5 * w2 * q[0] * q[0];
}

static double kinetic(const dm_instance *inst, const double *p)
{
    return 0.5 * p[0] * p[0];
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    v[0] = p[0];
}

static void hessian(const dm_instance *inst, const double *q, double *hess)
{
    hess[0] = inst->param[P_OMEGA] * inst->param[P_OMEGA];
}

static void exact(const dm_instance *inst, double t, double *q, double *p)
{
    double w = inst->param[P_OMEGA];
    double a = inst->q0[0];
    q[0] = a * cos(w * t);
    p[0] = -a * w * sin(w * t);
}

static void gradient_quad(const dm_instance *inst, const dm_quad *q, dm_quad *grad)
{
    dm_quad w = inst->param[P_OMEGA];
    grad[0] = w * w * q[0];
}

static void velocity_quad(const dm_instance *inst, const dm_quad *p, dm_quad *v)
{
    (void)inst;
    v[0] = p[0];
}

/* The fused loops (splitting, Runge-Kutta) with this problem's functions inline. */
DM_FUSED_LOOP(fused_loop, 1)
DM_FUSED_RK_LOOP(fused_rk_loop, 1)

const dm_problem dm_problem_harmonic = {
    .id = "harmonic",
    .name = "harmonic oscillator V = w^2 x^2 / 2 (exact oracle)",
    .dof = 1,
    .n_params = 3,
    .params = {
        [P_OMEGA] = { "omega", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN, "angular frequency w" },
        [P_AMPLITUDE] = { "amplitude", 1.0, -INFINITY, INFINITY, DM_PARAM_START,
                          "starting displacement x0 (at rest)" },
        [P_ENERGY] = { "energy", 0.5, 0.0, INFINITY, DM_PARAM_START | DM_PARAM_MIN_OPEN,
                       "total energy E (starts at x0 = sqrt(2E)/w, at rest)" },
    },
    .n_regimes = 1,
    .regimes = { { "bound", "every energy E > 0 oscillates with period 2 pi / w" } },
    .setup = setup,
    .potential = potential,
    .force = force,
    .gradient = gradient,
    .kinetic = kinetic,
    .velocity = velocity,
    .fused_loop = fused_loop,
    .fused_rk_loop = fused_rk_loop,
    .hessian = hessian,
    .exact = exact,
    .gradient_quad = gradient_quad,
    .velocity_quad = velocity_quad,
};
