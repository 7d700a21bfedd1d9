/* cmd_bench.c — `driftmark bench [--quick] [--json]`: what the harness costs.
 *
 * For Störmer–Verlet and Yoshida's triple jump on the pendulum and on Kepler it times,
 * side by side in this one process, a hand-written loop of the same method and problem
 * (bench_bare.c) and a full harness run (dm_run with every monitor on), alternating
 * them and keeping each one's fastest round; it checks that both end with the same
 * energy error bit for bit (same arithmetic, so the same state). Beside them it times
 * the same steps calling the problem's force() and velocity() through its table: the
 * best the per-step path (dm_stepper_step) can do, which the fused loop
 * (integrators/splitting_block.h) is there to beat. It also times writing
 * a one-run results file of the harness run against the run's wall time, reads the
 * peak resident memory, and times CVODE called directly against CVODE through our
 * adapter on the same problem and tolerances. Last, it runs a small suite of equal runs
 * through the pool of `driftmark run` (pool.c) with one job and with every core, and
 * checks that both give the same results bit for bit.
 */
#include <getopt.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>
#include <unistd.h>

#include <cvode/cvode.h>
#include <cvode/cvode_ls.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_dense.h>
#include <sunmatrix/sunmatrix_dense.h>
#include <sunnonlinsol/sunnonlinsol_fixedpoint.h>
#include <sunnonlinsol/sunnonlinsol_newton.h>

#include "bench_loops.h"
#include "cli.h"
#include "harness.h"

#define CMD "bench"
#define BENCH_SAMPLES 4096 /* the suite's default sample budget */
#define CVODE_RTOL 1e-8

static double now_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Peak resident set of this process so far, in KiB (Linux reports ru_maxrss in KiB). */
static long peak_resident_kib(void)
{
    struct rusage ru;
    return getrusage(RUSAGE_SELF, &ru) == 0 ? ru.ru_maxrss : -1;
}

/* ---- the cases ---- */

typedef struct bench_case {
    const char *problem;
    const char *key;
    double value;
    const char *method;
    double steps_per_period;   /* pendulum: the default suite's 96 force evaluations a
                                  period; Kepler at e = 0.6 needs more for Yoshida's
                                  triple jump to stay stable over 10^5 periods */
} bench_case;

static const bench_case cases[] = {
    { "pendulum", "amplitude", 2.5, "verlet", 96 },
    { "pendulum", "amplitude", 2.5, "yoshida4", 32 },
    { "kepler", "eccentricity", 0.6, "verlet", 256 },
    { "kepler", "eccentricity", 0.6, "yoshida4", 256 },
};
#define N_CASES (sizeof cases / sizeof cases[0])

typedef struct case_result {
    uint64_t steps;
    double bare_seconds;          /* fastest round */
    double bare_sin_only_seconds; /* pendulum: a loop that never evaluates V; else NaN */
    double through_problem_seconds; /* the loop calling the problem's functions */
    double harness_seconds;       /* fastest round, dm_run as a whole */
    bool energy_agrees;           /* bare and harness end with the same dE, bit for bit */
    double harness_energy_error, bare_energy_error;
    double hdf5_seconds;          /* dm_results_write of a one-run file; NaN if it failed */
    double hdf5_share;            /* hdf5_seconds / harness_seconds */
    char hdf5_note[DM_ERROR_MSG_MAX + 64];
} case_result;

/* A run spec built by hand, the way the suite reader builds one. */
static dm_status make_spec(dm_run_spec *spec, const bench_case *c, uint64_t steps, dm_error *err)
{
    memset(spec, 0, sizeof *spec);
    const dm_problem *pb = dm_problem_find(c->problem);
    spec->method = dm_method_find(c->method);
    if (pb == NULL || spec->method == NULL || spec->method->splitting == NULL)
        return dm_error_set(err, DM_EINPUT, "bench: case %s/%s is not available", c->problem,
                            c->method);
    const char *keys[1] = { c->key };
    double values[1] = { c->value };
    dm_status st = dm_instance_init(&spec->inst, pb, 1, keys, values, err);
    if (st != DM_OK)
        return st;
    snprintf(spec->id, sizeof spec->id, "bench.%s-%s%g.%s-n%g", c->problem, c->key, c->value,
             c->method, c->steps_per_period);
    double T = spec->inst.period;
    double h = T / c->steps_per_period;
    spec->step_setting = DM_SET_BY_STEPS_PER_PERIOD;
    spec->step_value = c->steps_per_period;
    spec->method_config.h = h;
    /* The runner takes ceil(t_end / h - 1e-9) steps: aim half a step short of `steps`. */
    spec->t_end = ((double)steps - 0.5) * h;
    spec->periods = spec->t_end / T;
    spec->method_config.t_stop = spec->t_end;
    spec->samples = BENCH_SAMPLES;
    spec->energy_limit = 1.0;
    spec->sweep = -1;
    snprintf(spec->config, sizeof spec->config, "problem=%s %s=%.17g method=%s h=%.17g steps=%llu",
             c->problem, c->key, c->value, c->method, h, (unsigned long long)steps);
    return DM_OK;
}

