/* henon_heiles.c — the Henon-Heiles system (M. Henon, C. Heiles, Astron. J. 69 (1964) 73):
 * H = (px^2 + py^2) / 2 + (x^2 + y^2) / 2 + x^2 y - y^3 / 3, bounded below the escape
 * energy 1/6 (the saddles at (0, 1) and (+-sqrt(3)/2, -1/2), published values). At
 * E = 1/12 most orbits are regular, at 1/8 and 1/6 much of the surface of section is
 * chaotic (from memory of the paper, as the project's shared references list it).
 *
 * The start lies on the section the paper uses, x = 0 with px > 0: y and py are given
 * (start_y, start_py), and px = sqrt(2 E - py^2 - y^2 + 2 y^3 / 3) from the energy. No
 * closed-form period (no_period): the runner measures the mean time between upward
 * crossings of x = 0, which tends to 2 pi at small energy (the harmonic limit).
 */
#include <math.h>

#include "dm_fused_loop.h"
#include "problem.h"
#include "quad.h"

enum { P_ENERGY, P_START_Y, P_START_PY };

#define ESCAPE_ENERGY (1.0 / 6.0)

static double potential(const dm_instance *inst, const double *q)
{
    (void)inst;
    double x = q[0], y = q[1];
    return 0.5 * (x * x + y * y) + x * x * y - y * y * y / 3.0;
}

static void gradient(const dm_instance *inst, const double *q, double *grad)
{
    (void)inst;
    double x = q[0], y = q[1];
    grad[0] = x + 2.0 * x * y;
    grad[1] = y + x * x - y * y;
}

static double force(const dm_instance *inst, const double *q, double *grad)
{
    gradient(inst, q, grad);
    return potential(inst, q);
}

static double kinetic(const dm_instance *inst, const double *p)
{
    (void)inst;
    return 0.5 * (p[0] * p[0] + p[1] * p[1]);
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    (void)inst;
    v[0] = p[0];
    v[1] = p[1];
}

static void hessian(const dm_instance *inst, const double *q, double *hess)
{
    (void)inst;
    hess[0] = 1.0 + 2.0 * q[1];
    hess[1] = 2.0 * q[0];
    hess[2] = hess[1];
    hess[3] = 1.0 - 2.0 * q[1];
}

/* Bounded below the escape energy, unbound (-1) at and above it. */
static int regime_of_energy(const dm_instance *inst, double energy)
{
    (void)inst;
    return energy < ESCAPE_ENERGY ? 0 : -1;
}

static dm_status setup(dm_instance *inst, dm_error *err)
{
    double E = inst->param[P_ENERGY], y = inst->param[P_START_Y], py = inst->param[P_START_PY];
    double q[2] = { 0.0, y };
    double px2 = 2.0 * (E - potential(inst, q)) - py * py;
    if (!(px2 > 0.0))
        return dm_error_set(err, DM_EINPUT,
                            "henon_heiles: no point of energy %.17g has x = 0, y = %.17g, "
                            "py = %.17g and px > 0 (2 (E - V) - py^2 = %.3g; expected a smaller "
                            "|start_y| or |start_py|, or a larger energy)",
                            E, y, py, px2);
    inst->q0[0] = 0.0;
    inst->q0[1] = y;
    inst->p0[0] = sqrt(px2);
    inst->p0[1] = py;
    inst->energy = kinetic(inst, inst->p0) + potential(inst, inst->q0);
    inst->regime = 0;
    inst->period = NAN;
    inst->first_crossing = NAN;
    inst->has_v_min = true; /* the minimum V = 0 at the origin */
    inst->v_min = 0.0;
    inst->section = (dm_section){ .coord = 0, .level = 0.0, .wrap = 0.0 };
    return DM_OK;
}

static void gradient_quad(const dm_instance *inst, const dm_quad *q, dm_quad *grad)
{
    (void)inst;
    dm_quad x = q[0], y = q[1];
    grad[0] = x + 2 * x * y;
    grad[1] = y + x * x - y * y;
}

static void velocity_quad(const dm_instance *inst, const dm_quad *p, dm_quad *v)
{
    (void)inst;
    v[0] = p[0];
    v[1] = p[1];
}

DM_FUSED_LOOP(fused_loop, 2)
DM_FUSED_RK_LOOP(fused_rk_loop, 2)

const dm_problem dm_problem_henon_heiles = {
    .id = "henon_heiles",
    .name = "Henon-Heiles system H = |p|^2 / 2 + (x^2 + y^2) / 2 + x^2 y - y^3 / 3 (bounded "
            "below energy 1/6)",
    .dof = 2,
    .n_params = 3,
    .params = {
        [P_ENERGY] = { "energy", 1.0 / 12.0, 0.0, ESCAPE_ENERGY,
                       DM_PARAM_MIN_OPEN | DM_PARAM_MAX_OPEN,
                       "energy E, below the escape energy 1/6" },
        [P_START_Y] = { "start_y", 0.0, -0.5, 1.0, DM_PARAM_MIN_OPEN | DM_PARAM_MAX_OPEN,
                        "y of the start on the section x = 0 (inside the bounded basin)" },
        [P_START_PY] = { "start_py", 0.0, -INFINITY, INFINITY, 0,
                         "py of the start; px > 0 follows from the energy" },
    },
    .n_regimes = 1,
    .regimes = { { "bound", "below the escape energy 1/6: the orbit stays in the basin" } },
    .no_period = true,
    .setup = setup,
    .potential = potential,
    .force = force,
    .gradient = gradient,
    .kinetic = kinetic,
    .velocity = velocity,
    .hessian = hessian,
    .regime_of_energy = regime_of_energy,
    .fused_loop = fused_loop,
    .fused_rk_loop = fused_rk_loop,
    .gradient_quad = gradient_quad,
    .velocity_quad = velocity_quad,
};
