/* runner.c — one integration with every monitor on, nothing stored per step.
 *
 * Per step the loop does: one method step (out of place into the other buffer), the
 * energy error from T + V (V comes free from the step's last force when the method
 * computed it), the running and per-bucket extremes, a divergence check, and one
 * comparison against the section. Everything else (exact solutions, invariants, the
 * crossing location by cubic Hermite interpolation, bookkeeping) happens once per
 * bucket or once per crossing.
 */
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "dm_clock.h"
#include "dm_line_fit.h"
#include "dm_number_text.h"
#include "checkpoint.h"
#include "harness.h"
#include "reference_run.h"

/* A stop request is polled, and the progress published, every POLL_STEPS steps of a
 * fixed-step run (every ADAPTIVE_POLL_STEPS adaptive steps) and at bucket ends. */
#define POLL_STEPS ((uint64_t)1 << 16)
#define ADAPTIVE_POLL_STEPS ((uint64_t)4096)

const char *dm_run_status_name(dm_run_status status)
{
    switch (status) {
    case DM_RUN_NOT_RUN: return "not_run";
    case DM_RUN_OK: return "ok";
    case DM_RUN_DIVERGED: return "diverged";
    case DM_RUN_FAILED: return "failed";
    case DM_RUN_INTERRUPTED: return "interrupted";
    case DM_RUN_SWAMPED: return "swamped";
    }
    return "unknown";
}

void dm_run_result_drop_series(dm_run_result *result)
{
    if (result == NULL)
        return;
#define FREE_SERIES(name, always) free(result->series.name);
    DM_SERIES_LIST(FREE_SERIES)
#undef FREE_SERIES
    for (int i = 0; i < DM_MAX_INVARIANTS; i++)
        free(result->series.invariant_error[i]);
    free(result->crossings.number);
    free(result->crossings.time);
    free(result->crossings.phase_error);
    free(result->crossings.section_q);
    free(result->crossings.section_p);
    free(result->checkpoint);
    /* the counts of crossings seen and their stride are figures: they stay */
    uint64_t total = result->crossings.total, stride = result->crossings.stride;
    memset(&result->series, 0, sizeof result->series);
    memset(&result->crossings, 0, sizeof result->crossings);
    result->crossings.total = total;
    result->crossings.stride = stride;
    result->checkpoint = NULL;
}

void dm_run_result_free(dm_run_result *result)
{
    if (result == NULL)
        return;
    dm_run_result_drop_series(result);
    memset(result, 0, sizeof *result);
}

/* Whether a run keeps the surface of section (dm_crossings.section_q, section_p): two
 * degrees of freedom and a plain section. */
static bool keeps_section_points(const dm_instance *inst)
{
    return inst->dof == 2 && !inst->section.relative;
}

/* Whether a run measures its global error: against the reference when the suite asks
 * for one, else against the exact solution where the problem has one. */
static bool has_global_error(const dm_run_spec *spec)
{
    return spec->reference || spec->inst.problem->exact != NULL;
}

/* What allocate() below takes (and the reference trajectories with the states they are
 * compared with, allocated by run_from):
 * 4 series, the global error's, the reference's error estimate and each invariant's, of
 * `samples` doubles, and 3 crossing arrays (5 with the surface of section) of at least
 * 64. Keep the two together. */
double dm_run_memory_bytes(const dm_run_spec *spec)
{
    const dm_problem *pb = spec->inst.problem;
    double cap = (double)spec->samples;
    double series = 4.0 + has_global_error(spec) + spec->reference +
                    (pb->invariants != NULL ? pb->n_invariants : 0);
    double crossing_arrays = keeps_section_points(&spec->inst) ? 5.0 : 3.0;
    double reference = spec->reference ? sizeof(dm_reference_pair) +
                                             sizeof(double) * 2.0 * spec->inst.dof * cap : 0.0;
    return sizeof(dm_run_result) + reference +
           sizeof(double) * (series * cap + crossing_arrays * (cap < 64 ? 64 : cap));
}

static dm_status allocate(dm_run_result *r, const dm_run_spec *spec, dm_error *err)
{
    const dm_problem *pb = spec->inst.problem;
    size_t cap = spec->samples;
    dm_series *s = &r->series;
    s->capacity = cap;
    s->time = calloc(cap, sizeof(double));
    s->energy_error = calloc(cap, sizeof(double));
    s->energy_error_min = calloc(cap, sizeof(double));
    s->energy_error_max = calloc(cap, sizeof(double));
    bool ok = s->time && s->energy_error && s->energy_error_min && s->energy_error_max;
    if (has_global_error(spec)) {
        s->global_error = calloc(cap, sizeof(double));
        ok = ok && s->global_error;
    }
    if (spec->reference) {
        s->reference_error = calloc(cap, sizeof(double));
        ok = ok && s->reference_error;
    }
    s->n_invariants = pb->invariants != NULL ? pb->n_invariants : 0;
    for (int i = 0; i < s->n_invariants; i++) {
        s->invariant_error[i] = calloc(cap, sizeof(double));
        ok = ok && s->invariant_error[i];
    }
    dm_crossings *c = &r->crossings;
    c->capacity = cap < 64 ? 64 : cap;
    c->stride = 1;
    c->number = calloc(c->capacity, sizeof(double));
    c->time = calloc(c->capacity, sizeof(double));
    c->phase_error = calloc(c->capacity, sizeof(double));
    ok = ok && c->number && c->time && c->phase_error;
    if (keeps_section_points(&spec->inst)) {
        c->section_q = calloc(c->capacity, sizeof(double));
        c->section_p = calloc(c->capacity, sizeof(double));
        ok = ok && c->section_q && c->section_p;
    }
    if (!ok)
        return dm_error_set(err, DM_ENOMEM, "out of memory for %zu samples", cap);
    return DM_OK;
}

/* Keeps every crossing whose number is a multiple of the stride; when the buffer is
 * full, drops every second one and doubles the stride. */
static void crossings_store(dm_crossings *c, uint64_t number, double t, double phase,
                            const double point[2])
{
    if (number % c->stride != 0)
        return;
    if (c->n == c->capacity) {
        size_t kept = 0;
        uint64_t next_stride = 2 * c->stride;
        for (size_t i = 0; i < c->n; i++) {
            if ((uint64_t)c->number[i] % next_stride != 0)
                continue;
            c->number[kept] = c->number[i];
            c->time[kept] = c->time[i];
            c->phase_error[kept] = c->phase_error[i];
            if (c->section_q != NULL) {
                c->section_q[kept] = c->section_q[i];
                c->section_p[kept] = c->section_p[i];
            }
            kept++;
        }
        c->n = kept;
        c->stride = next_stride;
        if (number % c->stride != 0)
            return;
    }
    c->number[c->n] = (double)number;
    c->time[c->n] = t;
    c->phase_error[c->n] = phase;
    if (c->section_q != NULL) {
        c->section_q[c->n] = point[0];
        c->section_p[c->n] = point[1];
    }
    c->n++;
}

