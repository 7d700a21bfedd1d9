/* rk.c — explicit Runge–Kutta baselines: explicit Euler and classical RK4. Neither is
 * symplectic nor symmetric: they are the contrast against which the geometric methods
 * are measured (energy drift, growing phase error).
 *
 * One small engine runs any explicit Butcher tableau on y = (q, p) with
 * dq/dt = grad T(p), dp/dt = -grad V(q). */
#include <math.h>
#include <stdlib.h>

#include "method.h"

#define RK_MAX_STAGES 4

typedef struct rk_tableau {
    int stages;
    double a[RK_MAX_STAGES][RK_MAX_STAGES]; /* strictly lower triangular */
    double b[RK_MAX_STAGES];
} rk_tableau;

typedef struct rk_stepper {
    dm_stepper base;
    const rk_tableau *tableau;
    double *k;        /* stages x 2 dof slopes */
    double *stage;    /* 2 dof: the state at which a slope is taken */
    const double *state_x;
    dm_step_clock clock;
} rk_stepper;

/* Explicit Euler: y1 = y0 + h f(y0) (common practice). */
static const rk_tableau euler_tableau = { .stages = 1, .b = { 1.0 } };

/* Classical RK4 (Kutta 1901; Hairer, Nørsett, Wanner, Solving ODEs I, §II.1; from
 * memory of the book). */
static const rk_tableau rk4_tableau = {
    .stages = 4,
    .a = { { 0 }, { 0.5 }, { 0.0, 0.5 }, { 0.0, 0.0, 1.0 } },
    .b = { 1.0 / 6.0, 1.0 / 3.0, 1.0 / 3.0, 1.0 / 6.0 },
};

static void restart_at(rk_stepper *s, const dm_point *at)
{
    s->state_x = at->x;
    dm_step_clock_start(&s->clock, at->t);
}

static dm_stepper *rk_create(const rk_tableau *tab, const dm_method *m,
                             const dm_instance *inst, const dm_method_config *config,
                             const dm_point *start, dm_error *err)
{
    int n = 2 * inst->dof;
    rk_stepper *s = calloc(1, sizeof *s);
    double *work = calloc((size_t)(tab->stages + 1) * (size_t)n, sizeof *work);
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
    s->tableau = tab;
    s->k = work;
    s->stage = work + (size_t)tab->stages * (size_t)n;
    restart_at(s, start);
    return &s->base;
}

static dm_stepper *euler_create(const dm_method *m, const dm_instance *inst,
                                const dm_method_config *config, const dm_point *start,
                                dm_error *err)
{
    return rk_create(&euler_tableau, m, inst, config, start, err);
}

static dm_stepper *rk4_create(const dm_method *m, const dm_instance *inst,
                              const dm_method_config *config, const dm_point *start,
                              dm_error *err)
{
    return rk_create(&rk4_tableau, m, inst, config, start, err);
}

static dm_status rk_step(dm_stepper *base, const dm_point *from, dm_point *to)
{
    rk_stepper *s = (rk_stepper *)base;
    const rk_tableau *tab = s->tableau;
    const dm_instance *inst = base->inst;
    const dm_problem *problem = inst->problem;
    int dof = base->dof, n = 2 * dof;
    double h = base->config.h;
    const double *y0 = from->x;
    if (y0 != s->state_x)
        restart_at(s, from);

    for (int i = 0; i < tab->stages; i++) {
        for (int c = 0; c < n; c++) {
            double sum = 0.0;
            for (int j = 0; j < i; j++)
                sum += tab->a[i][j] * s->k[j * n + c];
            s->stage[c] = y0[c] + h * sum;
        }
        double *k = s->k + i * n;
        problem->velocity(inst, s->stage + dof, k);
        problem->force(inst, s->stage, k + dof);
        for (int c = dof; c < n; c++)
            k[c] = -k[c];
    }
    for (int c = 0; c < n; c++) {
        double sum = 0.0;
        for (int i = 0; i < tab->stages; i++)
            sum += tab->b[i] * s->k[i * n + c];
        to->x[c] = y0[c] + h * sum;
    }
    base->counts.force_evals += (uint64_t)tab->stages;
    base->counts.velocity_evals += (uint64_t)tab->stages;
    base->counts.steps++;
    to->t = dm_step_clock_next(&s->clock, h);
    to->potential = NAN; /* no slope is taken at the step's end */
    s->state_x = to->x;
    return DM_OK;
}

static dm_status rk_restart(dm_stepper *base, const dm_point *at)
{
    restart_at((rk_stepper *)base, at);
    return DM_OK;
}

static void rk_destroy(dm_stepper *base)
{
    rk_stepper *s = (rk_stepper *)base;
    free(s->k);
    free(s);
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
    .create = euler_create,
    .step = rk_step,
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
    .create = rk4_create,
    .step = rk_step,
    .restart = rk_restart,
    .destroy = rk_destroy,
    .save = rk_save,
    .load = rk_load,
};
