/* bench_bare.c — hand-written loops of Störmer–Verlet (kick-drift-kick) and Yoshida's
 * triple jump on the pendulum and on Kepler, for `driftmark bench` to time the harness
 * against. See bench_bare.h.
 *
 * Every loop keeps the force of its last kick for the next step's first kick (FSAL),
 * as the splitting engine does, and writes each update as the engine does
 * (p - (c h) f, q + (c h) p), so both end in the same state bit for bit.
 */
#include "bench_loops.h"

#include <math.h>

/* The pendulum force of problems/pendulum.c written inline: g sin q and, when asked,
 * V = -g cos q from the same angle (gcc merges the pair into one sincos call). */
static inline double pendulum_grad(double g, double q, double *potential, int with_cos)
{
    double s = sin(q);
    if (with_cos)
        *potential = -g * cos(q);
    return g * s;
}

static inline void verlet_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                                   dm_bare_state *state, int with_cos)
{
    const double k0 = c->kick[0], d0 = c->drift[0], k1 = c->kick[1];
    double q = state->q[0], p = state->p[0], V = NAN;
    double f = pendulum_grad(g, q, &V, with_cos);
    for (uint64_t n = 0; n < steps; n++) {
        p = p - k0 * f;
        q = q + d0 * p;
        f = pendulum_grad(g, q, &V, with_cos);
        p = p - k1 * f;
    }
    state->q[0] = q;
    state->p[0] = p;
    state->potential = V;
}

static inline void yoshida4_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                                     dm_bare_state *state, int with_cos)
{
    const double k0 = c->kick[0], k1 = c->kick[1], k2 = c->kick[2], k3 = c->kick[3];
    const double d0 = c->drift[0], d1 = c->drift[1], d2 = c->drift[2];
    double q = state->q[0], p = state->p[0], V = NAN;
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
    }
    state->q[0] = q;
    state->p[0] = p;
    state->potential = V;
}

void dm_bare_verlet_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                             dm_bare_state *state, int with_cos)
{
    if (with_cos)
        verlet_pendulum(g, c, steps, state, 1);
    else
        verlet_pendulum(g, c, steps, state, 0);
}

void dm_bare_yoshida4_pendulum(double g, const dm_bare_coefficients *c, uint64_t steps,
                               dm_bare_state *state, int with_cos)
{
    if (with_cos)
        yoshida4_pendulum(g, c, steps, state, 1);
    else
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

void dm_bare_verlet_kepler(double mu, const dm_bare_coefficients *c, uint64_t steps,
                           dm_bare_state *state)
{
    const double k0 = c->kick[0], d0 = c->drift[0], k1 = c->kick[1];
    double x = state->q[0], y = state->q[1], px = state->p[0], py = state->p[1];
    double fx, fy, V;
    KEPLER_FORCE();
    for (uint64_t n = 0; n < steps; n++) {
        KEPLER_KICK(k0);
        KEPLER_DRIFT(d0);
        KEPLER_FORCE();
        KEPLER_KICK(k1);
    }
    state->q[0] = x;
    state->q[1] = y;
    state->p[0] = px;
    state->p[1] = py;
    state->potential = V;
}

void dm_bare_yoshida4_kepler(double mu, const dm_bare_coefficients *c, uint64_t steps,
                             dm_bare_state *state)
{
    const double k0 = c->kick[0], k1 = c->kick[1], k2 = c->kick[2], k3 = c->kick[3];
    const double d0 = c->drift[0], d1 = c->drift[1], d2 = c->drift[2];
    double x = state->q[0], y = state->q[1], px = state->p[0], py = state->p[1];
    double fx, fy, V;
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
    }
    state->q[0] = x;
    state->q[1] = y;
    state->p[0] = px;
    state->p[1] = py;
    state->potential = V;
}

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