/* Cubic Hermite interpolation of a value y0 -> y1 with slopes d0, d1 (per unit s) at s. */
static double hermite(double y0, double d0, double y1, double d1, double s)
{
    double s2 = s * s, s3 = s2 * s;
    return (2 * s3 - 3 * s2 + 1) * y0 + (s3 - 2 * s2 + s) * d0 + (-2 * s3 + 3 * s2) * y1 +
           (s3 - s2) * d1;
}

/* The surface-of-section point at fraction s of a step of length dt from x0 to x1, of a
 * problem of two degrees of freedom: the coordinate the section does not watch and its
 * momentum, each by cubic Hermite interpolation from its values and rates at both ends
 * (velocity for q, -grad V for p: two gradient evaluations a crossing). */
static void section_point(const dm_instance *inst, double s, double dt, const double *x0,
                          const double *x1, double point[2])
{
    const dm_problem *pb = inst->problem;
    int k = 1 - inst->section.coord;
    double v0[2], v1[2], g0[2], g1[2];
    pb->velocity(inst, x0 + 2, v0);
    pb->velocity(inst, x1 + 2, v1);
    dm_problem_gradient(pb)(inst, x0, g0);
    dm_problem_gradient(pb)(inst, x1, g1);
    point[0] = hermite(x0[k], dt * v0[k], x1[k], dt * v1[k], s);
    point[1] = hermite(x0[2 + k], -dt * g0[k], x1[2 + k], -dt * g1[k], s);
}

/* Cubic Hermite interpolation of the section's value (q[coord], or a body's distance
 * from a plane through another, for a relative section) across one step from the states
 * and the vector field at both ends; returns the time in [t0, t1] where it reaches
 * `level`. The sign change is known, so Newton is safeguarded by bisection. */
static double locate_crossing(const dm_instance *inst, double level, double t0,
                              const double *x0, double t1, const double *x1)
{
    const dm_problem *pb = inst->problem;
    const dm_section *sec = &inst->section;
    int n = inst->dof;
    double v0[DM_MAX_DOF], v1[DM_MAX_DOF];
    pb->velocity(inst, x0 + n, v0);
    pb->velocity(inst, x1 + n, v1);
    double dt = t1 - t0;
    double y0 = dm_section_value(sec, x0) - level, y1 = dm_section_value(sec, x1) - level;
    double d0 = dt * dm_section_value(sec, v0), d1 = dt * dm_section_value(sec, v1);
    /* H(s) = h00 y0 + h10 d0 + h01 y1 + h11 d1 on s in [0, 1]. */
    double lo = 0.0, hi = 1.0;
    double s = y0 / (y0 - y1); /* the chord's root as the first guess */
    if (!(s > 0.0 && s < 1.0))
        s = 0.5;
    for (int it = 0; it < 60; it++) {
        double s2 = s * s, s3 = s2 * s;
        double h00 = 2 * s3 - 3 * s2 + 1, h10 = s3 - 2 * s2 + s;
        double h01 = -2 * s3 + 3 * s2, h11 = s3 - s2;
        double f = h00 * y0 + h10 * d0 + h01 * y1 + h11 * d1;
        double df = (6 * s2 - 6 * s) * y0 + (3 * s2 - 4 * s + 1) * d0 +
                    (-6 * s2 + 6 * s) * y1 + (3 * s2 - 2 * s) * d1;
        if (f < 0.0)
            lo = s;
        else
            hi = s;
        double next = (df != 0.0) ? s - f / df : 0.5 * (lo + hi);
        if (!(next > lo && next < hi))
            next = 0.5 * (lo + hi);
        if (fabs(next - s) <= 4e-16 || hi - lo <= 4e-16) {
            s = next;
            break;
        }
        s = next;
    }
    return t0 + s * dt;
}

/* Every crossing as it happens: located inside its step, numbered, compared with the
 * exact orbit's, fitted and kept within the budget. Without a period (no_period) there
 * is no exact orbit: the fit is of the crossing times against their numbers, whose
 * slope is the measured period, and the phase is NaN. */
typedef struct crossing_log {
    const dm_instance *inst;
    double period;
    dm_crossings *store;
    dm_line_fit fit;
    uint64_t count;
    double last_phase;
} crossing_log;

static void crossing_add(crossing_log *log, double level, double t0, const double *x0,
                         double t1, const double *x1)
{
    double tc = locate_crossing(log->inst, level, t0, x0, t1, x1);
    double point[2] = { NAN, NAN };
    if (log->store->section_q != NULL)
        section_point(log->inst, (tc - t0) / (t1 - t0), t1 - t0, x0, x1, point);
    log->count++;
    double T = log->period;
    double phase = NAN;
    if (isfinite(T)) {
        double t_exact = log->inst->first_crossing + (double)(log->count - 1) * T;
        phase = 2.0 * M_PI * (tc - t_exact) / T;
        dm_line_fit_add(&log->fit, (double)log->count, phase);
    } else {
        dm_line_fit_add(&log->fit, (double)log->count, tc);
    }
    crossings_store(log->store, log->count, tc, phase, point);
    log->last_phase = phase;
}

/* The reason of a diverged run, the same from the fused and the per-step path. */
static dm_run_status diverged_at(char *reason, size_t size, double dE, double limit,
                                 uint64_t step, double t)
{
    char value_text[40], limit_text[40];
    dm_number_text_apart(dE, limit, value_text, limit_text, sizeof value_text);
    snprintf(reason, size, "energy error %s beyond the limit %s at step %llu, t = %.17g",
             value_text, limit_text, (unsigned long long)step, t);
    return DM_RUN_DIVERGED;
}


