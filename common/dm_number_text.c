#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "dm_number_text.h"

void dm_number_text(double v, char *buf, size_t size)
{
    if (isinf(v)) {
        snprintf(buf, size, "%sinf", v < 0 ? "-" : "");
        return;
    }
    /* 17 significant digits always read back; fewer often do */
    for (int digits = 6; digits <= 17; digits++) {
        snprintf(buf, size, "%.*g", digits, v);
        if (strtod(buf, NULL) == v)
            return;
    }
}
