/* bench_loops.h — the hand-written loops `driftmark bench` measures the harness against.
 *
 * Each loop is what one would write by hand for one method on one problem: the force
 * inline, no function pointers, no monitors. Each computes exactly the arithmetic the
 * splitting engine and the problem's force() do, in the same order, so after the same
 * number of steps it ends in the same state bit for bit; the bench checks that. The
 * force evaluation is the problem's (grad V and V together, as force() returns both),
 * so the loops differ from the harness only by what the harness adds. */
#ifndef DM_BENCH_LOOPS_H
#define DM_BENCH_LOOPS_H

#include <stdint.h>

#include "problem.h"

/* The end of a bare run: the state and V(q) of its last force evaluation. */
typedef struct dm_bare_state {
    double q[2], p[2];
    double potential;
} dm_bare_state;

/* Kick-drift-kick coefficients times h, in the order applied: kick[0], drift[0],
 * kick[1], drift[1], ..., kick[n_drift]. */
typedef struct dm_bare_coefficients {
    int n_drift;          /* 1 for Störmer–Verlet, 3 for Yoshida's triple jump */
    double kick[4];
    double drift[3];
} dm_bare_coefficients;

/* Pendulum H = p^2/2 - g cos q. When `with_cos` is false the loop evaluates sin only
 * (what a loop that never looks at the energy needs); state->potential is then NaN. */
void dm_bare_verlet_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                             dm_bare_state *state, int with_cos);
void dm_bare_yoshida4_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                               dm_bare_state *state, int with_cos);

/* Kepler H = |p|^2/2 - mu / |q|. */
void dm_bare_verlet_kepler(double mu, const dm_bare_coefficients *c, uint64_t steps,
                           dm_bare_state *state);
void dm_bare_yoshida4_kepler(double mu, const dm_bare_coefficients *c, uint64_t steps,
                             dm_bare_state *state);

/* Not a bare loop but the floor of the harness: the same kick-drift-kick steps on any
 * problem, with the state in local arrays and the problem's force() and velocity()
 * called through its table, as the splitting engine must. Its distance to the
 * hand-written loop is the price of the problem interface, not of the harness. */
void dm_bare_through_problem(const dm_instance *inst, const dm_bare_coefficients *c,
                             uint64_t steps, dm_bare_state *state);

#endif
