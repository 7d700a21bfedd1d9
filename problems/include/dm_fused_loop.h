/* dm_fused_loop.h — the fused loops: any splitting table's steps (and, below, a
 * Runge-Kutta tableau's or the implicit midpoint rule's) and the per-step monitor in one
 * loop, compiled inside a problem's own file so that its force, velocity and kinetic
 * energy are inlined. A problem opts in with one line after its static
 * force/velocity/kinetic/potential functions,
 *
 *     DM_FUSED_LOOP(fused_loop, 1)        (the name to define, the degrees of freedom)
 *
 * and `.fused_loop = fused_loop` in its dm_problem table.
 *
 * The steps do what dm_splitting_step (integrators/splitting.c) does, the same
 * operations in the same order, and the monitor is the one every path uses
 * (dm_monitor.h), so the fused and the per-step path give identical results
 * (tests/test_runner.c checks it). Only the cost differs: no calls through tables, the
 * state in registers, the degrees of freedom known to the compiler. Change the step
 * arithmetic here and in splitting.c together.
 */
#ifndef DM_FUSED_LOOP_H
#define DM_FUSED_LOOP_H

#include <float.h>
#include <math.h>
#include <string.h>

#include "dm_monitor.h"
#include "problem.h"

/* gcc's -Wmaybe-uninitialized, silenced where a value is provably written before use
 * but gcc cannot see it (clang has no such warning). */
#if defined(__GNUC__) && !defined(__clang__)
#define DM_SILENCE_MAYBE_UNINITIALIZED_BEGIN                                              \
    _Pragma("GCC diagnostic push") _Pragma("GCC diagnostic ignored \"-Wmaybe-uninitialized\"")
#define DM_SILENCE_MAYBE_UNINITIALIZED_END _Pragma("GCC diagnostic pop")
#else
#define DM_SILENCE_MAYBE_UNINITIALIZED_BEGIN
#define DM_SILENCE_MAYBE_UNINITIALIZED_END
#endif

typedef double (*dm_fused_force)(const dm_instance *inst, const double *q, double *grad);
typedef double (*dm_fused_potential)(const dm_instance *inst, const double *q);
typedef double (*dm_fused_kinetic)(const dm_instance *inst, const double *p);
typedef void (*dm_fused_velocity)(const dm_instance *inst, const double *p, double *v);

/* q[coord] without indexing the array by a run-time number, so that q can stay in
 * registers: for N = 1 it is q[0]; above, a chain of selects the compiler unrolls. */
static inline __attribute__((always_inline)) double
dm_fused_component(const double *q, const int N, int coord)
{
    double v = q[0];
    for (int i = 1; i < N; i++)
        v = (i == coord) ? q[i] : v;
    return v;
}

/* The coordinate the section watches at q, as the loop sees it: q[coord] for every
 * problem with a plain section (dm_fused_section_plain); a problem with a relative
 * section (N-body, dm_section_value) writes its own and calls dm_fused_dispatch. */
typedef double (*dm_fused_section)(const dm_instance *inst, const double *q, const int N,
                                   int coord);

static inline __attribute__((always_inline)) double
dm_fused_section_plain(const dm_instance *inst, const double *q, const int N, int coord)
{
    (void)inst;
    return dm_fused_component(q, N, coord);
}

/* The loop, for a table shape and a dof given as constants by the call sites below, so
 * the compiler unrolls the stages and the components as a hand-written loop would and
 * inlines the problem's functions passed in as constants. */