/* The method's kick and drift coefficients times h, as the splitting engine scales them. */
static void bare_coefficients(const dm_run_spec *spec, dm_bare_coefficients *bc)
{
    const dm_splitting *t = spec->method->splitting;
    double h = spec->method_config.h;
    memset(bc, 0, sizeof *bc);
    bc->n_drift = t->n_drift;
    for (int i = 0; i < t->n_kick && i < 4; i++)
        bc->kick[i] = t->kick[i] * h;
    for (int i = 0; i < t->n_drift && i < 3; i++)
        bc->drift[i] = t->drift[i] * h;
}

/* Runs the bare loop of case c for `steps` steps; returns its wall time. */
/* with_cos: 1 the hand-written loop, 0 the pendulum loop without V, -1 the loop through
 * the problem's functions. */
static double run_bare(const bench_case *c, const dm_run_spec *spec,
                       const dm_bare_coefficients *bc, uint64_t steps, int with_cos,
                       dm_bare_state *end)
{
    const dm_instance *inst = &spec->inst;
    dm_bare_state s = { .q = { inst->q0[0], inst->dof > 1 ? inst->q0[1] : 0.0 },
                        .p = { inst->p0[0], inst->dof > 1 ? inst->p0[1] : 0.0 } };
    /* The problems' first parameter is their force constant (g_over_l, mu). */
    double k = inst->param[0];
    bool pendulum = strcmp(c->problem, "pendulum") == 0;
    bool verlet = bc->n_drift == 1;
    double t0 = now_seconds();
    if (with_cos < 0)
        dm_bare_through_problem(inst, bc, steps, &s);
    else if (pendulum && verlet)
        dm_bare_verlet_pendulum(k, bc, steps, &s, with_cos);
    else if (pendulum)
        dm_bare_yoshida4_pendulum(k, bc, steps, &s, with_cos);
    else if (verlet)
        dm_bare_verlet_kepler(k, bc, steps, &s);
    else
        dm_bare_yoshida4_kepler(k, bc, steps, &s);
    double wall = now_seconds() - t0;
    if (end != NULL)
        *end = s;
    return wall;
}

/* Steps the bare loop makes in about `seconds`. */
static uint64_t calibrate(const bench_case *c, const dm_run_spec *spec,
                          const dm_bare_coefficients *bc, double seconds)
{
    uint64_t n = 1u << 14;
    for (;;) {
        double wall = run_bare(c, spec, bc, n, 1, NULL);
        if (wall >= 0.02 || n >= (1ull << 40)) {
            double rate = (double)n / fmax(wall, 1e-9);
            double want = rate * seconds;
            return want < 1e4 ? 10000 : (uint64_t)want;
        }
        n *= 4;
    }
}

/* Writes a one-run results file of `result` under the temporary directory and times
 * it; NaN with a note when the write failed. */
static double time_results_write(const dm_run_spec *spec, const dm_run_result *result,
                                 char *note, size_t note_size)
{
    const char *dir = getenv("TMPDIR");
    if (dir == NULL || *dir == '\0')
        dir = "/tmp";
    char path[1024];
    snprintf(path, sizeof path, "%s/driftmark-bench-%ld.h5", dir, (long)getpid());
    dm_suite suite;
    memset(&suite, 0, sizeof suite);
    snprintf(suite.name, sizeof suite.name, "bench");
    snprintf(suite.output, sizeof suite.output, "%s", path);
    snprintf(suite.source, sizeof suite.source, "(driftmark bench)");
    suite.energy_limit = spec->energy_limit;
    suite.n_runs = 1;
    suite.runs = (dm_run_spec *)spec;
    dm_error err = { 0 };
    char started[32];
    time_t t = time(NULL);
    struct tm tm;
    gmtime_r(&t, &tm);
    strftime(started, sizeof started, "%Y-%m-%dT%H:%M:%SZ", &tm);
    double t0 = now_seconds();
    dm_status st = dm_results_write(path, &suite, result, NULL, started, &err);
    double wall = now_seconds() - t0;
    unlink(path);
    if (st != DM_OK) {
        snprintf(note, note_size, "results file not written: %s", err.msg);
        return NAN;
    }
    return wall;
}