/* Everything one run carries between its parts. */
typedef struct run_context {
    const dm_run_spec *spec;
    const dm_instance *inst;
    dm_run_result *result;
    dm_stepper *stepper;
    const volatile int *stop;
    const dm_run_watch *watch;  /* save points (may be NULL) */
    unsigned save_seen;         /* the save request last answered */
    size_t bucket;              /* the bucket running */
    double wall_before, t_start; /* wall seconds before this part; its clock start (moved
                                  * on by a snapshot's reference comparisons) */
    uint64_t times_continued;   /* continued from a checkpoint so far */
    bool fixed;                 /* fixed steps of size h ... */
    bool fused;                 /* ... run by the problem's fused loop */
    double h;
    uint64_t n_steps;           /* fixed steps: the whole horizon */
    double energy_limit;
    /* The state: cur (the per-step path ping-pongs cur and nxt); the fused path keeps
     * it in loop.x and copies it to cur at bucket ends. */
    double buf[2][2 * DM_MAX_DOF];
    dm_point a, b, *cur, *nxt;
    dm_fused_run loop;          /* step count, state and the per-step monitor */
    crossing_log log;
    dm_line_fit drift_fit;      /* dE against t / T at bucket ends */
    double max_abs;             /* largest |dE| over the recorded buckets */
    double closest;             /* closest approach of two bodies over the recorded
                                   buckets (problems with closest_approach), else NaN */
    int n_invariants;
    double invariant_start[DM_MAX_INVARIANTS], invariant_scale[DM_MAX_INVARIANTS];
    /* the reference trajectory (spec->reference; allocated, NULL otherwise), and the
     * run's state at each bucket end from ref_first on, compared with it after the run
     * (so the reference's work does not interleave with the method's, nor its time) */
    dm_reference_pair *ref;
    double *ref_states;
    size_t ref_first;
    dm_run_status status;
} run_context;

static bool stop_requested(const run_context *c)
{
    return c->stop != NULL && *c->stop;
}

static void snapshot(run_context *c, size_t bucket, bool in_bucket);

/* A save point asked for since the run last answered one (a relaxed load: a request
 * seen at the next poll is soon enough). */
static bool save_requested(run_context *c)
{
    const dm_run_watch *w = c->watch;
    if (w == NULL || w->save_request == NULL)
        return false;
    unsigned want = __atomic_load_n(w->save_request, __ATOMIC_RELAXED);
    if (want == c->save_seen)
        return false;
    c->save_seen = want;
    return true;
}

/* At a poll inside a bucket that does not stop: a save point's snapshot when one is
 * asked for, taken as a stop here would take it. */
static void save_poll_inside(run_context *c)
{
    if (!save_requested(c))
        return;
    if (c->fused) { /* the state a stop would leave in cur (bucket_fused's end) */
        c->cur->t = dm_step_time(0.0, c->loop.k, c->h);
        memcpy(c->cur->x, c->loop.x, sizeof(double) * 2 * (size_t)c->inst->dof);
    }
    snapshot(c, c->bucket, true);
}

/* The steps and the fraction of the horizon done, for a progress reader on another
 * thread (a relaxed store: a slightly old value is fine). */
static void publish_progress(run_context *c)
{
    double f = c->fixed ? (c->n_steps > 0 ? (double)c->loop.k / (double)c->n_steps : 1.0)
                        : c->cur->t / c->spec->t_end;
    f = f > 0.0 ? (f < 1.0 ? f : 1.0) : 0.0;
    __atomic_store_n(&c->result->live_steps, c->loop.k, __ATOMIC_RELAXED);
    __atomic_store_n(&c->result->live_fraction, (uint64_t)(f * 4294967296.0),
                     __ATOMIC_RELAXED);
}

/* dE is (H - H0) / E_scale with E_scale = H0 - V_min where the potential has a finite
 * minimum below H0 (H0 - T_min - V_min for a kinetic energy whose lowest value T_min is
 * not 0), else |H0| (1 when H0 is 0). */
static void choose_energy_scale(dm_run_metrics *m, const dm_instance *inst, double H0)
{
    const char *rule;
    double scale = dm_energy_scale(inst, H0, &rule);
    if (inst->has_v_min && scale > 0.0) {
        m->energy_scale = scale;
        m->energy_scale_rule = rule;
    } else {
        m->energy_scale = fabs(H0) > 0.0 ? fabs(H0) : 1.0;
        m->energy_scale_rule = "|H0|";
    }
}

/* Each invariant's error as its problem says: relative to its starting value (NaN when
 * that is 0), or the plain difference of a quantity the problem made dimensionless.
 * Either way the error does not depend on the units. */
static void invariants_start(run_context *c)
{
    const dm_instance *inst = c->inst;
    const dm_problem *pb = inst->problem;
    dm_run_metrics *m = &c->result->metrics;
    c->n_invariants = c->result->series.n_invariants;
    if (c->n_invariants > 0)
        pb->invariants(inst, inst->q0, inst->p0, c->invariant_start);
    for (int i = 0; i < c->n_invariants; i++) {
        double own = fabs(c->invariant_start[i]);
        if (pb->invariant_errors[i] == DM_INVARIANT_DIFFERENCE)
            c->invariant_scale[i] = 1.0;
        else
            c->invariant_scale[i] = own > 0.0 ? own : NAN;
    }
    for (int i = 0; i < DM_MAX_INVARIANTS; i++)
        m->max_invariant_error[i] = c->n_invariants > i ? 0.0 : NAN;
}

/* A horizon of N periods at n steps per period is N n steps even when t_end / h rounds
 * to a hair above that whole number; otherwise the first step past t_end. */
static uint64_t fixed_step_count(double t_end, double h)
{
    double ratio = t_end / fabs(h), nearest = nearbyint(ratio);
    return (uint64_t)(fabs(ratio - nearest) <= 1e-12 * ratio ? nearest : ceil(ratio));
}

uint64_t dm_run_fixed_steps(const dm_run_spec *spec)
{
    return spec->method->adaptive ? 0 : fixed_step_count(spec->t_end, spec->method_config.h);
}

/* floor((bucket + 1) n_steps / samples) without overflowing 64 bits. */
static uint64_t bucket_end_step(uint64_t n_steps, size_t samples, size_t bucket)
{
    return (n_steps / samples) * (bucket + 1) + (n_steps % samples) * (bucket + 1) / samples;
}

/* The step at which a fixed-step bucket at step k next polls: the next multiple of
 * POLL_STEPS, or the bucket's end when sooner. */
static uint64_t next_poll(uint64_t k, uint64_t k_end)
{
    uint64_t next = (k | (POLL_STEPS - 1)) + 1;
    return next < k_end ? next : k_end;
}

/* One bucket through the problem's fused loop, stopping at every crossing to log it,
 * and at every multiple of POLL_STEPS to look for a stop request (a call of the loop
 * ends where the next begins: splitting a bucket into calls changes no number). */
