/* elliptic.c — K(m), F(phi|m), Jacobi sn, cn, dn and am, written for driftmark.
 *
 * All of them rest on the arithmetic-geometric mean started from a0 = 1, b0 = sqrt(m1)
 * (NIST DLMF 19.8.1, 22.20.1; Abramowitz & Stegun 16.12, 17.6): starting from the
 * complementary parameter m1 = 1 - m keeps every quantity of the sequence accurate to
 * a few ulps however close m is to 1, which is where separatrix orbits live.
 *
 * Jacobi functions. The descending Landen (Gauss) transformation, DLMF 22.7.1-22.7.3,
 * maps modulus k_n = c_n / a_n to k_{n+1} = c_{n+1} / a_{n+1} and the argument u a_n to
 * u a_{n+1}; after a few steps k_N is below 1e-9 and sn = sin, cn = cos to 1e-18. The
 * classical way back up (DLMF 22.20.4: arcsin of the angle recurrence, then
 * cn = cos(phi), dn = cn / cos(phi1 - phi)) loses relative accuracy wherever cn or dn
 * is small, which near m = 1 is most of the period. Instead we carry the ratio
 * t_n = sc(u a_n | k_n) / a_n upward, where the Gauss transformation reads
 *     t_n  = t_{n+1} / dn_{n+1},
 *     dn_n = (1 + a_{n+1} b_n t_{n+1}^2) / (1 + a_{n+1} a_n t_{n+1}^2)
 * (divide DLMF 22.7.2 by 22.7.1 and write 22.7.3 with 1 -+ k_{n+1} = b_n, a_n over
 * a_{n+1}): only products and quotients of positive numbers, so no cancellation. The
 * same recurrence in cs = 1/sc is Bulirsch's (Numer. Math. 7 (1965) 78-90). The argument
 * is first reduced to [0, K/2] by the quarter-period relations (DLMF 22.4.3 and table
 * 22.4.3): there t_0 = sc is at most m1^(-1/4), and on (K/2, K] the values come from
 * those at K - u through sn(K - v) = cd(v), cn(K - v) = k' sd(v), dn(K - v) = k' nd(v),
 * again without cancellation.
 */
#include "elliptic.h"

#include <float.h>
#include <math.h>
#include <stdbool.h>

/* The AGM from b0 = sqrt(m1) needs about log2(log(1/m1)) + 4 steps: 14 for the
 * smallest subnormal m1. */
#define AGM_MAX 40

/* k_N below this leaves sn, cn, dn at level N equal to sin, cos, 1 to relative
 * O(k_N^2) = 1e-18. */
#define AGM_STOP 1e-9

/* pi = PI_HI + PI_LO to about 2^-107 (the tail is pi - M_PI). */
#define PI_HI 3.141592653589793116
#define PI_LO 1.2246467991473531772e-16

static int agm_sequence(double m, double m1, double *a, double *b)
{
    a[0] = 1.0;
    b[0] = sqrt(m1);
    /* c_n = (a_{n-1} - b_{n-1}) / 2, but by c_{n+1} = c_n^2 / (4 a_{n+1}) (DLMF 19.8.2,
     * since c_n^2 = a_n^2 - b_n^2) so that small c_n are not differences of nearly equal
     * numbers; only used to decide when to stop. */
    double c = sqrt(m);
    int n = 0;
    while (c > AGM_STOP * a[n] && n < AGM_MAX) {
        a[n + 1] = 0.5 * (a[n] + b[n]);
        b[n + 1] = sqrt(a[n] * b[n]);
        c = c * c / (4.0 * a[n + 1]);
        n++;
    }
    return n;
}

static bool in_domain(double m1)
{
    return m1 >= 0.0 && m1 <= 1.0;
}

double dm_ellipk_m1(double m1)
{
    if (!in_domain(m1))
        return NAN;
    if (m1 == 0.0)
        return INFINITY;
    double a[AGM_MAX + 1], b[AGM_MAX + 1];
    int n = agm_sequence(1.0 - m1, m1, a, b);
    /* K = pi / (2 AGM(1, k')), DLMF 19.8.5; one more mean makes the limit exact to
     * relative c_{N+1} / a_N < 1e-18. */
    return M_PI / (a[n] + b[n]);
}

double dm_ellipk(double m)
{
    /* 1 - m is exact for m in [1/2, 1] (Sterbenz), and K is well conditioned below. */
    return dm_ellipk_m1(1.0 - m);
}

/* sn, cn, dn at 0 <= y <= K/2 from the AGM sequence a[0..n], b[0..n]. */
static void jacobi_first_half_quarter(double y, const double *a, const double *b, int n,
                                      double *s, double *c, double *d)
{
    double t = tan(a[n] * y) / a[n];
    double dn = 1.0;
    for (int i = n - 1; i >= 0; i--) {
        double t2 = t * t;
        double dn_up = (1.0 + a[i + 1] * b[i] * t2) / (1.0 + a[i + 1] * a[i] * t2);
        t /= dn;
        dn = dn_up;
    }
    double cn = 1.0 / sqrt(fma(t, t, 1.0));
    *s = t * cn;
    *c = cn;
    *d = dn;
}

/* The one evaluation behind every Jacobi function: m and m1 = 1 - m both given, each
 * as accurately as the caller knows it. */
