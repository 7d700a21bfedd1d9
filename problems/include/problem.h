/* problem.h — the problem registry's one interface.
 *
 * Every problem is a separable Hamiltonian H(q, p) = T(p) + V(q) with `dof` degrees of
 * freedom, described by one const dm_problem table in its own file under problems/ and
 * one line in registry.c. The harness and the integrators only ever see this table and
 * a dm_instance built from it; they never ask which problem they hold.
 */
#ifndef DM_PROBLEM_H
#define DM_PROBLEM_H

#include <math.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dm_error.h"
#include "dm_monitor.h"

#define DM_MAX_DOF 384    /* degrees of freedom of the largest problem we hold (128 bodies in 3-D) */
#define DM_MAX_PARAMS 8   /* user-facing parameters of one problem */
#define DM_MAX_REGIMES 4
#define DM_MAX_INVARIANTS 4
#define DM_DERIVED_MAX 24     /* problem-private derived constants kept in an instance */

/* The wider floating type of the reference trajectory (gradient_quad below): IEEE
 * binary128 (gcc's __float128, 113-bit significand, about 34 digits) where the compiler
 * has it, else long double (x87 extended: 64 bits, about 19 digits). DM_QUAD_NAME names
 * the one used; results files record it with each reference. */
#if defined(__SIZEOF_FLOAT128__) && !defined(DM_QUAD_LONG_DOUBLE)
typedef __float128 dm_quad;
#define DM_QUAD_NAME "__float128"
#define DM_QUAD_IS_FLOAT128 1
#else
typedef long double dm_quad;
#define DM_QUAD_NAME "long double"
#define DM_QUAD_IS_FLOAT128 0
#endif

/* Parameter flags. */
enum {
    DM_PARAM_MIN_OPEN = 1u << 0, /* value must be > min (else >= min) */
    DM_PARAM_MAX_OPEN = 1u << 1, /* value must be < max (else <= max) */
    DM_PARAM_START = 1u << 2     /* one of several ways to give the starting state
                                    (amplitude or energy): at most one may be given */
};

typedef struct dm_param {
    const char *name;     /* key in suites and on the command line */
    double fallback;      /* value used when the user gives none (ignored for START
                             parameters that were not chosen) */
    double min, max;      /* valid range; use -INFINITY / INFINITY for none */
    unsigned flags;
    const char *meaning;  /* one line for `driftmark list` */
} dm_param;

typedef struct dm_regime {
    const char *id;       /* "libration", "rotation", "one_well", "bound", ... */
    const char *meaning;
} dm_regime;

/* The default Poincare-type section of a problem: the trajectory crosses it when
 * q[coord] passes upward (increasing) through `level`, or through level + k * wrap for
 * any integer k when wrap > 0 (angles in rotation). */
typedef struct dm_section {
    int coord;
    double level;
    double wrap;
    /* relative: the value watched is normal . (r_coord - r_ref), r_i = (q[i], q[i+1],
     * q[i+2]): the signed distance of a body (coord) from a plane through another (ref),
     * N-body. Left false by every other problem. */
    bool relative;
    int ref;
    double normal[3];
} dm_section;

/* The value a section watches, at q (linear in q: of a velocity, its rate). */
static inline double dm_section_value(const dm_section *s, const double *q)
{
    if (!s->relative)
        return q[s->coord];
    const double *a = q + s->coord, *b = q + s->ref;
    return s->normal[0] * (a[0] - b[0]) + s->normal[1] * (a[1] - b[1]) +
           s->normal[2] * (a[2] - b[2]);
}

typedef struct dm_problem dm_problem;

/* How an invariant's error is measured (one per invariant of a problem). */
typedef enum dm_invariant_error {
    DM_INVARIANT_RELATIVE = 0,   /* (I - I0) / |I0|; NaN when I0 = 0 */
    DM_INVARIANT_DIFFERENCE      /* I - I0, for an I the problem makes dimensionless */
} dm_invariant_error;

/* One concrete problem: parameters resolved, starting state built, regime and the
 * closed-form period known (or NaN for a problem without one: no_period). Plain data,
 * no allocation; copy it freely: a copy shares `data`, which is immutable and owned by
 * whoever built the instance (the suite), so the owner outlives every copy. A stepper
 * or a run keeps a pointer to the instance it was made from: the instance must outlive
 * them (dm_stepper_destroy first). */
