/* splitting.c — placeholder until the engine lands (issue 3). */
#include <stdlib.h>

#include "splitting.h"

dm_stepper *dm_splitting_create(const dm_method *m, const dm_instance *inst,
                                const dm_method_config *config, const dm_point *start,
                                dm_error *err)
{
    dm_error_set(err, DM_EINPUT, "%s: the splitting engine is not built yet", m->id);
    return NULL;
}

dm_status dm_splitting_step(dm_stepper *s, const dm_point *from, dm_point *to)
{
    return DM_EINPUT;
}

dm_status dm_splitting_restart(dm_stepper *s, const dm_point *at)
{
    return DM_EINPUT;
}

void dm_splitting_destroy(dm_stepper *s)
{
    free(s);
}
