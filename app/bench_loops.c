/* bench_loops.c — hand-written loops of Störmer–Verlet (kick-drift-kick) and Yoshida's
 * triple jump on the pendulum and on Kepler, for `driftmark bench` to time the harness
 * against, and CVODE called directly to time our adapter against. See bench_loops.h.
 *
 * Every loop keeps the force of its last kick for the next step's first kick (FSAL),
 * as the splitting engine does, and writes each update as the engine does
 * (p - (c h) f, q + (c h) p), so both end in the same state bit for bit.
 */
#include "bench_loops.h"

#include <float.h>
#include <math.h>

#include <cvode/cvode.h>
#include <cvode/cvode_ls.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_dense.h>
#include <sunmatrix/sunmatrix_dense.h>
#include <sunnonlinsol/sunnonlinsol_fixedpoint.h>
#include <sunnonlinsol/sunnonlinsol_newton.h>

#include "dm_clock.h"

/* The pendulum force of problems/pendulum.c written inline: g sin q and, when asked,
 * V = -g cos q from the same angle (gcc merges the pair into one sincos call). */
static inline double pendulum_grad(double g, double q, double *potential, int with_cos)
{
    double s = sin(q);
    if (with_cos)
        *potential = -g * cos(q);
    return g * s;
}

/* After a step of a splitting loop: the largest |T + V - H0| so far, as a hand loop
 * watching the energy would keep it (a loop that never evaluates V cannot). */
#define WATCH(T, with_V)                                                                 \
    do {                                                                                 \
        if (with_V) {                                                                    \
            double e_ = fabs((T) + V - H0);                                              \
            worst = e_ > worst ? e_ : worst;                                             \
        }                                                                                \
    } while (0)

static inline __attribute__((always_inline)) void
verlet_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                dm_bare_state *state, int with_cos)
{
    const double k0 = c->kick[0], d0 = c->drift[0], k1 = c->kick[1], H0 = c->H0;
    double q = state->q[0], p = state->p[0], V = NAN, worst = 0.0;
    double f = pendulum_grad(g, q, &V, with_cos);
    for (uint64_t n = 0; n < steps; n++) {
        p = p - k0 * f;
        q = q + d0 * p;
        f = pendulum_grad(g, q, &V, with_cos);
        p = p - k1 * f;
        WATCH(0.5 * p * p, with_cos);
    }
    state->q[0] = q;
    state->p[0] = p;
    state->potential = V;
    state->worst = worst;
}

static inline __attribute__((always_inline)) void
yoshida4_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                  dm_bare_state *state, int with_cos)
{
    const double k0 = c->kick[0], k1 = c->kick[1], k2 = c->kick[2], k3 = c->kick[3];
    const double d0 = c->drift[0], d1 = c->drift[1], d2 = c->drift[2], H0 = c->H0;
    double q = state->q[0], p = state->p[0], V = NAN, worst = 0.0;
    double f = pendulum_grad(g, q, &V, with_cos);
    for (uint64_t n = 0; n < steps; n++) {
        p = p - k0 * f;
        q = q + d0 * p;
        f = pendulum_grad(g, q, &V, with_cos);
        p = p - k1 * f;
        q = q + d1 * p;
        f = pendulum_grad(g, q, &V, with_cos);
        p = p - k2 * f;
        q = q + d2 * p;
        f = pendulum_grad(g, q, &V, with_cos);
        p = p - k3 * f;
        WATCH(0.5 * p * p, with_cos);
    }
    state->q[0] = q;
    state->p[0] = p;
    state->potential = V;
    state->worst = worst;
}

/* Each loop three ways: as the problem computes (its constant k read at run time),
 * never evaluating V (the pendulum's splitting loops), and with k = 1 written in so that
 * the compiler folds the products by it away (the bench uses that one only when the
 * case's k is 1: the arithmetic is then the same, x * 1 being x). */
#define BARE_SPLITTING_LOOPS(LOOP)                                                       \
    void dm_bare_##LOOP(double k, const dm_bare_coefficients *c, uint64_t steps,         \
                        dm_bare_state *state)                                            \
    {                                                                                    \
        LOOP(k, c, steps, state, 1);                                                     \
    }                                                                                    \
    void dm_bare_##LOOP##_folded(double k, const dm_bare_coefficients *c, uint64_t steps,\
                                 dm_bare_state *state)                                   \
    {                                                                                    \
        (void)k;                                                                         \
        LOOP(1.0, c, steps, state, 1);                                                   \
    }

