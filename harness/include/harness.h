/* harness.h — the data the harness passes between its parts:
 *
 *   suite.c     YAML suite text  -> dm_suite (a validated list of dm_run_spec)
 *   runner.c    dm_run_spec      -> dm_run_result (runs one integration with the monitors)
 *   metrics.c   dm_run_result    -> per-run metrics; per-sweep fitted orders
 *   results.c   dm_suite + results -> the HDF5 results file (contract: results/README.md)
 *   table.c     summary rows     -> the aligned table / csv / json printed at the end and by `show`
 *
 * What a run measured is one list, DM_RUN_FIGURES in run_figures.h (figures.c makes it a
 * table): the metrics struct, the summary row, the file, the packing and the tables
 * all follow it.
 *
 * The harness never knows which method or problem it runs: it sees dm_instance and
 * dm_method tables only.
 */
#ifndef DM_HARNESS_H
#define DM_HARNESS_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "dm_error.h"
#include "dm_line_fit.h"
#include "method.h"
#include "problem.h"
#include "run_figures.h"
#include "user_table.h"

#define DM_RUN_ID_MAX 160
#define DM_HASH_HEX 17          /* 64-bit hash as 16 hex digits + NUL */
#define DM_NAME_MAX 128
#define DM_CONFIG_MAX 1024
#define DM_SUITE_MAX_RUNS 100000         /* runs one suite may expand to */
#define DM_SUITE_MAX_BYTES (1 << 20)     /* the longest suite text read (1 MiB) */

/* ---- what one run is ---- */

typedef enum dm_step_setting {
    DM_SET_BY_H,                  /* fixed step given as h */
    DM_SET_BY_STEPS_PER_PERIOD,   /* fixed step given as period / n */
    DM_SET_BY_RTOL                /* adaptive tolerance */
} dm_step_setting;

typedef struct dm_run_spec {
    char id[DM_RUN_ID_MAX];          /* readable, stable: pendulum-amplitude2.5.verlet-n64 */
    char hash[DM_HASH_HEX];          /* hash of config (every setting that changes numbers) */
    char config[DM_CONFIG_MAX];      /* canonical text of the complete configuration */
    dm_instance inst;                /* problem, parameters, start, regime, period */
    /* the problem parameters as the user wrote them (for ids and attributes) */
    size_t n_given;
    const char *given_keys[DM_MAX_PARAMS];
    double given_values[DM_MAX_PARAMS];
    /* a problem from the user's own code: the object's path and the hash of its bytes
     * (both empty for a built-in problem) */
    char problem_library[1024];
    char problem_library_hash[DM_HASH_HEX];
    /* a problem that needs data (N-body): where its data came from (a file, or "suite"),
     * the hash of its canonical text (also in config) and the units the user stated
     * (all empty otherwise) */
    char data_source[1024];
    char data_hash[DM_HASH_HEX];
    char units[64];
    const dm_method *method;
    dm_method_config method_config;  /* h (resolved), rtol, atol, compensated, t_stop */
    dm_step_setting step_setting;                    /* how the step or tolerance was given */
    double step_value;               /* h, steps per period, or rtol as written */
    double t_end;                    /* horizon in time units */
    double periods;                  /* horizon in periods (t_end / period) */
    size_t samples;                  /* buckets in the stored series */
    double energy_limit;             /* |dE| above this: diverged (from the suite) */
    uint64_t step_budget;            /* adaptive runs taking more steps fail (0: none) */
    bool lyapunov;                   /* estimate the largest Lyapunov exponent (lyapunov.c) */
    /* measure the global error against a reference trajectory (reference_run.c): its
     * target (unit-free, the estimated error of the coarser of its two trajectories
     * over the horizon) and the cap of its cost in gradient_quad evaluations */
    bool reference;
    double reference_tolerance;
    double reference_force_evals;
    int sweep;                       /* index into dm_suite.sweeps, or -1 */
} dm_run_spec;

/* A sweep: the runs of one problem variant under one method entry whose step (or tolerance) varies. */
typedef struct dm_sweep {
    char name[DM_RUN_ID_MAX];        /* pendulum-amplitude2.5.verlet */
    dm_step_setting step_setting;
    size_t n_runs;
    size_t *runs;                    /* indices into dm_suite.runs, in step (or tolerance) order */
} dm_sweep;