static dm_status bench_case_run(const bench_case *c, bool quick, case_result *out,
                                dm_error *err)
{
    memset(out, 0, sizeof *out);
    dm_run_spec spec;
    dm_status st = make_spec(&spec, c, 1000, err);
    if (st != DM_OK)
        return st;
    dm_bare_coefficients bc;
    bare_coefficients(&spec, &bc);
    uint64_t steps = calibrate(c, &spec, &bc, quick ? 0.2 : 1.5);
    if ((st = make_spec(&spec, c, steps, err)) != DM_OK)
        return st;
    bool pendulum = strcmp(c->problem, "pendulum") == 0;
    const int rounds = quick ? 1 : 3;
    out->bare_seconds = out->harness_seconds = INFINITY;
    out->bare_sin_only_seconds = pendulum ? INFINITY : NAN;
    out->through_problem_seconds = INFINITY;
    dm_run_result result;
    memset(&result, 0, sizeof result);
    for (int r = 0; r < rounds; r++) {
        dm_run_result_free(&result);
        double t0 = now_seconds();
        st = dm_run(&spec, &result, NULL, err);
        double wall = now_seconds() - t0;
        if (st != DM_OK)
            return st;
        if (result.status != DM_RUN_OK) {
            dm_error_set(err, DM_ENUMERIC, "bench: %s: %s", spec.id, result.reason);
            dm_run_result_free(&result);
            return DM_ENUMERIC;
        }
        out->harness_seconds = fmin(out->harness_seconds, wall);
        out->steps = result.metrics.steps;
        dm_bare_state end;
        out->bare_seconds = fmin(out->bare_seconds, run_bare(c, &spec, &bc, out->steps, 1, &end));
        if (r == 0) {
            /* dE as the runner forms it, from the bare loop's end state and the V of its
             * last force evaluation. */
            const dm_instance *inst = &spec.inst;
            double H0 = dm_instance_energy(inst, inst->q0, inst->p0);
            double T = inst->problem->kinetic(inst, end.p);
            out->bare_energy_error = (T + end.potential - H0) * (1.0 / result.metrics.energy_scale);
            out->harness_energy_error = result.metrics.final_energy_error;
            out->energy_agrees = memcmp(&out->bare_energy_error, &out->harness_energy_error,
                                        sizeof(double)) == 0;
        }
        out->through_problem_seconds = fmin(out->through_problem_seconds,
                                            run_bare(c, &spec, &bc, out->steps, -1, NULL));
        if (pendulum)
            out->bare_sin_only_seconds =
                fmin(out->bare_sin_only_seconds, run_bare(c, &spec, &bc, out->steps, 0, NULL));
    }
    out->hdf5_seconds = time_results_write(&spec, &result, out->hdf5_note, sizeof out->hdf5_note);
    out->hdf5_share = out->hdf5_seconds / out->harness_seconds;
    dm_run_result_free(&result);
    return DM_OK;
}

/* ---- CVODE: direct calls against the adapter ---- */

typedef struct cvode_result {
    const char *method;
    double periods;
    long direct_steps, adapter_steps;
    double direct_seconds, adapter_seconds;  /* fastest round */
} cvode_result;

/* The pendulum as a first-order system written by hand: y = (q, p), y' = (p, -g sin q). */
static int direct_rhs(sunrealtype t, N_Vector y, N_Vector ydot, void *user_data)
{
    const double g = *(const double *)user_data;
    const double *x = N_VGetArrayPointer(y);
    double *dx = N_VGetArrayPointer(ydot);
    dx[0] = x[1];
    dx[1] = -(g * sin(x[0]));
    return 0;
}

/* J = [[0, 1], [-g cos q, 0]], column-major. */
static int direct_jacobian(sunrealtype t, N_Vector y, N_Vector fy, SUNMatrix J,
                           void *user_data, N_Vector tmp1, N_Vector tmp2, N_Vector tmp3)
{
    const double g = *(const double *)user_data;
    const double *x = N_VGetArrayPointer(y);
    double *j = SM_DATA_D(J);
    j[0] = 0.0;
    j[1] = -g * cos(x[0]);
    j[2] = 1.0;
    j[3] = 0.0;
    return 0;
}