static void bucket_fused(run_context *c, uint64_t k_end)
{
    dm_fused_run *w = &c->loop;
    for (;;) {
        dm_fused_event ev = dm_stepper_run_fused(c->stepper, w, next_poll(w->k, k_end));
        if (ev == DM_FUSED_END && w->k < k_end) {
            publish_progress(c);
            if (stop_requested(c))
                break;
            save_poll_inside(c);
            continue;
        }
        if (ev == DM_FUSED_CROSSING) {
            crossing_add(&c->log, w->monitor.crossed_level,
                         dm_step_time(0.0, w->k - 1, c->h), w->x_prev,
                         dm_step_time(0.0, w->k, c->h), w->x);
            continue;
        }
        if (ev == DM_FUSED_DIVERGED)
            c->status = diverged_at(c->result->reason, sizeof c->result->reason,
                                    w->monitor.energy_error, c->energy_limit, w->k,
                                    dm_step_time(0.0, w->k, c->h));
        if (ev == DM_FUSED_FAILED) { /* as bucket_plain: the state before the step */
            c->status = DM_RUN_FAILED;
            snprintf(c->result->reason, sizeof c->result->reason, "%s", c->stepper->error.msg);
        }
        break;
    }
    c->cur->t = dm_step_time(0.0, w->k, c->h);
    memcpy(c->cur->x, w->x, sizeof(double) * 2 * (size_t)c->inst->dof);
}

/* One bucket a step at a time: the method steps into the other buffer, the monitor
 * reads the new state (V from the step's last force when it has one). */
static void bucket_plain(run_context *c, uint64_t k_end, double t_bucket_end)
{
    const dm_instance *inst = c->inst;
    const dm_problem *pb = inst->problem;
    const int n = inst->dof;
    dm_step_monitor *mon = &c->loop.monitor;
    char *reason = c->result->reason;
    const size_t reason_size = sizeof c->result->reason;
    for (;;) {
        if (dm_stepper_step(c->stepper, c->cur, c->nxt) != DM_OK) {
            c->status = DM_RUN_FAILED;
            snprintf(reason, reason_size, "%s", c->stepper->error.msg);
            break;
        }
        uint64_t k = ++c->loop.k;
        const double *x = c->nxt->x;
        double V = c->nxt->potential;
        if (isnan(V))
            V = pb->potential(inst, x);
        dm_step_event ev = dm_monitor_step(mon, pb->kinetic(inst, x + n), V,
                                           dm_section_value(&inst->section, x));
        if (ev == DM_STEP_CROSSED)
            crossing_add(&c->log, mon->crossed_level, c->cur->t, c->cur->x,
                         c->nxt->t, x);
        dm_point *tmp = c->cur;
        c->cur = c->nxt;
        c->nxt = tmp;
        if (ev == DM_STEP_DIVERGED) {
            /* the bucket records the diverged state at its own time */
            c->status = diverged_at(reason, reason_size, mon->energy_error, c->energy_limit,
                                    k, c->cur->t);
            break;
        }
        if (c->fixed ? k >= k_end : c->cur->t >= t_bucket_end)
            break;
        /* Adaptive steps can shrink without bound: a stop request and the step budget
         * are checked inside the bucket too. */
        if (!c->fixed && (k & (ADAPTIVE_POLL_STEPS - 1)) == 0) {
            publish_progress(c);
            if (c->spec->step_budget > 0 && k >= c->spec->step_budget) {
                c->status = DM_RUN_FAILED;
                snprintf(reason, reason_size,
                         "took %llu steps, the step budget, before t = %.17g (of %.17g)",
                         (unsigned long long)k, c->cur->t, c->spec->t_end);
                break;
            }
            if (stop_requested(c))
                break;
            save_poll_inside(c);
        }
    }
}

/* A fixed-step bucket a step at a time, in parts ending at the polls (a stop request
 * is looked for between them: nothing is added to the steps' loop). */
static void bucket_plain_polled(run_context *c, uint64_t k_end)
{
    while (c->status == DM_RUN_OK) {
        uint64_t limit = next_poll(c->loop.k, k_end);
        bucket_plain(c, limit, 0.0);
        if (c->loop.k < limit || c->loop.k >= k_end)
            break; /* a failure or a divergence, or the bucket's end */
        publish_progress(c);
        if (stop_requested(c))
            break;
        save_poll_inside(c);
    }
}

/* Bucket end: the series and the once-per-bucket monitors (exact solution, the
 * regime of the numerical orbit, invariants). The regime changes when a whole bucket's
 * energies lie in another regime; a bucket that straddles a separatrix says nothing. */
static void record_bucket(run_context *c)
{
    const dm_instance *inst = c->inst;
    const int n = inst->dof;
    const dm_step_monitor *mon = &c->loop.monitor;
    dm_series *ser = &c->result->series;
    dm_run_metrics *m = &c->result->metrics;
    size_t i = ser->n++;
    double t = c->cur->t;
    ser->time[i] = t;
    ser->energy_error[i] = mon->energy_error;
    ser->energy_error_min[i] = mon->bucket_min;
    ser->energy_error_max[i] = mon->bucket_max;
    double peak = fmax(fabs(mon->bucket_min), fabs(mon->bucket_max));
    if (peak > c->max_abs)
        c->max_abs = peak;
    if (isfinite(inst->period))
        dm_line_fit_add(&c->drift_fit, t / inst->period, mon->energy_error);
    if (inst->problem->closest_approach != NULL)
        c->closest = fmin(c->closest, inst->problem->closest_approach(true));
    if (c->ref != NULL) { /* compared after the run: reference_pass */
        memcpy(c->ref_states + 2 * (size_t)n * i, c->cur->x, sizeof(double) * 2 * (size_t)n);
    } else if (ser->global_error != NULL) {
        double qe[DM_MAX_DOF], pe[DM_MAX_DOF], sum = 0.0;
        inst->problem->exact(inst, t, qe, pe);
        for (int j = 0; j < n; j++) {
            double dq = c->cur->x[j] - qe[j], dp = c->cur->x[n + j] - pe[j];
            sum += dq * dq + dp * dp;
        }
        ser->global_error[i] = sqrt(sum);
    }
    if (inst->problem->regime_of_energy != NULL && c->result->regime_change[0] == '\0') {
        /* the bucket's lowest and highest energy, back from dE */
        double scale = c->result->metrics.energy_scale, H0 = mon->H0;
        int lo = inst->problem->regime_of_energy(inst, H0 + scale * mon->bucket_min);
        int hi = inst->problem->regime_of_energy(inst, H0 + scale * mon->bucket_max);
        if (lo == hi && lo != inst->regime)
            snprintf(c->result->regime_change, sizeof c->result->regime_change,
                     "%s -> %s at t = %.6g", inst->problem->regimes[inst->regime].id,
                     lo >= 0 ? inst->problem->regimes[lo].id : "unbound", t);
    }
    if (c->n_invariants > 0) {
        double now[DM_MAX_INVARIANTS];
        inst->problem->invariants(inst, c->cur->x, c->cur->x + n, now);
        for (int j = 0; j < c->n_invariants; j++) {
            double e = (now[j] - c->invariant_start[j]) / c->invariant_scale[j];
            ser->invariant_error[j][i] = e;
            if (!(fabs(e) <= m->max_invariant_error[j])) /* NaN stays NaN */
                m->max_invariant_error[j] = fabs(e);
        }
    }
}