typedef struct dm_suite {
    char name[DM_NAME_MAX];
    char output[1024];               /* results file path */
    char *text;                      /* the suite text verbatim (owned) */
    char source[1024];               /* file name, or "(built-in default suite)" */
    /* the folder a relative path in the suite is taken from: the suite file's, made
     * absolute when the file was read (so a resumed suite finds the same files from any
     * working folder), or empty (a text given otherwise: the working folder) */
    char folder[1024];
    double energy_limit;             /* |dE| above this: diverged (default 1) */
    uint64_t step_budget;            /* runs needing more steps are refused up front */
    size_t n_runs;
    dm_run_spec *runs;               /* owned */
    size_t n_sweeps;
    dm_sweep *sweeps;                /* owned */
    size_t n_problem_data;
    void **problem_data;             /* owned: the data the runs' instances point to */
    /* the methods typed as tables in the suite (user_table.h), in the order first
     * given; the runs' methods point into them (owned) */
    size_t n_tables;
    struct dm_user_table **tables;
} dm_suite;

/* Parses and validates a whole suite before anything runs. Errors are one line,
 * "FILE:LINE:COLUMN: what is wrong (what was expected)". `output`, when not NULL,
 * replaces the suite's own output path (the command line's -o) and is the one checked. */
dm_status dm_suite_parse(dm_suite *suite, const char *text, size_t length,
                         const char *source, const char *output, dm_error *err);
/* The same, with relative paths taken from `folder` (dm_suite.folder; NULL or empty:
 * the folder of `source` as written, or the working folder) */
dm_status dm_suite_parse_in(dm_suite *suite, const char *text, size_t length,
                            const char *source, const char *folder, const char *output,
                            dm_error *err);
dm_status dm_suite_load(dm_suite *suite, const char *path, const char *output, dm_error *err);
/* Given as `output` to the loaders: the output file (the suite's, or its default) is
 * named but not checked, and no stale temporary file beside it is removed - for what
 * reads a suite and writes nothing (`run --plan`). */
extern const char dm_suite_output_unchecked[];
dm_status dm_suite_default(dm_suite *suite, const char *output, dm_error *err);

/* Opens `path` for reading only when it is a regular file of at most max_bytes (0: any
 * size): a FIFO, a device or a directory is refused at once rather than blocking or
 * flooding the reader. Returns the descriptor, or -1 with *err set (DM_EINPUT, naming
 * `what` and the path). Suites and results files are read through it. */
int dm_open_regular(const char *path, const char *what, long long max_bytes, dm_error *err);
void dm_suite_free(dm_suite *suite);

extern const char dm_default_suite_text[];

/* ---- what one run produced ---- */

typedef enum dm_run_status {
    DM_RUN_NOT_RUN = 0,     /* never started (a zeroed result): not written to files */
    DM_RUN_OK,
    DM_RUN_DIVERGED,        /* NaN, Inf or |dE| above the limit */
    DM_RUN_FAILED,          /* the solver gave up (CVODE flag, no convergence) */
    DM_RUN_INTERRUPTED,
    DM_RUN_SWAMPED          /* ran to the end, but |dE| >= 1/2 over the whole last bucket */
} dm_run_status;

const char *dm_run_status_name(dm_run_status status);
/* The status spelled `name` (dm_run_status_name's words), or DM_RUN_NOT_RUN. */
dm_run_status dm_run_status_named(const char *name);

/* The stored series: `n` buckets covering the horizon; each keeps dE at its end and
 * the min and max of dE over every step inside it, so no peak is lost by thinning.
 * DM_SERIES_LIST names the series of one double a bucket, in their stored order (the
 * packed result's and the file's: each is the dataset of the same name), with whether
 * every run has it (1) or only some (0: NULL otherwise); the invariants' follow. A new
 * series goes in the struct and in this list, and is filled where the runner records a
 * bucket; freeing, copying, packing and writing it follow the list. */
#define DM_SERIES_LIST(X)                                                                 \
    X(time, 1) X(energy_error, 1) X(energy_error_min, 1) X(energy_error_max, 1)            \
    X(global_error, 0) X(reference_error, 0)
