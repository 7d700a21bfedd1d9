/* bench_short_runs.h — the many-short-runs row of `driftmark bench`: the fixed cost a run
 * pays outside its integration (setting up, writing its group of the results file) and
 * the memory a suite of many runs takes, measured on a whole `driftmark run` process. */
#ifndef DM_BENCH_SHORT_RUNS_H
#define DM_BENCH_SHORT_RUNS_H

#include <stddef.h>
#include <stdint.h>

#include "dm_error.h"

typedef struct dm_short_runs_result {
    size_t runs;                 /* runs in the suite */
    uint64_t steps_per_run;
    int buckets;
    double seconds;              /* the whole `driftmark run` process, start to exit */
    double peak_mib;             /* its peak resident memory (getrusage ru_maxrss) */
    long file_bytes;             /* the results file it wrote */
} dm_short_runs_result;

/* Writes a suite of `runs` runs of 1000 Verlet steps each (harmonic oscillators,
 * `buckets` buckets) to the temporary directory, runs `driftmark run` on it as a child
 * process (this executable, every core) and measures it; removes what it wrote. */
dm_status dm_bench_short_runs(size_t runs, int buckets, dm_short_runs_result *out,
                              dm_error *err);

#endif
