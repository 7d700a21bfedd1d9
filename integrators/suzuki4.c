/* suzuki4.c — Suzuki's 5-stage symmetric 4th-order composition of Störmer–Verlet (KDK):
 * M. Suzuki, "Fractal decomposition of exponential operators with applications to
 * many-body theories and Monte Carlo simulations", Phys. Lett. A 146 (1990) 319–323.
 * Stages p, p, 1 - 4p, p, p with p = 1 / (4 - 4^(1/3)): more stages than the triple
 * jump, but all weights small, so a much smaller error constant. */
#include "method.h"

/* 4^(1/3) to 32 digits (common practice; checked against cbrt(4) in the tests). */
#define CBRT4 1.5874010519681994747517056392723
#define P (1.0 / (4.0 - CBRT4))
#define Q (1.0 - 4.0 * P)

static const double s4_drift[] = { P, P, Q, P, P };
static const double s4_kick[] = { P / 2, P, (P + Q) / 2, (Q + P) / 2, P, P / 2 };
static const dm_splitting s4 = {
    .kick_first = true, .n_drift = 5, .n_kick = 6, .drift = s4_drift, .kick = s4_kick,
};

const dm_method dm_suzuki4 = {
    .id = "suzuki4",
    .name = "Suzuki 5-stage 4th-order composition",
    .reference = "M. Suzuki, Phys. Lett. A 146 (1990) 319-323",
    .family = DM_FAMILY_SPLITTING,
    .order = 4,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 5,
    .splitting = &s4,
};