/* CVODE on its own, set up as the adapter sets it up; returns the steps to t_end or -1. */
static long cvode_direct(const dm_instance *inst, bool bdf, int max_order, double t_end,
                         double *seconds)
{
    SUNContext ctx = NULL;
    void *mem = NULL;
    N_Vector y = NULL;
    SUNMatrix jac = NULL;
    SUNLinearSolver ls = NULL;
    SUNNonlinearSolver nls = NULL;
    double g = inst->param[0];
    long steps = -1;
    if (SUNContext_Create(NULL, &ctx) != 0)
        return -1;
    y = N_VNew_Serial(2, ctx);
    mem = CVodeCreate(bdf ? CV_BDF : CV_ADAMS, ctx);
    if (y == NULL || mem == NULL)
        goto done;
    N_VGetArrayPointer(y)[0] = inst->q0[0];
    N_VGetArrayPointer(y)[1] = inst->p0[0];
    int flag = CVodeInit(mem, direct_rhs, 0.0, y);
    flag |= CVodeSetUserData(mem, &g);
    flag |= CVodeSStolerances(mem, CVODE_RTOL, 1e-3 * CVODE_RTOL);
    flag |= CVodeSetMaxOrd(mem, max_order);
    flag |= CVodeSetStopTime(mem, t_end);
    if (bdf) {
        nls = SUNNonlinSol_Newton(y, ctx);
        jac = SUNDenseMatrix(2, 2, ctx);
        ls = jac ? SUNLinSol_Dense(y, jac, ctx) : NULL;
        if (nls == NULL || ls == NULL)
            goto done;
        flag |= CVodeSetLinearSolver(mem, ls, jac);
        flag |= CVodeSetJacFn(mem, direct_jacobian);
    } else {
        nls = SUNNonlinSol_FixedPoint(y, 0, ctx);
        if (nls == NULL)
            goto done;
    }
    flag |= CVodeSetNonlinearSolver(mem, nls);
    if (flag != CV_SUCCESS)
        goto done;
    double t = 0.0;
    long n = 0;
    double t0 = now_seconds();
    while (t < t_end) {
        if (CVode(mem, t_end, y, &t, CV_ONE_STEP) < 0)
            goto done;
        n++;
    }
    *seconds = now_seconds() - t0;
    steps = n;
done:
    if (mem)
        CVodeFree(&mem);
    if (nls)
        SUNNonlinSolFree(nls);
    if (ls)
        SUNLinSolFree(ls);
    if (jac)
        SUNMatDestroy(jac);
    if (y)
        N_VDestroy(y);
    SUNContext_Free(&ctx);
    return steps;
}

/* The same through the adapter: a plain loop over dm_stepper_step, no monitors. */
static long cvode_adapter(const dm_instance *inst, const dm_method *m, double t_end,
                          double *seconds, dm_error *err)
{
    double buf[2][2 * DM_MAX_DOF] = { { inst->q0[0], inst->p0[0] } };
    dm_point a = { .t = 0.0, .x = buf[0], .potential = NAN };
    dm_point b = { .t = 0.0, .x = buf[1], .potential = NAN };
    dm_point *cur = &a, *nxt = &b;
    dm_method_config config = { .rtol = CVODE_RTOL, .atol = 1e-3 * CVODE_RTOL, .t_stop = t_end };
    dm_stepper *s = dm_stepper_create(m, inst, &config, cur, err);
    if (s == NULL)
        return -1;
    long n = 0;
    double t0 = now_seconds();
    while (cur->t < t_end) {
        if (dm_stepper_step(s, cur, nxt) != DM_OK) {
            *err = s->error;
            dm_stepper_destroy(s);
            return -1;
        }
        n++;
        dm_point *tmp = cur;
        cur = nxt;
        nxt = tmp;
    }
    *seconds = now_seconds() - t0;
    dm_stepper_destroy(s);
    return n;
}

static dm_status bench_cvode(const char *method_id, bool quick, cvode_result *out, dm_error *err)
{
    memset(out, 0, sizeof *out);
    out->method = method_id;
    const dm_method *m = dm_method_find(method_id);
    if (m == NULL)
        return dm_error_set(err, DM_EINPUT, "bench: method %s is not available", method_id);
    dm_instance inst;
    const char *keys[1] = { "amplitude" };
    double values[1] = { 2.5 };
    dm_status st = dm_instance_init(&inst, dm_problem_find("pendulum"), 1, keys, values, err);
    if (st != DM_OK)
        return st;
    bool bdf = strcmp(method_id, "cvode-bdf") == 0;
    /* Calibrate on 20 periods through the adapter, then aim for the wanted time. */
    double probe = 0.0;
    double periods = 20.0;
    if (cvode_adapter(&inst, m, periods * inst.period, &probe, err) < 0)
        return DM_ESOLVER;
    periods = fmax(1.0, ceil(periods * (quick ? 0.2 : 1.5) / fmax(probe, 1e-9)));
    out->periods = periods;
    double t_end = periods * inst.period;
    out->direct_seconds = out->adapter_seconds = INFINITY;
    for (int r = 0; r < (quick ? 1 : 3); r++) {
        double wall = 0.0;
        out->direct_steps = cvode_direct(&inst, bdf, m->order, t_end, &wall);
        if (out->direct_steps < 0)
            return dm_error_set(err, DM_ESOLVER, "bench: CVODE called directly failed (%s)",
                                method_id);
        out->direct_seconds = fmin(out->direct_seconds, wall);
        out->adapter_steps = cvode_adapter(&inst, m, t_end, &wall, err);
        if (out->adapter_steps < 0)
            return DM_ESOLVER;
        out->adapter_seconds = fmin(out->adapter_seconds, wall);
    }
    return DM_OK;
}

/* ---- 1 vs N jobs: the pool of `driftmark run` on a suite of equal runs ---- */

/* Eight swings of the pendulum under Verlet, the same steps per period and the same
 * horizon in periods: the same number of steps each, so eight equal runs. */
static const double jobs_amplitudes[] = { 2.0, 2.1, 2.2, 2.3, 2.4, 2.5, 2.6, 2.7 };
#define JOBS_RUNS (sizeof jobs_amplitudes / sizeof jobs_amplitudes[0])
#define JOBS_STEPS_PER_PERIOD 96

