/* morse.c — the Morse oscillator H = p^2 / (2 m) + D (1 - exp(-alpha (x - xe)))^2.
 *
 * Closed form. With u = x - xe, y = exp(-alpha u), c = sqrt(E / D) (0 < c < 1 for bound
 * motion) and w0 = alpha sqrt(2 D / m) (the small-oscillation frequency), the orbit is
 *
 *     y(t) = (1 - c^2) / (1 - c cos theta),   theta = w t + theta0,
 *     w = w0 sqrt(1 - c^2),   T = 2 pi / w = 2 pi sqrt(m) / (alpha sqrt(2 (D - E))).
 *
 * (Substituting: p = m u' = m c w sin theta / (alpha (1 - c cos theta)) and
 * p^2 / (2 m) + D (1 - y)^2 = D c^2 (1 - c cos theta)^2 / (1 - c cos theta)^2 = E.)
 * theta = 0 is the inner turning point y = 1 + c (x < xe, on the steep wall),
 * theta = pi the outer one y = 1 - c (x > xe). E >= D is unbound: the molecule
 * dissociates, there is no period, and setup refuses it.
 *
 * Near c -> 1 the forms 1 - c cos theta = (1 - c) + 2 c sin^2(theta / 2) and
 * 1 - c^2 = (1 - c)(1 + c), with 1 - c taken from the starting state without
 * cancellation, keep the solution accurate up to E / D = 1 - 1e-12 and beyond.
 */
#include <math.h>

#include "dm_fused_loop.h"
#include "problem.h"
#include "quad.h"

enum { P_DEPTH, P_ALPHA, P_XE, P_MASS, P_AMPLITUDE, P_ENERGY };

/* derived constants */
enum {
    A_C,            /* c = sqrt(E / D) */
    A_ONE_MINUS_C,  /* 1 - c, without cancellation */
    A_ONE_MINUS_C2, /* 1 - c^2 = (D - E) / D */
    A_OMEGA,        /* w = 2 pi / T */
    A_SIDE          /* +1: starts at the inner turning point; -1: at the outer one */
};

/* The starting displacement u0 = x0 - xe at rest: from the energy, the inner turning
 * point u0 = -ln(1 + sqrt(E/D)) / alpha; else the amplitude as given. */
static dm_status start_displacement(const dm_instance *inst, double *u0, dm_error *err)
{
    double D = inst->param[P_DEPTH], alpha = inst->param[P_ALPHA];
    if (inst->given & (1u << P_ENERGY)) {
        double E = inst->param[P_ENERGY];
        if (!(E < D))
            return dm_error_set(err, DM_EINPUT,
                                "morse: energy = %.17g is not below the well depth D = %.17g: "
                                "the motion is unbound and has no period",
                                E, D);
        *u0 = -log1p(sqrt(E / D)) / alpha;
        return DM_OK;
    }
    *u0 = inst->param[P_AMPLITUDE];
    if (*u0 == 0.0)
        return dm_error_set(err, DM_EINPUT,
                            "morse: zero amplitude is the equilibrium x = xe "
                            "(no oscillation)");
    return DM_OK;
}

/* Everything exact belongs to the state actually started: x0 = xe + u0 as a double, at
 * rest. Its energy D (1 - y0)^2, y0 = exp(-alpha (x0 - xe)), and D - E, which sets the
 * period, are evaluated in quad precision (quad.h): in double, next to the dissociation
 * energy D, the rounding of alpha (x0 - xe) and of the exponential would swamp D - E. */