typedef struct dm_series {
    size_t n;                        /* buckets filled (<= capacity) */
    size_t capacity;
    double *time;                    /* bucket end times (time of the last step in it) */
    double *energy_error;
    double *energy_error_min;
    double *energy_error_max;
    double *global_error;            /* phase-space distance to the exact solution or the
                                        reference, or NULL */
    double *reference_error;         /* the reference's error estimate, or NULL */
    int n_invariants;
    double *invariant_error[DM_MAX_INVARIANTS];  /* relative errors, or NULL */
} dm_series;

/* Section crossings, kept within a fixed budget: when full, every second one is
 * dropped and the stride doubles, so memory stays flat in run length while the
 * metrics are computed from every crossing as it happens. */
typedef struct dm_crossings {
    size_t n, capacity;
    uint64_t stride;                 /* keep crossing numbers that are multiples */
    uint64_t total;                  /* crossings seen */
    double *number;                  /* crossing number (1, 2, ...) as double */
    double *time;
    double *phase_error;             /* 2 pi (t_n - t_n,exact) / T_exact */
    /* The surface of section, for a problem of two degrees of freedom with a plain
     * section: the other coordinate and its momentum at each kept crossing (Henon-Heiles:
     * y and p_y at x = 0), interpolated inside the step; NULL otherwise. */
    double *section_q, *section_p;
} dm_crossings;

/* What a run measured: a field for every figure of DM_RUN_FIGURES (run_figures.h) whose
 * home is metrics, and the work the method counted. */
typedef struct dm_run_metrics {
    DM_RUN_FIGURES(DM_FIGURE_METRICS_FIELD)
    dm_counts counts;
} dm_run_metrics;

#define DM_DRIFT_CLASS_MAX 16
#define DM_DRIFT_NOTE_MAX 128
#define DM_REGIME_CHANGE_MAX 96
#define DM_REFERENCE_NOTE_MAX 192

typedef struct dm_run_result {
    dm_run_status status;
    char reason[DM_ERROR_MSG_MAX];   /* why not ok; empty when ok */
    char drift_class[DM_DRIFT_CLASS_MAX]; /* dm_drift_class_name of drift_exponent */
    char drift_note[DM_DRIFT_NOTE_MAX];   /* why drift_exponent is NaN, or a note */
    char period_note[DM_DRIFT_NOTE_MAX];  /* why period_measured is NaN; empty otherwise */
    char regime_change[DM_REGIME_CHANGE_MAX]; /* the numerical orbit left the starting
                                                 regime: "from -> to at t = ..." */
    char reference_arithmetic[16];   /* DM_QUAD_NAME, with a reference */
    char reference_note[DM_REFERENCE_NOTE_MAX];
    dm_run_metrics metrics;
    dm_series series;
    dm_crossings crossings;
    /* A run stopped before its horizon: its whole state, written with it and read back
     * by --resume to continue it (harness/checkpoint.h; NULL otherwise; owned). */
    struct dm_checkpoint *checkpoint;
    /* While the run runs: its steps and the fraction of its horizon done, in parts per
     * 2^32, published every 2^16 steps (read them with __atomic_load_n, relaxed). */
    uint64_t live_steps, live_fraction;
} dm_run_result;

/* Runs one spec. Fills *result (allocates its series; free with dm_run_result_free).
 * A numerical fault is not an error of this call: it returns DM_OK with
 * result->status set. `stop` (may be NULL) is polled every 2^16 steps (every 4096
 * adaptive steps) and between buckets: when it becomes non-zero before the horizon the
 * run ends as interrupted, with its whole state in result->checkpoint. Fails only when
 * out of memory (DM_ENOMEM). */
dm_status dm_run(const dm_run_spec *spec, dm_run_result *result, const volatile int *stop,
                 dm_error *err);

/* The largest Lyapunov exponent of the orbit of `spec` over its first `steps` steps, by
 * a renormalised nearby trajectory (lyapunov.c); NaN for adaptive methods or when a step
 * fails. */
double dm_lyapunov_exponent(const dm_run_spec *spec, uint64_t steps, dm_error *err);

#define DM_REFERENCE_DEFAULT_TOLERANCE 1e-20
#define DM_REFERENCE_DEFAULT_FORCE_EVALS 2e8

/* The distance of x and y in phase space with positions in units of scale[0] and momenta
 * in units of scale[1], and those scales from an instance: |q0| and |p0| (each 1 when it
 * is 0), so that a distance does not depend on the problem's units (lyapunov.c). */