typedef struct jobs_result {
    size_t runs;
    int jobs;                      /* threads of the second round: every core */
    double periods;                /* horizon of each run */
    uint64_t steps_per_run;
    double one_seconds, all_seconds; /* fastest round of each */
    bool identical;                /* every run's datasets and metrics, bit for bit */
    char difference[DM_RUN_ID_MAX + 48]; /* the first difference found, if any */
} jobs_result;

/* Builds the suite in memory from YAML, its output (never written) in the temporary
 * directory. */
static dm_status jobs_suite(dm_suite *suite, double periods, dm_error *err)
{
    char text[2048];
    int w = snprintf(text, sizeof text,
                     "name: bench-jobs\n"
                     "horizon: {periods: %.17g}\n"
                     "samples: %d\n"
                     "problems:\n",
                     periods, BENCH_SAMPLES);
    for (size_t i = 0; i < JOBS_RUNS && w > 0 && (size_t)w < sizeof text; i++)
        w += snprintf(text + w, sizeof text - (size_t)w,
                      "  - {problem: pendulum, amplitude: %g}\n", jobs_amplitudes[i]);
    if (w > 0 && (size_t)w < sizeof text)
        w += snprintf(text + w, sizeof text - (size_t)w,
                      "methods:\n  - {method: verlet, steps_per_period: %d}\n",
                      JOBS_STEPS_PER_PERIOD);
    if (w < 0 || (size_t)w >= sizeof text)
        return dm_error_set(err, DM_EINPUT, "bench: the jobs suite does not fit its buffer");
    const char *dir = getenv("TMPDIR");
    if (dir == NULL || *dir == '\0')
        dir = "/tmp";
    char output[1024];
    snprintf(output, sizeof output, "%s/driftmark-bench-jobs-%ld.h5", dir, (long)getpid());
    return dm_suite_parse(suite, text, strlen(text), "(driftmark bench jobs suite)", output,
                          err);
}

static bool same_doubles(const double *a, const double *b, size_t n)
{
    if ((a == NULL) != (b == NULL))
        return false;
    return n == 0 || a == NULL || memcmp(a, b, n * sizeof *a) == 0;
}

static bool same_double(double a, double b)
{
    return memcmp(&a, &b, sizeof a) == 0;
}

/* Compares two results of the same run: every dataset the results file stores (the
 * series, the crossings) and every metric but the wall time, bit for bit. Returns the
 * name of the first thing that differs, or NULL. */
static const char *first_difference(const dm_run_result *a, const dm_run_result *b)
{
    if (a->status != b->status || strcmp(a->reason, b->reason) != 0)
        return "status";
    const dm_series *x = &a->series, *y = &b->series;
    if (x->n != y->n)
        return "series length";
    if (!same_doubles(x->time, y->time, x->n))
        return "time";
    if (!same_doubles(x->energy_error, y->energy_error, x->n))
        return "energy_error";
    if (!same_doubles(x->energy_error_min, y->energy_error_min, x->n))
        return "energy_error_min";
    if (!same_doubles(x->energy_error_max, y->energy_error_max, x->n))
        return "energy_error_max";
    if (!same_doubles(x->global_error, y->global_error, x->n))
        return "global_error";
    if (x->n_invariants != y->n_invariants)
        return "invariants";
    for (int i = 0; i < x->n_invariants; i++)
        if (!same_doubles(x->invariant_error[i], y->invariant_error[i], x->n))
            return "invariant_error";
    const dm_crossings *u = &a->crossings, *v = &b->crossings;
    if (u->n != v->n || u->total != v->total || u->stride != v->stride)
        return "crossing count";
    if (!same_doubles(u->number, v->number, u->n))
        return "crossing_number";
    if (!same_doubles(u->time, v->time, u->n))
        return "crossing_time";
    if (!same_doubles(u->phase_error, v->phase_error, u->n))
        return "phase_error";
    const dm_run_metrics *m = &a->metrics, *n = &b->metrics;
    const double pairs[][2] = {
        { m->energy_scale, n->energy_scale },
        { m->max_energy_error, n->max_energy_error },
        { m->final_energy_error, n->final_energy_error },
        { m->energy_drift_per_period, n->energy_drift_per_period },
        { m->drift_exponent, n->drift_exponent },
        { m->period_measured, n->period_measured },
        { m->phase_error_per_period, n->phase_error_per_period },
        { m->phase_error_final, n->phase_error_final },
        { m->max_global_error, n->max_global_error },
        { m->t_reached, n->t_reached },
    };
    for (size_t i = 0; i < sizeof pairs / sizeof pairs[0]; i++)
        if (!same_double(pairs[i][0], pairs[i][1]))
            return "metrics";
    for (int i = 0; i < DM_MAX_INVARIANTS; i++)
        if (!same_double(m->max_invariant_error[i], n->max_invariant_error[i]))
            return "max_invariant_error";
    if (m->steps != n->steps || memcmp(&m->counts, &n->counts, sizeof m->counts) != 0)
        return "counts";
    return NULL;
}

