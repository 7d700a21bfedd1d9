/* kepler.c — the planar Kepler problem in relative coordinates,
 * H = |p|^2 / 2 - mu / |q|, q, p in R^2, on a bound (elliptic) orbit.
 *
 * The orbit starts at periapsis q = (a (1 - e), 0) moving counterclockwise,
 * p = (0, sqrt(mu (1 + e) / (a (1 - e)))). With the mean motion n = sqrt(mu / a^3), the
 * mean anomaly M = n t and the eccentric anomaly E from Kepler's equation
 * M = E - e sin E (common practice; REFERENCES.md "Kepler"):
 *
 *     q = (a (cos E - e), b sin E),  b = a sqrt(1 - e^2),
 *     p = n / (1 - e cos E) * (-a sin E, b cos E),
 *     T = 2 pi sqrt(a^3 / mu),  H = -mu / (2 a).
 *
 * Conserved besides H: the angular momentum L = q x p and the Runge-Lenz vector
 * A = p x L - mu q / |q| (= (mu e, 0) on this orbit).
 */
#include "kepler.h"

#include <float.h>
#include <math.h>

#include "dm_fused_loop.h"
#include "problem.h"
#include "quad.h"

enum { P_MU, P_SEMI_MAJOR_AXIS, P_ECCENTRICITY };

/* derived constants */
enum {
    A_ONE_MINUS_E, /* 1 - e */
    A_SEMI_MINOR,  /* b = a sqrt(1 - e^2) */
    A_MEAN_MOTION  /* n = sqrt(mu / a^3) */
};

/* x - sin x for x >= 0 without the cancellation of the direct difference at small x,
 * which is where Kepler's equation is hardest (e near 1, near periapsis). */
static double x_minus_sin(double x)
{
    if (x >= 1.0)
        return x - sin(x); /* >= 0.158 x: loses at most three bits */
    double x2 = x * x;
    double term = x * x2 / 6.0, sum = term;
    for (int k = 2; k < 12; k++) {
        term *= -x2 / (double)((2 * k) * (2 * k + 1));
        sum += term;
        if (fabs(term) <= 0.25 * DBL_EPSILON * sum)
            break;
    }
    return sum;
}

/* Kepler's equation for 0 <= M <= pi, 0 <= e < 1: the root lies in
 * [M, min(M + e, pi)], where f(E) = E - e sin E - M changes sign, and f is increasing
 * (f' = 1 - e cos E >= 1 - e > 0). The iterate never leaves the current bracket
 * (a Newton step that would is pulled back to the bracket's end, or bisects), so the
 * iteration converges for every M and e; from the starters below it takes at most
 * five steps over e in [0, 0.999999] (tests/test_kepler.c). */
static double solve_reduced(double M, double e, int *iterations)
{
    int it = 0;
    if (M == 0.0 || e == 0.0) {
        if (iterations)
            *iterations = 0;
        return M;
    }
    double one_minus_e = 1.0 - e;
    double lo = M, hi = fmin(M + e, M_PI);
    double E;
    if (M < 1.0) {
        /* Cubic starter, essential in the hard corner e -> 1, M -> 0 and good for every
         * small M (it tends to M / (1 - e)): with sin E ~ E - E^3 / 6 the equation is
         * (1 - e) E + e E^3 / 6 = M, i.e. E^3 + P E - Q = 0 with P, Q > 0, whose one
         * real root is u + v, u = cbrt(Q / 2 + sqrt(Q^2 / 4 + P^3 / 27)), v = -P / (3 u).
         * Written as (u^3 + v^3) / (u^2 - u v + v^2) = Q / (u^2 + P / 3 + v^2) it has no
         * cancellation when the linear term dominates (small e or tiny M). */
        double P = 6.0 * one_minus_e / e, Q = 6.0 * M / e;
        double u = cbrt(0.5 * Q + sqrt(0.25 * Q * Q + P * P * P / 27.0));
        double v = P / (3.0 * u);
        E = Q / (u * u + P / 3.0 + v * v);
    } else {
        /* Danby's starter E0 = M + 0.85 e (common practice for M in [0, pi]). */
        E = M + 0.85 * e;
    }
    E = fmin(fmax(E, lo), hi);
    while (it < 200) {
        it++;
        double f = one_minus_e * E + e * x_minus_sin(E) - M;
        if (f == 0.0)
            break;
        if (f < 0.0)
            lo = E;
        else
            hi = E;
        double s = sin(0.5 * E);
        double fp = one_minus_e + 2.0 * e * s * s; /* 1 - e cos E, no cancellation */
        /* The Newton step E - f / f' written as (M + e (sin E - E cos E)) / f': both
         * terms of the numerator are >= 0 on [0, pi], so it keeps full relative
         * precision even when the root is far below E (tiny M), where E - f / f' would
         * cancel to zero. sin E - E cos E = 2 E sin^2(E / 2) - (E - sin E). */
        double g = E < 1.0 ? 2.0 * E * s * s - x_minus_sin(E) : sin(E) - E * cos(E);
        double next = (M + e * g) / fp;
        if (fabs(next - E) <= 4.0 * DBL_EPSILON * E) {
            /* converged: the last step is rounding noise (which may point a few ulps
             * outside the bracket, where f's sign is itself noise) */
            E = fmin(fmax(next, lo), hi);
            break;
        }
        /* f is convex on [0, pi] (f'' = e sin E >= 0): Newton from the left of the
         * root lands right of it, and from the right it descends monotonically onto
         * the root. So an overshoot past hi (a root close under M + e) goes to hi,
         * from where Newton cannot leave the bracket; an undershoot below lo (only
         * rounding can cause one) goes to lo likewise. Bisection is the last guard. */
        if (next > hi)
            next = E < hi ? hi : 0.5 * (lo + hi);
        else if (!(next >= lo))
            next = E > lo ? lo : 0.5 * (lo + hi);
        E = next;
        if (hi - lo <= 2.0 * DBL_EPSILON * hi)
            break;
    }
    if (iterations)
        *iterations = it;
    return E;
}

