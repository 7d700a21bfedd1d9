/* descent.c — a local minimum reached downhill from a start (descent.h). */
#include "descent.h"

#include <math.h>
#include <string.h>

static double dot(int n, const double *a, const double *b)
{
    double s = 0.0;
    for (int i = 0; i < n; i++)
        s += a[i] * b[i];
    return s;
}

static double max_norm(int n, const double *a)
{
    double m = 0.0;
    for (int i = 0; i < n; i++)
        m = fmax(m, fabs(a[i]));
    return m;
}

/* The slope of the function along d at x + a d (its gradient into g). */
static double slope_along(const dm_instance *inst, dm_gradient_fn grad, int n, const double *x,
                          const double *d, double a, double *y, double *g)
{
    for (int i = 0; i < n; i++)
        y[i] = x[i] + a * d[i];
    grad(inst, y, g);
    return dot(n, g, d);
}

dm_descent_end dm_descend(const dm_instance *inst, dm_gradient_fn grad, int n, double *x,
                          double reach)
{
    double x0[DM_MAX_DOF], g[DM_MAX_DOF], d[DM_MAX_DOF], y[DM_MAX_DOF], gy[DM_MAX_DOF];
    memcpy(x0, x, sizeof(double) * (size_t)n);
    grad(inst, x, g);
    if (!isfinite(dot(n, g, g)))
        return DM_DESCENT_NOT_FINITE;
    for (int i = 0; i < n; i++)
        d[i] = -g[i];
    double step = 0.0; /* the last step's length (max norm) */
    int budget = 100 + 20 * n, since_restart = 0;
    for (int it = 0; it < budget; it++) {
        double s0 = dot(n, g, d);
        if (max_norm(n, g) == 0.0)
            return DM_DESCENT_FOUND;
        if (!(s0 < 0.0) || since_restart >= n) { /* steepest descent again */
            for (int i = 0; i < n; i++)
                d[i] = -g[i];
            s0 = dot(n, g, d);
            since_restart = 0;
        }
        double dn = max_norm(n, d);
        /* bracket the slope's sign change: lo downhill, hi not */
        double lo = 0.0, s_lo = s0;
        double a = step > 0.0 ? step / dn : fmax(1e-3 * max_norm(n, x), 1e-300) / dn;
        double s_hi = slope_along(inst, grad, n, x, d, a, y, gy);
        for (int k = 0; k < 200 && !isfinite(s_hi); k++) {
            a = 0.5 * (lo + a);
            s_hi = slope_along(inst, grad, n, x, d, a, y, gy);
        }
        if (!isfinite(s_hi))
            return DM_DESCENT_NOT_FINITE;
        while (s_hi < 0.0) {
            lo = a, s_lo = s_hi;
            a *= 4.0;
            for (int i = 0; i < n; i++)
                if (fabs(x[i] + a * d[i] - x0[i]) > reach)
                    return DM_DESCENT_UNBOUNDED;
            s_hi = slope_along(inst, grad, n, x, d, a, y, gy);
            if (!isfinite(s_hi))
                return DM_DESCENT_NOT_FINITE;
        }
        double hi = a;
        /* the sign change, by regula falsi (Illinois) kept inside the bracket */
        int side = 0;
        for (int k = 0; k < 200 && s_hi != 0.0; k++) {
            double m = (lo * s_hi - hi * s_lo) / (s_hi - s_lo);
            if (!(m > lo && m < hi))
                m = 0.5 * (lo + hi);
            if (m <= lo || m >= hi)
                break;
            double s = slope_along(inst, grad, n, x, d, m, y, gy);
            if (!isfinite(s))
                return DM_DESCENT_NOT_FINITE;
            if (s < 0.0) {
                lo = m, s_lo = s;
                if (side == -1)
                    s_hi *= 0.5;
                side = -1;
            } else {
                hi = m, s_hi = s;
                if (side == 1)
                    s_lo *= 0.5;
                side = 1;
            }
            if (hi - lo <= 1e-13 * hi)
                break;
        }
        a = s_hi == 0.0 ? hi : (fabs(s_lo) < fabs(s_hi) ? lo : hi);
        bool moved = false;
        for (int i = 0; i < n; i++) {
            double next = x[i] + a * d[i];
            moved = moved || next != x[i];
            x[i] = next;
        }
        step = a * dn;
        if (!moved)
            return DM_DESCENT_FOUND;
        double g_new[DM_MAX_DOF];
        grad(inst, x, g_new);
        if (!isfinite(dot(n, g_new, g_new)))
            return DM_DESCENT_NOT_FINITE;
        /* Polak-Ribiere+, restarted every n steps */
        double gg = dot(n, g, g), beta = 0.0;
        if (gg > 0.0) {
            double num = 0.0;
            for (int i = 0; i < n; i++)
                num += g_new[i] * (g_new[i] - g[i]);
            beta = fmax(0.0, num / gg);
        }
        for (int i = 0; i < n; i++) {
            d[i] = -g_new[i] + beta * d[i];
            g[i] = g_new[i];
        }
        since_restart++;
        double scale = fmax(max_norm(n, x), step);
        for (int i = 0; i < n; i++)
            scale = fmax(scale, fabs(x[i] - x0[i]));
        if (step <= 1e-15 * scale)
            return DM_DESCENT_FOUND;
    }
    return DM_DESCENT_NO_END;
}
