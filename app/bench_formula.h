/* bench_formula.h — the bench's formula rows: the pendulum written in a suite as
 * V = -cos(q), compiled and evaluated, against the built-in pendulum. */
#ifndef DM_BENCH_FORMULA_H
#define DM_BENCH_FORMULA_H

#include <stdbool.h>
#include <stdint.h>

#include "dm_error.h"

typedef struct dm_bench_formula {
    uint64_t builtin_steps, steps, evaluated_steps;
    double builtin_seconds;       /* fastest round of each, a whole run as `run` makes it */
    double compiled_seconds;
    double evaluated_seconds;     /* over evaluated_steps (fewer: it is slow) */
    double compile_seconds;       /* the compile into an empty cache */
} dm_bench_formula;

dm_status dm_bench_formula_run(bool quick, dm_bench_formula *out, dm_error *err);

#endif
