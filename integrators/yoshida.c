/* yoshida.c — Yoshida's symmetric compositions of Störmer–Verlet (kick-drift-kick):
 * H. Yoshida, "Construction of higher order symplectic integrators", Phys. Lett. A 150
 * (1990) 262–268.
 *
 * A composition S(w_1 h) ... S(w_s h) of KDK steps is itself a splitting table: the
 * drifts are the weights w_i, the kicks the half sums (w_i + w_{i+1}) / 2 of
 * neighbours, with w_1 / 2 and w_s / 2 at the ends. The closing half kick of one
 * sub-step merges with the opening one of the next, and the step's last kick with the
 * next step's first (FSAL): s force evaluations per step. */
#include "method.h"

/* ---- 4th order: the triple jump (Yoshida 1990, section 4) ----
 * x1 = 1 / (2 - 2^(1/3)), x0 = -2^(1/3) / (2 - 2^(1/3)); stages x1, x0, x1.
 * 2^(1/3) to 32 digits (common practice; checked against cbrt(2) in the tests). */
#define CBRT2 1.2599210498948731647672106072782
#define X1 (1.0 / (2.0 - CBRT2))
#define X0 (-CBRT2 / (2.0 - CBRT2))

static const double y4_drift[] = { X1, X0, X1 };
static const double y4_kick[] = { X1 / 2, (X1 + X0) / 2, (X0 + X1) / 2, X1 / 2 };
static const dm_splitting y4 = {
    .kick_first = true, .n_drift = 3, .n_kick = 4, .drift = y4_drift, .kick = y4_kick,
};

const dm_method dm_yoshida4 = {
    .id = "yoshida4",
    .name = "Yoshida 4th-order triple jump",
    .reference = "H. Yoshida, Phys. Lett. A 150 (1990) 262-268 (triple jump); also "
                 "Forest & Ruth, Physica D 43 (1990) 105-117",
    .family = DM_FAMILY_SPLITTING,
    .order = 4,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 3,
    .splitting = &y4,
};

/* ---- 6th order, Yoshida (1990) Table 1, solution A: 7 stages ----
 * w3 w2 w1 w0 w1 w2 w3 with w0 = 1 - 2 (w1 + w2 + w3). The digits are the published
 * 15 significant ones, as reproduced identically by several independent public
 * implementations (looked up with the code search tool). */
#define A6_W1 (-1.17767998417887)
#define A6_W2 0.235573213359357
#define A6_W3 0.784513610477560
#define A6_W0 (1.0 - 2.0 * (A6_W1 + A6_W2 + A6_W3))

static const double y6_drift[] = { A6_W3, A6_W2, A6_W1, A6_W0, A6_W1, A6_W2, A6_W3 };
static const double y6_kick[] = {
    A6_W3 / 2,           (A6_W3 + A6_W2) / 2, (A6_W2 + A6_W1) / 2, (A6_W1 + A6_W0) / 2,
    (A6_W0 + A6_W1) / 2, (A6_W1 + A6_W2) / 2, (A6_W2 + A6_W3) / 2, A6_W3 / 2,
};
static const dm_splitting y6 = {
    .kick_first = true, .n_drift = 7, .n_kick = 8, .drift = y6_drift, .kick = y6_kick,
};

const dm_method dm_yoshida6 = {
    .id = "yoshida6",
    .name = "Yoshida 6th-order composition (solution A)",
    .reference = "H. Yoshida, Phys. Lett. A 150 (1990) 262-268, Table 1, solution A",
    .family = DM_FAMILY_SPLITTING,
    .order = 6,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 7,
    .splitting = &y6,
};

/* ---- 8th order, Yoshida (1990) Table 2, solution D: 15 stages ----
 * w7 ... w1 w0 w1 ... w7 with w0 = 1 - 2 (w1 + ... + w7). Published digits, as above. */
#define D8_W1 0.102799849391985
#define D8_W2 (-1.96061023297549)
#define D8_W3 1.93813913762276
#define D8_W4 (-0.158240635368243)
#define D8_W5 (-1.44485223686048)
#define D8_W6 0.253693336566229
#define D8_W7 0.914844246229740
#define D8_W0 (1.0 - 2.0 * (D8_W1 + D8_W2 + D8_W3 + D8_W4 + D8_W5 + D8_W6 + D8_W7))

static const double y8_drift[] = {
    D8_W7, D8_W6, D8_W5, D8_W4, D8_W3, D8_W2, D8_W1, D8_W0,
    D8_W1, D8_W2, D8_W3, D8_W4, D8_W5, D8_W6, D8_W7,
};
static const double y8_kick[] = {
    D8_W7 / 2,           (D8_W7 + D8_W6) / 2, (D8_W6 + D8_W5) / 2, (D8_W5 + D8_W4) / 2,
    (D8_W4 + D8_W3) / 2, (D8_W3 + D8_W2) / 2, (D8_W2 + D8_W1) / 2, (D8_W1 + D8_W0) / 2,
    (D8_W0 + D8_W1) / 2, (D8_W1 + D8_W2) / 2, (D8_W2 + D8_W3) / 2, (D8_W3 + D8_W4) / 2,
    (D8_W4 + D8_W5) / 2, (D8_W5 + D8_W6) / 2, (D8_W6 + D8_W7) / 2, D8_W7 / 2,
};
static const dm_splitting y8 = {
    .kick_first = true, .n_drift = 15, .n_kick = 16, .drift = y8_drift, .kick = y8_kick,
};

const dm_method dm_yoshida8 = {
    .id = "yoshida8",
    .name = "Yoshida 8th-order composition (solution D)",
    .reference = "H. Yoshida, Phys. Lett. A 150 (1990) 262-268, Table 2, solution D",
    .family = DM_FAMILY_SPLITTING,
    .order = 8,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 15,
    .splitting = &y8,
};
