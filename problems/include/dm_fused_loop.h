/* dm_fused_loop.h — the fused loop: any splitting table's steps and the per-step monitor
 * in one loop, compiled inside a problem's own file so that its force, velocity and
 * kinetic energy are inlined. A problem opts in with one line after its static
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

#include <math.h>
#include <string.h>

#include "dm_monitor.h"
#include "problem.h"

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

/* The loop, for a table shape and a dof given as constants by the call sites below, so
 * the compiler unrolls the stages and the components as a hand-written loop would and
 * inlines the problem's functions passed in as constants. */
static inline __attribute__((always_inline)) int
dm_fused_steps(const dm_instance *inst, const dm_fused_table *table, dm_fused_cache *cache,
               dm_fused_run *run, uint64_t k_end, const int N, const bool kick_first,
               const int n_kick, const int n_drift, dm_fused_force force,
               dm_fused_velocity velocity, dm_fused_kinetic kinetic,
               dm_fused_potential potential)
{
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
                                             dm_fused_component(q, N, mon.coord));
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
                  dm_fused_potential potential)
{
    const bool kf = table->kick_first;
    const int nk = table->n_kick, nd = table->n_drift;
#define DM_FUSED_SHAPE(KF, NK, ND)                                                        \
    dm_fused_steps(inst, table, cache, run, k_end, N, KF, NK, ND, force, velocity, kinetic, \
                   potential)
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
                                 kinetic, potential);                                       \
    }

#endif