static dm_status setup(dm_instance *inst, dm_error *err)
{
    double D = inst->param[P_DEPTH];
    double alpha = inst->param[P_ALPHA];
    double xe = inst->param[P_XE];
    double m = inst->param[P_MASS];
    double u0 = 0.0;
    dm_status st = start_displacement(inst, &u0, err);
    if (st != DM_OK)
        return st;
    double x0 = xe + u0;
    if (!isfinite(x0))
        return dm_error_set(err, DM_EINPUT,
                            "morse: starting position xe + %.17g is not finite", u0);

    dm_quad y0 = expq(-(dm_quad)alpha * ((dm_quad)x0 - (dm_quad)xe));
    dm_quad s = 1 - y0;                 /* 1 - y0: c = |s| = sqrt(E / D) */
    dm_quad cq = s < 0 ? -s : s;
    double c = (double)cq;
    double one_minus_c = (double)(1 - cq);
    double one_minus_c2 = (double)((1 - cq) * (1 + cq));
    double energy = (double)((dm_quad)D * s * s);
    double side = y0 > 1 ? 1.0 : -1.0;  /* +1: the inner turning point; -1: the outer */
    if (!(one_minus_c > 0.0))
        return dm_error_set(err, DM_EINPUT,
                            "morse: the start x0 = %.17g has energy E = %.17g >= D = %.17g: "
                            "the motion is unbound and has no period",
                            x0, energy, D);
    if (!(energy > 0.0))
        return dm_error_set(err, DM_EINPUT,
                            "morse: the starting state is the equilibrium (energy %.17g "
                            "underflows to zero): no oscillation",
                            energy);

    double w0 = alpha * sqrt(2.0 * D / m);
    double w = w0 * sqrt(one_minus_c2);
    double T = 2.0 * M_PI / w;
    if (!(w > 0.0) || !isfinite(T) || !isfinite(w))
        return dm_error_set(err, DM_EINPUT,
                            "morse: D = %.17g, alpha = %.17g, mass = %.17g and E = %.17g give "
                            "a period that is not a finite positive number",
                            D, alpha, m, energy);

    inst->q0[0] = x0;
    inst->p0[0] = 0.0;
    inst->energy = energy;
    inst->regime = 0;
    inst->period = T;
    inst->has_v_min = true;
    inst->v_min = 0.0;
    inst->section = (dm_section){ .coord = 0, .level = xe, .wrap = 0.0 };
    inst->derived[A_C] = c;
    inst->derived[A_ONE_MINUS_C] = one_minus_c;
    inst->derived[A_ONE_MINUS_C2] = one_minus_c2;
    inst->derived[A_OMEGA] = w;
    inst->derived[A_SIDE] = side;

    /* x = xe (y = 1) going up (sin theta > 0) is theta = acos(c); from the inner turning
     * point (theta0 = 0) that is t = acos(c) / w, from the outer one (theta0 = pi) one
     * half period more. atan2 keeps acos(c) accurate for c near 1. */
    double theta_cross = atan2(sqrt(one_minus_c2), c);
    inst->first_crossing = (side > 0 ? theta_cross : theta_cross + M_PI) / w;
    return DM_OK;
}

static double potential(const dm_instance *inst, const double *q)
{
    double D = inst->param[P_DEPTH];
    double s = expm1(-inst->param[P_ALPHA] * (q[0] - inst->param[P_XE])); /* y - 1 */
    return D * s * s;
}

static void gradient(const dm_instance *inst, const double *q, double *grad)
{
    double D = inst->param[P_DEPTH];
    double alpha = inst->param[P_ALPHA];
    double s = expm1(-alpha * (q[0] - inst->param[P_XE])); /* y - 1 */
    /* dV/dx = 2 D alpha y (1 - y) */
    grad[0] = -2.0 * D * alpha * (1.0 + s) * s;
}

static double force(const dm_instance *inst, const double *q, double *grad)
{
    /* the one expm1 of both is computed once (-fno-math-errno makes it pure) */
    gradient(inst, q, grad);
    return potential(inst, q);
}

static double kinetic(const dm_instance *inst, const double *p)
{
    return 0.5 * p[0] * p[0] / inst->param[P_MASS];
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    v[0] = p[0] / inst->param[P_MASS];
}

static void hessian(const dm_instance *inst, const double *q, double *hess)
{
    double D = inst->param[P_DEPTH];
    double alpha = inst->param[P_ALPHA];
    double y = exp(-alpha * (q[0] - inst->param[P_XE]));
    /* d2V/dx2 = 2 D alpha^2 y (2 y - 1) */
    hess[0] = 2.0 * D * alpha * alpha * y * (2.0 * y - 1.0);
}