double dm_phase_distance(const double *x, const double *y, int dof, const double scale[2]);
void dm_phase_scale(const dm_instance *inst, double scale[2]);

/* Continues the run whose interrupted result (with its checkpoint, as dm_run left it or
 * dm_results_read_runs read it back) is *result: fixed-step runs exactly as if never
 * stopped; CVODE restarted at the saved state (results/README.md). A result without a
 * checkpoint runs from the start. A checkpoint that does not fit the run is an error
 * (DM_EINPUT). */
dm_status dm_run_resume(const dm_run_spec *spec, dm_run_result *result,
                        const volatile int *stop, dm_error *err);
/* What a run looks at when it polls (every 2^16 fixed steps, 4096 adaptive steps and at
 * bucket ends): a stop request, and save points. `save_request` (may be NULL) is a
 * counter raised by whoever saves: a run that sees it differ from the value it last
 * answered (at first `answered`) hands `snapshot` a new result (owned by the callee: free it with
 * dm_run_result_free, then free) that is exactly what the run's result would be had a
 * stop ended it there (status interrupted, its series so far, a checkpoint), and
 * carries on unchanged. `request` is the counter's value answered. */
typedef struct dm_run_watch {
    const volatile int *stop;
    const unsigned *save_request;
    unsigned answered;
    void (*snapshot)(void *ctx, size_t index, dm_run_result *copy, unsigned request);
    void *ctx;
    size_t index;
} dm_run_watch;

/* dm_run_resume with a watch: continues from result->checkpoint when it holds one, else
 * runs from the start (a zeroed result, or one to run again). */
dm_status dm_run_watched(const dm_run_spec *spec, dm_run_result *result,
                         const dm_run_watch *watch, dm_error *err);
void dm_run_result_free(dm_run_result *result);
/* Frees a result's series, crossings and checkpoint once they are written, keeping its
 * status and figures (all that /summary, the sweep fits and the table need). */
void dm_run_result_drop_series(dm_run_result *result);

/* The memory a run's result takes (its series and crossing buffers), in bytes: the
 * suite reader refuses suites whose runs would take more than memory_limit_gib. */
double dm_run_memory_bytes(const dm_run_spec *spec);

/* The steps a fixed-step run takes (the runner's own count: N periods at n steps per
 * period are N n steps even when t_end / h rounds a hair above); 0 for adaptive runs. */
uint64_t dm_run_fixed_steps(const dm_run_spec *spec);
#define DM_DEFAULT_MEMORY_LIMIT_GIB 8.0
/* The longest horizon a suite may ask for, and choose may carry a sweep to, in periods. */
#define DM_MAX_PERIODS 1e12

/* ---- many runs at once (pool.c): `run --jobs` and `bench` ---- */

#define DM_POOL_MAX_JOBS 1024

/* Work estimate of a run (force evaluations for fixed steps; a guess from the horizon
 * and rtol for adaptive methods): orders the runs and judges the time left. */
double dm_run_estimated_cost(const dm_run_spec *spec);

/* Sorts order[0..n) (indices into suite->runs) by estimated cost, longest first, ties
 * by index, so one long run does not finish alone at the end. */
void dm_run_order_longest_first(const dm_suite *suite, size_t *order, size_t n);

/* Progress of a pool, called under its lock when a run starts or ends, and once at the
 * end with current "": runs done of total, the estimated fraction of the work done,
 * the run just started (or just ended: its id, then ": STATUS" when it did not end ok),
 * seconds since the pool started. */
typedef void (*dm_pool_progress)(size_t done, size_t total, double work,
                                 const char *current, double elapsed);

/* Runs suite->runs[order[0..n_order)] on `jobs` threads (the calling thread is one),
 * each result stored at its own index in results[], so the results are the same
 * whatever the number of jobs. With a `writer` (may be NULL) each run is written to it
 * as soon as it finishes, and its series freed. `stop` (may be NULL) ends the runs at
 * their next bucket (they end interrupted) and starts no new one. When a run cannot be
 * run (dm_run fails) or written, no new run starts and its error, prefixed with the
 * run id, is returned. `progress` may be NULL; *done (may be NULL) gets the runs
 * finished. */
typedef struct dm_results_writer dm_results_writer;
dm_status dm_run_pool(const dm_suite *suite, dm_run_result *results, dm_results_writer *writer,
                      const size_t *order, size_t n_order, int jobs, volatile int *stop,
                      dm_pool_progress progress, size_t *done, dm_error *err);

