/* test_checkpoint.c — a run stopped anywhere and continued from its checkpoint, any
 * number of times, ends exactly as the run never stopped: every stored number and
 * figure bit for bit (wall-clock figures aside), for the fused loop, the per-step
 * splitting path, compensated sums, Runge-Kutta and the implicit midpoint rule.
 *
 * The stops are not timed: the stop flag is set before each call, so a run stops at its
 * first poll (the next multiple of 2^16 steps, or its bucket's end when sooner): inside
 * buckets and at their ends alike. Every second continuation goes through the results
 * file (written, read back by the --resume reader). CVODE is restarted at the saved
 * state, its documented rule (results/README.md): it reaches the horizon with about as
 * many steps. A checkpoint that does not fit its run is refused, never followed.
 *
 * Save points: a run asked for a snapshot at every poll hands over what a stop there
 * would have left and itself ends unchanged; continued from a snapshot, it ends as the
 * run never stopped, with times_continued 1. A checkpoint of layout 2 (before
 * times_continued) is still continued. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <hdf5.h>

#include "checkpoint.h"
#include "harness.h"

static const char suite_text[] =
    "name: checkpoint\n"
    "horizon: {periods: 300}\n"
    "samples: 4\n"
    "problems:\n"
    "  - {problem: pendulum, amplitude: 2.0}\n"
    "  - {problem: kepler, eccentricity: 0.6}\n"
    "methods:\n"
    "  - {method: verlet, steps_per_period: 1000}\n"
    "  - {method: yoshida4, steps_per_period: 700, compensated: true}\n"
    "  - {method: rk4, steps_per_period: 500}\n"
    "  - {method: midpoint, steps_per_period: 400}\n"
    "  - {method: cvode-adams, rtol: 1.0e-8}\n";

static dm_suite suite;

static int setup(void **state)
{
    (void)state;
    dm_error err = { 0 };
    if (dm_suite_parse(&suite, suite_text, strlen(suite_text), "checkpoint.yaml",
                       "/tmp/dm-checkpoint-test.h5", &err) != DM_OK) {
        fprintf(stderr, "%s\n", err.msg);
        return -1;
    }
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    dm_suite_free(&suite);
    return 0;
}

/* Writes results[i] alone to a file and reads it back as --resume does. */
static void through_file(size_t i, dm_run_result *r)
{
    char path[64];
    snprintf(path, sizeof path, "/tmp/dm-checkpoint-%ld.h5", (long)getpid());
    dm_run_result *all = calloc(suite.n_runs, sizeof *all);
    assert_non_null(all);
    all[i] = *r;
    dm_error err = { 0 };
    assert_int_equal(dm_results_write(path, &suite, all, NULL, "2000-01-01T00:00:00Z", &err),
                     DM_OK);
    dm_run_result_free(r);
    memset(all, 0, suite.n_runs * sizeof *all);
    size_t kept = 99;
    assert_int_equal(dm_results_read_runs(path, &suite, all, NULL, &kept, &err), DM_OK);
    assert_int_equal(kept, 0);
    assert_int_equal(all[i].status, DM_RUN_INTERRUPTED);
    assert_non_null(all[i].checkpoint);
    *r = all[i];
    free(all);
    unlink(path);
}

static void assert_same_doubles(const double *a, const double *b, size_t n)
{
    assert_true((a == NULL) == (b == NULL));
    if (a != NULL && n > 0)
        assert_memory_equal(a, b, n * sizeof *a);
}

