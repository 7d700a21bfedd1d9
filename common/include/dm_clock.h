/* dm_clock.h — the one wall clock: seconds on the monotonic clock, for run times,
 * progress and the benchmark. Only differences of two readings mean anything. */
#ifndef DM_CLOCK_H
#define DM_CLOCK_H

double dm_clock_seconds(void);

#endif
