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
#include "nbody.h"

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

/* Two bodies of masses m1, m2 (G = 1) and the built-in Kepler problem they are, in
 * relative coordinates: mu = m1 + m2, semi-major axis a, eccentricity e, the second body
 * at the Kepler problem's start (periapsis) relative to the first at rest; `pair` must
 * outlive `two`. */
static inline void two_bodies_and_kepler(double m1, double m2, double a, double e,
                                         dm_nbody *pair, dm_instance *two, dm_instance *kepler)
{
    const char *keys[] = { "mu", "semi_major_axis", "eccentricity" };
    const double values[] = { m1 + m2, a, e }, G = 1.0;
    dm_error err = { 0 };
    assert_int_equal(dm_instance_init(kepler, dm_problem_find("kepler"), 3, keys, values, &err),
                     DM_OK);
    *pair = (dm_nbody){ .n = 2, .mass = { m1, m2 }, .inverse_mass = { 1.0 / m1, 1.0 / m2 },
                        .period_body = -1, .period_around = -1 };
    pair->position[1][0] = kepler->q0[0];
    pair->velocity[1][1] = kepler->p0[1];
    const char *gk[] = { "G" };
    assert_int_equal(dm_instance_init_data(two, dm_problem_find("nbody"), pair, 1, gk, &G, &err),
                     DM_OK);
}

#endif
