/* orbit_period.c — turning points and the period integral of a one-degree-of-freedom
 * orbit with no closed form (orbit_period.h). */
#include <float.h>
#include <math.h>
#include <stdbool.h>
#include <string.h>

#include "orbit_period.h"

/* Gauss-Kronrod 7-15 rule on [-1, 1]: the Kronrod abscissae (the odd-indexed ones are
 * the 7-point Gauss abscissae) with their weights, as tabulated with QUADPACK
 * (R. Piessens et al., QUADPACK, Springer 1983, routine QK15; the same values are in
 * GSL's qk15.c). tests/test_orbit_period.c checks the rule integrates every polynomial
 * of degree <= 22 (Kronrod) and <= 13 (Gauss) exactly. */
static const double xgk[8] = {
    0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
    0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
    0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
    0.207784955007898467600689403773245, 0.000000000000000000000000000000000,
};
static const double wgk[8] = {
    0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
    0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
    0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
    0.204432940075298892414161999234649, 0.209482141084727828012999174891714,
};
static const double wg[4] = {
    0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
    0.381830050505118944950369775488975, 0.417959183673469387755102040816327,
};

enum { MAX_PIECES = 400 };          /* subintervals the adaptive rule may make */
#define PERIOD_TOLERANCE 1e-13      /* relative, of the period */

/* The integrand after q = c - d cos(phi): d sin(phi) / sqrt(E - V(q)). Next to a
 * turning point qt, E - V(q) computed as a difference keeps only the digits its size
 * leaves of |E|: its rounding, ~eps |E|, is a relative error eps |E| / (E - V) of the
 * integrand (1e-6 where E - V is 1e-10 |E|), which limited periods to a few 1e-12 and
 * kept the adaptive rule from its tolerance.
 *
 * With V' given, E - V is taken near each turning point from V' instead:
 *     E - V(qt + dir x) = x S(x),  S(x) = the mean of -dir V' over [qt, qt + dir x]
 * (dir = +1 at q-, -1 at q+, pointing inward; E = V(qt) to rounding), S by the Gauss
 * 7-point rule: no difference of nearly equal numbers, so near eps relative. With x from
 * the substitution (q - q- = 2 d sin^2(phi/2), q+ - q = 2 d cos^2(phi/2)) the integrand
 * there is sqrt(2 d / S) cos(phi/2) at q- (sin(phi/2) at q+). This zone reaches out
 * from each turning point to where E - V is ZONE_GAP (|E| + |V|), where the difference
 * keeps all but about one of its digits. The zone is cut at setup into pieces short
 * enough for the Gauss rule on V' (derivative_end), with E - V at their ends; at x, E - V
 * is that at the start of x's piece plus the Gauss rule from there to x.
 *
 * Without V' (V' = NULL), where the difference would keep fewer than 6 good digits it is
 * taken from a quadratic in x, gap = s x + k x^2 / 2, with s and k fitted once at each
 * end. */
#define ZONE_GAP (1.0 / 16.0)

enum { MAX_END_PIECES = 64 };

typedef struct end_model {
    double qt, dir;                   /* the turning point, the direction inward */
    double s, k;                      /* without V': slope and curvature of E - V inward */
    double zone;                      /* with V': E - V from V' for x <= zone, */
    int pieces;                       /* which is cut into this many equal pieces, */
    double at[MAX_END_PIECES + 1];    /* with E - V at their ends (at[0] = 0) */
} end_model;

typedef struct integrand {
    dm_potential_fn V, dV;
    void *data;
    double E, c, d;
    end_model minus, plus;
    int evaluations;
    bool bad;                         /* V not finite on the orbit */
} integrand;

/* The Gauss 7-point rule (the Kronrod table's odd abscissae, wg) on [a, b], as the sum
 * of w f without the factor (b - a) / 2. */