static inline __attribute__((always_inline)) int
dm_fused_steps(const dm_instance *inst, const dm_fused_table *table, dm_fused_cache *cache,
               dm_fused_run *run, uint64_t k_end, const int N, const bool kick_first,
               const int n_kick, const int n_drift, dm_fused_force force,
               dm_fused_velocity velocity, dm_fused_kinetic kinetic,
               dm_fused_potential potential, dm_fused_section section)
{
    /* q_prev and p_prev are zeroed for gcc's sake only (an event, after which they are
     * read, is set only inside the loop, after a step wrote them). Measured with
     * callgrind, the zeroing (once a call) leaves a faster loop than leaving them
     * unset with the warning silenced. */
    double q[DM_MAX_DOF], p[DM_MAX_DOF], g[DM_MAX_DOF], v[DM_MAX_DOF];
    double q_prev[DM_MAX_DOF] = { 0 }, p_prev[DM_MAX_DOF] = { 0 };
    for (int i = 0; i < N; i++) {
        q[i] = run->x[i];
        p[i] = run->x[N + i];
        g[i] = cache->grad[i];
    }
    double V = cache->potential;
    bool valid = cache->valid;
    const double *ck = table->kick, *cd = table->drift;
    dm_step_monitor mon = run->monitor; /* a local copy: kept in registers */
    uint64_t k = run->k, forces = 0, velocities = 0;
    int event = DM_FUSED_END;

    while (k < k_end) {
        for (int i = 0; i < N; i++) {
            q_prev[i] = q[i];
            p_prev[i] = p[i];
        }
        if (kick_first) {
            /* K D K D ... [K]; the first kick reuses the last step's final force. */
            if (!valid) {
                V = force(inst, q, g);
                forces++;
            }
            for (int i = 0; i < N; i++)
                p[i] = p[i] - ck[0] * g[i];
            /* Unrolled for the constant shapes, so that the potential of every force
             * but the step's last is seen to be unused (sin instead of sincos). */
#pragma GCC unroll 16
            for (int j = 0; j < n_drift; j++) {
                velocity(inst, p, v);
                velocities++;
                for (int i = 0; i < N; i++)
                    q[i] = q[i] + cd[j] * v[i];
                if (j + 1 < n_kick) {
                    V = force(inst, q, g);
                    forces++;
                    for (int i = 0; i < N; i++)
                        p[i] = p[i] - ck[j + 1] * g[i];
                }
            }
            valid = n_kick > n_drift;
            if (!valid)
                V = potential(inst, q);
        } else {
            /* D K D K ... [D] */
#pragma GCC unroll 16
            for (int j = 0; j < n_drift; j++) {
                velocity(inst, p, v);
                velocities++;
                for (int i = 0; i < N; i++)
                    q[i] = q[i] + cd[j] * v[i];
                if (j < n_kick) {
                    V = force(inst, q, g);
                    forces++;
                    for (int i = 0; i < N; i++)
                        p[i] = p[i] - ck[j] * g[i];
                }
            }
            valid = false;
            if (n_drift > n_kick)
                V = potential(inst, q);
        }
        k++;

        dm_step_event ev = dm_monitor_step(&mon, kinetic(inst, p), V,
                                             section(inst, q, N, mon.coord));
        if (ev != DM_STEP_QUIET) {
            event = (int)ev; /* the same numbers as dm_fused_event's (problem.h) */
            break;
        }
    }

    for (int i = 0; i < N; i++) {
        run->x[i] = q[i];
        run->x[N + i] = p[i];
        cache->grad[i] = g[i];
    }
    if (event != DM_FUSED_END) {
        for (int i = 0; i < N; i++) {
            run->x_prev[i] = q_prev[i];
            run->x_prev[N + i] = p_prev[i];
        }
    }
    cache->potential = V;
    cache->valid = valid;
    cache->forces += forces;
    cache->velocities += velocities;
    run->monitor = mon;
    run->k = k;
    return event;
}

/* The common table shapes get their own copy of the loop with the shape constant. */
static inline __attribute__((always_inline)) int
dm_fused_dispatch(const dm_instance *inst, const dm_fused_table *table, dm_fused_cache *cache,
                  dm_fused_run *run, uint64_t k_end, const int N, dm_fused_force force,
                  dm_fused_velocity velocity, dm_fused_kinetic kinetic,
                  dm_fused_potential potential, dm_fused_section section)
{
    const bool kf = table->kick_first;
    const int nk = table->n_kick, nd = table->n_drift;
#define DM_FUSED_SHAPE(KF, NK, ND)                                                        \
    dm_fused_steps(inst, table, cache, run, k_end, N, KF, NK, ND, force, velocity, kinetic, \
                   potential, section)
    if (kf && nk == 2 && nd == 1) /* Störmer–Verlet KDK */
        return DM_FUSED_SHAPE(true, 2, 1);
    if (kf && nk == 4 && nd == 3) /* triple jumps of KDK: yoshida4 */
        return DM_FUSED_SHAPE(true, 4, 3);
    if (!kf && nk == 1 && nd == 2) /* Störmer–Verlet DKD */
        return DM_FUSED_SHAPE(false, 1, 2);
    return DM_FUSED_SHAPE(kf, nk, nd);
#undef DM_FUSED_SHAPE
}

