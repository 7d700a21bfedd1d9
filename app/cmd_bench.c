/* cmd_bench.c — `driftmark bench [--quick] [--json]`: what the harness costs.
 *
 * For Störmer–Verlet, Yoshida's triple jump, classical RK4 and the implicit midpoint rule
 * on the pendulum and on Kepler it times,
 * side by side in this one process, a hand-written loop of the same method and problem
 * (bench_loops.c) and a full harness run (dm_run with every monitor on), alternating
 * them and keeping each one's fastest round; it checks that both end with the same
 * energy error bit for bit (same arithmetic, so the same state). Beside them it times
 * the same steps calling the problem's force() and velocity() through its table: the
 * best the per-step path (dm_stepper_step) can do, which the fused loop
 * (problems/include/dm_fused_loop.h) is there to beat. It also times writing a one-run
 * results file of the harness run against the run's wall time, reads the peak resident
 * memory, and times CVODE called directly (bench_loops.c) against CVODE through our
 * adapter on the same problem and tolerances. Then it runs a small suite of equal runs
 * through the pool of `driftmark run` (pool.c) with one job and with every core, and
 * checks that both give the same results bit for bit. Last, it times a whole `driftmark
 * run` of many short runs and reads its peak memory (bench_short_runs.c): the fixed cost
 * of a run, which writing its group of the results file dominates.
 */
#include <getopt.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <unistd.h>

#include "bench_formula.h"
#include "bench_loops.h"
#include "bench_short_runs.h"
#include "cli.h"
#include "dm_clock.h"
#include "dm_json.h"
#include "harness.h"

#define CMD "bench"
#define BENCH_SAMPLES 4096 /* the suite's default sample budget */
#define CVODE_RTOL 1e-8
#define BENCH_MIDPOINT_ITERATIONS 100 /* the implicit midpoint rule's cap, in both loops */

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
    const char *force_param;   /* the problem's force constant, the loops' k */
    dm_bare_loop *bare;        /* the hand-written loop of this method and problem */
    dm_bare_loop *bare_without_potential; /* the same never evaluating V; NULL: none */
    dm_bare_loop *bare_folded; /* the same with k = 1 written in (used when k is 1) */
    /* Optional: the built-in method's table typed in a suite under this name (as `list
     * --table` prints it) is what runs, to show that a table from a suite runs at the
     * built-in table's speed; NULL: the built-in method itself */
    const char *typed_as;
} bench_case;

static const bench_case cases[] = {
    { "pendulum", "amplitude", 2.5, "verlet", 96, "g_over_l", dm_bare_verlet_pendulum,
      dm_bare_verlet_pendulum_sin_only, dm_bare_verlet_pendulum_folded, NULL },
    { "pendulum", "amplitude", 2.5, "yoshida4", 32, "g_over_l", dm_bare_yoshida4_pendulum,
      dm_bare_yoshida4_pendulum_sin_only, dm_bare_yoshida4_pendulum_folded, NULL },
    { "pendulum", "amplitude", 2.5, "yoshida4", 32, "g_over_l", dm_bare_yoshida4_pendulum,
      dm_bare_yoshida4_pendulum_sin_only, dm_bare_yoshida4_pendulum_folded, "yoshida4-typed" },
    { "kepler", "eccentricity", 0.6, "verlet", 256, "mu", dm_bare_verlet_kepler, NULL,
      dm_bare_verlet_kepler_folded, NULL },
    { "kepler", "eccentricity", 0.6, "yoshida4", 256, "mu", dm_bare_yoshida4_kepler, NULL,
      dm_bare_yoshida4_kepler_folded, NULL },
    { "kepler", "eccentricity", 0.6, "yoshida4", 256, "mu", dm_bare_yoshida4_kepler, NULL,
      dm_bare_yoshida4_kepler_folded, "yoshida4-typed" },
    { "pendulum", "amplitude", 2.5, "rk4", 96, "g_over_l", dm_bare_rk4_pendulum,
      dm_bare_rk4_pendulum_without_energy, dm_bare_rk4_pendulum_folded, NULL },
    { "kepler", "eccentricity", 0.6, "rk4", 256, "mu", dm_bare_rk4_kepler,
      dm_bare_rk4_kepler_without_energy, dm_bare_rk4_kepler_folded, NULL },
    { "pendulum", "amplitude", 2.5, "midpoint", 96, "g_over_l", dm_bare_midpoint_pendulum,
      dm_bare_midpoint_pendulum_without_energy, dm_bare_midpoint_pendulum_folded, NULL },
    { "kepler", "eccentricity", 0.6, "midpoint", 256, "mu", dm_bare_midpoint_kepler,
      dm_bare_midpoint_kepler_without_energy, dm_bare_midpoint_kepler_folded, NULL },
};
#define N_CASES (sizeof cases / sizeof cases[0])