/* The run's figures from what the buckets and crossings collected. */
/* A period measured where the problem knows roughly what to expect (N-body period_of:
 * the osculating two-body period P at the start) is dropped, NaN with a note, when it
 * is beyond P by more than 1/10 of it either way, or when a horizon of 3 or more such
 * periods gave fewer crossings than 9/10 of the periods it holds, less one (our
 * thresholds: perturbations move a planet's period by far less, 2e-4 for Jupiter's; a
 * step that jumps crossings gives some multiple of it). */
static void trust_measured_period(dm_run_result *result, double P, uint64_t count)
{
    dm_run_metrics *m = &result->metrics;
    result->period_note[0] = '\0';
    if (!(P > 0.0) || !isfinite(P))
        return;
    if (isfinite(m->period_measured) && fabs(m->period_measured / P - 1.0) > 0.1)
        snprintf(result->period_note, sizeof result->period_note,
                 "%.6g from %" PRIu64 " crossings, against %.6g at the start: crossings "
                 "missed (a step near half the period or above?)", m->period_measured, count,
                 P);
    else if (m->t_reached >= 3.0 * P && (double)count < 0.9 * (m->t_reached / P) - 1.0)
        snprintf(result->period_note, sizeof result->period_note,
                 "%" PRIu64 " crossings over %.3g periods of %.6g at the start: crossings "
                 "missed (a step near half the period or above?)", count, m->t_reached / P, P);
    else
        return;
    m->period_measured = NAN;
}

/* Fewer than two crossings measure no period: the note says how many, and when the
 * start lies on the section with the watched value at rest (a turning point: a formula
 * problem started there with its default section through the start, found by a
 * tester), that the orbit may only touch the section, so its upward crossings are few
 * and left to rounding. */
static void explain_no_crossings(dm_run_result *result, const dm_instance *inst,
                                 uint64_t count)
{
    const dm_section *sec = &inst->section;
    if (isfinite(result->metrics.period_measured) || result->period_note[0] != '\0' ||
        isnan(sec->level)) /* no section: nothing was to be measured */
        return;
    double v[DM_MAX_DOF];
    inst->problem->velocity(inst, inst->p0, v);
    /* v holds dq/dt, so the section's value at v is its rate (linear in q) */
    bool touching = sec->wrap == 0.0 && dm_section_value(sec, inst->q0) == sec->level &&
                    dm_section_value(sec, v) == 0.0;
    snprintf(result->period_note, sizeof result->period_note,
             "%" PRIu64 " upward crossing%s, 2 needed%s", count, count == 1 ? "" : "s",
             touching ? ": the start is a turning point on the section, which the orbit may "
                        "only touch"
                      : "");
}

static void finish_metrics(run_context *c, double wall)
{
    dm_run_result *result = c->result;
    dm_run_metrics *m = &result->metrics;
    const dm_series *ser = &result->series;
    const double T = c->inst->period;
    uint64_t k = c->loop.k;
    /* A divergence or failure inside a bucket still counts the steps seen. */
    result->status = c->status;
    m->steps = k;
    m->counts = *dm_stepper_counts(c->stepper);
    m->t_reached = c->cur->t;
    m->wall_seconds = wall;
    m->times_continued = c->times_continued;
    m->ns_per_step = k > 0 ? 1e9 * wall / (double)k : NAN;
    if (c->inst->problem->closest_approach != NULL) /* steps after the last bucket end */
        c->closest = fmin(c->closest, c->inst->problem->closest_approach(true));
    m->closest_approach = c->closest;
    m->force_evals_per_period = k > 0 && m->t_reached > 0.0
                                    ? (double)m->counts.force_evals / (m->t_reached / T)
                                    : NAN;
    /* No bucket recorded (a failure on the first step): nothing was measured. */
    m->max_energy_error = ser->n > 0 ? c->max_abs : NAN;
    m->final_energy_error = ser->n > 0 ? ser->energy_error[ser->n - 1] : NAN;
    m->energy_drift_per_period = dm_line_fit_slope(&c->drift_fit);
    dm_run_derive_from_series(result, T);
    m->period_exact = T;
    double slope = dm_line_fit_slope(&c->log.fit);
    if (isfinite(T)) {
        m->phase_error_per_period = slope;
        m->period_rel_error = slope / (2.0 * M_PI);
        m->period_measured = T * (1.0 + m->period_rel_error);
    } else { /* no period: the slope of the crossing times is the period measured */
        m->phase_error_per_period = m->period_rel_error = NAN;
        m->period_measured = slope;
        trust_measured_period(result, c->inst->period_osculating, c->log.count);
        explain_no_crossings(result, c->inst, c->log.count);
    }
    m->phase_error_final = c->log.last_phase;
    m->max_global_error = m->max_reference_error = m->reference_valid_until = NAN;
    /* With a reference, the buckets up to the first whose reference error estimate
     * exceeds 1e-3 of the global error (beyond it the global error is the reference's
     * as much as the method's), or 1e-3 of the size of the start in phase space (a
     * chaotic reference lost at the Lyapunov horizon: its error grows as exp(lambda t)) */
    size_t trusted = ser->n;
    if (ser->reference_error != NULL) {
        double size = 0.0;
        for (int j = 0; j < c->inst->dof; j++)
            size += c->inst->q0[j] * c->inst->q0[j] + c->inst->p0[j] * c->inst->p0[j];
        size = sqrt(size);
        m->max_reference_error = 0.0;
        for (size_t i = 0; i < ser->n; i++) {
            double e = ser->reference_error[i];
            m->max_reference_error = fmax(m->max_reference_error, e);
            if (trusted == ser->n && !(e <= 1e-3 * ser->global_error[i] && e <= 1e-3 * size))
                trusted = i;
        }
        if (ser->n > 0)
            m->reference_valid_until = trusted == ser->n ? m->t_reached
                                       : trusted > 0 ? ser->time[trusted - 1] : 0.0;
    }
    if (ser->global_error != NULL && trusted > 0) {
        m->max_global_error = 0.0;
        for (size_t i = 0; i < trusted; i++)
            m->max_global_error = fmax(m->max_global_error, ser->global_error[i]);
    }
    result->crossings.total = c->log.count;
}