typedef struct dm_instance {
    const dm_problem *problem;
    double param[DM_MAX_PARAMS];  /* every parameter's value, in the table's order */
    unsigned given;             /* bit i set when the user gave parameter i */
    int dof;
    double q0[DM_MAX_DOF], p0[DM_MAX_DOF];
    double energy;              /* H(q0, p0) */
    int regime;                 /* index into problem->regimes */
    double period;              /* closed-form period of this regime: finite (states with
                                   no period are refused by setup), or NaN for a problem
                                   marked no_period */
    bool has_v_min;             /* the potential has a finite minimum ... */
    double v_min;               /* ... of this value; and, with it, ... */
    double t_min;               /* ... the kinetic energy's lowest value: 0 for
                                   sum p^2 / (2 m), else E_scale = H0 - (T_min + V_min) */
    dm_section section;
    double period_osculating;   /* no_period: a period the crossings should come near
                                   (N-body period_of: the pair's two-body period at the
                                   start), else NaN or 0: none */
    double first_crossing;      /* time of the exact orbit's first section crossing
                                   in (0, period]; crossing n is at
                                   first_crossing + (n - 1) * period */
    double derived[DM_DERIVED_MAX];     /* constants derived by setup for the problem's own use */
    /* Immutable per-instance data too large for param/derived (N-body: the bodies),
     * not owned by the instance; NULL for problems that need none (needs_data false). */
    const void *data;
} dm_instance;

/* ---- the fused loop's interface (the loop itself: dm_fused_loop.h) ----
 * For a splitting method on a problem that provides one, the steps and the per-step
 * monitor (dm_monitor.h) run in one loop with the force inline. Its results are bit for
 * bit those of the per-step path (tests/test_runner.c checks it). */

/* A splitting table scaled by h: kicks p -= kick[j] grad V, drifts q += drift[j] grad T,
 * in the order kick[0], drift[0], kick[1], ... (kick_first) or drift[0], kick[0], ... */
typedef struct dm_fused_table {
    bool kick_first;
    int n_kick, n_drift;
    const double *kick;
    const double *drift;
} dm_fused_table;

/* What one call leaves for the next: the force at the current q when the last
 * operation was a kick (first-same-as-last), and the work done since it was collected. */
typedef struct dm_fused_cache {
    double grad[DM_MAX_DOF];
    double potential;
    bool valid;
    uint64_t forces, velocities;
} dm_fused_cache;

/* The run as the loop carries it between calls. */
typedef struct dm_fused_run {
    uint64_t k;                     /* steps taken */
    double x[2 * DM_MAX_DOF];       /* the state after step k: q then p */
    double x_prev[2 * DM_MAX_DOF];  /* the state before the last step (set on an event) */
    dm_step_monitor monitor;
} dm_fused_run;

typedef enum dm_fused_event {
    DM_FUSED_END = DM_STEP_QUIET,            /* k reached k_end */
    DM_FUSED_CROSSING = DM_STEP_CROSSED,     /* the last step crossed the section */
    DM_FUSED_DIVERGED = DM_STEP_DIVERGED,    /* the last step's dE is NaN, Inf or beyond
                                                the limit */
    DM_FUSED_UNSUPPORTED,                    /* no fused loop for this method and problem */
    DM_FUSED_FAILED                          /* the next step could not be taken (the
                                                implicit midpoint iteration did not
                                                converge): the state is the one before it */
} dm_fused_event;

/* Runs steps from run->k until k_end or an event; returns the dm_fused_event. */
typedef int (*dm_fused_loop_fn)(const dm_instance *inst, const dm_fused_table *table,
                                dm_fused_cache *cache, dm_fused_run *run, uint64_t k_end);

/* ---- the fused Runge-Kutta loop ----
 * The same for the Runge-Kutta family on y = (q, p), dq/dt = grad T(p),
 * dp/dt = -grad V(q): an explicit tableau (integrators/rk.c) or the implicit midpoint
 * rule (integrators/midpoint.c). The step arithmetic is written once, in
 * dm_fused_loop.h (dm_rk_explicit_step, dm_midpoint_step), and the per-step paths of
 * rk.c and midpoint.c call the same functions. */