/* How fast the energy error grows, as an exponent p of t (results/README.md has the
 * exact definition): the growth of the centre of the dE band (its min and max over a
 * trailing period) away from where it was after the first period, fitted in log-log
 * over the last decades (at most 3, at least 1) of the run. About 0 bounded, 0.5
 * random walk, 1 linear. When the centre moved less than a quarter of the band's
 * half-width, the run is bounded and p is the slope of the running max of |dE|
 * instead. NaN when it cannot mean anything; *why (may be NULL) gets a static text:
 * the reason for a NaN, a note for a bounded run, empty otherwise. */
double dm_drift_exponent(const dm_series *series, double period, const char **why);

typedef enum dm_drift_class {
    DM_DRIFT_UNMEASURED,     /* NaN */
    DM_DRIFT_BOUNDED,        /* p < 0.25 */
    DM_DRIFT_RANDOM_WALK,    /* 0.25 <= p < 0.75 */
    DM_DRIFT_LINEAR,         /* 0.75 <= p < 1.5 */
    DM_DRIFT_FASTER          /* p >= 1.5 */
} dm_drift_class;

dm_drift_class dm_drift_classify(double exponent);
const char *dm_drift_class_name(dm_drift_class c);

/* The figures derived from a run's stored series alone, set in *r from r->series: the
 * drift exponent, its class and note, and the status swamped for an ok run whose
 * energy error stayed beyond 1/2 (one sign) over its last bucket. The runner calls it
 * at the end of a run and the reader of a results file again (for --resume), so a file
 * never mixes definitions from two versions. */
void dm_run_derive_from_series(dm_run_result *r, double period);

/* ---- across a sweep ---- */

/* Why each run of a sweep is or is not in a fit. */
typedef enum dm_fit_use {
    DM_FIT_USED = 0,
    DM_FIT_NOT_RUN,          /* the run never started */
    DM_FIT_DIVERGED,         /* status diverged */
    DM_FIT_FAILED,           /* status failed */
    DM_FIT_INTERRUPTED,      /* status interrupted */
    DM_FIT_SWAMPED,          /* status swamped: the energy is gone (or doubled) */
    DM_FIT_NO_VALUE,         /* the value or the step (tolerance) is NaN, inf or zero */
    DM_FIT_LARGE,            /* max |dE| >= 1/2: the error is the size of the energy */
    DM_FIT_ROUND_OFF,        /* at the round-off floor (results/README.md) */
    DM_FIT_SIGN_CHANGE,      /* phase only: outside the longest run of points of one sign */
    DM_FIT_COARSE,           /* 1/10 <= max |dE| < 1/2: too large to be asymptotic */
    DM_FIT_REGIME_CHANGE     /* the numerical orbit left the starting regime: another orbit */
} dm_fit_use;

/* The orders between neighbouring points of a fit differ by more than this: the points
 * are not all in one regime (our threshold; results/README.md, sweeps). */
#define DM_LOCAL_ORDER_SPREAD 0.25
/* Those orders move one way along the whole fit by more than this fraction of the fitted
 * order: it is still settling, the points are not yet asymptotic (our threshold: 5 % of
 * the order is 0.05 for Euler, whose 0.86, 0.92, 0.95 on a Kepler orbit it catches). */
#define DM_ORDER_TREND 0.05

const char *dm_fit_use_name(dm_fit_use use);

typedef struct dm_sweep_fit {
    double energy_order;             /* slope of log max |dE| against log h */
    double phase_order;              /* slope of log |phase error per period| against log h */
    size_t n_energy_points;          /* runs in the energy fit */
    size_t n_phase_points;           /* runs in the phase fit */
    dm_line_fit energy_line;         /* the fits themselves: log max |dE| and ... */
    dm_line_fit phase_line;          /* ... log |phase error per period| against log x */
    /* the smallest and largest order between neighbouring points of each fit (NaN
     * with fewer than 2 points): far apart, the points are not all in the regime
     * where the error goes as x^p, and the fitted slope mixes regimes */
    double energy_local_min, energy_local_max, phase_local_min, phase_local_max;
    /* those orders move one way along the whole fit (3 or more points) by more than
     * DM_ORDER_TREND of the fitted order: the order is still settling */
    bool energy_trend, phase_trend;
    size_t n_runs;                   /* the sweep's runs; the arrays below have this length */
    unsigned char *energy_use;       /* dm_fit_use of each run, in sweep order (owned) */
    unsigned char *phase_use;
} dm_sweep_fit;

