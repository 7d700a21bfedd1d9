/* suite_table.c — a method typed as a coefficient table in a suite's methods entry:
 *
 *   - table: {name: NAME, order: P, kick: [...], drift: [...]}        a splitting
 *     table: {name: NAME, order: P, compose: verlet, weights: [...]}  a composition
 *     table: {name: NAME, order: P, a: [[], [...], ...], b: [...]}    a Butcher tableau
 *     table: {name: NAME, order: P, abar: [[], ...], bbar: [...], b: [...], c: [...]}
 *                                                          a Runge-Kutta-Nystrom table
 *
 * with `first: kick|drift` when the kick and drift lists are of equal length, `mirror:
 * true` when kick/drift or weights are the first half of a symmetric table (up to and
 * including the middle coefficient), `c: [...]` (checked against the rows of a),
 * `reference: TEXT` and `experimental: true` (runs go on when the claimed order is not
 * reached). Everything is read and checked here, before any run: each error one line
 * at the node it is about. The numerics (expansion, sums, order) are user_table.c's.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dm_hash.h"
#include "suite_read.h"
#include "user_table.h"

#define DM_SUITE_MAX_TABLES 64   /* tables one suite may type (each is checked up front) */

static const char *const table_keys[] = { "name", "order", "reference", "experimental",
                                          "mirror", "first", "kick", "drift",
                                          "compose", "weights", "a", "b", "c",
                                          "abar", "bbar" };
enum { K_NAME, K_ORDER, K_REFERENCE, K_EXPERIMENTAL, K_MIRROR, K_FIRST, K_KICK, K_DRIFT,
       K_COMPOSE, K_WEIGHTS, K_A, K_B, K_C, K_ABAR, K_BBAR, N_TABLE_KEYS };

/* A list of at most `max` numbers (at least one). */
static dm_status get_coefficients(parse_ctx *c, const yaml_node_t *node, const char *what,
                                  int max, double *out, int *n)
{
    if (node->type != YAML_SEQUENCE_NODE)
        return fail_at(c, node, "%s must be a list of numbers, found %s (expected [c1, c2, "
                       "...])", what, node_kind(node));
    const yaml_node_item_t *start = node->data.sequence.items.start;
    const yaml_node_item_t *top = node->data.sequence.items.top;
    if (top - start > max)
        return fail_at(c, node, "%s lists %d coefficients (expected at most %d)", what,
                       (int)(top - start), max);
    *n = 0;
    for (const yaml_node_item_t *it = start; it < top; it++) {
        dm_status st = get_number(c, node_at(c, *it), what, &out[(*n)++]);
        if (st != DM_OK)
            return st;
    }
    return DM_OK;
}

/* a (or abar): the rows of a strictly lower triangular matrix, row i with i entries
 * (the first row empty) or with all `stages` entries, zero from the diagonal on. */
static dm_status get_matrix(parse_ctx *c, const yaml_node_t *node, const char *what,
                            dm_table_input *in)
{
    if (node->type != YAML_SEQUENCE_NODE)
        return fail_at(c, node, "%s must be a list of rows, found %s (expected [[], [a21], "
                       "[a31, a32], ...])", what, node_kind(node));
    const yaml_node_item_t *start = node->data.sequence.items.start;
    int rows = (int)(node->data.sequence.items.top - start);
    if (rows != in->stages)
        return fail_at(c, node, "%s has %d rows and b %d weights (expected one row per "
                       "stage)", what, rows, in->stages);
    for (int i = 0; i < rows; i++) {
        const yaml_node_t *row = node_at(c, start[i]);
        double v[DM_RK_MAX_STAGES];
        int n;
        dm_status st = get_coefficients(c, row, "a row", DM_RK_MAX_STAGES, v, &n);
        if (st != DM_OK)
            return st;
        if (n != i && n != rows)
            return fail_at(c, row, "row %d of %s has %d entries (expected %d, the entries "
                           "left of the diagonal, or all %d)", i + 1, what, n, i, rows);
        for (int j = i; j < n; j++)
            if (v[j] != 0.0)
                return fail_at(c, row, "%s%d%d = %.17g is on or above the diagonal "
                               "(expected an explicit table: zeros from the diagonal on)",
                               what, i + 1, j + 1, v[j]);
        for (int j = 0; j < i; j++)
            in->a[i][j] = v[j];
    }
    return DM_OK;
}