#define DM_RK_MAX_STAGES 16

/* An explicit Butcher tableau: a strictly lower triangular, b the weights. */
typedef struct dm_rk_tableau {
    int stages;                 /* 1 .. DM_RK_MAX_STAGES */
    double a[DM_RK_MAX_STAGES][DM_RK_MAX_STAGES];
    double b[DM_RK_MAX_STAGES];
} dm_rk_tableau;

/* An explicit Runge-Kutta-Nystrom table for q'' = -M^-1 grad V(q), for a kinetic
 * energy quadratic in p (grad T linear): abar strictly lower triangular, bbar the
 * position weights, b the momentum weights, c the nodes. */
typedef struct dm_rkn_tableau {
    int stages;                 /* 1 .. DM_RK_MAX_STAGES */
    double abar[DM_RK_MAX_STAGES][DM_RK_MAX_STAGES];
    double bbar[DM_RK_MAX_STAGES];
    double b[DM_RK_MAX_STAGES];
    double c[DM_RK_MAX_STAGES];
} dm_rkn_tableau;

typedef struct dm_fused_rk {
    const dm_rk_tableau *tableau;   /* NULL: the implicit midpoint rule (or nystrom) */
    const dm_rkn_tableau *nystrom;  /* not NULL: this Runge-Kutta-Nystrom table */
    double h;
    int max_iterations;             /* implicit midpoint: the fixed-point iteration cap */
} dm_fused_rk;

/* What one call leaves for the next, and the work done since it was collected. */
typedef struct dm_fused_rk_cache {
    double slope[2 * DM_MAX_DOF];   /* implicit midpoint: f at the last iterate, the next
                                       step's predictor ... */
    bool slope_valid;               /* ... when a step has converged since the restart */
    uint64_t evaluations;           /* force and velocity evaluations (one each) */
    uint64_t max_iterations_in_step;
    int failed_iterations;          /* DM_FUSED_FAILED: the iterations of the step ... */
    double failed_update;           /* ... and its last update */
} dm_fused_rk_cache;

typedef int (*dm_fused_rk_loop_fn)(const dm_instance *inst, const dm_fused_rk *method,
                                   dm_fused_rk_cache *cache, dm_fused_run *run,
                                   uint64_t k_end);

/* A problem. Every field is REQUIRED unless marked optional; an optional function may
 * be NULL, with the default its comment states. tests/test_registry.c checks every
 * table of the registry against these rules. Tables are const and static: they outlive
 * everything built from them. */
struct dm_problem {
    const char *id;             /* registry name: "pendulum" (a plain word, unique) */
    const char *name;           /* one-line human description */
    int dof;                    /* 1 .. DM_MAX_DOF; a problem whose size its data gives
                                   (N-body) states the most here, and its setup sets
                                   inst->dof */
    int n_params;               /* 0 .. DM_MAX_PARAMS */
    dm_param params[DM_MAX_PARAMS];
    int n_regimes;              /* 1 .. DM_MAX_REGIMES */
    dm_regime regimes[DM_MAX_REGIMES];
    /* Optional (false): the problem has no closed-form period. setup leaves period and
     * first_crossing NaN; runs give their step as h and their horizon in time; the
     * phase figures are NaN, and the period is measured from the crossings of the
     * section alone (when setup sets one: level NaN means none). */
    bool no_period;
    /* Optional (false): setup needs inst->data (dm_instance_init_data); without it the
     * instance is refused. */
    bool needs_data;

    /* Called with inst->param and inst->given filled (defaults where not given, ranges
     * already checked). Builds q0, p0, energy, regime, period, v_min, section,
     * first_crossing and derived. Refuses, with a clear message, every state that has no
     * finite period: on a separatrix, at an equilibrium, unbound. */
    dm_status (*setup)(dm_instance *inst, dm_error *err);

