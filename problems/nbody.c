/* nbody.c — N point masses in 3-D under Newtonian gravity,
 * H = sum |p_i|^2 / (2 m_i) - sum_{i<j} G m_i m_j / |q_i - q_j| (common practice),
 * the bodies from the suite (inst->data, nbody.h), G a parameter in the user's units.
 *
 * No closed-form period (no_period): runs give h and a horizon in time. Where the suite
 * names a body and a reference body, the section is the relative orbit's coordinate
 * q_b,k - q_r,k passing 0 upward, k the axis nearest the plane of the starting relative
 * orbit (the smallest component of its angular momentum), so the crossings time that
 * body's revolutions and the runner measures its period from them.
 *
 * Conserved besides H, each measured as a unit-free size of its change:
 *   momentum         |P - P0| / sum |p_i(0)|,            P = sum p_i
 *   angular_momentum |L - L0| / sum |q_i(0) x p_i(0)|,   L = sum q_i x p_i
 *   centre_of_mass   |C - C0| / R,  C = sum m_i q_i / M, R = max |q_i(0) - C0|
 * (R the largest distance of a body from the centre of mass: the positions' rounding is
 * relative to it). The start is barycentric, so the centre of mass stays put in exact
 * arithmetic.
 *
 * The force sum is over the N (N - 1) / 2 pairs, allocation-free, and keeps the
 * smallest pair distance it meets (closest_approach).
 */
#include "nbody.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "dm_fused_loop.h"
#include "problem.h"
#include "quad.h"

enum { P_G };

/* derived constants: the starting momentum, angular momentum and centre of mass, and
 * the three scales above */
enum { A_P0 = 0, A_L0 = 3, A_C0 = 6, A_P_SCALE = 9, A_L_SCALE, A_R_SCALE, A_MASS };

/* The smallest squared pair distance the force sums of this thread met since the last
 * restart (closest_approach). Thread-local: a run stays on one thread. */
static _Thread_local double closest_squared = INFINITY;

const dm_nbody *dm_nbody_of(const dm_instance *inst, double *G)
{
    if (inst->problem != &dm_problem_nbody || inst->data == NULL)
        return NULL;
    if (G != NULL)
        *G = inst->param[P_G];
    return inst->data;
}

static inline const dm_nbody *bodies(const dm_instance *inst)
{
    return (const dm_nbody *)inst->data;
}

/* grad V into grad and, when want_potential, V. One pass over the pairs; nothing is
 * allocated. */
static inline __attribute__((always_inline)) double
pair_sum(const dm_instance *inst, const double *restrict q, double *restrict grad,
         const bool want_potential)
{
    const dm_nbody *d = bodies(inst);
    const int n = d->n;
    const double G = inst->param[P_G];
    double V = 0.0, r2_min = INFINITY;
    for (int k = 0; k < 3 * n; k++)
        grad[k] = 0.0;
    for (int i = 0; i < n; i++) {
        const double xi = q[3 * i], yi = q[3 * i + 1], zi = q[3 * i + 2];
        const double gmi = G * d->mass[i];
        double gx = 0.0, gy = 0.0, gz = 0.0, vi = 0.0;
        for (int j = i + 1; j < n; j++) {
            double dx = q[3 * j] - xi, dy = q[3 * j + 1] - yi, dz = q[3 * j + 2] - zi;
            double r2 = dx * dx + dy * dy + dz * dz;
            r2_min = r2 < r2_min ? r2 : r2_min;
            double inv_r = 1.0 / sqrt(r2);
            double gm = gmi * d->mass[j];
            double s = gm * inv_r * inv_r * inv_r;
            /* dV/dq_i = G m_i m_j (q_i - q_j) / r^3 = -s d, dV/dq_j = +s d */
            gx -= s * dx;
            gy -= s * dy;
            gz -= s * dz;
            grad[3 * j] += s * dx;
            grad[3 * j + 1] += s * dy;
            grad[3 * j + 2] += s * dz;
            if (want_potential)
                vi -= gm * inv_r;
        }
        grad[3 * i] += gx;
        grad[3 * i + 1] += gy;
        grad[3 * i + 2] += gz;
        V += vi;
    }
    if (r2_min < closest_squared)
        closest_squared = r2_min;
    return V;
}

static double force(const dm_instance *inst, const double *q, double *grad)
{
    return pair_sum(inst, q, grad, true);
}

static void gradient(const dm_instance *inst, const double *q, double *grad)
{
    (void)pair_sum(inst, q, grad, false);
}

