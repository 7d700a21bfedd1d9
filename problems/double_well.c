/* double_well.c — the quartic double well V = -a x^2/2 + b x^4/4, T = p^2/2: two wells
 * at x = +-sqrt(a/b) (V = -a^2/(4b)) and a saddle at x = 0 (V = 0), with exact solutions
 * x = A dn(w t | m) inside one well and x = A cn(w t | m) over the barrier.
 *
 * Everything is derived from the starting position x0 (at rest) through
 * D = b x0^2 - 2a, evaluated with an exact product so that m1 = 1 - m keeps its full
 * relative precision however close the start is to the separatrix (D -> 0):
 *   E - V(x) = (b/4) (A^2 - x^2) (x^2 - B^2), A^2 + B^2 = 2a/b (Vieta), A the outer and
 *   B the inner turning point (B^2 < 0 over the barrier).
 *   one well:     x = A dn(w t | m), w^2 = b A^2 / 2,     m1 = B^2 / A^2,
 *                 T = 2 K / w;
 *   over barrier: x = A cn(w t | m), w^2 = b A^2 - a,      m1 = (b A^2 - 2a) / (2 w^2),
 *                 T = 4 K / w.
 * (Put x = A dn into x'' = a x - b x^3 with dn'' = (2 - m) dn - 2 dn^3, or x = A cn with
 * cn'' = (2m - 1) cn - 2m cn^3; for a = b = 1 these are the textbook forms, common
 * practice.) A start at the inner turning point of a well, x0 = B, is the same orbit
 * half a period later: x = A dn(w t + K) = B / dn(w t) (DLMF 22.4.iii).
 */
#include <float.h>
#include <math.h>

#include "elliptic.h"
#include "dm_fused_loop.h"
#include "problem.h"
#include "quad.h"

enum { P_A, P_B, P_AMPLITUDE, P_ENERGY, P_SIDE };
enum { R_ONE_WELL, R_OVER_BARRIER };
enum { A_X0, A_OMEGA, A_M, A_M1, A_INNER };

/* b x^2 - c with one rounding at the end: x^2 and b x^2 as exact double-double sums
 * (fma), so that the difference from c = 2a (the separatrix) or c = a (the well's
 * bottom) is not swamped by the rounding of b x^2. */
static double b_x2_minus(double b, double x, double c)
{
    double x2 = x * x, x2_lo = fma(x, x, -x2);
    double p = b * x2, p_lo = fma(b, x2, -p) + b * x2_lo;
    return (p - c) + p_lo;
}

static double potential(const dm_instance *inst, const double *q)
{
    double a = inst->param[P_A], b = inst->param[P_B], x2 = q[0] * q[0];
    return x2 * (0.25 * b * x2 - 0.5 * a);
}

static double kinetic(const dm_instance *inst, const double *p)
{
    return 0.5 * p[0] * p[0];
}

/* The starting position x0 (at rest) from the energy and side, or the amplitude; `key`
 * and `value` name what the user gave, for the messages. */
static dm_status start_position(dm_instance *inst, double v_min, double *x0_out,
                                const char **key_out, double *value_out, dm_error *err)
{
    double a = inst->param[P_A], b = inst->param[P_B];
    double x0, value;
    const char *key;
    if (inst->given & (1u << P_ENERGY)) {
        double energy = inst->param[P_ENERGY], side = inst->param[P_SIDE];
        key = "energy";
        value = energy;
        if (side != 1.0 && side != -1.0)
            return dm_error_set(err, DM_EINPUT,
                                "double_well: side = %.17g must be +1 (right well, x > 0) or "
                                "-1 (left well)",
                                side);
        if (energy == 0.0)
            return dm_error_set(err, DM_EINPUT,
                                "double_well: energy = 0 is the separatrix through the saddle "
                                "x = 0 (infinite period)");
        if (energy < v_min)
            return dm_error_set(err, DM_EINPUT,
                                "double_well: energy = %.17g is below the minimum -a^2/(4b) = "
                                "%.17g (impossible)",
                                energy, v_min);
        double s2 = fma(4.0 * b, energy, a * a);
        if (energy == v_min || !(s2 > 0.0))
            return dm_error_set(err, DM_EINPUT,
                                "double_well: energy = %.17g is the bottom of the wells "
                                "-a^2/(4b) (an equilibrium: no oscillation)",
                                energy);
        /* Outer turning point A^2 = (a + sqrt(a^2 + 4 b E)) / b. */
        x0 = side * sqrt((a + sqrt(s2)) / b);
    } else {
        if (inst->given & (1u << P_SIDE))
            return dm_error_set(err, DM_EINPUT,
                                "double_well: side applies only with energy (with amplitude "
                                "its sign picks the well)");
        x0 = inst->param[P_AMPLITUDE];
        key = "amplitude";
        value = x0;
    }
    *x0_out = x0;
    *key_out = key;
    *value_out = value;
    return DM_OK;
}