/* Defines `static int NAME(...)`, the problem's fused loop, over its static force,
 * velocity, kinetic and potential functions, for DOF degrees of freedom. */
#define DM_FUSED_LOOP(NAME, DOF)                                                           \
    _Static_assert((DOF) >= 1 && (DOF) <= DM_MAX_DOF, "DM_FUSED_LOOP: DOF out of range");  \
    static int NAME(const dm_instance *inst, const dm_fused_table *table,                   \
                    dm_fused_cache *cache, dm_fused_run *run, uint64_t k_end)               \
    {                                                                                       \
        return dm_fused_dispatch(inst, table, cache, run, k_end, (DOF), force, velocity,    \
                                 kinetic, potential, dm_fused_section_plain);               \
    }

/* ==== the Runge-Kutta family ====
 * The step arithmetic of explicit tableaux and of the implicit midpoint rule, written
 * once: the per-step paths (integrators/rk.c, integrators/midpoint.c) call these
 * functions with the problem's functions through the table and the dof known at run
 * time, the fused loop below with them inline and the dof and the tableau's shape as
 * constants. The slopes are f(y) = (grad T(p), -grad V(q)), grad V from gradient(). */

/* The shipped tableaux, written once: integrators/rk.c runs them, and the fused loop
 * recognises them so that their numbers are constants it folds in (zero terms and
 * products by 1 vanish at compile time). */
/* Explicit Euler: y1 = y0 + h f(y0) (common practice). */
static const dm_rk_tableau dm_rk_euler_tableau = { .stages = 1, .b = { 1.0 } };
/* Classical RK4 (Kutta 1901; Hairer, Nørsett, Wanner, Solving ODEs I, §II.1; from
 * memory of the book). */
static const dm_rk_tableau dm_rk4_tableau = {
    .stages = 4,
    .a = { { 0 }, { 0.5 }, { 0.0, 0.5 }, { 0.0, 0.0, 1.0 } },
    .b = { 1.0 / 6.0, 1.0 / 3.0, 1.0 / 3.0, 1.0 / 6.0 },
};

/* Whether two tableaux hold the same numbers. */
static inline bool dm_rk_same_tableau(const dm_rk_tableau *x, const dm_rk_tableau *y)
{
    if (x->stages != y->stages)
        return false;
    for (int i = 0; i < x->stages; i++) {
        if (x->b[i] != y->b[i])
            return false;
        for (int j = 0; j < i; j++)
            if (x->a[i][j] != y->a[i][j])
                return false;
    }
    return true;
}

/* One explicit step y1 = y0 + h sum_i b_i k_i, stage i at y0 + h sum_j a_ij k_j, with
 * S = t->stages a constant (dm_rk_explicit_step_any below for any t). Every sum runs over the nonzero coefficients only, in order, and
 * starts from its first term; a sum with no term leaves y0 as it is. When t points to
 * one of the constant tableaux above, the zero tests are decided at compile time.
 * y1 may not be y0. */
static inline __attribute__((always_inline)) void
dm_rk_explicit_step(const dm_instance *inst, const dm_rk_tableau *t, double h,
                    const double *y0, double *y1, const int N, const int S,
                    dm_gradient_fn gradient, dm_fused_velocity velocity)
{
    /* y[0 .. 2N) is written before every use; with a dof known only at run time (the
     * per-step path) gcc cannot see it. Zeroing y for its sake would cost 2 DM_MAX_DOF
     * stores a step, so the warning is silenced here instead. */
DM_SILENCE_MAYBE_UNINITIALIZED_BEGIN
    double k[DM_RK_MAX_STAGES][2 * DM_MAX_DOF], y[2 * DM_MAX_DOF];
#pragma GCC unroll 4
    for (int i = 0; i < S; i++) {
#pragma GCC unroll 12
        for (int c = 0; c < 2 * N; c++) {
            double sum = 0.0;
            bool any = false;
#pragma GCC unroll 4
            for (int j = 0; j < i; j++) {
                if (t->a[i][j] == 0.0)
                    continue;
                double term = t->a[i][j] * k[j][c];
                sum = any ? sum + term : term;
                any = true;
            }
            y[c] = any ? y0[c] + h * sum : y0[c];
        }
        velocity(inst, y + N, k[i]);
        gradient(inst, y, k[i] + N);
#pragma GCC unroll 12
        for (int c = N; c < 2 * N; c++)
            k[i][c] = -k[i][c];
    }
#pragma GCC unroll 12
    for (int c = 0; c < 2 * N; c++) {
        double sum = 0.0;
        bool any = false;
#pragma GCC unroll 4
        for (int i = 0; i < S; i++) {
            if (t->b[i] == 0.0)
                continue;
            double term = t->b[i] * k[i][c];
            sum = any ? sum + term : term;
            any = true;
        }
        y1[c] = any ? y0[c] + h * sum : y0[c];
    }
DM_SILENCE_MAYBE_UNINITIALIZED_END
}

