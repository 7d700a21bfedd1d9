/* cmd_run.c — `driftmark run [SUITE] [-o OUT] [-j N] [--force] [--resume FILE]`:
 * validate the whole suite, run it on a pool of threads, write the results file,
 * print the summary table.
 *
 * Nothing is lost: the file is written beside its name and renamed into place; an
 * existing file is replaced only with --force; SIGINT / SIGTERM end the running runs at
 * their next bucket, mark them interrupted and still write every completed run; and
 * --resume FILE runs only what that file does not hold complete.
 *
 * Under mpirun (a build with MPI) the same command spreads the runs over the ranks:
 * rank 0 does everything this file does alone, with mpi_run.c handing out the runs and
 * gathering their results instead of the thread pool below; the other ranks only run
 * what rank 0 hands them. */
#include <getopt.h>
#include <inttypes.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"
#include "dm_clock.h"
#include "harness.h"
#include "mpi_run.h"

static volatile sig_atomic_t stop_signal = 0;
static volatile int stop_flag = 0;

static void on_signal(int sig)
{
    stop_signal = sig;
    stop_flag = 1;
}

/* The time left from the fraction of the work done so far (the finished runs and the
 * steps of the running ones), or "?" before a thousandth of it is done. */
static void time_left(char *out, size_t size, double work, double elapsed)
{
    if (work >= 1e-3 && work <= 1.0)
        snprintf(out, size, "%.0fs", elapsed * (1.0 - work) / work);
    else
        snprintf(out, size, "?");
}

/* Not on a terminal: one plain line per finished run ("K/N done: RUN", and ": STATUS"
 * after a run that did not end ok). */
static void progress_lines(size_t done, size_t total, double work, const char *current,
                           double elapsed)
{
    static size_t shown;
    if (done == shown || current[0] == '\0')
        return;
    shown = done;
    char left[32];
    time_left(left, sizeof left, work, elapsed);
    fprintf(stderr, "driftmark: run: %zu/%zu done: %s (%.0fs elapsed, ~%s left)\n", done,
            total, current, elapsed, left);
}

/* One line, redrawn in place: runs done of total, the current run, elapsed, left. */
/* `work` is the estimated fraction of the suite's work done (runs differ in cost by
 * orders of magnitude, so the time left is not judged by the count of runs). */
static void progress(size_t done, size_t total, double work, const char *current,
                     double elapsed)
{
    char left[32] = "?";
    time_left(left, sizeof left, work, elapsed);
    int width = 24;
    int filled = total > 0 ? (int)((double)width * (double)done / (double)total) : width;
    char bar[32];
    for (int i = 0; i < width; i++)
        bar[i] = i < filled ? '#' : '.';
    bar[width] = '\0';
    fprintf(stderr, "\r\033[K[%s] %zu/%zu  %.0fs elapsed, ~%s left  %s", bar, done, total,
            elapsed, left, current);
    fflush(stderr);
}

static int default_jobs(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n > 0 ? (int)n : 1;
}

static void print_usage(FILE *out)
{
    fprintf(out, "usage: driftmark run [SUITE.yaml] [-o OUT.h5] [-j JOBS] [--force] "
                 "[--save-every S]\n"
                 "       driftmark run --resume FILE.h5 [-j JOBS] [--save-every S]\n"
                 "  with no SUITE, runs the built-in default suite\n"
                 "  -o, --output FILE   results file (default: the suite's output)\n"
                 "  -j, --jobs N        runs at once (default: every core)\n"
                 "  -f, --force         replace an existing results file\n"
                 "  -r, --resume FILE   continue the suite stored in FILE: keep its completed\n"
                 "                      runs, run the rest, and rewrite FILE\n"
                 "      --save-every S  every S seconds of the run (default 600; 0: never)\n"
                 "                      leave a complete file at OUT: the finished runs, and\n"
                 "                      the running ones as interrupted with a checkpoint, so\n"
                 "                      --resume OUT continues after a kill -9 or a crash\n"
                 "      --plan          list the runs, their steps, work and memory and a\n"
                 "                      rough time (from a short probe), and run nothing\n");
    if (dm_mpi_built())
        fprintf(out, "  under mpirun -n N (this build has MPI) the runs are spread over N\n"
                     "  processes of -j JOBS threads each (default: the cores each may use);\n"
                     "  rank 0 writes the one results file\n");
}

