/* splitting_block.h — the fused loop: any splitting table's steps and the harness's
 * per-step monitors in one loop, compiled inside a problem's own file so that its
 * force, velocity and kinetic energy are inlined. A problem opts in with
 *
 *     #define DM_BLOCK_DOF 1          (its degrees of freedom, a constant)
 *     #include "splitting_block.h"    (after its static force/velocity/kinetic/potential)
 *     ... .split_block = dm_split_block, in its dm_problem table
 *
 * Bit for bit this does what dm_splitting_step (splitting.c) followed by the runner's
 * per-step monitors (harness/runner.c) do — the same operations in the same order — so
 * the fused and the per-step path give identical results (tests/test_runner.c checks
 * it). Only the cost differs: no calls through tables, the state in registers, the
 * degrees of freedom known to the compiler. Keep the three in step when changing any.
 */
#ifndef DM_BLOCK_DOF
#error "define DM_BLOCK_DOF before including splitting_block.h"
#endif

#include <math.h>
#include <string.h>

#include "method.h"

/* The loop, for a table shape given as arguments: called below with constants for the
 * common shapes, so the compiler unrolls the stages as a hand-written loop would. */
static inline __attribute__((always_inline)) int
dm_split_block_run(const dm_instance *inst, const dm_split_plan *plan, dm_split_cache *cache,
                   dm_watch *w, uint64_t k_end, const bool kick_first, const int n_kick,
                   const int n_drift)
{
    enum { N = DM_BLOCK_DOF };
    double q[N], p[N], g[N], v[N];
    double q_prev[N] = { 0 }, p_prev[N] = { 0 }; /* set by every step; zeroed for the compiler */
    for (int i = 0; i < N; i++) {
        q[i] = w->x[i];
        p[i] = w->x[N + i];
        g[i] = cache->grad[i];
    }
    double V = cache->potential;
    bool valid = cache->valid;
    const double *ck = plan->kick, *cd = plan->drift;
    const double H0 = w->H0, inv_scale = w->inv_scale, limit = w->energy_limit;
    const int coord = w->coord;
    const double wrap = w->wrap;
    double level = w->level;
    bool armed = w->armed;
    double bmin = w->bmin, bmax = w->bmax, dE = w->dE;
    uint64_t k = w->k, forces = 0, velocities = 0;
    int event = DM_WATCH_END;

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

        dE = (kinetic(inst, p) + V - H0) * inv_scale;
        if (dE < bmin)
            bmin = dE;
        if (dE > bmax)
            bmax = dE;
        if (!(fabs(dE) <= limit)) {
            event = DM_WATCH_DIVERGED;
            break;
        }
        double qk = q[coord];
        if (wrap > 0.0) {
            if (qk >= level) {
                w->crossed_level = level;
                level += wrap;
                event = DM_WATCH_CROSSING;
                break;
            } else if (qk < level - wrap) {
                level -= wrap;
            }
        } else {
            bool crossed = armed && qk >= level;
            armed = qk < level;
            if (crossed) {
                w->crossed_level = level;
                event = DM_WATCH_CROSSING;
                break;
            }
        }
    }

    for (int i = 0; i < N; i++) {
        w->x[i] = q[i];
        w->x[N + i] = p[i];
        cache->grad[i] = g[i];
    }
    if (event != DM_WATCH_END) {
        for (int i = 0; i < N; i++) {
            w->x_prev[i] = q_prev[i];
            w->x_prev[N + i] = p_prev[i];
        }
    }
    cache->potential = V;
    cache->valid = valid;
    cache->forces += forces;
    cache->velocities += velocities;
    w->level = level;
    w->armed = armed;
    w->bmin = bmin;
    w->bmax = bmax;
    w->dE = dE;
    w->k = k;
    return event;
}

static int dm_split_block(const dm_instance *inst, const dm_split_plan *plan,
                          dm_split_cache *cache, dm_watch *w, uint64_t k_end)
{
    const bool kf = plan->kick_first;
    const int nk = plan->n_kick, nd = plan->n_drift;
    if (kf && nk == 2 && nd == 1) /* Störmer–Verlet KDK */
        return dm_split_block_run(inst, plan, cache, w, k_end, true, 2, 1);
    if (kf && nk == 4 && nd == 3) /* triple jumps of KDK: yoshida4 */
        return dm_split_block_run(inst, plan, cache, w, k_end, true, 4, 3);
    if (!kf && nk == 1 && nd == 2) /* Störmer–Verlet DKD */
        return dm_split_block_run(inst, plan, cache, w, k_end, false, 1, 2);
    return dm_split_block_run(inst, plan, cache, w, k_end, kf, nk, nd);
}
