/* run_figures.h — the one list of what a run measured, and of the /summary columns
 * that describe the run.
 *
 * Every part that handles a run's figures is driven from DM_RUN_FIGURES: the fields of
 * dm_run_metrics and dm_summary_row (harness.h), the attributes of /runs/<id> written
 * and read back for --resume and the /summary compound type and its reader
 * (results.c), the packed result sent between MPI ranks (result_pack.c), the summary
 * row, the CSV, the JSON and the text table's columns (table.c). tests/test_figures.c
 * checks that results/README.md lists exactly these fields, with their types and
 * meanings, so the file contract cannot drift from the program.
 *
 * Adding a metric: one row here, the line that computes it in runner.c's
 * finish_metrics, and its line in results/README.md.
 */
#ifndef DM_RUN_FIGURES_H
#define DM_RUN_FIGURES_H

#include <stddef.h>

/* X(name, kind, home, in, width, column, format, meaning)
 *
 *  name     its name everywhere: the attribute, the /summary field, the CSV and JSON key,
 *           and the C field where it lives
 *  kind     REAL     a double (NaN: not measured)
 *           COUNT    a uint64
 *           STATUS   the run's dm_run_status, stored as its name (dm_run_status_name)
 *           TEXT     a char array, stored as text
 *           RULE     one of the energy-scale rules (dm_energy_scale_rules), as text
 *           PER_INVARIANT  a double per extra invariant of the problem, stored as the
 *                    attribute max_<invariant>_error
 *  home     where it lives in dm_run_result:
 *           metrics    a field of dm_run_metrics, declared by this list
 *           counts     a field of dm_counts (integrators/include/method.h), the work
 *                      the method counted: metrics.counts.<name>
 *           result     a field of dm_run_result itself
 *           crossings  a field of dm_crossings: crossings.<name without "crossings_">
 *  in       S   a field of /summary (so of `show`, CSV and JSON)
 *           A   an attribute of /runs/<id>
 *           SA  both
 *  width    bytes of a text field in /summary with its NUL (0 for numbers)
 *  column   heading of its column in the text table ("" for none; only /summary fields)
 *  format   printf format of a REAL column ("" otherwise)
 *  meaning  one line; results/README.md repeats it word for word
 *
 * The order is that of the attributes. In /summary (and CSV, JSON) the columns describing
 * the run (DM_SUMMARY_RUN_FIELDS) come first, then the figures by kind (counts, reals,
 * texts) each in this order; the text table shows the run, its status, then the counts
 * and reals with a column.
 */