BARE_SPLITTING_LOOPS(verlet_pendulum)
BARE_SPLITTING_LOOPS(yoshida4_pendulum)

void dm_bare_verlet_pendulum_sin_only(double g, const dm_bare_coefficients *c, uint64_t steps,
                                      dm_bare_state *state)
{
    verlet_pendulum(g, c, steps, state, 0);
}

void dm_bare_yoshida4_pendulum_sin_only(double g, const dm_bare_coefficients *c,
                                        uint64_t steps, dm_bare_state *state)
{
    yoshida4_pendulum(g, c, steps, state, 0);
}

/* The Kepler force of problems/kepler.c written inline: grad V = mu q / r^3 and
 * V = -mu / r from the one 1 / r. */
#define KEPLER_FORCE()                                                                  \
    do {                                                                                \
        double inv_r = 1.0 / sqrt(x * x + y * y);                                       \
        double k = mu * inv_r * inv_r * inv_r;                                          \
        fx = k * x;                                                                     \
        fy = k * y;                                                                     \
        V = -mu * inv_r;                                                                \
    } while (0)

#define KEPLER_KICK(ch)                                                                 \
    do {                                                                                \
        px = px - (ch) * fx;                                                            \
        py = py - (ch) * fy;                                                            \
    } while (0)

#define KEPLER_DRIFT(ch)                                                                \
    do {                                                                                \
        x = x + (ch) * px;                                                              \
        y = y + (ch) * py;                                                              \
    } while (0)

static inline __attribute__((always_inline)) void
verlet_kepler(double mu, const dm_bare_coefficients *c, uint64_t steps, dm_bare_state *state,
              int with_V)
{
    const double k0 = c->kick[0], d0 = c->drift[0], k1 = c->kick[1], H0 = c->H0;
    double x = state->q[0], y = state->q[1], px = state->p[0], py = state->p[1];
    double fx, fy, V, worst = 0.0;
    KEPLER_FORCE();
    for (uint64_t n = 0; n < steps; n++) {
        KEPLER_KICK(k0);
        KEPLER_DRIFT(d0);
        KEPLER_FORCE();
        KEPLER_KICK(k1);
        WATCH(0.5 * (px * px + py * py), with_V);
    }
    state->q[0] = x;
    state->q[1] = y;
    state->p[0] = px;
    state->p[1] = py;
    state->potential = V;
    state->worst = worst;
}

static inline __attribute__((always_inline)) void
yoshida4_kepler(double mu, const dm_bare_coefficients *c, uint64_t steps,
                dm_bare_state *state, int with_V)
{
    const double k0 = c->kick[0], k1 = c->kick[1], k2 = c->kick[2], k3 = c->kick[3];
    const double d0 = c->drift[0], d1 = c->drift[1], d2 = c->drift[2], H0 = c->H0;
    double x = state->q[0], y = state->q[1], px = state->p[0], py = state->p[1];
    double fx, fy, V, worst = 0.0;
    KEPLER_FORCE();
    for (uint64_t n = 0; n < steps; n++) {
        KEPLER_KICK(k0);
        KEPLER_DRIFT(d0);
        KEPLER_FORCE();
        KEPLER_KICK(k1);
        KEPLER_DRIFT(d1);
        KEPLER_FORCE();
        KEPLER_KICK(k2);
        KEPLER_DRIFT(d2);
        KEPLER_FORCE();
        KEPLER_KICK(k3);
        WATCH(0.5 * (px * px + py * py), with_V);
    }
    state->q[0] = x;
    state->q[1] = y;
    state->p[0] = px;
    state->p[1] = py;
    state->potential = V;
    state->worst = worst;
}

BARE_SPLITTING_LOOPS(verlet_kepler)
BARE_SPLITTING_LOOPS(yoshida4_kepler)

