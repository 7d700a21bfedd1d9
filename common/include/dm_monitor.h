/* dm_monitor.h — the per-step monitor, written once.
 *
 * After every step a run measures the energy error dE = (H - H0) / E_scale, keeps the
 * extremes of dE in the current bucket, stops on a divergence and watches the section
 * for a crossing. This is the only place that does it: the runner's per-step path
 * (harness/runner.c) and every problem's fused loop (problems/include/dm_fused_loop.h)
 * call dm_monitor_step with the new state's kinetic and potential energy and its
 * section coordinate, so the two paths give bit-identical results by construction.
 *
 * It lives below both problems/ and integrators/ because both compile it into their
 * loops; it knows nothing of either (plain numbers in, one event out).
 */
#ifndef DM_MONITOR_H
#define DM_MONITOR_H

#include <math.h>
#include <stdbool.h>

typedef struct dm_step_monitor {
    /* fixed for the run */
    double H0;              /* energy of the starting state */
    double inv_scale;       /* 1 / E_scale */
    double energy_limit;    /* |dE| beyond it (or NaN): diverged */
    int coord;              /* section: the coordinate watched ... */
    double wrap;            /* ... and, when > 0, its period (an angle in rotation) */
    /* carried from step to step */
    double level;           /* wrap == 0: the section level; wrap > 0: the next level
                               above the coordinate (level - wrap is below it) */
    bool armed;             /* wrap == 0: the previous coordinate was below the level */
    double bucket_min;      /* extremes of dE since dm_monitor_open_bucket */
    double bucket_max;
    double energy_error;    /* dE after the last step */
    /* set when a step crosses the section */
    double crossed_level;
} dm_step_monitor;

typedef enum dm_step_event {
    DM_STEP_QUIET = 0,      /* nothing to report */
    DM_STEP_CROSSED,        /* the step crossed the section at crossed_level */
    DM_STEP_DIVERGED        /* dE is NaN, Inf or beyond the limit */
} dm_step_event;

/* Sets up the monitor for a run starting with section coordinate q_coord. Upward
 * crossings of `level` count (or of level + k wrap for every integer k when wrap > 0). */
static inline void dm_monitor_start(dm_step_monitor *m, double H0, double inv_scale,
                                    double energy_limit, int coord, double level,
                                    double wrap, double q_coord)
{
    *m = (dm_step_monitor){ .H0 = H0, .inv_scale = inv_scale, .energy_limit = energy_limit,
                            .coord = coord, .wrap = wrap, .crossed_level = NAN };
    if (wrap > 0.0) {
        m->level = level + (floor((q_coord - level) / wrap) + 1.0) * wrap;
    } else {
        m->level = level;
        m->armed = q_coord < level;
    }
    m->bucket_min = INFINITY;
    m->bucket_max = -INFINITY;
}

static inline void dm_monitor_open_bucket(dm_step_monitor *m)
{
    m->bucket_min = INFINITY;
    m->bucket_max = -INFINITY;
}

/* After one step to a state with kinetic energy T, potential V and section coordinate
 * q_coord. A diverged step is not checked against the section. */
static inline __attribute__((always_inline)) dm_step_event
dm_monitor_step(dm_step_monitor *m, double T, double V, double q_coord)
{
    double dE = (T + V - m->H0) * m->inv_scale;
    m->energy_error = dE;
    if (dE < m->bucket_min)
        m->bucket_min = dE;
    if (dE > m->bucket_max)
        m->bucket_max = dE;
    if (!(fabs(dE) <= m->energy_limit))
        return DM_STEP_DIVERGED;
    if (m->wrap > 0.0) {
        if (q_coord >= m->level) {
            m->crossed_level = m->level;
            m->level += m->wrap;
            return DM_STEP_CROSSED;
        }
        if (q_coord < m->level - m->wrap)
            m->level -= m->wrap;
        return DM_STEP_QUIET;
    }
    /* Most steps stay on their side of the level: armed and below, or disarmed and not
     * below. Those change nothing, so they store nothing. */
    if (m->armed == (q_coord < m->level))
        return DM_STEP_QUIET;
    bool crossed = m->armed && q_coord >= m->level;
    m->armed = q_coord < m->level;
    if (crossed) {
        m->crossed_level = m->level;
        return DM_STEP_CROSSED;
    }
    return DM_STEP_QUIET;
}

#endif
