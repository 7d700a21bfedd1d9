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
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "harness.h"
#include "mpi_run.h"

static volatile sig_atomic_t stop_signal = 0;
static volatile int stop_flag = 0;

static void on_signal(int sig)
{
    stop_signal = sig;
    stop_flag = 1;
}

static void utc_now(char *buf, size_t size)
{
    time_t now = time(NULL);
    struct tm tm;
    gmtime_r(&now, &tm);
    strftime(buf, size, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

static double seconds_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

/* One line, redrawn in place: runs done of total, the current run, elapsed, left. */
/* `work` is the estimated fraction of the suite's work done (runs differ in cost by
 * orders of magnitude, so the time left is not judged by the count of runs). */
static void progress(size_t done, size_t total, double work, const char *current,
                     double elapsed)
{
    char left[32] = "?";
    if (work > 0.0 && done > 0)
        snprintf(left, sizeof left, "%.0fs", elapsed * (1.0 - work) / work);
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
    fprintf(out, "usage: driftmark run [SUITE.yaml] [-o OUT.h5] [-j JOBS] [--force]\n"
                 "       driftmark run --resume FILE.h5 [-j JOBS]\n"
                 "  with no SUITE, runs the built-in default suite\n"
                 "  -o, --output FILE   results file (default: the suite's output)\n"
                 "  -j, --jobs N        runs at once (default: every core)\n"
                 "  -f, --force         replace an existing results file\n"
                 "  -r, --resume FILE   continue the suite stored in FILE: keep its completed\n"
                 "                      runs, run the rest, and rewrite FILE\n");
    if (dm_mpi_built())
        fprintf(out, "  under mpirun -n N (this build has MPI) the runs are spread over N\n"
                     "  processes of -j JOBS threads each (default: the cores each may use);\n"
                     "  rank 0 writes the one results file\n");
}

/* Loads the suite to run: from a file, the built-in default, or the one stored in the
 * results file being resumed (so a resumed file can only continue its own suite). */
static dm_status load_suite(dm_suite *suite, const char *path, const char *output,
                            const char *resume, dm_error *err)
{
    if (resume == NULL)
        return path ? dm_suite_load(suite, path, output, err)
                    : dm_suite_default(suite, output, err);
    char *text = NULL;
    char source[1024];
    dm_status st = dm_results_read_suite_text(resume, &text, source, sizeof source, err);
    if (st != DM_OK)
        return st == DM_EIO ? DM_EINPUT : st;
    st = dm_suite_parse(suite, text, strlen(text), source, resume, err);
    free(text);
    return st;
}

/* Rank 0 (or the one process): loads the suite, refuses to replace a file without
 * --force, and reads back what --resume keeps. Returns 0 with *suite and *results
 * made, or the exit status after printing the one-line error (nothing left made). */
static int prepare(dm_suite *suite, dm_run_result **results, const char *path,
                   const char *output, const char *resume, bool force)
{
    dm_error err = { 0 };
    dm_status st = load_suite(suite, path, output, resume, &err);
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        return st == DM_EINPUT ? 2 : 1;
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
    if (resume != NULL) {
        size_t kept = 0;
        st = dm_results_read_runs(resume, suite, *results, &kept, &err);
        if (st != DM_OK) {
            fprintf(stderr, "driftmark: run: %s\n", err.msg);
            for (size_t i = 0; i < suite->n_runs; i++)
                dm_run_result_free(&(*results)[i]);
            free(*results);
            *results = NULL;
            dm_suite_free(suite);
            return st == DM_EINPUT ? 2 : 1;
        }
        fprintf(stderr, "driftmark: run: %s: keeping %zu completed runs, running %zu\n", resume,
                kept, suite->n_runs - kept);
    }
    return 0;
}

/* Ctrl-C and kill end the runs at their next bucket; the file is still written.
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
    signal(SIGXFSZ, SIG_IGN);
}

static int run_command(int argc, char **argv, dm_mpi_world *world);

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

static int run_command(int argc, char **argv, dm_mpi_world *world)
{
    static const struct option options[] = {
        { "output", required_argument, NULL, 'o' },
        { "jobs", required_argument, NULL, 'j' },
        { "force", no_argument, NULL, 'f' },
        { "resume", required_argument, NULL, 'r' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    const char *output = NULL, *resume = NULL;
    bool force = false;
    int jobs = dm_mpi_default_jobs(world, default_jobs());
    int c;
    optind = 1;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:j:fr:h", options, NULL)) != -1) {
        switch (c) {
        case 'o': output = optarg; break;
        case 'f': force = true; break;
        case 'r': resume = optarg; break;
        case 'j': {
            double v;
            if (dm_parse_double(optarg, &v) != 0 || v < 1 || v > 1024 || v != floor(v))
                return dm_cli_usage_error("run", "--jobs takes a whole number from 1 to 1024, "
                                          "not '%s'", optarg);
            jobs = (int)v;
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
    if (resume != NULL && (optind < argc || output != NULL))
        return dm_cli_usage_error("run", "--resume FILE continues the suite stored in FILE "
                                  "and rewrites FILE: give no suite file and no -o with it");

    dm_suite suite;
    memset(&suite, 0, sizeof suite);
    dm_run_result *results = NULL;
    int setup = world->rank == 0 ? prepare(&suite, &results, optind < argc ? argv[optind] : NULL,
                                           output, resume, force)
                                 : 0;
    /* every rank learns rank 0's verdict; the others validate the same suite text */
    setup = dm_mpi_share_suite(world, setup, &suite);
    if (setup != 0) {
        if (results != NULL) {
            for (size_t i = 0; i < suite.n_runs; i++)
                dm_run_result_free(&results[i]);
            free(results);
            dm_suite_free(&suite);
        }
        return setup;
    }
    catch_signals();
    if (world->rank > 0) {
        dm_mpi_job job = { .suite = &suite, .jobs = jobs, .stop = &stop_flag,
                           .stop_signal = &stop_signal };
        dm_mpi_work(world, &job);
        dm_suite_free(&suite);
        /* a stop or a failure is reported by rank 0 (a failure was sent to it), whose
         * status every rank takes */
        return job.failed ? 1 : 0;
    }

    dm_error err = { 0 };
    dm_status st;
    dm_sweep_fit *fits = calloc(suite.n_sweeps ? suite.n_sweeps : 1, sizeof *fits);
    dm_summary_row *rows = calloc(suite.n_runs ? suite.n_runs : 1, sizeof *rows);
    size_t *order = malloc(sizeof *order * (suite.n_runs ? suite.n_runs : 1));
    int exit_code = 0;
    if (fits == NULL || rows == NULL || order == NULL) {
        fprintf(stderr, "driftmark: run: out of memory for %zu runs\n", suite.n_runs);
        exit_code = 1;
        if (world->size > 1) {
            /* the other ranks wait for work: hand out none */
            dm_mpi_job job = { .suite = &suite, .results = results, .order = order,
                               .n_order = 0, .jobs = 1, .stop = &stop_flag,
                               .stop_signal = &stop_signal };
            dm_mpi_coordinate(world, &job);
        }
        goto cleanup;
    }

    char started[32];
    utc_now(started, sizeof started);
    size_t n_order = 0;
    for (size_t i = 0; i < suite.n_runs; i++)
        if (results[i].status == DM_RUN_NOT_RUN)
            order[n_order++] = i;
    dm_run_order_longest_first(&suite, order, n_order);

    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    if (world->size > 1) {
        /* rank 0 hands the runs out to every rank (its own threads too) in this order */
        dm_mpi_job job = { .suite = &suite, .results = results, .order = order,
                           .n_order = n_order, .jobs = jobs, .stop = &stop_flag,
                           .stop_signal = &stop_signal,
                           .progress = isatty(STDERR_FILENO) ? progress : NULL };
        dm_mpi_coordinate(world, &job);
        if (job.progress != NULL)
            fputc('\n', stderr); /* after the queue's last redraw of the line */
        fprintf(stderr, "driftmark: run: spread over %d ranks (%d threads at rank 0); %zu "
                        "runs came from the other ranks, %llu bytes\n", world->size, jobs,
                job.runs_received, (unsigned long long)job.bytes_received);
        if (job.failed) {
            fprintf(stderr, "driftmark: run: %s\n", job.error.msg);
            exit_code = 1;
        }
    } else {
        /* the pool (pool.c): each result at its own index, whatever the jobs */
        bool tty = isatty(STDERR_FILENO);
        st = dm_run_pool(&suite, results, order, n_order, jobs, &stop_flag,
                         tty ? progress : NULL, NULL, &err);
        if (tty)
            fputc('\n', stderr);
        if (st != DM_OK) {
            fprintf(stderr, "driftmark: run: %s\n", err.msg);
            exit_code = 1;
        }
    }

    /* Whatever happened above, every run that ran is written. */
    for (size_t w = 0; w < suite.n_sweeps; w++)
        dm_sweep_fit_compute(&suite, &suite.sweeps[w], results, &fits[w]);
    size_t n_rows = 0;
    for (size_t i = 0; i < suite.n_runs; i++)
        if (results[i].status != DM_RUN_NOT_RUN)
            dm_summary_row_fill(&rows[n_rows++], &suite.runs[i], &results[i]);
    bool written = false;
    if (n_rows > 0) {
        st = dm_results_write(suite.output, &suite, results, fits, started, &err);
        if (st != DM_OK) {
            fprintf(stderr, "driftmark: run: %s\n", err.msg);
            exit_code = 1;
        } else {
            written = true;
        }
    }
    dm_table_print(stdout, rows, n_rows, DM_TABLE_TEXT);
    if (suite.n_sweeps > 0) {
        printf("\n%-56s %12s %12s %6s\n", "sweep", "energy order", "phase order", "points");
        for (size_t w = 0; w < suite.n_sweeps; w++)
            printf("%-56s %12.3f %12.3f %6zu\n", suite.sweeps[w].name, fits[w].energy_order,
                   fits[w].phase_order, fits[w].n_points);
    }
    if (written)
        printf("\nresults: %s (%zu of %zu runs, %.1f s)\n", suite.output, n_rows, suite.n_runs,
               seconds_since(&t0));
    if (stop_signal) {
        if (written)
            fprintf(stderr, "driftmark: run: stopped by signal %d; completed runs are in %s; "
                            "continue with: driftmark run --resume %s\n", (int)stop_signal,
                    suite.output, suite.output);
        else
            fprintf(stderr, "driftmark: run: stopped by signal %d before any run completed; "
                            "nothing written\n", (int)stop_signal);
        exit_code = 128 + (int)stop_signal;
    }

cleanup:
    if (results != NULL)
        for (size_t i = 0; i < suite.n_runs; i++)
            dm_run_result_free(&results[i]);
    free(results);
    free(fits);
    free(rows);
    free(order);
    dm_suite_free(&suite);
    return exit_code;
}
