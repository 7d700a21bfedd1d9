/* method.h — the one interface every integrator implements.
 *
 * A method is a const dm_method table. Splitting methods are only data (a dm_splitting
 * coefficient table) run by the engine in splitting.c; the others (Runge-Kutta,
 * implicit midpoint, the CVODE adapter) supply create/step/destroy. The harness only
 * calls dm_stepper_create / dm_stepper_step / dm_stepper_counts / dm_stepper_destroy
 * and never asks which method it holds.
 *
 * Stepping is out of place: dm_stepper_step(s, from, to) reads the state at `from` and
 * writes the state one step later into `to`. The caller ping-pongs two buffers, so it
 * sees both ends of every step (for section crossings) and nothing copies the state.
 * `from` must be the `to` of the previous call, or the point given to
 * dm_stepper_restart; methods may keep caches (the force at the last point, CVODE's
 * history) that rely on it.
 */
#ifndef DM_METHOD_H
#define DM_METHOD_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "dm_error.h"
#include "problem.h"

typedef enum dm_family {
    DM_FAMILY_SPLITTING,
    DM_FAMILY_RUNGE_KUTTA,
    DM_FAMILY_IMPLICIT,
    DM_FAMILY_ADAPTIVE
} dm_family;

const char *dm_family_name(dm_family family);

/* A splitting method: alternating kicks p -= c h grad V(q) and drifts
 * q += c h grad T(p), starting with a kick when kick_first, else with a drift.
 * With kick_first, kick[0], drift[0], kick[1], drift[1], ... (n_kick = n_drift or
 * n_drift + 1); otherwise drift[0], kick[0], drift[1], ... (n_drift = n_kick or
 * n_kick + 1). The sums of drift[] and of kick[] are both 1. */
typedef struct dm_splitting {
    bool kick_first;
    int n_drift, n_kick;
    const double *drift;
    const double *kick;
} dm_splitting;

/* Per-run settings. Fixed-step methods read h; adaptive ones rtol/atol and t_stop. */
typedef struct dm_method_config {
    double h;             /* step size (may be negative for backward integration) */
    double rtol, atol;    /* adaptive methods */
    double t_stop;        /* adaptive methods never step past this time */
    bool compensated;     /* Kahan-compensated q and p updates (splitting methods) */
    int max_iterations;   /* implicit methods: fixed-point iteration cap (0: default) */
    bool plain_steps;     /* never use a problem's fused loop (tests compare the paths) */
} dm_method_config;

/* The absolute tolerance of an adaptive method whose configuration gives atol <= 0
 * (the suite resolves it with this, so the configuration text records it). */
double dm_default_atol(double rtol);

/* Work really done, counted by the method itself. */
typedef struct dm_counts {
    uint64_t steps;
    uint64_t force_evals;      /* grad V evaluations */
    uint64_t velocity_evals;   /* grad T evaluations */
    uint64_t rhs_evals;        /* adaptive: right-hand-side calls */
    uint64_t jac_evals;        /* adaptive: Jacobian evaluations */
    uint64_t error_test_fails; /* adaptive */
    uint64_t conv_fails;       /* adaptive: nonlinear solver convergence failures */
    uint64_t nonlin_iters;     /* implicit and adaptive: nonlinear iterations */
    uint64_t max_iters_in_step;/* implicit: most iterations one step needed */
} dm_counts;

/* One end of a step. x holds q (x[0..dof)) then p (x[dof..2 dof)). */
typedef struct dm_point {
    double t;
    double *x;
    /* V(q) at this point when the step computed it anyway (FSAL force), else NaN:
     * lets an energy monitor skip a potential evaluation. */
    double potential;
} dm_point;

/* Fixed-step time: the time of step n from `origin` is origin + n h, one rounding,
 * never a running sum whose error grows with the run. Every fixed-step method keeps a
 * dm_step_clock; the runner's fused path (which has no stepper in the loop) uses
 * dm_step_time with origin 0. */
static inline double dm_step_time(double origin, uint64_t n, double h)
{
    return origin + (double)n * h;
}