static double potential(const dm_instance *inst, const double *q)
{
    const dm_nbody *d = bodies(inst);
    const double G = inst->param[P_G];
    double V = 0.0;
    for (int i = 0; i < d->n; i++) {
        double vi = 0.0;
        for (int j = i + 1; j < d->n; j++) {
            double dx = q[3 * j] - q[3 * i], dy = q[3 * j + 1] - q[3 * i + 1],
                   dz = q[3 * j + 2] - q[3 * i + 2];
            vi -= G * d->mass[i] * d->mass[j] / sqrt(dx * dx + dy * dy + dz * dz);
        }
        V += vi;
    }
    return V;
}

static double kinetic(const dm_instance *inst, const double *p)
{
    const dm_nbody *d = bodies(inst);
    double T = 0.0;
    for (int i = 0; i < d->n; i++)
        T += (p[3 * i] * p[3 * i] + p[3 * i + 1] * p[3 * i + 1] + p[3 * i + 2] * p[3 * i + 2]) *
             d->inverse_mass[i];
    return 0.5 * T;
}

static void velocity(const dm_instance *inst, const double *p, double *v)
{
    const dm_nbody *d = bodies(inst);
    for (int i = 0; i < d->n; i++)
        for (int k = 0; k < 3; k++)
            v[3 * i + k] = p[3 * i + k] * d->inverse_mass[i];
}

static double closest_approach(bool restart)
{
    double r = sqrt(closest_squared);
    if (restart)
        closest_squared = INFINITY;
    return r;
}

static void cross(const double *a, const double *b, double *out)
{
    out[0] = a[1] * b[2] - a[2] * b[1];
    out[1] = a[2] * b[0] - a[0] * b[2];
    out[2] = a[0] * b[1] - a[1] * b[0];
}

static double norm3(const double *a)
{
    return sqrt(a[0] * a[0] + a[1] * a[1] + a[2] * a[2]);
}

/* P, L and C of a state (sums in body order, the same in setup and in invariants). */
static void totals(const dm_instance *inst, const double *q, const double *p, double *P,
                   double *L, double *C)
{
    const dm_nbody *d = bodies(inst);
    double M = 0.0;
    for (int k = 0; k < 3; k++)
        P[k] = L[k] = C[k] = 0.0;
    for (int i = 0; i < d->n; i++) {
        double l[3];
        cross(q + 3 * i, p + 3 * i, l);
        for (int k = 0; k < 3; k++) {
            P[k] += p[3 * i + k];
            L[k] += l[k];
            C[k] += d->mass[i] * q[3 * i + k];
        }
        M += d->mass[i];
    }
    for (int k = 0; k < 3; k++)
        C[k] /= M;
}

static double distance3(const double *a, const double *b)
{
    double d[3] = { a[0] - b[0], a[1] - b[1], a[2] - b[2] };
    return norm3(d);
}

static void invariants(const dm_instance *inst, const double *q, const double *p, double *out)
{
    double P[3], L[3], C[3];
    totals(inst, q, p, P, L, C);
    out[0] = distance3(P, inst->derived + A_P0) / inst->derived[A_P_SCALE];
    out[1] = distance3(L, inst->derived + A_L0) / inst->derived[A_L_SCALE];
    out[2] = distance3(C, inst->derived + A_C0) / inst->derived[A_R_SCALE];
}

/* The section of the named body's orbit about its reference body, or none (level NaN:
 * never crossed): the plane through the reference body that holds the starting orbit's
 * apsidal line (its eccentricity vector, about G (m_body + m_ref)) and its angular
 * momentum. Each side of it holds half of a Kepler orbit, so a step shorter than half
 * the period cannot jump two crossings; the one counted (upward) is at apoapsis, where
 * the body is slowest. A nearly circular start (e < 1e-6) takes its starting radius as
 * the line, crossed half an orbit later; a start with no angular momentum (a radial
 * fall) the coordinate plane nearest its motion's line. *period gets the pair's
 * two-body period at the start (Kepler's third law, a = -G M / (2 E) per unit reduced
 * mass), NaN when the pair is unbound or there is no section. */
static dm_section period_section(const dm_nbody *d, double G, double *period)
{
    int b = d->period_body, r = d->period_around;
    *period = NAN;
    if (b < 0 || r < 0)
        return (dm_section){ .coord = 0, .level = NAN };
    double x[3], v[3], l[3];
    for (int k = 0; k < 3; k++) {
        x[k] = d->position[b][k] - d->position[r][k];
        v[k] = d->velocity[b][k] - d->velocity[r][k];
    }
    cross(x, v, l);
    dm_section s = { .coord = 3 * b, .level = 0.0, .relative = true, .ref = 3 * r };
    double rx = norm3(x), ln = norm3(l), mu = G * (d->mass[b] + d->mass[r]);
    double energy = 0.5 * (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]) - mu / rx;
    if (energy < 0.0) {
        double a = -mu / (2.0 * energy);
        *period = 2.0 * M_PI * sqrt(a * a * a / mu);
    }
    if (!(ln > 1e-12 * rx * norm3(v))) {
        int axis = 0;
        for (int k = 1; k < 3; k++)
            if (fabs(x[k]) < fabs(x[axis]))
                axis = k;
        s.normal[axis] = 1.0;
        return s;
    }
    double vl[3], e[3];
    cross(v, l, vl);
    for (int k = 0; k < 3; k++)
        e[k] = vl[k] / mu - x[k] / rx;
    double en = norm3(e);
    const double *line = en >= 1e-6 ? e : x;
    double line_n = en >= 1e-6 ? en : rx, u[3], lu[3];
    for (int k = 0; k < 3; k++) {
        u[k] = line[k] / line_n;
        lu[k] = l[k] / ln;
    }
    cross(u, lu, s.normal); /* value -|x| sin f: rising through 0 at f = pi */
    return s;
}

