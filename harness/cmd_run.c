/* cmd_run.c — `driftmark run [SUITE] [-o OUT] [-j N] [--force] [--resume FILE]`:
 * validate the whole suite, run it on a pool of threads, write the results file,
 * print the summary table.
 *
 * Nothing is lost: the file is written beside its name and renamed into place; an
 * existing file is replaced only with --force; SIGINT / SIGTERM end the running runs at
 * their next bucket, mark them interrupted and still write every completed run; and
 * --resume FILE runs only what that file does not hold complete. */
#include <getopt.h>
#include <pthread.h>
#include <stdatomic.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "harness.h"

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

/* The pool: workers take runs in the order `order` (longest first, so one long run
 * does not finish alone at the end) and store each result at its own index, so the
 * results file is the same whatever the number of jobs. */
typedef struct pool {
    dm_suite *suite;
    dm_run_result *results;
    const size_t *order;           /* the runs to do, longest first */
    size_t n_order;
    atomic_size_t next;
    atomic_size_t done;
    atomic_int failed;
    pthread_mutex_t lock;          /* guards the progress line and the first error */
    dm_error error;
    bool tty;
    double cost_total, cost_done;  /* estimated work, for the time left (under lock) */
    struct timespec t0;
    const char *current;
} pool;

static double estimated_cost(const dm_run_spec *spec);

static void *worker(void *arg)
{
    pool *p = arg;
    for (;;) {
        if (stop_flag || atomic_load(&p->failed))
            break;
        size_t slot = atomic_fetch_add(&p->next, 1);
        if (slot >= p->n_order)
            break;
        size_t i = p->order[slot];
        const dm_run_spec *spec = &p->suite->runs[i];
        if (p->tty) {
            pthread_mutex_lock(&p->lock);
            p->current = spec->id;
            progress(atomic_load(&p->done), p->n_order, p->cost_done / p->cost_total, spec->id,
                     seconds_since(&p->t0));
            pthread_mutex_unlock(&p->lock);
        }
        dm_error err = { 0 };
        if (dm_run(spec, &p->results[i], &stop_flag, &err) != DM_OK) {
            pthread_mutex_lock(&p->lock);
            if (!atomic_load(&p->failed)) {
                p->error = err;
                dm_error_prefix(&p->error, "%s: ", spec->id);
            }
            atomic_store(&p->failed, 1);
            pthread_mutex_unlock(&p->lock);
            break;
        }
        size_t d = atomic_fetch_add(&p->done, 1) + 1;
        pthread_mutex_lock(&p->lock);
        p->cost_done += estimated_cost(spec);
        if (p->tty)
            progress(d, p->n_order, p->cost_done / p->cost_total,
                     p->current ? p->current : "", seconds_since(&p->t0));
        pthread_mutex_unlock(&p->lock);
    }
    return NULL;
}

/* Work estimate of a run: force evaluations for fixed steps; adaptive methods are
 * guessed from the horizon and the tolerance (their steps grow as rtol shrinks). */
static double estimated_cost(const dm_run_spec *spec)
{
    const dm_method *m = spec->method;
    if (!m->adaptive) {
        double per = m->force_evals_per_step > 0 ? m->force_evals_per_step : 4;
        return per * spec->t_end / fabs(spec->method_config.h);
    }
    double digits = -log10(spec->method_config.rtol);
    return spec->periods * 20.0 * digits * digits;
}

static const dm_suite *cost_suite;
static int by_cost_descending(const void *a, const void *b)
{
    size_t i = *(const size_t *)a, j = *(const size_t *)b;
    double ci = estimated_cost(&cost_suite->runs[i]), cj = estimated_cost(&cost_suite->runs[j]);
    if (ci != cj)
        return ci > cj ? -1 : 1;
    return i < j ? -1 : (i > j);
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

int dm_cmd_run(int argc, char **argv)
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
    int jobs = default_jobs();
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
    dm_error err = { 0 };
    dm_status st = load_suite(&suite, optind < argc ? argv[optind] : NULL, output, resume, &err);
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        return st == DM_EINPUT ? 2 : 1;
    }
    if (resume == NULL && !force && access(suite.output, F_OK) == 0) {
        fprintf(stderr, "driftmark: run: %s already exists (add --force to replace it, or "
                        "--resume %s to continue it)\n", suite.output, suite.output);
        dm_suite_free(&suite);
        return 2;
    }

    dm_run_result *results = calloc(suite.n_runs ? suite.n_runs : 1, sizeof *results);
    dm_sweep_fit *fits = calloc(suite.n_sweeps ? suite.n_sweeps : 1, sizeof *fits);
    dm_summary_row *rows = calloc(suite.n_runs ? suite.n_runs : 1, sizeof *rows);
    size_t *order = malloc(sizeof *order * (suite.n_runs ? suite.n_runs : 1));
    int exit_code = 0;
    if (results == NULL || fits == NULL || rows == NULL || order == NULL) {
        fprintf(stderr, "driftmark: run: out of memory for %zu runs\n", suite.n_runs);
        exit_code = 1;
        goto cleanup;
    }

    size_t kept = 0;
    if (resume != NULL) {
        st = dm_results_read_runs(resume, &suite, results, &kept, &err);
        if (st != DM_OK) {
            fprintf(stderr, "driftmark: run: %s\n", err.msg);
            exit_code = st == DM_EINPUT ? 2 : 1;
            goto cleanup;
        }
        fprintf(stderr, "driftmark: run: %s: keeping %zu completed runs, running %zu\n", resume,
                kept, suite.n_runs - kept);
    }

    /* Ctrl-C and kill end the runs at their next bucket; the file is still written.
     * SIGXFSZ is ignored so that a file-size limit shows as a write error, not a crash. */
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    signal(SIGXFSZ, SIG_IGN);

    char started[32];
    utc_now(started, sizeof started);
    size_t n_order = 0;
    for (size_t i = 0; i < suite.n_runs; i++)
        if (results[i].status == DM_RUN_NOT_RUN)
            order[n_order++] = i;
    cost_suite = &suite;
    qsort(order, n_order, sizeof *order, by_cost_descending);

    pool p = { .suite = &suite, .results = results, .order = order, .n_order = n_order,
               .tty = isatty(STDERR_FILENO) };
    p.cost_total = 0.0;
    for (size_t i = 0; i < n_order; i++)
        p.cost_total += estimated_cost(&suite.runs[order[i]]);
    if (!(p.cost_total > 0.0))
        p.cost_total = 1.0;
    atomic_init(&p.next, 0);
    atomic_init(&p.done, 0);
    atomic_init(&p.failed, 0);
    pthread_mutex_init(&p.lock, NULL);
    clock_gettime(CLOCK_MONOTONIC, &p.t0);
    if ((size_t)jobs > n_order)
        jobs = n_order > 0 ? (int)n_order : 1;
    pthread_t threads[1024];
    int started_threads = 0;
    for (int j = 1; j < jobs; j++)
        if (pthread_create(&threads[started_threads], NULL, worker, &p) == 0)
            started_threads++;
    worker(&p); /* the main thread is one of the jobs */
    for (int j = 0; j < started_threads; j++)
        pthread_join(threads[j], NULL);
    pthread_mutex_destroy(&p.lock);
    if (p.tty) {
        progress(atomic_load(&p.done), n_order, p.cost_done / p.cost_total, "",
                 seconds_since(&p.t0));
        fputc('\n', stderr);
    }
    if (atomic_load(&p.failed)) {
        fprintf(stderr, "driftmark: run: %s\n", p.error.msg);
        exit_code = 1;
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
               seconds_since(&p.t0));
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
