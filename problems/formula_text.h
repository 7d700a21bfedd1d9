/* formula_text.h — the text side of formula problems: what we do to a formula before
 * GNU libmatheval parses it, and to libmatheval's output before a compiler sees it.
 * libmatheval does the parsing, evaluating and differentiating; this is lexing (what is
 * a number, a name, a bracket) and a rewrite of its fully parenthesised output. */
#ifndef DM_FORMULA_TEXT_H
#define DM_FORMULA_TEXT_H

#include <stdbool.h>
#include <stddef.h>

#include "dm_error.h"

#define DM_FORMULA_NAME_MAX 64
#define DM_FORMULA_MAX_CONSTANTS 512

/* One name as written in a formula, and where (1-based column). */
typedef struct dm_formula_name {
    char name[DM_FORMULA_NAME_MAX];
    int column;
    bool function;                   /* followed by '(' */
} dm_formula_name;

/* A formula as libmatheval will see it. libmatheval prints numbers with 6 significant
 * digits (evaluator_get_string uses %g), so a number written in the formula is handed
 * to it as a name, _k0, _k1, ... (values in constants[]), and stays exact in the
 * derivatives and the generated code. A number right after ^ (an exponent, optionally
 * signed or in brackets) stays a number: libmatheval differentiates x^n by the power
 * rule only for a number n; it must then read back the same from 6 digits (it and n - 1,
 * the derivative's exponent). */
typedef struct dm_formula_scan {
    char *text;                      /* malloc'd */
    int n_names;
    dm_formula_name *names;          /* malloc'd */
} dm_formula_scan;

/* Scans `formula`; constants are numbered from *n_constants on and stored in
 * constants[] (capacity DM_FORMULA_MAX_CONSTANTS). On bad input returns DM_EINPUT with
 * *column (1-based, inside the formula) and a message without location. */
dm_status dm_formula_scan_text(const char *formula, double *constants, int *n_constants,
                               dm_formula_scan *out, int *column, dm_error *err);
void dm_formula_scan_free(dm_formula_scan *scan);

/* The functions a formula may call (libmatheval's names), NULL-terminated, as text for
 * messages, and whether `name` is one of them. */
extern const char *const dm_formula_functions[];
bool dm_formula_is_function(const char *name);
/* Whether `name` is one of libmatheval's constants we accept (pi, e). */
bool dm_formula_is_constant(const char *name);

/* For a formula libmatheval refused: the 1-based column of the first character after
 * which no completion parses (found by asking libmatheval about prefixes). */
int dm_formula_error_column(const char *formula);

/* Maps a name of libmatheval's output to C (q[0], P[1], the constant's value ...).
 * Returns false for a name it does not know. */
typedef bool (*dm_formula_map_fn)(void *data, const char *name, char *out, size_t size);

/* Rewrites libmatheval's fully parenthesised infix (evaluator_get_string) with the
 * terms it leaves unsimplified dropped (X*0, 0*X, X+0, X-0, 0/X; X*1, X/1, X^1,
 * -(-X)): as C (`c`: ^ as pow(), names through map) or, for checking the rewrite, in
 * libmatheval's own syntax (names as they are). A dropped X*0 differs from IEEE
 * arithmetic only where X is infinite or NaN, and in the sign of a zero sum. Returns a
 * malloc'd text, or NULL with *err set for a text it cannot read. */
char *dm_formula_rewrite(const char *infix, bool c, dm_formula_map_fn map, void *data,
                         dm_error *err);

#endif