/* A body as an error names it: its name, or its place in the list. */
static void body_label(const dm_nbody *d, int i, char *out, size_t size)
{
    if (d->name[i][0] != '\0')
        snprintf(out, size, "body '%s'", d->name[i]);
    else
        snprintf(out, size, "body %d", i + 1);
}

static dm_status setup(dm_instance *inst, dm_error *err)
{
    const dm_nbody *d = bodies(inst);
    if (d->n < 2 || d->n > DM_NBODY_MAX)
        return dm_error_set(err, DM_EINPUT, "nbody: %d bodies (expected 2 to %d)", d->n,
                            DM_NBODY_MAX);
    inst->dof = 3 * d->n;
    /* Two bodies at one place: the pair's force is infinite from the start. */
    for (int i = 0; i < d->n; i++)
        for (int j = i + 1; j < d->n; j++)
            if (d->position[i][0] == d->position[j][0] &&
                d->position[i][1] == d->position[j][1] && d->position[i][2] == d->position[j][2]) {
                char a[DM_NBODY_NAME_MAX + 16], b[DM_NBODY_NAME_MAX + 16];
                body_label(d, i, a, sizeof a);
                body_label(d, j, b, sizeof b);
                return dm_error_set(err, DM_EINPUT, "nbody: %s and %s start at the same "
                                    "position (expected distinct positions)", a, b);
            }
    /* To the barycentric frame: the centre of mass at the origin, at rest. */
    double M = 0.0, C[3] = { 0, 0, 0 }, U[3] = { 0, 0, 0 };
    for (int i = 0; i < d->n; i++) {
        M += d->mass[i];
        for (int k = 0; k < 3; k++) {
            C[k] += d->mass[i] * d->position[i][k];
            U[k] += d->mass[i] * d->velocity[i][k];
        }
    }
    for (int i = 0; i < d->n; i++)
        for (int k = 0; k < 3; k++) {
            inst->q0[3 * i + k] = d->position[i][k] - C[k] / M;
            inst->p0[3 * i + k] = d->mass[i] * (d->velocity[i][k] - U[k] / M);
        }
    double *a = inst->derived;
    totals(inst, inst->q0, inst->p0, a + A_P0, a + A_L0, a + A_C0);
    double p_sum = 0.0, l_sum = 0.0, r_max = 0.0;
    for (int i = 0; i < d->n; i++) {
        double l[3];
        cross(inst->q0 + 3 * i, inst->p0 + 3 * i, l);
        p_sum += norm3(inst->p0 + 3 * i);
        l_sum += norm3(l);
        r_max = fmax(r_max, distance3(inst->q0 + 3 * i, a + A_C0));
    }
    a[A_MASS] = M;
    a[A_R_SCALE] = r_max;
    /* bodies starting at rest: the momentum of a body of mass M at the speed of a
     * circular orbit of radius R about mass M sets the scale */
    a[A_P_SCALE] = p_sum > 0.0 ? p_sum : M * sqrt(inst->param[P_G] * M / a[A_R_SCALE]);
    a[A_L_SCALE] = l_sum > 0.0 ? l_sum : a[A_R_SCALE] * a[A_P_SCALE];
    if (!(a[A_R_SCALE] > 0.0) || !(a[A_P_SCALE] > 0.0) || !isfinite(a[A_P_SCALE]) ||
        !(a[A_L_SCALE] > 0.0) || !isfinite(a[A_L_SCALE]))
        return dm_error_set(err, DM_EINPUT, "nbody: the bodies' momentum or angular "
                            "momentum scale (%.3g, %.3g from total mass %.3g, G %.3g and a "
                            "size %.3g) is zero or beyond double precision (expected masses, "
                            "G and velocities whose products stay within 1e-300 .. 1e300)",
                            a[A_P_SCALE], a[A_L_SCALE], M, inst->param[P_G], a[A_R_SCALE]);
    double grad[DM_MAX_DOF];
    inst->energy = kinetic(inst, inst->p0) + force(inst, inst->q0, grad);
    inst->regime = 0;
    inst->period = NAN;
    inst->first_crossing = NAN;
    inst->has_v_min = false; /* -G m_i m_j / r is unbounded below */
    inst->v_min = 0.0;
    inst->section = period_section(d, inst->param[P_G], &inst->period_osculating);
    return DM_OK;
}