/* The run's wall-clock seconds so far: before this part (a continued run) and since it
 * started, less the reference comparisons a snapshot made (they moved t_start on). */
static double run_wall(const run_context *c)
{
    return c->wall_before + dm_clock_seconds() - c->t_start;
}

/* The global error of the buckets recorded by this call (from ref_first) against the
 * reference, and the reference's error estimate there. */
static void reference_pass(run_context *c)
{
    if (c->ref == NULL)
        return;
    dm_series *ser = &c->result->series;
    const size_t n2 = 2 * (size_t)c->inst->dof;
    for (size_t i = c->ref_first; i < ser->n; i++)
        dm_reference_pair_at(c->ref, ser->time[i], c->ref_states + n2 * i,
                             &ser->global_error[i], &ser->reference_error[i]);
}

/* The reference's own figures and its note. */
static void finish_reference(run_context *c)
{
    dm_run_metrics *m = &c->result->metrics;
    dm_run_result *r = c->result;
    m->reference_step = NAN;
    m->reference_seconds = NAN;
    m->reference_force_evals = 0;
    r->reference_arithmetic[0] = r->reference_note[0] = '\0';
    if (c->ref == NULL)
        return;
    m->reference_step = (double)c->ref->fine.h;
    m->reference_seconds = c->ref->seconds;
    m->reference_force_evals = dm_reference_pair_forces(c->ref);
    snprintf(r->reference_arithmetic, sizeof r->reference_arithmetic, "%s", DM_QUAD_NAME);
    if (!c->ref->met)
        snprintf(r->reference_note, sizeof r->reference_note,
                 "tolerance %.3g not met within %.3g gradient evaluations: %.3g projected "
                 "at step %.6g", c->spec->reference_tolerance, c->spec->reference_force_evals,
                 c->ref->projected, m->reference_step);
    else if (m->reference_valid_until < m->t_reached &&
             (r->status == DM_RUN_OK || r->status == DM_RUN_SWAMPED))
        snprintf(r->reference_note, sizeof r->reference_note,
                 "its error estimate exceeds 1e-3 of the global error after t = %.6g: "
                 "max_global_error is taken up to there", m->reference_valid_until);
    free(c->ref);
    free(c->ref_states);
    c->ref = NULL;
    c->ref_states = NULL;
}

/* The run's whole state into a new checkpoint (result->checkpoint): `bucket` is the
 * bucket to run next, or the one stopped inside when in_bucket. Without memory for it
 * the run is still interrupted; --resume then runs it again from the start. */
static void checkpoint_take(run_context *c, size_t bucket, bool in_bucket, double wall)
{
    dm_checkpoint *ck = calloc(1, sizeof *ck);
    if (ck == NULL)
        return;
    if (c->inst->problem->closest_approach != NULL) /* the steps of a bucket stopped inside */
        c->closest = fmin(c->closest, c->inst->problem->closest_approach(true));
    const int n = c->inst->dof;
    *ck = (dm_checkpoint){ .dof = (uint64_t)n, .bucket = bucket, .in_bucket = in_bucket,
                           .k = c->loop.k, .t = c->cur->t, .potential = c->cur->potential,
                           .monitor = c->loop.monitor, .phase_fit = c->log.fit,
                           .crossing_count = c->log.count, .last_phase = c->log.last_phase,
                           .crossing_stride = c->result->crossings.stride,
                           .drift_fit = c->drift_fit, .max_abs = c->max_abs,
                           .closest = c->closest, .series_n = c->result->series.n,
                           .crossings_n = c->result->crossings.n, .wall_seconds = wall,
                           .times_continued = c->times_continued };
    /* the fused path keeps the state in loop.x, the per-step path in cur */
    memcpy(ck->x, c->fused ? c->loop.x : c->cur->x, sizeof(double) * 2 * (size_t)n);
    memcpy(ck->max_invariant_error, c->result->metrics.max_invariant_error,
           sizeof ck->max_invariant_error);
    ck->n_stepper = dm_stepper_save(c->stepper, ck->stepper, DM_STEPPER_RECORD_MAX);
    c->result->checkpoint = ck;
}

/* Back to the state of *ck, after the stepper and the monitor were set up as for a new
 * run; *bucket and *in_bucket say where to go on. */
static dm_status checkpoint_restore(run_context *c, const dm_checkpoint *ck, size_t *bucket,
                                    bool *in_bucket, dm_error *err)
{
    const int n = c->inst->dof;
    const dm_run_spec *spec = c->spec;
    dm_series *ser = &c->result->series;
    if (ck->dof != (uint64_t)n || ck->bucket >= spec->samples || ser->n > ck->bucket ||
        ser->capacity != spec->samples || ck->crossing_stride < 1 ||
        (c->fixed && ck->k > c->n_steps))
        return dm_error_set(err, DM_EINPUT, "its checkpoint does not fit the run");
    c->loop.k = ck->k;
    memcpy(c->loop.x, ck->x, sizeof(double) * 2 * (size_t)n);
    memcpy(c->cur->x, ck->x, sizeof(double) * 2 * (size_t)n);
    c->cur->t = ck->t;
    c->cur->potential = ck->potential;
    dm_step_monitor *m = &c->loop.monitor;
    m->level = ck->monitor.level;
    m->armed = ck->monitor.armed;
    m->bucket_min = ck->monitor.bucket_min;
    m->bucket_max = ck->monitor.bucket_max;
    m->energy_error = ck->monitor.energy_error;
    m->crossed_level = ck->monitor.crossed_level;
    c->log.fit = ck->phase_fit;
    c->log.count = ck->crossing_count;
    c->log.last_phase = ck->last_phase;
    c->result->crossings.stride = ck->crossing_stride;
    c->drift_fit = ck->drift_fit;
    c->max_abs = ck->max_abs;
    c->times_continued = ck->times_continued + 1;
    if (c->inst->problem->closest_approach != NULL)
        c->closest = ck->closest;
    memcpy(c->result->metrics.max_invariant_error, ck->max_invariant_error,
           sizeof ck->max_invariant_error);
    if (dm_stepper_load(c->stepper, ck->stepper, ck->n_stepper, c->cur) != DM_OK)
        return dm_error_set(err, DM_EINPUT, "%s: %s", spec->id, c->stepper->error.msg);
    *bucket = ck->bucket;
    *in_bucket = ck->in_bucket;
    return DM_OK;
}