static void exact(const dm_instance *inst, double t, double *q, double *p)
{
    double alpha = inst->param[P_ALPHA];
    double m = inst->param[P_MASS];
    double c = inst->derived[A_C];
    double one_minus_c = inst->derived[A_ONE_MINUS_C];
    double one_minus_c2 = inst->derived[A_ONE_MINUS_C2];
    double w = inst->derived[A_OMEGA];
    double side = inst->derived[A_SIDE];

    /* Phase reduced to one period first, so theta keeps full precision at long times
     * and t = k T lands exactly on the starting point. */
    double r = t / inst->period;
    r -= nearbyint(r);                 /* r in [-1/2, 1/2] */
    double half = M_PI * r;            /* (w t) / 2 reduced */
    double sh = sin(half), ch = cos(half);
    double sin_wt = 2.0 * sh * ch;
    /* den = 1 - side c cos(w t + 0): (1 - c) + 2 c sin^2(w t / 2) from the inner side,
     * (1 - c) + 2 c cos^2(w t / 2) from the outer side (theta = w t + pi). */
    double den = one_minus_c + 2.0 * c * (side > 0 ? sh * sh : ch * ch);
    double u;
    if (c < 0.5) {
        /* small oscillation: log1p keeps u accurate relative to its own size */
        double cos_theta = side * (1.0 - 2.0 * sh * sh);
        u = (log1p(-c * cos_theta) - log1p(-c * c)) / alpha;
    } else {
        u = log(den / one_minus_c2) / alpha;
    }
    q[0] = inst->param[P_XE] + u;
    /* u' = c w sin(theta) / (alpha (1 - c cos theta)), sin(theta) = side sin(w t) */
    p[0] = m * c * w * side * sin_wt / (alpha * den);
}

/* Bound below the well depth D, unbound (no regime) above. */
static int regime_of_energy(const dm_instance *inst, double energy)
{
    return energy < inst->param[P_DEPTH] ? 0 : -1;
}

static void gradient_quad(const dm_instance *inst, const dm_quad *q, dm_quad *grad)
{
    dm_quad D = inst->param[P_DEPTH], alpha = inst->param[P_ALPHA];
    dm_quad y = dm_quad_exp(-alpha * (q[0] - (dm_quad)inst->param[P_XE]));
    grad[0] = 2 * D * alpha * y * (1 - y);
}

static void velocity_quad(const dm_instance *inst, const dm_quad *p, dm_quad *v)
{
    v[0] = p[0] / (dm_quad)inst->param[P_MASS];
}

/* The fused loops (splitting, Runge-Kutta) with this problem's functions inline. */
DM_FUSED_LOOP(fused_loop, 1)
DM_FUSED_RK_LOOP(fused_rk_loop, 1)

const dm_problem dm_problem_morse = {
    .id = "morse",
    .name = "Morse oscillator V = D (1 - exp(-alpha (x - xe)))^2, kinetic p^2 / (2 mass)",
    .dof = 1,
    .n_params = 6,
    .params = {
        [P_DEPTH] = { "D", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN,
                      "well depth (dissociation energy) D" },
        [P_ALPHA] = { "alpha", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN,
                      "inverse width alpha of the well" },
        [P_XE] = { "xe", 0.0, -INFINITY, INFINITY, 0, "equilibrium position xe" },
        [P_MASS] = { "mass", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN, "mass m" },
        [P_AMPLITUDE] = { "amplitude", 0.5, -INFINITY, INFINITY, DM_PARAM_START,
                          "starting displacement x0 - xe at rest (either sign)" },
        [P_ENERGY] = { "energy", 0.5, 0.0, INFINITY, DM_PARAM_START | DM_PARAM_MIN_OPEN,
                       "total energy E < D (starts at the inner turning point, at rest)" },
    },
    .n_regimes = 1,
    .regimes = { { "bound", "0 < E < D oscillates with period 2 pi sqrt(m) / "
                            "(alpha sqrt(2 (D - E))); E >= D is unbound" } },
    .setup = setup,
    .potential = potential,
    .force = force,
    .gradient = gradient,
    .kinetic = kinetic,
    .velocity = velocity,
    .fused_loop = fused_loop,
    .fused_rk_loop = fused_rk_loop,
    .regime_of_energy = regime_of_energy,
    .hessian = hessian,
    .exact = exact,
    .gradient_quad = gradient_quad,
    .velocity_quad = velocity_quad,
};