/* Loads the suite to run: from a file, the built-in default, or the one stored in the
 * results file being resumed (so a resumed file can only continue its own suite).
 * `output` dm_suite_output_unchecked: nothing about the output is checked (--plan). */
static dm_status load_suite(dm_suite *suite, const char *path, const char *output,
                            const char *resume, dm_error *err)
{
    if (resume == NULL)
        return path ? dm_suite_load(suite, path, output, err)
                    : dm_suite_default(suite, output, err);
    char *text = NULL;
    char source[1024], folder[sizeof source];
    dm_cli_guard_reads("run", resume, NULL);
    dm_status st = dm_results_read_suite_text(resume, &text, source, folder, sizeof source, err);
    dm_cli_unguard_reads();
    if (st != DM_OK)
        return st == DM_EIO ? DM_EINPUT : st;
    /* relative paths from the suite's folder when it was first read, as recorded */
    st = dm_suite_parse_in(suite, text, strlen(text), source, folder,
                           output == dm_suite_output_unchecked ? output : resume, err);
    free(text);
    if (st == DM_EINPUT) { /* the places named are in the copy the file holds */
        char msg[sizeof err->msg];
        snprintf(msg, sizeof msg, "%s", err->msg);
        dm_error_set(err, st, "the suite %s holds (a copy of %s) does not read: %s", resume,
                     source, msg);
    }
    return st;
}

/* Rank 0 (or the one process): loads the suite, refuses to replace a file without
 * --force, opens the results file under its temporary name (*writer), and reads back
 * what --resume keeps, writing each kept run to it at once. Returns 0 with *suite,
 * *results and *writer made, or the exit status after printing the one-line error
 * (nothing left made, no temporary file left). */
static int prepare(dm_suite *suite, dm_run_result **results, dm_results_writer **writer,
                   const char *started, const char *path, const char *output,
                   const char *resume, bool force)
{
    dm_error err = { 0 };
    dm_status st = load_suite(suite, path, output, resume, &err);
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        return st == DM_EINPUT ? 2 : 1;
    }
    /* the file is put in place by a rename over NAME: never over a device, a folder or
     * a pipe (as root, --force once turned /dev/null into a results file), nor over the
     * suite being read */
    struct stat out_st, suite_st;
    if (stat(suite->output, &out_st) == 0 &&
        (!S_ISREG(out_st.st_mode) ||
         (path != NULL && stat(path, &suite_st) == 0 && suite_st.st_dev == out_st.st_dev &&
          suite_st.st_ino == out_st.st_ino))) {
        fprintf(stderr, "driftmark: run: %s is %s: results are written only to a file of "
                        "their own (name another with -o)\n", suite->output,
                !S_ISREG(out_st.st_mode) ? "not a regular file" : "the suite file itself");
        dm_suite_free(suite);
        return 2;
    }
    if (resume == NULL && !force && access(suite->output, F_OK) == 0) {
        fprintf(stderr, "driftmark: run: %s already exists (add --force to replace it, or "
                        "--resume %s to continue it)\n", suite->output, suite->output);
        dm_suite_free(suite);
        return 2;
    }
    *results = calloc(suite->n_runs ? suite->n_runs : 1, sizeof **results);
    if (*results == NULL) {
        fprintf(stderr, "driftmark: run: out of memory for %zu runs\n", suite->n_runs);
        dm_suite_free(suite);
        return 1;
    }
    st = dm_results_writer_open(suite->output, suite, started, writer, &err);
    size_t kept = 0;
    if (st == DM_OK && resume != NULL) {
        char temp[4096];
        bool named = dm_results_temp_path(suite->output, (long)getpid(), temp, sizeof temp) == 0;
        dm_cli_guard_reads("run", resume, named ? temp : NULL);
        st = dm_results_read_runs(resume, suite, *results, *writer, &kept, &err);
        dm_cli_unguard_reads();
    }
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        dm_results_writer_abort(*writer);
        *writer = NULL;
        dm_cli_free_results(*results, suite->n_runs);
        *results = NULL;
        dm_suite_free(suite);
        return st == DM_EINPUT ? 2 : 1;
    }
    if (resume != NULL) {
        size_t continued = 0;
        for (size_t i = 0; i < suite->n_runs; i++)
            continued += (*results)[i].checkpoint != NULL;
        fprintf(stderr, "driftmark: run: %s: keeping %zu completed runs, running %zu", resume,
                kept, suite->n_runs - kept);
        if (continued > 0)
            fprintf(stderr, " (%zu continued from their checkpoints)", continued);
        fputc('\n', stderr);
    }
    return 0;
}