static double gauss7_sum(dm_potential_fn fn, void *data, double a, double b)
{
    double half = 0.5 * (b - a), centre = 0.5 * (a + b);
    double g = wg[3] * fn(data, centre);
    for (int j = 0; j < 3; j++) {
        double x = half * xgk[2 * j + 1];
        g += wg[j] * (fn(data, centre - x) + fn(data, centre + x));
    }
    return g;
}

/* S(x) of the end e: the mean of -dir V' over [qt, qt + dir x]: E - V at the start of
 * the piece x is in, plus the Gauss rule from there to x. */
static double mean_slope(integrand *in, const end_model *e, double x)
{
    int i = (int)fmin(floor(x / e->zone * e->pieces), e->pieces - 1);
    i = i < 0 ? 0 : i;
    double a = e->zone * i / e->pieces;
    double rest = gauss7_sum(in->dV, in->data, e->qt + e->dir * a, e->qt + e->dir * x);
    in->evaluations += 7;
    return (e->at[i] - e->dir * 0.5 * (x - a) * rest) / x;
}

static double f(integrand *in, double phi)
{
    double sh = sin(0.5 * phi), ch = cos(0.5 * phi);
    bool lower = phi < 0.5 * M_PI;
    const end_model *e = lower ? &in->minus : &in->plus;
    double x = 2.0 * in->d * (lower ? sh * sh : ch * ch);
    if (in->dV != NULL && x <= e->zone) {
        double S = mean_slope(in, e, x);
        if (!isfinite(S)) {
            in->bad = true;
            return 0.0;
        }
        if (!(S > 0.0))
            return 0.0;
        return sqrt(2.0 * in->d / S) * (lower ? ch : sh);
    }
    double q = in->c - in->d * cos(phi);
    double v = in->V(in->data, q);
    in->evaluations++;
    if (!isfinite(v)) {
        in->bad = true;
        return 0.0;
    }
    double gap = in->E - v;
    if (in->dV == NULL && !(gap > 1e6 * DBL_EPSILON * (fabs(in->E) + fabs(v)))) {
        gap = x * (e->s + 0.5 * e->k * x);
        if (!(gap > 0.0))
            return 0.0; /* on a turning point: a node of weight zero in the limit */
    }
    return in->d * sin(phi) / sqrt(gap);
}

/* Without V': E - V inward from the turning point qt (direction dir): slope and
 * curvature from two points, h and 2h inside, h a small part of the orbit. */
static end_model fit_end(dm_potential_fn V, void *data, double E, double qt, double dir,
                         double h)
{
    double g0 = E - V(data, qt), g1 = E - V(data, qt + dir * h), g2 = E - V(data, qt + 2 * dir * h);
    return (end_model){ .qt = qt, .dir = dir, .s = (4.0 * g1 - g2 - 3.0 * g0) / (2.0 * h),
                        .k = (g2 - 2.0 * g1 + g0) / (h * h) };
}

/* The rule on [a, b]: the 15 values of fn into fv (the centre first, then the pairs
 * centre -+ half xgk[j]), the Gauss 7-point value into gauss7; returns Kronrod's. */
static double kronrod_values(double (*fn)(void *data, double x), void *data, double a,
                             double b, double fv[15], double *gauss7)
{
    double half = 0.5 * (b - a), centre = 0.5 * (a + b);
    fv[0] = fn(data, centre);
    double k = fv[0] * wgk[7], g = fv[0] * wg[3];
    for (int j = 0; j < 7; j++) {
        double x = half * xgk[j];
        fv[1 + 2 * j] = fn(data, centre - x);
        fv[2 + 2 * j] = fn(data, centre + x);
        double s = fv[1 + 2 * j] + fv[2 + 2 * j];
        k += wgk[j] * s;
        if (j % 2 == 1)
            g += wg[j / 2] * s;
    }
    *gauss7 = g * half;
    return k * half;
}

double dm_kronrod15(double (*fn)(void *data, double x), void *data, double a, double b,
                    double *gauss7)
{
    double fv[15];
    return kronrod_values(fn, data, a, b, fv, gauss7);
}

