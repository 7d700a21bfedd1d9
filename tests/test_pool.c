/* test_pool.c — the work queue (harness/pool.h) shared by the --jobs threads and the MPI
 * ranks: every run handed out once and in order, each result at its own index whatever
 * the number of threads, runs added in batches as rank 0 sends them, a stop and a
 * failure. The MPI side itself is checked by tests/check_mpi.py. */
#include "dm_test_util.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "harness.h"
#include "pool.h"

/* 4 starting states x 3 methods: 12 runs of different lengths, one adaptive method. */
static const char suite_text[] =
    "name: pool-test\n"
    "horizon: {periods: 40}\n"
    "samples: 64\n"
    "problems:\n"
    "  - {problem: pendulum, amplitude: [1.0, 2.0, 2.5]}\n"
    "  - {problem: kepler, eccentricity: 0.3}\n"
    "methods:\n"
    "  - {method: verlet, steps_per_period: [32, 64]}\n"
    "  - {method: cvode-adams, rtol: 1.0e-6}\n";
#define N_RUNS 12

static void load(dm_suite *suite)
{
    dm_error err = { 0 };
    assert_int_equal(dm_suite_parse(suite, suite_text, strlen(suite_text), "(test_pool)",
                                    "/tmp/driftmark-test-pool-never-written.h5", &err),
                     DM_OK);
    assert_int_equal(suite->n_runs, N_RUNS);
}

static void longest_first(const dm_suite *suite, size_t *order)
{
    for (size_t i = 0; i < suite->n_runs; i++)
        order[i] = i;
    dm_run_order_longest_first(suite, order, suite->n_runs);
}

static void free_all(dm_run_result *r, size_t n)
{
    for (size_t i = 0; i < n; i++)
        dm_run_result_free(&r[i]);
}

static bool same_bytes(const double *a, const double *b, size_t n)
{
    return n == 0 || memcmp(a, b, n * sizeof *a) == 0;
}

/* Two results of one run: the stored series, the crossings and the metrics computed
 * from them, bit for bit. */
static void assert_same_result(const dm_run_result *a, const dm_run_result *b)
{
    assert_int_equal(a->status, b->status);
    assert_int_equal(a->series.n, b->series.n);
    assert_true(same_bytes(a->series.time, b->series.time, a->series.n));
    assert_true(same_bytes(a->series.energy_error, b->series.energy_error, a->series.n));
    assert_true(same_bytes(a->series.energy_error_max, b->series.energy_error_max,
                           a->series.n));
    assert_int_equal(a->crossings.n, b->crossings.n);
    assert_true(same_bytes(a->crossings.time, b->crossings.time, a->crossings.n));
    assert_int_equal(a->metrics.steps, b->metrics.steps);
    assert_memory_equal(&a->metrics.final_energy_error, &b->metrics.final_energy_error,
                        sizeof(double));
    assert_memory_equal(&a->metrics.phase_error_final, &b->metrics.phase_error_final,
                        sizeof(double));
}

/* What the progress callback saw last (it runs on the pool's threads, under its lock:
 * it only records, the test thread checks). */
static size_t seen_calls, seen_wrong, seen_done, seen_total;
static double seen_work;
static char seen_current[DM_RUN_ID_MAX];

static void record_progress(size_t done, size_t total, double work, const char *current,
                            double elapsed)
{
    if (done > total || !(elapsed >= 0.0) || !(work >= 0.0 && work <= 1.0 + 1e-12))
        seen_wrong++;
    seen_calls++;
    seen_done = done;
    seen_total = total;
    seen_work = work;
    snprintf(seen_current, sizeof seen_current, "%s", current);
}

static void pool_results_do_not_depend_on_the_jobs(void **state)
{
    dm_suite suite;
    load(&suite);
    size_t order[N_RUNS];
    longest_first(&suite, order);
    dm_run_result one[N_RUNS], many[N_RUNS];
    memset(one, 0, sizeof one);
    memset(many, 0, sizeof many);
    dm_error err = { 0 };
    size_t done = 0;
    assert_int_equal(dm_run_pool(&suite, one, NULL, order, N_RUNS, 1, NULL, NULL, &done, &err),
                     DM_OK);
    assert_int_equal(done, N_RUNS);

    seen_calls = seen_wrong = 0;
    assert_int_equal(dm_run_pool(&suite, many, NULL, order, N_RUNS, 4, NULL, record_progress,
                                 &done, &err),
                     DM_OK);
    assert_int_equal(done, N_RUNS);
    /* a start and an end a run, and the last word with no current run (and a redraw
     * a second while runs run) */
    assert_true(seen_calls >= 2 * N_RUNS + 1);
    assert_int_equal(seen_wrong, 0);
    assert_int_equal(seen_done, N_RUNS);
    assert_int_equal(seen_total, N_RUNS);
    assert_string_equal(seen_current, "");
    assert_close(seen_work, 1.0, 1e-12);
    for (size_t i = 0; i < N_RUNS; i++) {
        assert_int_equal(one[i].status, DM_RUN_OK);
        assert_same_result(&one[i], &many[i]);
    }
    free_all(one, N_RUNS);
    free_all(many, N_RUNS);
    dm_suite_free(&suite);
}

static void nap(void)
{
    struct timespec t = { 0, 1000000 }; /* 1 ms */
    nanosleep(&t, NULL);
}

/* As at an MPI rank > 0: threads wait on an open queue, runs come in batches, the
 * finished ones are collected, and each is run once, with the results of a pool. */
