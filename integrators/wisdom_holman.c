/* wisdom_holman.c — the Wisdom-Holman splitting of the N-body problem with a dominant
 * mass (J. Wisdom, M. Holman, "Symplectic maps for the N-body problem", Astron. J. 102
 * (1991) 1528): in Jacobi coordinates H = H_Kepler + H_interaction,
 *
 *     H_Kepler      = sum_{i>=1} |p'_i|^2 / (2 m'_i) - G m_0 m_i / |q'_i|  (+ the centre
 *                     of mass moving freely),
 *     H_interaction = sum_{i>=1} G m_0 m_i / |q'_i| - sum_{i<j} G m_i m_j / |q_i - q_j|,
 *
 * each Kepler part advanced exactly (dm_kepler_drift: Gauss's f and g functions in
 * universal variables, mu_i = G m_0 m_i / m'_i), the interaction, a function of the
 * positions alone, as kicks: half kick, Kepler drift, half kick, second order and
 * symplectic, its error of the size of the planets' masses over the star's times h^2.
 *
 * Jacobi coordinates (C. G. J. Jacobi; as used by Wisdom and Holman, from memory of the
 * paper): with eta_i = m_0 + ... + m_i and X_i the centre of mass of bodies 0..i,
 * q'_i = q_i - X_{i-1}, m'_i = m_i eta_{i-1} / eta_i, p'_i = m'_i (v_i - V_{i-1}) =
 * (eta_{i-1} p_i - m_i (p_0 + ... + p_{i-1})) / eta_i; q'_0 = X_{N-1}, p'_0 = the total
 * momentum. The map is linear with p' = A^-T p, so a kick by H_interaction(q) is the
 * Cartesian kick -grad V of the problem's force (its pair sum) taken to Jacobi momenta
 * by the same map, plus the kick of the indirect terms, +G m_0 m_i q'_i / |q'_i|^3.
 *
 * The stepper keeps the Jacobi state from step to step (first-same-as-last, like the
 * splitting engine's force): the Cartesian state it writes is for the monitors only, so
 * the coordinate changes add no rounding to the trajectory. It asks the problem for
 * its structure through problems/include/nbody.h alone (the masses and G), and refuses
 * any problem that is not N-body with a dominant first body. */
#include <inttypes.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "kepler.h"
#include "method.h"
#include "nbody.h"

/* The first body must outweigh the others together this many times (our threshold:
 * the method stays exact for every Kepler part and symplectic below it, but its
 * advantage, an error of the order of the mass ratio, is gone). */
#define DOMINANT_RATIO 10.0

typedef struct wh_stepper {
    dm_stepper base;
    const dm_nbody *bodies;
    double G;
    int n;
    double eta[DM_NBODY_MAX];       /* m_0 + ... + m_i */
    double jacobi_mass[DM_NBODY_MAX];
    double mu[DM_NBODY_MAX];        /* of each Kepler part */
    double q[DM_MAX_DOF], p[DM_MAX_DOF];  /* the Jacobi state (body 0: centre of mass) */
    double kick[DM_MAX_DOF];        /* -dH_interaction/dq' at q */
    double potential;               /* V at q */
    double grad[DM_MAX_DOF];        /* scratch: grad V */
    bool valid;                     /* q, p, kick describe state_x */
    const double *state_x;
    dm_step_clock clock;
} wh_stepper;

static dm_status wh_check_problem(const dm_method *m, const dm_instance *inst, dm_error *err)
{
    const dm_nbody *d = dm_nbody_of(inst, NULL);
    if (d == NULL)
        return dm_error_set(err, DM_EINPUT, "%s runs N-body problems only, not %s (expected "
                            "problem: nbody)", m->id, inst->problem->id);
    double others = 0.0;
    for (int i = 1; i < d->n; i++)
        others += d->mass[i];
    if (!(d->mass[0] >= DOMINANT_RATIO * others))
        return dm_error_set(err, DM_EINPUT, "%s needs a dominant first body: its mass %.6g is "
                            "not %g times the others' %.6g together (expected the star first)",
                            m->id, d->mass[0], DOMINANT_RATIO, others);
    return DM_OK;
}