/* Ctrl-C, kill and a hangup end the runs at their next bucket; the file is still written.
 * SIGUSR1 does the same: mpirun forwards it to every rank as it is (it turns SIGINT and
 * SIGTERM into SIGTERM followed by SIGKILL one second later), and batch schedulers can
 * send it ahead of a time limit. SIGXFSZ is ignored so that a file-size limit shows as
 * a write error, not a crash. */
static void catch_signals(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    sigaction(SIGUSR1, &sa, NULL);
    /* a hangup (a dropped terminal or ssh session) stops the runs the same way, unless
     * it is ignored (nohup): then the run goes on, as asked */
    struct sigaction hup;
    if (sigaction(SIGHUP, NULL, &hup) == 0 && hup.sa_handler != SIG_IGN)
        sigaction(SIGHUP, &sa, NULL);
    signal(SIGXFSZ, SIG_IGN);
}

typedef struct run_options {
    const char *suite_path;        /* NULL: the built-in default suite */
    const char *output, *resume;
    bool force;
    bool plan;
    int jobs;
    double save_every;             /* seconds between save points; 0: none */
} run_options;

/* Reads the command line into *o. Returns -1 to go on, else the exit status (after
 * --help, or a usage error). */
static int parse_options(int argc, char **argv, const dm_mpi_world *world, run_options *o)
{
    static const struct option options[] = {
        { "output", required_argument, NULL, 'o' },
        { "jobs", required_argument, NULL, 'j' },
        { "force", no_argument, NULL, 'f' },
        { "resume", required_argument, NULL, 'r' },
        { "plan", no_argument, NULL, 'P' },
        { "save-every", required_argument, NULL, 'S' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    *o = (run_options){ .jobs = dm_mpi_default_jobs(world, default_jobs()),
                        .save_every = DM_DEFAULT_SAVE_EVERY };
    int c;
    optind = 1;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:j:fr:h", options, NULL)) != -1) {
        switch (c) {
        case 'o': o->output = optarg; break;
        case 'f': o->force = true; break;
        case 'r': o->resume = optarg; break;
        case 'P': o->plan = true; break;
        case 'S':
            if (dm_parse_double(optarg, &o->save_every) != 0 || !(o->save_every >= 0) ||
                o->save_every > 1e9)
                return dm_cli_usage_error("run", "--save-every takes seconds from 0 (never) "
                                          "to 1e9, not '%s'", optarg);
            break;
        case 'j': {
            double v;
            if (dm_parse_double(optarg, &v) != 0 || v < 1 || v > 1024 || v != floor(v))
                return dm_cli_usage_error("run", "--jobs takes a whole number from 1 to 1024, "
                                          "not '%s'", optarg);
            o->jobs = (int)v;
            break;
        }
        case 'h': print_usage(stdout); return 0;
        case ':':
            return dm_cli_usage_error("run", "option '%s' needs a value", argv[optind - 1]);
        case '?':
        default:
            return dm_cli_usage_error("run", "unknown option '%s' (see driftmark run --help)",
                                      argv[optind - 1]);
        }
    }
    if (argc - optind > 1)
        return dm_cli_usage_error("run", "expected at most one suite file, got %d",
                                  argc - optind);
    if (o->resume != NULL && (optind < argc || o->output != NULL))
        return dm_cli_usage_error("run", "--resume FILE continues the suite stored in FILE "
                                  "and rewrites FILE: give no suite file and no -o with it");
    o->suite_path = optind < argc ? argv[optind] : NULL;
    return -1;
}

/* Runs order[0..n_order) on this process's threads (pool.c) or, under mpirun, on every
 * rank (mpi_run.c); each result lands at its own index either way. Returns 0, or 1
 * when a run could not be run (reported). */
static int run_runs(const dm_mpi_world *world, const dm_suite *suite, dm_run_result *results,
                    dm_results_writer *writer, const size_t *order, size_t n_order, int jobs)
{
    bool tty = isatty(STDERR_FILENO);
    if (world->size == 1) {
        dm_error err = { 0 };
        dm_status st = dm_run_pool(suite, results, writer, order, n_order, jobs, &stop_flag,
                                   tty ? progress : progress_lines, NULL, &err);
        if (tty)
            fputc('\n', stderr);
        if (st == DM_OK)
            return 0;
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        return 1;
    }
    /* rank 0 hands the runs out to every rank (its own threads too) in this order */
    dm_mpi_job job = { .suite = suite, .results = results, .writer = writer, .order = order,
                       .n_order = n_order, .jobs = jobs, .stop = &stop_flag,
                       .stop_signal = &stop_signal,
                       .progress = tty ? progress : progress_lines };
    dm_mpi_coordinate(world, &job);
    if (tty)
        fputc('\n', stderr);
    fprintf(stderr, "driftmark: run: spread over %d ranks (%d threads at rank 0); %zu "
                    "runs came from the other ranks, %llu bytes", world->size, jobs,
            job.runs_received, (unsigned long long)job.bytes_received);
    if (job.checkpoints_sent > 0)
        fprintf(stderr, "; %zu interrupted runs went to them with their checkpoints",
                job.checkpoints_sent);
    fputc('\n', stderr);
    if (!job.failed)
        return 0;
    fprintf(stderr, "driftmark: run: %s\n", job.error.msg);
    return 1;
}

/* Completes the file of every run that ran (whatever stopped the others; each is in it
 * already), prints the summary table, the sweep fits, where the file is, and how to
 * continue after a signal. `fits` and `rows` have room for every sweep and run. Returns
 * the exit status, from `code`, the status so far. The writer is finished or abandoned
 * (a write that failed was reported when it failed). */
static int write_and_report(const dm_suite *suite, const dm_run_result *results,
                            dm_results_writer *writer, dm_sweep_fit *fits,
                            dm_summary_row *rows, double t0, int code)
{
    dm_error err = { 0 };
    for (size_t w = 0; w < suite->n_sweeps; w++)
        if (dm_sweep_fit_compute(suite, &suite->sweeps[w], results, &fits[w], &err) != DM_OK) {
            fprintf(stderr, "driftmark: run: %s\n", err.msg);
            code = 1;
        }
    size_t n_rows = 0;
    for (size_t i = 0; i < suite->n_runs; i++)
        if (results[i].status != DM_RUN_NOT_RUN)
            dm_summary_row_fill(&rows[n_rows++], &suite->runs[i], &results[i]);
    bool written = false;
    if (n_rows == 0 || dm_results_writer_failed(writer)) {
        dm_results_writer_abort(writer);
        code = n_rows == 0 ? code : 1;
    } else if (dm_results_writer_finish(writer, results, fits, &err) != DM_OK) {
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        code = 1;
    } else {
        written = true;
    }
    dm_table_print(stdout, rows, n_rows, DM_TABLE_TEXT);
    if (suite->n_sweeps > 0) {
        /* the sweep table, as `show` prints it from the file */
        dm_sweep_summary *table = calloc(suite->n_sweeps, sizeof *table);
        size_t n_table = 0;
        for (size_t w = 0; table != NULL && w < suite->n_sweeps; w++) {
            if (dm_sweep_summary_fill(&table[n_table], suite, &suite->sweeps[w], results,
                                      &fits[w], &err) != DM_OK) {
                fprintf(stderr, "driftmark: run: %s\n", err.msg);
                code = 1;
                break;
            }
            n_table++;
        }
        if (table == NULL) {
            fprintf(stderr, "driftmark: run: out of memory for the sweep table\n");
            code = 1;
        } else if (dm_sweeps_listed(table, n_table) > 0) {
            fputc('\n', stdout);
            dm_sweep_table_print(stdout, table, n_table, DM_TABLE_TEXT);
        }
        dm_sweep_summaries_free(table, n_table);
    }
    if (suite->n_tables > 0) {
        /* the tables typed in the suite: claimed and found orders, as `show` prints them */
        dm_table_summary *tables = calloc(suite->n_tables, sizeof *tables);
        for (size_t i = 0; tables != NULL && i < suite->n_tables; i++)
            dm_table_summary_fill(&tables[i], suite->tables[i]);
        if (tables != NULL) {
            fputc('\n', stdout);
            dm_tables_print(stdout, tables, suite->n_tables, DM_TABLE_TEXT);
        }
        free(tables);
    }
    if (written)
        printf("\nresults: %s (%zu of %zu runs, %.1f s)\n", suite->output, n_rows,
               suite->n_runs, dm_clock_seconds() - t0);
    if (stop_signal) {
        if (written)
            fprintf(stderr, "driftmark: run: stopped by signal %d; completed runs are in %s; "
                            "continue with: driftmark run --resume %s\n", (int)stop_signal,
                    suite->output, suite->output);
        else
            fprintf(stderr, "driftmark: run: stopped by signal %d before any run completed; "
                            "nothing written\n", (int)stop_signal);
        code = 128 + (int)stop_signal;
    }
    return code;
}

/* One line on the save points taken (their cost against the time the runs took), or
 * on the last that failed; nothing when there were none. */
static void report_saves(const dm_suite *suite, dm_results_writer *writer, double seconds)
{
    dm_save_stats s = dm_results_writer_save_stats(writer);
    if (s.saves > 0)
        fprintf(stderr, "driftmark: run: %zu save points to %s, %.1f ms each on average "
                        "(at most %.1f ms; %.3f %% of %.1f s), the last of %.1f MB\n",
                s.saves, suite->output, 1e3 * s.total_seconds / (double)s.saves,
                1e3 * s.max_seconds, seconds > 0 ? 100.0 * s.total_seconds / seconds : 0.0,
                seconds, (double)s.last_bytes / 1e6);
    if (s.failures > 0)
        fprintf(stderr, "driftmark: run: %zu save points not written; the last: %s\n",
                s.failures, s.last_error.msg);
}

/* Rank 0 (or the one process), with the suite loaded and checked and the file open:
 * runs what `results` does not hold yet, longest first, then completes the file and
 * reports. Returns the exit status. */
static int run_suite(const dm_mpi_world *world, const dm_suite *suite, dm_run_result *results,
                     dm_results_writer *writer, int jobs)
{
    /* 1. room for the order of the runs, the sweep fits and the table */
    size_t n = suite->n_runs ? suite->n_runs : 1;
    size_t *order = malloc(n * sizeof *order);
    dm_sweep_fit *fits = calloc(suite->n_sweeps ? suite->n_sweeps : 1, sizeof *fits);
    dm_summary_row *rows = calloc(n, sizeof *rows);
    int code = 0;
    if (order == NULL || fits == NULL || rows == NULL) {
        fprintf(stderr, "driftmark: run: out of memory for %zu runs\n", suite->n_runs);
        if (world->size > 1) {
            /* the other ranks wait for work: hand out none */
            dm_mpi_job job = { .suite = suite, .results = results, .order = order,
                               .n_order = 0, .jobs = 1, .stop = &stop_flag,
                               .stop_signal = &stop_signal };
            dm_mpi_coordinate(world, &job);
        }
        dm_results_writer_abort(writer);
        code = 1;
    } else {
        /* 2. the runs not kept from --resume, longest first */
        size_t n_order = 0;
        for (size_t i = 0; i < suite->n_runs; i++) {
            /* an interrupted run with its checkpoint is continued (on whatever rank) */
            if (results[i].status == DM_RUN_NOT_RUN || results[i].checkpoint != NULL)
                order[n_order++] = i;
        }
        dm_run_order_longest_first(suite, order, n_order);
        /* 3. run them (each written as it finishes), then complete the file and report */
        double t0 = dm_clock_seconds();
        code = run_runs(world, suite, results, writer, order, n_order, jobs);
        report_saves(suite, writer, dm_clock_seconds() - t0);
        code = write_and_report(suite, results, writer, fits, rows, t0, code);
    }
    free(order);
    if (fits != NULL)
        for (size_t w = 0; w < suite->n_sweeps; w++)
            dm_sweep_fit_free(&fits[w]);
    free(fits);
    free(rows);
    return code;
}

/* An adaptive run's work and time, from a probe of its first PLAN_PROBE_STEPS steps
 * (its step budget): force evaluations and seconds per unit of simulated time, times
 * its horizon. A CVODE step costs many force evaluations' time, so its time is probed
 * for itself, not derived from its work. False when the probe took no time step. */
#define PLAN_PROBE_STEPS 4096
#define PLAN_PROBE_SECONDS 5.0  /* all adaptive probes together; the rest are guessed */

static bool probe_adaptive(const dm_run_spec *spec, double *evals, double *seconds)
{
    dm_run_spec probe = *spec;
    probe.samples = 1;
    probe.step_budget = PLAN_PROBE_STEPS;
    probe.lyapunov = false;
    probe.reference = false;
    dm_run_result r;
    dm_error err = { 0 };
    double t0 = dm_clock_seconds();
    if (dm_run(&probe, &r, NULL, &err) != DM_OK)
        return false;
    double took = dm_clock_seconds() - t0, t = r.metrics.t_reached;
    bool ok = isfinite(t) && t > 0.0;
    if (ok) {
        double scale = spec->t_end / t;
        *evals = (double)r.metrics.counts.force_evals * scale;
        *seconds = took * scale;
    }
    dm_run_result_free(&r);
    return ok;
}

/* The time a force evaluation takes, from a probe of 2^20 steps of the first fixed-step
 * run still to run (which it names); NaN when there is none. */
static double probe_fixed(const dm_suite *suite, const dm_run_result *done,
                          const char **probed)
{
    for (size_t i = 0; i < suite->n_runs; i++) {
        if (suite->runs[i].method->adaptive ||
            (done != NULL && done[i].status != DM_RUN_NOT_RUN &&
             done[i].status != DM_RUN_INTERRUPTED))
            continue; /* adaptive, or kept by --resume: not what is left to run */
        dm_run_spec probe = suite->runs[i];
        double steps = 1048576.0;
        if (probe.t_end > steps * fabs(probe.method_config.h))
            probe.t_end = steps * fabs(probe.method_config.h);
        probe.samples = 1;
        probe.lyapunov = false;
        probe.reference = false; /* the method's time alone: the reference's is below */
        dm_run_result r;
        dm_error err = { 0 };
        double t0 = dm_clock_seconds();
        if (dm_run(&probe, &r, NULL, &err) != DM_OK)
            return NAN;
        double seconds = dm_clock_seconds() - t0, evals = (double)r.metrics.counts.force_evals;
        dm_run_result_free(&r);
        *probed = suite->runs[i].id;
        return evals > 0 ? seconds / evals : NAN;
    }
    return NAN;
}

/* --plan: every run with its steps (fixed-step runs; adaptive ones choose theirs), its
 * work in force evaluations (fixed steps: counted; adaptive: from a probe of its first
 * steps, or a guess from its tolerance once the probes have taken PLAN_PROBE_SECONDS),
 * the memory its result takes, its problem's period (closed form, or computed at suite
 * reading for a formula problem), and the suite's total with a rough time: the fixed-
 * step work times a force evaluation's time in a probe, plus the adaptive runs' probed
 * times, shared among `jobs` threads. Runs nothing to the end; writes nothing. */
static int print_plan(const dm_suite *suite, int jobs, const dm_run_result *done)
{
    const char *probed = NULL;
    double per_eval = probe_fixed(suite, done, &probed);
    double work = 0.0, bytes = 0.0, fixed_work = 0.0, adaptive_seconds = 0.0,
           probe_seconds = 0.0;
    size_t guessed = 0, kept = 0, continued = 0, planned = 0;
    printf("%-56s %16s %16s %12s %22s\n", "run", "steps", "force evals", "memory MiB",
           "period");
    for (size_t i = 0; i < suite->n_runs; i++) {
        const dm_run_spec *spec = &suite->runs[i];
        /* --resume: the runs the file keeps are left out; an interrupted one counts
         * what is left after its checkpoint */
        double left = 1.0;
        if (done != NULL && done[i].status != DM_RUN_NOT_RUN) {
            if (done[i].status != DM_RUN_INTERRUPTED || done[i].checkpoint == NULL) {
                kept += done[i].status != DM_RUN_INTERRUPTED;
                if (done[i].status != DM_RUN_INTERRUPTED)
                    continue;
            } else {
                continued++;
                left = spec->method->adaptive
                           ? 1.0 - done[i].metrics.t_reached / spec->t_end
                           : 1.0 - (double)done[i].metrics.counts.steps /
                                       (double)dm_run_fixed_steps(spec);
                left = fmin(1.0, fmax(0.0, left));
            }
        }
        planned++;
        double cost = left * dm_run_estimated_cost(spec), mem = dm_run_memory_bytes(spec);
        char steps[32] = "adaptive", evals[32];
        if (!spec->method->adaptive) {
            uint64_t all = dm_run_fixed_steps(spec);
            snprintf(steps, sizeof steps, "%" PRIu64,
                     left < 1.0 ? all - done[i].metrics.counts.steps : all);
            fixed_work += cost;
        } else {
            double e = NAN, sec = NAN, t0 = dm_clock_seconds();
            if (probe_seconds < PLAN_PROBE_SECONDS && probe_adaptive(spec, &e, &sec)) {
                cost = left * e;
                adaptive_seconds += left * sec;
            } else {
                guessed++;
                adaptive_seconds += cost * per_eval; /* NaN without a fixed-step probe */
            }
            probe_seconds += dm_clock_seconds() - t0;
        }
        snprintf(evals, sizeof evals, "%.4g", cost);
        char period[32] = "none";  /* a problem without one: horizon in time */
        if (isfinite(spec->inst.period))
            snprintf(period, sizeof period, "%.17g", spec->inst.period);
        printf("%-56s %16s %16s %12.1f %22s\n", spec->id, steps, evals, mem / 1048576.0,
               period);
        work += cost;
        bytes += mem;
    }
    printf("%zu runs, about %.4g force evaluations, %.1f MiB of series\n", planned, work,
           bytes / 1048576.0);
    if (done != NULL)
        printf("(--resume: %zu runs kept from the file are left out; %zu continue from their "
               "checkpoints, their steps and work what is left)\n", kept, continued);
    if (suite->n_runs > 0 && suite->runs[0].reference)
        printf("and a reference trajectory a run, in quad precision: up to %.3g gradients each "
               "(reference_force_evals), its step chosen from reference_tolerance when it runs, "
               "not in the rough time below\n", suite->runs[0].reference_force_evals);
    if (planned == 0) {
        printf("rough time: 0 s (nothing left to run)\n");
        return 0;
    }
    int threads = jobs < (int)planned ? jobs : (int)planned;
    double seconds = (fixed_work > 0.0 ? fixed_work * per_eval : 0.0) + adaptive_seconds;
    if (!isfinite(seconds)) {
        printf("rough time: not estimated (%zu adaptive run%s beyond the probes' %g s and no "
               "fixed-step run to time a force evaluation)\n", guessed, guessed == 1 ? "" : "s",
               PLAN_PROBE_SECONDS);
        return 0;
    }
    printf("rough time: %.0f s on %d thread%s (", seconds / threads, threads,
           threads == 1 ? "" : "s");
    if (probed != NULL)
        printf("%.3g ns a force evaluation in a probe of %s", 1e9 * per_eval, probed);
    if (suite->n_runs > 0 && adaptive_seconds > 0.0)
        printf("%sadaptive runs timed over their first %d steps%s", probed ? "; " : "",
               PLAN_PROBE_STEPS, guessed ? ", some guessed from their tolerance" : "");
    printf(")\n");
    return 0;
}

/* The command on one rank: read the command line; rank 0 loads the suite and every
 * rank learns it; rank 0 runs it (with the others' help) and writes the file, the
 * others run what rank 0 hands them. */
static int run_command(int argc, char **argv, dm_mpi_world *world)
{
    run_options o;
    int code = parse_options(argc, argv, world, &o);
    if (code >= 0)
        return code;

    dm_suite suite;
    memset(&suite, 0, sizeof suite);
    if (o.plan) {
        if (world->rank > 0)
            return 0;
        dm_error err = { 0 };
        /* writes nothing: the output is not checked (nor stale temporary files removed) */
        dm_status st = load_suite(&suite, o.suite_path, dm_suite_output_unchecked, o.resume,
                                  &err);
        if (st != DM_OK) {
            fprintf(stderr, "driftmark: run: %s\n", err.msg);
            return st == DM_EINPUT ? 2 : 1;
        }
        dm_run_result *done = NULL;
        if (o.resume) {
            size_t kept = 0;
            done = calloc(suite.n_runs ? suite.n_runs : 1, sizeof *done);
            dm_cli_guard_reads("run", o.resume, NULL);
            st = done == NULL ? dm_error_set(&err, DM_ENOMEM, "out of memory")
                              : dm_results_read_runs(o.resume, &suite, done, NULL, &kept, &err);
            dm_cli_unguard_reads();
            if (st != DM_OK) {
                fprintf(stderr, "driftmark: run: %s\n", err.msg);
                for (size_t i = 0; done != NULL && i < suite.n_runs; i++)
                    dm_run_result_free(&done[i]);
                free(done);
                dm_suite_free(&suite);
                return st == DM_EINPUT ? 2 : 1;
            }
        }
        code = print_plan(&suite, o.jobs, done);
        for (size_t i = 0; done != NULL && i < suite.n_runs; i++)
            dm_run_result_free(&done[i]);
        free(done);
        dm_suite_free(&suite);
        return code;
    }
    /* before the file is opened and the suite shared: a signal while they take their
     * time stops the runs before they start, and is not lost */
    catch_signals();
    dm_run_result *results = NULL;
    dm_results_writer *writer = NULL;
    char started[32];
    dm_cli_utc_now(started, sizeof started);
    code = world->rank == 0 ? prepare(&suite, &results, &writer, started, o.suite_path,
                                      o.output, o.resume, o.force)
                            : 0;
    if (code == 0 && writer != NULL) /* NAME is ours to replace when forced or resumed */
        dm_results_writer_set_saves(writer, o.save_every, o.force || o.resume != NULL);
    /* every rank learns rank 0's verdict; the others validate the same suite text */
    code = dm_mpi_share_suite(world, code, &suite);
    if (code != 0) {
        dm_results_writer_abort(writer);
        if (results != NULL) {
            dm_cli_free_results(results, suite.n_runs);
            dm_suite_free(&suite);
        }
        return code;
    }
    if (world->rank > 0) {
        dm_mpi_job job = { .suite = &suite, .jobs = o.jobs, .stop = &stop_flag,
                           .stop_signal = &stop_signal };
        dm_mpi_work(world, &job);
        /* a stop or a failure is reported by rank 0 (a failure was sent to it), whose
         * status every rank takes */
        code = job.failed ? 1 : 0;
    } else {
        code = run_suite(world, &suite, results, writer, o.jobs);
        dm_cli_free_results(results, suite.n_runs);
    }
    dm_suite_free(&suite);
    return code;
}

int dm_cmd_run(int argc, char **argv)
{
    dm_mpi_world world;
    dm_error err = { 0 };
    if (dm_mpi_begin(&world, &err) != DM_OK) {
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        return err.code == DM_EINPUT ? 2 : 1;
    }
    int code = run_command(argc, argv, &world);
    return dm_mpi_end(&world, code);
}