typedef struct case_result {
    uint64_t steps;
    double bare_seconds;          /* fastest round */
    double bare_without_potential_seconds; /* a loop that never evaluates V; NaN: none */
    double bare_folded_seconds;   /* the loop with k = 1 written in; NaN when k is not 1 */
    double through_problem_seconds; /* the loop calling the problem's functions */
    double harness_seconds;       /* fastest round, dm_run as a whole */
    bool energy_agrees;           /* bare and harness end with the same dE, bit for bit */
    double harness_energy_error, bare_energy_error;
    double hdf5_seconds;          /* dm_results_write of a one-run file; NaN if it failed */
    double hdf5_share;            /* hdf5_seconds / harness_seconds */
    char hdf5_note[DM_ERROR_MSG_MAX + 64];
} case_result;

/* The row's name for the method: the built-in's id or the typed table's name. */
static const char *case_method(const bench_case *c)
{
    return c->typed_as != NULL ? c->typed_as : c->method;
}

/* The built-in method `id`'s table typed in a suite under the name `name`, read by the
 * suite reader as any user's table is (checked, and run by the same engine and fused
 * loop); the suite is kept for the process's life. NULL with *err set on failure. */
static const dm_method *typed_method(const char *id, const char *name, dm_error *err)
{
    static dm_suite suite;
    for (size_t i = 0; i < suite.n_tables; i++)
        if (strcmp(suite.tables[i]->method.id, name) == 0)
            return &suite.tables[i]->method;
    char table[DM_TABLE_TEXT_MAX], text[DM_TABLE_TEXT_MAX + 256];
    const dm_method *m = dm_method_find(id);
    if (suite.n_tables > 0 || m == NULL || dm_method_table_text(m, name, table, sizeof table) < 0) {
        dm_error_set(err, DM_EINPUT, "bench: %s cannot be typed as a table", id);
        return NULL;
    }
    snprintf(text, sizeof text, "horizon: {periods: 1}\noutput: /tmp/driftmark-bench.h5\n"
             "problems: [{problem: harmonic}]\nmethods:\n  - {table: %s, h: 0.1}\n", table);
    if (dm_suite_parse(&suite, text, strlen(text), "(bench)", NULL, err) != DM_OK)
        return NULL;
    return &suite.tables[0]->method;
}

/* A run spec built by hand, the way the suite reader builds one. */
static dm_status make_spec(dm_run_spec *spec, const bench_case *c, uint64_t steps, dm_error *err)
{
    memset(spec, 0, sizeof *spec);
    const dm_problem *pb = dm_problem_find(c->problem);
    spec->method = c->typed_as != NULL ? typed_method(c->method, c->typed_as, err)
                                       : dm_method_find(c->method);
    if (spec->method == NULL && c->typed_as != NULL)
        return err->code;
    if (pb == NULL || spec->method == NULL || spec->method->adaptive)
        return dm_error_set(err, DM_EINPUT, "bench: case %s/%s is not available", c->problem,
                            c->method);
    const char *keys[1] = { c->key };
    double values[1] = { c->value };
    dm_status st = dm_instance_init(&spec->inst, pb, 1, keys, values, err);
    if (st != DM_OK)
        return st;
    snprintf(spec->id, sizeof spec->id, "bench.%s-%s%g.%s-n%g", c->problem, c->key, c->value,
             case_method(c), c->steps_per_period);
    double T = spec->inst.period;
    double h = T / c->steps_per_period;
    spec->step_setting = DM_SET_BY_STEPS_PER_PERIOD;
    spec->step_value = c->steps_per_period;
    spec->method_config.h = h;
    spec->method_config.max_iterations = BENCH_MIDPOINT_ITERATIONS;
    /* The runner takes ceil(t_end / h - 1e-9) steps: aim half a step short of `steps`. */
    spec->t_end = ((double)steps - 0.5) * h;
    spec->periods = spec->t_end / T;
    spec->method_config.t_stop = spec->t_end;
    spec->samples = BENCH_SAMPLES;
    spec->energy_limit = 1.0;
    spec->sweep = -1;
    snprintf(spec->config, sizeof spec->config, "problem=%s %s=%.17g method=%s h=%.17g steps=%llu",
             c->problem, c->key, c->value, case_method(c), h, (unsigned long long)steps);
    return DM_OK;
}

/* What the hand-written loops of one case start from: the case, the instance, the
 * method's kick and drift coefficients times h (as the splitting engine scales them)
 * and the problem's force constant, looked up by name. */
typedef struct bare_setup {
    const bench_case *c;
    const dm_instance *inst;
    dm_bare_coefficients bc;
    double k;
} bare_setup;