/* A max |dE| at or under this many eps sqrt(steps) is round-off (the sweep fits leave
 * it out; choose never predicts less), as is a |phase per period| at or under
 * DM_PHASE_ROUND_OFF_FLOOR eps sqrt(steps); a max |dE| of DM_ENERGY_COARSE or more
 * is not small (compounding errors are off their leading term by 5 %: results/README.md,
 * sweeps). Our own thresholds, measured on plain and compensated runs. */
#define DM_ENERGY_ROUND_OFF_FLOOR 4.0
#define DM_PHASE_ROUND_OFF_FLOOR 0.25
#define DM_ENERGY_COARSE 0.1

/* What a fit needs to know of one run of a sweep. */
typedef struct dm_fit_input {
    double x;                        /* |h| or rtol */
    dm_run_status status;
    uint64_t steps;
    double max_energy_error;
    double phase_error_per_period;
    bool regime_changed;             /* the numerical orbit left its starting regime */
} dm_fit_input;

/* The fits of the points in[0..n): which runs each fit can use (results/README.md,
 * sweeps) and the log-log lines through them. Allocates fit's arrays (free with
 * dm_sweep_fit_free); `name` only names the sweep in an out-of-memory error. */
dm_status dm_fit_points(const char *name, const dm_fit_input *in, size_t n, dm_sweep_fit *fit,
                        dm_error *err);

/* Least-squares slope of log(y) against log(x) over the points with x, y > 0 and
 * finite; returns NaN with fewer than 2 points. */
double dm_fit_loglog_slope(const double *x, const double *y, size_t n, size_t *used);

/* Fits a sweep from its results only (so it is the same whatever --jobs was), using
 * only the runs a fit can use; records per run why it is in or out. Allocates the
 * arrays of *fit: free with dm_sweep_fit_free. Fails only when out of memory. */
dm_status dm_sweep_fit_compute(const dm_suite *suite, const dm_sweep *sweep,
                               const dm_run_result *results, dm_sweep_fit *fit,
                               dm_error *err);
void dm_sweep_fit_free(dm_sweep_fit *fit);
/* The energy fit of `fit` through other errors y[i] at the same x[i] (its n_runs runs;
 * choose: each run's max |dE| grown to a longer horizon): the runs fit's energy fit uses
 * (those whose y is not a positive number become no_value), the line, the local
 * orders and their trend; *out has no phase fit. Fails only when out of memory. */
dm_status dm_fit_energy_through(const dm_sweep_fit *fit, const double *x, const double *y,
                                dm_sweep_fit *out, dm_error *err);

/* What the sweep table shows of one sweep, from a run's fits or read back from
 * /sweeps/<name> (results/README.md): the fitted orders, their point counts and each
 * written run's code in each fit (the datasets energy_fit and phase_fit). */
#define DM_FIT_USE_NAME_MAX 16
typedef struct dm_sweep_run_use {
    char run_id[DM_RUN_ID_MAX];
    char energy_fit[DM_FIT_USE_NAME_MAX];   /* dm_fit_use_name, or "" (no fit made) */
    char phase_fit[DM_FIT_USE_NAME_MAX];
} dm_sweep_run_use;

typedef struct dm_sweep_summary {
    char name[DM_RUN_ID_MAX];
    double energy_order, phase_order;
    uint64_t n_points_energy, n_points_phase;
    double energy_local_min, energy_local_max;  /* as in dm_sweep_fit (NaN in files */
    double phase_local_min, phase_local_max;    /* written before they were kept) */
    bool energy_trend, phase_trend;             /* as in dm_sweep_fit (false when absent) */
    size_t n_runs;
    dm_sweep_run_use *runs;          /* owned; the runs that started, in sweep order */
} dm_sweep_summary;

/* The summary of `sweep` from its fit (NULL: none made) and the suite's results. */
dm_status dm_sweep_summary_fill(dm_sweep_summary *s, const dm_suite *suite,
                                const dm_sweep *sweep, const dm_run_result *results,
                                const dm_sweep_fit *fit, dm_error *err);
