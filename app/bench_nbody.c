/* bench_nbody.c — the N-body rows of `driftmark bench`: the O(N^2) force sum of a whole
 * driftmark run (the nbody problem's fused loop, every monitor on) against the same
 * Störmer–Verlet steps written by hand (bench_loops.c), in force pairs per second, for
 * 6 and 64 bodies. The system is our own invention: a star of mass 1 (G = 1) with light
 * planets (mass 1e-7 each) on near-circular orbits of radius 1.25, 1.5, 1.75, ..., at
 * angles 2.4 k radians and small inclinations, stable over the bench's few hundred time
 * units. Both loops end with the same energy error, bit for bit (checked). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bench_loops.h"
#include "dm_clock.h"
#include "harness.h"
#include "nbody.h"

#define BENCH_NBODY_H 0.01
#define BENCH_NBODY_BUCKETS 4096

/* The suite text of the invented system of n bodies over `steps` steps. */
static char *system_suite(int n, uint64_t steps)
{
    size_t size = 512 + 160 * (size_t)n;
    char *text = malloc(size);
    if (text == NULL)
        return NULL;
    size_t used = (size_t)snprintf(text, size,
                                   "output: /tmp/driftmark-bench-nbody.h5\n"
                                   "horizon: {time: %.17g}\nbuckets: %d\nproblems:\n"
                                   "  - problem: nbody\n    G: 1\n    units: bench units\n"
                                   "    bodies:\n      - {mass: 1, position: [0, 0, 0], "
                                   "velocity: [0, 0, 0]}\n",
                                   ((double)steps - 0.5) * BENCH_NBODY_H, BENCH_NBODY_BUCKETS);
    for (int k = 1; k < n; k++) {
        double r = 1.0 + 0.25 * k, a = 2.4 * k, v = sqrt(1.0 / r), tilt = 0.01 * sin(k);
        used += (size_t)snprintf(text + used, size - used,
                                 "      - {mass: 1.0e-7, position: [%.17g, %.17g, %.17g], "
                                 "velocity: [%.17g, %.17g, 0]}\n",
                                 r * cos(a), r * sin(a), r * tilt, -v * sin(a), v * cos(a));
    }
    snprintf(text + used, size - used, "methods:\n  - {method: verlet, h: %g}\n", BENCH_NBODY_H);
    return text;
}

/* The hand loop from the run's start for `steps` steps; its wall time and, in *dE, its
 * final energy error as the runner forms it. */
static double run_hand(const dm_instance *inst, double scale, uint64_t steps, double *dE)
{
    double G;
    const dm_nbody *d = dm_nbody_of(inst, &G);
    double q[DM_MAX_DOF], p[DM_MAX_DOF], V, worst;
    memcpy(q, inst->q0, sizeof(double) * (size_t)inst->dof);
    memcpy(p, inst->p0, sizeof(double) * (size_t)inst->dof);
    double H0 = dm_instance_energy(inst, inst->q0, inst->p0);
    double t0 = dm_clock_seconds();
    dm_bare_verlet_nbody(d->n, G, d->mass, d->inverse_mass, 0.5 * BENCH_NBODY_H,
                         BENCH_NBODY_H, 0.5 * BENCH_NBODY_H, H0, steps, q, p, &V, &worst);
    double wall = dm_clock_seconds() - t0;
    *dE = (inst->problem->kinetic(inst, p) + V - H0) * (1.0 / scale);
    return wall;
}

/* One row: steps for about `seconds` of the hand loop, then rounds of both. */
static int bench_row(int n, bool quick, dm_bench_nbody_row *row, char *error, size_t size)
{
    memset(row, 0, sizeof *row);
    row->bodies = n;
    uint64_t steps = 64;
    double pairs = 0.5 * n * (n - 1);
    for (int attempt = 0; attempt < 2; attempt++) {
        char *text = system_suite(n, steps);
        dm_suite suite;
        dm_error err = { 0 };
        if (text == NULL || dm_suite_parse(&suite, text, strlen(text), "(driftmark bench)",
                                           "/tmp/driftmark-bench-nbody.h5", &err) != DM_OK) {
            snprintf(error, size, "N-body case of %d bodies: %s", n,
                     text ? err.msg : "out of memory");
            free(text);
            return -1;
        }
        free(text);
        const dm_run_spec *spec = &suite.runs[0];
        double hand = INFINITY, ours = INFINITY, dE_hand = NAN;
        dm_run_result result;
        memset(&result, 0, sizeof result);
        int rounds = attempt == 0 ? 1 : (quick ? 1 : 3);
        for (int r = 0; r < rounds; r++) {
            dm_run_result_free(&result);
            double t0 = dm_clock_seconds();
            if (dm_run(spec, &result, NULL, &err) != DM_OK || result.status != DM_RUN_OK) {
                snprintf(error, size, "N-body case of %d bodies: %s", n,
                         err.msg[0] ? err.msg : result.reason);
                dm_run_result_free(&result);
                dm_suite_free(&suite);
                return -1;
            }
            ours = fmin(ours, dm_clock_seconds() - t0);
            hand = fmin(hand, run_hand(&spec->inst, result.metrics.energy_scale,
                                       result.metrics.steps, &dE_hand));
        }
        row->steps = result.metrics.steps;
        row->hand_pairs_per_second = pairs * (double)row->steps / hand;
        row->ours_pairs_per_second = pairs * (double)row->steps / ours;
        row->energy_agrees = memcmp(&dE_hand, &result.metrics.final_energy_error,
                                    sizeof dE_hand) == 0;
        dm_run_result_free(&result);
        dm_suite_free(&suite);
        /* calibrated on the first, short attempt */
        steps = (uint64_t)fmax(1000.0, (quick ? 0.2 : 1.5) * row->hand_pairs_per_second / pairs);
    }
    return 0;
}

int dm_bench_nbody(bool quick, dm_bench_nbody_row rows[DM_BENCH_NBODY_ROWS], char *error,
                   size_t error_size)
{
    static const int bodies[DM_BENCH_NBODY_ROWS] = { 6, 64 };
    for (int i = 0; i < DM_BENCH_NBODY_ROWS; i++)
        if (bench_row(bodies[i], quick, &rows[i], error, error_size) != 0)
            return -1;
    return 0;
}
