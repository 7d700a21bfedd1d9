/* kepler_drift.c — the exact two-body drift in universal variables (kepler.h).
 *
 * With r0 = |x0|, eta0 = x0 . v0, beta = 2 mu / r0 - |v0|^2 (= mu / a) and
 * zeta0 = mu - beta r0, the universal anomaly s after a time dt solves
 *     F(s) = r0 s + eta0 G2(s) + zeta0 G3(s) - dt = 0,   F'(s) = r(s) > 0,
 * G_k(s) = s^k c_k(beta s^2) (Stumpff functions), and then (Gauss's f and g functions)
 *     f = 1 - mu G2 / r0,  g = r0 G1 + eta0 G2,  fdot = -mu G1 / (r0 r),
 *     gdot = 1 - mu G2 / r,  x = f x0 + g v0,  v = fdot x0 + gdot v0
 * (J. M. A. Danby, Fundamentals of Celestial Mechanics, 2nd ed. (1988), section 6.9,
 * from memory of the book; g written without the cancellation of dt - mu G3). Kepler's
 * equation of problems/kepler.c (dm_kepler_solve) covers bound orbits only; this one
 * must also take the hyperbolic passes a close encounter gives, hence its own solver.
 */
#include "kepler.h"

#include <float.h>
#include <math.h>

void dm_stumpff(double x, double c[4])
{
    /* Quartering brings |x| to at most 0.1, where six terms of each series reach
     * rounding; the quadruple-argument formulas bring it back (Danby, section 6.9). */
    int n = 0;
    while (fabs(x) > 0.1 && n < 2000) {
        x *= 0.25;
        n++;
    }
    double c2 = 0.5 * (1.0 - x / 12.0 * (1.0 - x / 30.0 * (1.0 - x / 56.0 * (1.0 - x / 90.0 *
                       (1.0 - x / 132.0 * (1.0 - x / 182.0))))));
    double c3 = (1.0 - x / 20.0 * (1.0 - x / 42.0 * (1.0 - x / 72.0 * (1.0 - x / 110.0 *
                 (1.0 - x / 156.0 * (1.0 - x / 210.0)))))) / 6.0;
    double c1 = 1.0 - x * c3, c0 = 1.0 - x * c2;
    for (; n > 0; n--) {
        c3 = 0.25 * (c2 + c0 * c3);
        c2 = 0.5 * c1 * c1;
        c1 = c0 * c1;
        c0 = 2.0 * c0 * c0 - 1.0;
    }
    c[0] = c0;
    c[1] = c1;
    c[2] = c2;
    c[3] = c3;
}

/* F(s), F'(s) = r and F''(s) at s, with G1, G2, G3. */
typedef struct universal {
    double r0, eta0, zeta0, beta, mu, dt;
} universal;

static void evaluate(const universal *u, double s, double *F, double *dF, double *ddF,
                     double G[4])
{
    double c[4];
    dm_stumpff(u->beta * s * s, c);
    G[0] = c[0];
    G[1] = s * c[1];
    G[2] = s * s * c[2];
    G[3] = s * s * s * c[3];
    *F = u->r0 * s + u->eta0 * G[2] + u->zeta0 * G[3] - u->dt;
    *dF = u->r0 + u->eta0 * G[1] + u->zeta0 * G[2];
    *ddF = u->eta0 * G[0] + u->zeta0 * G[1];
}

/* The root of F (which increases), by Laguerre-Conway steps (n = 5; B. A. Conway,
 * Celest. Mech. 39 (1986) 199, from memory) from the second-order start
 * s = dt / r0 - eta0 dt^2 / (2 r0^3), inside a bracket that every evaluation narrows:
 * a step that would leave it, or steps that stop halving (a start far up an exponential
 * branch of a hyperbola), bisect it instead, or double s while it has no upper end
 * (the safeguard of Newton's method in Numerical Recipes' rtsafe, common practice).
 * Returns 0 and *s, G at the root, or -1. */
static int solve(const universal *u, double *s_out, double G[4])
{
    const double sign = u->dt >= 0.0 ? 1.0 : -1.0;
    const double n = 5.0;
    double s = u->dt / u->r0 * (1.0 - 0.5 * u->eta0 * u->dt / (u->r0 * u->r0 * u->r0) * u->r0);
    if (!(sign * s > 0.0))
        s = u->dt / u->r0;
    double lo = 0.0, hi = sign * INFINITY, F, dF, ddF;
    double step_before = INFINITY, step_last = INFINITY;
    for (int it = 0; it < 300; it++) {
        evaluate(u, s, &F, &dF, &ddF, G);
        if (!isfinite(F)) {
            hi = s; /* beyond the range of doubles: the root lies below */
            s = 0.5 * (lo + hi);
            continue;
        }
        if (F == 0.0) {
            *s_out = s;
            return 0;
        }
        if (sign * F < 0.0)
            lo = s;
        else
            hi = s;
        double disc = sqrt(fabs((n - 1.0) * (n - 1.0) * dF * dF - n * (n - 1.0) * F * ddF));
        double next = s - n * F / (dF + (dF >= 0.0 ? disc : -disc));
        if (!(sign * (next - lo) > 0.0 && sign * (hi - next) > 0.0) ||
            fabs(next - s) > 0.5 * step_before)
            next = isfinite(hi) ? 0.5 * (lo + hi) : 2.0 * s;
        double step = fabs(next - s);
        step_before = step_last;
        step_last = step;
        s = next;
        if (step <= 2.0 * DBL_EPSILON * fabs(s) || fabs(hi - lo) <= 2.0 * DBL_EPSILON * fabs(s)) {
            evaluate(u, s, &F, &dF, &ddF, G);
            *s_out = s;
            return 0;
        }
    }
    return -1;
}

int dm_kepler_drift(double mu, double *x, double *v, double dt)
{
    double r0 = sqrt(x[0] * x[0] + x[1] * x[1] + x[2] * x[2]);
    double v2 = v[0] * v[0] + v[1] * v[1] + v[2] * v[2];
    double eta0 = x[0] * v[0] + x[1] * v[1] + x[2] * v[2];
    double beta = 2.0 * mu / r0 - v2;
    if (!(r0 > 0.0) || !isfinite(r0) || !isfinite(beta) || !isfinite(eta0) || !isfinite(dt))
        return -1;
    if (dt == 0.0)
        return 0;
    /* A bound orbit repeats every period: whole periods are taken out of dt, so s stays
     * within half a period's (and beta s^2 within pi^2). */
    double t_left = dt;
    if (beta > 0.0) {
        double period = 2.0 * M_PI * mu / (beta * sqrt(beta));
        if (fabs(dt) > 0.5 * period)
            t_left = dt - period * nearbyint(dt / period);
        if (t_left == 0.0)
            return 0;
    }
    universal u = { .r0 = r0, .eta0 = eta0, .zeta0 = mu - beta * r0, .beta = beta, .mu = mu,
                    .dt = t_left };
    double s, G[4];
    if (solve(&u, &s, G) != 0)
        return -1;
    double r = r0 + eta0 * G[1] + u.zeta0 * G[2];
    double f = 1.0 - mu * G[2] / r0, g = r0 * G[1] + eta0 * G[2];
    double fdot = -mu * G[1] / (r0 * r), gdot = 1.0 - mu * G[2] / r;
    for (int k = 0; k < 3; k++) {
        double xk = x[k], vk = v[k];
        x[k] = f * xk + g * vk;
        v[k] = fdot * xk + gdot * vk;
    }
    return 0;
}