/* The same for a tableau known at run time: S made a constant by a switch up to 4
 * stages; longer tables (typed in a suite) loop over their stages. */
static inline __attribute__((always_inline)) void
dm_rk_explicit_step_any(const dm_instance *inst, const dm_rk_tableau *t, double h,
                        const double *y0, double *y1, const int N, dm_gradient_fn gradient,
                        dm_fused_velocity velocity)
{
    switch (t->stages) {
    case 1: dm_rk_explicit_step(inst, t, h, y0, y1, N, 1, gradient, velocity); break;
    case 2: dm_rk_explicit_step(inst, t, h, y0, y1, N, 2, gradient, velocity); break;
    case 3: dm_rk_explicit_step(inst, t, h, y0, y1, N, 3, gradient, velocity); break;
    case 4: dm_rk_explicit_step(inst, t, h, y0, y1, N, 4, gradient, velocity); break;
    default: dm_rk_explicit_step(inst, t, h, y0, y1, N, t->stages, gradient, velocity); break;
    }
}

/* One explicit Runge-Kutta-Nystrom step for q'' = -M^-1 grad V(q) with grad T(p) = M^-1 p
 * linear in p (Hairer, Norsett, Wanner, Solving ODEs I, 2nd ed. 1993, section II.14; from
 * memory of the book): with v0 = grad T(p0),
 *   Q_i = q0 + c_i h v0 + h^2 sum_j abar_ij g_j,  f_i = -grad V(Q_i),  g_i = grad T(f_i),
 *   p1 = p0 + h sum_i b_i f_i,  q1 = q0 + h v0 + h^2 sum_i bbar_i g_i
 * (g_i the acceleration M^-1 f_i). S forces and S + 1 velocities a step. y1 may not be
 * y0. */
static inline __attribute__((always_inline)) void
dm_rkn_step(const dm_instance *inst, const dm_rkn_tableau *t, double h, const double *y0,
            double *y1, const int N, const int S, dm_gradient_fn gradient,
            dm_fused_velocity velocity)
{
    DM_SILENCE_MAYBE_UNINITIALIZED_BEGIN
    double f[DM_RK_MAX_STAGES][DM_MAX_DOF], g[DM_RK_MAX_STAGES][DM_MAX_DOF];
    double v0[DM_MAX_DOF], Q[DM_MAX_DOF];
    const double h2 = h * h;
    velocity(inst, y0 + N, v0);
    for (int i = 0; i < S; i++) {
        for (int c = 0; c < N; c++) {
            double sum = 0.0;
            for (int j = 0; j < i; j++)
                sum += t->abar[i][j] * g[j][c];
            Q[c] = y0[c] + t->c[i] * h * v0[c] + h2 * sum;
        }
        gradient(inst, Q, f[i]);
        for (int c = 0; c < N; c++)
            f[i][c] = -f[i][c];
        velocity(inst, f[i], g[i]);
    }
    for (int c = 0; c < N; c++) {
        double sum_b = 0.0, sum_bbar = 0.0;
        for (int i = 0; i < S; i++) {
            sum_b += t->b[i] * f[i][c];
            sum_bbar += t->bbar[i] * g[i][c];
        }
        y1[N + c] = y0[N + c] + h * sum_b;
        y1[c] = y0[c] + h * v0[c] + h2 * sum_bbar;
    }
    DM_SILENCE_MAYBE_UNINITIALIZED_END
}

/* Updates below this many ulps of |k| count as converged. */
#define DM_MIDPOINT_CONVERGED_ULPS 4.0
/* An update that no longer shrinks is accepted as the round-off floor only when it is
 * already this small (in ulps of |k|); otherwise the iteration goes on (and fails at
 * the cap if it diverges or oscillates). */
#define DM_MIDPOINT_STAGNATION_ULPS 1024.0