static dm_status bare_setup_init(bare_setup *b, const bench_case *c, const dm_run_spec *spec,
                                 dm_error *err)
{
    memset(b, 0, sizeof *b);
    b->c = c;
    b->inst = &spec->inst;
    int i = dm_problem_param_index(spec->inst.problem, c->force_param);
    if (i < 0)
        return dm_error_set(err, DM_EINPUT, "bench: %s has no parameter %s", c->problem,
                            c->force_param);
    b->k = spec->inst.param[i];
    double h = spec->method_config.h;
    b->bc.h = h;
    b->bc.max_iterations = spec->method_config.max_iterations;
    b->bc.H0 = dm_instance_energy(&spec->inst, spec->inst.q0, spec->inst.p0);
    const dm_splitting *t = spec->method->splitting;
    if (t == NULL)
        return DM_OK; /* a Runge-Kutta loop: h is all it needs */
    b->bc.n_drift = t->n_drift;
    for (int j = 0; j < t->n_kick && j < 4; j++)
        b->bc.kick[j] = t->kick[j] * h;
    for (int j = 0; j < t->n_drift && j < 3; j++)
        b->bc.drift[j] = t->drift[j] * h;
    return DM_OK;
}

typedef enum bare_kind {
    BARE,                     /* the hand-written loop */
    BARE_WITHOUT_POTENTIAL,   /* the same never evaluating V (when the case has one) */
    BARE_FOLDED,              /* the same with k = 1 written in (when k is 1) */
    THROUGH_PROBLEM           /* the same steps calling the problem's functions */
} bare_kind;

/* Runs one of the loops of a case for `steps` steps; returns its wall time. */
static double run_bare(const bare_setup *b, bare_kind kind, uint64_t steps, dm_bare_state *end)
{
    const dm_instance *inst = b->inst;
    dm_bare_state s = { .q = { inst->q0[0], inst->dof > 1 ? inst->q0[1] : 0.0 },
                        .p = { inst->p0[0], inst->dof > 1 ? inst->p0[1] : 0.0 } };
    double t0 = dm_clock_seconds();
    if (kind == THROUGH_PROBLEM)
        dm_bare_through_problem(inst, &b->bc, steps, &s);
    else if (kind == BARE_WITHOUT_POTENTIAL)
        b->c->bare_without_potential(b->k, &b->bc, steps, &s);
    else if (kind == BARE_FOLDED)
        b->c->bare_folded(b->k, &b->bc, steps, &s);
    else
        b->c->bare(b->k, &b->bc, steps, &s);
    double wall = dm_clock_seconds() - t0;
    if (end != NULL)
        *end = s;
    return wall;
}

