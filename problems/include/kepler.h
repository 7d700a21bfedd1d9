/* kepler.h — Kepler's equation, shared by the Kepler problem and its tests, and the
 * exact Kepler drift in universal variables (Wisdom-Holman's Kepler steps). */
#ifndef DM_KEPLER_H
#define DM_KEPLER_H

/* The eccentric anomaly E with E - e sin E = M, for any real mean anomaly M and
 * eccentricity 0 <= e < 1, to machine precision. Safeguarded Newton iteration (never
 * leaves a bracket of the root, so it converges for every M and e); *iterations, when
 * not NULL, receives the number of Newton or bisection steps taken. */
double dm_kepler_solve(double mean_anomaly, double e, int *iterations);

/* The Stumpff functions c0(x) .. c3(x) into c[0..3] (J. M. A. Danby, Fundamentals of
 * Celestial Mechanics, 2nd ed. (1988), section 6.9, from memory of the book):
 * c0 = cos sqrt x, c1 = sin sqrt x / sqrt x, c2 = (1 - cos sqrt x) / x,
 * c3 = (sqrt x - sin sqrt x) / x^(3/2), continued through x <= 0 by cosh and sinh. */
void dm_stumpff(double x, double c[4]);

/* Advances a two-body orbit x'' = -mu x / |x|^3 (x, v in R^3, relative coordinates)
 * exactly by dt, in place: Gauss's f and g functions in universal variables (Danby,
 * section 6.9), so every eccentricity below 1, the parabola and hyperbolic passes are
 * one formula. The universal Kepler equation r0 s + eta0 G2 + zeta0 G3 = dt increases
 * with s, so a bracketed Laguerre-Conway iteration always converges. Returns 0, or -1
 * when the state is not finite or the iteration did not converge (x, v untouched). */
int dm_kepler_drift(double mu, double *x, double *v, double dt);

#endif
