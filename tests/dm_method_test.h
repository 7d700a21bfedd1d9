/* dm_method_test.h — small helpers the integrator tests share: building an instance
 * through the problem registry, running a method for a number of steps with the two
 * ping-pong buffers the harness uses, and taking one step of a method as a map. */
#ifndef DM_METHOD_TEST_H
#define DM_METHOD_TEST_H

#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "method.h"
#include "problem.h"

/* Problems another contributor may still be writing: the test says so and skips. */
static inline bool dm_test_problem_or_skip(const char *id)
{
    if (dm_problem_find(id) != NULL)
        return true;
    print_message("problem '%s' is not in the registry yet: skipped\n", id);
    return false;
}

static inline dm_instance dm_test_instance(const char *id, size_t n, const char *const *keys,
                                           const double *values)
{
    dm_instance inst;
    dm_error err = { 0 };
    const dm_problem *problem = dm_problem_find(id);
    if (problem == NULL)
        fail_msg("problem '%s' is not in the registry", id);
    if (dm_instance_init(&inst, problem, n, keys, values, &err) != DM_OK)
        fail_msg("%s: %s", id, err.msg);
    return inst;
}

static inline const dm_method *dm_test_method(const char *id)
{
    const dm_method *m = dm_method_find(id);
    if (m == NULL)
        fail_msg("method '%s' is not in the registry", id);
    return m;
}

/* Whether m takes inst (its check_problem, when it has one: wisdom-holman takes N-body
 * problems only, and is tested on them in tests/test_wisdom_holman.c). The loops over
 * the registry on other problems pass the methods it refuses over. */
static inline bool dm_test_method_takes(const dm_method *m, const dm_instance *inst)
{
    dm_error err = { 0 };
    return m->check_problem == NULL || m->check_problem(m, inst, &err) == DM_OK;
}

static inline dm_stepper *dm_test_stepper(const dm_method *m, const dm_instance *inst,
                                          double h, bool compensated, const dm_point *start)
{
    dm_method_config config = { .h = h, .compensated = compensated };
    dm_error err = { 0 };
    dm_stepper *s = dm_stepper_create(m, inst, &config, start, &err);
    if (s == NULL)
        fail_msg("%s: %s", m->id, err.msg);
    return s;
}

/* Runs `steps` steps of h from x0 (2 dof values) and leaves the end state in x_end.
 * Returns the counts; fails the test on a step error. */
static inline dm_counts dm_test_run(const dm_method *m, const dm_instance *inst, double h,
                                    long steps, const double *x0, double *x_end)
{
    double a[2 * DM_MAX_DOF], b[2 * DM_MAX_DOF];
    int n = 2 * inst->dof;
    memcpy(a, x0, (size_t)n * sizeof *a);
    dm_point from = { .t = 0.0, .x = a, .potential = NAN };
    dm_point to = { .t = 0.0, .x = b, .potential = NAN };
    dm_stepper *s = dm_test_stepper(m, inst, h, false, &from);
    for (long i = 0; i < steps; i++) {
        if (dm_stepper_step(s, &from, &to) != DM_OK)
            fail_msg("%s: step %ld: %s", m->id, i + 1, s->error.msg);
        dm_point swap = from;
        from = to;
        to = swap;
    }
    memcpy(x_end, from.x, (size_t)n * sizeof *x_end);
    dm_counts counts = s->counts;
    dm_stepper_destroy(s);
    return counts;
}

/* The starting state of an instance as one vector (q then p). */
static inline void dm_test_start(const dm_instance *inst, double *x)
{
    for (int i = 0; i < inst->dof; i++) {
        x[i] = inst->q0[i];
        x[inst->dof + i] = inst->p0[i];
    }
}

/* Least-squares slope of log(err) against log(h). */
static inline double dm_test_loglog_slope(const double *h, const double *err, int n)
{
    double sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (int i = 0; i < n; i++) {
        double x = log(h[i]), y = log(err[i]);
        sx += x;
        sy += y;
        sxx += x * x;
        sxy += x * y;
    }
    return (n * sxy - sx * sy) / (n * sxx - sx * sx);
}

#endif