/* Steps the bare loop makes in about `seconds`. */
static uint64_t calibrate(const bare_setup *b, double seconds)
{
    uint64_t n = 1u << 14;
    for (;;) {
        double wall = run_bare(b, BARE, n, NULL);
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
    char name[64], path[1024];
    snprintf(name, sizeof name, "driftmark-bench-%ld.h5", (long)getpid());
    dm_cli_temp_path(path, sizeof path, name);
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
    dm_cli_utc_now(started, sizeof started);
    double t0 = dm_clock_seconds();
    dm_status st = dm_results_write(path, &suite, result, NULL, started, &err);
    double wall = dm_clock_seconds() - t0;
    unlink(path);
    if (st != DM_OK) {
        snprintf(note, note_size, "results file not written: %s", err.msg);
        return NAN;
    }
    return wall;
}

/* dE as the runner forms it, from the bare loop's end state and the V of its last force
 * evaluation, scaled by the run's energy scale. */
static double bare_energy_error(const dm_instance *inst, const dm_bare_state *end,
                                double energy_scale)
{
    double H0 = dm_instance_energy(inst, inst->q0, inst->p0);
    double T = inst->problem->kinetic(inst, end->p);
    return (T + end->potential - H0) * (1.0 / energy_scale);
}

static dm_status bench_case_run(const bench_case *c, bool quick, case_result *out,
                                dm_error *err)
{
    /* 1. the steps the bare loop makes in the wanted time, and the run of that many */
    memset(out, 0, sizeof *out);
    dm_run_spec spec;
    bare_setup b;
    dm_status st = make_spec(&spec, c, 1000, err);
    if (st != DM_OK || (st = bare_setup_init(&b, c, &spec, err)) != DM_OK)
        return st;
    uint64_t steps = calibrate(&b, quick ? 0.2 : 1.5);
    if ((st = make_spec(&spec, c, steps, err)) != DM_OK ||
        (st = bare_setup_init(&b, c, &spec, err)) != DM_OK)
        return st;
    /* 2. rounds of the harness and each loop, keeping each one's fastest */
    out->bare_seconds = out->harness_seconds = INFINITY;
    out->bare_without_potential_seconds = c->bare_without_potential ? INFINITY : NAN;
    const bool fold = b.k == 1.0; /* the folded loop computes the same only then */
    out->bare_folded_seconds = fold ? INFINITY : NAN;
    out->through_problem_seconds = spec.method->splitting != NULL ? INFINITY : NAN;
    dm_run_result result;
    memset(&result, 0, sizeof result);
    for (int r = 0; r < (quick ? 1 : 3); r++) {
        dm_run_result_free(&result);
        double t0 = dm_clock_seconds();
        st = dm_run(&spec, &result, NULL, err);
        double wall = dm_clock_seconds() - t0;
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
        out->bare_seconds = fmin(out->bare_seconds, run_bare(&b, BARE, out->steps, &end));
        if (spec.method->splitting == NULL && end.steps_done != out->steps) {
            dm_run_result_free(&result);
            return dm_error_set(err, DM_ENUMERIC, "bench: %s: the hand loop took %llu steps "
                                "of %llu", spec.id, (unsigned long long)end.steps_done,
                                (unsigned long long)out->steps);
        }
        if (r == 0) {
            /* 3. the same energy error at the end, bit for bit */
            out->bare_energy_error =
                bare_energy_error(&spec.inst, &end, result.metrics.energy_scale);
            out->harness_energy_error = result.metrics.final_energy_error;
            out->energy_agrees = memcmp(&out->bare_energy_error, &out->harness_energy_error,
                                        sizeof(double)) == 0;
        }
        if (spec.method->splitting != NULL) /* the through-table loop is a splitting's */
            out->through_problem_seconds =
                fmin(out->through_problem_seconds,
                     run_bare(&b, THROUGH_PROBLEM, out->steps, NULL));
        if (fold) {
            dm_bare_state folded_end;
            out->bare_folded_seconds = fmin(out->bare_folded_seconds,
                                            run_bare(&b, BARE_FOLDED, out->steps, &folded_end));
            /* the same arithmetic, so the same state */
            if (memcmp(&folded_end.potential, &end.potential, sizeof(double)) != 0 ||
                memcmp(folded_end.p, end.p, sizeof end.p) != 0) {
                dm_run_result_free(&result);
                return dm_error_set(err, DM_ENUMERIC, "bench: %s: the loop with k = 1 written "
                                    "in ends elsewhere than the loop reading k", spec.id);
            }
        }
        if (c->bare_without_potential != NULL)
            out->bare_without_potential_seconds =
                fmin(out->bare_without_potential_seconds,
                     run_bare(&b, BARE_WITHOUT_POTENTIAL, out->steps, NULL));
    }
    /* 4. writing the run's results file */
    out->hdf5_seconds = time_results_write(&spec, &result, out->hdf5_note, sizeof out->hdf5_note);
    out->hdf5_share = out->hdf5_seconds / out->harness_seconds;
    dm_run_result_free(&result);
    return DM_OK;
}

/* ---- CVODE: direct calls against the adapter ---- */

/* CVODE on one starting state, called directly (bench_loops.c) and through the
 * adapter, with each of its methods. */
static const struct cvode_bench {
    const char *problem;
    const char *key;
    double value;
    const char *force_param;       /* the constant the direct call takes */
    long (*direct)(double k, double q0, double p0, bool bdf, int max_order, double rtol,
                   double t_end, double *seconds);
    struct { const char *method; bool bdf; } methods[2];
} cvode_bench = { "pendulum", "amplitude", 2.5, "g_over_l", dm_bare_cvode_pendulum,
                  { { "cvode-adams", false }, { "cvode-bdf", true } } };
#define N_CVODE (sizeof cvode_bench.methods / sizeof cvode_bench.methods[0])

typedef struct cvode_result {
    const char *method;
    double periods;
    long direct_steps, adapter_steps;
    double direct_seconds, adapter_seconds;  /* fastest round */
} cvode_result;

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
    double t0 = dm_clock_seconds();
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
    *seconds = dm_clock_seconds() - t0;
    dm_stepper_destroy(s);
    return n;
}

