/* dm_outer_solar.h — the outer solar system as a suite, for the N-body and
 * Wisdom-Holman tests: E. Hairer, C. Lubich, G. Wanner, Geometric Numerical Integration,
 * 2nd ed. (2006), section I.2.4 (the Sun with the inner planets' mass, Jupiter, Saturn,
 * Uranus, Neptune, Pluto; AU, days, solar masses; G = 2.95912208286e-4), typed from
 * memory of the book as listed in the project's shared references; checked in
 * tests/test_nbody.c against the planets' known periods and in tests/check_nbody.py
 * with numpy. */
#ifndef DM_OUTER_SOLAR_H
#define DM_OUTER_SOLAR_H

#include <stdio.h>
#include <stdlib.h>

#include "dm_test_util.h"

#ifndef OUT
#define OUT "/tmp/dm-test-nbody/out.h5"
#endif

#define OUTER_BODIES                                                                      \
    "      - {name: Sun, mass: 1.00000597682, position: [0, 0, 0], velocity: [0, 0, 0]}\n" \
    "      - {name: Jupiter, mass: 0.000954786104043, position: [-3.5023653, -3.8169847, "  \
    "-1.5507963], velocity: [0.00565429, -0.00412490, -0.00190589]}\n"                    \
    "      - {name: Saturn, mass: 0.000285583733151, position: [9.0755314, -3.0458353, "    \
    "-1.6483708], velocity: [0.00168318, 0.00483525, 0.00192462]}\n"                      \
    "      - {name: Uranus, mass: 0.0000437273164546, position: [8.3101420, -16.2901086, "  \
    "-7.2521278], velocity: [0.00354178, 0.00137102, 0.00055029]}\n"                      \
    "      - {name: Neptune, mass: 0.0000517759138449, position: [11.4707666, "            \
    "-25.7294829, -10.8169456], velocity: [0.00288930, 0.00114527, 0.00039677]}\n"        \
    "      - {name: Pluto, mass: 7.692307692307692e-09, position: [-15.5387357, "          \
    "-25.2225594, -3.1902382], velocity: [0.00276725, -0.00170702, -0.00136504]}\n"

/* The outer solar system in AU and days over `horizon` days, `buckets` buckets, under
 * the given methods block. */
static inline char *outer_suite(double horizon, int buckets, const char *methods)
{
    char *text = malloc(8192);
    assert_non_null(text);
    snprintf(text, 8192,
             "output: " OUT "\nhorizon: {time: %.17g}\nbuckets: %d\nproblems:\n"
             "  - problem: nbody\n    G: 2.95912208286e-4\n    units: AU, days, solar masses\n"
             "    period_of: {body: Jupiter, around: Sun}\n    bodies:\n" OUTER_BODIES
             "methods:\n%s",
             horizon, buckets, methods);
    return text;
}

#endif