/* The table's name: a plain word of our run ids, not a built-in method's. */
static dm_status get_table_name(parse_ctx *c, const yaml_node_t *node, char *name)
{
    dm_status st = get_string(c, node, "table name", name, DM_TABLE_NAME_MAX);
    if (st != DM_OK)
        return st;
    for (const char *s = name; *s; s++)
        if (!((*s >= 'a' && *s <= 'z') || (*s >= 'A' && *s <= 'Z') ||
              (*s >= '0' && *s <= '9') || *s == '-' || *s == '_'))
            return fail_at(c, node, "table name '%s' has the character '%c' (expected "
                           "letters, digits, - and _)", name, *s);
    if (dm_method_find(name) != NULL)
        return fail_at(c, node, "table name '%s' is a built-in method's (expected a name of "
                       "your own)", name);
    return DM_OK;
}

/* compose: a built-in symmetric splitting. */
static dm_status get_base(parse_ctx *c, const yaml_node_t *node, dm_table_input *in)
{
    char id[DM_TABLE_NAME_MAX];
    dm_status st = get_string(c, node, "compose", id, sizeof id);
    if (st != DM_OK)
        return st;
    in->base = dm_method_find(id);
    if (in->base == NULL || in->base->splitting == NULL || !in->base->symmetric) {
        const char *names[64];
        size_t n = 0;
        for (size_t i = 0; i < dm_method_count && n < 64; i++)
            if (dm_methods[i]->splitting != NULL && dm_methods[i]->symmetric)
                names[n++] = dm_methods[i]->id;
        return fail_unknown(c, node, "symmetric splitting to compose", id, names, n);
    }
    return DM_OK;
}

static dm_status get_first(parse_ctx *c, const yaml_node_t *node, dm_table_input *in)
{
    char word[8];
    dm_status st = get_string(c, node, "first", word, sizeof word);
    if (st == DM_OK && strcmp(word, "kick") != 0 && strcmp(word, "drift") != 0)
        st = fail_at(c, node, "first: '%s' (expected kick or drift)", word);
    in->first = st == DM_OK ? strcmp(word, "kick") == 0 : -1;
    return st;
}

/* One key's value into `in`. */
static dm_status read_value(parse_ctx *c, int k, const yaml_node_t *v, dm_table_input *in)
{
    double x;
    dm_status st = DM_OK;
    switch (k) {
    case K_NAME: return get_table_name(c, v, in->name);
    case K_ORDER:
        st = get_whole(c, v, "order", 1, DM_ORDER_MAX, &x);
        if (st == DM_OK) /* x is only in range when read */
            in->claimed_order = (int)x;
        return st;
    case K_REFERENCE:
        st = get_string(c, v, "reference", in->reference, sizeof in->reference);
        if (st == DM_OK && has_control(in->reference))
            st = fail_at(c, v, "reference has a control character (expected one line)");
        return st;
    case K_EXPERIMENTAL: return get_bool(c, v, "experimental", &in->experimental);
    case K_MIRROR: return get_bool(c, v, "mirror", &in->mirror);
    case K_FIRST: return get_first(c, v, in);
    case K_KICK:
        return get_coefficients(c, v, "kick", DM_TABLE_MAX_COEFFICIENTS, in->kick, &in->n_kick);
    case K_DRIFT:
        return get_coefficients(c, v, "drift", DM_TABLE_MAX_COEFFICIENTS, in->drift,
                                &in->n_drift);
    case K_COMPOSE: return get_base(c, v, in);
    case K_WEIGHTS:
        return get_coefficients(c, v, "weights", DM_TABLE_MAX_COEFFICIENTS, in->weights,
                                &in->n_weights);
    case K_B: return get_coefficients(c, v, "b", DM_RK_MAX_STAGES, in->b, &in->stages);
    default: return DM_OK; /* a, abar, bbar and c are read once b gave the stages */
    }
}