/* Over the barrier: x = x0 cn(w t | m). */
static void set_over_barrier(dm_instance *inst, double x0, double d, double d_min,
                             double *omega_out, double *m_out, double *m1_out)
{
    double bx2 = inst->param[P_B] * x0 * x0;
    double omega, m1, m, K;
    inst->regime = R_OVER_BARRIER;
    omega = sqrt(d_min);
    m1 = d / (2.0 * d_min);
    m = bx2 / (2.0 * d_min);
    K = dm_ellipk_m1(m1);
    inst->period = 4.0 * K / omega;
    inst->section = (dm_section){ .coord = 0, .level = 0.0, .wrap = 0.0 };
    /* x0 cn(w t) passes 0 upward at w t = 3K for x0 > 0, at K for x0 < 0. */
    inst->first_crossing = (x0 > 0.0 ? 0.75 : 0.25) * inst->period;
    *omega_out = omega;
    *m_out = m;
    *m1_out = m1;
}

/* In one well: x = A dn(w t | m), started at the outer (or inner) turning point. */
static bool set_one_well(dm_instance *inst, double x0, double d, double d_min,
                         double *omega_out, double *m_out, double *m1_out)
{
    double a = inst->param[P_A], b = inst->param[P_B];
    double bx2 = b * x0 * x0;
    double omega, m1, m, K;
    bool inner = false;
    inst->regime = R_ONE_WELL;
    inner = d_min < 0.0;
    if (inner) {
        /* x0 = B; A^2 = 2a/b - x0^2; m1 = B^2 / A^2 (b x0^2 itself, not d + 2a: the
         * start next to the saddle has b x0^2 << 2a). */
        omega = sqrt(-0.5 * d);
        m1 = bx2 / -d;
        m = 2.0 * d_min / d;
    } else {
        omega = sqrt(0.5 * bx2);
        m1 = -d / bx2;
        m = 2.0 * d_min / bx2;
    }
    K = dm_ellipk_m1(m1);
    inst->period = 2.0 * K / omega;
    double bottom = sqrt(a / b);
    inst->section = (dm_section){ .coord = 0, .level = x0 > 0 ? bottom : -bottom,
                                  .wrap = 0.0 };
    /* From x = A dn(u): x^2 = a/b where dn^2 = a / (b A^2), i.e. where sn^2 =
     * (1 - dn^2) / m = 1/2 whatever the energy: am(u_c) = pi/4, u_c = F(pi/4 | m) =
     * R_F(1/2, 1 - m/2, 1) / sqrt(2) (DLMF 19.25.5). From the outer turning point of the
     * right well (x0 > 0) the upward pass through the bottom is on the way back, at
     * u = 2K - u_c; of the left well on the way in, at u = u_c; from an inner turning
     * point (u shifted by K) at K - u_c (right) or K + u_c (left). */
    double uc = M_SQRT1_2 * dm_carlson_rf(0.5, 0.5 * (1.0 + m1), 1.0);
    double u;
    if (!inner)
        u = x0 > 0.0 ? 2.0 * K - uc : uc;
    else
        u = x0 > 0.0 ? K - uc : K + uc;
    inst->first_crossing = u / omega;
    *omega_out = omega;
    *m_out = m;
    *m1_out = m1;
    return inner;
}

/* The start from the energy or amplitude; refused on the saddle, the separatrix and
 * the bottom of a well (no finite period); then the regime's closed form. */
