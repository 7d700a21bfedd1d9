/* glider.c — a problem of our own code for driftmark, set in a scenario of our own: a
 * glider on an air track dipping into a valley shaped V(x) = -depth / cosh^2(x / width)
 * (a sech^2 well), with the glider's mass. It starts at rest at `amplitude` (or with
 * `energy` < 0, at rest at the turning point x > 0) and swings through the valley.
 *
 * Closed forms (common practice for the sech^2 well; check them, as tests/check_glider.sh
 * does, against driftmark's own period quadrature): with E < 0 and
 * w = sqrt(2 |E| / m) / width,
 *     sinh(x(t) / width) = sqrt((depth - |E|) / |E|) cos(w t)     (from rest at x0),
 *     T = 2 pi / w = pi width sqrt(2 m / |E|).
 *
 * Build (after `cmake --install build --prefix PREFIX`):
 *     cc $(pkg-config --cflags --libs driftmark-problem) -O2 -o glider.so glider.c
 * and name it in a suite, `- {problem_library: ./glider.so, energy: -0.3}`, or ask for
 * one period: `driftmark period ./glider.so energy=-0.3`. */
#include <math.h>

#include "dm_fused_loop.h"
#include "problem.h"

enum { P_DEPTH, P_WIDTH, P_MASS, P_AMPLITUDE, P_ENERGY };
enum { D_W, D_S0, D_ENERGY }; /* w, sqrt((depth - |E|) / |E|), E */

static double potential(const dm_instance *inst, const double *q)
{
    double c = cosh(q[0] / inst->param[P_WIDTH]);
    return -inst->param[P_DEPTH] / (c * c);
}

/* grad V = 2 depth tanh(x/width) / (width cosh^2(x/width)) */
static double force(const dm_instance *inst, const double *q, double *grad)
{
    double depth = inst->param[P_DEPTH], width = inst->param[P_WIDTH];
    double c = cosh(q[0] / width), t = tanh(q[0] / width);
    double sech2 = 1.0 / (c * c);
    grad[0] = 2.0 * depth * t * sech2 / width;
    return -depth * sech2;
}

static double kinetic(const dm_instance *inst, const double *p)
{
    return 0.5 * p[0] * p[0] / inst->param[P_MASS];
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    v[0] = p[0] / inst->param[P_MASS];
}

static dm_status setup(dm_instance *inst, dm_error *err)
{
    double depth = inst->param[P_DEPTH], width = inst->param[P_WIDTH], m = inst->param[P_MASS];
    double x0;
    if (inst->given & (1u << P_ENERGY)) {
        double E = inst->param[P_ENERGY];
        if (!(E < 0.0 && E > -depth))
            return dm_error_set(err, DM_EINPUT, "glider: energy = %.17g must lie in (-depth, "
                                "0) = (%.17g, 0) for a bounded swing", E, -depth);
        x0 = width * acosh(sqrt(depth / -E));
    } else {
        x0 = inst->param[P_AMPLITUDE];
        if (x0 == 0.0)
            return dm_error_set(err, DM_EINPUT, "glider: amplitude 0 is the valley's bottom "
                                "(no swing)");
    }
    inst->q0[0] = x0;
    inst->p0[0] = 0.0;
    double E = potential(inst, inst->q0);
    if (!(E < 0.0))
        return dm_error_set(err, DM_EINPUT, "glider: amplitude %.17g is too far out: the "
                            "energy rounds to 0 (no bounded swing)", x0);
    inst->energy = E;
    inst->regime = 0;
    double w = sqrt(2.0 * -E / m) / width;
    inst->period = 2.0 * M_PI / w;
    inst->has_v_min = true;
    inst->v_min = -depth;
    inst->section = (dm_section){ .coord = 0, .level = 0.0, .wrap = 0.0 };
    /* from rest at x0 (of either sign) cos(w t) passes 0 going up at w t = 3 pi / 2 for
     * x0 > 0, at pi / 2 for x0 < 0 */
    inst->first_crossing = (x0 > 0.0 ? 0.75 : 0.25) * inst->period;
    inst->derived[D_W] = w;
    inst->derived[D_S0] = sinh(x0 / width);
    inst->derived[D_ENERGY] = E;
    return DM_OK;
}

static void exact(const dm_instance *inst, double t, double *q, double *p)
{
    double width = inst->param[P_WIDTH], m = inst->param[P_MASS];
    double w = inst->derived[D_W], s0 = inst->derived[D_S0];
    double s = s0 * cos(w * t);                /* sinh(x / width) */
    q[0] = width * asinh(s);
    p[0] = m * width * (-s0 * w * sin(w * t)) / sqrt(1.0 + s * s);
}

static int regime_of_energy(const dm_instance *inst, double energy)
{
    (void)inst;
    return energy < 0.0 ? 0 : -1;
}

DM_FUSED_LOOP(fused_loop, 1)

static const dm_problem glider = {
    .id = "glider",
    .name = "glider on an air track through a sech^2 valley V = -depth / cosh^2(x / width)",
    .dof = 1,
    .n_params = 5,
    .params = {
        [P_DEPTH] = { "depth", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN, "valley depth" },
        [P_WIDTH] = { "width", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN, "valley width" },
        [P_MASS] = { "mass", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN, "glider mass" },
        [P_AMPLITUDE] = { "amplitude", 1.0, -INFINITY, INFINITY, DM_PARAM_START,
                          "starting position, at rest" },
        [P_ENERGY] = { "energy", -0.5, -INFINITY, 0.0, DM_PARAM_START | DM_PARAM_MAX_OPEN,
                       "total energy E < 0 (starts at rest at x > 0)" },
    },
    .n_regimes = 1,
    .regimes = { { "bound", "E < 0: swings through the valley, T = pi width sqrt(2 m / |E|)" } },
    .setup = setup,
    .potential = potential,
    .force = force,
    .kinetic = kinetic,
    .velocity = velocity,
    .exact = exact,
    .regime_of_energy = regime_of_energy,
    .fused_loop = fused_loop,
};

const dm_problem *dm_problem_entry(unsigned *abi);

const dm_problem *dm_problem_entry(unsigned *abi)
{
    *abi = DM_PROBLEM_ABI;
    return &glider;
}
