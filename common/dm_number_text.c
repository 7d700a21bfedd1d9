#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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

void dm_number_text_apart(double value, double limit, char *value_buf, char *limit_buf,
                          size_t size)
{
    char magnitude[40];
    for (int digits = 3; digits <= 17; digits++) {
        snprintf(value_buf, size, "%.*g", digits, value);
        snprintf(limit_buf, size, "%.*g", digits, limit);
        snprintf(magnitude, sizeof magnitude, "%.*g", digits, fabs(value));
        if (strcmp(magnitude, limit_buf) != 0)
            return;
    }
}
