/* registry.c — the list of problems, and the checks every problem's parameters share. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "dm_number_text.h"
#include "problem.h"

extern const dm_problem dm_problem_harmonic;
extern const dm_problem dm_problem_pendulum;
extern const dm_problem dm_problem_double_well;
extern const dm_problem dm_problem_morse;
extern const dm_problem dm_problem_kepler;
extern const dm_problem dm_problem_nbody;
extern const dm_problem dm_problem_henon_heiles;

/* A new problem: one file in problems/ and one line here. */
const dm_problem *const dm_problems[] = {
    &dm_problem_harmonic,
    &dm_problem_pendulum,
    &dm_problem_double_well,
    &dm_problem_morse,
    &dm_problem_kepler,
    &dm_problem_nbody,
    &dm_problem_henon_heiles,
};
const size_t dm_problem_count = sizeof dm_problems / sizeof dm_problems[0];

const dm_problem *dm_problem_find(const char *id)
{
    for (size_t i = 0; i < dm_problem_count; i++)
        if (strcmp(dm_problems[i]->id, id) == 0)
            return dm_problems[i];
    return NULL;
}

int dm_problem_param_index(const dm_problem *problem, const char *name)
{
    for (int i = 0; i < problem->n_params; i++)
        if (strcmp(problem->params[i].name, name) == 0)
            return i;
    return -1;
}

bool dm_param_min_open(const dm_param *p)
{
    return isinf(p->min) || (p->flags & DM_PARAM_MIN_OPEN);
}

bool dm_param_max_open(const dm_param *p)
{
    return isinf(p->max) || (p->flags & DM_PARAM_MAX_OPEN);
}

void dm_param_range_text(const dm_param *p, char *buf, size_t size)
{
    char lo[40], hi[40];
    dm_number_text(p->min, lo, sizeof lo);
    dm_number_text(p->max, hi, sizeof hi);
    snprintf(buf, size, "%s%s, %s%s", dm_param_min_open(p) ? "(" : "[", lo, hi,
             dm_param_max_open(p) ? ")" : "]");
}

/* The smallest energy scale a run may measure its energy error against, relative to
 * the size of the energies it adds up (|T|, |V|, |H|, |V_min|). Common practice, our
 * choice: the round-off of H alone (about 1.1e-16 of that size) then stays below about
 * 1e-4 of the scale, so a method's energy error is not swamped before its first step. */
#define DM_ENERGY_SCALE_MIN_REL 1e-12

/* A state finite in every number can still be beyond double precision for a run, which
 * sees its energy only as T + V in double precision (harness/runner.c):
 *  - that energy must lie in the state's own regime (morse amplitude 50: E rounds to
 *    D, the escape energy, though setup's quad arithmetic found it bound);
 *  - the run's energy scale (dm_energy_scale: H0 - V_min, or |H0| without a minimum)
 *    must be resolved:
 *    harmonic omega 1e-300 (omega^2 underflows: H0 = V_min = 0, the particle never
 *    moves) and pendulum energy -0.9999999999999999 (a scale of 1e-16) are refused. */
static dm_status check_resolved(const dm_instance *inst, double potential, dm_error *err)
{
    const dm_problem *problem = inst->problem;
    double kinetic = problem->kinetic(inst, inst->p0);
    double H0 = kinetic + potential;
    if (problem->regime_of_energy != NULL &&
        problem->regime_of_energy(inst, H0) != inst->regime)
        return dm_error_set(err, DM_EINPUT,
                            "%s: in double precision the starting energy is %.17g, outside "
                            "the %s regime of this state (expected a state whose energy "
                            "double precision can tell from the regime's edge)", problem->id,
                            H0, problem->regimes[inst->regime].id);
    double size = fmax(fmax(fabs(kinetic), fabs(potential)), fabs(H0));
    if (inst->has_v_min)
        size = fmax(size, fmax(fabs(inst->v_min), fabs(inst->t_min)));
    const char *rule;
    double scale = dm_energy_scale(inst, H0, &rule);
    if (!(scale > 0.0) || scale < DM_ENERGY_SCALE_MIN_REL * size)
        return dm_error_set(err, DM_EINPUT,
                            "%s: the energy scale %s is %.3g beside energies of size %.3g: "
                            "below what double precision resolves (expected a scale of at "
                            "least %g of them; a larger amplitude or energy)", problem->id,
                            rule, scale, size,
                            DM_ENERGY_SCALE_MIN_REL);
    return DM_OK;
}

dm_status dm_instance_init(dm_instance *inst, const dm_problem *problem, size_t n,
                           const char *const *keys, const double *values, dm_error *err)
{
    return dm_instance_init_data(inst, problem, NULL, n, keys, values, err);
}