/* The section's coordinate for the fused loop (dm_fused_loop.h). */
static inline __attribute__((always_inline)) double
section_value(const dm_instance *inst, const double *q, const int N, int coord)
{
    (void)N;
    (void)coord;
    return dm_section_value(&inst->section, q);
}

/* The fused loop with the pair sum inline. Up to 8 bodies the degrees of freedom are a
 * constant of their own copy of the loop (the state's copies unrolled, as for the
 * one-body problems); above, they are known only at run time and the components are
 * loops, as in a hand-written N-body loop. */
#define NBODY_FUSED(DOF)                                                                   \
    case DOF:                                                                              \
        return dm_fused_dispatch(inst, table, cache, run, k_end, DOF, force, velocity,     \
                                 kinetic, potential, section_value);
static int fused_loop(const dm_instance *inst, const dm_fused_table *table,
                      dm_fused_cache *cache, dm_fused_run *run, uint64_t k_end)
{
    switch (inst->dof) {
        NBODY_FUSED(6)
        NBODY_FUSED(9)
        NBODY_FUSED(12)
        NBODY_FUSED(15)
        NBODY_FUSED(18)
        NBODY_FUSED(21)
        NBODY_FUSED(24)
    default:
        return dm_fused_dispatch(inst, table, cache, run, k_end, inst->dof, force, velocity,
                                 kinetic, potential, section_value);
    }
}
#undef NBODY_FUSED

/* grad V and the velocities in dm_quad, for the reference trajectory: the same pair sum
 * (no closest approach kept: the reference is not the method), velocities p / m. */
static void gradient_quad(const dm_instance *inst, const dm_quad *q, dm_quad *grad)
{
    const dm_nbody *d = bodies(inst);
    const int n = d->n;
    const dm_quad G = inst->param[P_G];
    for (int k = 0; k < 3 * n; k++)
        grad[k] = 0;
    for (int i = 0; i < n; i++) {
        const dm_quad gmi = G * (dm_quad)d->mass[i];
        for (int j = i + 1; j < n; j++) {
            dm_quad dx = q[3 * j] - q[3 * i], dy = q[3 * j + 1] - q[3 * i + 1],
                    dz = q[3 * j + 2] - q[3 * i + 2];
            dm_quad r2 = dx * dx + dy * dy + dz * dz;
            dm_quad s = gmi * (dm_quad)d->mass[j] / (r2 * dm_quad_sqrt(r2));
            grad[3 * i] -= s * dx;
            grad[3 * i + 1] -= s * dy;
            grad[3 * i + 2] -= s * dz;
            grad[3 * j] += s * dx;
            grad[3 * j + 1] += s * dy;
            grad[3 * j + 2] += s * dz;
        }
    }
}

static void velocity_quad(const dm_instance *inst, const dm_quad *p, dm_quad *v)
{
    const dm_nbody *d = bodies(inst);
    for (int i = 0; i < d->n; i++)
        for (int k = 0; k < 3; k++)
            v[3 * i + k] = p[3 * i + k] / (dm_quad)d->mass[i];
}

const dm_problem dm_problem_nbody = {
    .id = "nbody",
    .name = "gravitational N-body problem in 3-D, H = sum |p_i|^2 / (2 m_i) - "
            "sum G m_i m_j / |q_i - q_j| (bodies from the suite)",
    .dof = DM_MAX_DOF,
    .n_params = 1,
    .params = {
        [P_G] = { "G", 1.0, 0.0, INFINITY, DM_PARAM_MIN_OPEN,
                  "gravitational constant in the units of the bodies (a suite must state "
                  "it)" },
    },
    .n_regimes = 1,
    .regimes = { { "any", "no closed-form period: the state's regime is not classified" } },
    .no_period = true,
    .needs_data = true,
    .setup = setup,
    .potential = potential,
    .force = force,
    .gradient = gradient,
    .kinetic = kinetic,
    .velocity = velocity,
    .fused_loop = fused_loop,
    .n_invariants = 3,
    .invariant_names = { "momentum", "angular_momentum", "centre_of_mass" },
    .invariant_errors = { DM_INVARIANT_DIFFERENCE, DM_INVARIANT_DIFFERENCE,
                          DM_INVARIANT_DIFFERENCE },
    .invariants = invariants,
    .closest_approach = closest_approach,
    .gradient_quad = gradient_quad,
    .velocity_quad = velocity_quad,
};