static dm_status setup(dm_instance *inst, dm_error *err)
{
    double a = inst->param[P_A], b = inst->param[P_B];
    double v_min = -a * a / (4.0 * b);
    double x0 = 0.0, value = 0.0;
    const char *key = "";
    dm_status st = start_position(inst, v_min, &x0, &key, &value, err);
    if (st != DM_OK)
        return st;
    if (x0 == 0.0)
        return dm_error_set(err, DM_EINPUT,
                            "double_well: %s = %.17g starts at rest on the saddle x = 0 (an "
                            "equilibrium: no oscillation)",
                            key, value);

    double d = b_x2_minus(b, x0, 2.0 * a);     /* b x0^2 - 2a: > 0 over the barrier */
    double d_min = b_x2_minus(b, x0, a);       /* b x0^2 - a: > 0 outside the bottom */
    /* Within a few roundings of the separatrix or of the bottom the state cannot be told
     * apart from them: refuse rather than report a meaningless period. */
    if (fabs(d) <= 8.0 * DBL_EPSILON * a)
        return dm_error_set(err, DM_EINPUT,
                            "double_well: %s = %.17g starts on the separatrix (E = 0, "
                            "x0^2 = 2a/b: infinite period)",
                            key, value);
    if (fabs(d_min) <= 8.0 * DBL_EPSILON * a)
        return dm_error_set(err, DM_EINPUT,
                            "double_well: %s = %.17g starts at rest at the bottom of a well "
                            "(x0^2 = a/b, an equilibrium: no oscillation)",
                            key, value);

    double omega, m1, m;
    bool inner = false;
    if (d > 0.0)
        set_over_barrier(inst, x0, d, d_min, &omega, &m, &m1);
    else
        inner = set_one_well(inst, x0, d, d_min, &omega, &m, &m1);
    inst->q0[0] = x0;
    inst->p0[0] = 0.0;
    /* The energy of the state started, V(x0) = x0^2 (b x0^2 - 2a) / 4 = x0^2 d / 4, from d
     * without the cancellation of -a x0^2/2 + b x0^4/4 next to the separatrix E = 0. */
    inst->energy = 0.25 * (x0 * x0) * d;
    inst->has_v_min = true;
    inst->v_min = v_min;
    inst->derived[A_X0] = x0;
    inst->derived[A_OMEGA] = omega;
    inst->derived[A_M] = m;
    inst->derived[A_M1] = m1;
    inst->derived[A_INNER] = inner ? 1.0 : 0.0;
    return DM_OK;
}

static void gradient(const dm_instance *inst, const double *q, double *grad)
{
    double a = inst->param[P_A], b = inst->param[P_B], x = q[0];
    grad[0] = x * (b * (x * x) - a);
}

static double force(const dm_instance *inst, const double *q, double *grad)
{
    gradient(inst, q, grad);
    return potential(inst, q);
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    v[0] = p[0];
}

static void hessian(const dm_instance *inst, const double *q, double *hess)
{
    hess[0] = 3.0 * inst->param[P_B] * q[0] * q[0] - inst->param[P_A];
}

static void exact(const dm_instance *inst, double t, double *q, double *p)
{
    double x0 = inst->derived[A_X0], w = inst->derived[A_OMEGA], m = inst->derived[A_M];
    double sn, cn, dn;
    dm_ellipj_m1(w * t, inst->derived[A_M1], &sn, &cn, &dn);
    if (inst->regime == R_OVER_BARRIER) {
        q[0] = x0 * cn;
        p[0] = -x0 * w * sn * dn;
    } else if (inst->derived[A_INNER] == 0.0) {
        q[0] = x0 * dn;
        p[0] = -x0 * w * m * sn * cn;
    } else {
        q[0] = x0 / dn;
        p[0] = x0 * w * m * sn * cn / (dn * dn);
    }
}

/* In one well below the saddle's energy 0, over the barrier above. */
static int regime_of_energy(const dm_instance *inst, double energy)
{
    return energy < 0.0 ? R_ONE_WELL : R_OVER_BARRIER;
}

static void gradient_quad(const dm_instance *inst, const dm_quad *q, dm_quad *grad)
{
    dm_quad a = inst->param[P_A], b = inst->param[P_B], x = q[0];
    grad[0] = x * (b * (x * x) - a);
}

static void velocity_quad(const dm_instance *inst, const dm_quad *p, dm_quad *v)
{
    (void)inst;
    v[0] = p[0];
}

/* The fused loops (splitting, Runge-Kutta) with this problem's functions inline. */
DM_FUSED_LOOP(fused_loop, 1)
DM_FUSED_RK_LOOP(fused_rk_loop, 1)

const dm_problem dm_problem_double_well = {
    .id = "double_well",
    .name = "quartic double well V = -a x^2/2 + b x^4/4",
    .dof = 1,
    .n_params = 5,
    .params = {
        [P_A] = { "a", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN,
                  "curvature at the saddle: V = -a x^2/2 + ..." },
        [P_B] = { "b", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN, "quartic coefficient b x^4/4" },
        [P_AMPLITUDE] = { "amplitude", 1.3, -INFINITY, INFINITY, DM_PARAM_START,
                          "starting position x0, at rest (a turning point)" },
        [P_ENERGY] = { "energy", -0.125, -INFINITY, INFINITY, DM_PARAM_START,
                       "total energy E > -a^2/(4b), E != 0; starts at rest at the outer "
                       "turning point on the side given by side" },
        [P_SIDE] = { "side", 1.0, -1.0, 1.0, 0,
                     "with energy only: +1 starts at x > 0 (right well), -1 at x < 0" },
    },
    .n_regimes = 2,
    .regimes = {
        [R_ONE_WELL] = { "one_well", "-a^2/(4b) < E < 0: x = A dn(w t | m) stays in one "
                                     "well, T = 2 K(m) / w" },
        [R_OVER_BARRIER] = { "over_barrier", "E > 0: x = A cn(w t | m) crosses both wells, "
                                             "T = 4 K(m) / w" },
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