static double f_of(void *data, double phi)
{
    return f(data, phi);
}

/* K15 on [a, b] with QUADPACK's error estimate (QK15: the Kronrod-Gauss difference,
 * scaled down for smooth integrands, and never below 50 eps of the integral of |f|). */
static double kronrod(integrand *in, double a, double b, double *error)
{
    double g, fv[15];
    double k = kronrod_values(f_of, in, a, b, fv, &g);
    /* |f| and |f - mean| over the piece, by the same rule, from the same values */
    double half = 0.5 * (b - a), mean = k / (b - a);
    double resabs = wgk[7] * fabs(fv[0]), resasc = wgk[7] * fabs(fv[0] - mean);
    for (int j = 0; j < 7; j++) {
        double f1 = fv[1 + 2 * j], f2 = fv[2 + 2 * j];
        resabs += wgk[j] * (fabs(f1) + fabs(f2));
        resasc += wgk[j] * (fabs(f1 - mean) + fabs(f2 - mean));
    }
    resabs *= fabs(half);
    resasc *= fabs(half);
    double e = fabs(k - g);
    if (resasc != 0.0 && e != 0.0)
        e = resasc * fmin(1.0, pow(200.0 * e / resasc, 1.5));
    if (resabs > DBL_MIN / (50.0 * DBL_EPSILON))
        e = fmax(50.0 * DBL_EPSILON * resabs, e);
    *error = e;
    return k;
}

/* Adaptive: the piece with the largest error is halved until the sum of the errors
 * is below the tolerance relative to the integral. */
static double adapt(integrand *in, double a, double b, double *rel_error)
{
    double lo[MAX_PIECES], hi[MAX_PIECES], val[MAX_PIECES], err[MAX_PIECES];
    int n = 1;
    lo[0] = a;
    hi[0] = b;
    val[0] = kronrod(in, a, b, &err[0]);
    for (;;) {
        double total = 0.0, total_err = 0.0;
        int worst = 0;
        for (int i = 0; i < n; i++) {
            total += val[i];
            total_err += err[i];
            if (err[i] > err[worst])
                worst = i;
        }
        *rel_error = total_err / fabs(total);
        if (*rel_error <= PERIOD_TOLERANCE || n + 1 > MAX_PIECES || in->bad)
            return total;
        double mid = 0.5 * (lo[worst] + hi[worst]);
        if (!(mid > lo[worst] && mid < hi[worst]))
            return total; /* the piece cannot be split further */
        lo[n] = mid;
        hi[n] = hi[worst];
        hi[worst] = mid;
        val[worst] = kronrod(in, lo[worst], hi[worst], &err[worst]);
        val[n] = kronrod(in, lo[n], hi[n], &err[n]);
        n++;
    }
}

/* Golden-section search of E - V on [a, b] for its lowest value (sign -1) or its
 * highest (sign +1): at most max_it steps, ending early when the two probes meet (adjacent
 * doubles) or the highest is infinite. Sign -1 looks for E - V < 0 only: returns the
 * first probe where it is, or NAN. Sign +1 returns the higher of the last two probes.
 * *f: E - V at what is returned. */
static double golden_search(dm_potential_fn V, void *data, double E, double sign, double a,
                            double b, int max_it, double *f)
{
    const double r = 0.5 * (3.0 - sqrt(5.0));
    double x1 = a + r * (b - a), x2 = b - r * (b - a);
    double f1 = E - V(data, x1), f2 = E - V(data, x2);
    for (int it = 0; it < max_it; it++) {
        if (sign < 0.0 && (f1 < 0.0 || f2 < 0.0)) {
            *f = f1 < 0.0 ? f1 : f2;
            return f1 < 0.0 ? x1 : x2;
        }
        if (sign > 0.0 && !(x1 < x2 && f1 < INFINITY && f2 < INFINITY))
            break;
        if (sign * f1 > sign * f2) {
            b = x2, x2 = x1, f2 = f1;
            x1 = a + r * (b - a);
            f1 = E - V(data, x1);
        } else {
            a = x1, x1 = x2, f1 = f2;
            x2 = b - r * (b - a);
            f2 = E - V(data, x2);
        }
    }
    if (sign < 0.0) {
        *f = NAN; /* no probe below zero */
        return NAN;
    }
    bool first = f1 > f2 || f1 == INFINITY;
    *f = first ? f1 : f2;
    return first ? x1 : x2;
}

