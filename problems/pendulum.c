/* pendulum.c — the plane pendulum theta'' = -(g/L) sin theta, H = p^2/2 - w0^2 cos theta
 * with w0^2 = g_over_l: the classical test of phase error, with closed-form periods from
 * K(m) and exact solutions from the Jacobi functions in both regimes.
 *
 * Near the separatrix (E -> w0^2) the period grows like log(1/m1), m1 = 1 - m, and
 * everything here is computed from m1 obtained directly from the starting state
 * (m1 = cos^2(theta0/2), or (p0^2 - 4 w0^2) / p0^2 with one rounding), never as 1 - m.
 * The starting state (q0, p0) as stored is authoritative: the period, the first
 * crossing and the exact solution are those of that state, not of the requested energy
 * before rounding (they differ by ~1e-11 relative at m1 = 1e-12).
 */
#include <math.h>

#include "elliptic.h"
#include "dm_fused_loop.h"
#include "problem.h"
#include "quad.h"

enum { P_G_OVER_L, P_AMPLITUDE, P_ENERGY };
enum { R_LIBRATION, R_ROTATION };
/* derived: libration  k = sin(theta0/2) (signed), k' = cos(theta0/2);
 *      rotation   p0 (the speed at theta = 0);  both: w0, m1. */
enum { A_W0, A_K, A_KC, A_M1, A_P0 };

static dm_status setup_libration(dm_instance *inst, double theta0, const char *key,
                                 double value, dm_error *err)
{
    double g = inst->param[P_G_OVER_L];
    if (theta0 == 0.0)
        return dm_error_set(err, DM_EINPUT,
                            "pendulum: %s = %.17g is the hanging equilibrium (theta = 0, no "
                            "oscillation)",
                            key, value);
    if (fabs(theta0) >= M_PI)
        return dm_error_set(err, DM_EINPUT,
                            "pendulum: %s = %.17g puts the start on the separatrix "
                            "(|theta0| = pi, the inverted state: infinite period)",
                            key, value);
    double w0 = sqrt(g);
    double k = sin(0.5 * theta0), kc = cos(0.5 * theta0);
    double m1 = kc * kc;
    inst->q0[0] = theta0;
    inst->p0[0] = 0.0;
    inst->regime = R_LIBRATION;
    /* T = 4 K(m) / w0, m = sin^2(theta0/2) (common practice; A&S 17.4 via
     * sin(theta/2) = k sin(phi)). */
    inst->period = 4.0 * dm_ellipk_m1(m1) / w0;
    inst->section = (dm_section){ .coord = 0, .level = 0.0, .wrap = 0.0 };
    /* theta = 2 atan2(k cn(w0 t), k') (see exact()) passes 0 upward where cn changes
     * sign from - to + with k > 0, at w0 t = 3K; with k < 0 at w0 t = K. */
    inst->first_crossing = (k > 0.0 ? 0.75 : 0.25) * inst->period;
    inst->derived[A_W0] = w0;
    inst->derived[A_K] = k;
    inst->derived[A_KC] = kc;
    inst->derived[A_M1] = m1;
    return DM_OK;
}

static dm_status setup_rotation(dm_instance *inst, double energy, dm_error *err)
{
    double g = inst->param[P_G_OVER_L];
    double p0 = sqrt(2.0 * (energy + g));
    /* k^2 = 2 w0^2 / (E + w0^2) = 4 w0^2 / p0^2 for the stored p0; 4 g is exact, so the
     * fma leaves one rounding in m1 = (p0^2 - 4 w0^2) / p0^2. */
    double m1 = fma(p0, p0, -4.0 * g) / (p0 * p0);
    if (!(m1 > 0.0))
        return dm_error_set(err, DM_EINPUT,
                            "pendulum: energy = %.17g is too close to the separatrix energy "
                            "g_over_l = %.17g to be told apart from it in double precision",
                            energy, g);
    inst->q0[0] = 0.0;
    inst->p0[0] = p0;
    inst->regime = R_ROTATION;
    /* theta/2 = am(u | m) with u = (w0 / k) t = p0 t / 2 (E = p^2/2 - w0^2 cos theta
     * gives (theta/2)' = (w0/k) sqrt(1 - k^2 sin^2(theta/2))); one revolution is
     * u = 2K: T = 4 K / p0 = 2 k K(k^2) / w0 (common practice). */
    inst->period = 4.0 * dm_ellipk_m1(m1) / p0;
    inst->section = (dm_section){ .coord = 0, .level = M_PI, .wrap = 2.0 * M_PI };
    /* theta = 2 am(u) reaches pi at u = K: half a revolution. */
    inst->first_crossing = 0.5 * inst->period;
    inst->derived[A_W0] = sqrt(g);
    inst->derived[A_M1] = m1;
    inst->derived[A_P0] = p0;
    return DM_OK;
}

static double potential(const dm_instance *inst, const double *q)
{
    return -inst->param[P_G_OVER_L] * cos(q[0]);
}

static double kinetic(const dm_instance *inst, const double *p)
{
    return 0.5 * p[0] * p[0];
}