/* Which form the keys given make, every key fitting it. */
static dm_status find_form(parse_ctx *c, const yaml_node_t *node, const yaml_node_t **at,
                           dm_table_input *in)
{
    bool splitting = at[K_KICK] || at[K_DRIFT] || at[K_FIRST];
    bool composition = at[K_COMPOSE] || at[K_WEIGHTS];
    bool nystrom = at[K_ABAR] || at[K_BBAR];
    bool runge_kutta = at[K_A] || ((at[K_B] || at[K_C]) && !nystrom);
    if (splitting + composition + runge_kutta + nystrom != 1)
        return fail_at(c, node, "a table gives %s (expected kick and drift, compose and "
                       "weights, a and b, or abar, bbar, b and c)",
                       splitting + composition + runge_kutta + nystrom
                           ? "the keys of two forms" : "no coefficients");
    const struct { int key; int needs; } need[] = {
        { K_KICK, K_DRIFT }, { K_DRIFT, K_KICK }, { K_FIRST, K_KICK },
        { K_COMPOSE, K_WEIGHTS }, { K_WEIGHTS, K_COMPOSE }, { K_A, K_B },
        { K_ABAR, K_BBAR }, { K_BBAR, K_ABAR }, { K_ABAR, K_B }, { K_ABAR, K_C },
        { K_B, nystrom ? K_ABAR : K_A }, { K_C, nystrom ? K_ABAR : K_A },
    };
    for (size_t i = 0; i < sizeof need / sizeof need[0]; i++)
        if (at[need[i].key] && !at[need[i].needs])
            return fail_at(c, at[need[i].key], "%s without %s (expected both)",
                           table_keys[need[i].key], table_keys[need[i].needs]);
    in->form = splitting     ? DM_TABLE_SPLITTING
               : composition ? DM_TABLE_COMPOSITION
               : nystrom     ? DM_TABLE_NYSTROM
                             : DM_TABLE_RUNGE_KUTTA;
    if ((runge_kutta || nystrom) && at[K_MIRROR])
        return fail_at(c, at[K_MIRROR], "mirror applies to kick/drift and weights only "
                       "(expected the whole Butcher tableau)");
    if (!at[K_NAME] || !at[K_ORDER])
        return fail_at(c, node, "a table lacks '%s' (expected {name: NAME, order: P, ...})",
                       at[K_NAME] ? "order" : "name");
    return DM_OK;
}

/* The keys of a table: known, unique, their values read. */
static dm_status read_input(parse_ctx *c, const yaml_node_t *node, const yaml_node_t **at,
                            dm_table_input *in)
{
    if (node->type != YAML_MAPPING_NODE)
        return fail_at(c, node, "table must be a mapping, found %s (expected {name: NAME, "
                       "order: P, kick: [...], drift: [...]})", node_kind(node));
    dm_status st = check_unique_keys(c, node);
    if (st != DM_OK)
        return st;
    memset(in, 0, sizeof *in);
    in->first = -1;
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         p < node->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        int k;
        if ((st = get_known_key(c, p, "table key", table_keys, N_TABLE_KEYS, &key, &k)) !=
            DM_OK)
            return st;
        at[k] = node_at(c, p->value);
        if ((st = read_value(c, k, at[k], in)) != DM_OK)
            return st;
    }
    if ((st = find_form(c, node, at, in)) != DM_OK)
        return st;
    if (at[K_A] && (st = get_matrix(c, at[K_A], "a", in)) != DM_OK)
        return st;
    if (at[K_ABAR] && (st = get_matrix(c, at[K_ABAR], "abar", in)) != DM_OK)
        return st;
    int n_bbar;
    if (at[K_BBAR] && (st = get_coefficients(c, at[K_BBAR], "bbar", DM_RK_MAX_STAGES,
                                             in->bbar, &n_bbar)) != DM_OK)
        return st;
    if (at[K_BBAR] && n_bbar != in->stages)
        return fail_at(c, at[K_BBAR], "bbar has %d weights and b %d (expected one per "
                       "stage)", n_bbar, in->stages);
    if (at[K_C]) {
        int n;
        if ((st = get_coefficients(c, at[K_C], "c", DM_RK_MAX_STAGES, in->c, &n)) != DM_OK)
            return st;
        if (n != in->stages)
            return fail_at(c, at[K_C], "c has %d nodes and b %d weights (expected one per "
                           "stage)", n, in->stages);
        in->c_given = true;
    }
    return DM_OK;
}

/* The order found against the order claimed: short of it, an error unless the table
 * is marked experimental. */