/* Within one step from a point `a` inside the orbit (E - V >= 0) to a point `b` also
 * inside: is there a forbidden zone between them (a barrier the step went over)? The
 * midpoint is tested; when it lies below the chord (E - V dips) the dip's bottom is
 * sought by golden-section search. Returns a point between with E - V < 0, or NAN. */
static double zone_between(dm_potential_fn V, void *data, double E, double a, double fa,
                           double b, double fb)
{
    double m = 0.5 * (a + b), fm = E - V(data, m);
    if (fm < 0.0)
        return m;
    if (!(fm < 0.5 * (fa + fb)))
        return NAN;
    /* 80 steps narrow the bracket to 2e-17 of the step and no further: a search left to
     * converge onto an end where E - V is 0 (a start at its turning point) finds a
     * rounding of E - V below zero there, a false zone (the pendulum's period came out
     * three times too long when the 81st probe was looked at) */
    double f, x = golden_search(V, data, E, -1.0, a, b, 80, &f);
    return f < 0.0 ? x : NAN;
}

/* The turning point on one side (direction +1 or -1) of q0: stepped out to the first
 * point where E - V < 0, then bisected to the last bit. A step grows (x2) while E - V
 * does, and where E - V falls it goes at most half way to where the line through the
 * last two points reaches zero; every step is also checked for a dip below zero between
 * its ends (zone_between), so a narrow forbidden zone (a barrier just above E, next to a
 * separatrix) is not stepped over. Returns false when E - V stays >= 0 out to `reach`. */
static bool turning_point(dm_potential_fn V, void *data, double E, double q0, double dir,
                          double reach, double *at, bool *not_finite)
{
    double inside = q0, f_inside = E - V(data, q0), widest = fmax(f_inside, 0.0);
    double step = 1e-6 * fmax(1.0, fabs(q0));
    const double smallest = 1e-13 * fmax(1.0, fabs(q0));
    for (;;) {
        double q = inside + dir * step;
        double v = V(data, q);
        if (!isfinite(v) && !(v == INFINITY)) {
            *not_finite = true;
            return false;
        }
        double fq = E - v;
        /* E - V within rounding of 0 where V is flat (its slope over the way come, against
         * the widest E - V seen, below the 1e-3 dm_orbit_period refuses) is a maximum of
         * V at the orbit's energy, a separatrix, or next to one: the orbit is taken to
         * end there, and refused below, rather than followed over the top and the next
         * tops out to `reach` */
        double slope = (fq - f_inside) / step; /* along the direction of travel */
        bool touching = fq < 0.0 || (fq <= 64.0 * DBL_EPSILON * (fabs(E) + fabs(v)) &&
                                     fabs(slope) * fabs(q - q0) < 1e-3 * widest);
        double outside = touching ? q : zone_between(V, data, E, inside, f_inside, q, fq);
        if (!isnan(outside)) { /* V = +inf (a wall) counts as outside */
            double a = inside, b = outside;
            for (int it = 0; it < 1100; it++) {
                double mid = 0.5 * (a + b);
                if (mid == a || mid == b)
                    break;
                if (E - V(data, mid) >= 0.0)
                    a = mid;
                else
                    b = mid;
            }
            *at = a;
            return true;
        }
        inside = q;
        f_inside = fq;
        widest = fmax(widest, fq);
        if (fabs(q - q0) > reach)
            return false;
        double next = 2.0 * step;
        if (slope < 0.0)
            next = fmin(next, fmax(0.5 * fq / -slope, smallest));
        step = next;
    }
}