#define DM_RUN_FIGURES(X)                                                                  \
    X(status, STATUS, result, SA, 16, "status", "",                                        \
      "ok, diverged, failed, interrupted or swamped")                                               \
    X(reason, TEXT, result, SA, 256, "", "",                                               \
      "why not ok; empty when ok (/summary keeps its first 255 bytes, /runs/<id> all)")    \
    X(regime_change, TEXT, result, SA, DM_REGIME_CHANGE_MAX, "", "",                      \
      "empty, or the end of the first bucket whose every energy lay in another regime: from -> to at t")       \
    X(energy_scale, REAL, metrics, A, 0, "", "", "E_scale of dE")                          \
    X(energy_scale_rule, RULE, metrics, A, 0, "", "",                                      \
      "how E_scale was chosen: H0 - V_min, H0 - T_min - V_min or |H0|")                    \
    X(max_energy_error, REAL, metrics, SA, 0, "max |dE|", "%.3e",                          \
      "max over every step of |dE|, dE = (H - H0) / E_scale")                              \
    X(final_energy_error, REAL, metrics, SA, 0, "final dE", "%.3e", "dE at the end")       \
    X(energy_drift_per_period, REAL, metrics, SA, 0, "drift/period", "%.3e",               \
      "least-squares slope of dE against t / T")                                           \
    X(drift_exponent, REAL, metrics, SA, 0, "drift exp", "%.2f",                           \
      "exponent p of the growth of the energy error, t^p (see \"The drift exponent\")")     \
    X(drift_class, TEXT, result, SA, DM_DRIFT_CLASS_MAX, "drift", "",                      \
      "bounded, random_walk, linear, faster (from drift_exponent), or unmeasured")         \
    X(drift_note, TEXT, result, A, 0, "", "",                                              \
      "why drift_exponent is NaN, or a note on a bounded run; empty otherwise")            \
    X(period_exact, REAL, metrics, SA, 0, "", "",                                          \
      "closed-form period T of the starting state")                                        \
    X(period_measured, REAL, metrics, SA, 0, "measured period", "%.10g",                   \
      "period measured from section crossings")                                            \
    X(period_note, TEXT, result, A, 0, "", "",                                             \
      "why period_measured is NaN though it was to be measured; empty otherwise")          \
    X(period_rel_error, REAL, metrics, SA, 0, "period err", "%.3e",                        \
      "(measured - exact) / exact")                                                        \
    X(phase_error_per_period, REAL, metrics, SA, 0, "phase/period", "%.3e",                \
      "slope of the phase error against crossing number (radians)")                        \
    X(phase_error_final, REAL, metrics, SA, 0, "final phase err", "%.3e",                  \
      "phase error at the last crossing (radians)")                                        \
    X(max_global_error, REAL, metrics, SA, 0, "", "",                                       \
      "max phase-space distance to the exact solution, or to the reference up to reference_valid_until (NaN when neither)") \
    X(max_reference_error, REAL, metrics, SA, 0, "", "",                                  \
      "max of the reference's error estimate over the bucket ends (NaN without reference: true)") \
    X(reference_valid_until, REAL, metrics, SA, 0, "", "",                                \
      "the last bucket end before the reference's error estimate first exceeds 1e-3 of the global error or of the start's size in phase space (NaN without a reference)") \
    X(reference_step, REAL, metrics, A, 0, "", "",                                        \
      "step of the reference trajectory, the finer of its two (NaN without one)")        \
    X(reference_force_evals, COUNT, metrics, A, 0, "", "",                                \
      "gradient evaluations of the reference trajectories, the choice of their step included") \
    X(reference_seconds, REAL, metrics, A, 0, "", "",                                     \
      "wall-clock time of the reference trajectories, the choice of their step included") \
    X(reference_arithmetic, TEXT, result, A, 0, "", "",                                   \
      "the type the reference was computed in: __float128 or long double; empty without one") \
    X(reference_note, TEXT, result, A, 0, "", "",                                         \
      "why the reference falls short of its tolerance or of the run's horizon; empty otherwise") \
    X(closest_approach, REAL, metrics, SA, 0, "", "",                                      \
      "smallest distance between two bodies where the method evaluated forces (N-body; NaN otherwise)") \
    X(lyapunov_exponent, REAL, metrics, SA, 0, "", "",                                     \
      "largest Lyapunov exponent, 1 / time unit (NaN unless the suite asks for it: lyapunov: true)") \
    X(t_reached, REAL, metrics, A, 0, "", "", "time of the last step taken")               \
    X(wall_seconds, REAL, metrics, SA, 0, "", "", "wall-clock time of the run")            \
    X(ns_per_step, REAL, metrics, SA, 0, "ns/step", "%.1f",                                \
      "wall-clock nanoseconds per step")                                                   \
    X(force_evals_per_period, REAL, metrics, SA, 0, "", "",                                \
      "grad V evaluations per period T: force_evals / (t_reached / T); NaN when no step ran") \
    X(crossings_total, COUNT, crossings, A, 0, "", "", "section crossings seen")           \
    X(crossings_stride, COUNT, crossings, A, 0, "", "",                                    \
      "the kept crossings are those whose number is a multiple of this")                   \
    X(steps, COUNT, metrics, S, 0, "steps", "", "steps taken")                             \
    X(steps, COUNT, counts, A, 0, "", "", "steps counted by the method")                   \
    X(force_evals, COUNT, counts, SA, 0, "force evals", "",                                \
      "grad V evaluations counted by the method")                                          \
    X(velocity_evals, COUNT, counts, A, 0, "", "",                                         \
      "grad T evaluations counted by the method")                                          \
    X(rhs_evals, COUNT, counts, A, 0, "", "", "right-hand-side calls (adaptive methods)")  \
    X(jac_evals, COUNT, counts, A, 0, "", "", "Jacobian evaluations (adaptive methods)")   \
    X(error_test_fails, COUNT, counts, A, 0, "", "",                                       \
      "steps refused by the error test (adaptive methods)")                                \
    X(conv_fails, COUNT, counts, A, 0, "", "",                                             \
      "nonlinear solver convergence failures (adaptive methods)")                          \
    X(nonlin_iters, COUNT, counts, A, 0, "", "",                                           \
      "nonlinear solver iterations (implicit and adaptive methods)")                       \
    X(max_iters_in_step, COUNT, counts, A, 0, "", "",                                      \
      "most nonlinear iterations one step needed (implicit and adaptive methods)")         \
    X(max_invariant_error, PER_INVARIANT, metrics, A, 0, "", "",                           \
      "max unit-free error of each extra invariant the problem has (see below)")          \
    X(times_continued, COUNT, metrics, SA, 0, "", "",                                      \
      "times the run was continued from a checkpoint (run --resume); 0 when it ran in one go")

/* The /summary columns that describe the run rather than measure it, filled from its
 * spec by dm_summary_row_fill. X(name, kind, width, meaning), kind TEXT, INT (int32) or
 * REAL. */
#define DM_SUMMARY_RUN_FIELDS(X)                                                           \
    X(run_id, TEXT, DM_RUN_ID_MAX, "the run's id, also its group name under /runs")        \
    X(hash, TEXT, DM_HASH_HEX, "16 hex digits: 64-bit FNV-1a of the run's config text")    \
    X(problem, TEXT, 32, "problem id")                                                     \
    X(regime, TEXT, 32,                                                                    \
      "regime of the starting state (libration, rotation, bound, ...)")                    \
    X(method, TEXT, 32, "method id")                                                       \
    X(order, INT, 0, "the method's classical order")                                       \
    X(order_found, REAL, 0, "the order found for a table typed in the suite (order "        \
      "conditions or measured: /tables); NaN for a built-in method")                       \
    X(h, REAL, 0, "step size (NaN for adaptive methods)")                                  \
    X(rtol, REAL, 0, "relative tolerance (NaN for fixed-step methods)")