typedef struct dm_step_clock {
    double origin;
    uint64_t n;
} dm_step_clock;

static inline void dm_step_clock_start(dm_step_clock *c, double t)
{
    c->origin = t;
    c->n = 0;
}

static inline double dm_step_clock_next(dm_step_clock *c, double h)
{
    c->n++;
    return dm_step_time(c->origin, c->n, h);
}

typedef struct dm_method dm_method;
typedef struct dm_stepper dm_stepper;

struct dm_stepper {
    const dm_method *method;
    const dm_instance *inst;
    int dof;
    dm_method_config config;
    dm_counts counts;          /* read through dm_stepper_counts: a method may bring it
                                  up to date only when asked (sync_counts) */
    dm_error error;            /* why the last step failed */
    /* Method-private state follows in the implementation's own struct, of which this
     * is the first member. */
};

/* A method. Every field is REQUIRED unless marked optional. Exactly one of two kinds:
 * a splitting method given by its table sets `splitting` and leaves
 * create/step/restart/destroy NULL (the engine in splitting.c runs it); any other
 * method sets all four and no `splitting` (of the splitting family only when its steps
 * split a problem's own structure: wisdom-holman, which has check_problem).
 * tests/test_registry.c checks every table of the registry against these rules. */
struct dm_method {
    const char *id;            /* CLI identifier: "verlet" (a plain word, unique) */
    const char *name;          /* published name */
    const char *reference;     /* where the method or its coefficients are published */
    dm_family family;
    int order;                 /* >= 1: the classical order; of a variable-order method,
                                  the highest order it may use */
    bool variable_order;       /* optional: the method varies its order from 1 to order */
    bool symplectic;
    bool symmetric;            /* time-reversible */
    bool adaptive;             /* steps chosen by the method: reads rtol/atol */
    int force_evals_per_step;  /* grad V per step in a long run (FSAL merged); 0 when
                                  it depends on the run (adaptive and implicit
                                  methods: their dm_counts say what was done) */
    const dm_splitting *splitting;  /* splitting methods only: the coefficient table */
    /* Optional (NULL: every problem). Whether the method can run this instance (one
     * that needs the problem's structure, as Wisdom-Holman the N-body masses through
     * problems/include/nbody.h): DM_OK or DM_EINPUT with a one-line reason. The suite
     * reader asks it for every run before anything runs; create refuses the same. */
    dm_status (*check_problem)(const dm_method *m, const dm_instance *inst, dm_error *err);
    /* Optional: an explicit Runge-Kutta method's tableau (rk.c runs the one given here) */
    const dm_rk_tableau *tableau;
    /* Optional: a Runge-Kutta-Nystrom method's table (rk.c runs it instead of `tableau`;
     * for problems whose grad T is linear in p) */
    const dm_rkn_tableau *nystrom;
    /* Optional: the table typed in a suite this method was made from (user_table.h);
     * NULL for the built-in methods */
    const struct dm_user_table *user;

    /* Non-splitting methods. create allocates everything the steps will need; the
     * stepper keeps pointers to `inst` (which must outlive it) but not to `start`. */
    dm_stepper *(*create)(const dm_method *m, const dm_instance *inst,
                          const dm_method_config *config, const dm_point *start,
                          dm_error *err);
    /* Returns DM_OK, or an error code with s->error filled (solver flag name). */
    dm_status (*step)(dm_stepper *s, const dm_point *from, dm_point *to);
    dm_status (*restart)(dm_stepper *s, const dm_point *at);
    /* Frees everything create allocated, the stepper included. */
    void (*destroy)(dm_stepper *s);
    /* Optional (NULL: the per-step path always runs). What dm_stepper_run_fused does
     * for this method: its steps in the problem's fused loop, bit for bit like step. */
    dm_fused_event (*run_fused)(dm_stepper *s, dm_fused_run *run, uint64_t k_end);
    /* Optional (NULL: s->counts is always current). Brings s->counts up to date for a
     * method that reads its counters lazily instead of after every step (the CVODE
     * adapter asks CVODE for them only here, on restart, on failure and at t_stop). */
    void (*sync_counts)(dm_stepper *s);
    /* Checkpoints (dm_stepper_save / dm_stepper_load below). save writes the method's
     * own state (caches, step clock) as at most `capacity` 64-bit words (doubles by
     * their bits) and returns how many; load takes them back for a stepper continuing
     * from `at` with the work `counts` done so far, or fails with s->error filled
     * (a record of the wrong length). */
    size_t (*save)(const dm_stepper *s, uint64_t *words, size_t capacity);
    dm_status (*load)(dm_stepper *s, const uint64_t *words, size_t n, const dm_point *at,
                      const dm_counts *counts);
};