double dm_kepler_solve(double mean_anomaly, double e, int *iterations)
{
    /* E(M + 2 pi k) = E(M) + 2 pi k and E(-M) = -E(M). */
    double k = nearbyint(mean_anomaly / (2.0 * M_PI));
    double M = mean_anomaly - 2.0 * M_PI * k;
    double E = M < 0.0 ? -solve_reduced(-M, e, iterations) : solve_reduced(M, e, iterations);
    return E + 2.0 * M_PI * k;
}

static dm_status setup(dm_instance *inst, dm_error *err)
{
    double mu = inst->param[P_MU];
    double a = inst->param[P_SEMI_MAJOR_AXIS];
    double e = inst->param[P_ECCENTRICITY];
    double one_minus_e = 1.0 - e;
    double n = sqrt(mu / a) / a;
    double T = 2.0 * M_PI / n;
    double speed = sqrt(mu / a) * sqrt((1.0 + e) / one_minus_e);
    if (!(n > 0.0) || !isfinite(n) || !isfinite(T) || !isfinite(speed) || !(a * one_minus_e > 0.0))
        return dm_error_set(err, DM_EINPUT,
                            "kepler: mu = %.17g, semi_major_axis = %.17g and eccentricity = "
                            "%.17g give an orbit whose period or periapsis speed is not a "
                            "finite positive number",
                            mu, a, e);
    inst->q0[0] = a * one_minus_e;
    inst->q0[1] = 0.0;
    inst->p0[0] = 0.0;
    inst->p0[1] = speed;
    inst->energy = -0.5 * mu / a;
    inst->regime = 0;
    inst->period = T;
    inst->has_v_min = false; /* -mu / |q| is unbounded below */
    inst->v_min = 0.0;
    inst->section = (dm_section){ .coord = 1, .level = 0.0, .wrap = 0.0 };
    /* The start lies on the section (y = 0) moving upward: the first crossing after
     * t = 0 is the next periapsis passage. */
    inst->first_crossing = T;
    inst->derived[A_ONE_MINUS_E] = one_minus_e;
    inst->derived[A_SEMI_MINOR] = a * sqrt(one_minus_e * (1.0 + e));
    inst->derived[A_MEAN_MOTION] = n;
    return DM_OK;
}

static double potential(const dm_instance *inst, const double *q)
{
    return -inst->param[P_MU] / sqrt(q[0] * q[0] + q[1] * q[1]);
}

/* Writes grad V = mu q / r^3 and returns 1 / r. */
static inline double gradient_and_inverse_radius(const dm_instance *inst, const double *q,
                                                 double *grad)
{
    double mu = inst->param[P_MU];
    double inv_r = 1.0 / sqrt(q[0] * q[0] + q[1] * q[1]);
    double k = mu * inv_r * inv_r * inv_r;
    grad[0] = k * q[0];
    grad[1] = k * q[1];
    return inv_r;
}

static void gradient(const dm_instance *inst, const double *q, double *grad)
{
    (void)gradient_and_inverse_radius(inst, q, grad);
}

static double force(const dm_instance *inst, const double *q, double *grad)
{
    return -inst->param[P_MU] * gradient_and_inverse_radius(inst, q, grad);
}

static double kinetic(const dm_instance *inst, const double *p)
{
    return 0.5 * (p[0] * p[0] + p[1] * p[1]);
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    v[0] = p[0];
    v[1] = p[1];
}

