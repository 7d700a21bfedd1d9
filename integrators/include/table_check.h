/* table_check.h — what can be established about a splitting table on its own: whether
 * it is symmetric (time-reversible), and the order it reaches in practice, measured by
 * a short convergence test against a problem's exact solution (with the leading error
 * constant, which tells two methods of one order apart). For the user's own tables;
 * the built-in ones are checked the same way by the tests. Setup only. */
#ifndef DM_TABLE_CHECK_H
#define DM_TABLE_CHECK_H

#include <stdbool.h>

#include "method.h"

/* A splitting is symmetric when its sequence of kicks and drifts reads the same
 * backwards (each coefficient equal to its mirror to a relative 1e-14): then
 * Phi(-h) Phi(h) = identity (Hairer, Lubich, Wanner, Geometric Numerical Integration,
 * 2006, ch. V). */
bool dm_splitting_is_symmetric(const dm_splitting *table);

/* The convergence test: one period at n = 8, 16, 32, ... steps a period, until the
 * order settles or the error reaches the floor. */
#define DM_MEASURE_LEVELS 12
/* A pair of neighbouring steps gives the order when the coarser error is at most
 * DM_MEASURE_COARSE (past the coarse-step regime) and the finer one at least
 * DM_MEASURE_FLOOR (above the round-off of the run: a few 1e-14 at 16384 steps, so the ratio of two errors is right to about 1 %). Our
 * own thresholds. */
#define DM_MEASURE_COARSE 1e-2
#define DM_MEASURE_FLOOR 1e-12
/* The halving stops once two usable pairs in a row give orders this close (our own
 * threshold: the order has settled, and finer steps would only cost time). */
#define DM_MEASURE_SETTLED 0.02
/* ... or once its force evaluations would pass this many (a table of many stages gets
 * fewer halvings, so reading a suite stays quick whatever its tables). */
#define DM_MEASURE_WORK (1 << 20)

typedef struct dm_measured_order {
    /* log2(e(h) / e(h/2)) at the finest usable pair of steps run (the first that agrees
     * with the pair before it, or the last above the floor); NaN when none is usable */
    double order;
    /* e(h/2) / (h / (2 T))^p at that pair, p the order rounded to a whole number: the
     * leading error constant, unit-free (e is unit-free, h / T too) and, once the
     * steps are fine enough, independent of them; NaN with the order */
    double error_constant;
    int levels;                              /* step sizes run */
    double steps_per_period[DM_MEASURE_LEVELS];
    /* e: the largest unit-free global error over every step of one period, each
     * component of q divided by the largest |q| of the exact orbit, of p by the
     * largest |p| (so neither the units of q, p nor t enter) */
    double errors[DM_MEASURE_LEVELS];
    int used;                                /* index of the finer step of the pair, or -1 */
} dm_measured_order;

/* Runs `method` on `inst` (which must have an exact solution) over one period at
 * n = 8, 16, ... steps a period (stopping once the order settles, or below the floor)
 * and measures its order. */
dm_status dm_measure_order(const dm_method *method, const dm_instance *inst,
                           dm_measured_order *out, dm_error *err);

#endif