/* With V': the zone of the end at qt (direction dir inward) out to half the orbit's
 * width d: halved from d while E - V stays >= ZONE_GAP (|E| + |V|) at its edge. Its
 * pieces: 1, doubled (to at most MAX_END_PIECES) until on every piece the Gauss 7-point
 * integral of V' is within 8 eps of the Kronrod 15-point one, relative to E - V there;
 * E - V at their ends from the Kronrod values, summed. Writes E - V at the zone's edge,
 * by the difference, into *edge_gap. */
static end_model derivative_end(integrand *in, double qt, double dir, double *edge_gap)
{
    end_model e = { .qt = qt, .dir = dir, .zone = in->d, .s = NAN, .k = NAN };
    *edge_gap = in->E - in->V(in->data, qt + dir * e.zone);
    in->evaluations++;
    for (int j = 0; j < 60; j++) {
        double x = 0.5 * e.zone, v = in->V(in->data, qt + dir * x);
        in->evaluations++;
        if (!(in->E - v >= ZONE_GAP * (fabs(in->E) + fabs(v))))
            break;
        e.zone = x;
        *edge_gap = in->E - v;
    }
    for (e.pieces = 1;; e.pieces *= 2) {
        bool good = true;
        for (int i = 0; i < e.pieces; i++) {
            double g7, k15 = dm_kronrod15(in->dV, in->data, qt + dir * (e.zone * i / e.pieces),
                                          qt + dir * (e.zone * (i + 1) / e.pieces), &g7);
            in->evaluations += 15;
            e.at[i + 1] = e.at[i] - k15; /* k15 = V(piece's far end) - V(near end) */
            good = good && fabs(k15 - g7) <= 8.0 * DBL_EPSILON * (fabs(e.at[i]) + fabs(k15));
        }
        if (good || 2 * e.pieces > MAX_END_PIECES)
            break;
    }
    return e;
}

/* A point between the turning points qm < qp where V is unbounded below (a pole or a
 * logarithm's singularity, which the turning-point search steps over as it steps over
 * any point), or NAN. The largest E - V of 64 samples is sought further by golden-section
 * search between its neighbours, down to adjacent doubles, at x. Then E - V is taken at
 * x -+ h for h halved from the samples' spacing down to 64 ulp of x: bounded (a smooth
 * minimum of V, a kink as |q|, a cusp as |q|^a with infinite force but finite V), its
 * rise from one halving to the next shrinks (by 2^-a at a cusp); unbounded, it does not
 * (log 2 a halving at a logarithm, doubling at a pole). Unbounded: the rise over the
 * third quarter of the halvings is at least half that over the first. V = -inf at a
 * sample or at x is unbounded too. */
static double singular_point(dm_potential_fn V, void *data, double E, double qm, double qp)
{
    enum { N = 64 };
    double width = qp - qm, best_gap = -INFINITY;
    int best = 0;
    for (int i = 0; i <= N; i++) {
        double g = E - V(data, qm + width * i / N);
        if (g == INFINITY)
            return qm + width * i / N;
        if (g > best_gap)
            best_gap = g, best = i;
    }
    double a = qm + width * (best > 0 ? best - 1 : 0) / N;
    double b = qm + width * (best < N ? best + 1 : N) / N;
    double f, x = golden_search(V, data, E, 1.0, a, b, 200, &f);
    if (f == INFINITY)
        return x;
    /* the rise of max(E - V(x - h), E - V(x + h)) at each halving of h */
    double rise[1100], last = NAN;
    int k = 0;
    for (double h = width / N; k < 1100 && h > 64.0 * DBL_EPSILON * fabs(x) && h > DBL_MIN;
         h *= 0.5) {
        double g = fmax(E - V(data, x - h), E - V(data, x + h));
        if (!isfinite(g))
            return g == INFINITY ? x : NAN;
        if (!isnan(last))
            rise[k++] = g - last;
        last = g;
    }
    if (k < 8)
        return NAN;
    double first = 0.0, third = 0.0;
    for (int i = 0; i < k / 4; i++)
        first += rise[i], third += rise[k / 2 + i];
    return first > 0.0 && third >= 0.5 * first ? x : NAN;
}

