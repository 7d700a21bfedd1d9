/* splitting.h — the one engine that runs every splitting coefficient table.
 * Private to integrators/: the harness goes through method.h. */
#ifndef DM_SPLITTING_H
#define DM_SPLITTING_H

#include "method.h"

dm_stepper *dm_splitting_create(const dm_method *m, const dm_instance *inst,
                                const dm_method_config *config, const dm_point *start,
                                dm_error *err);
dm_status dm_splitting_step(dm_stepper *s, const dm_point *from, dm_point *to);
dm_status dm_splitting_restart(dm_stepper *s, const dm_point *at);
void dm_splitting_destroy(dm_stepper *s);
/* The fused loop, when the problem has one and the run is not compensated. */
dm_fused_event dm_splitting_run_fused(dm_stepper *s, dm_fused_run *run, uint64_t k_end);
/* Checkpoints (method.h): the step clock, both FSAL caches (the per-step path's and the
 * fused loop's) and the compensation, restored bit for bit. */
size_t dm_splitting_save(const dm_stepper *s, uint64_t *words, size_t capacity);
dm_status dm_splitting_load(dm_stepper *s, const uint64_t *words, size_t n,
                            const dm_point *at, const dm_counts *counts);

#endif