static void free_results(dm_run_result *results, size_t n)
{
    for (size_t i = 0; i < n; i++)
        dm_run_result_free(&results[i]);
    memset(results, 0, n * sizeof *results);
}

/* One round: the whole suite through the pool with `jobs` threads; its wall time. */
static dm_status jobs_round(const dm_suite *suite, dm_run_result *results, const size_t *order,
                            int jobs, double *seconds, dm_error *err)
{
    free_results(results, suite->n_runs);
    double t0 = now_seconds();
    dm_status st = dm_run_pool(suite, results, order, suite->n_runs, jobs, NULL, NULL, NULL,
                               err);
    *seconds = now_seconds() - t0;
    if (st != DM_OK)
        return st;
    for (size_t i = 0; i < suite->n_runs; i++)
        if (results[i].status != DM_RUN_OK)
            return dm_error_set(err, DM_ENUMERIC, "bench: %s: %s", suite->runs[i].id,
                                results[i].reason);
    return DM_OK;
}

static dm_status bench_jobs(bool quick, jobs_result *out, dm_error *err)
{
    memset(out, 0, sizeof *out);
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    /* every core, but no more threads than runs (the pool would not start them) */
    out->jobs = cores > 1 ? (cores > (long)JOBS_RUNS ? (int)JOBS_RUNS : (int)cores) : 1;
    out->runs = JOBS_RUNS;
    out->identical = true;
    dm_suite suite;
    dm_run_result *one = NULL, *all = NULL;
    size_t *order = NULL;

    /* Calibrate on one run, its horizon growing until it takes 20 ms, then a horizon
     * for the wanted time a run. */
    double periods = 100.0, wall = 0.0;
    dm_status st;
    for (;;) {
        if ((st = jobs_suite(&suite, periods, err)) != DM_OK)
            return st;
        dm_run_result probe;
        memset(&probe, 0, sizeof probe);
        double t0 = now_seconds();
        st = dm_run(&suite.runs[0], &probe, NULL, err);
        wall = now_seconds() - t0;
        dm_run_result_free(&probe);
        dm_suite_free(&suite);
        if (st != DM_OK)
            return st;
        if (wall >= 0.02 || periods >= 1e7)
            break;
        periods *= 4.0;
    }
    const double per_run = quick ? 0.03 : 0.25;
    out->periods = fmax(10.0, ceil(periods * per_run / fmax(wall, 1e-6)));
    if ((st = jobs_suite(&suite, out->periods, err)) != DM_OK)
        return st;

    one = calloc(suite.n_runs, sizeof *one);
    all = calloc(suite.n_runs, sizeof *all);
    order = malloc(suite.n_runs * sizeof *order);
    if (one == NULL || all == NULL || order == NULL) {
        st = dm_error_set(err, DM_ENOMEM, "bench: out of memory for %zu runs", suite.n_runs);
        goto done;
    }
    for (size_t i = 0; i < suite.n_runs; i++)
        order[i] = i;
    dm_run_order_longest_first(&suite, order, suite.n_runs);

    out->one_seconds = out->all_seconds = INFINITY;
    for (int r = 0; r < (quick ? 1 : 3); r++) {
        double seconds;
        if ((st = jobs_round(&suite, one, order, 1, &seconds, err)) != DM_OK)
            goto done;
        out->one_seconds = fmin(out->one_seconds, seconds);
        if ((st = jobs_round(&suite, all, order, out->jobs, &seconds, err)) != DM_OK)
            goto done;
        out->all_seconds = fmin(out->all_seconds, seconds);
        for (size_t i = 0; i < suite.n_runs && out->identical; i++) {
            const char *what = first_difference(&one[i], &all[i]);
            if (what != NULL) {
                out->identical = false;
                snprintf(out->difference, sizeof out->difference, "%s differs in %.32s",
                         suite.runs[i].id, what);
            }
        }
    }
    out->steps_per_run = one[0].metrics.steps;
done:
    if (one != NULL)
        free_results(one, suite.n_runs);
    if (all != NULL)
        free_results(all, suite.n_runs);
    free(one);
    free(all);
    free(order);
    dm_suite_free(&suite);
    return st;
}

/* ---- output ---- */

static void json_number(FILE *f, double v)
{
    if (isfinite(v))
        fprintf(f, "%.6g", v);
    else
        fputs("null", f);
}

static void json_field(FILE *f, const char *name, double v, bool last)
{
    fprintf(f, "\"%s\": ", name);
    json_number(f, v);
    fputs(last ? "" : ", ", f);
}

