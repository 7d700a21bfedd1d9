/* test_result_pack.c — a run's result packed into bytes (to travel between MPI ranks)
 * comes back field for field and bit for bit, and a damaged buffer is refused with an
 * error instead of being read.
 *
 * The results are those of real runs of a small suite: an exact solution (harmonic:
 * global_error), extra invariants (Kepler: angular momentum), a diverging method
 * (explicit Euler: a status and a reason), an adaptive method (CVODE's counters) and
 * more crossings than the crossing budget (a stride above 1). */
#include "dm_test_util.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"
#include "checkpoint.h"
#include "result_pack.h"

static const char suite_text[] =
    "name: pack\n"
    "horizon: {periods: 200}\n"
    "samples: 16\n"
    "problems:\n"
    "  - {problem: harmonic}\n"
    "  - {problem: kepler, eccentricity: 0.6}\n"
    "  - {problem: pendulum, amplitude: 2.0}\n"
    "methods:\n"
    "  - {method: verlet, steps_per_period: 32}\n"
    "  - {method: euler, steps_per_period: 4}\n"
    "  - {method: cvode-adams, rtol: 1.0e-8}\n";

static dm_suite suite;
static dm_run_result *results;

static int setup(void **state)
{
    dm_error err = { 0 };
    if (dm_suite_parse(&suite, suite_text, strlen(suite_text), "pack.yaml", "/tmp/pack.h5",
                       &err) != DM_OK) {
        fprintf(stderr, "%s\n", err.msg);
        return -1;
    }
    results = calloc(suite.n_runs, sizeof *results);
    if (results == NULL)
        return -1;
    for (size_t i = 0; i < suite.n_runs; i++)
        if (dm_run(&suite.runs[i], &results[i], NULL, &err) != DM_OK) {
            fprintf(stderr, "%s\n", err.msg);
            return -1;
        }
    return 0;
}

static int teardown(void **state)
{
    for (size_t i = 0; i < suite.n_runs; i++)
        dm_run_result_free(&results[i]);
    free(results);
    dm_suite_free(&suite);
    return 0;
}

static void assert_same_array(const double *a, const double *b, size_t n, const char *what)
{
    if (a == NULL || b == NULL) {
        if (a != b)
            fail_msg("%s: present in one result only", what);
        return;
    }
    if (n > 0 && memcmp(a, b, n * sizeof(double)) != 0)
        fail_msg("%s: values differ", what);
}

/* Every field of b equals a's, bit for bit; b's blocks are as large as the runner's. */
static void assert_same_result(const dm_run_result *a, const dm_run_result *b,
                               const dm_run_spec *spec)
{
    assert_int_equal(a->status, b->status);
    assert_string_equal(a->reason, b->reason);
    if (a->metrics.energy_scale_rule == NULL)
        assert_null(b->metrics.energy_scale_rule);
    else
        assert_string_equal(a->metrics.energy_scale_rule, b->metrics.energy_scale_rule);
    dm_run_metrics ma = a->metrics, mb = b->metrics;
    ma.energy_scale_rule = mb.energy_scale_rule = NULL;
    assert_memory_equal(&ma, &mb, sizeof ma); /* every double and counter, NaN included */

    const dm_series *sa = &a->series, *sb = &b->series;
    assert_int_equal(sa->n, sb->n);
    assert_int_equal(sb->capacity, spec->samples);
    assert_int_equal(sa->n_invariants, sb->n_invariants);
    assert_same_array(sa->time, sb->time, sa->n, "time");
    assert_same_array(sa->energy_error, sb->energy_error, sa->n, "energy_error");
    assert_same_array(sa->energy_error_min, sb->energy_error_min, sa->n, "energy_error_min");
    assert_same_array(sa->energy_error_max, sb->energy_error_max, sa->n, "energy_error_max");
    assert_same_array(sa->global_error, sb->global_error, sa->n, "global_error");
    for (int i = 0; i < DM_MAX_INVARIANTS; i++)
        assert_same_array(sa->invariant_error[i], sb->invariant_error[i], sa->n,
                          "invariant_error");

    const dm_crossings *ca = &a->crossings, *cb = &b->crossings;
    assert_int_equal(ca->n, cb->n);
    assert_int_equal(ca->capacity, cb->capacity);
    assert_int_equal(ca->stride, cb->stride);
    assert_int_equal(ca->total, cb->total);
    assert_same_array(ca->number, cb->number, ca->n, "crossing_number");
    assert_same_array(ca->time, cb->time, ca->n, "crossing_time");
    assert_same_array(ca->phase_error, cb->phase_error, ca->n, "phase_error");
}

static void results_of_real_runs_round_trip_bit_for_bit(void **state)
{
    bool saw_exact = false, saw_invariant = false, saw_diverged = false, saw_stride = false;
    bool saw_adaptive = false;
    for (size_t i = 0; i < suite.n_runs; i++) {
        const dm_run_result *r = &results[i];
        saw_exact |= r->series.global_error != NULL;
        saw_invariant |= r->series.n_invariants > 0;
        saw_diverged |= r->status == DM_RUN_DIVERGED && r->reason[0] != '\0';
        saw_stride |= r->crossings.stride > 1;
        saw_adaptive |= r->metrics.counts.rhs_evals > 0;

        unsigned char *buf = NULL;
        size_t size = 0, index = (size_t)-1;
        dm_error err = { 0 };
        assert_int_equal(dm_result_pack(&suite, i, r, &buf, &size, &err), DM_OK);
        dm_run_result back;
        assert_int_equal(dm_result_unpack(&suite, buf, size, &index, &back, &err), DM_OK);
        assert_int_equal(index, i);
        assert_same_result(r, &back, &suite.runs[i]);
        dm_run_result_free(&back);
        free(buf);
    }
    /* the suite covers what it claims to */
    assert_true(saw_exact && saw_invariant && saw_diverged && saw_stride && saw_adaptive);
}

