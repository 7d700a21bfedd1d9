/* dm_outer_solar.h — the outer solar system as a suite, for the N-body and
 * Wisdom-Holman tests: E. Hairer, C. Lubich, G. Wanner, Geometric Numerical Integration,
 * 2nd ed. (2006), section I.2.4 (the Sun with the inner planets' mass, Jupiter, Saturn,
 * Uranus, Neptune, Pluto; AU, days, solar masses; G = 2.95912208286e-4). The bodies are
 * in tests/outer_solar_system.csv (its source and checks there). */
#ifndef DM_OUTER_SOLAR_H
#define DM_OUTER_SOLAR_H

#include <stdio.h>
#include <stdlib.h>

#include "dm_test_util.h"

#ifndef OUT
#define OUT "/tmp/dm-test-nbody/out.h5"
#endif

/* The outer solar system in AU and days over `horizon` days, `buckets` buckets, under
 * the given methods block. */
static inline char *outer_suite(double horizon, int buckets, const char *methods)
{
    char *text = malloc(8192);
    assert_non_null(text);
    snprintf(text, 8192,
             "output: " OUT "\nhorizon: {time: %.17g}\nbuckets: %d\nproblems:\n"
             "  - problem: nbody\n    G: 2.95912208286e-4\n    units: AU, days, solar masses\n"
             "    period_of: {body: Jupiter, around: Sun}\n"
             "    bodies_file: " DM_SOURCE_DIR "/tests/outer_solar_system.csv\n"
             "    file_holds: velocities\nmethods:\n%s",
             horizon, buckets, methods);
    return text;
}

#endif