/* ---- classical RK4 and the implicit midpoint rule ----
 * y = (q, p) with N degrees of freedom in small arrays of constant size (the compiler
 * keeps them in registers), the slope f(y) = (p, -grad V(q)) with grad V written as the
 * problems' gradient() writes it, and V as their potential() does. */

static inline void pendulum_gradient(double g, const double *q, double *grad)
{
    grad[0] = g * sin(q[0]);
}

static inline double pendulum_potential(double g, const double *q)
{
    return -g * cos(q[0]);
}

static inline void kepler_gradient(double mu, const double *q, double *grad)
{
    double inv_r = 1.0 / sqrt(q[0] * q[0] + q[1] * q[1]);
    double k = mu * inv_r * inv_r * inv_r;
    grad[0] = k * q[0];
    grad[1] = k * q[1];
}

static inline double kepler_potential(double mu, const double *q)
{
    return -mu / sqrt(q[0] * q[0] + q[1] * q[1]);
}

typedef void bare_gradient(double k, const double *q, double *grad);
typedef double bare_potential(double k, const double *q);

static inline __attribute__((always_inline)) void
slope(double k, const double *y, double *f, const int N, bare_gradient *gradient)
{
    double grad[2];
    gradient(k, y, grad);
    for (int i = 0; i < N; i++) {
        f[i] = y[N + i];
        f[N + i] = -grad[i];
    }
}

/* After a step: V, and the largest |T + V - H0| so far. */
static inline __attribute__((always_inline)) void
watch_energy(double k, const double *y, double H0, double *V, double *worst, const int N,
             bare_potential *potential)
{
    double T = N == 1 ? 0.5 * y[1] * y[1] : 0.5 * (y[2] * y[2] + y[3] * y[3]);
    *V = potential(k, y);
    double e = fabs(T + *V - H0);
    *worst = e > *worst ? e : *worst;
}

static inline __attribute__((always_inline)) void
bare_start(const dm_bare_state *state, double *y, const int N)
{
    for (int i = 0; i < N; i++) {
        y[i] = state->q[i];
        y[N + i] = state->p[i];
    }
}

static inline __attribute__((always_inline)) void
bare_end(dm_bare_state *state, const double *y, double V, double worst, uint64_t steps,
         const int N)
{
    for (int i = 0; i < N; i++) {
        state->q[i] = y[i];
        state->p[i] = y[N + i];
    }
    state->potential = V;
    state->worst = worst;
    state->steps_done = steps;
}

/* RK4 as rk.c steps it: stage i at y + h (a_i,i-1 k_i-1), the end at
 * y + h (((b1 k1 + b2 k2) + b3 k3) + b4 k4), the tableau's numbers written in. */
static inline __attribute__((always_inline)) void
rk4_loop(double k, const dm_bare_coefficients *c, uint64_t steps, dm_bare_state *state,
         const int N, const bool with_energy, bare_gradient *gradient,
         bare_potential *potential)
{
    const double h = c->h, H0 = c->H0;
    const double b1 = 1.0 / 6.0, b2 = 1.0 / 3.0, b3 = 1.0 / 3.0, b4 = 1.0 / 6.0;
    double y[4], s[4], k1[4], k2[4], k3[4], k4[4], V = NAN, worst = 0.0;
    bare_start(state, y, N);
    for (uint64_t n = 0; n < steps; n++) {
        slope(k, y, k1, N, gradient);
        for (int i = 0; i < 2 * N; i++)
            s[i] = y[i] + h * (0.5 * k1[i]);
        slope(k, s, k2, N, gradient);
        for (int i = 0; i < 2 * N; i++)
            s[i] = y[i] + h * (0.5 * k2[i]);
        slope(k, s, k3, N, gradient);
        for (int i = 0; i < 2 * N; i++)
            s[i] = y[i] + h * (1.0 * k3[i]);
        slope(k, s, k4, N, gradient);
        for (int i = 0; i < 2 * N; i++)
            y[i] = y[i] + h * (b1 * k1[i] + b2 * k2[i] + b3 * k3[i] + b4 * k4[i]);
        if (with_energy)
            watch_energy(k, y, H0, &V, &worst, N, potential);
    }
    bare_end(state, y, V, worst, steps, N);
}