static void assert_same_run(const dm_run_result *a, const dm_run_result *b)
{
    assert_int_equal(a->status, b->status);
    assert_string_equal(a->reason, b->reason);
    assert_string_equal(a->regime_change, b->regime_change);
    assert_string_equal(a->drift_class, b->drift_class);
    const dm_series *s = &a->series, *t = &b->series;
    assert_int_equal(s->n, t->n);
    assert_same_doubles(s->time, t->time, s->n);
    assert_same_doubles(s->energy_error, t->energy_error, s->n);
    assert_same_doubles(s->energy_error_min, t->energy_error_min, s->n);
    assert_same_doubles(s->energy_error_max, t->energy_error_max, s->n);
    assert_same_doubles(s->global_error, t->global_error, s->n);
    for (int k = 0; k < DM_MAX_INVARIANTS; k++)
        assert_same_doubles(s->invariant_error[k], t->invariant_error[k], s->n);
    assert_int_equal(a->crossings.n, b->crossings.n);
    assert_int_equal(a->crossings.stride, b->crossings.stride);
    assert_int_equal(a->crossings.total, b->crossings.total);
    assert_same_doubles(a->crossings.number, b->crossings.number, a->crossings.n);
    assert_same_doubles(a->crossings.time, b->crossings.time, a->crossings.n);
    assert_same_doubles(a->crossings.phase_error, b->crossings.phase_error, a->crossings.n);
    dm_run_metrics ma = a->metrics, mb = b->metrics;
    ma.wall_seconds = mb.wall_seconds = 0.0;
    ma.ns_per_step = mb.ns_per_step = 0.0;
    ma.times_continued = mb.times_continued = 0; /* checked where it is known */
    assert_memory_equal(&ma, &mb, sizeof ma);
}

/* Stops run i at every poll until it ends; returns the number of stops, and counts
 * those inside a bucket in *inside. */
static int run_with_stops(size_t i, bool plain, dm_run_result *r, int *inside)
{
    dm_run_spec spec = suite.runs[i];
    spec.method_config.plain_steps = plain;
    volatile int stop = 1;
    dm_error err = { 0 };
    assert_int_equal(dm_run(&spec, r, &stop, &err), DM_OK);
    int stops = 0;
    while (r->status == DM_RUN_INTERRUPTED) {
        assert_non_null(r->checkpoint);
        *inside += r->checkpoint->in_bucket;
        if (++stops % 2 == 0 && !plain)
            through_file(i, r);
        assert_int_equal(dm_run_resume(&spec, r, &stop, &err), DM_OK);
        assert_true(stops < 1000);
    }
    assert_null(r->checkpoint);
    return stops;
}

static void fixed_step_runs_continue_bit_for_bit(void **state)
{
    (void)state;
    int checked = 0;
    for (size_t i = 0; i < suite.n_runs; i++) {
        if (suite.runs[i].method->adaptive)
            continue;
        for (int plain = 0; plain < 2; plain++) {
            dm_run_spec spec = suite.runs[i];
            spec.method_config.plain_steps = plain;
            dm_run_result full, stopped;
            dm_error err = { 0 };
            assert_int_equal(dm_run(&spec, &full, NULL, &err), DM_OK);
            assert_int_equal(full.status, DM_RUN_OK);
            int inside = 0;
            int stops = run_with_stops(i, plain, &stopped, &inside);
            /* 150,000 to 300,000 steps in 4 buckets: stops inside buckets and at ends */
            assert_true(stops >= 4);
            assert_true(inside >= 1 && inside < stops);
            assert_same_run(&full, &stopped);
            assert_int_equal(full.metrics.times_continued, 0);
            assert_int_equal(stopped.metrics.times_continued, stops);
            dm_run_result_free(&full);
            dm_run_result_free(&stopped);
            checked++;
        }
    }
    assert_int_equal(checked, 16);
}

static void cvode_restarts_at_the_saved_state(void **state)
{
    (void)state;
    for (size_t i = 0; i < suite.n_runs; i++) {
        if (!suite.runs[i].method->adaptive)
            continue;
        dm_run_result full, stopped;
        dm_error err = { 0 };
        assert_int_equal(dm_run(&suite.runs[i], &full, NULL, &err), DM_OK);
        int inside = 0;
        int stops = run_with_stops(i, false, &stopped, &inside);
        assert_true(stops >= 2);
        assert_int_equal(stopped.status, full.status);
        assert_true(stopped.metrics.t_reached == full.metrics.t_reached);
        assert_int_equal(stopped.series.n, full.series.n);
        /* the same horizon with about as many steps, and the same accuracy (the
         * tolerance sets it): a continuation, not a run from the start */
        double steps = (double)full.metrics.steps;
        printf("%s: %d stops; steps %llu vs %llu, max |dE| %.4g vs %.4g\n",
               suite.runs[i].id, stops, (unsigned long long)stopped.metrics.steps,
               (unsigned long long)full.metrics.steps, stopped.metrics.max_energy_error,
               full.metrics.max_energy_error);
        assert_true(fabs((double)stopped.metrics.steps - steps) <= 0.05 * steps);
        assert_true(stopped.metrics.max_energy_error <= 3.0 * full.metrics.max_energy_error);
        dm_run_result_free(&full);
        dm_run_result_free(&stopped);
    }
}