static dm_status setup(dm_instance *inst, dm_error *err)
{
    double g = inst->param[P_G_OVER_L];
    dm_status status;
    if (inst->given & (1u << P_ENERGY)) {
        double energy = inst->param[P_ENERGY];
        if (energy < -g)
            return dm_error_set(err, DM_EINPUT,
                                "pendulum: energy = %.17g is below the minimum -g_over_l = "
                                "%.17g (impossible)",
                                energy, -g);
        if (energy == -g)
            return dm_error_set(err, DM_EINPUT,
                                "pendulum: energy = -g_over_l is the hanging equilibrium (no "
                                "oscillation)");
        if (energy == g)
            return dm_error_set(err, DM_EINPUT,
                                "pendulum: energy = g_over_l lies on the separatrix (infinite "
                                "period)");
        if (energy > g) {
            status = setup_rotation(inst, energy, err);
        } else {
            /* sin^2(theta0/2) = (w0^2 + E) / (2 w0^2), cos^2 = (w0^2 - E) / (2 w0^2): the
             * second is exact next to the separatrix (Sterbenz). */
            double m = (g + energy) / (2.0 * g), m1 = (g - energy) / (2.0 * g);
            status = setup_libration(inst, 2.0 * atan2(sqrt(m), sqrt(m1)), "energy",
                                     energy, err);
        }
    } else {
        status = setup_libration(inst, inst->param[P_AMPLITUDE], "amplitude",
                                 inst->param[P_AMPLITUDE], err);
    }
    if (status != DM_OK)
        return status;
    inst->energy = kinetic(inst, inst->p0) + potential(inst, inst->q0);
    inst->has_v_min = true;
    inst->v_min = -g;
    return DM_OK;
}

static void gradient(const dm_instance *inst, const double *q, double *grad)
{
    grad[0] = inst->param[P_G_OVER_L] * sin(q[0]);
}

static double force(const dm_instance *inst, const double *q, double *grad)
{
    /* sin and cos of the same angle: gcc turns the pair into one sincos call. */
    gradient(inst, q, grad);
    return potential(inst, q);
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    v[0] = p[0];
}

static void hessian(const dm_instance *inst, const double *q, double *hess)
{
    hess[0] = inst->param[P_G_OVER_L] * cos(q[0]);
}

static void exact(const dm_instance *inst, double t, double *q, double *p)
{
    double m1 = inst->derived[A_M1];
    double sn, cn, dn;
    if (inst->regime == R_LIBRATION) {
        /* sin(theta/2) = k sn(w0 t + K) = k cd(w0 t) and cos(theta/2) = dn(w0 t + K) =
         * k' nd(w0 t) (DLMF 22.4.iii), so tan(theta/2) = k cn(w0 t) / k': no arcsin next
         * to theta = pi, and no K added to the argument. */
        double w0 = inst->derived[A_W0], k = inst->derived[A_K], kc = inst->derived[A_KC];
        dm_ellipj_m1(w0 * t, m1, &sn, &cn, &dn);
        q[0] = 2.0 * atan2(k * cn, kc);
        p[0] = -2.0 * k * kc * w0 * sn / dn;
    } else {
        double p0 = inst->derived[A_P0], am;
        dm_ellipj_am_m1(0.5 * p0 * t, m1, &sn, &cn, &dn, &am);
        q[0] = 2.0 * am;
        p[0] = p0 * dn;
    }
}

/* Libration below the separatrix energy w0^2, rotation above. */
static int regime_of_energy(const dm_instance *inst, double energy)
{
    return energy < inst->param[P_G_OVER_L] ? R_LIBRATION : R_ROTATION;
}

static void gradient_quad(const dm_instance *inst, const dm_quad *q, dm_quad *grad)
{
    grad[0] = (dm_quad)inst->param[P_G_OVER_L] * dm_quad_sin(q[0]);
}

static void velocity_quad(const dm_instance *inst, const dm_quad *p, dm_quad *v)
{
    (void)inst;
    v[0] = p[0];
}

/* The fused loops (splitting, Runge-Kutta) with this problem's functions inline. */
DM_FUSED_LOOP(fused_loop, 1)
DM_FUSED_RK_LOOP(fused_rk_loop, 1)

const dm_problem dm_problem_pendulum = {
    .id = "pendulum",
    .name = "plane pendulum theta'' = -(g/L) sin theta, H = p^2/2 - w0^2 cos theta",
    .dof = 1,
    .n_params = 3,
    .params = {
        [P_G_OVER_L] = { "g_over_l", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN,
                         "w0^2 = g / L (1/time^2)" },
        [P_AMPLITUDE] = { "amplitude", 1.0, -M_PI, M_PI, DM_PARAM_START,
                          "starting angle theta0 in radians, at rest (libration, "
                          "0 < |theta0| < pi)" },
        [P_ENERGY] = { "energy", 0.0, -INFINITY, INFINITY, DM_PARAM_START,
                       "total energy E; -w0^2 < E < w0^2 librates from theta0 > 0 at rest, "
                       "E > w0^2 rotates from theta = 0 with p > 0" },
    },
    .n_regimes = 2,
    .regimes = {
        [R_LIBRATION] = { "libration", "E < w0^2: swings through theta = 0, "
                                       "T = 4 K(m) / w0, m = sin^2(theta0/2)" },
        [R_ROTATION] = { "rotation", "E > w0^2: goes over the top; T per revolution = "
                                     "2 k K(k^2) / w0, k^2 = 2 / (1 + E/w0^2)" },
    },
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