/* The integrand of the orbit between the turning points qm < qp, with V' (dV) or
 * without (NULL). With V', returns in *mismatch the largest relative difference between
 * E - V at the edge of an end's zone by the difference and by V' (NULL: not wanted). */
static integrand orbit_integrand(dm_potential_fn V, dm_potential_fn dV, void *data, double E,
                                 double qm, double qp, double *mismatch)
{
    double d = 0.5 * (qp - qm);
    integrand in = { .V = V, .dV = dV, .data = data, .E = E, .c = 0.5 * (qp + qm), .d = d };
    if (dV == NULL) {
        in.minus = fit_end(V, data, E, qm, +1.0, 1e-4 * d);
        in.plus = fit_end(V, data, E, qp, -1.0, 1e-4 * d);
        return in;
    }
    double gm, gp;
    in.minus = derivative_end(&in, qm, +1.0, &gm);
    in.plus = derivative_end(&in, qp, -1.0, &gp);
    if (mismatch != NULL) {
        double sm = in.minus.zone * mean_slope(&in, &in.minus, in.minus.zone);
        double sp = in.plus.zone * mean_slope(&in, &in.plus, in.plus.zone);
        /* against the difference's own rounding, ~eps (|E| + |V|) */
        double um = 1024.0 * DBL_EPSILON * (fabs(E) + fabs(E - gm));
        double up = 1024.0 * DBL_EPSILON * (fabs(E) + fabs(E - gp));
        *mismatch = fmax(fabs(sm - gm) / (fabs(gm) + um), fabs(sp - gp) / (fabs(gp) + up));
    }
    return in;
}

