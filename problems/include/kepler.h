/* kepler.h — Kepler's equation, shared by the Kepler problem and its tests. */
#ifndef DM_KEPLER_H
#define DM_KEPLER_H

/* The eccentric anomaly E with E - e sin E = M, for any real mean anomaly M and
 * eccentricity 0 <= e < 1, to machine precision. Safeguarded Newton iteration (never
 * leaves a bracket of the root, so it converges for every M and e); *iterations, when
 * not NULL, receives the number of Newton or bisection steps taken. */
double dm_kepler_solve(double mean_anomaly, double e, int *iterations);

#endif
