/* rk.c — explicit Runge–Kutta baselines: explicit Euler and classical RK4. Neither is
 * symplectic nor symmetric: they are the contrast against which the geometric methods
 * are measured (energy drift, growing phase error).
 *
 * One engine runs any explicit Butcher tableau on y = (q, p) with dq/dt = grad T(p),
 * dp/dt = -grad V(q): dm_rk_explicit_step (problems/include/dm_fused_loop.h), called a
 * step at a time here and inside the problem's fused loop (rk_run_fused); and any
 * explicit Runge-Kutta-Nystrom table (a method's `nystrom`, typed in a suite) by
 * dm_rkn_step the same way. */
#include <math.h>
#include <stdlib.h>

#include "dm_fused_loop.h"
#include "method.h"

typedef struct rk_stepper {
    dm_stepper base;
    const dm_rk_tableau *tableau;
    const dm_rkn_tableau *nystrom;  /* instead of tableau, for a Nystrom table */
    const double *state_x;
    dm_step_clock clock;
    dm_fused_rk_cache cache;  /* the fused loop's counts */
} rk_stepper;

/* The tableaux (dm_rk_euler_tableau, dm_rk4_tableau) are in dm_fused_loop.h. */

static void restart_at(rk_stepper *s, const dm_point *at)
{
    s->state_x = at->x;
    dm_step_clock_start(&s->clock, at->t);
}

/* Every explicit tableau, built-in or typed in a suite, is the method's own. */
static dm_stepper *rk_create(const dm_method *m, const dm_instance *inst,
                             const dm_method_config *config, const dm_point *start,
                             dm_error *err)
{
    rk_stepper *s = calloc(1, sizeof *s);
    if (s == NULL) {
        dm_error_set(err, DM_ENOMEM, "%s: out of memory creating the stepper", m->id);
        return NULL;
    }
    s->base.method = m;
    s->base.inst = inst;
    s->base.dof = inst->dof;
    s->base.config = *config;
    s->tableau = m->tableau;
    s->nystrom = m->nystrom;
    restart_at(s, start);
    return &s->base;
}

/* The step arithmetic is dm_rk_explicit_step (dm_fused_loop.h), the fused loop's own. */
static dm_status rk_step(dm_stepper *base, const dm_point *from, dm_point *to)
{
    rk_stepper *s = (rk_stepper *)base;
    const dm_rk_tableau *tab = s->tableau;
    const dm_instance *inst = base->inst;
    const dm_problem *problem = inst->problem;
    double h = base->config.h;
    if (from->x != s->state_x)
        restart_at(s, from);
    if (s->nystrom != NULL) {
        dm_rkn_step(inst, s->nystrom, h, from->x, to->x, base->dof, s->nystrom->stages,
                    dm_problem_gradient(problem), problem->velocity);
        base->counts.force_evals += (uint64_t)s->nystrom->stages;
        base->counts.velocity_evals += (uint64_t)s->nystrom->stages + 1;
    } else {
        dm_rk_explicit_step_any(inst, tab, h, from->x, to->x, base->dof,
                                dm_problem_gradient(problem), problem->velocity);
        base->counts.force_evals += (uint64_t)tab->stages;
        base->counts.velocity_evals += (uint64_t)tab->stages;
    }
    base->counts.steps++;
    to->t = dm_step_clock_next(&s->clock, h);
    to->potential = NAN; /* no slope is taken at the step's end */
    s->state_x = to->x;
    return DM_OK;
}

/* Whole runs of steps in the problem's fused loop (problem.h), when it has one. */
static dm_fused_event rk_run_fused(dm_stepper *base, dm_fused_run *run, uint64_t k_end)
{
    rk_stepper *s = (rk_stepper *)base;
    const dm_instance *inst = base->inst;
    if (inst->problem->fused_rk_loop == NULL || base->config.plain_steps)
        return DM_FUSED_UNSUPPORTED;
    const dm_fused_rk method = { .tableau = s->tableau, .nystrom = s->nystrom,
                                 .h = base->config.h };
    uint64_t k0 = run->k;
    int event = inst->problem->fused_rk_loop(inst, &method, &s->cache, run, k_end);
    base->counts.steps += run->k - k0;
    base->counts.force_evals += s->cache.evaluations;
    /* a Nystrom step takes one velocity more than forces: grad T(p0) */
    base->counts.velocity_evals += s->cache.evaluations + (s->nystrom ? run->k - k0 : 0);
    s->cache.evaluations = 0;
    return (dm_fused_event)event;
}

static dm_status rk_restart(dm_stepper *base, const dm_point *at)
{
    restart_at((rk_stepper *)base, at);
    return DM_OK;
}

static void rk_destroy(dm_stepper *base)
{
    free(base);
}

/* Checkpoints (method.h): the step clock; the stages are recomputed each step. */
static size_t rk_save(const dm_stepper *base, uint64_t *w, size_t capacity)
{
    const rk_stepper *s = (const rk_stepper *)base;
    if (capacity < 2)
        return 0;
    w[0] = dm_word_of_double(s->clock.origin);
    w[1] = s->clock.n;
    return 2;
}

static dm_status rk_load(dm_stepper *base, const uint64_t *w, size_t n, const dm_point *at,
                         const dm_counts *counts)
{
    rk_stepper *s = (rk_stepper *)base;
    if (n != 2)
        return dm_error_set(&base->error, DM_EINPUT, "%s: a checkpoint of %zu words, not 2",
                            base->method->id, n);
    restart_at(s, at);
    s->clock.origin = dm_double_of_word(w[0]);
    s->clock.n = w[1];
    base->counts = *counts;
    return DM_OK;
}

const dm_method dm_euler = {
    .id = "euler",
    .name = "explicit Euler",
    .reference = "L. Euler, Institutionum calculi integralis (1768); common practice",
    .family = DM_FAMILY_RUNGE_KUTTA,
    .order = 1,
    .symplectic = false,
    .symmetric = false,
    .force_evals_per_step = 1,
    .tableau = &dm_rk_euler_tableau,
    .create = rk_create,
    .step = rk_step,
    .run_fused = rk_run_fused,
    .restart = rk_restart,
    .destroy = rk_destroy,
    .save = rk_save,
    .load = rk_load,
};

const dm_method dm_rk4 = {
    .id = "rk4",
    .name = "classical Runge-Kutta 4th order",
    .reference = "W. Kutta, Z. Math. Phys. 46 (1901) 435-453; Hairer, Nørsett, Wanner, "
                 "Solving ODEs I, 2nd ed. (1993), §II.1",
    .family = DM_FAMILY_RUNGE_KUTTA,
    .order = 4,
    .symplectic = false,
    .symmetric = false,
    .force_evals_per_step = 4,
    .tableau = &dm_rk4_tableau,
    .create = rk_create,
    .step = rk_step,
    .run_fused = rk_run_fused,
    .restart = rk_restart,
    .destroy = rk_destroy,
    .save = rk_save,
    .load = rk_load,
};