static void interrupted_and_never_started_results_round_trip(void **state)
{
    /* a run stopped at once, the way a signal stops it */
    volatile int stop = 1;
    dm_run_result stopped, back;
    dm_error err = { 0 };
    assert_int_equal(dm_run(&suite.runs[0], &stopped, &stop, &err), DM_OK);
    assert_int_equal(stopped.status, DM_RUN_INTERRUPTED);
    unsigned char *buf = NULL;
    size_t size = 0, index = 0;
    assert_int_equal(dm_result_pack(&suite, 0, &stopped, &buf, &size, &err), DM_OK);
    assert_int_equal(dm_result_unpack(&suite, buf, size, &index, &back, &err), DM_OK);
    assert_same_result(&stopped, &back, &suite.runs[0]);
    /* its checkpoint travels with it, so another rank's stopped run can be continued */
    assert_non_null(stopped.checkpoint);
    assert_non_null(back.checkpoint);
    assert_memory_equal(stopped.checkpoint, back.checkpoint, sizeof *stopped.checkpoint);
    dm_run_result_free(&back);
    dm_run_result_free(&stopped);
    free(buf);

    /* a zeroed result: no series at all, no energy-scale rule */
    dm_run_result none;
    memset(&none, 0, sizeof none);
    assert_int_equal(dm_result_pack(&suite, 2, &none, &buf, &size, &err), DM_OK);
    assert_int_equal(dm_result_unpack(&suite, buf, size, &index, &back, &err), DM_OK);
    assert_int_equal(index, 2);
    assert_int_equal(back.status, DM_RUN_NOT_RUN);
    assert_null(back.series.time);
    assert_null(back.crossings.number);
    assert_null(back.metrics.energy_scale_rule);
    dm_run_result_free(&back);
    free(buf);
}

static void truncated_extended_or_damaged_buffers_are_refused(void **state)
{
    /* a run with invariants and crossings, past the first two (see the smaller suite) */
    size_t run = 2;
    while (run < suite.n_runs &&
           (results[run].series.n_invariants == 0 || results[run].crossings.n == 0))
        run++;
    assert_true(run < suite.n_runs);
    unsigned char *buf = NULL;
    size_t size = 0, index = 0;
    dm_error err = { 0 };
    assert_int_equal(dm_result_pack(&suite, run, &results[run], &buf, &size, &err), DM_OK);
    dm_run_result back;

    /* every truncation */
    for (size_t cut = 0; cut < size; cut++) {
        dm_error_clear(&err);
        assert_int_not_equal(dm_result_unpack(&suite, buf, cut, &index, &back, &err), DM_OK);
        assert_true(err.msg[0] != '\0');
        assert_null(back.series.time); /* nothing left allocated */
    }

    /* one byte too many */
    unsigned char *longer = malloc(size + 1);
    assert_non_null(longer);
    memcpy(longer, buf, size);
    longer[size] = 0;
    assert_int_not_equal(dm_result_unpack(&suite, longer, size + 1, &index, &back, &err), DM_OK);
    assert_non_null(strstr(err.msg, "left over"));
    free(longer);

    /* not a packed result at all */
    buf[0] ^= 0xff;
    assert_int_not_equal(dm_result_unpack(&suite, buf, size, &index, &back, &err), DM_OK);
    assert_non_null(strstr(err.msg, "no header"));
    buf[0] ^= 0xff;

    /* the same run id under another configuration: another suite's result */
    dm_suite other;
    char *text = strdup(suite_text);
    assert_non_null(text);
    char *samples = strstr(text, "samples: 16");
    assert_non_null(samples);
    memcpy(samples, "samples: 17", 11);
    assert_int_equal(dm_suite_parse(&other, text, strlen(text), "other.yaml", "/tmp/o.h5", &err),
                     DM_OK);
    assert_string_equal(other.runs[run].id, suite.runs[run].id);
    assert_int_not_equal(dm_result_unpack(&other, buf, size, &index, &back, &err), DM_OK);
    assert_non_null(strstr(err.msg, "configuration hash"));
    dm_suite_free(&other);

    /* a run index beyond a smaller suite */
    char *cut = strstr(text, "  - {problem: pendulum");
    assert_non_null(cut);
    strcpy(cut, "methods:\n  - {method: verlet, steps_per_period: 32}\n");
    assert_int_equal(dm_suite_parse(&other, text, strlen(text), "small.yaml", "/tmp/s.h5", &err),
                     DM_OK);
    assert_true(other.n_runs <= run);
    assert_int_not_equal(dm_result_unpack(&other, buf, size, &index, &back, &err), DM_OK);
    assert_non_null(strstr(err.msg, "names run"));
    dm_suite_free(&other);
    free(text);
    free(buf);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(results_of_real_runs_round_trip_bit_for_bit),
        cmocka_unit_test(interrupted_and_never_started_results_round_trip),
        cmocka_unit_test(truncated_extended_or_damaged_buffers_are_refused),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
