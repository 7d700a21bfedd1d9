/* runner.c — one integration with every monitor on, nothing stored per step.
 *
 * Per step the loop does: one method step (out of place into the other buffer), the
 * energy error from T + V (V comes free from the step's last force when the method
 * computed it), the running and per-bucket extremes, a divergence check, and one
 * comparison against the section. Everything else (exact solutions, invariants, the
 * crossing location by cubic Hermite interpolation, bookkeeping) happens once per
 * bucket or once per crossing.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "harness.h"

const char *dm_run_status_name(dm_run_status status)
{
    switch (status) {
    case DM_RUN_NOT_RUN: return "not_run";
    case DM_RUN_OK: return "ok";
    case DM_RUN_DIVERGED: return "diverged";
    case DM_RUN_FAILED: return "failed";
    case DM_RUN_INTERRUPTED: return "interrupted";
    }
    return "unknown";
}

static double now_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Online least squares of y against x (Welford-style, so the sums never cancel). */
typedef struct line_fit {
    double n, mean_x, mean_y, sxx, sxy;
} line_fit;

static void line_fit_add(line_fit *f, double x, double y)
{
    f->n += 1.0;
    double dx = x - f->mean_x;
    f->mean_x += dx / f->n;
    f->mean_y += (y - f->mean_y) / f->n;
    f->sxx += dx * (x - f->mean_x);
    f->sxy += dx * (y - f->mean_y);
}

static double line_fit_slope(const line_fit *f)
{
    return (f->n >= 2.0 && f->sxx > 0.0) ? f->sxy / f->sxx : NAN;
}

void dm_run_result_free(dm_run_result *result)
{
    if (result == NULL)
        return;
    free(result->series.time);
    free(result->series.energy_error);
    free(result->series.energy_error_min);
    free(result->series.energy_error_max);
    free(result->series.global_error);
    for (int i = 0; i < DM_MAX_INVARIANTS; i++)
        free(result->series.invariant_error[i]);
    free(result->crossings.number);
    free(result->crossings.time);
    free(result->crossings.phase_error);
    memset(result, 0, sizeof *result);
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
    if (pb->exact != NULL) {
        s->global_error = calloc(cap, sizeof(double));
        ok = ok && s->global_error;
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
    if (!ok)
        return dm_error_set(err, DM_ENOMEM, "%s: out of memory for %zu samples", spec->id, cap);
    return DM_OK;
}

/* Keeps every crossing whose number is a multiple of the stride; when the buffer is
 * full, drops every second one and doubles the stride. */
static void crossings_store(dm_crossings *c, uint64_t number, double t, double phase)
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
    c->n++;
}

/* Cubic Hermite interpolation of q[k] across one step from the states and the vector
 * field at both ends; returns the time in [t0, t1] where it reaches `level`. The
 * sign change is known, so Newton is safeguarded by bisection. */
