/* dm_json.h — the one JSON writer for every command's --format json / --json output:
 * strings escaped for any bytes, numbers that JSON can hold (NaN and infinities, which
 * it cannot, become null). */
#ifndef DM_JSON_H
#define DM_JSON_H

#include <stdio.h>

/* A JSON string: quotes, backslashes and control bytes escaped; NULL writes "". */
void dm_json_string(FILE *out, const char *s);

/* A number with printf format `format` (for one double, e.g. "%.17g"), or with format
 * NULL in the shortest form that reads back as the same double (dm_number_text.h);
 * null when NaN or infinite. */
void dm_json_number(FILE *out, double v, const char *format);

#endif