static void print_json(FILE *f, bool quick, const case_result *cr, const cvode_result *cv,
                       size_t n_cv, const jobs_result *jb, long rss_before, long rss_after)
{
    fprintf(f, "{\n  \"quick\": %s,\n  \"samples\": %d,\n  \"cases\": [\n", quick ? "true" : "false",
            BENCH_SAMPLES);
    for (size_t i = 0; i < N_CASES; i++) {
        const bench_case *c = &cases[i];
        const case_result *r = &cr[i];
        double bare = (double)r->steps / r->bare_seconds;
        double harness = (double)r->steps / r->harness_seconds;
        fprintf(f, "    {\"problem\": \"%s\", \"%s\": %g, \"method\": \"%s\", "
                   "\"steps_per_period\": %g, \"steps\": %llu,\n     ",
                c->problem, c->key, c->value, c->method, c->steps_per_period,
                (unsigned long long)r->steps);
        json_field(f, "bare_steps_per_second", bare, false);
        json_field(f, "harness_steps_per_second", harness, false);
        json_field(f, "ratio", harness / bare, false);
        json_field(f, "through_problem_steps_per_second",
                   (double)r->steps / r->through_problem_seconds, false);
        json_field(f, "bare_without_potential_steps_per_second",
                   (double)r->steps / r->bare_sin_only_seconds, false);
        fprintf(f, "\n     \"final_energy_error_agrees\": %s, ", r->energy_agrees ? "true" : "false");
        json_field(f, "final_energy_error", r->harness_energy_error, false);
        json_field(f, "hdf5_write_seconds", r->hdf5_seconds, false);
        json_field(f, "hdf5_share", r->hdf5_share, true);
        if (r->hdf5_note[0]) {
            fputs(", \"hdf5_note\": \"", f);
            for (const char *s = r->hdf5_note; *s; s++)
                if (*s != '"' && *s != '\\' && (unsigned char)*s >= 0x20)
                    fputc(*s, f);
            fputc('"', f);
        }
        fprintf(f, "}%s\n", i + 1 < N_CASES ? "," : "");
    }
    fprintf(f, "  ],\n  \"memory\": {\"max_resident_kib_before\": %ld, "
               "\"max_resident_kib_after\": %ld},\n  \"cvode\": [\n",
            rss_before, rss_after);
    for (size_t i = 0; i < n_cv; i++) {
        const cvode_result *r = &cv[i];
        double direct = (double)r->direct_steps / r->direct_seconds;
        double adapter = (double)r->adapter_steps / r->adapter_seconds;
        fprintf(f, "    {\"problem\": \"pendulum\", \"amplitude\": 2.5, \"method\": \"%s\", "
                   "\"rtol\": %g, \"periods\": %g, \"direct_steps\": %ld, "
                   "\"adapter_steps\": %ld,\n     ",
                r->method, CVODE_RTOL, r->periods, r->direct_steps, r->adapter_steps);
        json_field(f, "direct_steps_per_second", direct, false);
        json_field(f, "adapter_steps_per_second", adapter, false);
        /* time per step through the adapter over time per step called directly, - 1 */
        json_field(f, "adapter_overhead", direct / adapter - 1.0, true);
        fprintf(f, "}%s\n", i + 1 < n_cv ? "," : "");
    }
    fprintf(f, "  ],\n  \"jobs\": {\"problem\": \"pendulum\", \"method\": \"verlet\", "
               "\"runs\": %zu, \"jobs\": %d, \"periods\": %g, \"steps_per_run\": %llu,\n   ",
            jb->runs, jb->jobs, jb->periods, (unsigned long long)jb->steps_per_run);
    json_field(f, "one_job_seconds", jb->one_seconds, false);
    json_field(f, "all_jobs_seconds", jb->all_seconds, false);
    json_field(f, "speedup", jb->one_seconds / jb->all_seconds, false);
    fprintf(f, "\"results_identical\": %s", jb->identical ? "true" : "false");
    if (!jb->identical)
        fprintf(f, ", \"difference\": \"%s\"", jb->difference);
    fputs("},\n  \"jobs_speedup\": ", f);
    json_number(f, jb->one_seconds / jb->all_seconds);
    fputs("\n}\n", f);
}