/* Marks the run interrupted at its current point. */
static void interrupt(run_context *c)
{
    c->status = DM_RUN_INTERRUPTED;
    snprintf(c->result->reason, sizeof c->result->reason, "interrupted at step %llu, t = %.17g",
             (unsigned long long)c->loop.k, c->cur->t);
}

/* The first n of an array of `capacity` doubles into a new one of the same capacity
 * (so that the copy can be continued); NULL stays NULL. */
static int copy_doubles(double **to, const double *from, size_t n, size_t capacity)
{
    *to = NULL;
    if (from == NULL)
        return 0;
    *to = malloc((capacity > 0 ? capacity : 1) * sizeof(double));
    if (*to == NULL)
        return -1;
    memcpy(*to, from, n * sizeof(double));
    return 0;
}

/* A save point's snapshot: what the run's result would be if a stop ended it here
 * (status interrupted, its series and crossings so far, figures, a checkpoint), as a
 * new result handed to the watch, while the run carries on unchanged. The stop's own
 * steps (interrupt, checkpoint_take, finish_metrics) run on a copy of the context whose
 * result is the new one, so both are the same code. Without memory nothing is handed
 * over (the save point does without this run). */
static void snapshot(run_context *c, size_t bucket, bool in_bucket)
{
    if (c->ref != NULL && c->ref_first < c->result->series.n) {
        /* the buckets not yet compared with the reference are compared now, on the run
         * itself (the reference steps forward alike in one pass or in several, so the
         * run's figures do not change), and that time is left out of the run's clock as
         * every reference pass is: a snapshot without them would hold a global error of
         * 0 and no reference error, and --resume could not read the run back */
        double t0 = dm_clock_seconds();
        reference_pass(c);
        c->ref_first = c->result->series.n;
        c->t_start += dm_clock_seconds() - t0;
    }
    const dm_run_result *r = c->result;
    dm_run_result *copy = malloc(sizeof *copy);
    if (copy == NULL)
        return;
    *copy = *r;
    memset(&copy->series, 0, sizeof copy->series);
    memset(&copy->crossings, 0, sizeof copy->crossings);
    copy->checkpoint = NULL;
    dm_series *s = &copy->series;
    dm_crossings *x = &copy->crossings;
    s->n = r->series.n;
    s->capacity = r->series.capacity;
    s->n_invariants = r->series.n_invariants;
    x->n = r->crossings.n;
    x->capacity = r->crossings.capacity;
    x->stride = r->crossings.stride;
    size_t sn = s->n, sc = s->capacity, xn = x->n, xc = x->capacity;
    int rc = 0;
#define COPY_SERIES(name, always) rc |= copy_doubles(&s->name, r->series.name, sn, sc);
    DM_SERIES_LIST(COPY_SERIES)
#undef COPY_SERIES
    for (int j = 0; j < s->n_invariants; j++)
        rc |= copy_doubles(&s->invariant_error[j], r->series.invariant_error[j], sn, sc);
    rc |= copy_doubles(&x->number, r->crossings.number, xn, xc);
    rc |= copy_doubles(&x->time, r->crossings.time, xn, xc);
    rc |= copy_doubles(&x->phase_error, r->crossings.phase_error, xn, xc);
    rc |= copy_doubles(&x->section_q, r->crossings.section_q, xn, xc);
    rc |= copy_doubles(&x->section_p, r->crossings.section_p, xn, xc);
    if (rc != 0) {
        dm_run_result_free(copy);
        free(copy);
        return;
    }
    run_context k = *c;
    k.result = copy;
    double wall = run_wall(c);
    interrupt(&k);
    checkpoint_take(&k, bucket, in_bucket, wall);
    /* checkpoint_take read (and so restarted) the closest-approach accumulator */
    c->closest = k.closest;
    finish_metrics(&k, wall);
    copy->metrics.lyapunov_exponent = NAN;
    c->watch->snapshot(c->watch->ctx, c->watch->index, copy, c->save_seen);
}

/* The buckets from `first` (begun before a checkpoint when `inside`), each through the
 * fused loop or a step at a time, recording each bucket's end, until the horizon, a
 * divergence, a failure or a stop (which takes a checkpoint). */
static void run_buckets(run_context *c, size_t first, bool inside)
{
    const dm_run_spec *spec = c->spec;
    const size_t samples = spec->samples;
    for (size_t bucket = first; bucket < samples && c->status == DM_RUN_OK; bucket++) {
        uint64_t k_end = c->fixed ? bucket_end_step(c->n_steps, samples, bucket) : 0;
        double t_bucket_end = (bucket + 1 == samples)
                                  ? spec->t_end
                                  : spec->t_end * (double)(bucket + 1) / (double)samples;
        if (c->fixed ? c->loop.k >= k_end : c->cur->t >= t_bucket_end)
            continue; /* an empty bucket (fewer steps than samples, or a long adaptive step) */
        if (!(inside && bucket == first))
            dm_monitor_open_bucket(&c->loop.monitor);
        c->bucket = bucket;
        if (c->fused)
            bucket_fused(c, k_end);
        else if (c->fixed)
            bucket_plain_polled(c, k_end);
        else
            bucket_plain(c, k_end, t_bucket_end);
        if (c->loop.monitor.bucket_min > c->loop.monitor.bucket_max)
            break; /* failed on the bucket's first step: nothing to record */
        bool ended = c->fixed ? c->loop.k >= k_end : c->cur->t >= t_bucket_end;
        if (c->status == DM_RUN_OK && !ended) {
            /* stopped inside the bucket: it is not recorded; the checkpoint keeps its
             * extremes so far */
            interrupt(c);
            checkpoint_take(c, bucket, true, run_wall(c));
            break;
        }
        record_bucket(c);
        publish_progress(c);
        bool at_horizon = c->fixed ? c->loop.k >= c->n_steps : c->cur->t >= spec->t_end;
        if (stop_requested(c) && c->status == DM_RUN_OK && !at_horizon) {
            interrupt(c);
            checkpoint_take(c, bucket + 1, false, run_wall(c));
        } else if (c->status == DM_RUN_OK && !at_horizon && save_requested(c)) {
            snapshot(c, bucket + 1, false);
        }
    }
}

