/* midpoint.c — the implicit midpoint rule y1 = y0 + h f((y0 + y1) / 2): symplectic,
 * symmetric, second order (Hairer, Lubich, Wanner, Geometric Numerical Integration,
 * 2nd ed. (2006), ch. I.1 and §VI.4: the 1-stage Gauss method; from memory of the book).
 *
 * The implicit equation is solved by fixed-point iteration on the midpoint
 * k = y0 + (h/2) f(k), to machine precision: the iteration stops when the update is
 * below a few ulps of k, or when it stops shrinking once it is down at round-off level
 * (no further digit can be won). A step that does not converge within
 * config->max_iterations fails with DM_ENUMERIC and says which step and after how many
 * iterations. The work per step varies with h and the problem, so the table declares
 * no fixed force count; the counts record every evaluation. */
#include <inttypes.h>
#include <math.h>
#include <stdlib.h>

#include "dm_fused_loop.h"
#include "method.h"

enum { MIDPOINT_DEFAULT_MAX_ITERATIONS = 100 };

typedef struct midpoint_stepper {
    dm_stepper base;
    int max_iterations;
    double slope[2 * DM_MAX_DOF]; /* f at the last iterate; the next step's predictor */
    const double *state_x;
    bool slope_valid;
    dm_step_clock clock;
    dm_fused_rk_cache cache;      /* the same for the fused loop, and its counts */
} midpoint_stepper;

static void restart_at(midpoint_stepper *s, const dm_point *at)
{
    s->state_x = at->x;
    s->slope_valid = false;
    s->cache.slope_valid = false;
    dm_step_clock_start(&s->clock, at->t);
}

static dm_stepper *midpoint_create(const dm_method *m, const dm_instance *inst,
                                   const dm_method_config *config, const dm_point *start,
                                   dm_error *err)
{
    if (config->max_iterations < 0) {
        dm_error_set(err, DM_EINPUT, "%s: max_iterations = %d must be >= 0 (0: default %d)",
                     m->id, config->max_iterations, MIDPOINT_DEFAULT_MAX_ITERATIONS);
        return NULL;
    }
    midpoint_stepper *s = calloc(1, sizeof *s);
    if (s == NULL) {
        dm_error_set(err, DM_ENOMEM, "%s: out of memory creating the stepper", m->id);
        return NULL;
    }
    s->base.method = m;
    s->base.inst = inst;
    s->base.dof = inst->dof;
    s->base.config = *config;
    s->max_iterations = config->max_iterations > 0 ? config->max_iterations
                                                   : MIDPOINT_DEFAULT_MAX_ITERATIONS;
    restart_at(s, start);
    return &s->base;
}

/* The work of one step's iterations, converged or not. */
static void count_iterations(dm_stepper *base, int iterations)
{
    base->counts.force_evals += (uint64_t)iterations;
    base->counts.velocity_evals += (uint64_t)iterations;
    base->counts.nonlin_iters += (uint64_t)iterations;
    if ((uint64_t)iterations > base->counts.max_iters_in_step)
        base->counts.max_iters_in_step = (uint64_t)iterations;
}

/* Why step steps + 1, from time t, failed. */
static dm_status fail(dm_stepper *base, double t, int iterations, double update)
{
    return dm_error_set(&base->error, DM_ENUMERIC,
                        "%s: step %" PRIu64 " (t = %.17g, h = %g): fixed-point "
                        "iteration did not converge in %d iterations (last update %.3g)",
                        base->method->id, base->counts.steps + 1, t, base->config.h,
                        iterations, update);
}

/* The step arithmetic is dm_midpoint_step (dm_fused_loop.h), the fused loop's own. */
static dm_status midpoint_step(dm_stepper *base, const dm_point *from, dm_point *to)
{
    midpoint_stepper *s = (midpoint_stepper *)base;
    const dm_instance *inst = base->inst;
    const dm_problem *problem = inst->problem;
    double h = base->config.h;
    if (from->x != s->state_x)
        restart_at(s, from);
    int iterations;
    double update;
    bool converged = dm_midpoint_step(inst, h, s->max_iterations, from->x, to->x, s->slope,
                                      &s->slope_valid, base->dof,
                                      dm_problem_gradient(problem), problem->velocity,
                                      &iterations, &update);
    count_iterations(base, iterations);
    if (!converged)
        return fail(base, from->t, iterations, update);
    base->counts.steps++;
    to->t = dm_step_clock_next(&s->clock, h);
    to->potential = NAN; /* the force was taken at the midpoint, not at the end */
    s->state_x = to->x;
    return DM_OK;
}

