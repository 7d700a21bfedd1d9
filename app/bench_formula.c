/* bench_formula.c — the bench's formula rows (bench_formula.h): the same suite text
 * `run` reads, with the pendulum as a built-in problem and as the formula -cos(q),
 * compiled into a fresh cache (so the compile is timed) and evaluated by libmatheval
 * (DRIFTMARK_FORMULA_CC empty), each run whole with every monitor on. */
#include <dirent.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "bench_formula.h"
#include "dm_clock.h"
#include "formula.h"
#include "harness.h"

#define STEPS_PER_PERIOD 96   /* the default suite's, as the bench's pendulum cases */

/* The temporary folder and what the compile left in it (the cache, dir/driftmark). */
static void remove_folder(const char *dir, bool inner);

static void remove_folder(const char *dir, bool inner)
{
    if (!inner) {
        char cache[1200];
        snprintf(cache, sizeof cache, "%s/driftmark", dir);
        remove_folder(cache, true);
    }
    DIR *d = opendir(dir);
    struct dirent *e;
    while (d != NULL && (e = readdir(d)) != NULL) {
        char path[1200];
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0 &&
            strcmp(e->d_name, "driftmark") != 0 && unlink(path) != 0)
            fprintf(stderr, "driftmark: bench: could not remove %s\n", path);
    }
    if (d != NULL)
        closedir(d);
    rmdir(dir);
}

/* The fastest of `rounds` runs of spec, in seconds; *result keeps the last. */
static dm_status time_run(const dm_run_spec *spec, int rounds, double *seconds,
                          dm_run_result *result, dm_error *err)
{
    *seconds = INFINITY;
    for (int r = 0; r < rounds; r++) {
        dm_run_result_free(result);
        memset(result, 0, sizeof *result);
        double t0 = dm_clock_seconds();
        dm_status st = dm_run(spec, result, NULL, err);
        double wall = dm_clock_seconds() - t0;
        if (st != DM_OK)
            return st;
        if (result->status != DM_RUN_OK)
            return dm_error_set(err, DM_ENUMERIC, "bench: %s: %s", spec->id, result->reason);
        *seconds = fmin(*seconds, wall);
    }
    return DM_OK;
}

/* The suite: the built-in pendulum and the formula, `periods` periods at 96 steps. */
static dm_status parse(dm_suite *suite, const char *dir, const char *name, double periods,
                       dm_error *err)
{
    char text[1024], output[1100];
    snprintf(text, sizeof text,
             "name: %s\nhorizon: {periods: %g}\nbuckets: 4096\nproblems:\n"
             "  - {problem: pendulum, amplitude: 2.5}\n"
             "  - {potential: \"-cos(q)\", q0: 2.5, name: swing}\n"
             "methods:\n  - {method: verlet, steps_per_period: %d}\n",
             name, periods, STEPS_PER_PERIOD);
    snprintf(output, sizeof output, "%s/%s.h5", dir, name);
    return dm_suite_parse(suite, text, strlen(text), "(bench)", output, err);
}

dm_status dm_bench_formula_run(bool quick, dm_bench_formula *out, dm_error *err)
{
    memset(out, 0, sizeof *out);
    char dir[] = "/tmp/driftmark-bench-XXXXXX";
    if (mkdtemp(dir) == NULL)
        return dm_error_set(err, DM_EIO, "bench: cannot make a temporary folder");
    char *cache = getenv("XDG_CACHE_HOME") ? strdup(getenv("XDG_CACHE_HOME")) : NULL;
    char *cc = getenv(DM_FORMULA_CC_ENV) ? strdup(getenv(DM_FORMULA_CC_ENV)) : NULL;
    setenv("XDG_CACHE_HOME", dir, 1);
    unsetenv(DM_FORMULA_CC_ENV);
    dm_suite compiled = { 0 }, evaluated = { 0 };
    const double periods = quick ? 2e3 : 1e5;
    dm_status st = parse(&compiled, dir, "bench-compiled", periods, err);
    setenv(DM_FORMULA_CC_ENV, "", 1);
    if (st == DM_OK) {
        /* the evaluator is timed on purpose: its "no compiler" warning is not for the
         * user (an error comes back in err, not on stderr) */
        fflush(stderr);
        int saved = dup(STDERR_FILENO), null = open("/dev/null", O_WRONLY);
        if (saved >= 0 && null >= 0)
            dup2(null, STDERR_FILENO);
        st = parse(&evaluated, dir, "bench-evaluated", periods / 10, err);
        if (saved >= 0 && null >= 0)
            dup2(saved, STDERR_FILENO);
        if (saved >= 0)
            close(saved);
        if (null >= 0)
            close(null);
    }
    /* the environment as it was */
    cache ? setenv("XDG_CACHE_HOME", cache, 1) : unsetenv("XDG_CACHE_HOME");
    cc ? setenv(DM_FORMULA_CC_ENV, cc, 1) : unsetenv(DM_FORMULA_CC_ENV);
    free(cache);
    free(cc);
    dm_run_result a = { 0 }, b = { 0 }, c = { 0 };
    const int rounds = quick ? 1 : 3;
    if (st == DM_OK) {
        const dm_formula_info *info = dm_formula_info_of(compiled.runs[1].inst.problem);
        out->compile_seconds = info != NULL ? info->compile_seconds : NAN;
        st = time_run(&compiled.runs[0], rounds, &out->builtin_seconds, &a, err);
    }
    if (st == DM_OK)
        st = time_run(&compiled.runs[1], rounds, &out->compiled_seconds, &b, err);
    if (st == DM_OK)
        st = time_run(&evaluated.runs[1], 1, &out->evaluated_seconds, &c, err);
    if (st == DM_OK) {
        out->steps = b.metrics.steps;
        out->builtin_steps = a.metrics.steps;
        out->evaluated_steps = c.metrics.steps;
    }
    dm_run_result_free(&a);
    dm_run_result_free(&b);
    dm_run_result_free(&c);
    dm_suite_free(&compiled);
    dm_suite_free(&evaluated);
    remove_folder(dir, false);
    return st;
}