static void a_checkpoint_that_does_not_fit_is_refused(void **state)
{
    (void)state;
    volatile int stop = 1;
    dm_error err = { 0 };
    dm_run_result r;
    assert_int_equal(dm_run(&suite.runs[0], &r, &stop, &err), DM_OK);
    assert_int_equal(r.status, DM_RUN_INTERRUPTED);
    assert_non_null(r.checkpoint);
    /* another run's checkpoint: another number of degrees of freedom */
    size_t kepler = 0;
    while (suite.runs[kepler].inst.dof == suite.runs[0].inst.dof)
        kepler++;
    assert_int_equal(dm_run_resume(&suite.runs[kepler], &r, &stop, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "checkpoint"));
    dm_run_result_free(&r);
    /* a stride of 0 would divide by zero; a step count past the horizon */
    for (int damage = 0; damage < 2; damage++) {
        assert_int_equal(dm_run(&suite.runs[0], &r, &stop, &err), DM_OK);
        if (damage == 0)
            r.checkpoint->crossing_stride = 0;
        else
            r.checkpoint->k = UINT64_MAX;
        assert_int_equal(dm_run_resume(&suite.runs[0], &r, &stop, &err), DM_EINPUT);
        dm_run_result_free(&r);
    }
}

/* Writes run 0 stopped at its first poll (interrupted, with a checkpoint) to a file at
 * path, opens that file for writing and reads the checkpoint's words: *f, *d (its
 * dataset), *space, *w (allocated) and *n (their count); `all` (suite.n_runs results)
 * is returned for reading back. */
static dm_run_result *write_checkpoint_words(const char *path, hid_t *f, hid_t *d, hid_t *space,
                                             uint64_t **w, hsize_t *n)
{
    volatile int stop = 1;
    dm_error err = { 0 };
    dm_run_result r;
    assert_int_equal(dm_run(&suite.runs[0], &r, &stop, &err), DM_OK);
    dm_run_result *all = calloc(suite.n_runs, sizeof *all);
    assert_non_null(all);
    all[0] = r;
    assert_int_equal(dm_results_write(path, &suite, all, NULL, "2000-01-01T00:00:00Z", &err),
                     DM_OK);
    dm_run_result_free(&r);
    memset(all, 0, suite.n_runs * sizeof *all);
    *f = H5Fopen(path, H5F_ACC_RDWR, H5P_DEFAULT);
    char name[DM_RUN_ID_MAX + 32];
    snprintf(name, sizeof name, "runs/%s/checkpoint", suite.runs[0].id);
    *d = H5Dopen2(*f, name, H5P_DEFAULT);
    assert_true(*d >= 0);
    *space = H5Dget_space(*d);
    *n = (hsize_t)H5Sget_simple_extent_npoints(*space);
    *w = calloc(*n, sizeof **w);
    assert_non_null(*w);
    assert_int_equal(H5Dread(*d, H5T_NATIVE_UINT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, *w), 0);
    return all;
}

/* A checkpoint in a file whose step count lies past the run's horizon (word 4: one
 * tester set it to 2^64 - 1) is refused as the file is read, before anything is
 * written: it was read, the run then failed, and --resume rewrote the file without it.
 * So is one of a layout no driftmark wrote (0) or a newer one's (9): it restarted the
 * run silently from step 0. */