/* max(a, b) for an a that is never NaN: b when b > a, else a (so a NaN b is passed
 * over). It is fmax(a, b) whenever a is not NaN and neither is -0, which holds for the
 * non-negative sizes below, and it compiles to one maxsd where fmax is a call. */
static inline double dm_larger(double a, double b)
{
    return b > a ? b : a;
}

/* One implicit midpoint step y1 = y0 + h f(k), k = y0 + (h/2) f(k) solved by fixed-point
 * iteration from the predictor y0 + (h/2) f (the last step's slope, when *slope_valid)
 * or y0, until the update is below a few ulps of k or stops shrinking at round-off
 * level. f holds the slope at the last iterate on return (the next predictor). Returns
 * whether it converged within max_iterations; *iterations and *update say how it went.
 * Without convergence y1 is not written and *slope_valid is cleared. */
static inline __attribute__((always_inline)) bool
dm_midpoint_step(const dm_instance *inst, double h, int max_iterations, const double *y0,
                 double *y1, double *f, bool *slope_valid, const int N,
                 dm_gradient_fn gradient, dm_fused_velocity velocity, int *iterations,
                 double *update_out)
{
    const double half_h = 0.5 * h;
    double k[2 * DM_MAX_DOF];
#pragma GCC unroll 12
    for (int c = 0; c < 2 * N; c++)
        k[c] = *slope_valid ? y0[c] + half_h * f[c] : y0[c];

    double previous_update = INFINITY, update = INFINITY;
    int it = 0;
    bool converged = false;
    while (it < max_iterations) {
        velocity(inst, k + N, f);
        gradient(inst, k, f + N);
        it++;
        update = 0.0;
        double size = 0.0;
#pragma GCC unroll 12
        for (int c = 0; c < 2 * N; c++) {
            if (c >= N)
                f[c] = -f[c];
            double next = y0[c] + half_h * f[c];
            update = dm_larger(update, fabs(next - k[c]));
            size = dm_larger(size, fabs(next));
            k[c] = next;
        }
        if (!isfinite(update))
            break;
        double ulp = DBL_EPSILON * size;
        if (update <= DM_MIDPOINT_CONVERGED_ULPS * ulp ||
            (update >= previous_update && update <= DM_MIDPOINT_STAGNATION_ULPS * ulp)) {
            converged = true;
            break;
        }
        previous_update = update;
    }
    *iterations = it;
    *update_out = update;
    *slope_valid = converged;
    if (converged) {
        /* y1 = y0 + h f(k) with f taken at the iterate the last update came from. */
        for (int c = 0; c < 2 * N; c++)
            y1[c] = y0[c] + h * f[c];
    }
    return converged;
}

/* The fused Runge-Kutta loop: steps and the per-step monitor from run->k until k_end
 * or an event. t is the explicit tableau (NULL: the implicit midpoint rule), S its
 * number of stages when t is one of the constant tableaux, else -1. The state before a step stays in y0 while the step writes y1: no copy
 * is made for x_prev. */
