/* splitting.c — the one engine that runs every splitting coefficient table.
 *
 * A step is the table's alternating kicks p -= c h grad V(q) and drifts
 * q += c h grad T(p), applied out of place: the first update of q and the first update
 * of p read from `from`, every later one works in `to`, so nothing copies the state.
 *
 * FSAL: when the table ends with a kick and starts with a kick (Störmer–Verlet KDK and
 * every composition of it), the last kick of a step and the first kick of the next one
 * need the force at the same q. The force of the last kick is kept and reused when the
 * next step starts from the buffer this step wrote (pointer identity of x), so such a
 * method costs one force evaluation per kick minus one. Anything else (a restart, a
 * `from` that is not the previous `to`) drops the cache and the compensation.
 *
 * Compensated summation (Kahan 1965) of the q and p updates is optional: the small
 * parts lost when adding c h grad to q or p are carried in the stepper and added back
 * at the next update of the same component. The compensation belongs to the buffer the
 * last step wrote, and is dropped with the FSAL cache.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "splitting.h"

typedef struct splitting_stepper {
    dm_stepper base;
    const dm_splitting *table;
    /* The table unrolled once into one list of operations: kind (kick or drift) and
     * the coefficient times h. Rebuilt by restart, so a new h costs nothing per step. */
    int n_ops;
    bool *is_kick;
    double *ch;
    int kicks_computed_per_step;
    bool first_is_kick, last_is_kick;

    /* The same coefficients as kicks and drifts apart, for the fused loop. */
    double *kick_h, *drift_h;
    dm_fused_cache cache;  /* the fused loop's FSAL force and counts */

    double *grad;         /* grad V at the q of the last kick (the FSAL force) */
    double cached_potential;
    double *velocity;     /* scratch for grad T(p) */
    double *comp;         /* Kahan compensation for q (first dof) then p */

    /* The buffer whose state the caches describe, and whether the force is valid. */
    const double *state_x;
    bool force_valid;
    dm_step_clock clock;
} splitting_stepper;

static void reset_caches(splitting_stepper *s, const dm_point *at)
{
    s->state_x = at->x;
    s->force_valid = false;
    s->cached_potential = NAN;
    memset(s->comp, 0, 2 * (size_t)s->base.dof * sizeof *s->comp);
    dm_step_clock_start(&s->clock, at->t);
    s->cache.valid = false;
    s->cache.potential = NAN;
}

static void scale_coefficients(splitting_stepper *s)
{
    const dm_splitting *t = s->table;
    double h = s->base.config.h;
    int ik = 0, id = 0;
    bool kick = t->kick_first;
    for (int k = 0; k < s->n_ops; k++) {
        s->is_kick[k] = kick;
        s->ch[k] = kick ? t->kick[ik++] * h : t->drift[id++] * h;
        if (kick)
            s->kick_h[ik - 1] = s->ch[k];
        else
            s->drift_h[id - 1] = s->ch[k];
        kick = !kick;
    }
}

dm_stepper *dm_splitting_create(const dm_method *m, const dm_instance *inst,
                                const dm_method_config *config, const dm_point *start,
                                dm_error *err)
{
    const dm_splitting *t = m->splitting;
    int expected_drift = t->kick_first ? t->n_kick - (t->n_kick > t->n_drift)
                                       : t->n_kick + (t->n_drift > t->n_kick);
    if (t->n_kick < 1 || t->n_drift < 1 || t->n_drift != expected_drift ||
        abs(t->n_kick - t->n_drift) > 1) {
        dm_error_set(err, DM_EINPUT,
                     "%s: inconsistent splitting table (%d kicks, %d drifts, %s first)",
                     m->id, t->n_kick, t->n_drift, t->kick_first ? "kick" : "drift");
        return NULL;
    }
    int dof = inst->dof;
    int n_ops = t->n_kick + t->n_drift;
    splitting_stepper *s = calloc(1, sizeof *s);
    bool *is_kick = calloc((size_t)n_ops, sizeof *is_kick);
    double *work = calloc(2 * (size_t)n_ops + 4 * (size_t)dof, sizeof *work);
    if (s == NULL || is_kick == NULL || work == NULL) {
        free(s);
        free(is_kick);
        free(work);
        dm_error_set(err, DM_ENOMEM, "%s: out of memory creating the stepper", m->id);
        return NULL;
    }
    s->base.method = m;
    s->base.inst = inst;
    s->base.dof = dof;
    s->base.config = *config;
    s->table = t;
    s->n_ops = n_ops;
    s->is_kick = is_kick;
    s->ch = work;
    s->kick_h = work + n_ops;
    s->drift_h = s->kick_h + t->n_kick;
    s->grad = work + 2 * n_ops;
    s->velocity = s->grad + dof;
    s->comp = s->velocity + dof;
    s->first_is_kick = t->kick_first;
    s->last_is_kick = t->kick_first == (n_ops % 2 == 1);
    scale_coefficients(s);
    reset_caches(s, start);
    return &s->base;
}

dm_status dm_splitting_restart(dm_stepper *base, const dm_point *at)
{
    splitting_stepper *s = (splitting_stepper *)base;
    scale_coefficients(s);
    reset_caches(s, at);
    return DM_OK;
}

/* x += dx, with the part of dx lost to rounding kept in *c and added back next time. */
static inline double add_compensated(double x, double dx, double *c)
{
    double y = dx - *c;
    double sum = x + y;
    *c = (sum - x) - y;
    return sum;
}

/* The table loop. `compensated` is a compile-time constant at each call site below,
 * so the compiler emits two branch-free variants. */
