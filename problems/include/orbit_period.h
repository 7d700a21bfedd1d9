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
 * logarithmic peak; the adaptive rule follows it.
 *
 * For problems the user defines (formulas, their own code) and as an independent check
 * of the closed forms. Setup only: never in a loop that steps.
 */
#ifndef DM_ORBIT_PERIOD_H
#define DM_ORBIT_PERIOD_H

#include "dm_error.h"

/* V(q) of a problem, with its own data. */
typedef double (*dm_potential_fn)(void *data, double q);

typedef struct dm_orbit {
    double q_minus, q_plus;   /* the turning points */
    double period;
    double error_estimate;    /* the quadrature's own estimate, relative */
    int evaluations;          /* V evaluations the quadrature made */
} dm_orbit;

/* The orbit of energy E through q0 (E >= V(q0)) under V with mass m. Refuses, with a
 * one-line error naming `what`, an orbit that is unbounded within |q - q0| <= reach, an
 * energy at or within rounding of a maximum of V (a separatrix: no finite period), and
 * a V that is not finite on the orbit. */
dm_status dm_orbit_period(dm_potential_fn V, void *data, double m, double E, double q0,
                          double reach, const char *what, dm_orbit *orbit, dm_error *err);

/* The time the orbit of `orbit` (found by dm_orbit_period with the same V, m and E)
 * takes from its lower turning point up to x (common practice: sqrt(m/2) times the
 * integral of dq / sqrt(E - V) from q- to x, by the same quadrature): 0 at q-, half the
 * period at q+ and beyond. */
double dm_orbit_time(dm_potential_fn V, void *data, double m, double E, const dm_orbit *orbit,
                     double x);

/* The Gauss-Kronrod 7-15 rule on [a, b]: returns the 15-point Kronrod value and writes
 * the 7-point Gauss value (their difference estimates the error). */
double dm_kronrod15(double (*fn)(void *data, double x), void *data, double a, double b,
                    double *gauss7);

#endif
