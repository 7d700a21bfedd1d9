/* registry.c — the list of methods and the stepper API the harness calls. */
#include <math.h>
#include <string.h>

#include "method.h"
#include "splitting.h"

/* Splitting methods: tables run by splitting.c. */
extern const dm_method dm_symeuler_a, dm_symeuler_b, dm_verlet, dm_verlet_dkd;
extern const dm_method dm_yoshida4, dm_yoshida6, dm_yoshida8, dm_suzuki4, dm_optimized4;
/* Methods with their own steps. */
extern const dm_method dm_euler, dm_rk4, dm_midpoint;
/* Methods for problems of a given structure. */
extern const dm_method dm_wisdom_holman;

/* Adaptive methods (integrators/cvode.c). */
extern const dm_method dm_cvode_bdf, dm_cvode_adams;

/* A new method: one file in integrators/ and one line here. */
const dm_method *const dm_methods[] = {
    &dm_symeuler_a,
    &dm_symeuler_b,
    &dm_verlet,
    &dm_verlet_dkd,
    &dm_yoshida4,
    &dm_yoshida6,
    &dm_yoshida8,
    &dm_suzuki4,
    &dm_optimized4,
    &dm_wisdom_holman,
    &dm_midpoint,
    &dm_euler,
    &dm_rk4,
    &dm_cvode_bdf,
    &dm_cvode_adams,
};
const size_t dm_method_count = sizeof dm_methods / sizeof dm_methods[0];

const dm_method *dm_method_find(const char *id)
{
    for (size_t i = 0; i < dm_method_count; i++)
        if (strcmp(dm_methods[i]->id, id) == 0)
            return dm_methods[i];
    return NULL;
}

const char *dm_family_name(dm_family family)
{
    switch (family) {
    case DM_FAMILY_SPLITTING: return "splitting";
    case DM_FAMILY_RUNGE_KUTTA: return "runge-kutta";
    case DM_FAMILY_IMPLICIT: return "implicit";
    case DM_FAMILY_ADAPTIVE: return "adaptive";
    }
    return "unknown";
}

/* Every fixed-step method needs a finite, nonzero h: checked here, once for all. */
static dm_status check_step(const dm_method *m, double h, dm_error *err)
{
    if (!m->adaptive && (!isfinite(h) || h == 0.0))
        return dm_error_set(err, DM_EINPUT, "%s: step size h = %g must be finite and nonzero",
                            m->id, h);
    return DM_OK;
}

dm_stepper *dm_stepper_create(const dm_method *m, const dm_instance *inst,
                              const dm_method_config *config, const dm_point *start,
                              dm_error *err)
{
    if (check_step(m, config->h, err) != DM_OK)
        return NULL;
    if (m->splitting != NULL)
        return dm_splitting_create(m, inst, config, start, err);
    return m->create(m, inst, config, start, err);
}

dm_status dm_stepper_step(dm_stepper *s, const dm_point *from, dm_point *to)
{
    if (s->method->splitting != NULL)
        return dm_splitting_step(s, from, to);
    return s->method->step(s, from, to);
}

dm_status dm_stepper_restart(dm_stepper *s, const dm_point *at)
{
    if (s->method->splitting != NULL)
        return dm_splitting_restart(s, at);
    return s->method->restart(s, at);
}

dm_status dm_stepper_set_step(dm_stepper *s, double h, const dm_point *at)
{
    if (s->method->adaptive)
        return dm_error_set(&s->error, DM_EINPUT, "%s: adaptive methods choose their own steps",
                            s->method->id);
    if (check_step(s->method, h, &s->error) != DM_OK)
        return s->error.code;
    s->config.h = h;
    return dm_stepper_restart(s, at);
}

dm_fused_event dm_stepper_run_fused(dm_stepper *s, dm_fused_run *run, uint64_t k_end)
{
    if (s->method->splitting != NULL)
        return dm_splitting_run_fused(s, run, k_end);
    if (s->method->run_fused != NULL)
        return s->method->run_fused(s, run, k_end);
    return DM_FUSED_UNSUPPORTED;
}

const dm_counts *dm_stepper_counts(dm_stepper *s)
{
    if (s->method->sync_counts != NULL)
        s->method->sync_counts(s);
    return &s->counts;
}

void dm_stepper_destroy(dm_stepper *s)
{
    if (s == NULL)
        return;
    if (s->method->splitting != NULL)
        dm_splitting_destroy(s);
    else
        s->method->destroy(s);
}

/* ---- checkpoints: the work counted, then the method's own words ---- */

#define COUNT_WORDS (sizeof(dm_counts) / sizeof(uint64_t))

size_t dm_stepper_save(dm_stepper *s, uint64_t *words, size_t capacity)
{
    if (capacity > DM_STEPPER_RECORD_MAX)
        capacity = DM_STEPPER_RECORD_MAX;
    if (capacity < COUNT_WORDS)
        return 0;
    memcpy(words, dm_stepper_counts(s), sizeof(dm_counts));
    size_t own = 0;
    if (s->method->splitting != NULL)
        own = dm_splitting_save(s, words + COUNT_WORDS, capacity - COUNT_WORDS);
    else if (s->method->save != NULL)
        own = s->method->save(s, words + COUNT_WORDS, capacity - COUNT_WORDS);
    return COUNT_WORDS + own;
}

dm_status dm_stepper_load(dm_stepper *s, const uint64_t *words, size_t n, const dm_point *at)
{
    if (n < COUNT_WORDS || (s->method->splitting == NULL && s->method->load == NULL))
        return dm_error_set(&s->error, DM_EINPUT, "%s: a checkpoint of %zu words is not one "
                            "of this method's", s->method->id, n);
    dm_counts counts;
    memcpy(&counts, words, sizeof counts);
    if (s->method->splitting != NULL)
        return dm_splitting_load(s, words + COUNT_WORDS, n - COUNT_WORDS, at, &counts);
    return s->method->load(s, words + COUNT_WORDS, n - COUNT_WORDS, at, &counts);
}
