/* verlet.c — Störmer–Verlet, the symmetric second-order splitting, in both arrangements.
 * Hairer, Lubich, Wanner, Geometric Numerical Integration, 2nd ed. (2006), ch. I.3 and
 * §VI.3 (section numbers from memory of the book). */
#include "method.h"

/* Kick-drift-kick ("velocity Verlet"): half kick, full drift, half kick. The closing
 * half kick and the next step's opening one share the force at the same q (FSAL), so a
 * long run costs one force evaluation per step, and the step ends knowing V(q). */
static const double kdk_kick[] = { 0.5, 0.5 };
static const double kdk_drift[] = { 1.0 };
static const dm_splitting kdk = {
    .kick_first = true, .n_drift = 1, .n_kick = 2, .drift = kdk_drift, .kick = kdk_kick,
};

const dm_method dm_verlet = {
    .id = "verlet",
    .name = "Störmer–Verlet (kick-drift-kick)",
    .reference = "Hairer, Lubich, Wanner, Geometric Numerical Integration, 2nd ed. "
                 "(2006), ch. I.3 (velocity form)",
    .family = DM_FAMILY_SPLITTING,
    .order = 2,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 1,
    .splitting = &kdk,
};

/* Drift-kick-drift ("position Verlet"): one force evaluation at the midpoint q, never
 * at the step's end, so the end point's potential is not known for free. */
static const double dkd_kick[] = { 1.0 };
static const double dkd_drift[] = { 0.5, 0.5 };
static const dm_splitting dkd = {
    .kick_first = false, .n_drift = 2, .n_kick = 1, .drift = dkd_drift, .kick = dkd_kick,
};

const dm_method dm_verlet_dkd = {
    .id = "verlet-dkd",
    .name = "Störmer–Verlet (drift-kick-drift)",
    .reference = "Hairer, Lubich, Wanner, Geometric Numerical Integration, 2nd ed. "
                 "(2006), ch. I.3 (position form)",
    .family = DM_FAMILY_SPLITTING,
    .order = 2,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 1,
    .splitting = &dkd,
};
