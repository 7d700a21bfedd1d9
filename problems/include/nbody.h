/* nbody.h — the bodies of a gravitational N-body instance, as the suite reader builds
 * them and as a method that needs the problem's structure (Wisdom-Holman: the masses
 * and G) reads them. Nothing else of the N-body problem is public.
 *
 * H = sum |p_i|^2 / (2 m_i) - sum_{i<j} G m_i m_j / |q_i - q_j|, q_i, p_i in R^3, with
 * q and p stored body by body (q[3 i + k]). */
#ifndef DM_NBODY_H
#define DM_NBODY_H

#include <stdbool.h>

#include "problem.h"

#define DM_NBODY_MAX 128       /* bodies: 3 DM_NBODY_MAX = DM_MAX_DOF */
#define DM_NBODY_NAME_MAX 32

/* The bodies as the user gave them (velocities; momenta are converted once, by the
 * reader), immutable once built; an instance points to it (dm_instance.data). Setup
 * moves them to the barycentric frame (common practice: the centre of mass at rest at
 * the origin), so the started q0, p0 differ from these by a Galilean shift. */
typedef struct dm_nbody {
    int n;                                   /* 2 .. DM_NBODY_MAX */
    double mass[DM_NBODY_MAX];               /* > 0 */
    double inverse_mass[DM_NBODY_MAX];
    double position[DM_NBODY_MAX][3];
    double velocity[DM_NBODY_MAX][3];
    char name[DM_NBODY_MAX][DM_NBODY_NAME_MAX];  /* "" when not named */
    int period_body, period_around;          /* the body whose period is measured, about
                                                which other (indices), or -1, -1 */
} dm_nbody;

/* The bodies of an N-body instance and its G, or NULL for any other problem. */
const dm_nbody *dm_nbody_of(const dm_instance *inst, double *G);

/* The N-body problem's table (registry id "nbody"). */
extern const dm_problem dm_problem_nbody;

#endif
