/* dm_test_util.h — small helpers shared by the cmocka tests. */
#ifndef DM_TEST_UTIL_H
#define DM_TEST_UTIL_H

#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include "dm_error.h"

/* |a - b| / |b| (or |a - b| when b == 0). */
double dm_rel_diff(double a, double b);

/* Fails the test with both values printed when |a - b| > tol * max(|b|, floor). */
#define assert_close(a, b, tol)                                                        \
    dm_assert_close_impl((a), (b), (tol), #a, #b, __FILE__, __LINE__)
void dm_assert_close_impl(double a, double b, double tol, const char *sa, const char *sb,
                          const char *file, int line);

/* Runs a shell command; captures stdout and stderr (each up to size bytes, NUL-ended)
 * and returns the exit status (or -1). */
int dm_run_capture(const char *cmd, char *out, size_t out_size, char *err, size_t err_size);

/* A run spec built by hand (the suite reader is tested on its own): `problem` with
 * n_keys parameters, `method` at steps_per_period (fixed-step) or rtol (adaptive, atol a
 * thousandth of it), over `periods` periods in `samples` buckets, energy_limit 1. */
struct dm_run_spec;
void dm_test_make_spec(struct dm_run_spec *spec, const char *problem, size_t n_keys,
                       const char *const *keys, const double *values, const char *method,
                       double steps_per_period, double rtol, double periods, size_t samples,
                       int compensated);

/* Runs `spec` stopped at every bucket end (a stop flag always raised) and continued from
 * its checkpoint (dm_run_resume) until it ends: the result in *out, the number of stops
 * returned (each checked to have left a checkpoint). */
struct dm_run_result;
int dm_test_run_stopping_everywhere(const struct dm_run_spec *spec, struct dm_run_result *out);

/* An instance of `problem` with its parameters' defaults. A problem that needs data
 * (needs_data) gets a fixture of ours: for N-body, a made-up star of mass 1 with two
 * planets (G = 1). */
struct dm_instance;
struct dm_problem;
int dm_test_instance_defaults(struct dm_instance *inst, const struct dm_problem *problem,
                              dm_error *err);

#endif