/* Cartesian (q, p) to the Jacobi state. */
static void to_jacobi(wh_stepper *s, const double *q, const double *p)
{
    const double *m = s->bodies->mass;
    double X[3], P[3];
    for (int k = 0; k < 3; k++) {
        X[k] = m[0] * q[k];
        P[k] = p[k];
    }
    for (int i = 1; i < s->n; i++)
        for (int k = 0; k < 3; k++) {
            s->q[3 * i + k] = q[3 * i + k] - X[k] / s->eta[i - 1];
            s->p[3 * i + k] = (s->eta[i - 1] * p[3 * i + k] - m[i] * P[k]) / s->eta[i];
            X[k] += m[i] * q[3 * i + k];
            P[k] += p[3 * i + k];
        }
    for (int k = 0; k < 3; k++) {
        s->q[k] = X[k] / s->eta[s->n - 1];
        s->p[k] = P[k];
    }
}

/* The Jacobi state to Cartesian positions (into q) and, when p is not NULL, momenta. */
static void from_jacobi(const wh_stepper *s, double *q, double *p)
{
    const double *m = s->bodies->mass;
    double X[3], V[3];
    for (int k = 0; k < 3; k++) {
        X[k] = s->q[k];
        V[k] = s->p[k] / s->eta[s->n - 1];
    }
    for (int i = s->n - 1; i >= 1; i--)
        for (int k = 0; k < 3; k++) {
            double v = s->p[3 * i + k] / s->jacobi_mass[i];
            X[k] -= m[i] / s->eta[i] * s->q[3 * i + k];
            V[k] -= m[i] / s->eta[i] * v;
            q[3 * i + k] = X[k] + s->q[3 * i + k];
            if (p != NULL)
                p[3 * i + k] = m[i] * (V[k] + v);
        }
    for (int k = 0; k < 3; k++) {
        q[k] = X[k];
        if (p != NULL)
            p[k] = m[0] * V[k];
    }
}

/* The interaction's kick -dH_interaction/dq' at the Cartesian positions q, and V(q). */
static void interaction_kick(wh_stepper *s, const double *q)
{
    const dm_instance *inst = s->base.inst;
    const double *m = s->bodies->mass;
    s->potential = inst->problem->force(inst, q, s->grad);
    s->base.counts.force_evals++;
    double F[3] = { -s->grad[0], -s->grad[1], -s->grad[2] }; /* the force summed so far */
    for (int k = 0; k < 3; k++)
        s->kick[k] = 0.0; /* internal forces leave the total momentum alone */
    for (int i = 1; i < s->n; i++) {
        const double *x = s->q + 3 * i;
        double r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        double indirect = s->G * m[0] * m[i] / (r2 * sqrt(r2));
        for (int k = 0; k < 3; k++) {
            double f = -s->grad[3 * i + k];
            s->kick[3 * i + k] = (s->eta[i - 1] * f - m[i] * F[k]) / s->eta[i] + indirect * x[k];
            F[k] += f;
        }
    }
}

static void half_kick(wh_stepper *s)
{
    double half = 0.5 * s->base.config.h;
    for (int c = 3; c < 3 * s->n; c++)
        s->p[c] += half * s->kick[c];
}

static dm_status kepler_drifts(wh_stepper *s)
{
    double h = s->base.config.h;
    for (int k = 0; k < 3; k++)
        s->q[k] += h * s->p[k] / s->eta[s->n - 1];
    for (int i = 1; i < s->n; i++) {
        double v[3];
        for (int k = 0; k < 3; k++)
            v[k] = s->p[3 * i + k] / s->jacobi_mass[i];
        if (dm_kepler_drift(s->mu[i], s->q + 3 * i, v, h) != 0)
            return dm_error_set(&s->base.error, DM_ENUMERIC, "%s: step %" PRIu64 " (h = %g): "
                                "the Kepler drift of body %d did not converge",
                                s->base.method->id, s->base.counts.steps + 1, h, i + 1);
        for (int k = 0; k < 3; k++)
            s->p[3 * i + k] = s->jacobi_mass[i] * v[k];
    }
    return DM_OK;
}

static void restart_at(wh_stepper *s, const dm_point *at)
{
    s->state_x = at->x;
    s->valid = false;
    dm_step_clock_start(&s->clock, at->t);
}