static void print_text(FILE *f, bool quick, const case_result *cr, const cvode_result *cv,
                       size_t n_cv, const jobs_result *jb, long rss_before, long rss_after)
{
    fprintf(f, "harness (every monitor on, %d samples) against a hand-written loop, %s runs\n\n",
            BENCH_SAMPLES, quick ? "quick" : "full");
    fprintf(f, "%-32s %10s %9s %9s %6s %9s %9s %5s %7s\n", "case", "steps", "bare M/s",
            "harn. M/s", "ratio", "table M/s", "-V M/s", "same", "hdf5 %");
    for (size_t i = 0; i < N_CASES; i++) {
        const bench_case *c = &cases[i];
        const case_result *r = &cr[i];
        char name[64];
        snprintf(name, sizeof name, "%s %s=%g %s", c->problem, c->key, c->value, c->method);
        double bare = (double)r->steps / r->bare_seconds;
        double harness = (double)r->steps / r->harness_seconds;
        fprintf(f, "%-32s %10llu %9.2f %9.2f %6.3f %9.2f %9.2f %5s %7.3f\n", name,
                (unsigned long long)r->steps, bare / 1e6, harness / 1e6, harness / bare,
                (double)r->steps / r->through_problem_seconds / 1e6,
                (double)r->steps / r->bare_sin_only_seconds / 1e6, r->energy_agrees ? "yes" : "NO",
                100.0 * r->hdf5_share);
        if (r->hdf5_note[0])
            fprintf(f, "  %s\n", r->hdf5_note);
    }
    fprintf(f, "  bare: hand-written loop; harn.: dm_run with every monitor; ratio: harn. / bare\n"
               "  table: the same loop calling the problem's force() and velocity() through its\n"
               "  table (the best the per-step path can do; the fused loop avoids it); -V: the\n"
               "  pendulum loop evaluating sin only, never V; same: bare and harness end with\n"
               "  the same dE bit for bit; hdf5: writing a one-run results file over the run's\n"
               "  wall time\n\n");
    fprintf(f, "peak resident memory: %ld KiB before, %ld KiB after\n\n", rss_before, rss_after);
    fprintf(f, "CVODE on pendulum amplitude=2.5, rtol %g: called directly vs through the adapter\n",
            CVODE_RTOL);
    for (size_t i = 0; i < n_cv; i++) {
        const cvode_result *r = &cv[i];
        double direct = (double)r->direct_steps / r->direct_seconds;
        double adapter = (double)r->adapter_steps / r->adapter_seconds;
        fprintf(f, "  %-12s %8.0f periods  steps %ld / %ld  direct %.3f M/s  adapter %.3f M/s  "
                   "overhead %+.1f %%\n",
                r->method, r->periods, r->direct_steps, r->adapter_steps, direct / 1e6,
                adapter / 1e6, 100.0 * (direct / adapter - 1.0));
    }
    fprintf(f, "\n1 vs N jobs: %zu equal runs (pendulum amplitude 2.0 to 2.7, verlet, %d steps a "
               "period, %g periods, %llu steps each) through the pool of `run`\n",
            jb->runs, JOBS_STEPS_PER_PERIOD, jb->periods, (unsigned long long)jb->steps_per_run);
    fprintf(f, "  --jobs 1 %.3f s, --jobs %d %.3f s: speed-up %.2f; results %s\n", jb->one_seconds,
            jb->jobs, jb->all_seconds, jb->one_seconds / jb->all_seconds,
            jb->identical ? "identical bit for bit" : jb->difference);
}

static void print_usage(FILE *out)
{
    fprintf(out, "usage: driftmark bench [--quick] [--json]\n"
                 "  times the harness against hand-written loops, the results file write and\n"
                 "  the CVODE adapter, and 1 against N jobs on a suite of equal runs; --quick\n"
                 "  runs ~0.2 s per measurement instead of ~1.5 s x 3\n");
}

int dm_cmd_bench(int argc, char **argv)
{
    static const struct option options[] = {
        { "quick", no_argument, NULL, 'q' },
        { "json", no_argument, NULL, 'j' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bool quick = false, json = false;
    int c;
    optind = 1;
    opterr = 0;
    while ((c = getopt_long(argc, argv, "+h", options, NULL)) != -1) {
        switch (c) {
        case 'q': quick = true; break;
        case 'j': json = true; break;
        case 'h': print_usage(stdout); return 0;
        default:
            return dm_cli_usage_error(CMD, "unknown option '%s' (expected --quick or --json)",
                                      argv[optind - 1]);
        }
    }
    if (optind < argc)
        return dm_cli_usage_error(CMD, "unexpected argument '%s'", argv[optind]);

    long rss_before = peak_resident_kib();
    case_result cr[N_CASES];
    cvode_result cv[2];
    static const char *const cvode_methods[] = { "cvode-adams", "cvode-bdf" };
    dm_error err = { 0 };
    for (size_t i = 0; i < N_CASES; i++) {
        if (bench_case_run(&cases[i], quick, &cr[i], &err) != DM_OK) {
            fprintf(stderr, "driftmark: %s: %s\n", CMD, err.msg);
            return 1;
        }
    }
    for (size_t i = 0; i < 2; i++) {
        if (bench_cvode(cvode_methods[i], quick, &cv[i], &err) != DM_OK) {
            fprintf(stderr, "driftmark: %s: %s\n", CMD, err.msg);
            return 1;
        }
    }
    long rss_after = peak_resident_kib();
    jobs_result jb;
    if (bench_jobs(quick, &jb, &err) != DM_OK) {
        fprintf(stderr, "driftmark: %s: %s\n", CMD, err.msg);
        return 1;
    }
    if (json)
        print_json(stdout, quick, cr, cv, 2, &jb, rss_before, rss_after);
    else
        print_text(stdout, quick, cr, cv, 2, &jb, rss_before, rss_after);
    return 0;
}