/* One run, new (ck NULL) or continued from a checkpoint:
 *  1. allocate the series (a continued run has them); choose the energy scale; note the
 *     starting invariants;
 *  2. create the stepper (a failure here is a failed run, not an error);
 *  3. set up the monitor and probe for the fused loop; go back to the checkpoint;
 *  4. run the buckets, each through the fused loop or a step at a time, recording
 *     each bucket's end, until the horizon, a divergence, a failure or a stop (which
 *     takes a checkpoint);
 *  5. compute the run's figures. */
static dm_status run_from(const dm_run_spec *spec, dm_run_result *result, dm_checkpoint *ck,
                          const dm_run_watch *watch, dm_error *err)
{
    dm_status rc = DM_OK;
    if (ck == NULL) {
        memset(result, 0, sizeof *result);
        rc = allocate(result, spec, err);
        if (rc != DM_OK) {
            dm_run_result_free(result);
            return rc;
        }
    } else {
        /* keep the series, the crossings and the regime change found so far */
        result->status = DM_RUN_NOT_RUN;
        result->reason[0] = '\0';
        memset(&result->metrics, 0, sizeof result->metrics);
    }
    run_context *c = &(run_context){ .spec = spec, .inst = &spec->inst, .result = result,
                                     .stop = watch->stop, .watch = watch,
                                     .status = DM_RUN_OK };
    c->save_seen = watch->answered;
    const dm_instance *inst = c->inst;
    const int n = inst->dof;
    dm_run_metrics *m = &result->metrics;
    memcpy(c->buf[0], inst->q0, sizeof(double) * (size_t)n);
    memcpy(c->buf[0] + n, inst->p0, sizeof(double) * (size_t)n);
    c->a = (dm_point){ .t = 0.0, .x = c->buf[0], .potential = NAN };
    c->b = (dm_point){ .t = 0.0, .x = c->buf[1], .potential = NAN };
    c->cur = &c->a;
    c->nxt = &c->b;
    const double H0 = dm_instance_energy(inst, inst->q0, inst->p0);
    choose_energy_scale(m, inst, H0);
    invariants_start(c);

    c->stepper = dm_stepper_create(spec->method, inst, &spec->method_config, c->cur, err);
    if (c->stepper == NULL) {
        result->status = DM_RUN_FAILED;
        snprintf(result->reason, sizeof result->reason, "%s", err ? err->msg : "create failed");
        dm_error_clear(err);
        m->period_exact = inst->period;
        m->lyapunov_exponent = NAN;
        m->max_reference_error = m->reference_valid_until = NAN;
        m->reference_step = m->reference_seconds = NAN;
        free(ck);
        return DM_OK;
    }
    c->fixed = !spec->method->adaptive;
    c->h = spec->method_config.h;
    c->energy_limit = spec->energy_limit > 0 ? spec->energy_limit : 1.0;
    c->n_steps = c->fixed ? fixed_step_count(spec->t_end, c->h) : 0;
    c->log = (crossing_log){ .inst = inst, .period = inst->period,
                             .store = &result->crossings, .last_phase = NAN };
    dm_monitor_start(&c->loop.monitor, H0, 1.0 / m->energy_scale, c->energy_limit,
                     inst->section.coord, inst->section.level, inst->section.wrap,
                     dm_section_value(&inst->section, inst->q0));
    c->closest = inst->problem->closest_approach != NULL ? INFINITY : NAN;
    if (inst->problem->closest_approach != NULL)
        (void)inst->problem->closest_approach(true); /* forget the setup's evaluations */
    memcpy(c->loop.x, c->cur->x, sizeof(double) * 2 * (size_t)n);
    /* The fused loop when the method and the problem offer it: probed with zero steps. */
    c->fused = c->fixed &&
               dm_stepper_run_fused(c->stepper, &c->loop, 0) != DM_FUSED_UNSUPPORTED;
    size_t first = 0;
    bool inside = false;   /* the first bucket was begun before the checkpoint */
    double wall_before = 0.0;
    if (ck != NULL) {
        rc = checkpoint_restore(c, ck, &first, &inside, err);
        wall_before = ck->wall_seconds;
        free(ck);
        if (rc != DM_OK) {
            dm_stepper_destroy(c->stepper);
            return rc;
        }
    }

    if (spec->reference) {
        /* a continued run starts its reference again: the grid is stepped up to the
         * first bucket end asked for, so it is the one an unstopped run has */
        c->ref = malloc(sizeof *c->ref);
        c->ref_states = malloc(sizeof(double) * 2 * (size_t)n * spec->samples);
        c->ref_first = result->series.n;
        rc = c->ref != NULL && c->ref_states != NULL
                 ? dm_reference_pair_start(c->ref, spec, err)
                 : dm_error_set(err, DM_ENOMEM, "out of memory for the reference");
        if (rc != DM_OK) {
            free(c->ref);
            free(c->ref_states);
            dm_stepper_destroy(c->stepper);
            return rc;
        }
    }

    c->wall_before = wall_before;
    c->t_start = dm_clock_seconds();
    run_buckets(c, first, inside);
    double wall = run_wall(c);
    reference_pass(c);
    finish_metrics(c, wall);
    finish_reference(c);
    dm_stepper_destroy(c->stepper);
    m->lyapunov_exponent = NAN;
    if (spec->lyapunov && (c->status == DM_RUN_OK || c->status == DM_RUN_SWAMPED)) {
        dm_error lerr = { 0 };
        m->lyapunov_exponent = dm_lyapunov_exponent(spec, m->steps, &lerr);
    }
    return DM_OK;
}

dm_status dm_run(const dm_run_spec *spec, dm_run_result *result, const volatile int *stop,
                 dm_error *err)
{
    return run_from(spec, result, NULL, &(dm_run_watch){ .stop = stop }, err);
}

dm_status dm_run_resume(const dm_run_spec *spec, dm_run_result *result,
                        const volatile int *stop, dm_error *err)
{
    return dm_run_watched(spec, result, &(dm_run_watch){ .stop = stop }, err);
}

dm_status dm_run_watched(const dm_run_spec *spec, dm_run_result *result,
                         const dm_run_watch *watch, dm_error *err)
{
    dm_checkpoint *ck = result->checkpoint;
    if (ck == NULL) {
        dm_run_result_free(result);
        return run_from(spec, result, NULL, watch, err);
    }
    result->checkpoint = NULL;
    return run_from(spec, result, ck, watch, err);
}
