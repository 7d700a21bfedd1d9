/* reference_run.c — a run's reference trajectory (reference_run.h). */
#include "reference_run.h"

#include <math.h>
#include <stdio.h>

#include "dm_clock.h"

#define TRIAL_PARTS 64     /* the trial covers 1 / TRIAL_PARTS of the horizon */
#define FIRST_POWER 6      /* H = t_end / 2^6 at first: one step over the trial */
#define LAST_POWER 60

/* The unit-free distance of the two trajectories at t. */
static double trial_distance(dm_reference_pair *rp, double t)
{
    const int n = rp->fine.inst->dof;
    dm_quad a[2 * DM_MAX_DOF], b[2 * DM_MAX_DOF];
    double x[2 * DM_MAX_DOF], y[2 * DM_MAX_DOF];
    dm_reference_state_at(&rp->coarse, t, a);
    dm_reference_state_at(&rp->fine, t, b);
    for (int i = 0; i < 2 * n; i++) {
        x[i] = 0.0;
        y[i] = (double)(a[i] - b[i]);
    }
    return dm_phase_distance(x, y, n, rp->scale);
}

static dm_status start_both(dm_reference_pair *rp, const dm_instance *inst, double t_end,
                            int j, dm_error *err)
{
    double H = ldexp(t_end, -j);
    dm_status st = dm_reference_start(&rp->coarse, inst, H, err);
    if (st == DM_OK)
        st = dm_reference_start(&rp->fine, inst, 0.5 * H, err);
    return st;
}

dm_status dm_reference_pair_start(dm_reference_pair *rp, const dm_run_spec *spec,
                                  dm_error *err)
{
    double t0 = dm_clock_seconds();
    const dm_instance *inst = &spec->inst;
    const double t_end = spec->t_end, span = t_end / TRIAL_PARTS;
    dm_phase_scale(inst, rp->scale);
    rp->met = false;
    rp->projected = NAN;
    rp->trial_forces = 0;
    int j = FIRST_POWER;
    for (;; j++) {
        double full_cost = 3.0 * ldexp(1.0, j) * DM_REFERENCE_STAGES;
        if (full_cost > spec->reference_force_evals && j > FIRST_POWER) {
            j--; /* the last affordable step; its trial fell short */
            break;
        }
        dm_status st = start_both(rp, inst, t_end, j, err);
        if (st != DM_OK)
            return st;
        double d = trial_distance(rp, span);
        rp->trial_forces += rp->coarse.forces + rp->fine.forces;
        rp->projected = d * TRIAL_PARTS;
        if (rp->projected <= spec->reference_tolerance) {
            rp->met = true;
            break;
        }
        if (j == LAST_POWER)
            break;
    }
    dm_status st = start_both(rp, inst, t_end, j, err);
    if (st == DM_OK) {
        rp->coarse.forces = rp->fine.forces = 0;
        rp->trial_forces += 2; /* the two starts' gradients */
    }
    rp->seconds = dm_clock_seconds() - t0;
    return st;
}

void dm_reference_pair_at(dm_reference_pair *rp, double t, const double *run,
                          double *global, double *estimate)
{
    double t0 = dm_clock_seconds();
    const int n = rp->fine.inst->dof;
    dm_quad a[2 * DM_MAX_DOF], b[2 * DM_MAX_DOF];
    dm_reference_state_at(&rp->coarse, t, a);
    dm_reference_state_at(&rp->fine, t, b);
    double se = 0.0, sg = 0.0;
    for (int i = 0; i < 2 * n; i++) {
        double e = (double)(a[i] - b[i]);
        se += e * e;
        if (run != NULL) {
            double g = (double)((dm_quad)run[i] - b[i]);
            sg += g * g;
        }
    }
    *estimate = sqrt(se);
    if (global != NULL)
        *global = run != NULL ? sqrt(sg) : NAN;
    rp->seconds += dm_clock_seconds() - t0;
}

uint64_t dm_reference_pair_forces(const dm_reference_pair *rp)
{
    return rp->trial_forces + rp->coarse.forces + rp->fine.forces;
}