static void jacobi(double u, double m, double m1, double *sn, double *cn, double *dn,
                   double *am)
{
    if (!in_domain(m1) || !isfinite(u)) {
        *sn = *cn = *dn = *am = NAN;
        return;
    }
    if (m1 == 0.0) {
        /* m = 1: sn = tanh, cn = dn = sech, am = gd (DLMF 22.5.iv, 22.16.3). */
        *sn = tanh(u);
        *cn = *dn = 1.0 / cosh(u);
        *am = atan(sinh(u));
        return;
    }
    double a[AGM_MAX + 1], b[AGM_MAX + 1];
    int n = agm_sequence(m, m1, a, b);
    double K = M_PI / (a[n] + b[n]);
    double kc = b[0];

    /* u = j K + r with 0 <= r < K. */
    double j = floor(u / K);
    double r = fma(-j, K, u);
    if (r < 0.0) {
        r += K;
        j -= 1.0;
    } else if (r >= K) {
        r -= K;
        j += 1.0;
    }
    double quarter = j - 4.0 * floor(0.25 * j); /* 0, 1, 2, 3 */
    bool odd = quarter == 1.0 || quarter == 3.0;
    bool high = r > 0.5 * K;

    /* In odd quarters the functions run backwards from K (sn(K + r) = sn(K - r), ...),
     * so the point to evaluate is K - r there; either way fold it into [0, K/2]. */
    double s, c, d;
    jacobi_first_half_quarter(high ? K - r : r, a, b, n, &s, &c, &d);
    double S, C, D;
    if (odd != high) {
        S = c / d;
        C = kc * s / d;
        D = kc / d;
    } else {
        S = s;
        C = c;
        D = d;
    }
    /* Signs by quarter, DLMF table 22.4.3: (+,+), (+,-), (-,-), (-,+) for (sn, cn). */
    if (quarter == 1.0) {
        C = -C;
    } else if (quarter == 2.0) {
        S = -S;
        C = -C;
    } else if (quarter == 3.0) {
        S = -S;
    }
    *sn = S;
    *cn = C;
    *dn = D;

    /* am = i pi + arctan(sn / cn) with i the nearest half period u / (2K); cn has sign
     * (-1)^i there. */
    double i = floor(0.5 * (j + 1.0));
    double sign = (i - 2.0 * floor(0.5 * i)) == 0.0 ? 1.0 : -1.0;
    *am = fma(i, PI_HI, i * PI_LO) + atan2(sign * S, sign * C);
}

void dm_ellipj(double u, double m, double *sn, double *cn, double *dn)
{
    double am;
    jacobi(u, m, 1.0 - m, sn, cn, dn, &am);
}

void dm_ellipj_m1(double u, double m1, double *sn, double *cn, double *dn)
{
    double am;
    jacobi(u, 1.0 - m1, m1, sn, cn, dn, &am);
}

void dm_ellipj_am_m1(double u, double m1, double *sn, double *cn, double *dn, double *am)
{
    jacobi(u, 1.0 - m1, m1, sn, cn, dn, am);
}

double dm_jacobi_am(double u, double m)
{
    double sn, cn, dn, am;
    jacobi(u, m, 1.0 - m, &sn, &cn, &dn, &am);
    return am;
}

double dm_jacobi_am_m1(double u, double m1)
{
    double sn, cn, dn, am;
    jacobi(u, 1.0 - m1, m1, &sn, &cn, &dn, &am);
    return am;
}

double dm_carlson_rf(double x, double y, double z)
{
    if (!(x >= 0.0 && y >= 0.0 && z >= 0.0) || x + y == 0.0 || x + z == 0.0 ||
        y + z == 0.0 || isinf(x + y + z))
        return NAN;
    /* Duplication to convergence, then the fifth-order series: B. C. Carlson,
     * "Numerical computation of real or complex elliptic integrals", Numer. Algorithms
     * 10 (1995) 13-26, algorithm for R_F (also DLMF 19.36.1). */
    double x0 = x, y0 = y;
    double a0 = (x + y + z) / 3.0;
    double q = pow(3.0 * DBL_EPSILON, -1.0 / 6.0) *
               fmax(fabs(a0 - x), fmax(fabs(a0 - y), fabs(a0 - z)));
    double a = a0;
    double scale = 1.0; /* 4^-n */
    while (q * scale >= fabs(a)) {
        double sx = sqrt(x), sy = sqrt(y), sz = sqrt(z);
        double lambda = sx * sy + sx * sz + sy * sz;
        x = 0.25 * (x + lambda);
        y = 0.25 * (y + lambda);
        z = 0.25 * (z + lambda);
        a = 0.25 * (a + lambda);
        scale *= 0.25;
    }
    double X = (a0 - x0) * scale / a;
    double Y = (a0 - y0) * scale / a;
    double Z = -X - Y;
    double e2 = X * Y - Z * Z;
    double e3 = X * Y * Z;
    return (1.0 - e2 / 10.0 + e3 / 14.0 + e2 * e2 / 24.0 - 3.0 * e2 * e3 / 44.0) / sqrt(a);
}

double dm_ellipf_m1(double phi, double m1)
{
    if (!in_domain(m1) || !isfinite(phi))
        return NAN;
    /* phi = j pi + psi with |psi| <= pi/2; F(j pi + psi) = 2 j K + F(psi). sin psi and
     * cos psi come from phi itself (libm reduces phi exactly), not from psi rounded:
     * near m = 1 and psi = +-pi/2, F changes by 1/k' times any change of the angle. */
    double j = nearbyint(phi / M_PI);
    double sign = (j - 2.0 * floor(0.5 * j)) == 0.0 ? 1.0 : -1.0;
    double s = sign * sin(phi), c = sign * cos(phi);
    /* 1 - m sin^2 = cos^2 + m1 sin^2: no cancellation near m = 1. */
    double f = s * dm_carlson_rf(c * c, c * c + m1 * s * s, 1.0);
    if (j != 0.0)
        f += 2.0 * j * dm_ellipk_m1(m1);
    return f;
}

double dm_ellipf(double phi, double m)
{
    return dm_ellipf_m1(phi, 1.0 - m);
}