static dm_status check_claim(parse_ctx *c, const yaml_node_t *at, const dm_user_table *t)
{
    if (dm_user_table_reaches_claim(t) || t->input.experimental)
        return DM_OK;
    const dm_table_findings *f = &t->findings;
    if (f->conditions_checked_to > 0)
        return fail_at(c, at, "table %s claims order %d but meets the order conditions to "
                       "order %d only (largest residual at order %d: %.3g; expected the "
                       "claimed order, or experimental: true)", t->input.name,
                       t->input.claimed_order, f->order_found, f->order_found + 1,
                       f->condition_residual[f->order_found + 1]);
    if (!isfinite(f->measured[0].order) || !isfinite(f->measured[1].order))
        return fail_at(c, at, "table %s claims order %d but its convergence test gave no finite "
                       "error (measured %.2f on the %s, %.2f on the %s: coefficients too large "
                       "for double precision?; expected coefficients whose sums and products "
                       "stay finite)", t->input.name, t->input.claimed_order,
                       f->measured[0].order, dm_table_check_problems[0], f->measured[1].order,
                       dm_table_check_problems[1]);
    return fail_at(c, at, "table %s claims order %d but reaches %d (measured %.2f on the %s, "
                   "%.2f on the %s; expected the claimed order, or experimental: true)",
                   t->input.name, t->input.claimed_order, f->order_found,
                   f->measured[0].order, dm_table_check_problems[0], f->measured[1].order,
                   dm_table_check_problems[1]);
}

static const yaml_node_t *list_node(const yaml_node_t **at, dm_table_list which,
                                    const yaml_node_t *node)
{
    switch (which) {
    case DM_LIST_KICK: return at[K_KICK];
    case DM_LIST_DRIFT: return at[K_DRIFT];
    case DM_LIST_WEIGHTS: return at[K_WEIGHTS];
    case DM_LIST_A: return at[K_A];
    case DM_LIST_B: return at[K_B];
    case DM_LIST_C: return at[K_C];
    case DM_LIST_BBAR: return at[K_BBAR];
    case DM_LIST_NONE: break;
    }
    return node;
}

dm_status dm_suite_read_table(parse_ctx *c, const yaml_node_t *node,
                              struct dm_user_table ***tables, size_t *n_tables,
                              const dm_method **method)
{
    const yaml_node_t *at[N_TABLE_KEYS] = { NULL };
    dm_table_input in;
    dm_status st = read_input(c, node, at, &in);
    if (st != DM_OK)
        return st;
    dm_user_table *t = malloc(sizeof *t);
    if (t == NULL)
        return dm_error_set(c->err, DM_ENOMEM, "out of memory reading the suite");
    dm_table_list which;
    dm_error berr = { 0 };
    if (dm_user_table_build(t, &in, &which, &berr) != DM_OK) {
        free(t);
        return fail_at(c, list_node(at, which, node), "table %s: %s", in.name, berr.msg);
    }
    for (size_t i = 0; i < *n_tables; i++) {
        if (strcmp((*tables)[i]->input.name, in.name) != 0)
            continue;
        bool same = strcmp((*tables)[i]->text, t->text) == 0;
        free(t);
        if (!same)
            return fail_at(c, at[K_NAME], "table %s is given twice with other coefficients "
                           "(expected one table per name)", in.name);
        *method = &(*tables)[i]->method;
        return DM_OK;
    }
    if (*n_tables == DM_SUITE_MAX_TABLES) {
        free(t);
        return fail_at(c, node, "more than %d tables in one suite (expected fewer: each is "
                       "checked by a convergence test before the runs)", DM_SUITE_MAX_TABLES);
    }
    dm_user_table **grown = realloc(*tables, (*n_tables + 1) * sizeof *grown);
    if (grown == NULL) {
        free(t);
        return dm_error_set(c->err, DM_ENOMEM, "out of memory reading the suite");
    }
    *tables = grown;
    (*tables)[(*n_tables)++] = t;
    dm_error cerr = { 0 };
    if (dm_user_table_check(t, &cerr) != DM_OK)
        return fail_at(c, node, "table %s could not be checked: %s", in.name, cerr.msg);
    *method = &t->method;
    return check_claim(c, at[K_ORDER], t);
}