void dm_sweep_summaries_free(dm_sweep_summary *s, size_t n);
/* 1 when `name` is a code of the datasets energy_fit and phase_fit (or ""), else 0. */
int dm_fit_use_name_known(const char *name);

/* ---- the tables typed in a suite ---- */

/* How a table is printed: aligned text, CSV or JSON. */
typedef enum dm_table_format { DM_TABLE_TEXT, DM_TABLE_CSV, DM_TABLE_JSON } dm_table_format;
/* One CSV field: a text with control bytes escaped and RFC 4180 quoting where needed;
 * a number in full precision (%.17g), inf / -inf, or empty for NaN. */
void dm_csv_text(FILE *out, const char *text);
void dm_csv_number(FILE *out, double v);

/* What the tables block shows of one table typed in a suite (user_table.h): from the
 * suite's tables (dm_table_summary_fill) or read back from /tables
 * (dm_results_read_tables). */
typedef struct dm_table_summary {
    char name[DM_TABLE_NAME_MAX];
    char form[16];
    int claimed_order, order_found;
    char basis[24];                  /* "order conditions" or "measured" */
    bool experimental, symmetric;
    double measured[2], constant[2]; /* on dm_table_check_problems; NaN for a Butcher
                                        tableau (its order is from its conditions) */
} dm_table_summary;

void dm_table_summary_fill(dm_table_summary *s, const dm_user_table *t);
/* One line (CSV or JSON record) a table: its form, the order claimed and the order
 * found with its basis, symmetry, and the measured orders and error constants. */
void dm_tables_print(FILE *out, const dm_table_summary *tables, size_t n,
                     dm_table_format format);

/* ---- the results file (results.c) ---- */

/* The results file, written run by run as the runs finish (results/README.md, "How the
 * file is written"): under a temporary name beside `path`, renamed into place by
 * dm_results_writer_finish only once complete, so a failure never leaves a half-written
 * file under that name. open creates the temporary file and writes the root's
 * attributes; add writes one run's group (any thread may call it: the writer's calls
 * are serialised), after which the caller may free the run's series (dm_run_result_
 * drop_series); finish writes /summary and /sweeps from every run's figures (the
 * series are not needed), closes, syncs and renames, and frees the writer, as abort
 * does after removing the temporary file. A writer that failed once refuses every
 * later add and finish with the first error. */
dm_status dm_results_writer_open(const char *path, const dm_suite *suite,
                                 const char *start_time_utc, dm_results_writer **w,
                                 dm_error *err);
dm_status dm_results_writer_add(dm_results_writer *w, size_t index,
                                const dm_run_result *result, dm_error *err);
dm_status dm_results_writer_finish(dm_results_writer *w, const dm_run_result *results,
                                   const dm_sweep_fit *fits, dm_error *err);
void dm_results_writer_abort(dm_results_writer *w);

/* Save points: every `seconds` (0: never) while runs run, the pool (pool.c) has the
 * writer leave a complete results file at NAME (dm_results_writer_save). `may_replace`:
 * NAME may be replaced though no save point put it there (--force, --resume). */
void dm_results_writer_set_saves(dm_results_writer *w, double seconds, bool may_replace);
#define DM_DEFAULT_SAVE_EVERY 600.0
double dm_results_writer_save_every(dm_results_writer *w);

/* What the save points did so far. */
typedef struct dm_save_stats {
    size_t saves, failures;
    double last_seconds, max_seconds, total_seconds; /* each save's own time */
    uint64_t last_bytes;           /* the size of the last file saved */
    dm_error last_error;           /* the last failure, when failures > 0 */
} dm_save_stats;
dm_save_stats dm_results_writer_save_stats(dm_results_writer *w);

/* One save point: the file so far (flushed, copied to ".NAME.save-PID") completed as the
 * file of an interrupted suite would be - the runs written, each run not written as
 * pending[i] says (a running run's snapshot, a run read back as it is; NULL: left out),
 * /summary, /sweeps, /tables - synced and renamed over NAME (the directory synced too).
 * The live file goes on unchanged. `results` is read only for the runs written. A NAME
 * that no save point of this writer put there is not replaced unless may_replace
 * (DM_EINPUT, the copy removed). A failure leaves NAME and the live file as they were. */
dm_status dm_results_writer_save(dm_results_writer *w, const dm_run_result *results,
                                 dm_run_result *const *pending, dm_error *err);