dm_status dm_orbit_period(dm_potential_fn V, dm_potential_fn dV, void *data, double m,
                          double E, double q0, double reach, const char *what,
                          dm_orbit *orbit, dm_error *err)
{
    memset(orbit, 0, sizeof *orbit);
    double v0 = V(data, q0);
    if (!isfinite(v0) || !isfinite(E))
        return dm_error_set(err, DM_EINPUT, "%s: V = %.17g at the start q0 = %.17g is not "
                            "finite", what, v0, q0);
    /* A start at rest is a turning point, and its energy, computed otherwise than V's
     * own arithmetic does, may lie a rounding below V(q0): the orbit is then the one of
     * energy V(q0), as far as V can tell. */
    if (E < v0 && v0 - E <= 64.0 * DBL_EPSILON * (fabs(E) + fabs(v0)))
        E = v0;
    if (E < v0)
        return dm_error_set(err, DM_EINPUT, "%s: energy %.17g is below V(q0) = %.17g "
                            "(impossible)", what, E, v0);
    bool not_finite = false;
    double qm = NAN, qp = NAN;
    bool left = turning_point(V, data, E, q0, -1.0, reach, &qm, &not_finite);
    bool right = turning_point(V, data, E, q0, +1.0, reach, &qp, &not_finite);
    if (not_finite)
        return dm_error_set(err, DM_EINPUT, "%s: V is not finite on the orbit of energy "
                            "%.17g through q0 = %.17g", what, E, q0);
    if (!left || !right)
        return dm_error_set(err, DM_EINPUT, "%s: the orbit of energy %.17g through q0 = "
                            "%.17g is unbounded (no turning point within %g %s it): "
                            "no period", what, E, q0, reach, left ? "above" : "below");
    if (!(qp - qm > 2e-6 * fmax(1.0, fabs(q0))))
        return dm_error_set(err, DM_EINPUT, "%s: the start q0 = %.17g at energy %.17g is an "
                            "equilibrium, or next to one (no oscillation to resolve)", what,
                            q0, E);
    double pole = singular_point(V, data, E, qm, qp);
    if (!isnan(pole))
        return dm_error_set(err, DM_EINPUT, "%s: V is unbounded below (singular) at q = %.17g, "
                            "on the orbit of energy %.17g through q0 = %.17g: the orbit falls "
                            "into it and has no period", what, pole, E, q0);
    /* At a turning point that is a maximum of V (a separatrix) E - V grows like the
     * square of the distance, not linearly, and the period diverges. Next to one, the
     * slope of V at the turning point is small and E - V, a difference of two nearly
     * equal numbers there, limits the integral: measured, an orbit whose turning-point
     * slope times the half-width, over the largest E - V on the orbit, is 1e-3 gets its
     * period to 3e-10; at 1e-4 only to 1e-8, at 1e-6 to 1e-6. Below 1e-3 the orbit is
     * refused (tests/test_orbit_period.c). */
    double d = 0.5 * (qp - qm), h = 1e-6 * d;
    double slope_m = (E - V(data, qm + h)) / h, slope_p = (E - V(data, qp - h)) / h;
    double widest = fmax(E - V(data, 0.5 * (qp + qm)), fmax(E - v0, DBL_MIN));
    for (int i = 1; i < 16; i++)
        widest = fmax(widest, E - V(data, qm + (qp - qm) * i / 16.0));
    double flat_m = slope_m * d / widest, flat_p = slope_p * d / widest;
    if (!(flat_m >= 1e-3) || !(flat_p >= 1e-3))
        return dm_error_set(err, DM_EINPUT, "%s: energy %.17g is too close to a separatrix "
                            "(V is nearly flat at the turning point q = %.17g: relative slope "
                            "%.2g, below 1e-3): its period cannot be integrated to 3e-10 in "
                            "double precision", what, E, flat_m < flat_p ? qm : qp,
                            fmin(flat_m, flat_p));
    double mismatch = 0.0;
    integrand in = orbit_integrand(V, dV, data, E, qm, qp, &mismatch);
    if (!(mismatch <= 1e-6))
        return dm_error_set(err, DM_EINPUT, "%s: the derivative of V given with it does not "
                            "match V next to the turning points %.17g and %.17g (E - V by the "
                            "two differs by %.2g relative)", what, qm, qp, mismatch);
    double rel = NAN;
    double integral = adapt(&in, 0.0, M_PI, &rel);
    if (in.bad)
        return dm_error_set(err, DM_EINPUT, "%s: V is not finite between the turning points "
                            "%.17g and %.17g", what, qm, qp);
    orbit->q_minus = qm;
    orbit->q_plus = qp;
    orbit->period = sqrt(2.0 * m) * integral;
    orbit->error_estimate = rel;
    orbit->evaluations = in.evaluations;
    if (!(rel <= 1e-9) || !isfinite(orbit->period))
        return dm_error_set(err, DM_EINPUT, "%s: the period integral at energy %.17g does not "
                            "converge (relative error %.2g): too close to a separatrix",
                            what, E, rel);
    return DM_OK;
}

double dm_orbit_time(dm_potential_fn V, dm_potential_fn dV, void *data, double m, double E,
                     const dm_orbit *orbit, double x)
{
    double qm = orbit->q_minus, qp = orbit->q_plus;
    if (!(x > qm))
        return 0.0;
    if (!(x < qp))
        return 0.5 * orbit->period;
    integrand in = orbit_integrand(V, dV, data, E, qm, qp, NULL);
    /* x = c - d cos(phi) */
    double phi = acos(fmax(-1.0, fmin(1.0, (in.c - x) / in.d)));
    double rel = NAN;
    return sqrt(0.5 * m) * adapt(&in, 0.0, phi, &rel);
}
