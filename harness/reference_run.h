/* reference_run.h — the reference trajectory of a run (the suite's `reference: true`):
 * two order-8 triple-jump trajectories in dm_quad (integrators' reference.h), at steps
 * H and H / 2; the finer is the reference the global error is measured against, their
 * distance the estimate of the coarser one's error (so an upper estimate of the finer
 * one's: about 2^8 times its error where the error goes as H^8).
 *
 * The step is chosen from the horizon alone (so it is the same for every run of a
 * problem variant over one horizon, whatever the method, the step, the buckets, the
 * jobs or the units): H = t_end / 2^j, j from 6 up, the first whose two trajectories
 * differ over the first 1/64 of the horizon by at most reference_tolerance / 64 in
 * the unit-free phase-space distance (dm_phase_distance), a difference growing at most
 * linearly over the horizon then staying within the tolerance; unless the whole pair's
 * cost (3 2^j 27 gradient_quad evaluations) would exceed reference_force_evals: then
 * the last affordable j, and the run's reference_note says so. */
#ifndef DM_REFERENCE_RUN_H
#define DM_REFERENCE_RUN_H

#include <stdbool.h>

#include "harness.h"
#include "reference.h"

typedef struct dm_reference_pair {
    dm_reference coarse, fine;
    double scale[2];                 /* dm_phase_scale of the instance */
    bool met;                        /* the trial met the tolerance */
    double projected;                /* the trial's difference times 64 (unit-free) */
    uint64_t trial_forces;
    double seconds;                  /* wall time spent, the trial included */
} dm_reference_pair;

/* Chooses the step (above) and starts both trajectories. */
dm_status dm_reference_pair_start(dm_reference_pair *rp, const dm_run_spec *spec,
                                  dm_error *err);

/* The reference state at t into x (2 dof doubles, the finer trajectory rounded) and
 * the estimate of its error: the phase-space distance of the two trajectories there, in
 * the problem's units (the global error's measure). `run` (2 dof, may be NULL): a state
 * whose distance to the reference is returned in *global, computed in dm_quad. */
void dm_reference_pair_at(dm_reference_pair *rp, double t, const double *run,
                          double *global, double *estimate);

/* gradient_quad evaluations so far, the trial's included. */
uint64_t dm_reference_pair_forces(const dm_reference_pair *rp);

#endif