static inline void run_table(splitting_stepper *s, const double *from_x, double *to_x,
                             bool compensated)
{
    const dm_instance *inst = s->base.inst;
    const dm_problem *problem = inst->problem;
    int dof = s->base.dof;
    const double *q = from_x, *p = from_x + dof;
    double *q_out = to_x, *p_out = to_x + dof;
    double *comp_q = s->comp, *comp_p = s->comp + dof;
    double *grad = s->grad, *vel = s->velocity;
    uint64_t forces = 0, velocities = 0;

    for (int k = 0; k < s->n_ops; k++) {
        double ch = s->ch[k];
        if (s->is_kick[k]) {
            if (!s->force_valid) {
                s->cached_potential = problem->force(inst, q, grad);
                forces++;
            }
            s->force_valid = false; /* the next kick follows a drift: q has moved */
            for (int i = 0; i < dof; i++)
                p_out[i] = compensated ? add_compensated(p[i], -ch * grad[i], &comp_p[i])
                                       : p[i] - ch * grad[i];
            p = p_out;
        } else {
            problem->velocity(inst, p, vel);
            velocities++;
            for (int i = 0; i < dof; i++)
                q_out[i] = compensated ? add_compensated(q[i], ch * vel[i], &comp_q[i])
                                       : q[i] + ch * vel[i];
            q = q_out;
        }
    }
    s->base.counts.force_evals += forces;
    s->base.counts.velocity_evals += velocities;
}

dm_status dm_splitting_step(dm_stepper *base, const dm_point *from, dm_point *to)
{
    splitting_stepper *s = (splitting_stepper *)base;
    if (from->x != s->state_x) {
        /* Not the continuation of the last step: the caches describe another state. */
        reset_caches(s, from);
    }
    /* The cached force is at q of `from` only when the last step ended with a kick. */
    s->force_valid = s->force_valid && s->first_is_kick;

    if (base->config.compensated)
        run_table(s, from->x, to->x, true);
    else
        run_table(s, from->x, to->x, false);

    /* After a final kick grad holds the force at q_end: keep it for the next step. */
    s->force_valid = s->last_is_kick;
    to->potential = s->last_is_kick ? s->cached_potential : NAN;
    to->t = dm_step_clock_next(&s->clock, base->config.h);
    s->state_x = to->x;
    base->counts.steps++;
    return DM_OK;
}

dm_fused_event dm_splitting_run_fused(dm_stepper *base, dm_fused_run *run, uint64_t k_end)
{
    splitting_stepper *s = (splitting_stepper *)base;
    const dm_instance *inst = base->inst;
    if (inst->problem->fused_loop == NULL || base->config.compensated ||
        base->config.plain_steps)
        return DM_FUSED_UNSUPPORTED;
    const dm_fused_table table = {
        .kick_first = s->table->kick_first,
        .n_kick = s->table->n_kick,
        .n_drift = s->table->n_drift,
        .kick = s->kick_h,
        .drift = s->drift_h,
    };
    uint64_t k0 = run->k;
    int event = inst->problem->fused_loop(inst, &table, &s->cache, run, k_end);
    base->counts.steps += run->k - k0;
    base->counts.force_evals += s->cache.forces;
    base->counts.velocity_evals += s->cache.velocities;
    s->cache.forces = s->cache.velocities = 0;
    return (dm_fused_event)event;
}

void dm_splitting_destroy(dm_stepper *base)
{
    splitting_stepper *s = (splitting_stepper *)base;
    free(s->is_kick);
    free(s->ch);
    free(s);
}

/* ---- checkpoints: clock origin and count, the per-step FSAL force (valid, V, grad),
 * the compensation (2 dof), the fused loop's FSAL force (valid, V, grad) ---- */

static size_t splitting_words(int dof)
{
    return 6 + 4 * (size_t)dof;
}

size_t dm_splitting_save(const dm_stepper *base, uint64_t *w, size_t capacity)
{
    const splitting_stepper *s = (const splitting_stepper *)base;
    int dof = base->dof;
    if (capacity < splitting_words(dof))
        return 0;
    size_t i = 0;
    w[i++] = dm_word_of_double(s->clock.origin);
    w[i++] = s->clock.n;
    w[i++] = s->force_valid;
    w[i++] = dm_word_of_double(s->cached_potential);
    for (int j = 0; j < dof; j++)
        w[i++] = dm_word_of_double(s->grad[j]);
    for (int j = 0; j < 2 * dof; j++)
        w[i++] = dm_word_of_double(s->comp[j]);
    w[i++] = s->cache.valid;
    w[i++] = dm_word_of_double(s->cache.potential);
    for (int j = 0; j < dof; j++)
        w[i++] = dm_word_of_double(s->cache.grad[j]);
    return i;
}

dm_status dm_splitting_load(dm_stepper *base, const uint64_t *w, size_t n, const dm_point *at,
                            const dm_counts *counts)
{
    splitting_stepper *s = (splitting_stepper *)base;
    int dof = base->dof;
    if (n != splitting_words(dof))
        return dm_error_set(&base->error, DM_EINPUT, "%s: a checkpoint of %zu words, not %zu",
                            base->method->id, n, splitting_words(dof));
    reset_caches(s, at);
    size_t i = 0;
    s->clock.origin = dm_double_of_word(w[i++]);
    s->clock.n = w[i++];
    s->force_valid = w[i++] != 0;
    s->cached_potential = dm_double_of_word(w[i++]);
    for (int j = 0; j < dof; j++)
        s->grad[j] = dm_double_of_word(w[i++]);
    for (int j = 0; j < 2 * dof; j++)
        s->comp[j] = dm_double_of_word(w[i++]);
    s->cache.valid = w[i++] != 0;
    s->cache.potential = dm_double_of_word(w[i++]);
    for (int j = 0; j < dof; j++)
        s->cache.grad[j] = dm_double_of_word(w[i++]);
    base->counts = *counts;
    return DM_OK;
}