/* ---- the declarations the lists make (used by harness.h) ---- */

#define DM_FIGURE_C_REAL(name) double name;
#define DM_FIGURE_C_COUNT(name) uint64_t name;
#define DM_FIGURE_C_RULE(name) const char *name;
#define DM_FIGURE_C_PER_INVARIANT(name) double name[DM_MAX_INVARIANTS];
#define DM_FIGURE_IN_METRICS_metrics(name, kind) DM_FIGURE_C_##kind(name)
#define DM_FIGURE_IN_METRICS_counts(name, kind)
#define DM_FIGURE_IN_METRICS_result(name, kind)
#define DM_FIGURE_IN_METRICS_crossings(name, kind)
/* A field of dm_run_metrics for every figure whose home is metrics. */
#define DM_FIGURE_METRICS_FIELD(name, kind, home, in, width, column, format, meaning)      \
    DM_FIGURE_IN_METRICS_##home(name, kind)

#define DM_SUMMARY_C_REAL(name, width) double name;
#define DM_SUMMARY_C_COUNT(name, width) uint64_t name;
#define DM_SUMMARY_C_INT(name, width) int name;
#define DM_SUMMARY_C_TEXT(name, width) char name[width];
#define DM_SUMMARY_C_STATUS(name, width) char name[width];
#define DM_SUMMARY_IN_S(name, kind, width) DM_SUMMARY_C_##kind(name, width)
#define DM_SUMMARY_IN_SA(name, kind, width) DM_SUMMARY_C_##kind(name, width)
#define DM_SUMMARY_IN_A(name, kind, width)
/* A field of dm_summary_row for every figure in /summary. */
#define DM_FIGURE_SUMMARY_FIELD(name, kind, home, in, width, column, format, meaning)      \
    DM_SUMMARY_IN_##in(name, kind, width)
/* A field of dm_summary_row for every column describing the run. */
#define DM_SUMMARY_RUN_FIELD(name, kind, width, meaning) DM_SUMMARY_C_##kind(name, width)

/* Where a figure lives in dm_run_result (for offsetof). */
#define DM_FIGURE_PATH_metrics(name) metrics.name
#define DM_FIGURE_PATH_counts(name) metrics.counts.name
#define DM_FIGURE_PATH_result(name) name
#define DM_FIGURE_PATH_crossings(name) crossings.DM_CROSSINGS_FIELD_##name
#define DM_CROSSINGS_FIELD_crossings_total total
#define DM_CROSSINGS_FIELD_crossings_stride stride

/* ---- the lists at run time (figures.c) ---- */

typedef enum dm_figure_kind {
    DM_FIGURE_REAL,
    DM_FIGURE_COUNT,
    DM_FIGURE_INT,
    DM_FIGURE_STATUS,
    DM_FIGURE_TEXT,
    DM_FIGURE_RULE,
    DM_FIGURE_PER_INVARIANT
} dm_figure_kind;

enum { DM_FIGURE_IN_SUMMARY = 1u, DM_FIGURE_IN_RUN = 2u };

#define DM_FIGURE_NOWHERE ((size_t)-1)

typedef struct dm_figure {
    const char *name;
    dm_figure_kind kind;
    unsigned in;             /* DM_FIGURE_IN_SUMMARY and/or DM_FIGURE_IN_RUN */
    size_t at;               /* offset in dm_run_result (DM_FIGURE_NOWHERE: from the spec) */
    size_t size;             /* bytes of that field in dm_run_result */
    size_t row_at;           /* offset in dm_summary_row (DM_FIGURE_NOWHERE: not there) */
    size_t width;            /* bytes of a text field in /summary, with its NUL */
    const char *column;      /* text-table heading, "" for none */
    const char *format;      /* printf format of a REAL column */
    const char *meaning;
} dm_figure;

/* Every row of DM_RUN_FIGURES, in its order. */
extern const dm_figure dm_run_figures[];
extern const size_t dm_n_run_figures;

/* Every row of DM_SUMMARY_RUN_FIELDS, in its order. */
extern const dm_figure dm_summary_run_fields[];
extern const size_t dm_n_summary_run_fields;

/* The columns of /summary in file order into columns[0..n), n returned: those
 * describing the run, then the figures in /summary, counts, reals, texts, each kind in
 * list order. */
#define DM_SUMMARY_COLUMNS_MAX 64
size_t dm_summary_columns(const dm_figure *columns[DM_SUMMARY_COLUMNS_MAX]);

/* The energy-scale rules a RULE figure may hold (the runner's strings), NULL-ended. */
extern const char *const dm_energy_scale_rules[];

/* The rule among dm_energy_scale_rules spelled `text`, or NULL. */
const char *dm_energy_scale_rule_named(const char *text);

/* The attribute name of a PER_INVARIANT figure for invariant `invariant`:
 * "max_<invariant>_error". */
void dm_figure_invariant_name(char *buf, size_t size, const char *invariant);

#endif