dm_status dm_instance_init_data(dm_instance *inst, const dm_problem *problem,
                                const void *data, size_t n, const char *const *keys,
                                const double *values, dm_error *err)
{
    memset(inst, 0, sizeof *inst);
    inst->problem = problem;
    inst->dof = problem->dof;
    inst->data = data;
    if (problem->needs_data && data == NULL)
        return dm_error_set(err, DM_EINPUT, "%s: this problem needs its data (for N-body, "
                            "the bodies), which only a suite gives", problem->id);
    for (int i = 0; i < problem->n_params; i++)
        inst->param[i] = problem->params[i].fallback;

    const char *names[DM_MAX_PARAMS];
    for (int i = 0; i < problem->n_params; i++)
        names[i] = problem->params[i].name;

    int start_given = -1;
    for (size_t k = 0; k < n; k++) {
        int i = dm_problem_param_index(problem, keys[k]);
        if (i < 0) {
            const char *hint = dm_suggest(keys[k], names, (size_t)problem->n_params);
            if (hint)
                return dm_error_set(err, DM_EINPUT,
                                    "%s: unknown parameter '%s' (did you mean '%s'?)",
                                    problem->id, keys[k], hint);
            return dm_error_set(err, DM_EINPUT, "%s: unknown parameter '%s'", problem->id,
                                keys[k]);
        }
        const dm_param *p = &problem->params[i];
        double v = values[k];
        if (inst->given & (1u << i))
            return dm_error_set(err, DM_EINPUT, "%s: parameter '%s' given twice",
                                problem->id, p->name);
        if (!isfinite(v))
            return dm_error_set(err, DM_EINPUT, "%s: %s must be a finite number", problem->id,
                                p->name);
        bool below = (p->flags & DM_PARAM_MIN_OPEN) ? !(v > p->min) : !(v >= p->min);
        bool above = (p->flags & DM_PARAM_MAX_OPEN) ? !(v < p->max) : !(v <= p->max);
        if (below || above) {
            char range[160], typed[32];
            dm_param_range_text(p, range, sizeof range);
            dm_number_text(v, typed, sizeof typed); /* 0.3 as typed, not 0.29999999999999999 */
            return dm_error_set(err, DM_EINPUT, "%s: %s = %s is outside its range %s",
                                problem->id, p->name, typed, range);
        }
        if (p->flags & DM_PARAM_START) {
            if (start_given >= 0)
                return dm_error_set(err, DM_EINPUT,
                                    "%s: give either %s or %s, not both", problem->id,
                                    problem->params[start_given].name, p->name);
            start_given = i;
        }
        inst->param[i] = v;
        inst->given |= 1u << i;
    }
    dm_status st = problem->setup(inst, err);
    if (st != DM_OK)
        return st;
    /* Parameters each in range can still combine into a state beyond double precision
     * (omega = 1e160 squares to infinity; a huge energy gives a NaN period): a run from
     * it would report nonsense, so it is refused here, for every problem. */
    double grad[DM_MAX_DOF];
    double potential = problem->force(inst, inst->q0, grad);
    const char *what = NULL;
    double value = 0.0;
    for (int i = 0; i < inst->dof && what == NULL; i++) {
        if (!isfinite(inst->q0[i]))
            what = "starting position", value = inst->q0[i];
        else if (!isfinite(inst->p0[i]))
            what = "starting momentum", value = inst->p0[i];
        else if (!isfinite(grad[i]))
            what = "force at the start", value = grad[i];
    }
    if (what == NULL && !isfinite(potential))
        what = "potential at the start", value = potential;
    if (what == NULL && !isfinite(inst->energy))
        what = "energy", value = inst->energy;
    if (what == NULL && !problem->no_period && !(isfinite(inst->period) && inst->period > 0.0))
        what = "period", value = inst->period;
    if (what == NULL && !problem->no_period && !isfinite(inst->first_crossing))
        what = "first section crossing time", value = inst->first_crossing;
    if (what != NULL)
        return dm_error_set(err, DM_EINPUT,
                            "%s: the %s is %g, beyond double precision (expected parameters "
                            "whose starting state, energy and period are finite)",
                            problem->id, what, value);
    return check_resolved(inst, potential, err);
}

double dm_instance_energy(const dm_instance *inst, const double *q, const double *p)
{
    return inst->problem->kinetic(inst, p) + inst->problem->potential(inst, q);
}

/* How far q[coord] lies above the section's level (negative below it). The exact
 * solution's angle is not reduced modulo `wrap`, so with wrap > 0 the number of the
 * level below is floor(offset / wrap) and a crossing shows as that number going up. */
static double offset_from_level(const dm_section *s, const double *q)
{
    return q[s->coord] - s->level;
}

double dm_first_crossing_from_exact(const dm_instance *inst)
{
    const dm_section *s = &inst->section;
    const int grid = 4096;
    double T = inst->period;
    double q[DM_MAX_DOF], p[DM_MAX_DOF];
    double tprev = 0.0;
    inst->problem->exact(inst, 0.0, q, p);
    double fprev = offset_from_level(s, q);
    double kprev = s->wrap > 0 ? floor(fprev / s->wrap) : (fprev >= 0 ? 0.0 : -1.0);
    for (int i = 1; i <= grid; i++) {
        double t = T * i / grid;
        inst->problem->exact(inst, t, q, p);
        double f = offset_from_level(s, q);
        double k = s->wrap > 0 ? floor(f / s->wrap) : (f >= 0 ? 0.0 : -1.0);
        if (k > kprev) {
            /* Upward crossing of level + k * wrap inside (tprev, t]: bisect. */
            double target = s->wrap > 0 ? k * s->wrap : 0.0;
            double a = tprev, b = t;
            for (int it = 0; it < 200 && b - a > 0; it++) {
                double mid = 0.5 * (a + b);
                if (mid <= a || mid >= b)
                    break;
                inst->problem->exact(inst, mid, q, p);
                if (offset_from_level(s, q) >= target)
                    b = mid;
                else
                    a = mid;
            }
            return b;
        }
        tprev = t;
        fprev = f;
        kprev = k;
    }
    return NAN;
}