static dm_status bench_cvode(size_t which, bool quick, cvode_result *out, dm_error *err)
{
    /* 1. the starting state, and the direct call's force constant by name */
    const struct cvode_bench *cb = &cvode_bench;
    const char *method_id = cb->methods[which].method;
    memset(out, 0, sizeof *out);
    out->method = method_id;
    const dm_method *m = dm_method_find(method_id);
    const dm_problem *pb = dm_problem_find(cb->problem);
    if (m == NULL || pb == NULL)
        return dm_error_set(err, DM_EINPUT, "bench: %s on %s is not available", method_id,
                            cb->problem);
    int k = dm_problem_param_index(pb, cb->force_param);
    if (k < 0)
        return dm_error_set(err, DM_EINPUT, "bench: %s has no parameter %s", cb->problem,
                            cb->force_param);
    dm_instance inst;
    const char *keys[1] = { cb->key };
    double values[1] = { cb->value };
    dm_status st = dm_instance_init(&inst, pb, 1, keys, values, err);
    if (st != DM_OK)
        return st;
    /* 2. calibrate on 20 periods through the adapter, then aim for the wanted time */
    double probe = 0.0;
    double periods = 20.0;
    if (cvode_adapter(&inst, m, periods * inst.period, &probe, err) < 0)
        return DM_ESOLVER;
    periods = fmax(1.0, ceil(periods * (quick ? 0.2 : 1.5) / fmax(probe, 1e-9)));
    out->periods = periods;
    double t_end = periods * inst.period;
    /* 3. rounds of each, keeping each one's fastest */
    out->direct_seconds = out->adapter_seconds = INFINITY;
    for (int r = 0; r < (quick ? 1 : 3); r++) {
        double wall = 0.0;
        out->direct_steps = cb->direct(inst.param[k], inst.q0[0], inst.p0[0],
                                       cb->methods[which].bdf, m->order, CVODE_RTOL, t_end,
                                       &wall);
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
static const struct jobs_bench {
    const char *problem;
    const char *key;
    double values[8];              /* one run each */
    const char *method;
    int steps_per_period;
} jobs_bench = { "pendulum", "amplitude", { 2.0, 2.1, 2.2, 2.3, 2.4, 2.5, 2.6, 2.7 },
                 "verlet", 96 };
#define JOBS_RUNS (sizeof jobs_bench.values / sizeof jobs_bench.values[0])

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
                      "  - {problem: %s, %s: %g}\n", jobs_bench.problem, jobs_bench.key,
                      jobs_bench.values[i]);
    if (w > 0 && (size_t)w < sizeof text)
        w += snprintf(text + w, sizeof text - (size_t)w,
                      "methods:\n  - {method: %s, steps_per_period: %d}\n",
                      jobs_bench.method, jobs_bench.steps_per_period);
    if (w < 0 || (size_t)w >= sizeof text)
        return dm_error_set(err, DM_EINPUT, "bench: the jobs suite does not fit its buffer");
    char name[64], output[1024];
    snprintf(name, sizeof name, "driftmark-bench-jobs-%ld.h5", (long)getpid());
    dm_cli_temp_path(output, sizeof output, name);
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
        { m->closest_approach, n->closest_approach },
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
    double t0 = dm_clock_seconds();
    dm_status st = dm_run_pool(suite, results, NULL, order, suite->n_runs, jobs, NULL, NULL, NULL,
                               err);
    *seconds = dm_clock_seconds() - t0;
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
        double t0 = dm_clock_seconds();
        st = dm_run(&suite.runs[0], &probe, NULL, err);
        wall = dm_clock_seconds() - t0;
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

/* "name": number (%.6g, null when not finite), then ", " unless last. */
static void json_field(FILE *f, const char *name, double v, bool last)
{
    dm_json_string(f, name);
    fputs(": ", f);
    dm_json_number(f, v, "%.6g");
    fputs(last ? "" : ", ", f);
}

/* "name": "text", then ", " unless last. */
static void json_text(FILE *f, const char *name, const char *text, bool last)
{
    dm_json_string(f, name);
    fputs(": ", f);
    dm_json_string(f, text);
    fputs(last ? "" : ", ", f);
}

/* "problem": ..., "KEY": VALUE, "method": ..., the start of every case's object. */
static void json_case(FILE *f, const char *problem, const char *key, double value,
                      const char *method)
{
    json_text(f, "problem", problem, false);
    dm_json_string(f, key);
    fputs(": ", f);
    dm_json_number(f, value, "%g");
    fputs(", ", f);
    json_text(f, "method", method, false);
}

static void print_nbody_json(FILE *f, const dm_bench_nbody_row *nb);

static void print_json(FILE *f, bool quick, const case_result *cr, const dm_bench_nbody_row *nb,
                       const cvode_result *cv, size_t n_cv, const jobs_result *jb,
                       const dm_short_runs_result *sr, const dm_bench_formula *fm,
                       long rss_before, long rss_after)
{
    fprintf(f, "{\n  \"quick\": %s,\n  \"samples\": %d,\n  \"cases\": [\n", quick ? "true" : "false",
            BENCH_SAMPLES);
    for (size_t i = 0; i < N_CASES; i++) {
        const bench_case *c = &cases[i];
        const case_result *r = &cr[i];
        double bare = (double)r->steps / r->bare_seconds;
        double harness = (double)r->steps / r->harness_seconds;
        fputs("    {", f);
        json_case(f, c->problem, c->key, c->value, case_method(c));
        fprintf(f, "\"steps_per_period\": %g, \"steps\": %llu,\n     ", c->steps_per_period,
                (unsigned long long)r->steps);
        json_field(f, "bare_steps_per_second", bare, false);
        json_field(f, "harness_steps_per_second", harness, false);
        json_field(f, "ratio", harness / bare, false);
        json_field(f, "through_problem_steps_per_second",
                   (double)r->steps / r->through_problem_seconds, false);
        json_field(f, "bare_without_potential_steps_per_second",
                   (double)r->steps / r->bare_without_potential_seconds, false);
        json_field(f, "bare_folded_steps_per_second",
                   (double)r->steps / r->bare_folded_seconds, false);
        fprintf(f, "\n     \"final_energy_error_agrees\": %s, ", r->energy_agrees ? "true" : "false");
        json_field(f, "final_energy_error", r->harness_energy_error, false);
        json_field(f, "hdf5_write_seconds", r->hdf5_seconds, false);
        json_field(f, "hdf5_share", r->hdf5_share, true);
        if (r->hdf5_note[0]) {
            fputs(", ", f);
            json_text(f, "hdf5_note", r->hdf5_note, true);
        }
        fprintf(f, "}%s\n", i + 1 < N_CASES ? "," : "");
    }
    fputs("  ],\n", f);
    print_nbody_json(f, nb);
    fprintf(f, "  \"memory\": {\"max_resident_kib_before\": %ld, "
               "\"max_resident_kib_after\": %ld},\n  \"cvode\": [\n",
            rss_before, rss_after);
    for (size_t i = 0; i < n_cv; i++) {
        const cvode_result *r = &cv[i];
        double direct = (double)r->direct_steps / r->direct_seconds;
        double adapter = (double)r->adapter_steps / r->adapter_seconds;
        fputs("    {", f);
        json_case(f, cvode_bench.problem, cvode_bench.key, cvode_bench.value, r->method);
        fprintf(f, "\"rtol\": %g, \"periods\": %g, \"direct_steps\": %ld, "
                   "\"adapter_steps\": %ld,\n     ",
                CVODE_RTOL, r->periods, r->direct_steps, r->adapter_steps);
        json_field(f, "direct_steps_per_second", direct, false);
        json_field(f, "adapter_steps_per_second", adapter, false);
        /* time per step through the adapter over time per step called directly, - 1 */
        json_field(f, "adapter_overhead", direct / adapter - 1.0, true);
        fprintf(f, "}%s\n", i + 1 < n_cv ? "," : "");
    }
    fputs("  ],\n  \"jobs\": {", f);
    json_text(f, "problem", jobs_bench.problem, false);
    json_text(f, "method", jobs_bench.method, false);
    fprintf(f, "\"runs\": %zu, \"jobs\": %d, \"periods\": %g, \"steps_per_run\": %llu,\n   ",
            jb->runs, jb->jobs, jb->periods, (unsigned long long)jb->steps_per_run);
    json_field(f, "one_job_seconds", jb->one_seconds, false);
    json_field(f, "all_jobs_seconds", jb->all_seconds, false);
    json_field(f, "speedup", jb->one_seconds / jb->all_seconds, false);
    fprintf(f, "\"results_identical\": %s", jb->identical ? "true" : "false");
    if (!jb->identical) {
        fputs(", ", f);
        json_text(f, "difference", jb->difference, true);
    }
    fputs("},\n  \"formula\": {", f);
    json_text(f, "potential", "-cos(q)", false);
    fprintf(f, "\"builtin_steps\": %llu, \"steps\": %llu, \"evaluated_steps\": %llu,\n   ",
            (unsigned long long)fm->builtin_steps, (unsigned long long)fm->steps,
            (unsigned long long)fm->evaluated_steps);
    json_field(f, "builtin_seconds", fm->builtin_seconds, false);
    json_field(f, "compiled_seconds", fm->compiled_seconds, false);
    json_field(f, "evaluated_seconds", fm->evaluated_seconds, false);
    json_field(f, "compile_seconds", fm->compile_seconds, true);
    fputs("},\n  \"jobs_speedup\": ", f);
    dm_json_number(f, jb->one_seconds / jb->all_seconds, "%.6g");
    fprintf(f, ",\n  \"short_runs\": {\"runs\": %zu, \"steps_per_run\": %llu, \"buckets\": %d, ",
            sr->runs, (unsigned long long)sr->steps_per_run, sr->buckets);
    json_field(f, "seconds", sr->seconds, false);
    json_field(f, "ms_per_run", 1e3 * sr->seconds / (double)sr->runs, false);
    json_field(f, "peak_mib", sr->peak_mib, false);
    json_field(f, "file_bytes", (double)sr->file_bytes, true);
    fputs("}\n}\n", f);
}

/* The N-body rows (bench_nbody.c): force pairs per second. */
static void print_nbody_text(FILE *f, const dm_bench_nbody_row *nb)
{
    fprintf(f, "N-body force sum (an invented star with light planets, verlet): pairs per "
               "second\n");
    fprintf(f, "%-10s %10s %11s %11s %6s %5s\n", "bodies", "steps", "hand M/s", "ours M/s",
            "ratio", "= dE");
    for (int i = 0; i < DM_BENCH_NBODY_ROWS; i++)
        fprintf(f, "%-10d %10llu %11.2f %11.2f %6.3f %5s\n", nb[i].bodies,
                (unsigned long long)nb[i].steps, nb[i].hand_pairs_per_second / 1e6,
                nb[i].ours_pairs_per_second / 1e6,
                nb[i].ours_pairs_per_second / nb[i].hand_pairs_per_second,
                nb[i].energy_agrees ? "yes" : "NO");
    fprintf(f, "  hand: Stormer-Verlet on the bodies written by hand, the pair sum inline,\n"
               "  watching the energy after every step; ours: a whole driftmark run; one\n"
               "  force sum of n (n - 1) / 2 pairs a step\n\n");
}

static void print_nbody_json(FILE *f, const dm_bench_nbody_row *nb)
{
    fputs("  \"nbody\": [\n", f);
    for (int i = 0; i < DM_BENCH_NBODY_ROWS; i++) {
        fprintf(f, "    {\"bodies\": %d, \"steps\": %llu, ", nb[i].bodies,
                (unsigned long long)nb[i].steps);
        json_field(f, "hand_pairs_per_second", nb[i].hand_pairs_per_second, false);
        json_field(f, "ours_pairs_per_second", nb[i].ours_pairs_per_second, false);
        json_field(f, "ratio", nb[i].ours_pairs_per_second / nb[i].hand_pairs_per_second, false);
        fprintf(f, "\"final_energy_error_agrees\": %s}%s\n",
                nb[i].energy_agrees ? "true" : "false", i + 1 < DM_BENCH_NBODY_ROWS ? "," : "");
    }
    fputs("  ],\n", f);
}

static void print_formula_text(FILE *f, const dm_bench_formula *fm)
{
    double builtin = (double)fm->builtin_steps / fm->builtin_seconds;
    double compiled = (double)fm->steps / fm->compiled_seconds;
    double evaluated = (double)fm->evaluated_steps / fm->evaluated_seconds;
    fprintf(f, "\nthe pendulum written in the suite as V = -cos(q) (amplitude 2.5, verlet, 96 steps "
               "a period, whole runs):\n"
               "  built-in %.2f M/s, compiled %.2f M/s (%.3f of the built-in), evaluated by "
               "libmatheval %.3f M/s (%.1f times slower than compiled); compile %.2f s\n",
            builtin / 1e6, compiled / 1e6, compiled / builtin, evaluated / 1e6,
            compiled / evaluated, fm->compile_seconds);
}

static void print_text(FILE *f, bool quick, const case_result *cr, const dm_bench_nbody_row *nb,
                       const cvode_result *cv, size_t n_cv, const jobs_result *jb,
                       const dm_short_runs_result *sr, const dm_bench_formula *fm,
                       long rss_before, long rss_after)
{
    fprintf(f, "harness (every monitor on, %d buckets) against a hand-written loop, %s runs\n\n",
            BENCH_SAMPLES, quick ? "quick" : "full");
    fprintf(f, "%-39s %10s %9s %9s %6s %9s %9s %9s %5s %7s\n", "case", "steps", "hand M/s",
            "ours M/s", "ratio", "k=1 M/s", "table M/s", "no-V M/s", "= dE", "hdf5 %");
    for (size_t i = 0; i < N_CASES; i++) {
        const bench_case *c = &cases[i];
        const case_result *r = &cr[i];
        char name[64];
        snprintf(name, sizeof name, "%s %s=%g %s", c->problem, c->key, c->value, case_method(c));
        double bare = (double)r->steps / r->bare_seconds;
        double harness = (double)r->steps / r->harness_seconds;
        fprintf(f, "%-39s %10llu %9.2f %9.2f %6.3f %9.2f %9.2f %9.2f %5s %7.3f\n", name,
                (unsigned long long)r->steps, bare / 1e6, harness / 1e6, harness / bare,
                (double)r->steps / r->bare_folded_seconds / 1e6,
                (double)r->steps / r->through_problem_seconds / 1e6,
                (double)r->steps / r->bare_without_potential_seconds / 1e6, r->energy_agrees ? "yes" : "NO",
                100.0 * r->hdf5_share);
        if (r->hdf5_note[0])
            fprintf(f, "  %s\n", r->hdf5_note);
    }
    fprintf(f, "  hand: the hand-written loop, steps per second, watching the energy after\n"
               "  every step (the largest |H - H0|) as driftmark does; ours: a whole driftmark run\n"
               "  with every monitor on; ratio: ours / hand; k=1: the hand loop with the\n"
               "  problem's constant (g, mu) written in as 1 rather than read at run time, as\n"
               "  driftmark reads it (the cost of a run-time parameter); table: the hand loop calling the\n"
               "  problem's force() and velocity() through its table (splitting methods: the best\n"
               "  the per-step path can do; the fused loop avoids it); no-V: the hand loop never\n"
               "  evaluating V (the pendulum's splitting loops evaluate sin only; RK4 and midpoint\n"
               "  watch no energy); = dE: the hand loop and driftmark end with the same energy\n"
               "  error, bit for bit; hdf5: writing a one-run results file, in %% of the run's\n"
               "  wall time\n\n");
    print_nbody_text(f, nb);
    fprintf(f, "peak resident memory: %ld KiB before, %ld KiB after\n\n", rss_before, rss_after);
    fprintf(f, "CVODE on %s %s=%g, rtol %g: called directly vs through the adapter\n",
            cvode_bench.problem, cvode_bench.key, cvode_bench.value, CVODE_RTOL);
    for (size_t i = 0; i < n_cv; i++) {
        const cvode_result *r = &cv[i];
        double direct = (double)r->direct_steps / r->direct_seconds;
        double adapter = (double)r->adapter_steps / r->adapter_seconds;
        fprintf(f, "  %-12s %8.0f periods  steps %ld / %ld  direct %.3f M/s  adapter %.3f M/s  "
                   "overhead %+.1f %%\n",
                r->method, r->periods, r->direct_steps, r->adapter_steps, direct / 1e6,
                adapter / 1e6, 100.0 * (direct / adapter - 1.0));
    }
    print_formula_text(f, fm);
    fprintf(f, "\n1 vs N jobs: %zu equal runs (%s %s %.1f to %.1f, %s, %d steps a period, %g "
               "periods, %llu steps each) through the pool of `run`\n",
            jb->runs, jobs_bench.problem, jobs_bench.key, jobs_bench.values[0],
            jobs_bench.values[JOBS_RUNS - 1], jobs_bench.method, jobs_bench.steps_per_period,
            jb->periods, (unsigned long long)jb->steps_per_run);
    fprintf(f, "  --jobs 1 %.3f s, --jobs %d %.3f s: speed-up %.2f; results %s\n", jb->one_seconds,
            jb->jobs, jb->all_seconds, jb->one_seconds / jb->all_seconds,
            jb->identical ? "identical bit for bit" : jb->difference);
    fprintf(f, "\nmany short runs: `driftmark run` of %zu runs of %llu steps (%d buckets, every "
               "core), the whole process\n", sr->runs, (unsigned long long)sr->steps_per_run,
            sr->buckets);
    fprintf(f, "  %.3f s, %.3f ms a run, peak resident memory %.1f MiB, results file %.1f MiB\n",
            sr->seconds, 1e3 * sr->seconds / (double)sr->runs, sr->peak_mib,
            (double)sr->file_bytes / 1048576.0);
}

static void print_usage(FILE *out)
{
    fprintf(out, "usage: driftmark bench [--quick] [--json]\n"
                 "  times the harness against hand-written loops, the results file write and\n"
                 "  the CVODE adapter, 1 against N jobs on a suite of equal runs, and a whole\n"
                 "  `driftmark run` of many short runs (time a run, peak memory); --quick\n"
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
    cvode_result cv[N_CVODE];
    dm_error err = { 0 };
    for (size_t i = 0; i < N_CASES; i++) {
        if (bench_case_run(&cases[i], quick, &cr[i], &err) != DM_OK) {
            fprintf(stderr, "driftmark: %s: %s\n", CMD, err.msg);
            return 1;
        }
    }
    dm_bench_nbody_row nb[DM_BENCH_NBODY_ROWS];
    char nb_error[DM_ERROR_MSG_MAX];
    if (dm_bench_nbody(quick, nb, nb_error, sizeof nb_error) != 0) {
        fprintf(stderr, "driftmark: %s: %s\n", CMD, nb_error);
        return 1;
    }
    for (size_t i = 0; i < N_CVODE; i++) {
        if (bench_cvode(i, quick, &cv[i], &err) != DM_OK) {
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
    dm_short_runs_result sr;
    if (dm_bench_short_runs(quick ? 200 : 1000, BENCH_SAMPLES, &sr, &err) != DM_OK) {
        fprintf(stderr, "driftmark: %s: %s\n", CMD, err.msg);
        return 1;
    }
    dm_bench_formula fm;
    if (dm_bench_formula_run(quick, &fm, &err) != DM_OK) {
        fprintf(stderr, "driftmark: %s: %s\n", CMD, err.msg);
        return 1;
    }
    if (json)
        print_json(stdout, quick, cr, nb, cv, N_CVODE, &jb, &sr, &fm, rss_before, rss_after);
    else
        print_text(stdout, quick, cr, nb, cv, N_CVODE, &jb, &sr, &fm, rss_before, rss_after);
    return 0;
}