static void a_file_checkpoint_past_the_horizon_is_refused_on_reading(void **state)
{
    char path[64];
    snprintf(path, sizeof path, "/tmp/dm-checkpoint-k-%ld.h5", (long)getpid());
    dm_error err = { 0 };
    hid_t f, d, space;
    uint64_t *w;
    hsize_t n;
    dm_run_result *all = write_checkpoint_words(path, &f, &d, &space, &w, &n);
    assert_true(w[4] > 0 && w[4] <= dm_run_fixed_steps(&suite.runs[0])); /* k, as taken */
    int layout = *(int *)*state; /* 0: the step count damaged; else the layout word (-1: 0) */
    if (layout == 0)
        w[4] = UINT64_MAX;
    else
        w[0] = layout < 0 ? 0 : (uint64_t)layout;
    assert_int_equal(H5Dwrite(d, H5T_NATIVE_UINT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, w), 0);
    free(w);
    H5Sclose(space);
    H5Dclose(d);
    H5Fclose(f);
    size_t kept = 0;
    assert_int_equal(dm_results_read_runs(path, &suite, all, NULL, &kept, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "damaged"));
    free(all);
    unlink(path);
}

/* One bucket (samples: 1): a stop inside it ends the run interrupted, not ok, and a
 * fixed-step run stops within 2^16 steps instead of at its bucket's end. */
static void a_stop_inside_the_only_bucket_interrupts(void **state)
{
    (void)state;
    static const char *const keys[] = { "amplitude" };
    static const double values[] = { 2.5 };
    const char *methods[] = { "cvode-adams", "rk4", "verlet" };
    for (int j = 0; j < 3; j++) {
        dm_run_spec spec;
        bool adaptive = j == 0;
        dm_test_make_spec(&spec, "pendulum", 1, keys, values, methods[j], 2000, 1e-9, 200, 1,
                          0);
        volatile int stop = 1;
        dm_error err = { 0 };
        dm_run_result r;
        assert_int_equal(dm_run(&spec, &r, &stop, &err), DM_OK);
        assert_int_equal(r.status, DM_RUN_INTERRUPTED);
        assert_true(r.metrics.t_reached < spec.t_end);
        assert_int_equal(r.series.n, 0);
        if (!adaptive)
            assert_int_equal(r.metrics.steps, 1 << 16);
        assert_int_equal(dm_run_resume(&spec, &r, NULL, &err), DM_OK);
        assert_int_equal(r.status, DM_RUN_OK);
        assert_true(r.metrics.t_reached >= spec.t_end * (1 - 1e-15));
        assert_int_equal(r.series.n, 1);
        dm_run_result_free(&r);
    }
}

/* Save points: a run that is asked for a snapshot at every poll hands over, each
 * time, what a stop there would have left, and carries on unchanged. */
typedef struct snapshots {
    unsigned request;          /* raised by each snapshot: the next poll answers again */
    dm_run_result *list[64];
    size_t n, seen;
} snapshots;

static void keep_snapshot(void *ctx, size_t index, dm_run_result *copy, unsigned request)
{
    snapshots *s = ctx;
    (void)index;
    assert_int_equal(request, s->request);
    s->request++;
    s->seen++;
    if (s->n < sizeof s->list / sizeof s->list[0]) {
        s->list[s->n++] = copy;
    } else {
        dm_run_result_free(copy);
        free(copy);
    }
}

static void snapshots_continue_bit_for_bit(void **state)
{
    (void)state;
    int checked = 0;
    for (size_t i = 0; i < suite.n_runs; i++) {
        if (suite.runs[i].method->adaptive)
            continue;
        for (int plain = 0; plain < 2; plain++) {
            dm_run_spec spec = suite.runs[i];
            spec.method_config.plain_steps = plain;
            dm_run_result full, watched;
            memset(&watched, 0, sizeof watched);
            dm_error err = { 0 };
            assert_int_equal(dm_run(&spec, &full, NULL, &err), DM_OK);
            snapshots s = { .request = 1 };
            dm_run_watch watch = { .save_request = &s.request, .answered = 0,
                                   .snapshot = keep_snapshot, .ctx = &s, .index = i };
            assert_int_equal(dm_run_watched(&spec, &watched, &watch, &err), DM_OK);
            /* the run that handed them over is the run never asked */
            assert_same_run(&full, &watched);
            assert_int_equal(watched.metrics.times_continued, 0);
            /* as many polls as run_with_stops stops at, each answered */
            assert_true(s.seen >= 4 && s.n >= 4);
            int inside = 0;
            for (size_t k = 0; k < s.n; k++) {
                dm_run_result *r = s.list[k];
                assert_int_equal(r->status, DM_RUN_INTERRUPTED);
                assert_non_null(r->checkpoint);
                inside += r->checkpoint->in_bucket;
                /* the first, the last and every third, continued (half through the
                 * file); each ends as the run never stopped */
                if (k == 0 || k + 1 == s.n || k % 3 == 0) {
                    if (k % 2 == 0)
                        through_file(i, r);
                    assert_int_equal(dm_run_resume(&spec, r, NULL, &err), DM_OK);
                    assert_same_run(&full, r);
                    assert_int_equal(r->metrics.times_continued, 1);
                }
                dm_run_result_free(r);
                free(r);
            }
            assert_true(inside >= 1 && inside < (int)s.n);
            dm_run_result_free(&full);
            dm_run_result_free(&watched);
            checked++;
        }
    }
    assert_int_equal(checked, 16);
}

