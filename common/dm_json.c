#include <math.h>

#include "dm_json.h"
#include "dm_number_text.h"

void dm_json_string(FILE *out, const char *s)
{
    fputc('"', out);
    for (const unsigned char *c = (const unsigned char *)(s ? s : ""); *c; c++) {
        switch (*c) {
        case '"': fputs("\\\"", out); break;
        case '\\': fputs("\\\\", out); break;
        case '\n': fputs("\\n", out); break;
        case '\r': fputs("\\r", out); break;
        case '\t': fputs("\\t", out); break;
        default:
            if (*c < 0x20)
                fprintf(out, "\\u%04x", *c);
            else
                fputc(*c, out);
        }
    }
    fputc('"', out);
}

void dm_json_number(FILE *out, double v, const char *format)
{
    char text[40];
    if (isfinite(v) && format == NULL) {
        dm_number_text(v, text, sizeof text);
        fputs(text, out);
    } else if (isfinite(v)) {
        fprintf(out, format, v);
    } else {
        fputs("null", out); /* JSON has no NaN or infinity */
    }
}
