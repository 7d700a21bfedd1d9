/* dm_number_text.h — a double written in the shortest %g form that reads back as the
 * same double: 0.1 as 0.1 (not 0.10000000000000001), pi as 3.141592653589793, the
 * infinities as inf and -inf. For numbers a user reads and may type back in. */
#ifndef DM_NUMBER_TEXT_H
#define DM_NUMBER_TEXT_H

#include <stddef.h>

void dm_number_text(double v, char *buf, size_t size);

/* A value and the limit it crossed, both in %g with the fewest significant digits (3 at
 * least) at which the printed |value| differs from the printed limit, so that a message
 * never reads "-1 beyond the limit 1" for -1.0000108. 17 digits when nothing fewer does. */
void dm_number_text_apart(double value, double limit, char *value_buf, char *limit_buf,
                          size_t size);

#endif
