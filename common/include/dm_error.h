/* dm_error.h — one error object passed up unchanged from where a failure is understood.
 *
 * The message is written once, at the place that knows what went wrong
 * ("pendulum: amplitude = 3.14159... lies on the separatrix (infinite period)"), and
 * callers above only add a location prefix when they have one (a suite file line).
 */
#ifndef DM_ERROR_H
#define DM_ERROR_H

#include <stddef.h>

typedef enum dm_status {
    DM_OK = 0,
    DM_EINPUT = 2,    /* bad input from the user: exit status 2 */
    DM_ENUMERIC = 3,  /* a numerical fault: divergence, NaN, no convergence */
    DM_ESOLVER = 4,   /* an outside solver (CVODE) reported failure */
    DM_EIO = 5,       /* reading or writing a file failed */
    DM_ENOMEM = 6     /* allocation failed */
} dm_status;

#define DM_ERROR_MSG_MAX 512

typedef struct dm_error {
    dm_status code;
    char msg[DM_ERROR_MSG_MAX];
} dm_error;

/* Control bytes of `in` written as escapes (\n, \t, \x1b ...) into out, cut to fit:
 * for any text that came from a file or the user before it reaches a terminal, so a
 * message stays one line and no escape sequence is sent raw. */
void dm_escape_controls(const char *in, char *out, size_t size);

/* Sets *err (if err is not NULL) and returns code, so a failing path can say
 * `return dm_error_set(err, DM_EINPUT, "...", ...);`. The message is always one line:
 * control bytes in it (from a quoted path or name) are escaped. */
dm_status dm_error_set(dm_error *err, dm_status code, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Prefixes an existing message, e.g. with "suite.yaml:12:9: ". */
void dm_error_prefix(dm_error *err, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

void dm_error_clear(dm_error *err);

/* The candidate closest to `word` by edit distance, or NULL when none is close
 * enough to be a plausible misspelling. Used for "did you mean" hints. */
const char *dm_suggest(const char *word, const char *const *candidates, size_t count);

/* Parses a whole string as a finite double; rejects junk, NaN, Inf and overflow.
 * Returns 0 on success. */
int dm_parse_double(const char *text, double *out);

#endif
