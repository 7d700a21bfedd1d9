/* suite_read.h — the suite reader's YAML helpers, shared by suite.c and the reader of
 * the tables typed in a suite (suite_table.c). Private to harness/. Every error is one
 * line "FILE:LINE:COLUMN: what is wrong (what was expected)". */
#ifndef DM_SUITE_READ_H
#define DM_SUITE_READ_H

#include <stdbool.h>
#include <stddef.h>

#include <yaml.h>

#include "harness.h"

typedef struct parse_ctx {
    yaml_document_t *doc;
    const char *source;
    const char *folder;   /* where relative paths start: dm_suite.folder */
    dm_error *err;
    /* where scalars tagged explicitly as something other than a number (!!str ...)
     * start: the document API gives every scalar a tag, so only the events tell */
    size_t *text_tagged;
    size_t n_text_tagged;
} parse_ctx;

size_t node_line(const yaml_node_t *node);
dm_status fail_at(parse_ctx *c, const yaml_node_t *node, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
yaml_node_t *node_at(parse_ctx *c, int index);
const char *node_kind(const yaml_node_t *node);
const char *scalar_text(const yaml_node_t *node);
bool scalar_is_quoted(const yaml_node_t *node);
dm_status fail_unknown(parse_ctx *c, const yaml_node_t *node, const char *what,
                       const char *word, const char *const *names, size_t n);
dm_status get_key(parse_ctx *c, const yaml_node_pair_t *pair, yaml_node_t **key,
                  const char **name);
/* The key of `pair`, one of names[0..n) (its index in *k), else an error naming it as
 * an unknown `what`, with a hint. */
dm_status get_known_key(parse_ctx *c, const yaml_node_pair_t *pair, const char *what,
                        const char *const *names, int n, yaml_node_t **key, int *k);
/* A mapping must not give a key twice. */
dm_status check_unique_keys(parse_ctx *c, const yaml_node_t *map);
/* A finite number, untagged and unquoted. */
dm_status get_number(parse_ctx *c, const yaml_node_t *node, const char *what, double *out);
dm_status get_positive(parse_ctx *c, const yaml_node_t *node, const char *what,
                       double *out);
dm_status get_whole(parse_ctx *c, const yaml_node_t *node, const char *what, double lo,
                    double hi, double *out);
dm_status get_bool(parse_ctx *c, const yaml_node_t *node, const char *what, bool *out);
dm_status get_string(parse_ctx *c, const yaml_node_t *node, const char *what, char *buf,
                     size_t size);
/* Names become file names and table cells: no control characters. */
bool has_control(const char *s);

/* The `table:` of a methods entry (suite_table.c): read, built, checked, and kept in
 * *tables (one per name: an identical table given again is the same one; another
 * table under a name already used is an error). *method gets the method it became. */
dm_status dm_suite_read_table(parse_ctx *c, const yaml_node_t *node,
                              struct dm_user_table ***tables, size_t *n_tables,
                              const dm_method **method);

#endif