static double locate_crossing(const dm_instance *inst, int k, double level, double t0,
                              const double *x0, double t1, const double *x1)
{
    const dm_problem *pb = inst->problem;
    int n = inst->dof;
    double v0[DM_MAX_DOF], v1[DM_MAX_DOF];
    pb->velocity(inst, x0 + n, v0);
    pb->velocity(inst, x1 + n, v1);
    double dt = t1 - t0;
    double y0 = x0[k] - level, y1 = x1[k] - level;
    double d0 = dt * v0[k], d1 = dt * v1[k];
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
 * exact orbit's, fitted and kept within the budget. */
typedef struct crossing_log {
    const dm_instance *inst;
    double period;
    dm_crossings *store;
    line_fit fit;
    uint64_t count;
    double last_phase;
} crossing_log;

static void crossing_add(crossing_log *log, int k, double level, double t0, const double *x0,
                         double t1, const double *x1)
{
    double tc = locate_crossing(log->inst, k, level, t0, x0, t1, x1);
    log->count++;
    double T = log->period;
    double t_exact = log->inst->first_crossing + (double)(log->count - 1) * T;
    double phase = 2.0 * M_PI * (tc - t_exact) / T;
    line_fit_add(&log->fit, (double)log->count, phase);
    crossings_store(log->store, log->count, tc, phase);
    log->last_phase = phase;
}

/* The reason of a diverged run, the same from the fused and the per-step path. */
static dm_run_status diverged_at(char *reason, size_t size, double dE, double limit,
                                 uint64_t step, double t)
{
    snprintf(reason, size, "energy error %.3g beyond the limit %.3g at step %llu, t = %.17g",
             dE, limit, (unsigned long long)step, t);
    return DM_RUN_DIVERGED;
}

/* State of the section monitor between steps. */
typedef struct section_watch {
    int k;
    double level;      /* wrap == 0: the level; wrap > 0: next level above q[k] */
    double wrap;
    bool armed;        /* wrap == 0: the previous q[k] was below the level */
} section_watch;

static void section_init(section_watch *w, const dm_instance *inst, const double *q)
{
    w->k = inst->section.coord;
    w->wrap = inst->section.wrap;
    if (w->wrap > 0.0) {
        double c = inst->section.level;
        w->level = c + (floor((q[w->k] - c) / w->wrap) + 1.0) * w->wrap;
    } else {
        w->level = inst->section.level;
        w->armed = q[w->k] < w->level;
    }
}

dm_status dm_run(const dm_run_spec *spec, dm_run_result *result, const volatile int *stop,
                 dm_error *err)
{
    memset(result, 0, sizeof *result);
    const dm_instance *inst = &spec->inst;
    const dm_problem *pb = inst->problem;
    const int n = inst->dof;
    dm_run_metrics *m = &result->metrics;
    dm_status rc = allocate(result, spec, err);
    if (rc != DM_OK) {
        dm_run_result_free(result);
        return rc;
    }

    double buf[2][2 * DM_MAX_DOF];
    memcpy(buf[0], inst->q0, sizeof(double) * (size_t)n);
    memcpy(buf[0] + n, inst->p0, sizeof(double) * (size_t)n);
    dm_point a = { .t = 0.0, .x = buf[0], .potential = NAN };
    dm_point b = { .t = 0.0, .x = buf[1], .potential = NAN };
    dm_point *cur = &a, *nxt = &b;

    const double H0 = dm_instance_energy(inst, inst->q0, inst->p0);
    if (inst->has_v_min && H0 - inst->v_min > 0.0) {
        m->energy_scale = H0 - inst->v_min;
        m->energy_scale_rule = "H0 - V_min";
    } else {
        m->energy_scale = fabs(H0) > 0.0 ? fabs(H0) : 1.0;
        m->energy_scale_rule = "|H0|";
    }
    const double inv_scale = 1.0 / m->energy_scale;
    const double T = inst->period;

    double inv0[DM_MAX_INVARIANTS] = { 0 }, inv_scale_i[DM_MAX_INVARIANTS];
    double inv_now[DM_MAX_INVARIANTS];
    int n_inv = result->series.n_invariants;
    if (n_inv > 0) {
        pb->invariants(inst, inst->q0, inst->p0, inv0);
        double largest = 0.0;
        for (int i = 0; i < n_inv; i++)
            largest = fmax(largest, fabs(inv0[i]));
        for (int i = 0; i < n_inv; i++)
            inv_scale_i[i] = fabs(inv0[i]) > 0.0 ? fabs(inv0[i]) : (largest > 0 ? largest : 1.0);
    }
    for (int i = 0; i < DM_MAX_INVARIANTS; i++)
        m->max_invariant_error[i] = n_inv > i ? 0.0 : NAN;

    dm_stepper *s = dm_stepper_create(spec->method, inst, &spec->method_config, cur, err);
    if (s == NULL) {
        result->status = DM_RUN_FAILED;
        snprintf(result->reason, sizeof result->reason, "%s", err ? err->msg : "create failed");
        dm_error_clear(err);
        m->period_exact = T;
        return DM_OK;
    }

    const bool fixed = !spec->method->adaptive;
    const double h = spec->method_config.h;
    const double t_end = spec->t_end;
    const double energy_limit = spec->energy_limit > 0 ? spec->energy_limit : 1.0;
    /* Fixed steps: the horizon is a whole number of steps; the time of step k is k h
     * (one rounding), never a running sum whose error would grow with the run. */
    uint64_t n_steps = 0;
    if (fixed) {
        /* A horizon of N periods at n steps per period is N n steps even when t_end / h
         * rounds to a hair above that whole number; otherwise the first step past it. */
        double ratio = t_end / fabs(h), nearest = nearbyint(ratio);
        n_steps = (uint64_t)(fabs(ratio - nearest) <= 1e-12 * ratio ? nearest : ceil(ratio));
    }
    const size_t samples = spec->samples;

    section_watch sec = { 0 };
    section_init(&sec, inst, inst->q0);
    crossing_log log = { .inst = inst, .period = T, .store = &result->crossings,
                         .last_phase = NAN };
    line_fit drift_fit = { 0 };
    uint64_t k = 0;                 /* steps taken */
    double max_abs = 0.0, dE = 0.0;
    dm_run_status status = DM_RUN_OK;
    char *reason = result->reason;
    const size_t reason_size = sizeof result->reason;

    /* The fused loop (method.h) when the method and the problem offer it: the same
     * monitors, bit for bit, with the force inline. Probed with zero steps. */
    dm_watch w = { .H0 = H0, .inv_scale = inv_scale, .energy_limit = energy_limit,
                   .coord = sec.k, .wrap = sec.wrap, .level = sec.level, .armed = sec.armed };
    memcpy(w.x, cur->x, sizeof(double) * 2 * (size_t)n);
    const bool fused = fixed && dm_stepper_advance(s, &w, 0) != DM_WATCH_UNSUPPORTED;

    double t_start = now_seconds();
    for (size_t bucket = 0; bucket < samples && status == DM_RUN_OK; bucket++) {
        /* floor((bucket + 1) n_steps / samples) without overflowing 64 bits */
        uint64_t k_end = fixed ? (n_steps / samples) * (bucket + 1) +
                                     (n_steps % samples) * (bucket + 1) / samples
                               : 0;
        double t_bucket_end = (bucket + 1 == samples) ? t_end : t_end * (double)(bucket + 1) / (double)samples;
        if (fixed ? k >= k_end : cur->t >= t_bucket_end)
            continue; /* an empty bucket (fewer steps than samples, or a long adaptive step) */
        double bmin = INFINITY, bmax = -INFINITY;
        if (fused) {
            w.bmin = INFINITY;
            w.bmax = -INFINITY;
            for (;;) {
                dm_watch_event ev = dm_stepper_advance(s, &w, k_end);
                if (ev == DM_WATCH_CROSSING) {
                    crossing_add(&log, w.coord, w.crossed_level, (double)(w.k - 1) * h,
                                 w.x_prev, (double)w.k * h, w.x);
                    continue;
                }
                if (ev == DM_WATCH_DIVERGED)
                    status = diverged_at(reason, reason_size, w.dE, energy_limit, w.k,
                                         (double)w.k * h);
                break;
            }
            k = w.k;
            cur->t = (double)k * h;
            memcpy(cur->x, w.x, sizeof(double) * 2 * (size_t)n);
            bmin = w.bmin;
            bmax = w.bmax;
            dE = w.dE;
        } else {
            for (;;) {
                dm_status st = dm_stepper_step(s, cur, nxt);
                if (st != DM_OK) {
                    status = DM_RUN_FAILED;
                    snprintf(reason, reason_size, "%s", s->error.msg);
                    break;
                }
                k++;
                if (fixed)
                    nxt->t = (double)k * h;
                const double *x = nxt->x;
                double V = nxt->potential;
                if (V != V)
                    V = pb->potential(inst, x);
                dE = (pb->kinetic(inst, x + n) + V - H0) * inv_scale;
                if (dE < bmin)
                    bmin = dE;
                if (dE > bmax)
                    bmax = dE;
                bool diverged = !(fabs(dE) <= energy_limit);
                /* Section: one comparison per step unless a crossing happened. */
                bool crossed = false;
                double level = sec.level;
                if (!diverged) {
                    double qk = x[sec.k];
                    if (sec.wrap > 0.0) {
                        if (qk >= sec.level) {
                            crossed = true;
                            sec.level += sec.wrap;
                        } else if (qk < sec.level - sec.wrap) {
                            sec.level -= sec.wrap;
                        }
                    } else {
                        crossed = sec.armed && qk >= sec.level;
                        sec.armed = qk < sec.level;
                    }
                }
                if (crossed)
                    crossing_add(&log, sec.k, level, cur->t, cur->x, nxt->t, x);
                dm_point *tmp = cur;
                cur = nxt;
                nxt = tmp;
                if (diverged) {
                    /* the bucket records the diverged state at its own time */
                    status = diverged_at(reason, reason_size, dE, energy_limit, k, cur->t);
                    break;
                }
                if (fixed ? k >= k_end : cur->t >= t_bucket_end)
                    break;
                /* Adaptive steps can shrink without bound: a stop request and the step
                 * budget are checked inside the bucket too. */
                if (!fixed && (k & 4095) == 0) {
                    if (spec->step_budget > 0 && k >= spec->step_budget) {
                        status = DM_RUN_FAILED;
                        snprintf(reason, reason_size,
                                 "took %llu steps, the step budget, before t = %.17g (of "
                                 "%.17g)", (unsigned long long)k, cur->t, t_end);
                        break;
                    }
                    if (stop != NULL && *stop)
                        break;
                }
            }
        }
        if (bmin > bmax)
            break; /* failed on the bucket's first step: nothing to record */
        /* Bucket end: record the series and the once-per-bucket monitors. */
        dm_series *ser = &result->series;
        size_t i = ser->n++;
        double t = cur->t;
        ser->time[i] = t;
        ser->energy_error[i] = dE;
        ser->energy_error_min[i] = bmin;
        ser->energy_error_max[i] = bmax;
        double babs = fmax(fabs(bmin), fabs(bmax));
        if (babs > max_abs)
            max_abs = babs;
        line_fit_add(&drift_fit, t / T, dE);
        if (ser->global_error != NULL) {
            double qe[DM_MAX_DOF], pe[DM_MAX_DOF], sum = 0.0;
            pb->exact(inst, t, qe, pe);
            for (int j = 0; j < n; j++) {
                double dq = cur->x[j] - qe[j], dp = cur->x[n + j] - pe[j];
                sum += dq * dq + dp * dp;
            }
            ser->global_error[i] = sqrt(sum);
        }
        if (n_inv > 0) {
            pb->invariants(inst, cur->x, cur->x + n, inv_now);
            for (int j = 0; j < n_inv; j++) {
                double e = (inv_now[j] - inv0[j]) / inv_scale_i[j];
                ser->invariant_error[j][i] = e;
                if (fabs(e) > m->max_invariant_error[j])
                    m->max_invariant_error[j] = fabs(e);
            }
        }
        if (stop != NULL && *stop && status == DM_RUN_OK && bucket + 1 < samples) {
            status = DM_RUN_INTERRUPTED;
            snprintf(reason, reason_size, "interrupted at step %llu, t = %.17g",
                     (unsigned long long)k, cur->t);
        }
    }
    double wall = now_seconds() - t_start;

    /* A divergence or failure inside a bucket still counts the steps seen. */
    result->status = status;
    m->steps = k;
    m->counts = *dm_stepper_counts(s);
    m->t_reached = cur->t;
    m->wall_seconds = wall;
    m->ns_per_step = k > 0 ? 1e9 * wall / (double)k : NAN;
    /* No bucket recorded (a failure on the first step): nothing was measured. */
    m->max_energy_error = result->series.n > 0 ? max_abs : NAN;
    m->final_energy_error = result->series.n > 0 ? result->series.energy_error[result->series.n - 1] : NAN;
    m->energy_drift_per_period = line_fit_slope(&drift_fit);
    m->drift_exponent = dm_drift_exponent(&result->series);
    m->period_exact = T;
    double slope = line_fit_slope(&log.fit);
    m->phase_error_per_period = slope;
    m->period_rel_error = slope / (2.0 * M_PI);
    m->period_measured = T * (1.0 + m->period_rel_error);
    m->phase_error_final = log.last_phase;
    m->max_global_error = NAN;
    if (result->series.global_error != NULL) {
        m->max_global_error = 0.0;
        for (size_t i = 0; i < result->series.n; i++)
            m->max_global_error = fmax(m->max_global_error, result->series.global_error[i]);
    }
    result->crossings.total = log.count;
    dm_stepper_destroy(s);
    return DM_OK;
}
