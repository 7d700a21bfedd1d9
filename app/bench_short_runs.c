/* bench_short_runs.c — many short runs through a whole `driftmark run` (see
 * bench_short_runs.h).
 *
 * Measured on a child process rather than inside the bench: its wall time is what a
 * user waits for (start-up, suite check, runs, file) and its peak resident memory is
 * its own, not the bench's after its long cases. */
#define _DEFAULT_SOURCE /* wait4 */
#include "bench_short_runs.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "cli.h"
#include "dm_clock.h"

#define SHORT_RUN_STEPS 1000 /* 10 periods of 100 steps */
#define SHORT_RUN_OMEGAS 10  /* the runs: this many frequencies times runs / this amplitudes */

/* The suite: harmonic oscillators of SHORT_RUN_OMEGAS frequencies and runs / that many
 * amplitudes (each list within the 1000 values a list may have), under Verlet. */
static int write_suite(const char *path, const char *output, size_t runs, int buckets)
{
    FILE *f = fopen(path, "w");
    if (f == NULL)
        return -1;
    fprintf(f, "name: bench-short-runs\noutput: %s\nhorizon: {periods: 10}\nbuckets: %d\n"
               "problems:\n  - {problem: harmonic, omega: [", output, buckets);
    for (int i = 0; i < SHORT_RUN_OMEGAS; i++)
        fprintf(f, "%s%g", i ? ", " : "", 1.0 + 0.125 * i);
    fputs("], amplitude: [", f);
    for (size_t i = 0; i < runs / SHORT_RUN_OMEGAS; i++)
        fprintf(f, "%s%g", i ? ", " : "", 1.0 + 0.001 * (double)i);
    fputs("]}\nmethods:\n  - {method: verlet, steps_per_period: 100}\n", f);
    return fclose(f) == 0 ? 0 : -1;
}

/* Runs this executable as `driftmark run SUITE` with its output to /dev/null; returns its
 * exit status (-1: it could not be run), its wall time and its resource use. */
static int run_child(const char *suite, double *seconds, struct rusage *ru)
{
    double t0 = dm_clock_seconds();
    pid_t pid = fork();
    if (pid < 0)
        return -1;
    if (pid == 0) {
        int null = open("/dev/null", O_WRONLY);
        if (null >= 0) {
            dup2(null, STDOUT_FILENO);
            dup2(null, STDERR_FILENO);
        }
        execl("/proc/self/exe", "driftmark", "run", suite, (char *)NULL);
        _exit(127);
    }
    int status = 0;
    while (wait4(pid, &status, 0, ru) < 0)
        if (errno != EINTR)
            return -1;
    *seconds = dm_clock_seconds() - t0;
    return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

dm_status dm_bench_short_runs(size_t runs, int buckets, dm_short_runs_result *out,
                              dm_error *err)
{
    memset(out, 0, sizeof *out);
    runs -= runs % SHORT_RUN_OMEGAS;
    char name[64], suite[1024], output[1024];
    snprintf(name, sizeof name, "driftmark-bench-short-%ld.yaml", (long)getpid());
    dm_cli_temp_path(suite, sizeof suite, name);
    snprintf(name, sizeof name, "driftmark-bench-short-%ld.h5", (long)getpid());
    dm_cli_temp_path(output, sizeof output, name);
    if (runs == 0 || write_suite(suite, output, runs, buckets) != 0) {
        unlink(suite);
        return dm_error_set(err, DM_EIO, "bench: cannot write the short-runs suite '%s'", suite);
    }
    struct rusage ru;
    memset(&ru, 0, sizeof ru);
    int code = run_child(suite, &out->seconds, &ru);
    struct stat sb;
    out->file_bytes = stat(output, &sb) == 0 ? (long)sb.st_size : -1;
    unlink(suite);
    unlink(output);
    if (code != 0)
        return dm_error_set(err, DM_EIO, "bench: `driftmark run` of the short-runs suite "
                            "ended with status %d", code);
    out->runs = runs;
    out->steps_per_run = SHORT_RUN_STEPS;
    out->buckets = buckets;
    out->peak_mib = (double)ru.ru_maxrss / 1024.0; /* Linux reports KiB */
    return DM_OK;
}