/* The implicit midpoint rule as midpoint.c steps it: the fixed-point iteration on
 * m = y + (h/2) f(m) from the last step's slope, stopped at a few ulps or at round-off
 * stagnation (dm_fused_loop.h has the rule and its constants: 4 and 1024 ulps). */
static inline __attribute__((always_inline)) void
midpoint_loop(double k, const dm_bare_coefficients *c, uint64_t steps, dm_bare_state *state,
              const int N, const bool with_energy, bare_gradient *gradient,
              bare_potential *potential)
{
    const double h = c->h, half_h = 0.5 * h, H0 = c->H0;
    const int max_iterations = c->max_iterations;
    double y[4], m[4], f[4] = { 0 }, V = NAN, worst = 0.0;
    bool have_slope = false;
    uint64_t n = 0;
    bare_start(state, y, N);
    for (; n < steps; n++) {
#pragma GCC unroll 4
        for (int i = 0; i < 2 * N; i++)
            m[i] = have_slope ? y[i] + half_h * f[i] : y[i];
        double previous = INFINITY;
        int it = 0;
        have_slope = false;
        while (it < max_iterations) {
            slope(k, m, f, N, gradient);
            it++;
            double update = 0.0, size = 0.0;
#pragma GCC unroll 4
            for (int i = 0; i < 2 * N; i++) {
                double next = y[i] + half_h * f[i];
                double d = fabs(next - m[i]), a = fabs(next);
                update = d > update ? d : update;
                size = a > size ? a : size;
                m[i] = next;
            }
            if (!isfinite(update))
                break;
            double ulp = DBL_EPSILON * size;
            if (update <= 4.0 * ulp || (update >= previous && update <= 1024.0 * ulp)) {
                have_slope = true;
                break;
            }
            previous = update;
        }
        if (!have_slope)
            break;
        for (int i = 0; i < 2 * N; i++)
            y[i] = y[i] + h * f[i];
        if (with_energy)
            watch_energy(k, y, H0, &V, &worst, N, potential);
    }
    bare_end(state, y, V, worst, n, N);
}

#define BARE_RK_LOOPS(LOOP, PROBLEM, N)                                                  \
    void dm_bare_##LOOP##_##PROBLEM(double k, const dm_bare_coefficients *c,            \
                                    uint64_t steps, dm_bare_state *state)               \
    {                                                                                   \
        LOOP##_loop(k, c, steps, state, N, true, PROBLEM##_gradient,                    \
                    PROBLEM##_potential);                                               \
    }                                                                                   \
    void dm_bare_##LOOP##_##PROBLEM##_folded(double k, const dm_bare_coefficients *c,   \
                                             uint64_t steps, dm_bare_state *state)      \
    {                                                                                   \
        (void)k;                                                                        \
        LOOP##_loop(1.0, c, steps, state, N, true, PROBLEM##_gradient,                  \
                    PROBLEM##_potential);                                               \
    }                                                                                   \
    void dm_bare_##LOOP##_##PROBLEM##_without_energy(double k, const dm_bare_coefficients *c, \
                                                     uint64_t steps, dm_bare_state *state) \
    {                                                                                   \
        LOOP##_loop(k, c, steps, state, N, false, PROBLEM##_gradient,                   \
                    PROBLEM##_potential);                                               \
    }

BARE_RK_LOOPS(rk4, pendulum, 1)
BARE_RK_LOOPS(rk4, kepler, 2)
BARE_RK_LOOPS(midpoint, pendulum, 1)
BARE_RK_LOOPS(midpoint, kepler, 2)

void dm_bare_through_problem(const dm_instance *inst, const dm_bare_coefficients *c,
                             uint64_t steps, dm_bare_state *state)
{
    double (*const force)(const dm_instance *, const double *, double *) = inst->problem->force;
    void (*const velocity)(const dm_instance *, const double *, double *) =
        inst->problem->velocity;
    const int dof = inst->dof < 2 ? inst->dof : 2, n_drift = c->n_drift;
    double q[2] = { state->q[0], state->q[1] }, p[2] = { state->p[0], state->p[1] };
    double grad[2], v[2];
    double V = force(inst, q, grad);
    for (uint64_t n = 0; n < steps; n++) {
        for (int i = 0; i < dof; i++)
            p[i] = p[i] - c->kick[0] * grad[i];
        for (int j = 0; j < n_drift; j++) {
            velocity(inst, p, v);
            for (int i = 0; i < dof; i++)
                q[i] = q[i] + c->drift[j] * v[i];
            V = force(inst, q, grad);
            for (int i = 0; i < dof; i++)
                p[i] = p[i] - c->kick[j + 1] * grad[i];
        }
    }
    for (int i = 0; i < dof; i++) {
        state->q[i] = q[i];
        state->p[i] = p[i];
    }
    state->potential = V;
}