/* ---- the fused loop ----
 * For a splitting method (without compensated sums) on a problem that provides
 * fused_loop, or a Runge-Kutta method or the implicit midpoint rule on one that provides
 * fused_rk_loop (problem.h), runs steps with the per-step monitor until k_end or an
 * event, as fast as a hand-written loop and bit for bit like dm_stepper_step followed
 * by dm_monitor_step. Returns DM_FUSED_UNSUPPORTED when the method and problem have
 * none, DM_FUSED_FAILED (s->error filled) where dm_stepper_step would have failed. */
dm_fused_event dm_stepper_run_fused(dm_stepper *s, dm_fused_run *run, uint64_t k_end);

/* ---- registry (registry.c) ---- */
extern const dm_method *const dm_methods[];
extern const size_t dm_method_count;
const dm_method *dm_method_find(const char *id);

/* ---- the stepper API the harness uses ----
 * Lifetimes: a stepper is made by dm_stepper_create and freed by dm_stepper_destroy,
 * once; it points to its method table (static) and to the instance it was created for,
 * which the caller keeps alive until the stepper is destroyed. The dm_point buffers are
 * the caller's; a stepper may remember which buffer it wrote last (first-same-as-last
 * caches) but never frees or keeps one past the next call. */
dm_stepper *dm_stepper_create(const dm_method *m, const dm_instance *inst,
                              const dm_method_config *config, const dm_point *start,
                              dm_error *err);
dm_status dm_stepper_step(dm_stepper *s, const dm_point *from, dm_point *to);
/* Forget caches and continue from `at` (a new starting point, or after changing h). */
dm_status dm_stepper_restart(dm_stepper *s, const dm_point *at);
/* Change the fixed step (fixed-step methods only); implies a restart at `at`. */
dm_status dm_stepper_set_step(dm_stepper *s, double h, const dm_point *at);
/* The work counted so far, brought up to date (sync_counts); read it here, not from
 * s->counts, whenever the run may not have reached t_stop. */
const dm_counts *dm_stepper_counts(dm_stepper *s);
void dm_stepper_destroy(dm_stepper *s);

/* ---- checkpoints ----
 * A stepper's whole state as a record of 64-bit words (doubles by their bits): the
 * work counted, then the method's own caches and step clock. A stepper created for the
 * same method, instance and configuration and given the record back by dm_stepper_load
 * at the same point continues exactly as the saved one would have: fixed-step methods
 * bit for bit (caches restored, not recomputed); CVODE restarts at the point
 * (CVodeReInit: order 1 and a new first step), so its later steps differ within its
 * tolerance. */
#define DM_STEPPER_RECORD_MAX (16 + 8 * DM_MAX_DOF)
/* Returns the words written (at most capacity, at most DM_STEPPER_RECORD_MAX). */
size_t dm_stepper_save(dm_stepper *s, uint64_t *words, size_t capacity);
/* `at` is the point the saved stepper had reached, in the buffer the next step reads. */
dm_status dm_stepper_load(dm_stepper *s, const uint64_t *words, size_t n, const dm_point *at);

/* Doubles into checkpoint words and back, by their bits. */
static inline uint64_t dm_word_of_double(double v)
{
    uint64_t w;
    memcpy(&w, &v, sizeof w);
    return w;
}

static inline double dm_double_of_word(uint64_t w)
{
    double v;
    memcpy(&v, &w, sizeof v);
    return v;
}

#endif