/* A checkpoint of layout 2 (before times_continued: 12 header words) is still read and
 * continued, as never continued before; one of layout 1 is not a checkpoint. */
static void a_layout_2_checkpoint_is_read(void **state)
{
    (void)state;
    char path[64];
    snprintf(path, sizeof path, "/tmp/dm-checkpoint-v2-%ld.h5", (long)getpid());
    dm_run_result full, r;
    dm_error err = { 0 };
    assert_int_equal(dm_run(&suite.runs[0], &full, NULL, &err), DM_OK);
    for (int layout = 1; layout <= 2; layout++) {
        hid_t f, d, space;
        uint64_t *w;
        hsize_t n;
        dm_run_result *all = write_checkpoint_words(path, &f, &d, &space, &w, &n);
        /* the record rewritten in the older layout: word 12 dropped */
        char name[DM_RUN_ID_MAX + 32];
        snprintf(name, sizeof name, "runs/%s/checkpoint", suite.runs[0].id);
        assert_int_equal(w[0], 3);
        assert_int_equal(w[12], 0); /* never continued */
        memmove(w + 12, w + 13, (size_t)(n - 13) * sizeof *w);
        w[0] = (uint64_t)layout;
        H5Sclose(space);
        H5Dclose(d);
        assert_int_equal(H5Ldelete(f, name, H5P_DEFAULT), 0);
        hsize_t m = n - 1;
        space = H5Screate_simple(1, &m, NULL);
        d = H5Dcreate2(f, name, H5T_STD_U64LE, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
        assert_int_equal(H5Dwrite(d, H5T_NATIVE_UINT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, w), 0);
        free(w);
        H5Dclose(d);
        H5Sclose(space);
        H5Fclose(f);
        size_t kept = 99;
        assert_int_equal(dm_results_read_runs(path, &suite, all, NULL, &kept, &err), DM_OK);
        r = all[0];
        free(all);
        unlink(path);
        if (layout == 1) { /* no checkpoint: the run is left to run again */
            assert_null(r.checkpoint);
            dm_run_result_free(&r);
            continue;
        }
        assert_int_equal(r.status, DM_RUN_INTERRUPTED);
        assert_non_null(r.checkpoint);
        assert_int_equal(r.checkpoint->times_continued, 0);
        assert_int_equal(dm_run_resume(&suite.runs[0], &r, NULL, &err), DM_OK);
        assert_same_run(&full, &r);
        assert_int_equal(r.metrics.times_continued, 1);
        dm_run_result_free(&r);
    }
    dm_run_result_free(&full);
}

static int damage[3] = { 0, 9, -1 }; /* k, layout 9, layout 0 */

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(fixed_step_runs_continue_bit_for_bit),
        cmocka_unit_test(snapshots_continue_bit_for_bit),
        cmocka_unit_test(a_layout_2_checkpoint_is_read),
        cmocka_unit_test(cvode_restarts_at_the_saved_state),
        cmocka_unit_test(a_checkpoint_that_does_not_fit_is_refused),
        cmocka_unit_test_prestate(a_file_checkpoint_past_the_horizon_is_refused_on_reading,
                                  &damage[0]),
        cmocka_unit_test_prestate(a_file_checkpoint_past_the_horizon_is_refused_on_reading,
                                  &damage[1]),
        cmocka_unit_test_prestate(a_file_checkpoint_past_the_horizon_is_refused_on_reading,
                                  &damage[2]),
        cmocka_unit_test(a_stop_inside_the_only_bucket_interrupts),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