static inline __attribute__((always_inline)) int
dm_fused_rk_steps(const dm_instance *inst, const dm_fused_rk *method,
                  const dm_rk_tableau *t, dm_fused_rk_cache *cache, dm_fused_run *run,
                  uint64_t k_end, const int N, const int S, const bool nystrom,
                  dm_gradient_fn gradient, dm_fused_velocity velocity,
                  dm_fused_kinetic kinetic, dm_fused_potential potential)
{
    double y0[2 * DM_MAX_DOF], y1[2 * DM_MAX_DOF], f[2 * DM_MAX_DOF];
    for (int c = 0; c < 2 * N; c++) {
        y0[c] = run->x[c];
        f[c] = cache->slope[c];
    }
    bool slope_valid = cache->slope_valid;
    const double h = method->h;
    const int max_iterations = method->max_iterations;
    dm_step_monitor mon = run->monitor; /* a local copy: kept in registers */
    const uint64_t k_start = run->k;
    uint64_t k = k_start, evaluations = 0, most = cache->max_iterations_in_step;
    int event = DM_FUSED_END;

    while (k < k_end) {
        if (t == NULL && !nystrom) {
            int it;
            double update;
            bool ok = dm_midpoint_step(inst, h, max_iterations, y0, y1, f, &slope_valid, N,
                                       gradient, velocity, &it, &update);
            evaluations += (uint64_t)it;
            most = (uint64_t)it > most ? (uint64_t)it : most;
            if (!ok) {
                cache->failed_iterations = it;
                cache->failed_update = update;
                event = DM_FUSED_FAILED;
                break;
            }
        } else if (nystrom) {
            dm_rkn_step(inst, method->nystrom, h, y0, y1, N, method->nystrom->stages,
                        gradient, velocity);
        } else if (S > 0) {
            dm_rk_explicit_step(inst, t, h, y0, y1, N, S, gradient, velocity);
        } else {
            dm_rk_explicit_step_any(inst, t, h, y0, y1, N, gradient, velocity);
        }
        k++;
        dm_step_event ev = dm_monitor_step(&mon, kinetic(inst, y1 + N), potential(inst, y1),
                                           dm_fused_component(y1, N, mon.coord));
        if (ev != DM_STEP_QUIET) {
            event = (int)ev; /* the same numbers as dm_fused_event's (problem.h) */
            for (int c = 0; c < 2 * N; c++) {
                run->x_prev[c] = y0[c];
                y0[c] = y1[c];
            }
            break;
        }
        for (int c = 0; c < 2 * N; c++)
            y0[c] = y1[c];
    }
    for (int c = 0; c < 2 * N; c++) {
        run->x[c] = y0[c];
        cache->slope[c] = f[c];
    }
    cache->slope_valid = slope_valid;
    cache->evaluations += nystrom    ? (k - k_start) * (uint64_t)method->nystrom->stages
                          : t == NULL ? evaluations
                                      : (k - k_start) * (uint64_t)t->stages;
    cache->max_iterations_in_step = most;
    run->monitor = mon;
    run->k = k;
    return event;
}

/* Defines `static int NAME(...)`, the problem's fused Runge-Kutta loop, over its static
 * gradient, velocity, kinetic and potential functions, for DOF degrees of freedom: one
 * function per shape (the implicit midpoint rule, RK4, Euler, any other tableau), each
 * compiled on its own so that each gets the registers to itself. */
#define DM_FUSED_RK_SHAPE(NAME, SHAPE, T, S, NYSTROM, DOF)                                 \
    static __attribute__((noinline)) int NAME##_##SHAPE(                                   \
        const dm_instance *inst, const dm_fused_rk *method, dm_fused_rk_cache *cache,      \
        dm_fused_run *run, uint64_t k_end)                                                 \
    {                                                                                       \
        return dm_fused_rk_steps(inst, method, (T), cache, run, k_end, (DOF), (S),         \
                                 (NYSTROM), gradient, velocity, kinetic, potential);       \
    }
#define DM_FUSED_RK_LOOP(NAME, DOF)                                                        \
    _Static_assert((DOF) >= 1 && (DOF) <= DM_MAX_DOF, "DM_FUSED_RK_LOOP: DOF out of range"); \
    DM_FUSED_RK_SHAPE(NAME, midpoint, NULL, -1, false, DOF)                                 \
    DM_FUSED_RK_SHAPE(NAME, rk4, &dm_rk4_tableau, 4, false, DOF)                            \
    DM_FUSED_RK_SHAPE(NAME, euler, &dm_rk_euler_tableau, 1, false, DOF)                     \
    DM_FUSED_RK_SHAPE(NAME, any, method->tableau, -1, false, DOF)                           \
    DM_FUSED_RK_SHAPE(NAME, nystrom, NULL, -1, true, DOF)                                   \
    static int NAME(const dm_instance *inst, const dm_fused_rk *method,                    \
                    dm_fused_rk_cache *cache, dm_fused_run *run, uint64_t k_end)            \
    {                                                                                       \
        const dm_rk_tableau *t = method->tableau;                                           \
        if (method->nystrom != NULL)                                                        \
            return NAME##_nystrom(inst, method, cache, run, k_end);                         \
        if (t == NULL)                                                                      \
            return NAME##_midpoint(inst, method, cache, run, k_end);                        \
        if (dm_rk_same_tableau(t, &dm_rk4_tableau))                                         \
            return NAME##_rk4(inst, method, cache, run, k_end);                             \
        if (dm_rk_same_tableau(t, &dm_rk_euler_tableau))                                    \
            return NAME##_euler(inst, method, cache, run, k_end);                           \
        return NAME##_any(inst, method, cache, run, k_end);                                 \
    }

#endif
