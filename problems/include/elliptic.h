/* elliptic.h — complete and incomplete elliptic integrals of the first kind and the
 * Jacobi elliptic functions, written for driftmark (no outside library).
 *
 * Everything takes the PARAMETER m = k^2 (not the modulus k), as in NIST DLMF ch. 19, 22
 * and Abramowitz & Stegun ch. 16, 17. Each function also comes in a form taking the
 * complementary parameter m1 = 1 - m: orbits next to a separatrix have m within 1e-12
 * of 1, where m1 is known to full relative precision by the caller but 1 - m is not.
 * Inside, everything is computed from m1 (the AGM starts from sqrt(m1)), so the _m1
 * forms lose nothing near m = 1.
 *
 * Domain: 0 <= m <= 1 (0 <= m1 <= 1); m = 1 gives the limits (K = inf, sn = tanh,
 * cn = dn = sech, am = Gudermannian). Outside the domain, or for NaN, results are NaN.
 */
#ifndef DM_ELLIPTIC_H
#define DM_ELLIPTIC_H

/* Complete elliptic integral of the first kind K(m) = F(pi/2, m). */
double dm_ellipk(double m);
double dm_ellipk_m1(double m1);

/* Jacobi sn(u|m), cn(u|m), dn(u|m) from one evaluation. */
void dm_ellipj(double u, double m, double *sn, double *cn, double *dn);
void dm_ellipj_m1(double u, double m1, double *sn, double *cn, double *dn);

/* The same three and the amplitude am(u|m) (continuous in u, am(u + 2K) = am(u) + pi,
 * sn = sin am, cn = cos am) from one evaluation. */
void dm_ellipj_am_m1(double u, double m1, double *sn, double *cn, double *dn, double *am);

/* Jacobi amplitude am(u|m). */
double dm_jacobi_am(double u, double m);
double dm_jacobi_am_m1(double u, double m1);

/* Incomplete elliptic integral of the first kind F(phi|m) = int_0^phi dt / sqrt(1 - m
 * sin^2 t), any real phi (F(phi + pi) = F(phi) + 2K); the inverse of am. */
double dm_ellipf(double phi, double m);
double dm_ellipf_m1(double phi, double m1);

/* Carlson's symmetric integral R_F(x, y, z) (DLMF 19.16.1), x, y, z >= 0, at most one
 * of them zero. F(phi|m) = sin(phi) R_F(cos^2 phi, 1 - m sin^2 phi, 1) (DLMF 19.25.5). */
double dm_carlson_rf(double x, double y, double z);

#endif
