#include "dm_test_util.h"
#include "nbody.h"
#include "harness.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

double dm_rel_diff(double a, double b)
{
    double d = fabs(a - b);
    return b != 0.0 ? d / fabs(b) : d;
}

void dm_assert_close_impl(double a, double b, double tol, const char *sa, const char *sb,
                          const char *file, int line)
{
    double r = dm_rel_diff(a, b);
    if (!(r <= tol)) {
        print_error("%s = %.17g\n%s = %.17g\nrelative difference %.3e > %.3e\n", sa, a, sb, b,
                    r, tol);
        _fail(file, line);
    }
}

static void slurp(const char *path, char *buf, size_t size)
{
    if (buf == NULL || size == 0)
        return;
    buf[0] = '\0';
    FILE *f = fopen(path, "r");
    if (f == NULL)
        return;
    size_t n = fread(buf, 1, size - 1, f);
    buf[n] = '\0';
    fclose(f);
}

int dm_run_capture(const char *cmd, char *out, size_t out_size, char *err, size_t err_size)
{
    char o[] = "/tmp/dm_test_outXXXXXX";
    char e[] = "/tmp/dm_test_errXXXXXX";
    int fo = mkstemp(o), fe = mkstemp(e);
    if (fo < 0 || fe < 0)
        return -1;
    close(fo);
    close(fe);
    size_t len = strlen(cmd) + strlen(o) + strlen(e) + 32;
    char *full = malloc(len);
    snprintf(full, len, "%s >%s 2>%s", cmd, o, e);
    int rc = system(full);
    free(full);
    slurp(o, out, out_size);
    slurp(e, err, err_size);
    unlink(o);
    unlink(e);
    if (rc == -1 || !WIFEXITED(rc))
        return -1;
    return WEXITSTATUS(rc);
}

void dm_test_make_spec(dm_run_spec *spec, const char *problem, size_t n_keys,
                       const char *const *keys, const double *values, const char *method,
                       double steps_per_period, double rtol, double periods, size_t samples,
                       int compensated)
{
    memset(spec, 0, sizeof *spec);
    const dm_problem *pb = dm_problem_find(problem);
    assert_non_null(pb);
    dm_error err = { 0 };
    assert_int_equal(dm_instance_init(&spec->inst, pb, n_keys, keys, values, &err), DM_OK);
    spec->method = dm_method_find(method);
    assert_non_null(spec->method);
    snprintf(spec->id, sizeof spec->id, "%s.%s-n%g%s", problem, method, steps_per_period,
             compensated ? "-compensated" : "");
    double T = spec->inst.period;
    spec->t_end = periods * T;
    spec->periods = periods;
    spec->samples = samples;
    spec->energy_limit = 1.0;
    spec->sweep = -1;
    if (spec->method->adaptive) {
        spec->step_setting = DM_SET_BY_RTOL;
        spec->step_value = rtol;
        spec->method_config.rtol = rtol;
        spec->method_config.atol = rtol * 1e-3;
    } else {
        spec->step_setting = DM_SET_BY_STEPS_PER_PERIOD;
        spec->step_value = steps_per_period;
        spec->method_config.h = T / steps_per_period;
    }
    spec->method_config.compensated = compensated != 0;
    spec->method_config.t_stop = spec->t_end;
}

/* The fixture's bodies (invented): a star and two planets on near-circular orbits. */
static const dm_nbody test_bodies = {
    .n = 3,
    .mass = { 1.0, 1e-3, 3e-4 },
    .inverse_mass = { 1.0, 1e3, 1.0 / 3e-4 },
    .position = { { 0, 0, 0 }, { 1.0, 0, 0 }, { 0, 2.0, 0.1 } },
    .velocity = { { 0, 0, 0 }, { 0, 1.0, 0.05 }, { -0.7, 0, 0 } },
    .name = { "star", "inner", "outer" },
    .period_body = 1,
    .period_around = 0,
};

int dm_test_instance_defaults(dm_instance *inst, const dm_problem *problem, dm_error *err)
{
    const void *data = problem->needs_data ? &test_bodies : NULL;
    return dm_instance_init_data(inst, problem, data, 0, NULL, NULL, err);
}

int dm_test_run_stopping_everywhere(const dm_run_spec *spec, dm_run_result *out)
{
    volatile int stop = 1; /* every bucket end stops the run */
    dm_error err = { 0 };
    assert_int_equal(dm_run(spec, out, &stop, &err), DM_OK);
    int stops = 0;
    while (out->status == DM_RUN_INTERRUPTED) {
        assert_non_null(out->checkpoint);
        stops++;
        assert_int_equal(dm_run_resume(spec, out, &stop, &err), DM_OK);
        assert_true(stops < 100000);
    }
    return stops;
}