    double (*potential)(const dm_instance *inst, const double *q);
    /* Writes grad V(q) into grad and returns V(q): both come from the same
     * intermediate results (sincos, 1/r), so a monitor gets V for free. */
    double (*force)(const dm_instance *inst, const double *q, double *grad);
    /* Optional: writes grad V(q) alone, the same numbers force() writes, bit for bit
     * (tests/test_registry.c checks it), for the methods that never use V (Runge-Kutta
     * stages, implicit midpoint iterations): no cos, no division for V. NULL: force()
     * with V dropped (dm_problem_gradient below). */
    void (*gradient)(const dm_instance *inst, const double *q, double *grad);
    double (*kinetic)(const dm_instance *inst, const double *p);
    /* Writes grad T(p) (the velocity dq/dt) into v. */
    void (*velocity)(const dm_instance *inst, const double *p, double *v);
    /* Optional: the Hessian of V, dof x dof row-major. NULL: CVODE BDF uses its own
     * difference-quotient Jacobian. */
    void (*hessian)(const dm_instance *inst, const double *q, double *hess);
    /* Optional: the exact solution at time t from (q0, p0). NULL: no global error is
     * measured (the series and max_global_error are absent / NaN). */
    void (*exact)(const dm_instance *inst, double t, double *q, double *p);

    /* Optional: the regime (an index into regimes) of the orbits of energy E, or -1
     * where they have none (unbound). NULL: one regime for every energy. The runner
     * asks it for the lowest and the highest energy of each bucket: when both lie in
     * another regime than the start's, the numerical orbit has crossed a separatrix the
     * exact orbit never reaches (for one degree of freedom an energy kept above a
     * saddle's at every step cannot turn back below it, and one kept below cannot
     * pass it). */
    int (*regime_of_energy)(const dm_instance *inst, double energy);

    /* Optional: the fused loop, any splitting table's steps and the per-step monitor
     * compiled together with this problem's force inline. One line in the problem
     * file, `DM_FUSED_LOOP(fused_loop, DOF)` from dm_fused_loop.h, and
     * `.fused_loop = fused_loop` here. NULL: the per-step path runs (slower, same
     * results). */
    dm_fused_loop_fn fused_loop;
    /* Optional: the same for Runge-Kutta tableaux and the implicit midpoint rule, with
     * gradient() inline: `DM_FUSED_RK_LOOP(fused_rk_loop, DOF)` and
     * `.fused_rk_loop = fused_rk_loop`. NULL: the per-step path runs them. */
    dm_fused_rk_loop_fn fused_rk_loop;

    /* Optional: extra conserved quantities the harness monitors (angular momentum, ...).
     * n_invariants = 0 and invariants = NULL: none. Otherwise n_invariants names, how
     * each one's error is measured, and a function writing that many values. Errors must
     * not depend on the units: a quantity that is never zero on a valid orbit is
     * measured relative to its starting value; one that can be zero (a vector's
     * component) is returned already dimensionless and measured as a difference. */
    int n_invariants;
    const char *invariant_names[DM_MAX_INVARIANTS];
    dm_invariant_error invariant_errors[DM_MAX_INVARIANTS];
    void (*invariants)(const dm_instance *inst, const double *q, const double *p,
                       double *out);

    /* Optional (N-body): the smallest distance between two bodies at which this thread's
     * force and gradient evaluations found them since the last call with restart true
     * (INFINITY when none). The runner restarts it when a run starts and reads it at
     * every bucket end, so it covers every step whatever the buckets. */
    double (*closest_approach)(bool restart);

    /* Optional, both or neither: grad V(q) and grad T(p) in dm_quad, for the reference
     * trajectory of a problem whose runs measure their global error against one (the
     * suite's `reference: true`; harness/runner.c, integrators/reference.c). The same
     * formulas as gradient and velocity, every constant taken from the instance's
     * doubles, so the reference solves exactly the problem the run solves. NULL: no
     * reference for this problem (the suite refuses `reference: true` for it). */
    void (*gradient_quad)(const dm_instance *inst, const dm_quad *q, dm_quad *grad);
    void (*velocity_quad)(const dm_instance *inst, const dm_quad *p, dm_quad *v);
};

/* ---- problems from the user's own code (library.c) ----
 * A shared object defines, against this header (installed by `cmake --install` with a
 * pkg-config file, driftmark-problem), one function
 *
 *     const dm_problem *dm_problem_entry(unsigned *abi)
 *
 * that sets *abi = DM_PROBLEM_ABI and returns its table, filled as a built-in problem's
 * is (examples/glider/). DM_PROBLEM_ABI changes whenever dm_problem, dm_instance or the
 * fused loop's types change, so an object built against another version is refused. */
