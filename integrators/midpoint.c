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
#include <float.h>
#include <inttypes.h>
#include <math.h>
#include <stdlib.h>

#include "method.h"

enum { MIDPOINT_DEFAULT_MAX_ITERATIONS = 100 };

/* Updates below this many ulps of |k| count as converged. */
#define CONVERGED_ULPS 4.0
/* An update that no longer shrinks is accepted as the round-off floor only when it is
 * already this small (in ulps of |k|); otherwise the iteration goes on (and fails at
 * the cap if it diverges or oscillates). */
#define STAGNATION_ULPS 1024.0

typedef struct midpoint_stepper {
    dm_stepper base;
    int max_iterations;
    double *mid;      /* 2 dof: the midpoint iterate k */
    double *slope;    /* 2 dof: f at the last iterate; also the predictor of the next step */
    const double *state_x;
    bool slope_valid;
    dm_step_clock clock;
} midpoint_stepper;

static void restart_at(midpoint_stepper *s, const dm_point *at)
{
    s->state_x = at->x;
    s->slope_valid = false;
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
    int n = 2 * inst->dof;
    midpoint_stepper *s = calloc(1, sizeof *s);
    double *work = calloc(2 * (size_t)n, sizeof *work);
    if (s == NULL || work == NULL) {
        free(s);
        free(work);
        dm_error_set(err, DM_ENOMEM, "%s: out of memory creating the stepper", m->id);
        return NULL;
    }
    s->base.method = m;
    s->base.inst = inst;
    s->base.dof = inst->dof;
    s->base.config = *config;
    s->max_iterations = config->max_iterations > 0 ? config->max_iterations
                                                   : MIDPOINT_DEFAULT_MAX_ITERATIONS;
    s->mid = work;
    s->slope = work + n;
    restart_at(s, start);
    return &s->base;
}

static dm_status midpoint_step(dm_stepper *base, const dm_point *from, dm_point *to)
{
    midpoint_stepper *s = (midpoint_stepper *)base;
    const dm_instance *inst = base->inst;
    const dm_problem *problem = inst->problem;
    int dof = base->dof, n = 2 * dof;
    double h = base->config.h, half_h = 0.5 * h;
    const double *y0 = from->x;
    double *k = s->mid, *f = s->slope;
    if (y0 != s->state_x)
        restart_at(s, from);

    /* Predictor: the last step's slope (an O(h^2)-accurate midpoint), else y0. */
    for (int c = 0; c < n; c++)
        k[c] = s->slope_valid ? y0[c] + half_h * f[c] : y0[c];

    double previous_update = INFINITY, update = INFINITY;
    int iterations = 0;
    bool converged = false;
    while (iterations < s->max_iterations) {
        problem->velocity(inst, k + dof, f);
        problem->force(inst, k, f + dof);
        iterations++;
        update = 0.0;
        double size = 0.0;
        for (int c = 0; c < n; c++) {
            if (c >= dof)
                f[c] = -f[c];
            double next = y0[c] + half_h * f[c];
            update = fmax(update, fabs(next - k[c]));
            size = fmax(size, fabs(next));
            k[c] = next;
        }
        if (!isfinite(update))
            break;
        double ulp = DBL_EPSILON * size;
        if (update <= CONVERGED_ULPS * ulp ||
            (update >= previous_update && update <= STAGNATION_ULPS * ulp)) {
            converged = true;
            break;
        }
        previous_update = update;
    }
    base->counts.force_evals += (uint64_t)iterations;
    base->counts.velocity_evals += (uint64_t)iterations;
    base->counts.nonlin_iters += (uint64_t)iterations;
    if ((uint64_t)iterations > base->counts.max_iters_in_step)
        base->counts.max_iters_in_step = (uint64_t)iterations;
    if (!converged) {
        s->slope_valid = false;
        return dm_error_set(&base->error, DM_ENUMERIC,
                            "%s: step %" PRIu64 " (t = %.17g, h = %g): fixed-point "
                            "iteration did not converge in %d iterations (last update %.3g)",
                            base->method->id, base->counts.steps + 1, from->t, h,
                            iterations, update);
    }
    /* y1 = y0 + h f(k) with f taken at the iterate the last update came from. */
    for (int c = 0; c < n; c++)
        to->x[c] = y0[c] + h * f[c];
    s->slope_valid = true;
    base->counts.steps++;
    to->t = dm_step_clock_next(&s->clock, h);
    to->potential = NAN; /* the force was taken at the midpoint, not at the end */
    s->state_x = to->x;
    return DM_OK;
}

static dm_status midpoint_restart(dm_stepper *base, const dm_point *at)
{
    restart_at((midpoint_stepper *)base, at);
    return DM_OK;
}

static void midpoint_destroy(dm_stepper *base)
{
    midpoint_stepper *s = (midpoint_stepper *)base;
    free(s->mid);
    free(s);
}

/* Checkpoints (method.h): the step clock and the predictor (the last step's slope). */
static size_t midpoint_save(const dm_stepper *base, uint64_t *w, size_t capacity)
{
    const midpoint_stepper *s = (const midpoint_stepper *)base;
    size_t n = 2 * (size_t)base->dof;
    if (capacity < 3 + n)
        return 0;
    w[0] = dm_word_of_double(s->clock.origin);
    w[1] = s->clock.n;
    w[2] = s->slope_valid;
    for (size_t c = 0; c < n; c++)
        w[3 + c] = dm_word_of_double(s->slope[c]);
    return 3 + n;
}

static dm_status midpoint_load(dm_stepper *base, const uint64_t *w, size_t n,
                               const dm_point *at, const dm_counts *counts)
{
    midpoint_stepper *s = (midpoint_stepper *)base;
    size_t want = 3 + 2 * (size_t)base->dof;
    if (n != want)
        return dm_error_set(&base->error, DM_EINPUT, "%s: a checkpoint of %zu words, not %zu",
                            base->method->id, n, want);
    restart_at(s, at);
    s->clock.origin = dm_double_of_word(w[0]);
    s->clock.n = w[1];
    s->slope_valid = w[2] != 0;
    for (size_t c = 0; c + 3 < want; c++)
        s->slope[c] = dm_double_of_word(w[3 + c]);
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
    .restart = midpoint_restart,
    .destroy = midpoint_destroy,
    .save = midpoint_save,
    .load = midpoint_load,
};
