/* bench_loops.h — the hand-written loops `driftmark bench` measures the harness against,
 * and CVODE called directly, which it measures our CVODE adapter against.
 *
 * Each loop is what one would write by hand for one method on one problem: the force
 * inline, no function pointers, no monitors. Each computes exactly the arithmetic the
 * splitting engine and the problem's force() do, in the same order, so after the same
 * number of steps it ends in the same state bit for bit; the bench checks that. The
 * force evaluation is the problem's (grad V and V together, as force() returns both),
 * so the loops differ from the harness only by what the harness adds. */
#ifndef DM_BENCH_LOOPS_H
#define DM_BENCH_LOOPS_H

#include <stdbool.h>
#include <stdint.h>

#include "problem.h"

/* The end of a bare run: the state and V(q) of its last force evaluation. */
typedef struct dm_bare_state {
    double q[2], p[2];
    double potential;
    double worst;         /* the largest |H - H0| after a step (loops that evaluate V) */
    uint64_t steps_done;  /* RK4 and midpoint: the steps taken */
} dm_bare_state;

/* Kick-drift-kick coefficients times h, in the order applied: kick[0], drift[0],
 * kick[1], drift[1], ..., kick[n_drift]; or, for the Runge-Kutta loops, h itself. */
typedef struct dm_bare_coefficients {
    int n_drift;          /* 1 for Störmer–Verlet, 3 for Yoshida's triple jump */
    double kick[4];
    double drift[3];
    double h;             /* classical RK4 and the implicit midpoint rule */
    int max_iterations;   /* the implicit midpoint rule's cap */
    double H0;            /* RK4 and midpoint: H(q0, p0), for the energy they watch */
} dm_bare_coefficients;

/* One hand-written loop of one method on one problem, `k` the problem's force constant
 * (the pendulum's g_over_l, Kepler's mu), from state for `steps` steps. */
typedef void dm_bare_loop(double k, const dm_bare_coefficients *c, uint64_t steps,
                          dm_bare_state *state);

/* Every loop that evaluates V watches the energy after each step, as the harness does:
 * the largest |H - H0| is kept in state->worst. The _folded loops are the same with the
 * problem's constant k written in as 1 (valid only for a case whose k is 1; the
 * compiler then drops the products by k): their distance to the loop with k read at
 * run time is what a run-time parameter costs.
 *
 * Pendulum H = p^2/2 - g cos q. The _sin_only loops evaluate sin only, never V (what a
 * loop that never looks at the energy needs); state->potential is then NaN. */
dm_bare_loop dm_bare_verlet_pendulum, dm_bare_verlet_pendulum_sin_only,
    dm_bare_verlet_pendulum_folded;
dm_bare_loop dm_bare_yoshida4_pendulum, dm_bare_yoshida4_pendulum_sin_only,
    dm_bare_yoshida4_pendulum_folded;

/* Kepler H = |p|^2/2 - mu / |q|. */
dm_bare_loop dm_bare_verlet_kepler, dm_bare_verlet_kepler_folded;
dm_bare_loop dm_bare_yoshida4_kepler, dm_bare_yoshida4_kepler_folded;

/* Classical RK4 and the implicit midpoint rule as rk.c and midpoint.c step them (the
 * same sums in the same order, the same fixed-point iteration and stopping rule, so the
 * same iterations). A Runge-Kutta step takes no force at its end, so V is not free as
 * it is for a splitting step: these loops evaluate V after every step and keep the
 * largest |H - H0| in state->worst, as a hand loop watching the energy would; the
 * _without_energy loops never evaluate V (state->potential is then NaN), which shows
 * what watching the energy costs. A midpoint step that does not converge stops the
 * loop: state->steps_done says how many steps were taken. */
dm_bare_loop dm_bare_rk4_pendulum, dm_bare_rk4_pendulum_without_energy,
    dm_bare_rk4_pendulum_folded;
dm_bare_loop dm_bare_rk4_kepler, dm_bare_rk4_kepler_without_energy, dm_bare_rk4_kepler_folded;
dm_bare_loop dm_bare_midpoint_pendulum, dm_bare_midpoint_pendulum_without_energy,
    dm_bare_midpoint_pendulum_folded;
dm_bare_loop dm_bare_midpoint_kepler, dm_bare_midpoint_kepler_without_energy,
    dm_bare_midpoint_kepler_folded;

/* Not a bare loop but the floor of the harness: the same kick-drift-kick steps on any
 * problem, with the state in local arrays and the problem's force() and velocity()
 * called through its table, as the splitting engine must. Its distance to the
 * hand-written loop is the price of the problem interface, not of the harness. */
void dm_bare_through_problem(const dm_instance *inst, const dm_bare_coefficients *c,
                             uint64_t steps, dm_bare_state *state);

/* CVODE called directly, without our adapter, on the pendulum as a first-order system
 * written by hand, y = (q, p), y' = (p, -g sin q), with its Jacobian for BDF; set up as
 * the adapter (integrators/cvode.c) sets it up: rtol, atol = rtol / 1000, the method's
 * highest order, a stop time at t_end, BDF with Newton and a dense linear solver or
 * Adams with fixed-point iteration. Takes CV_ONE_STEP steps from (q0, p0) to t_end.
 * Returns the steps, or -1 when CVODE failed; *seconds: the wall time of the steps. */
long dm_bare_cvode_pendulum(double g, double q0, double p0, bool bdf, int max_order,
                            double rtol, double t_end, double *seconds);

#endif
