/* orbit_period.h — the period of a bounded one-degree-of-freedom orbit with no closed
 * form: H = p^2 / (2 m) + V(q) at energy E.
 *
 * The turning points q- < q0 < q+ (E = V) are found by bracketing outward from a point
 * of the orbit and bisection to the last bit; the period
 *     T = sqrt(2 m) * integral from q- to q+ of dq / sqrt(E - V(q))
 * (common practice) is integrated after the substitution q = c - d cos(phi),
 * c = (q+ + q-)/2, d = (q+ - q-)/2, which turns the inverse-square-root endpoint
 * singularities into a smooth integrand on phi in [0, pi], by adaptive Gauss-Kronrod
 * (7-15 points) to a relative 1e-13. Next to a separatrix the integrand grows a
 * logarithmic peak; the adaptive rule follows it. Next to a turning point E - V, as a
 * difference, loses its digits to the rounding of V: given V', the quadrature takes it
 * there from V' instead (E - V(q) = the integral of V' from q to the turning point), and
 * the period comes to ~1e-15 away from separatrices (measured against mpmath,
 * tests/test_orbit_period.c); without V', from a local quadratic model, to ~1e-12.
 *
 * For problems the user defines (formulas, their own code) and as an independent check
 * of the closed forms. Setup only: never in a loop that steps.
 */
#ifndef DM_ORBIT_PERIOD_H
#define DM_ORBIT_PERIOD_H

#include "dm_error.h"

/* V(q) of a problem, with its own data (also V'(q), the same way). */
typedef double (*dm_potential_fn)(void *data, double q);

typedef struct dm_orbit {
    double q_minus, q_plus;   /* the turning points */
    double period;
    double error_estimate;    /* the quadrature's own estimate, relative */
    int evaluations;          /* V and V' evaluations the quadrature made */
} dm_orbit;

/* The orbit of energy E through q0 (E >= V(q0)) under V, with V' = dV (or NULL: less
 * accurate, above), with mass m. Refuses, with a one-line error naming `what`, an orbit
 * that is unbounded within |q - q0| <= reach, an energy at or within rounding of a
 * maximum of V (a separatrix: no finite period), a V that is not finite on the orbit, and
 * a dV that is not V's derivative next to the turning points. */
dm_status dm_orbit_period(dm_potential_fn V, dm_potential_fn dV, void *data, double m,
                          double E, double q0, double reach, const char *what,
                          dm_orbit *orbit, dm_error *err);

/* The time the orbit of `orbit` (found by dm_orbit_period with the same V, dV, m and E)
 * takes from its lower turning point up to x (common practice: sqrt(m/2) times the
 * integral of dq / sqrt(E - V) from q- to x, by the same quadrature): 0 at q-, half the
 * period at q+ and beyond. */
double dm_orbit_time(dm_potential_fn V, dm_potential_fn dV, void *data, double m, double E,
                     const dm_orbit *orbit, double x);

/* The Gauss-Kronrod 7-15 rule on [a, b]: returns the 15-point Kronrod value and writes
 * the 7-point Gauss value (their difference estimates the error). */
double dm_kronrod15(double (*fn)(void *data, double x), void *data, double a, double b,
                    double *gauss7);

#endif
