/* cmd_run.c — `driftmark run [SUITE] [-o OUT]`: validate the whole suite, run it,
 * write the results file, print the summary table. */
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
static void progress(size_t done, size_t total, const char *current, double elapsed)
{
    char left[32] = "?";
    if (done > 0)
        snprintf(left, sizeof left, "%.0fs", elapsed * (double)(total - done) / (double)done);
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

static void print_usage(FILE *out)
{
    fprintf(out, "usage: driftmark run [SUITE.yaml] [-o OUT.h5]\n"
                 "  with no SUITE, runs the built-in default suite\n");
}

int dm_cmd_run(int argc, char **argv)
{
    static const struct option options[] = {
        { "output", required_argument, NULL, 'o' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    const char *output = NULL;
    int c;
    optind = 1;
    opterr = 0;
    while ((c = getopt_long(argc, argv, "+o:h", options, NULL)) != -1) {
        switch (c) {
        case 'o': output = optarg; break;
        case 'h': print_usage(stdout); return 0;
        case '?':
        default:
            if (optopt)
                return dm_cli_usage_error("run", "option '-%c' is unknown or needs a value", optopt);
            return dm_cli_usage_error("run", "unknown option '%s'", argv[optind - 1]);
        }
    }
    if (argc - optind > 1)
        return dm_cli_usage_error("run", "expected at most one suite file, got %d",
                                  argc - optind);

    dm_suite suite;
    dm_error err = { 0 };
    dm_status st = optind < argc ? dm_suite_load(&suite, argv[optind], &err)
                                 : dm_suite_default(&suite, &err);
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: run: %s\n", err.msg);
        return st == DM_EINPUT ? 2 : 1;
    }
    if (output != NULL)
        snprintf(suite.output, sizeof suite.output, "%s", output);

    dm_run_result *results = calloc(suite.n_runs, sizeof *results);
    dm_sweep_fit *fits = calloc(suite.n_sweeps ? suite.n_sweeps : 1, sizeof *fits);
    dm_summary_row *rows = calloc(suite.n_runs, sizeof *rows);
    if (results == NULL || fits == NULL || rows == NULL) {
        fprintf(stderr, "driftmark: run: out of memory for %zu runs\n", suite.n_runs);
        free(results);
        free(fits);
        free(rows);
        dm_suite_free(&suite);
        return 1;
    }

    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);

    char started[32];
    utc_now(started, sizeof started);
    bool tty = isatty(STDERR_FILENO);
    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    int exit_code = 0;
    size_t done = 0;
    for (size_t i = 0; i < suite.n_runs; i++) {
        if (stop_flag)
            break;
        if (tty)
            progress(i, suite.n_runs, suite.runs[i].id, seconds_since(&t0));
        st = dm_run(&suite.runs[i], &results[i], &stop_flag, &err);
        if (st != DM_OK) {
            fprintf(stderr, "%sdriftmark: run: %s: %s\n", tty ? "\n" : "", suite.runs[i].id,
                    err.msg);
            exit_code = 1;
            break;
        }
        done = i + 1;
    }
    if (tty) {
        progress(done, suite.n_runs, "", seconds_since(&t0));
        fputc('\n', stderr);
    }

    for (size_t w = 0; w < suite.n_sweeps; w++)
        dm_sweep_fit_compute(&suite, &suite.sweeps[w], results, &fits[w]);

    if (exit_code == 0) {
        st = dm_results_write(suite.output, &suite, results, fits, started, &err);
        if (st != DM_OK) {
            fprintf(stderr, "driftmark: run: %s\n", err.msg);
            exit_code = 1;
        }
    }
    for (size_t i = 0; i < done; i++)
        dm_summary_row_fill(&rows[i], &suite.runs[i], &results[i]);
    dm_table_print(stdout, rows, done, DM_TABLE_TEXT);
    if (suite.n_sweeps > 0) {
        printf("\n%-56s %12s %12s %6s\n", "sweep", "energy order", "phase order", "points");
        for (size_t w = 0; w < suite.n_sweeps; w++)
            printf("%-56s %12.3f %12.3f %6zu\n", suite.sweeps[w].name, fits[w].energy_order,
                   fits[w].phase_order, fits[w].n_points);
    }
    if (exit_code == 0)
        printf("\nresults: %s (%zu runs, %.1f s)\n", suite.output, done, seconds_since(&t0));

    for (size_t i = 0; i < suite.n_runs; i++)
        dm_run_result_free(&results[i]);
    free(results);
    free(fits);
    free(rows);
    dm_suite_free(&suite);
    if (stop_signal)
        return 128 + (int)stop_signal;
    return exit_code;
}
