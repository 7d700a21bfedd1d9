/* symeuler.c — the two symplectic Euler methods, first order, not symmetric (each is
 * the other's adjoint). Hairer, Lubich, Wanner, Geometric Numerical Integration,
 * 2nd ed. (2006), ch. I.1 and §VI.3 (section numbers from memory of the book). */
#include "method.h"

static const double one[] = { 1.0 };

/* Kick then drift: p1 = p0 - h grad V(q0), q1 = q0 + h grad T(p1). The next step's kick
 * needs the force at the new q, which this step never evaluated: no FSAL. */
static const dm_splitting kick_drift = {
    .kick_first = true, .n_drift = 1, .n_kick = 1, .drift = one, .kick = one,
};

const dm_method dm_symeuler_a = {
    .id = "symeuler-a",
    .name = "symplectic Euler (kick then drift)",
    .reference = "Hairer, Lubich, Wanner, Geometric Numerical Integration, 2nd ed. "
                 "(2006), ch. I.1 and §VI.3",
    .family = DM_FAMILY_SPLITTING,
    .order = 1,
    .symplectic = true,
    .symmetric = false,
    .force_evals_per_step = 1,
    .splitting = &kick_drift,
};

/* Drift then kick: q1 = q0 + h grad T(p0), p1 = p0 - h grad V(q1). It ends with the
 * force at q1, so V(q1) comes for free, but the next step starts with a drift. */
static const dm_splitting drift_kick = {
    .kick_first = false, .n_drift = 1, .n_kick = 1, .drift = one, .kick = one,
};

const dm_method dm_symeuler_b = {
    .id = "symeuler-b",
    .name = "symplectic Euler (drift then kick)",
    .reference = "Hairer, Lubich, Wanner, Geometric Numerical Integration, 2nd ed. "
                 "(2006), ch. I.1 and §VI.3",
    .family = DM_FAMILY_SPLITTING,
    .order = 1,
    .symplectic = true,
    .symmetric = false,
    .force_evals_per_step = 1,
    .splitting = &drift_kick,
};