/* Whole runs of steps in the problem's fused loop (problem.h), when it has one. */
static dm_fused_event midpoint_run_fused(dm_stepper *base, dm_fused_run *run,
                                         uint64_t k_end)
{
    midpoint_stepper *s = (midpoint_stepper *)base;
    const dm_instance *inst = base->inst;
    if (inst->problem->fused_rk_loop == NULL || base->config.plain_steps)
        return DM_FUSED_UNSUPPORTED;
    const dm_fused_rk method = { .tableau = NULL, .h = base->config.h,
                                 .max_iterations = s->max_iterations };
    uint64_t k0 = run->k;
    s->cache.max_iterations_in_step = base->counts.max_iters_in_step;
    s->cache.evaluations = 0;
    int event = inst->problem->fused_rk_loop(inst, &method, &s->cache, run, k_end);
    uint64_t evaluations = s->cache.evaluations;
    base->counts.force_evals += evaluations;
    base->counts.velocity_evals += evaluations;
    base->counts.nonlin_iters += evaluations;
    base->counts.max_iters_in_step = s->cache.max_iterations_in_step;
    base->counts.steps += run->k - k0;
    if (event == DM_FUSED_FAILED)
        fail(base, dm_step_time(0.0, run->k, base->config.h), s->cache.failed_iterations,
             s->cache.failed_update);
    return (dm_fused_event)event;
}

static dm_status midpoint_restart(dm_stepper *base, const dm_point *at)
{
    restart_at((midpoint_stepper *)base, at);
    return DM_OK;
}

static void midpoint_destroy(dm_stepper *base)
{
    free(base);
}

/* Checkpoints (method.h): the step clock and the predictor (the last step's slope), of
 * the per-step path and of the fused loop (each keeps its own). */
static size_t midpoint_save(const dm_stepper *base, uint64_t *w, size_t capacity)
{
    const midpoint_stepper *s = (const midpoint_stepper *)base;
    size_t n = 2 * (size_t)base->dof;
    if (capacity < 4 + 2 * n)
        return 0;
    w[0] = dm_word_of_double(s->clock.origin);
    w[1] = s->clock.n;
    w[2] = s->slope_valid;
    w[3] = s->cache.slope_valid;
    for (size_t c = 0; c < n; c++) {
        w[4 + c] = dm_word_of_double(s->slope[c]);
        w[4 + n + c] = dm_word_of_double(s->cache.slope[c]);
    }
    return 4 + 2 * n;
}

static dm_status midpoint_load(dm_stepper *base, const uint64_t *w, size_t n_words,
                               const dm_point *at, const dm_counts *counts)
{
    midpoint_stepper *s = (midpoint_stepper *)base;
    size_t n = 2 * (size_t)base->dof, want = 4 + 2 * n;
    if (n_words != want)
        return dm_error_set(&base->error, DM_EINPUT, "%s: a checkpoint of %zu words, not %zu",
                            base->method->id, n_words, want);
    restart_at(s, at);
    s->clock.origin = dm_double_of_word(w[0]);
    s->clock.n = w[1];
    s->slope_valid = w[2] != 0;
    s->cache.slope_valid = w[3] != 0;
    for (size_t c = 0; c < n; c++) {
        s->slope[c] = dm_double_of_word(w[4 + c]);
        s->cache.slope[c] = dm_double_of_word(w[4 + n + c]);
    }
    base->counts = *counts;
    return DM_OK;
}

const dm_method dm_midpoint = {
    .id = "midpoint",
    .name = "implicit midpoint rule",
    .reference = "Hairer, Lubich, Wanner, Geometric Numerical Integration, 2nd ed. "
                 "(2006), ch. I.1 and §VI.4",
    .family = DM_FAMILY_IMPLICIT,
    .order = 2,
    .symplectic = true,
    .symmetric = true,
    .force_evals_per_step = 0, /* varies: one per fixed-point iteration (see counts) */
    .create = midpoint_create,
    .step = midpoint_step,
    .run_fused = midpoint_run_fused,
    .restart = midpoint_restart,
    .destroy = midpoint_destroy,
    .save = midpoint_save,
    .load = midpoint_load,
};