/* ---- CVODE called directly ---- */

/* The pendulum as a first-order system written by hand: y = (q, p), y' = (p, -g sin q). */
static int direct_rhs(sunrealtype t, N_Vector y, N_Vector ydot, void *user_data)
{
    const double g = *(const double *)user_data;
    const double *x = N_VGetArrayPointer(y);
    double *dx = N_VGetArrayPointer(ydot);
    dx[0] = x[1];
    dx[1] = -(g * sin(x[0]));
    return 0;
}

/* J = [[0, 1], [-g cos q, 0]], column-major. */
static int direct_jacobian(sunrealtype t, N_Vector y, N_Vector fy, SUNMatrix J,
                           void *user_data, N_Vector tmp1, N_Vector tmp2, N_Vector tmp3)
{
    const double g = *(const double *)user_data;
    const double *x = N_VGetArrayPointer(y);
    double *j = SM_DATA_D(J);
    j[0] = 0.0;
    j[1] = -g * cos(x[0]);
    j[2] = 1.0;
    j[3] = 0.0;
    return 0;
}

long dm_bare_cvode_pendulum(double g, double q0, double p0, bool bdf, int max_order,
                            double rtol, double t_end, double *seconds)
{
    SUNContext ctx = NULL;
    void *mem = NULL;
    N_Vector y = NULL;
    SUNMatrix jac = NULL;
    SUNLinearSolver ls = NULL;
    SUNNonlinearSolver nls = NULL;
    long steps = -1;
    if (SUNContext_Create(NULL, &ctx) != 0)
        return -1;
    y = N_VNew_Serial(2, ctx);
    mem = CVodeCreate(bdf ? CV_BDF : CV_ADAMS, ctx);
    if (y == NULL || mem == NULL)
        goto done;
    N_VGetArrayPointer(y)[0] = q0;
    N_VGetArrayPointer(y)[1] = p0;
    int flag = CVodeInit(mem, direct_rhs, 0.0, y);
    flag |= CVodeSetUserData(mem, &g);
    flag |= CVodeSStolerances(mem, rtol, 1e-3 * rtol);
    flag |= CVodeSetMaxOrd(mem, max_order);
    flag |= CVodeSetStopTime(mem, t_end);
    if (bdf) {
        nls = SUNNonlinSol_Newton(y, ctx);
        jac = SUNDenseMatrix(2, 2, ctx);
        ls = jac ? SUNLinSol_Dense(y, jac, ctx) : NULL;
        if (nls == NULL || ls == NULL)
            goto done;
        flag |= CVodeSetLinearSolver(mem, ls, jac);
        flag |= CVodeSetJacFn(mem, direct_jacobian);
    } else {
        nls = SUNNonlinSol_FixedPoint(y, 0, ctx);
        if (nls == NULL)
            goto done;
    }
    flag |= CVodeSetNonlinearSolver(mem, nls);
    if (flag != CV_SUCCESS)
        goto done;
    double t = 0.0;
    long n = 0;
    double t0 = dm_clock_seconds();
    while (t < t_end) {
        if (CVode(mem, t_end, y, &t, CV_ONE_STEP) < 0)
            goto done;
        n++;
    }
    *seconds = dm_clock_seconds() - t0;
    steps = n;
done:
    if (mem)
        CVodeFree(&mem);
    if (nls)
        SUNNonlinSolFree(nls);
    if (ls)
        SUNLinSolFree(ls);
    if (jac)
        SUNMatDestroy(jac);
    if (y)
        N_VDestroy(y);
    SUNContext_Free(&ctx);
    return steps;
}
