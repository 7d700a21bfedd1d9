#include "dm_error.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void dm_escape_controls(const char *in, char *out, size_t size)
{
    if (size == 0)
        return;
    size_t used = 0;
    for (const unsigned char *s = (const unsigned char *)in; *s && used + 1 < size; s++) {
        char esc[8];
        if (*s >= 0x20 && *s != 0x7f) {
            out[used++] = (char)*s;
            continue;
        }
        switch (*s) {
        case '\n': snprintf(esc, sizeof esc, "\\n"); break;
        case '\r': snprintf(esc, sizeof esc, "\\r"); break;
        case '\t': snprintf(esc, sizeof esc, "\\t"); break;
        default: snprintf(esc, sizeof esc, "\\x%02x", (unsigned)*s); break;
        }
        size_t n = strlen(esc);
        if (used + n + 1 > size)
            break;
        memcpy(out + used, esc, n);
        used += n;
    }
    out[used] = '\0';
}

dm_status dm_error_set(dm_error *err, dm_status code, const char *fmt, ...)
{
    if (err != NULL) {
        char raw[DM_ERROR_MSG_MAX];
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(raw, sizeof raw, fmt, ap);
        va_end(ap);
        err->code = code;
        dm_escape_controls(raw, err->msg, sizeof err->msg);
    }
    return code;
}

void dm_error_prefix(dm_error *err, const char *fmt, ...)
{
    if (err == NULL)
        return;
    char raw[DM_ERROR_MSG_MAX], head[DM_ERROR_MSG_MAX];
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(raw, sizeof raw, fmt, ap);
    va_end(ap);
    if (n <= 0)
        return;
    dm_escape_controls(raw, head, sizeof head);
    size_t hl = strlen(head);
    size_t ml = strlen(err->msg);
    if (hl + ml >= sizeof err->msg)
        ml = sizeof err->msg - 1 - hl; /* keep the location, cut the tail */
    memmove(err->msg + hl, err->msg, ml);
    memcpy(err->msg, head, hl);
    err->msg[hl + ml] = '\0';
}

void dm_error_clear(dm_error *err)
{
    if (err != NULL) {
        err->code = DM_OK;
        err->msg[0] = '\0';
    }
}

/* Levenshtein distance, bounded to short identifiers (longer words are not
 * misspellings of our names). */
static size_t edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > 63 || lb > 63)
        return (size_t)-1;
    size_t row[64];
    for (size_t j = 0; j <= lb; j++)
        row[j] = j;
    for (size_t i = 1; i <= la; i++) {
        size_t diag = row[0];
        row[0] = i;
        for (size_t j = 1; j <= lb; j++) {
            size_t up = row[j];
            size_t cost = (a[i - 1] == b[j - 1]) ? 0 : 1;
            size_t best = diag + cost;
            if (row[j] + 1 < best)
                best = row[j] + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    return row[lb];
}

const char *dm_suggest(const char *word, const char *const *candidates, size_t count)
{
    const char *best = NULL;
    size_t best_d = (size_t)-1;
    for (size_t i = 0; i < count; i++) {
        size_t d = edit_distance(word, candidates[i]);
        if (d < best_d) {
            best_d = d;
            best = candidates[i];
        }
    }
    /* A third of the word's length, at least one and at most three edits. */
    size_t limit = strlen(word) / 3;
    if (limit < 1)
        limit = 1;
    if (limit > 3)
        limit = 3;
    return best_d <= limit ? best : NULL;
}

int dm_parse_double(const char *text, double *out)
{
    if (text == NULL || *text == '\0')
        return -1;
    char *end = NULL;
    errno = 0;
    double v = strtod(text, &end);
    if (end == text || *end != '\0' || errno == ERANGE || !isfinite(v))
        return -1;
    *out = v;
    return 0;
}