static dm_stepper *wh_create(const dm_method *m, const dm_instance *inst,
                             const dm_method_config *config, const dm_point *start,
                             dm_error *err)
{
    if (wh_check_problem(m, inst, err) != DM_OK)
        return NULL;
    wh_stepper *s = calloc(1, sizeof *s);
    if (s == NULL) {
        dm_error_set(err, DM_ENOMEM, "%s: out of memory creating the stepper", m->id);
        return NULL;
    }
    s->base.method = m;
    s->base.inst = inst;
    s->base.dof = inst->dof;
    s->base.config = *config;
    s->bodies = dm_nbody_of(inst, &s->G);
    s->n = s->bodies->n;
    const double *mass = s->bodies->mass;
    s->eta[0] = mass[0];
    for (int i = 1; i < s->n; i++) {
        s->eta[i] = s->eta[i - 1] + mass[i];
        s->jacobi_mass[i] = mass[i] * s->eta[i - 1] / s->eta[i];
        s->mu[i] = s->G * mass[0] * mass[i] / s->jacobi_mass[i];
    }
    restart_at(s, start);
    return &s->base;
}

static dm_status wh_step(dm_stepper *base, const dm_point *from, dm_point *to)
{
    wh_stepper *s = (wh_stepper *)base;
    const int dof = base->dof;
    if (from->x != s->state_x || !s->valid) {
        /* not the continuation of the last step: start from the Cartesian state */
        restart_at(s, from);
        to_jacobi(s, from->x, from->x + dof);
        interaction_kick(s, from->x);
        s->valid = true;
    }
    half_kick(s);
    dm_status st = kepler_drifts(s);
    if (st != DM_OK) {
        s->valid = false;
        return st;
    }
    from_jacobi(s, to->x, NULL);
    interaction_kick(s, to->x);
    half_kick(s);
    from_jacobi(s, to->x, to->x + dof);
    to->potential = s->potential;
    to->t = dm_step_clock_next(&s->clock, base->config.h);
    s->state_x = to->x;
    base->counts.steps++;
    return DM_OK;
}

static dm_status wh_restart(dm_stepper *base, const dm_point *at)
{
    restart_at((wh_stepper *)base, at);
    return DM_OK;
}

static void wh_destroy(dm_stepper *base)
{
    free(base);
}

/* ---- checkpoints: the step clock, the valid flag, V, then the Jacobi q, p and kick
 * (3 dof words) ---- */

static size_t wh_words(int dof)
{
    return 4 + 3 * (size_t)dof;
}

static size_t wh_save(const dm_stepper *base, uint64_t *w, size_t capacity)
{
    const wh_stepper *s = (const wh_stepper *)base;
    const int dof = base->dof;
    if (capacity < wh_words(dof))
        return 0;
    size_t i = 0;
    w[i++] = dm_word_of_double(s->clock.origin);
    w[i++] = s->clock.n;
    w[i++] = s->valid;
    w[i++] = dm_word_of_double(s->potential);
    const double *parts[3] = { s->q, s->p, s->kick };
    for (int k = 0; k < 3; k++)
        for (int j = 0; j < dof; j++)
            w[i++] = dm_word_of_double(parts[k][j]);
    return i;
}

static dm_status wh_load(dm_stepper *base, const uint64_t *w, size_t n, const dm_point *at,
                         const dm_counts *counts)
{
    wh_stepper *s = (wh_stepper *)base;
    const int dof = base->dof;
    if (n != wh_words(dof))
        return dm_error_set(&base->error, DM_EINPUT, "%s: a checkpoint of %zu words, not %zu",
                            base->method->id, n, wh_words(dof));
    restart_at(s, at);
    size_t i = 0;
    s->clock.origin = dm_double_of_word(w[i++]);
    s->clock.n = w[i++];
    s->valid = w[i++] != 0;
    s->potential = dm_double_of_word(w[i++]);
    double *parts[3] = { s->q, s->p, s->kick };
    for (int k = 0; k < 3; k++)
        for (int j = 0; j < dof; j++)
            parts[k][j] = dm_double_of_word(w[i++]);
    base->counts = *counts;
    return DM_OK;
}

const dm_method dm_wisdom_holman = {
    .id = "wisdom-holman",
    .name = "Wisdom-Holman splitting (Jacobi coordinates, Kepler drift, interaction kicks)",
    .reference = "J. Wisdom, M. Holman, Astron. J. 102 (1991) 1528; Kepler drift: J. M. A. "
                 "Danby, Fundamentals of Celestial Mechanics, 2nd ed. (1988), section 6.9",
    .family = DM_FAMILY_SPLITTING,
    .order = 2,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 1,
    .check_problem = wh_check_problem,
    .create = wh_create,
    .step = wh_step,
    .restart = wh_restart,
    .destroy = wh_destroy,
    .save = wh_save,
    .load = wh_load,
};