/* True once a write of the writer failed (its error was returned then). */
bool dm_results_writer_failed(dm_results_writer *w);

/* The whole file at once from results[] (open, add every run, finish). */
dm_status dm_results_write(const char *path, const dm_suite *suite,
                           const dm_run_result *results, const dm_sweep_fit *fits,
                           const char *start_time_utc, dm_error *err);

/* The temporary name the file at `path` is written under by process `pid`,
 * ".NAME.tmp-PID" in NAME's own directory. Returns 0, or -1 when it does not fit or
 * path names no file. */
int dm_results_temp_path(const char *path, long pid, char *buf, size_t size);

/* For --resume: reads back every run of the file at `path` whose id and configuration
 * hash match a run of `suite` and that completed (ok, diverged or failed), into
 * results[i] (which must be zeroed: DM_RUN_NOT_RUN); *kept counts them. With a
 * `writer` (may be NULL) each is written to it as it is read and its series freed, so
 * memory does not grow with the runs kept. An interrupted run with a checkpoint is read
 * too, status interrupted with result->checkpoint set, for dm_run_resume to continue
 * (not counted in *kept, not written); one without is left to run again. */
dm_status dm_results_read_runs(const char *path, const dm_suite *suite,
                               dm_run_result *results, dm_results_writer *writer,
                               size_t *kept, dm_error *err);

/* Every sweep of the file at `path` (its /sweeps groups), in the order of the runs
 * of /summary, into a new array (free with dm_sweep_summaries_free). A file that is not
 * ours, a file without /sweeps (damaged: every file has it), or a sweep whose attributes
 * or datasets are not as results/README.md says, is DM_EINPUT with one line naming it.
 * A schema 1 file has none to show. */
dm_status dm_results_read_sweeps(const char *path, dm_sweep_summary **sweeps, size_t *n,
                                 dm_error *err);

/* Every table of the file at `path` (its /tables groups; none in a file without
 * tables), into a new array (free it). A group not as results/README.md says is
 * DM_EINPUT with one line naming it. */
dm_status dm_results_read_tables(const char *path, dm_table_summary **tables, size_t *n,
                                 dm_error *err);

/* The suite text stored in a results file, where it came from and the folder its
 * relative paths were taken from (suite_folder; empty in files written before
 * 2026-12-02) (malloc'd text; source and folder of `size` bytes each). */
dm_status dm_results_read_suite_text(const char *path, char **text, char *source,
                                     char *folder, size_t size, dm_error *err);

/* ---- the summary table (table.c) ---- */

/* One summary row: the fields of /summary in the results file, those describing the
 * run (DM_SUMMARY_RUN_FIELDS) and the figures kept in /summary (DM_RUN_FIGURES). The
 * order of the fields here is not the file's: see dm_summary_columns. */
typedef struct dm_summary_row {
    DM_SUMMARY_RUN_FIELDS(DM_SUMMARY_RUN_FIELD)
    DM_RUN_FIGURES(DM_FIGURE_SUMMARY_FIELD)
} dm_summary_row;

void dm_summary_row_fill(dm_summary_row *row, const dm_run_spec *spec,
                         const dm_run_result *result);

void dm_table_print(FILE *out, const dm_summary_row *rows, size_t n, dm_table_format format);
/* The sweep table: text (each sweep's orders and point counts, then the runs a fit
 * left out and why), or CSV and JSON (every written run of every sweep with its codes).
 * A sweep none of whose runs started is not listed; dm_sweeps_listed counts the rest. */
void dm_sweep_table_print(FILE *out, const dm_sweep_summary *sweeps, size_t n,
                          dm_table_format format);
size_t dm_sweeps_listed(const dm_sweep_summary *sweeps, size_t n);

/* Reads /summary back from a results file (for `show`). Allocates *rows. */
dm_status dm_results_read_summary(const char *path, dm_summary_row **rows, size_t *n,
                                  dm_error *err);

/* The `config` text of each of the n runs of `rows` (their /summary, read from the file
 * at `path`), read from /runs/<id>, into a new array in the order of `rows` (free it).
 * A run without its group or its config is DM_EINPUT with one line naming it. */
dm_status dm_results_read_configs(const char *path, const dm_summary_row *rows, size_t n,
                                  char (**configs)[DM_CONFIG_MAX], dm_error *err);

#endif