#define DM_PROBLEM_ABI 5u /* 2: DM_MAX_DOF 6 -> 384; 3: DM_RK_MAX_STAGES 4 -> 16 and
                             Runge-Kutta-Nystrom tables in the fused loop; 4: data,
                             no_period, needs_data, relative sections, closest_approach;
                             5: gradient_quad, velocity_quad, a section's normal */

typedef const dm_problem *(*dm_problem_entry_fn)(unsigned *abi);

/* Loads the object at `path` once (later calls with the same path return the same table)
 * and checks its table (dm_problem_check); `hash` gets 16 hex digits of a hash of the
 * object's bytes, so a result can be traced to exactly what ran. The object stays loaded
 * for the life of the process. Errors are one line naming the path. */
dm_status dm_problem_load(const char *path, const dm_problem **problem, char hash[17],
                          dm_error *err);

/* The rules of the table (the "required" fields above, counts in range, names set,
 * invariants all or nothing): DM_OK or a one-line error naming the first broken one. */
dm_status dm_problem_check(const dm_problem *problem, dm_error *err);

/* grad V(q) of a problem that has no gradient function: force() with V dropped. */
static inline void dm_gradient_from_force(const dm_instance *inst, const double *q,
                                          double *grad)
{
    (void)inst->problem->force(inst, q, grad);
}

typedef void (*dm_gradient_fn)(const dm_instance *inst, const double *q, double *grad);

/* The problem's gradient, or its default. */
static inline dm_gradient_fn dm_problem_gradient(const dm_problem *problem)
{
    return problem->gradient != NULL ? problem->gradient : dm_gradient_from_force;
}

/* The energy scale of dE = (H - H0) / E_scale as the instance sets it: H0 - V_min where
 * the potential has a finite minimum (H0 - T_min - V_min with a kinetic energy whose
 * lowest value T_min is not 0), else |H0|; *rule names it (one of the results file's
 * energy-scale rules). Not checked for sign: dm_instance_init refuses a scale that is
 * not resolved, and the runner falls back to |H0| (1 when H0 is 0). */
static inline double dm_energy_scale(const dm_instance *inst, double H0, const char **rule)
{
    if (!inst->has_v_min) {
        *rule = "|H0|";
        return fabs(H0);
    }
    *rule = inst->t_min != 0.0 ? "H0 - T_min - V_min" : "H0 - V_min";
    return H0 - (inst->v_min + inst->t_min);
}

/* ---- registry (registry.c) ---- */
extern const dm_problem *const dm_problems[];
extern const size_t dm_problem_count;
const dm_problem *dm_problem_find(const char *id);

/* Builds an instance from key=value pairs. Checks every key (unknown key: error with a
 * "did you mean" hint), every value (finite, in range), that at most one START
 * parameter is given, then calls the problem's setup. */
dm_status dm_instance_init(dm_instance *inst, const dm_problem *problem, size_t n,
                           const char *const *keys, const double *values, dm_error *err);
/* The same for a problem that needs data (needs_data): `data` (immutable, owned by the
 * caller, who keeps it alive as long as any copy of the instance) is set before setup. */
dm_status dm_instance_init_data(dm_instance *inst, const dm_problem *problem,
                                const void *data, size_t n, const char *const *keys,
                                const double *values, dm_error *err);

/* H(q, p). */
double dm_instance_energy(const dm_instance *inst, const double *q, const double *p);

/* Index of parameter `name` in problem->params, or -1. */
int dm_problem_param_index(const dm_problem *problem, const char *name);

/* Whether a bound of p's range is excluded: flagged open, or infinite. */
bool dm_param_min_open(const dm_param *p);
bool dm_param_max_open(const dm_param *p);

/* p's range as text for messages and `driftmark list`: "(0, inf)",
 * "[-3.141592653589793, 3.141592653589793]"; round brackets at excluded bounds, each
 * number in the shortest form that reads back as the same double. */
void dm_param_range_text(const dm_param *p, char *buf, size_t size);

/* Time in (0, T] of the first upward section crossing of the exact orbit, found from
 * inst->problem->exact by bracketing and bisection to machine precision. For setups
 * that have no closed form for it. */
double dm_first_crossing_from_exact(const dm_instance *inst);

#endif