static void hessian(const dm_instance *inst, const double *q, double *hess)
{
    /* d2/dqi dqj (-mu / r) = mu (delta_ij / r^3 - 3 qi qj / r^5) */
    double mu = inst->param[P_MU];
    double r2 = q[0] * q[0] + q[1] * q[1];
    double inv_r = 1.0 / sqrt(r2);
    double k3 = mu * inv_r * inv_r * inv_r;
    double k5 = 3.0 * k3 / r2;
    hess[0] = k3 - k5 * q[0] * q[0];
    hess[1] = -k5 * q[0] * q[1];
    hess[2] = hess[1];
    hess[3] = k3 - k5 * q[1] * q[1];
}

static void exact(const dm_instance *inst, double t, double *q, double *p)
{
    double a = inst->param[P_SEMI_MAJOR_AXIS];
    double e = inst->param[P_ECCENTRICITY];
    double one_minus_e = inst->derived[A_ONE_MINUS_E];
    double b = inst->derived[A_SEMI_MINOR];
    double n = inst->derived[A_MEAN_MOTION];
    /* Mean anomaly reduced to [-pi, pi] through t / T, so t = k T is exactly periapsis. */
    double r = t / inst->period;
    r -= nearbyint(r);
    double E = dm_kepler_solve(2.0 * M_PI * r, e, NULL);
    double s = sin(0.5 * E);
    double sin_E = sin(E), cos_E = cos(E);
    double den = one_minus_e + 2.0 * e * s * s; /* 1 - e cos E */
    q[0] = a * (one_minus_e - 2.0 * s * s);     /* a (cos E - e) */
    q[1] = b * sin_E;
    p[0] = -a * n * sin_E / den;
    p[1] = b * n * cos_E / den;
}

static void invariants(const dm_instance *inst, const double *q, const double *p, double *out)
{
    double mu = inst->param[P_MU];
    double r = sqrt(q[0] * q[0] + q[1] * q[1]);
    double L = q[0] * p[1] - q[1] * p[0];
    out[0] = L;
    /* The eccentricity vector e = A / mu, with the Runge-Lenz vector
     * A = p x (L z) - mu q / r = (p_y L, -p_x L) - mu q / r: dimensionless, |e| = e. */
    out[1] = (p[1] * L - mu * q[0] / r) / mu;
    out[2] = (-p[0] * L - mu * q[1] / r) / mu;
}

/* Bound (an ellipse) below energy 0, unbound above. */
static int regime_of_energy(const dm_instance *inst, double energy)
{
    return energy < 0.0 ? 0 : -1;
}

static void gradient_quad(const dm_instance *inst, const dm_quad *q, dm_quad *grad)
{
    dm_quad r2 = q[0] * q[0] + q[1] * q[1];
    dm_quad k = (dm_quad)inst->param[P_MU] / (r2 * dm_quad_sqrt(r2));
    grad[0] = k * q[0];
    grad[1] = k * q[1];
}

static void velocity_quad(const dm_instance *inst, const dm_quad *p, dm_quad *v)
{
    (void)inst;
    v[0] = p[0];
    v[1] = p[1];
}

/* The fused loops (splitting, Runge-Kutta) with this problem's functions inline. */
DM_FUSED_LOOP(fused_loop, 2)
DM_FUSED_RK_LOOP(fused_rk_loop, 2)

const dm_problem dm_problem_kepler = {
    .id = "kepler",
    .name = "planar Kepler problem H = |p|^2 / 2 - mu / |q| (relative coordinates)",
    .dof = 2,
    .n_params = 3,
    .params = {
        [P_MU] = { "mu", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN,
                   "gravitational parameter mu = G (m1 + m2)" },
        [P_SEMI_MAJOR_AXIS] = { "semi_major_axis", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN,
                                "semi-major axis a of the ellipse" },
        [P_ECCENTRICITY] = { "eccentricity", 0.5, 0.0, 1.0, DM_PARAM_MAX_OPEN,
                             "eccentricity e (starts at periapsis, counterclockwise)" },
    },
    .n_regimes = 1,
    .regimes = { { "bound", "elliptic orbit, period 2 pi sqrt(a^3 / mu)" } },
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
    .n_invariants = 3,
    .invariant_names = { "angular_momentum", "eccentricity_x", "eccentricity_y" },
    .invariant_errors = { DM_INVARIANT_RELATIVE, DM_INVARIANT_DIFFERENCE,
                          DM_INVARIANT_DIFFERENCE },
    .invariants = invariants,
    .gradient_quad = gradient_quad,
    .velocity_quad = velocity_quad,
};