static void queue_fed_in_batches_runs_each_run_once(void **state)
{
    dm_suite suite;
    load(&suite);
    size_t order[N_RUNS];
    longest_first(&suite, order);
    dm_run_result results[N_RUNS], reference[N_RUNS];
    memset(results, 0, sizeof results);
    memset(reference, 0, sizeof reference);
    dm_error err = { 0 };
    assert_int_equal(dm_run_pool(&suite, reference, NULL, order, N_RUNS, 1, NULL, NULL, NULL, &err),
                     DM_OK);

    dm_work_queue q;
    assert_int_equal(dm_queue_init(&q, &suite, results, NULL, NULL, NULL, &err), DM_OK);
    assert_int_equal(dm_queue_start(&q, 3), 3);
    dm_queue_state st;
    size_t finished[N_RUNS], n_finished = 0;
    int times_seen[N_RUNS] = { 0 };
    /* three threads and nothing to run: all three wait */
    for (int tries = 0; tries < 10000; tries++) {
        dm_queue_look(&q, &st, NULL);
        if (st.hungry == 3)
            break;
        nap();
    }
    assert_int_equal(st.hungry, 3);
    assert_int_equal(st.alive, 3);
    dm_queue_add(&q, order, 5);
    dm_queue_add(&q, order + 5, N_RUNS - 5);
    dm_queue_add(&q, order, 1); /* beyond one of each run: dropped */
    dm_queue_close(&q);
    for (int tries = 0; tries < 100000; tries++) {
        size_t n = dm_queue_look(&q, &st, finished);
        for (size_t k = 0; k < n; k++)
            times_seen[finished[k]]++;
        n_finished += n;
        if (st.alive == 0)
            break;
        nap();
    }
    assert_int_equal(st.alive, 0);
    n_finished += dm_queue_look(&q, &st, finished); /* none left after the last look */
    assert_int_equal(n_finished, N_RUNS);
    for (size_t i = 0; i < N_RUNS; i++) {
        assert_int_equal(times_seen[i], 1);
        assert_same_result(&results[i], &reference[i]);
    }
    size_t done = 0;
    assert_int_equal(dm_queue_finish(&q, &done, &err), DM_OK);
    assert_int_equal(done, N_RUNS);
    free_all(results, N_RUNS);
    free_all(reference, N_RUNS);
    dm_suite_free(&suite);
}

/* As at MPI rank 0 for the other ranks: runs taken in order, counted done when their
 * results come back; after a failure none is handed out, and the first failure is the
 * one reported. */
static void take_in_order_and_none_after_a_failure(void **state)
{
    dm_suite suite;
    load(&suite);
    size_t order[N_RUNS];
    longest_first(&suite, order);
    dm_run_result results[N_RUNS];
    memset(results, 0, sizeof results);
    dm_work_queue q;
    dm_error err = { 0 };
    assert_int_equal(dm_queue_init(&q, &suite, results, NULL, NULL, NULL, &err), DM_OK);
    dm_queue_add(&q, order, N_RUNS);
    dm_queue_close(&q);
    size_t got[N_RUNS];
    assert_int_equal(dm_queue_take(&q, 2, got), 2);
    assert_int_equal(got[0], order[0]);
    assert_int_equal(got[1], order[1]);
    assert_int_equal(dm_queue_take(&q, 1, got), 1);
    assert_int_equal(got[0], order[2]);
    dm_queue_mark_done(&q, order[0]);
    dm_error first, second;
    dm_error_set(&first, DM_EIO, "rank 1: the first failure");
    dm_error_set(&second, DM_ENOMEM, "the second failure");
    dm_queue_fail(&q, &first);
    dm_queue_fail(&q, &second);
    assert_int_equal(dm_queue_take(&q, 4, got), 0);
    dm_queue_state st;
    dm_queue_look(&q, &st, NULL);
    assert_true(st.failed);
    assert_string_equal(st.error.msg, "rank 1: the first failure");
    size_t done = 0;
    assert_int_equal(dm_queue_finish(&q, &done, &err), DM_EIO);
    assert_string_equal(err.msg, "rank 1: the first failure");
    assert_int_equal(done, 1);
    dm_suite_free(&suite);
}

/* A stop set before the first run: nothing is run, nothing handed out. */
static void a_stop_starts_no_run(void **state)
{
    dm_suite suite;
    load(&suite);
    size_t order[N_RUNS];
    longest_first(&suite, order);
    dm_run_result results[N_RUNS];
    memset(results, 0, sizeof results);
    volatile int stop = 1;
    dm_error err = { 0 };
    size_t done = 99;
    assert_int_equal(dm_run_pool(&suite, results, NULL, order, N_RUNS, 3, &stop, NULL, &done, &err),
                     DM_OK);
    assert_int_equal(done, 0);
    for (size_t i = 0; i < N_RUNS; i++)
        assert_int_equal(results[i].status, DM_RUN_NOT_RUN);
    dm_work_queue q;
    assert_int_equal(dm_queue_init(&q, &suite, results, NULL, &stop, NULL, &err), DM_OK);
    dm_queue_add(&q, order, N_RUNS);
    size_t got[N_RUNS];
    assert_int_equal(dm_queue_take(&q, N_RUNS, got), 0);
    assert_int_equal(dm_queue_finish(&q, NULL, NULL), DM_OK);
    dm_suite_free(&suite);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(pool_results_do_not_depend_on_the_jobs),
        cmocka_unit_test(queue_fed_in_batches_runs_each_run_once),
        cmocka_unit_test(take_in_order_and_none_after_a_failure),
        cmocka_unit_test(a_stop_starts_no_run),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
