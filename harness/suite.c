/* suite.c — YAML suite text -> a validated dm_suite (the list of runs and sweeps).
 *
 * libyaml's document API builds the node tree (every node carries its line and column);
 * this file only walks it. Everything is checked before anything runs: a suite that
 * would fail after an hour of integration because of a typo in its last entry is
 * refused at once, with one line "FILE:LINE:COLUMN: what is wrong (what was expected)".
 *
 * Expansion: every problem entry gives one or more variants (a list of values is a
 * sweep over that parameter; several lists form their product, parameters in the
 * problem table's order, the first one outermost). The runs are
 *   for each problem variant, for each method entry, for each step or tolerance value
 * in file order. A (variant, method entry) pair with two or more step or tolerance values is a sweep.
 */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <inttypes.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <yaml.h>

#include "dm_hash.h"
#include "formula.h"
#include "harness.h"
#include "nbody.h"
#include "run_index.h"
#include "suite_read.h"

#define DM_DEFAULT_SAMPLES 4096
#define DM_MAX_SAMPLES 10000000
#define DM_DEFAULT_STEP_BUDGET 1e10
#define DM_RTOL_MIN 1e-14
#define DM_RTOL_MAX 1e-1
#define DM_RANGE_MAX 100          /* values one {from, to, factor} range may give */
#define DM_RANGE_STEPS_MAX 100000 /* factors one range may take before merging whole values */
#define DM_MAX_DEPTH 64           /* nesting of lists and mappings (a suite needs 4) */
#define DM_LIST_MAX 1000          /* values one list may give */

/* ---- locations and errors ---- */

size_t node_line(const yaml_node_t *node)
{
    return node->start_mark.line + 1;
}

static size_t node_column(const yaml_node_t *node)
{
    return node->start_mark.column + 1;
}

dm_status fail_at(parse_ctx *c, const yaml_node_t *node, const char *fmt, ...)
{
    /* Messages quote what the user wrote, and a YAML text may hold any character (a
     * quoted "a\nb", a block scalar): dm_error_set keeps the message one line. */
    char what[DM_ERROR_MSG_MAX];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    return dm_error_set(c->err, DM_EINPUT, "%s:%zu:%zu: %s", c->source, node_line(node),
                        node_column(node), what);
}

/* Adds the location of `node` in front of an error written elsewhere
 * (dm_instance_init's parameter and regime messages). */
static dm_status prefix_at(parse_ctx *c, const yaml_node_t *node)
{
    dm_error_prefix(c->err, "%s:%zu:%zu: ", c->source, node_line(node), node_column(node));
    c->err->code = DM_EINPUT;
    return DM_EINPUT;
}

yaml_node_t *node_at(parse_ctx *c, int index)
{
    return yaml_document_get_node(c->doc, index);
}

const char *node_kind(const yaml_node_t *node)
{
    switch (node->type) {
    case YAML_SCALAR_NODE: return "a scalar";
    case YAML_SEQUENCE_NODE: return "a list";
    case YAML_MAPPING_NODE: return "a mapping";
    default: return "an empty node";
    }
}

const char *scalar_text(const yaml_node_t *node)
{
    return (const char *)node->data.scalar.value;
}

bool scalar_is_quoted(const yaml_node_t *node)
{
    return node->data.scalar.style == YAML_SINGLE_QUOTED_SCALAR_STYLE ||
           node->data.scalar.style == YAML_DOUBLE_QUOTED_SCALAR_STYLE;
}

/* "a, b, c" for an "(expected one of ...)" hint. */
static void join_names(const char *const *names, size_t n, char *buf, size_t size)
{
    buf[0] = '\0';
    size_t used = 0;
    for (size_t i = 0; i < n && used + 1 < size; i++) {
        int w = snprintf(buf + used, size - used, "%s%s", i ? ", " : "", names[i]);
        if (w < 0)
            break;
        used += (size_t)w;
    }
}

dm_status fail_unknown(parse_ctx *c, const yaml_node_t *node, const char *what,
                              const char *word, const char *const *names, size_t n)
{
    const char *hint = dm_suggest(word, names, n);
    if (hint != NULL)
        return fail_at(c, node, "unknown %s '%s' (did you mean '%s'?)", what, word, hint);
    char list[400];
    join_names(names, n, list, sizeof list);
    return fail_at(c, node, "unknown %s '%s' (expected one of: %s)", what, word, list);
}

/* ---- scalar readers ---- */

dm_status get_key(parse_ctx *c, const yaml_node_pair_t *pair, yaml_node_t **key,
                         const char **name)
{
    *key = node_at(c, pair->key);
    if ((*key)->type != YAML_SCALAR_NODE)
        return fail_at(c, *key, "a key must be a plain name, found %s (expected name: value)",
                       node_kind(*key));
    *name = scalar_text(*key);
    return DM_OK;
}

dm_status get_known_key(parse_ctx *c, const yaml_node_pair_t *pair, const char *what,
                        const char *const *names, int n, yaml_node_t **key, int *k)
{
    const char *name;
    dm_status st = get_key(c, pair, key, &name);
    if (st != DM_OK)
        return st;
    for (*k = 0; *k < n && strcmp(name, names[*k]) != 0; (*k)++)
        ;
    if (*k == n)
        return fail_unknown(c, *key, what, name, names, (size_t)n);
    return DM_OK;
}

/* A mapping must not give a key twice (libyaml accepts it; YAML forbids it). */
dm_status check_unique_keys(parse_ctx *c, const yaml_node_t *map)
{
    for (const yaml_node_pair_t *a = map->data.mapping.pairs.start;
         a < map->data.mapping.pairs.top; a++) {
        yaml_node_t *ka = node_at(c, a->key);
        if (ka->type != YAML_SCALAR_NODE)
            continue;
        for (const yaml_node_pair_t *b = map->data.mapping.pairs.start; b < a; b++) {
            yaml_node_t *kb = node_at(c, b->key);
            if (kb->type == YAML_SCALAR_NODE && strcmp(scalar_text(ka), scalar_text(kb)) == 0)
                return fail_at(c, ka, "key '%s' given twice (first at line %zu)",
                               scalar_text(ka), node_line(kb));
        }
    }
    return DM_OK;
}

static bool tagged_as_text(const parse_ctx *c, const yaml_node_t *node)
{
    for (size_t i = 0; i < c->n_text_tagged; i++)
        if (c->text_tagged[i] == node->start_mark.index)
            return true;
    return false;
}

dm_status get_number(parse_ctx *c, const yaml_node_t *node, const char *what,
                            double *out)
{
    if (node->type != YAML_SCALAR_NODE)
        return fail_at(c, node, "%s must be a number, found %s (expected a number such as 0.5)",
                       what, node_kind(node));
    if (tagged_as_text(c, node)) {
        const char *tag = (const char *)node->tag;
        bool core = strncmp(tag, "tag:yaml.org,2002:", 18) == 0;
        return fail_at(c, node, "%s must be a number, found '%s' tagged %s%s (expected an "
                       "untagged number, or one tagged !!float or !!int)", what,
                       scalar_text(node), core ? "!!" : "", core ? tag + 18 : tag);
    }
    if (!scalar_is_quoted(node) && scalar_text(node)[0] == '\0')
        return fail_at(c, node, "%s has no value (expected a number)", what);
    if (scalar_is_quoted(node))
        return fail_at(c, node,
                       "%s must be a number, found the quoted string \"%s\" (expected an "
                       "unquoted number)",
                       what, scalar_text(node));
    if (dm_parse_double(scalar_text(node), out) != 0)
        return fail_at(c, node,
                       "%s: '%s' is not a finite number (expected a number such as 0.5 or "
                       "1.0e-3)",
                       what, scalar_text(node));
    return DM_OK;
}

dm_status get_positive(parse_ctx *c, const yaml_node_t *node, const char *what,
                              double *out)
{
    dm_status st = get_number(c, node, what, out);
    if (st != DM_OK)
        return st;
    if (!(*out > 0.0))
        return fail_at(c, node, "%s = %g must be positive (expected a number > 0)", what, *out);
    return DM_OK;
}

dm_status get_whole(parse_ctx *c, const yaml_node_t *node, const char *what,
                           double lo, double hi, double *out)
{
    dm_status st = get_number(c, node, what, out);
    if (st != DM_OK)
        return st;
    if (*out != floor(*out) || *out < lo || *out > hi)
        return fail_at(c, node, "%s = %s is out of range (expected a whole number in [%.0f, %.0f])",
                       what, scalar_text(node), lo, hi);
    return DM_OK;
}

dm_status get_bool(parse_ctx *c, const yaml_node_t *node, const char *what, bool *out)
{
    if (node->type == YAML_SCALAR_NODE && !scalar_is_quoted(node)) {
        if (strcmp(scalar_text(node), "true") == 0) {
            *out = true;
            return DM_OK;
        }
        if (strcmp(scalar_text(node), "false") == 0) {
            *out = false;
            return DM_OK;
        }
    }
    if (node->type != YAML_SCALAR_NODE)
        return fail_at(c, node, "%s must be true or false, found %s", what, node_kind(node));
    return fail_at(c, node, "%s: '%s' is not a boolean (expected true or false)", what,
                   scalar_text(node));
}

dm_status get_string(parse_ctx *c, const yaml_node_t *node, const char *what,
                            char *buf, size_t size)
{
    if (node->type != YAML_SCALAR_NODE)
        return fail_at(c, node, "%s must be a text, found %s", what, node_kind(node));
    const char *s = scalar_text(node);
    if (s[0] == '\0')
        return fail_at(c, node, "%s is empty (expected a non-empty text)", what);
    if (strlen(s) >= size)
        return fail_at(c, node, "%s is too long (expected at most %zu characters)", what,
                       size - 1);
    memcpy(buf, s, strlen(s) + 1);
    return DM_OK;
}

/* ---- value lists: a scalar, a list, or (for the step setting) a geometric range ---- */

typedef struct value_list {
    size_t n;
    double v[DM_LIST_MAX];
    const yaml_node_t *node[DM_LIST_MAX];  /* where each value was written */
} value_list;

/* {from, to, factor}: from * factor^k for k = 0, 1, ... up to `to` inclusive (within
 * a relative 1e-9, so that 0.1 * 0.5^3 reaches 0.0125); the last value is `to`
 * itself when it lands there. */
static dm_status get_range(parse_ctx *c, const yaml_node_t *map, const char *what,
                           bool whole, value_list *out)
{
    static const char *const keys[] = { "from", "to", "factor" };
    const yaml_node_t *found[3] = { NULL, NULL, NULL };
    double val[3] = { 0, 0, 0 };
    dm_status st = check_unique_keys(c, map);
    if (st != DM_OK)
        return st;
    for (const yaml_node_pair_t *p = map->data.mapping.pairs.start;
         p < map->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        const char *name;
        if ((st = get_key(c, p, &key, &name)) != DM_OK)
            return st;
        int k = -1;
        for (int i = 0; i < 3; i++)
            if (strcmp(name, keys[i]) == 0)
                k = i;
        if (k < 0)
            return fail_unknown(c, key, "range key", name, keys, 3);
        found[k] = node_at(c, p->value);
        char label[80];
        snprintf(label, sizeof label, "%s %s", what, keys[k]);
        if ((st = get_positive(c, found[k], label, &val[k])) != DM_OK)
            return st;
    }
    for (int i = 0; i < 3; i++)
        if (found[i] == NULL)
            return fail_at(c, map, "%s range lacks '%s' (expected {from: A, to: B, factor: F})",
                           what, keys[i]);
    double from = val[0], to = val[1], factor = val[2];
    if (factor == 1.0)
        return fail_at(c, found[2], "%s range factor is 1 (expected > 1 going up or < 1 going "
                       "down)", what);
    if (factor > 1.0 && to < from)
        return fail_at(c, found[1], "%s range goes up (factor %g) but to = %g is below from = "
                       "%g (expected to >= from, or a factor < 1)", what, factor, to, from);
    if (factor < 1.0 && to > from)
        return fail_at(c, found[1], "%s range goes down (factor %g) but to = %g is above from "
                       "= %g (expected to <= from, or a factor > 1)", what, factor, to, from);
    /* Bounded before anything is generated: a factor next to 1 would otherwise give
     * values without end (or values that round to the same double, which the cap on
     * distinct values never sees). */
    double raw_count = log(to / from) / log(factor);
    if (!(raw_count <= DM_RANGE_STEPS_MAX))
        return fail_at(c, found[2], "%s range with factor %.17g takes more than %d steps "
                       "from %g to %g (expected a factor further from 1)", what, factor,
                       DM_RANGE_STEPS_MAX, from, to);
    out->n = 0;
    const double slack = 1e-9;
    for (int k = 0; k <= DM_RANGE_STEPS_MAX + 1; k++) {
        double v = from * pow(factor, k);
        bool past = factor > 1.0 ? v > to * (1 + slack) : v < to * (1 - slack);
        if (past)
            break;
        if (fabs(v - to) <= slack * to)
            v = to;
        if (whole)
            v = round(v);
        if (whole && out->n > 0 && v == out->v[out->n - 1])
            continue; /* rounding merged two neighbours */
        if (out->n > 0 && v == out->v[out->n - 1])
            return fail_at(c, found[2], "%s range factor %.17g is so close to 1 that two "
                           "values round to the same number %.17g (expected a factor "
                           "further from 1)", what, factor, v);
        if (out->n == DM_RANGE_MAX)
            return fail_at(c, map, "%s range gives more than %d values (expected a shorter "
                           "range or a larger factor)", what, DM_RANGE_MAX);
        out->v[out->n] = v;
        out->node[out->n] = map;
        out->n++;
    }
    return DM_OK;
}

static dm_status get_values(parse_ctx *c, const yaml_node_t *node, const char *what,
                            bool allow_range, bool whole, value_list *out)
{
    dm_status st;
    out->n = 0;
    if (node->type == YAML_SCALAR_NODE) {
        if ((st = get_number(c, node, what, &out->v[0])) != DM_OK)
            return st;
        out->node[0] = node;
        out->n = 1;
        return DM_OK;
    }
    if (node->type == YAML_SEQUENCE_NODE) {
        const yaml_node_item_t *start = node->data.sequence.items.start;
        const yaml_node_item_t *top = node->data.sequence.items.top;
        if (top == start)
            return fail_at(c, node, "%s is an empty list (expected at least one value)", what);
        if (top - start > DM_LIST_MAX)
            return fail_at(c, node, "%s lists more than %d values", what, DM_LIST_MAX);
        for (const yaml_node_item_t *it = start; it < top; it++) {
            yaml_node_t *item = node_at(c, *it);
            if ((st = get_number(c, item, what, &out->v[out->n])) != DM_OK)
                return st;
            out->node[out->n++] = item;
        }
        return DM_OK;
    }
    if (node->type == YAML_MAPPING_NODE && allow_range)
        return get_range(c, node, what, whole, out);
    return fail_at(c, node, "%s must be a number or a list of numbers%s, found %s", what,
                   allow_range ? " or {from, to, factor}" : "", node_kind(node));
}

/* ---- the parsed entries ---- */

typedef struct problem_entry {
    const yaml_node_t *node;
    const dm_problem *problem;
    char library[1024];               /* problem_library: the object's path, or "" */
    char library_hash[DM_HASH_HEX];
    const void *data;                 /* a problem that needs data: its data (owned by
                                         the suite), its source, hash and units */
    char data_source[1024];
    char data_hash[DM_HASH_HEX];
    char units[64];
    bool formula;                     /* written in the suite (potential: ...) */
    int n_given;
    int param[DM_MAX_PARAMS];         /* table indices of the given parameters, ascending */
    value_list *values[DM_MAX_PARAMS];
} problem_entry;

typedef struct method_entry {
    const yaml_node_t *node;
    const dm_method *method;
    dm_step_setting step_setting;
    value_list *values;
    bool atol_given;
    double atol;
    bool compensated;
} method_entry;

typedef struct variant {
    const problem_entry *entry;
    dm_instance inst;
    size_t n_given;
    const char *keys[DM_MAX_PARAMS];
    double values[DM_MAX_PARAMS];
    char part[DM_RUN_ID_MAX];         /* "pendulum-amplitude2.5" */
    const yaml_node_t *value_nodes[DM_MAX_PARAMS]; /* where each value was written */
} variant;

typedef struct suite_build {
    parse_ctx ctx;
    dm_suite *suite;                  /* owns the problems' data as it is read */
    problem_entry *problems;
    size_t n_problems;
    method_entry *methods;
    size_t n_methods;
    const yaml_node_t *horizon_node;
    bool horizon_in_periods;
    double horizon;
    size_t samples;
    double energy_limit;
    double step_budget;
    const yaml_node_t *output_node;   /* NULL: output derived from the name */
    const char *output_override;      /* the command line's -o, or NULL */
    const yaml_node_t *step_budget_node;
    double memory_limit_gib;          /* the runs' series may take this much memory */
    bool lyapunov;                    /* every run estimates its Lyapunov exponent */
    bool reference;                   /* every run measures its global error against a
                                         reference trajectory (reference_run.c) */
    double reference_tolerance;       /* its target, unit-free */
    double reference_force_evals;     /* its cost cap */
    const yaml_node_t *reference_node;
    const yaml_node_t **run_nodes;    /* per run: where its step or tolerance was written */
    const variant **run_variants;     /* per run: its problem variant */
    dm_run_index run_ids;             /* the runs so far by their id, to find twins fast */
    dm_user_table **tables;           /* the tables typed in the suite (to dm_suite) */
    size_t n_tables;
} suite_build;

static void build_free(suite_build *b)
{
    for (size_t i = 0; i < b->n_problems; i++)
        for (int k = 0; k < b->problems[i].n_given; k++)
            free(b->problems[i].values[k]);
    free(b->problems);
    for (size_t i = 0; i < b->n_methods; i++)
        free(b->methods[i].values);
    free(b->methods);
    free(b->run_nodes);
    free(b->run_variants);
    dm_run_index_free(&b->run_ids);
    for (size_t i = 0; i < b->n_tables; i++)
        free(b->tables[i]);
    free(b->tables);
}

/* "samples" is the older name of "buckets" (each keeps dE at its end and its min/max),
 * still accepted; a suite gives one or the other. */
static const char *const top_keys[] = { "name", "output", "horizon", "buckets",
                                        "energy_limit", "step_budget", "problems",
                                        "methods", "memory_limit_gib", "samples",
                                        "lyapunov", "reference", "reference_tolerance",
                                        "reference_force_evals" };
enum { TOP_NAME, TOP_OUTPUT, TOP_HORIZON, TOP_BUCKETS, TOP_ENERGY_LIMIT, TOP_STEP_BUDGET,
       TOP_PROBLEMS, TOP_METHODS, TOP_MEMORY_LIMIT, TOP_SAMPLES, TOP_LYAPUNOV, TOP_REFERENCE,
       TOP_REFERENCE_TOLERANCE, TOP_REFERENCE_FORCE_EVALS, TOP_COUNT };

static dm_status parse_horizon(suite_build *b, const yaml_node_t *node)
{
    parse_ctx *c = &b->ctx;
    static const char *const keys[] = { "periods", "time" };
    if (node->type != YAML_MAPPING_NODE)
        return fail_at(c, node, "horizon must be a mapping, found %s (expected {periods: N} "
                       "or {time: T})", node_kind(node));
    dm_status st = check_unique_keys(c, node);
    if (st != DM_OK)
        return st;
    const yaml_node_pair_t *start = node->data.mapping.pairs.start;
    const yaml_node_pair_t *top = node->data.mapping.pairs.top;
    if (top == start)
        return fail_at(c, node, "horizon is empty (expected {periods: N} or {time: T})");
    for (const yaml_node_pair_t *p = start; p < top; p++) {
        yaml_node_t *key;
        const char *name;
        if ((st = get_key(c, p, &key, &name)) != DM_OK)
            return st;
        bool periods = strcmp(name, "periods") == 0;
        if (!periods && strcmp(name, "time") != 0)
            return fail_unknown(c, key, "horizon key", name, keys, 2);
        if (p > start)
            return fail_at(c, key, "horizon gives both periods and time (expected one of them)");
        const yaml_node_t *value = node_at(c, p->value);
        if ((st = get_positive(c, value, periods ? "horizon periods" : "horizon time",
                               &b->horizon)) != DM_OK)
            return st;
        if (periods && b->horizon > DM_MAX_PERIODS)
            return fail_at(c, value, "horizon of %g periods is too long (expected at most %g)",
                           b->horizon, DM_MAX_PERIODS);
        b->horizon_in_periods = periods;
        b->horizon_node = value;
    }
    return DM_OK;
}

/* A path the suite names, taken from the suite file's folder when relative, into
 * out; false when it does not fit. */
static bool suite_relative_path(const parse_ctx *c, const char *path, char *out, size_t size)
{
    const char *slash = strrchr(c->source, '/');
    if (path[0] != '/' && c->folder != NULL && c->folder[0] != '\0') {
        int n = snprintf(out, size, "%s/%s", c->folder, path);
        return n >= 0 && (size_t)n < size;
    }
    int n = path[0] != '/' && slash != NULL
                ? snprintf(out, size, "%.*s/%s", (int)(slash - c->source), c->source, path)
                : snprintf(out, size, "%s%s", path[0] == '/' ? "" : "./", path);
    return n >= 0 && (size_t)n < size;
}

/* `problem_library: PATH`: a problem from the user's own compiled code (problem.h,
 * dm_problem_load). A relative path is taken from the suite file's folder. */
static dm_status load_library(parse_ctx *c, const yaml_node_t *value, problem_entry *e)
{
    if (e->problem != NULL)
        return fail_at(c, value, "give either problem or problem_library, not both");
    char path[1024];
    dm_status st = get_string(c, value, "problem_library", path, sizeof path);
    if (st != DM_OK)
        return st;
    if (!suite_relative_path(c, path, e->library, sizeof e->library))
        return fail_at(c, value, "problem_library path is too long (at most %zu bytes with "
                       "the suite's folder)", sizeof e->library - 1);
    dm_error lerr = { 0 };
    if (dm_problem_load(e->library, &e->problem, e->library_hash, &lerr) != DM_OK)
        return fail_at(c, value, "%s", lerr.msg);
    return DM_OK;
}

static bool is_data_key(const char *name);

/* The stem of a data file's name ("outer_solar_system" of ".../outer_solar_system.csv"),
 * or "bodies" for data given in the suite, for run ids. */
static const char *data_stem(const char *source)
{
    const char *slash = strrchr(source, '/');
    return strcmp(source, "suite") == 0 ? "bodies" : slash ? slash + 1 : source;
}

static int data_stem_length(const char *source)
{
    const char *stem = data_stem(source);
    size_t n = strcspn(stem, ".");
    return (int)(n > 40 ? 40 : n);
}
static dm_status parse_problem_data(suite_build *b, const yaml_node_t *node, problem_entry *e);


/* ---- a problem written in the suite as formulas (problems/include/formula.h) ---- */

/* The keys that describe a formula problem; every other key of its entry is a
 * parameter of the formulas (or `energy`, the start's). */
static const char *const formula_keys[] = { "potential", "kinetic", "coordinates", "momenta",
                                            "masses", "q0", "p0", "side", "section", "period",
                                            "name" };
enum { FK_POTENTIAL, FK_KINETIC, FK_COORDINATES, FK_MOMENTA, FK_MASSES, FK_Q0, FK_P0, FK_SIDE,
       FK_SECTION, FK_PERIOD, FK_NAME, FK_COUNT };

static int formula_key(const char *name)
{
    for (int k = 0; k < FK_COUNT; k++)
        if (strcmp(name, formula_keys[k]) == 0)
            return k;
    return -1;
}

/* A list of names, or one name; n_expected 0: any number up to DM_MAX_DOF. */
static dm_status get_names(parse_ctx *c, const yaml_node_t *node, const char *what,
                           int n_expected, const char **out, int *n)
{
    *n = 0;
    if (node->type == YAML_SCALAR_NODE && !scalar_is_quoted(node)) {
        out[(*n)++] = scalar_text(node);
    } else if (node->type == YAML_SEQUENCE_NODE) {
        for (const yaml_node_item_t *it = node->data.sequence.items.start;
             it < node->data.sequence.items.top; it++) {
            const yaml_node_t *item = node_at(c, *it);
            if (item->type != YAML_SCALAR_NODE || scalar_text(item)[0] == '\0')
                return fail_at(c, item, "%s must be names, found %s", what, node_kind(item));
            if (*n == DM_MAX_DOF)
                return fail_at(c, node, "%s lists more than %d names (expected at most %d "
                               "degrees of freedom)", what, DM_MAX_DOF, DM_MAX_DOF);
            out[(*n)++] = scalar_text(item);
        }
    } else {
        return fail_at(c, node, "%s must be a name or a list of names, found %s", what,
                       node_kind(node));
    }
    if (*n == 0 || (n_expected > 0 && *n != n_expected))
        return fail_at(c, node, "%s gives %d names (expected %d, one per coordinate)", what,
                       *n, n_expected);
    return DM_OK;
}

/* One number per coordinate: a list of n, or one number (for every coordinate when
 * `broadcast`, else only with one coordinate). */
static dm_status get_per_coordinate(parse_ctx *c, const yaml_node_t *node, const char *what,
                                    int n, bool broadcast, double *out)
{
    dm_status st;
    if (node->type == YAML_SCALAR_NODE && (broadcast || n == 1)) {
        if ((st = get_number(c, node, what, &out[0])) != DM_OK)
            return st;
        for (int i = 1; i < n; i++)
            out[i] = out[0];
        return DM_OK;
    }
    if (node->type != YAML_SEQUENCE_NODE)
        return fail_at(c, node, "%s must be a list of %d numbers, found %s", what, n,
                       node_kind(node));
    int k = 0;
    for (const yaml_node_item_t *it = node->data.sequence.items.start;
         it < node->data.sequence.items.top; it++, k++) {
        if (k == n)
            return fail_at(c, node, "%s lists more than %d numbers (one per coordinate)",
                           what, n);
        if ((st = get_number(c, node_at(c, *it), what, &out[k])) != DM_OK)
            return st;
    }
    if (k != n)
        return fail_at(c, node, "%s lists %d numbers (expected %d, one per coordinate)", what,
                       k, n);
    return DM_OK;
}

/* section: {coordinate: NAME, level: X, direction: up}. */
static dm_status get_formula_section(parse_ctx *c, const yaml_node_t *node,
                                     dm_formula_spec *s)
{
    static const char *const keys[] = { "coordinate", "level", "direction" };
    if (node->type != YAML_MAPPING_NODE)
        return fail_at(c, node, "section must be a mapping (expected {coordinate: NAME, "
                       "level: X, direction: up})");
    dm_status st = check_unique_keys(c, node);
    s->section_given = true;
    s->section_coordinate = 0;
    s->section_level = 0.0;
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         st == DM_OK && p < node->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        const char *name;
        if ((st = get_key(c, p, &key, &name)) != DM_OK)
            return st;
        const yaml_node_t *v = node_at(c, p->value);
        if (strcmp(name, "level") == 0) {
            st = get_number(c, v, "section level", &s->section_level);
        } else if (strcmp(name, "coordinate") == 0 || strcmp(name, "direction") == 0) {
            if (v->type != YAML_SCALAR_NODE)
                return fail_at(c, v, "section %s must be a name", name);
            const char *word = scalar_text(v);
            int i = 0;
            while (name[0] == 'c' && i < s->dof && strcmp(word, s->coordinates[i]) != 0)
                i++;
            if (name[0] == 'c' && i == s->dof)
                return fail_at(c, v, "section coordinate '%s' is not a coordinate of this "
                               "problem", word);
            if (name[0] == 'd' && strcmp(word, "up") != 0)
                return fail_at(c, v, "section direction '%s': only up is counted (expected "
                               "up: crossings where the coordinate increases)", word);
            if (name[0] == 'c')
                s->section_coordinate = i;
        } else {
            return fail_unknown(c, key, "section key", name, keys, 3);
        }
    }
    return st;
}

/* The keys of the spec other than the formulas' texts and names. */
static dm_status get_formula_settings(parse_ctx *c, const yaml_node_t *const *at,
                                      dm_formula_spec *s)
{
    dm_status st = DM_OK;
    for (int i = 0; i < s->dof; i++)
        s->masses[i] = 1.0;
    if (at[FK_MASSES] != NULL && s->kinetic != NULL)
        return fail_at(c, at[FK_MASSES], "give either masses or a kinetic formula, not both");
    if (at[FK_MOMENTA] != NULL && s->kinetic == NULL)
        return fail_at(c, at[FK_MOMENTA], "momenta name the variables of a kinetic formula "
                       "(expected kinetic: too, or no momenta)");
    if (at[FK_MASSES] != NULL)
        st = get_per_coordinate(c, at[FK_MASSES], "masses", s->dof, true, s->masses);
    if (st == DM_OK && at[FK_Q0] != NULL)
        st = get_per_coordinate(c, at[FK_Q0], "q0", s->dof, false, s->q0);
    if (st == DM_OK && at[FK_P0] != NULL)
        st = get_per_coordinate(c, at[FK_P0], "p0", s->dof, false, s->p0);
    s->side = 1;
    if (st == DM_OK && at[FK_SIDE] != NULL) {
        const char *w = at[FK_SIDE]->type == YAML_SCALAR_NODE ? scalar_text(at[FK_SIDE]) : "";
        if (!s->energy_start)
            return fail_at(c, at[FK_SIDE], "side goes with energy (the start at rest on that "
                           "side of the well)");
        if (strcmp(w, "left") != 0 && strcmp(w, "right") != 0)
            return fail_at(c, at[FK_SIDE], "side '%s' (expected left or right)", w);
        s->side = w[0] == 'l' ? -1 : 1;
    }
    if (st == DM_OK && at[FK_SECTION] != NULL)
        st = get_formula_section(c, at[FK_SECTION], s);
    if (st == DM_OK && at[FK_PERIOD] != NULL)
        st = get_positive(c, at[FK_PERIOD], "period", &s->period);
    return st;
}

/* The coordinates and momenta names, with their defaults: q and p for one coordinate,
 * p_NAME for each coordinate NAME of more. */
static dm_status get_formula_names(parse_ctx *c, const yaml_node_t *const *at,
                                   dm_formula_spec *s, char (*momenta)[DM_NAME_MAX])
{
    dm_status st = DM_OK;
    s->dof = 1;
    s->coordinates[0] = "q";
    if (at[FK_COORDINATES] != NULL)
        st = get_names(c, at[FK_COORDINATES], "coordinates", 0, s->coordinates, &s->dof);
    if (st != DM_OK || s->kinetic == NULL)
        return st;
    int n = 0;
    if (at[FK_MOMENTA] != NULL)
        return get_names(c, at[FK_MOMENTA], "momenta", s->dof, s->momenta, &n);
    for (int i = 0; i < s->dof; i++) {
        if (s->dof == 1)
            snprintf(momenta[i], DM_NAME_MAX, "p");
        else
            snprintf(momenta[i], DM_NAME_MAX, "p_%.100s", s->coordinates[i]);
        s->momenta[i] = momenta[i];
    }
    return DM_OK;
}

/* Whether an entry gives more than one coordinate (a list of two or more names). */
static bool several_coordinates(parse_ctx *c, const yaml_node_t *node)
{
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         p < node->data.mapping.pairs.top; p++) {
        const yaml_node_t *key = node_at(c, p->key), *v = node_at(c, p->value);
        if (key->type == YAML_SCALAR_NODE && strcmp(scalar_text(key), "coordinates") == 0)
            return v->type == YAML_SEQUENCE_NODE &&
                   v->data.sequence.items.top - v->data.sequence.items.start > 1;
    }
    return false;
}

/* The start's parameters (q0, p0 with one coordinate; energy) go after the formulas'. */
static void start_parameters_last(dm_formula_spec *s)
{
    static const char *const start[] = { "q0", "p0", "energy" };
    for (int k = 0; k < 3; k++)
        for (int j = 0; j < s->n_params - 1; j++) {
            if (strcmp(s->param_names[j], start[k]) != 0)
                continue;
            const char *n = s->param_names[j];
            double v = s->param_defaults[j];
            memmove(&s->param_names[j], &s->param_names[j + 1],
                    (size_t)(s->n_params - 1 - j) * sizeof s->param_names[0]);
            memmove(&s->param_defaults[j], &s->param_defaults[j + 1],
                    (size_t)(s->n_params - 1 - j) * sizeof s->param_defaults[0]);
            s->param_names[s->n_params - 1] = n;
            s->param_defaults[s->n_params - 1] = v;
            break;
        }
}

/* The formula problem of an entry with a `potential` key. With one coordinate, q0 and
 * p0 are parameters (swept as any); with more, lists. */
static dm_status make_formula(parse_ctx *c, const yaml_node_t *node, problem_entry *e)
{
    const yaml_node_t *at[FK_COUNT] = { NULL };
    dm_formula_spec s = { .id = "formula" };
    value_list first;
    bool one = !several_coordinates(c, node);
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         p < node->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        const char *name;
        get_key(c, p, &key, &name);
        int k = formula_key(name);
        if (strcmp(name, "problem") == 0 || strcmp(name, "problem_library") == 0)
            continue; /* refused by the caller */
        if (k >= 0 && !(one && (k == FK_Q0 || k == FK_P0))) {
            at[k] = node_at(c, p->value);
            continue;
        }
        if (s.n_params == DM_MAX_PARAMS)
            return fail_at(c, key, "more than %d parameters (expected fewer)", DM_MAX_PARAMS);
        dm_status st = get_values(c, node_at(c, p->value), name, false, false, &first);
        if (st != DM_OK)
            return st;
        s.energy_start = s.energy_start || strcmp(name, "energy") == 0;
        s.param_names[s.n_params] = name;
        s.param_defaults[s.n_params++] = first.v[0];
    }
    start_parameters_last(&s);
    char texts[2][DM_FORMULA_TEXT_MAX];
    char id[DM_FORMULA_ID_MAX], momenta[DM_MAX_DOF][DM_NAME_MAX];
    dm_status st = get_string(c, at[FK_POTENTIAL], "potential", texts[0], sizeof texts[0]);
    s.potential = texts[0];
    if (st == DM_OK && at[FK_KINETIC] != NULL) {
        st = get_string(c, at[FK_KINETIC], "kinetic", texts[1], sizeof texts[1]);
        s.kinetic = texts[1];
    }
    if (st == DM_OK && at[FK_NAME] != NULL) {
        st = get_string(c, at[FK_NAME], "name", id, sizeof id);
        s.id = id;
        if (st == DM_OK && strspn(id, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"
                                       "0123456789_") != strlen(id))
            return fail_at(c, at[FK_NAME], "name '%s' is not a plain word (expected letters, "
                           "digits and '_': it names the runs)", id);
    }
    if (st == DM_OK)
        st = get_formula_names(c, at, &s, momenta);
    if (st == DM_OK)
        st = get_formula_settings(c, at, &s);
    if (st != DM_OK)
        return st;
    dm_formula_where where;
    dm_error ferr = { 0 };
    st = dm_formula_create(&s, &e->problem, &where, &ferr);
    if (st == DM_OK)
        return DM_OK;
    if (where.formula >= 0)
        return fail_at(c, at[where.formula == 0 ? FK_POTENTIAL : FK_KINETIC],
                       "%s, column %d of the formula: %s",
                       where.formula == 0 ? "potential" : "kinetic", where.column, ferr.msg);
    return fail_at(c, node, "formula problem %s: %s", s.id, ferr.msg);
}

/* Which problem an entry names, wherever its key stands: a built-in one, a shared
 * object of the user's (problem_library) or formulas (potential). */
static dm_status find_entry_problem(parse_ctx *c, const yaml_node_t *node, problem_entry *e)
{
    dm_status st;
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         p < node->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        const char *name;
        if ((st = get_key(c, p, &key, &name)) != DM_OK)
            return st;
        if (strcmp(name, "problem_library") == 0) {
            if ((st = load_library(c, node_at(c, p->value), e)) != DM_OK)
                return st;
            continue;
        }
        if (strcmp(name, "potential") == 0) {
            if (e->problem != NULL)
                return fail_at(c, key, "give one of problem, problem_library or potential");
            if ((st = make_formula(c, node, e)) != DM_OK)
                return st;
            e->formula = true;
            continue;
        }
        if (strcmp(name, "problem") != 0)
            continue;
        if (e->library[0] != '\0' || e->formula)
            return fail_at(c, key, "give one of problem, problem_library or potential");
        const yaml_node_t *value = node_at(c, p->value);
        char id[DM_NAME_MAX];
        if ((st = get_string(c, value, "problem", id, sizeof id)) != DM_OK)
            return st;
        e->problem = dm_problem_find(id);
        if (e->problem == NULL) {
            const char *names[64];
            size_t n = dm_problem_count < 64 ? dm_problem_count : 64;
            for (size_t i = 0; i < n; i++)
                names[i] = dm_problems[i]->id;
            return fail_unknown(c, value, "problem", id, names, n);
        }
    }
    return DM_OK;
}

static dm_status parse_problem_entry(suite_build *b, const yaml_node_t *node,
                                     problem_entry *e)
{
    parse_ctx *c = &b->ctx;
    memset(e, 0, sizeof *e);
    e->node = node;
    if (node->type != YAML_MAPPING_NODE)
        return fail_at(c, node, "a problems entry must be a mapping, found %s (expected "
                       "{problem: NAME, parameter: value, ...})", node_kind(node));
    dm_status st = check_unique_keys(c, node);
    if (st != DM_OK)
        return st;
    /* First find which problem, wherever its key stands, then read its parameters. */
    if ((st = find_entry_problem(c, node, e)) != DM_OK)
        return st;
    if (e->problem == NULL)
        return fail_at(c, node, "problems entry lacks 'problem' (expected {problem: NAME, ...}, "
                       "{problem_library: PATH.so, ...} or {potential: FORMULA, ...})");

    const dm_problem *pr = e->problem;
    if (pr->needs_data && (st = parse_problem_data(b, node, e)) != DM_OK)
        return st;
    const char *names[DM_MAX_PARAMS];
    for (int i = 0; i < pr->n_params; i++)
        names[i] = pr->params[i].name;
    value_list *by_param[DM_MAX_PARAMS] = { NULL };
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         p < node->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        const char *name;
        get_key(c, p, &key, &name);
        if (strcmp(name, "problem") == 0 || strcmp(name, "problem_library") == 0 ||
            (pr->needs_data && is_data_key(name)) ||
            (e->formula && formula_key(name) >= 0 &&
             dm_problem_param_index(e->problem, name) < 0))
            continue;
        int i = dm_problem_param_index(pr, name);
        if (i < 0) {
            char what[80];
            snprintf(what, sizeof what, "%s parameter", pr->id);
            st = fail_unknown(c, key, what, name, names, (size_t)pr->n_params);
            goto fail;
        }
        by_param[i] = malloc(sizeof *by_param[i]);
        if (by_param[i] == NULL) {
            st = dm_error_set(c->err, DM_ENOMEM, "out of memory reading the suite");
            goto fail;
        }
        char what[80];
        snprintf(what, sizeof what, "%s %s", pr->id, name);
        if ((st = get_values(c, node_at(c, p->value), what, false, false, by_param[i])) !=
            DM_OK)
            goto fail;
    }
    /* Keep the given parameters in the table's order: ids and the variant product
     * follow it, so they do not depend on how the user ordered the keys. */
    for (int i = 0; i < pr->n_params; i++)
        if (by_param[i] != NULL) {
            e->param[e->n_given] = i;
            e->values[e->n_given] = by_param[i];
            e->n_given++;
        }
    return DM_OK;
fail:
    for (int i = 0; i < DM_MAX_PARAMS; i++)
        free(by_param[i]);
    return st;
}

static const char *step_setting_key(dm_step_setting setting)
{
    switch (setting) {
    case DM_SET_BY_H: return "h";
    case DM_SET_BY_STEPS_PER_PERIOD: return "steps_per_period";
    case DM_SET_BY_RTOL: return "rtol";
    }
    return "?";
}

static const char *const method_keys[] = { "method", "h", "steps_per_period", "rtol",
                                           "atol", "compensated", "table" };
enum { N_METHOD_KEYS = sizeof method_keys / sizeof method_keys[0] };

/* Every key of the entry is known; `method:` names a known method, or `table:` gives
 * the user's own (suite_table.c). */
static dm_status find_method(suite_build *b, const yaml_node_t *node, method_entry *e)
{
    parse_ctx *c = &b->ctx;
    dm_status st;
    const yaml_node_pair_t *start = node->data.mapping.pairs.start;
    const yaml_node_pair_t *top = node->data.mapping.pairs.top;
    for (const yaml_node_pair_t *p = start; p < top; p++) {
        yaml_node_t *key;
        const char *name;
        if ((st = get_key(c, p, &key, &name)) != DM_OK)
            return st;
        size_t k = 0;
        while (k < N_METHOD_KEYS && strcmp(name, method_keys[k]) != 0)
            k++;
        if (k == N_METHOD_KEYS)
            return fail_unknown(c, key, "method key", name, method_keys, N_METHOD_KEYS);
        if (k != 0 && k != N_METHOD_KEYS - 1)
            continue;
        if (e->method != NULL)
            return fail_at(c, key, "give either method or table, not both");
        const yaml_node_t *value = node_at(c, p->value);
        if (k == N_METHOD_KEYS - 1) {
            st = dm_suite_read_table(c, value, &b->tables, &b->n_tables, &e->method);
            if (st != DM_OK)
                return st;
            continue;
        }
        char id[DM_NAME_MAX];
        if ((st = get_string(c, value, "method", id, sizeof id)) != DM_OK)
            return st;
        e->method = dm_method_find(id);
        if (e->method == NULL) {
            const char *names[128];
            size_t n = dm_method_count < 128 ? dm_method_count : 128;
            for (size_t i = 0; i < n; i++)
                names[i] = dm_methods[i]->id;
            return fail_unknown(c, value, "method", id, names, n);
        }
    }
    if (e->method == NULL)
        return fail_at(c, node, "methods entry lacks 'method' (expected {method: NAME, ...} "
                       "or {table: {...}, ...})");
    return DM_OK;
}

/* The options that fit the method (compensated, atol) and exactly one of h,
 * steps_per_period (fixed-step) or rtol (adaptive), whose value node is returned. */
static dm_status parse_method_options(parse_ctx *c, const yaml_node_t *node, method_entry *e,
                                      const yaml_node_t **setting_value)
{
    const dm_method *m = e->method;
    const yaml_node_t *setting_node = NULL;
    dm_status st;
    const yaml_node_pair_t *start = node->data.mapping.pairs.start;
    const yaml_node_pair_t *top = node->data.mapping.pairs.top;
    for (const yaml_node_pair_t *p = start; p < top; p++) {
        yaml_node_t *key = node_at(c, p->key);
        const char *name = scalar_text(key);
        const yaml_node_t *value = node_at(c, p->value);
        if (strcmp(name, "method") == 0 || strcmp(name, "table") == 0)
            continue;
        if (strcmp(name, "compensated") == 0) {
            if ((st = get_bool(c, value, "compensated", &e->compensated)) != DM_OK)
                return st;
            if (e->compensated && m->splitting == NULL)
                return fail_at(c, key, "%s: compensated summation applies to splitting "
                               "methods only (expected compensated: false or a splitting "
                               "method)", m->id);
            continue;
        }
        if (strcmp(name, "atol") == 0) {
            if (!m->adaptive)
                return fail_at(c, key, "%s is a fixed-step method: atol does not apply "
                               "(expected h or steps_per_period)", m->id);
            if ((st = get_positive(c, value, "atol", &e->atol)) != DM_OK)
                return st;
            e->atol_given = true;
            continue;
        }
        dm_step_setting setting = strcmp(name, "h") == 0 ? DM_SET_BY_H
                       : strcmp(name, "steps_per_period") == 0 ? DM_SET_BY_STEPS_PER_PERIOD
                                                               : DM_SET_BY_RTOL;
        if (setting_node != NULL)
            return fail_at(c, key, "%s given after %s (expected exactly one of h, "
                           "steps_per_period, rtol)", name, scalar_text(setting_node));
        if (m->adaptive && setting != DM_SET_BY_RTOL)
            return fail_at(c, key, "%s chooses its own steps: %s does not apply (expected "
                           "rtol)", m->id, name);
        if (!m->adaptive && setting == DM_SET_BY_RTOL)
            return fail_at(c, key, "%s is a fixed-step method: rtol does not apply (expected "
                           "h or steps_per_period)", m->id);
        setting_node = key;
        *setting_value = value;
        e->step_setting = setting;
    }
    if (setting_node == NULL)
        return fail_at(c, node, m->adaptive
                                    ? "%s needs a tolerance (expected rtol: TOL)"
                                    : "%s needs a step (expected h: STEP or "
                                      "steps_per_period: N)",
                       m->id);
    return DM_OK;
}

/* The step (or tolerance) values: one, a list or a range, each in its own range. */
static dm_status parse_step_values(parse_ctx *c, const yaml_node_t *value, method_entry *e)
{
    dm_status st;
    e->values = malloc(sizeof *e->values);
    if (e->values == NULL)
        return dm_error_set(c->err, DM_ENOMEM, "out of memory reading the suite");
    const char *what = step_setting_key(e->step_setting);
    bool whole = e->step_setting == DM_SET_BY_STEPS_PER_PERIOD;
    if ((st = get_values(c, value, what, true, whole, e->values)) != DM_OK)
        return st;
    for (size_t i = 0; i < e->values->n; i++) {
        double v = e->values->v[i];
        const yaml_node_t *at = e->values->node[i];
        switch (e->step_setting) {
        case DM_SET_BY_H:
            if (!(v > 0.0))
                return fail_at(c, at, "h = %g must be positive (expected 0 < h < period)", v);
            break;
        case DM_SET_BY_STEPS_PER_PERIOD:
            if (!(v >= 1.0) || v != floor(v) || v > 1e15)
                return fail_at(c, at, "steps_per_period = %g is not a whole number >= 1 "
                               "(expected 1, 2, 3, ...)", v);
            break;
        case DM_SET_BY_RTOL:
            if (!(v >= DM_RTOL_MIN && v <= DM_RTOL_MAX))
                return fail_at(c, at, "rtol = %g is outside [%g, %g] (expected a relative "
                               "tolerance in that range)", v, DM_RTOL_MIN, DM_RTOL_MAX);
            break;
        }
    }
    return DM_OK;
}

/* One entry of `methods:`: a mapping with known keys, a known method, the options that
 * fit it and its step (or tolerance) values. */
static dm_status parse_method_entry(suite_build *b, const yaml_node_t *node, method_entry *e)
{
    parse_ctx *c = &b->ctx;
    memset(e, 0, sizeof *e);
    e->node = node;
    if (node->type != YAML_MAPPING_NODE)
        return fail_at(c, node, "a methods entry must be a mapping, found %s (expected "
                       "{method: NAME, h: STEP} or {method: NAME, rtol: TOL})", node_kind(node));
    const yaml_node_t *setting_value = NULL;
    dm_status st = check_unique_keys(c, node);
    if (st == DM_OK)
        st = find_method(b, node, e);
    if (st == DM_OK)
        st = parse_method_options(c, node, e, &setting_value);
    if (st == DM_OK)
        st = parse_step_values(c, setting_value, e);
    return st;
}

static dm_status parse_list(suite_build *b, const yaml_node_t *node, bool problems)
{
    parse_ctx *c = &b->ctx;
    const char *what = problems ? "problems" : "methods";
    if (node->type != YAML_SEQUENCE_NODE)
        return fail_at(c, node, "%s must be a list, found %s (expected entries starting with "
                       "'- ')", what, node_kind(node));
    const yaml_node_item_t *start = node->data.sequence.items.start;
    const yaml_node_item_t *top = node->data.sequence.items.top;
    size_t n = (size_t)(top - start);
    if (n == 0)
        return fail_at(c, node, "%s is an empty list (expected at least one entry)", what);
    if (problems) {
        b->problems = calloc(n, sizeof *b->problems);
        if (b->problems == NULL)
            return dm_error_set(c->err, DM_ENOMEM, "out of memory reading the suite");
    } else {
        b->methods = calloc(n, sizeof *b->methods);
        if (b->methods == NULL)
            return dm_error_set(c->err, DM_ENOMEM, "out of memory reading the suite");
    }
    for (const yaml_node_item_t *it = start; it < top; it++) {
        const yaml_node_t *item = node_at(c, *it);
        dm_status st;
        if (problems) {
            st = parse_problem_entry(b, item, &b->problems[b->n_problems]);
            b->n_problems++; /* counted even on failure: build_free releases it */
        } else {
            st = parse_method_entry(b, item, &b->methods[b->n_methods]);
            b->n_methods++;
        }
        if (st != DM_OK)
            return st;
    }
    return DM_OK;
}

/* ---- expansion ---- */


/* Appends to buf; returns false when it no longer fits. */
static bool appendf(char *buf, size_t size, size_t *used, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

static bool appendf(char *buf, size_t size, size_t *used, const char *fmt, ...)
{
    if (*used >= size)
        return false;
    va_list ap;
    va_start(ap, fmt);
    int w = vsnprintf(buf + *used, size - *used, fmt, ap);
    va_end(ap);
    if (w < 0 || (size_t)w >= size - *used) {
        *used = size;
        return false;
    }
    *used += (size_t)w;
    return true;
}

static dm_status expand_variants(suite_build *b, variant **out, size_t *n_out)
{
    parse_ctx *c = &b->ctx;
    size_t total = 0;
    for (size_t i = 0; i < b->n_problems; i++) {
        size_t n = 1;
        for (int k = 0; k < b->problems[i].n_given; k++) {
            n *= b->problems[i].values[k]->n;
            if (n > DM_SUITE_MAX_RUNS)
                return fail_at(c, b->problems[i].node, "this entry expands to more than %d "
                               "problem variants (expected fewer values)", DM_SUITE_MAX_RUNS);
        }
        total += n;
        if (total > DM_SUITE_MAX_RUNS)
            return fail_at(c, b->problems[i].node, "the problems expand to more than %d "
                           "variants (expected fewer values)", DM_SUITE_MAX_RUNS);
    }
    variant *v = calloc(total, sizeof *v);
    if (v == NULL)
        return dm_error_set(c->err, DM_ENOMEM, "out of memory expanding the suite");
    size_t nv = 0;
    for (size_t i = 0; i < b->n_problems; i++) {
        const problem_entry *e = &b->problems[i];
        size_t pick[DM_MAX_PARAMS] = { 0 };
        for (;;) {
            variant *x = &v[nv];
            x->entry = e;
            x->n_given = (size_t)e->n_given;
            size_t used = 0;
            bool fits = appendf(x->part, sizeof x->part, &used, "%s", e->problem->id);
            if (e->data_hash[0] != '\0') /* which data: the file's stem, 6 hex of its hash */
                fits = fits && appendf(x->part, sizeof x->part, &used, "-%.*s-%.6s",
                                       data_stem_length(e->data_source), data_stem(e->data_source),
                                       e->data_hash);
            for (int k = 0; k < e->n_given; k++) {
                x->keys[k] = e->problem->params[e->param[k]].name;
                x->values[k] = e->values[k]->v[pick[k]];
                x->value_nodes[k] = e->values[k]->node[pick[k]];
                fits = fits && appendf(x->part, sizeof x->part, &used, "-%s%g", x->keys[k],
                                       x->values[k]);
            }
            if (!fits) {
                free(v);
                return fail_at(c, e->node, "run name for this entry is too long (expected "
                               "fewer parameters)");
            }
            if (dm_instance_init_data(&x->inst, e->problem, e->data, x->n_given, x->keys,
                                      x->values, c->err) != DM_OK) {
                free(v);
                return prefix_at(c, e->node);
            }
            nv++;
            /* Odometer over the value lists, the last parameter turning fastest. */
            int k = e->n_given - 1;
            while (k >= 0 && ++pick[k] == e->values[k]->n) {
                pick[k] = 0;
                k--;
            }
            if (k < 0)
                break;
        }
    }
    *out = v;
    *n_out = nv;
    return DM_OK;
}

/* The horizon in time and in periods of this variant. */
static dm_status set_horizon(suite_build *b, const variant *x, dm_run_spec *spec)
{
    double period = x->inst.period;
    if (x->entry->problem->no_period) {
        if (b->horizon_in_periods)
            return fail_at(&b->ctx, b->horizon_node, "%s has no closed-form period: give the "
                           "horizon in time (expected horizon: {time: T} in its units)",
                           x->part);
        spec->t_end = b->horizon;
        spec->periods = NAN;
        return DM_OK;
    }
    if (b->horizon_in_periods) {
        spec->periods = b->horizon;
        spec->t_end = b->horizon * period;
    } else {
        spec->t_end = b->horizon;
        spec->periods = b->horizon / period;
        if (spec->periods > DM_MAX_PERIODS)
            return fail_at(&b->ctx, b->horizon_node, "horizon time %g is %g periods of %s (expected "
                           "at most %g periods)", b->horizon, spec->periods, x->part,
                           DM_MAX_PERIODS);
    }

    return DM_OK;
}

/* The method's configuration from the step (or tolerance) value, the run's id, and
 * the step budget check. */
static dm_status set_step_and_id(suite_build *b, const variant *x, const method_entry *me,
                                 size_t value_index, dm_run_spec *spec)
{
    parse_ctx *c = &b->ctx;
    const dm_method *m = me->method;
    const yaml_node_t *at = me->values->node[value_index];
    double kv = me->values->v[value_index];
    double period = x->inst.period;
    dm_method_config *mc = &spec->method_config;
    mc->t_stop = spec->t_end;
    mc->compensated = me->compensated;
    char method_part[DM_RUN_ID_MAX];
    size_t used = 0;
    bool fits = true;
    double steps_needed = NAN;
    switch (me->step_setting) {
    case DM_SET_BY_H:
        mc->h = kv;
        fits = appendf(method_part, sizeof method_part, &used, "%s-h%g", m->id, kv);
        break;
    case DM_SET_BY_STEPS_PER_PERIOD:
        if (x->entry->problem->no_period)
            return fail_at(c, at, "run %s.%s: the problem has no closed-form period, so "
                           "steps_per_period does not apply (expected h: STEP in its units)",
                           x->part, m->id);
        mc->h = period / kv;
        fits = appendf(method_part, sizeof method_part, &used, "%s-n%g", m->id, kv);
        break;
    case DM_SET_BY_RTOL:
        mc->h = 0.0; /* adaptive: the method chooses */
        mc->rtol = kv;
        mc->atol = me->atol_given ? me->atol : dm_default_atol(kv);
        fits = appendf(method_part, sizeof method_part, &used, "%s-rtol%g", m->id, kv);
        if (me->atol_given)
            fits = fits && appendf(method_part, sizeof method_part, &used, "-atol%g", me->atol);
        break;
    }
    if (me->compensated)
        fits = fits && appendf(method_part, sizeof method_part, &used, "-compensated");
    used = 0;
    fits = fits && appendf(spec->id, sizeof spec->id, &used, "%s.%s", x->part, method_part);
    if (!fits)
        return fail_at(c, at, "run name '%s.%s' is too long (expected at most %d characters)",
                       x->part, method_part, DM_RUN_ID_MAX - 1);

    if (!m->adaptive) {
        /* h must resolve the orbit; steps_per_period >= 1 already means h <= period. */
        if (me->step_setting == DM_SET_BY_H && !x->entry->problem->no_period &&
            !(mc->h < period))
            return fail_at(c, at, "run %s: h = %g is not below the period %.17g (expected "
                           "0 < h < period)", spec->id, mc->h, period);
        steps_needed = ceil(spec->t_end / mc->h);
        if (steps_needed > b->step_budget)
            return fail_at(c, at, "run %s needs %.3g steps, more than the step budget of %.3g "
                           "(expected a larger h, a shorter horizon or a larger step_budget)",
                           spec->id, steps_needed, b->step_budget);
    }

    return DM_OK;
}

/* The canonical configuration text and its hash. */
static dm_status write_config(suite_build *b, const dm_suite *suite, const method_entry *me,
                              size_t value_index, dm_run_spec *spec)
{
    const dm_method *m = me->method;
    const dm_instance *inst = &spec->inst;
    const dm_method_config *mc = &spec->method_config;
    /* The canonical configuration: everything that changes the numbers, nothing that
     * does not (ids, names, the order of entries). */
    const dm_problem *pr = inst->problem;
    char *cfg = spec->config;
    size_t cu = 0;
    bool ok = appendf(cfg, DM_CONFIG_MAX, &cu, "problem=%s", pr->id);
    if (spec->problem_library_hash[0] != '\0') /* what ran, not where it lay */
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " library=%s", spec->problem_library_hash);
    if (spec->data_hash[0] != '\0') /* the bodies, by the hash of their numbers */
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " data=%s", spec->data_hash);
    const dm_formula_info *formula = dm_formula_info_of(pr);
    if (formula != NULL) /* the formulas, masses, start and section */
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " formula=%s", formula->hash);
    for (int i = 0; i < pr->n_params; i++)
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " %s=%.17g", pr->params[i].name,
                           inst->param[i]);
    ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " given=");
    bool first = true;
    for (int i = 0; i < pr->n_params; i++)
        if (inst->given & (1u << i)) {
            ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, "%s%s", first ? "" : ",",
                               pr->params[i].name);
            first = false;
        }
    ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " method=%s", m->id);
    if (m->user != NULL) /* the table itself, by the hash of its suite form */
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " table=%016" PRIx64,
                           dm_hash_text(m->user->text));
    if (m->adaptive)
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " rtol=%.17g atol=%.17g", mc->rtol,
                           mc->atol);
    else
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " h=%.17g", mc->h);
    ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu,
                       " compensated=%s t_end=%.17g samples=%zu energy_limit=%.17g",
                       mc->compensated ? "true" : "false", spec->t_end, spec->samples,
                       suite->energy_limit);
    if (spec->lyapunov)
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu, " lyapunov=true");
    if (spec->reference)
        ok = ok && appendf(cfg, DM_CONFIG_MAX, &cu,
                           " reference=true reference_tolerance=%.17g reference_force_evals=%.17g",
                           spec->reference_tolerance, spec->reference_force_evals);
    if (!ok)
        return fail_at(&b->ctx, me->values->node[value_index], "configuration of run %s is too long", spec->id);
    snprintf(spec->hash, sizeof spec->hash, "%016" PRIx64, dm_hash_text(spec->config));
    return DM_OK;
}

/* One run of a variant under a method entry's value_index-th step (or tolerance). */
static dm_status make_run(suite_build *b, dm_suite *suite, const variant *x,
                          const method_entry *me, size_t value_index, dm_run_spec *spec)
{
    memset(spec, 0, sizeof *spec);
    spec->inst = x->inst;
    snprintf(spec->problem_library, sizeof spec->problem_library, "%s", x->entry->library);
    snprintf(spec->problem_library_hash, sizeof spec->problem_library_hash, "%s",
             x->entry->library_hash);
    snprintf(spec->data_source, sizeof spec->data_source, "%s", x->entry->data_source);
    snprintf(spec->data_hash, sizeof spec->data_hash, "%s", x->entry->data_hash);
    snprintf(spec->units, sizeof spec->units, "%s", x->entry->units);
    spec->n_given = x->n_given;
    for (size_t k = 0; k < x->n_given; k++) {
        spec->given_keys[k] = x->keys[k];
        spec->given_values[k] = x->values[k];
    }
    spec->method = me->method;
    spec->step_setting = me->step_setting;
    spec->step_value = me->values->v[value_index];
    spec->samples = b->samples;
    spec->energy_limit = suite->energy_limit; /* the runner's divergence test; in config too */
    spec->step_budget = suite->step_budget;   /* adaptive runs are held to it as they go */
    spec->lyapunov = b->lyapunov;             /* in config too */
    spec->reference = b->reference;           /* in config too */
    spec->reference_tolerance = b->reference_tolerance;
    spec->reference_force_evals = b->reference_force_evals;
    if (spec->reference && (x->inst.problem->gradient_quad == NULL ||
                            x->inst.problem->velocity_quad == NULL))
        return fail_at(&b->ctx, x->entry->node, "%s: reference: true needs a problem with a "
                       "quad-precision gradient (gradient_quad); %s has none (expected a "
                       "built-in problem, or a problem_library that provides one)",
                       x->part, x->entry->formula ? "a problem written as formulas" : x->inst.problem->id);
    spec->sweep = -1;
    if (me->method->nystrom != NULL && !dm_velocity_is_linear(&x->inst))
        return fail_at(&b->ctx, me->node, "%s is a Runge-Kutta-Nystrom table, for a kinetic "
                       "energy quadratic in p; %s's grad T is not linear in p (expected a "
                       "splitting or Runge-Kutta table for it)", me->method->id, x->part);
    dm_status st = set_horizon(b, x, spec);
    if (st == DM_OK && me->method->check_problem != NULL) {
        dm_error why = { 0 };
        if (me->method->check_problem(me->method, &x->inst, &why) != DM_OK)
            st = fail_at(&b->ctx, me->node, "%s: %s", x->part, why.msg);
    }
    if (st == DM_OK)
        st = set_step_and_id(b, x, me, value_index, spec);
    if (st == DM_OK)
        st = write_config(b, suite, me, value_index, spec);
    return st;
}

static dm_status add_sweep(dm_suite *suite, const char *base, dm_step_setting setting, size_t first,
                           size_t n, dm_error *err)
{
    dm_sweep *sw = &suite->sweeps[suite->n_sweeps];
    memset(sw, 0, sizeof *sw);
    snprintf(sw->name, sizeof sw->name, "%s", base);
    for (int k = 2;; k++) {
        bool taken = false;
        for (size_t i = 0; i < suite->n_sweeps; i++)
            if (strcmp(suite->sweeps[i].name, sw->name) == 0)
                taken = true;
        if (!taken)
            break;
        char suffix[16];
        snprintf(suffix, sizeof suffix, "-%d", k);
        int keep = (int)(sizeof sw->name - 1 - strlen(suffix));
        snprintf(sw->name, sizeof sw->name, "%.*s%s", keep, base, suffix);
    }
    sw->step_setting = setting;
    sw->n_runs = n;
    sw->runs = malloc(n * sizeof *sw->runs);
    if (sw->runs == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory expanding the suite");
    for (size_t i = 0; i < n; i++) {
        sw->runs[i] = first + i;
        suite->runs[first + i].sweep = (int)suite->n_sweeps;
    }
    suite->n_sweeps++;
    return DM_OK;
}

/* Where a run that repeats run r was written, and where r was: the step value, or when
 * both runs come from the same step value, the problems entry, or within one entry the
 * parameter value that repeats. */
static void twin_nodes(const suite_build *b, size_t r, const variant *x,
                       const yaml_node_t *step_node, const yaml_node_t **here,
                       const yaml_node_t **first_at)
{
    const variant *y = b->run_variants[r];
    *here = step_node;
    *first_at = b->run_nodes[r];
    if (step_node != b->run_nodes[r])
        return;
    *here = x->entry->node;
    *first_at = y->entry->node;
    if (x->entry != y->entry)
        return;
    for (size_t k = 0; k < x->n_given; k++)
        if (x->value_nodes[k] != y->value_nodes[k]) {
            *here = x->value_nodes[k];
            *first_at = y->value_nodes[k];
            return;
        }
}

static dm_status expand_runs(suite_build *b, dm_suite *suite)
{
    parse_ctx *c = &b->ctx;
    variant *v = NULL;
    size_t nv = 0;
    dm_status st = expand_variants(b, &v, &nv);
    if (st != DM_OK)
        return st;
    size_t per_variant = 0, sweeps_per_variant = 0;
    for (size_t j = 0; j < b->n_methods; j++) {
        per_variant += b->methods[j].values->n;
        sweeps_per_variant += b->methods[j].values->n >= 2;
    }
    if (nv * per_variant > DM_SUITE_MAX_RUNS) {
        free(v);
        return fail_at(c, b->methods[0].node, "the suite expands to %zu runs (expected at "
                       "most %d)", nv * per_variant, DM_SUITE_MAX_RUNS);
    }
    suite->runs = calloc(nv * per_variant, sizeof *suite->runs);
    suite->sweeps = calloc(nv * sweeps_per_variant + 1, sizeof *suite->sweeps);
    b->run_nodes = calloc(nv * per_variant, sizeof *b->run_nodes);
    b->run_variants = calloc(nv * per_variant, sizeof *b->run_variants);
    if (suite->runs == NULL || suite->sweeps == NULL || b->run_nodes == NULL ||
        b->run_variants == NULL || dm_run_index_init(&b->run_ids, nv * per_variant) != 0) {
        free(v);
        return dm_error_set(c->err, DM_ENOMEM, "out of memory expanding the suite");
    }
    for (size_t i = 0; i < nv; i++) {
        for (size_t j = 0; j < b->n_methods; j++) {
            const method_entry *me = &b->methods[j];
            size_t first = suite->n_runs;
            for (size_t k = 0; k < me->values->n; k++) {
                dm_run_spec *spec = &suite->runs[suite->n_runs];
                if ((st = make_run(b, suite, &v[i], me, k, spec)) != DM_OK)
                    goto done;
                /* Twins are looked for among every earlier run by the hash of its id
                 * (up to 10^5 runs), the text compared only when the hashes meet. */
                uint64_t id_hash = dm_hash_text(spec->id);
                size_t probe = 0;
                for (size_t r; (r = dm_run_index_next(&b->run_ids, id_hash, &probe)) != SIZE_MAX;) {
                    if (strcmp(suite->runs[r].id, spec->id) != 0)
                        continue;
                    const yaml_node_t *here, *first_at;
                    twin_nodes(b, r, &v[i], me->values->node[k], &here, &first_at);
                    if (strcmp(suite->runs[r].config, spec->config) == 0)
                        st = fail_at(c, here, "run %s is given twice (first at line %zu; "
                                     "expected every run to differ)", spec->id,
                                     node_line(first_at));
                    else if (b->run_variants[r]->entry != v[i].entry && v[i].entry->formula &&
                             b->run_variants[r]->entry->formula)
                        /* two entries of one name: a formula problem's list starts, its
                         * masses or section are not in the id (its name is) */
                        st = fail_at(c, v[i].entry->node, "run id %s names two different runs "
                                     "(first at line %zu): two problems entries make runs of "
                                     "one name (expected a name: of its own for each)",
                                     spec->id, node_line(first_at));
                    else
                        st = fail_at(c, here, "run id %s names two different runs (first at "
                                     "line %zu; expected values that differ within 6 "
                                     "significant digits)", spec->id, node_line(first_at));
                    goto done;
                }
                b->run_nodes[suite->n_runs] = me->values->node[k];
                b->run_variants[suite->n_runs] = &v[i];
                dm_run_index_add(&b->run_ids, id_hash, suite->n_runs);
                suite->n_runs++;
            }
            if (me->values->n >= 2) {
                /* a prefix of the run ids just made, so it always fits; checked all
                 * the same, so a later change to the ids cannot cut it silently */
                char base[DM_RUN_ID_MAX];
                int w = snprintf(base, sizeof base, "%s.%s", v[i].part, me->method->id);
                if (w < 0 || (size_t)w >= sizeof base) {
                    st = fail_at(c, me->node, "sweep name '%s.%s' is too long (expected at "
                                 "most %d characters)", v[i].part, me->method->id,
                                 DM_RUN_ID_MAX - 1);
                    goto done;
                }
                if ((st = add_sweep(suite, base, me->step_setting, first, me->values->n, c->err)) !=
                    DM_OK)
                    goto done;
            }
        }
    }
done:
    free(v);
    return st;
}

/* A killed `run` leaves its temporary file ".NAME.tmp-PID" (up to the size of a whole
 * results file) beside NAME, and ".NAME.save-PID" when killed inside a save point.
 * Those of processes that no longer exist are removed: only names of exactly those
 * forms, for this NAME. */
static void remove_stale_temps(const char *dir, const char *base)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return;
    size_t base_len = strlen(base);
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        const char *n = e->d_name;
        if (n[0] != '.' || strncmp(n + 1, base, base_len) != 0)
            continue;
        const char *kind = n + 1 + base_len, *digits = NULL;
        if (strncmp(kind, ".tmp-", 5) == 0)
            digits = kind + 5;
        else if (strncmp(kind, ".save-", 6) == 0)
            digits = kind + 6;
        else
            continue;
        char *end = NULL;
        errno = 0;
        long pid = strtol(digits, &end, 10);
        if (*digits < '1' || *digits > '9' || *end != '\0' || errno != 0 || pid <= 0 ||
            pid == (long)getpid() || (pid_t)pid != pid)
            continue;
        if (kill((pid_t)pid, 0) == 0 || errno != ESRCH)
            continue; /* alive (or not ours to ask about): leave it */
        char path[2300];
        int w = snprintf(path, sizeof path, "%s/%s", dir, n);
        if (w > 0 && (size_t)w < sizeof path)
            unlink(path);
    }
    closedir(d);
}

/* An error about the output file: at its suite line, or, when the command line named
 * the file (-o, or the file being resumed), as "command line: ...". */
static dm_status output_fail(suite_build *b, const yaml_node_t *at, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static dm_status output_fail(suite_build *b, const yaml_node_t *at, const char *fmt, ...)
{
    char what[DM_ERROR_MSG_MAX];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    if (b->output_override != NULL)
        return dm_error_set(b->ctx.err, DM_EINPUT, "command line: %s", what);
    return fail_at(&b->ctx, at, "%s", what);
}

/* The results file is written beside its final name and renamed into place, so the
 * directory must exist and be writable before the first run starts. */
static dm_status check_output(suite_build *b, const char *output, const yaml_node_t *at)
{
    char dir[1024];
    const char *slash = strrchr(output, '/');
    if (slash == NULL)
        snprintf(dir, sizeof dir, ".");
    else if (slash == output)
        snprintf(dir, sizeof dir, "/");
    else
        snprintf(dir, sizeof dir, "%.*s", (int)(slash - output), output);
    if (slash != NULL && slash[1] == '\0')
        return output_fail(b, at, "output '%s' names a directory (expected a file name such as "
                       "results/study.h5)", output);
    struct stat sb;
    if (stat(dir, &sb) != 0)
        return output_fail(b, at, "output directory '%s'%s does not exist (expected an existing, "
                       "writable directory)", dir,
                       b->output_node || b->output_override ? ""
                                                            : " of the default output results/NAME.h5");
    if (!S_ISDIR(sb.st_mode))
        return output_fail(b, at, "output directory '%s' is not a directory (expected an existing, "
                       "writable directory)", dir);
    if (access(dir, W_OK | X_OK) != 0)
        return output_fail(b, at, "output directory '%s' is not writable: %s (expected a writable "
                       "directory)", dir, strerror(errno));
    if (stat(output, &sb) == 0 && S_ISDIR(sb.st_mode))
        return output_fail(b, at, "output '%s' is a directory (expected a file name)", output);
    remove_stale_temps(dir, slash ? slash + 1 : output);
    /* The temporary file the results are written to, made and removed now: a name too
     * long for the file system (or any other refusal) shows before the first run, not
     * after the last. */
    char tmp[1200];
    if (dm_results_temp_path(output, (long)getpid(), tmp, sizeof tmp) != 0)
        return output_fail(b, at, "output '%s' is too long (expected a shorter path)", output);
    int fd = open(tmp, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
    if (fd < 0 && errno != EEXIST) {
        int e = errno;
        return output_fail(b, at, "output '%s' cannot be written: creating its temporary file "
                           "(.NAME.tmp-PID beside it) failed: %s (expected %s)", output,
                           strerror(e),
                           e == ENAMETOOLONG || e == EILSEQ || e == EINVAL
                               ? "a shorter or plainer file name"
                               : "a folder this user may create files in");
    }
    if (fd >= 0) {
        close(fd);
        unlink(tmp);
    }
    long name_max = pathconf(dir, _PC_NAME_MAX);
    const char *base = slash ? slash + 1 : output;
    if (name_max > 0 && strlen(base) > (size_t)name_max)
        return output_fail(b, at, "output '%s': the file name has %zu bytes (expected at most %ld "
                       "on this file system)", output, strlen(base), name_max);
    return DM_OK;
}

/* "runs/well-study.yaml" -> "well-study"; anything without a stem -> "suite". */
static void name_from_source(const char *source, char *name, size_t size)
{
    const char *base = strrchr(source, '/');
    base = base ? base + 1 : source;
    size_t len = strcspn(base, ".");
    if (len == 0 || base[0] == '(' || len >= size)
        snprintf(name, size, "suite");
    else
        snprintf(name, size, "%.*s", (int)len, base);
}

/* A double-quoted "\0" puts a NUL inside a scalar; every reader here sees C strings,
 * so "verlet\0x" would silently read as "verlet". Refused wherever it stands. */
static dm_status check_no_nul(parse_ctx *c)
{
    for (yaml_node_t *n = c->doc->nodes.start; n < c->doc->nodes.top; n++)
        if (n->type == YAML_SCALAR_NODE &&
            strlen(scalar_text(n)) != n->data.scalar.length)
            return fail_at(c, n, "text '%s' is cut by a NUL character \\0 (expected no NUL "
                           "in the suite)", scalar_text(n));
    return DM_OK;
}

/* Names become file names and table cells: a newline or an escape byte in one is
 * always a mistake. */
bool has_control(const char *s)
{
    for (const unsigned char *u = (const unsigned char *)s; *u; u++)
        if (*u < 0x20 || *u == 0x7f)
            return true;
    return false;
}

/* The value of one top-level key. */
static dm_status parse_top_value(suite_build *b, dm_suite *suite, int k,
                                 const yaml_node_t *value)
{
    parse_ctx *c = &b->ctx;
    dm_status st = DM_OK;
    double x;
    switch (k) {
    case TOP_NAME:
        st = get_string(c, value, "name", suite->name, sizeof suite->name);
        if (st == DM_OK && strchr(suite->name, '/') != NULL)
            st = fail_at(c, value, "name '%s' contains '/' (expected a plain name)",
                         suite->name);
        if (st == DM_OK && has_control(suite->name))
            st = fail_at(c, value, "name '%s' contains a control character (expected a "
                         "plain name on one line)", suite->name);
        break;
    case TOP_OUTPUT:
        st = get_string(c, value, "output", suite->output, sizeof suite->output);
        if (st == DM_OK && has_control(suite->output))
            st = fail_at(c, value, "output '%s' contains a control character (expected a "
                         "file name on one line)", suite->output);
        b->output_node = value;
        break;
    case TOP_HORIZON:
        st = parse_horizon(b, value);
        break;
    case TOP_BUCKETS:
    case TOP_SAMPLES:
        st = get_whole(c, value, top_keys[k], 1, DM_MAX_SAMPLES, &x);
        if (st == DM_OK) /* converting an out-of-range x would be undefined */
            b->samples = (size_t)x;
        break;
    case TOP_ENERGY_LIMIT:
        st = get_positive(c, value, "energy_limit", &b->energy_limit);
        break;
    case TOP_STEP_BUDGET:
        st = get_number(c, value, "step_budget", &b->step_budget);
        if (st == DM_OK && !(b->step_budget >= 1.0 && b->step_budget <= 1e18))
            st = fail_at(c, value, "step_budget = %g is out of range (expected a number "
                         "in [1, 1e18])", b->step_budget);
        b->step_budget_node = value;
        break;
    case TOP_MEMORY_LIMIT:
        st = get_positive(c, value, "memory_limit_gib", &b->memory_limit_gib);
        if (st == DM_OK && !(b->memory_limit_gib <= 1e6))
            st = fail_at(c, value, "memory_limit_gib = %g is out of range (expected a number "
                         "of GiB up to 1e6)", b->memory_limit_gib);
        break;
    case TOP_LYAPUNOV:
        st = get_bool(c, value, "lyapunov", &b->lyapunov);
        break;
    case TOP_REFERENCE:
        st = get_bool(c, value, "reference", &b->reference);
        b->reference_node = value;
        break;
    case TOP_REFERENCE_TOLERANCE:
        st = get_positive(c, value, "reference_tolerance", &b->reference_tolerance);
        if (st == DM_OK && !(b->reference_tolerance >= 1e-32 && b->reference_tolerance <= 1e-6))
            st = fail_at(c, value, "reference_tolerance = %g is out of range (expected a "
                         "number in [1e-32, 1e-6])", b->reference_tolerance);
        break;
    case TOP_REFERENCE_FORCE_EVALS:
        st = get_positive(c, value, "reference_force_evals", &b->reference_force_evals);
        if (st == DM_OK && !(b->reference_force_evals >= 1e3 && b->reference_force_evals <= 1e15))
            st = fail_at(c, value, "reference_force_evals = %g is out of range (expected a "
                         "number in [1e3, 1e15])", b->reference_force_evals);
        break;
    case TOP_PROBLEMS:
        st = parse_list(b, value, true);
        break;
    case TOP_METHODS:
        st = parse_list(b, value, false);
        break;
    }
    return st;
}

/* The output file: the command line's -o when given (its errors name -o, not a suite
 * line), else the suite's own. */
const char dm_suite_output_unchecked[] = "(not checked)";

static dm_status resolve_output(suite_build *b, dm_suite *suite, const yaml_node_t *root)
{
    if (b->output_override == dm_suite_output_unchecked)
        return DM_OK;
    if (b->output_override != NULL) {
        /* The command line names the file: that one is checked, its errors name no
         * suite line */
        snprintf(suite->output, sizeof suite->output, "%s", b->output_override);
        return check_output(b, suite->output, root);
    }
    return check_output(b, suite->output, b->output_node ? b->output_node : root);
}

/* The whole suite:
 *  1. a non-empty mapping with unique, known top-level keys, each value parsed;
 *  2. the required keys present, defaults for name and output;
 *  3. every run expanded and checked (expand_runs);
 *  4. the output file checked. */
static dm_status parse_document(suite_build *b, dm_suite *suite)
{
    parse_ctx *c = &b->ctx;
    yaml_node_t *root = yaml_document_get_root_node(c->doc);
    if (root == NULL)
        return dm_error_set(c->err, DM_EINPUT, "%s:1:1: the suite is empty (expected a "
                            "mapping with horizon, problems and methods)", c->source);
    dm_status st0 = check_no_nul(c);
    if (st0 != DM_OK)
        return st0;
    if (root->type != YAML_MAPPING_NODE)
        return fail_at(c, root, "the suite must be a mapping, found %s (expected name: ..., "
                       "horizon: ..., problems: ..., methods: ...)", node_kind(root));
    dm_status st = check_unique_keys(c, root);
    if (st != DM_OK)
        return st;

    const yaml_node_t *value_of[TOP_COUNT] = { NULL };
    for (const yaml_node_pair_t *p = root->data.mapping.pairs.start;
         p < root->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        int k;
        if ((st = get_known_key(c, p, "key", top_keys, TOP_COUNT, &key, &k)) != DM_OK)
            return st;
        value_of[k] = node_at(c, p->value);
        if ((k == TOP_BUCKETS && value_of[TOP_SAMPLES] != NULL) ||
            (k == TOP_SAMPLES && value_of[TOP_BUCKETS] != NULL))
            return fail_at(c, key, "both buckets and samples given (expected one: samples "
                           "is the older name of buckets)");
        if ((st = parse_top_value(b, suite, k, value_of[k])) != DM_OK)
            return st;
    }
    static const struct { int key; const char *expected; } required[] = {
        { TOP_HORIZON, "horizon: {periods: N} or {time: T}" },
        { TOP_PROBLEMS, "problems: a list of {problem: NAME, ...}" },
        { TOP_METHODS, "methods: a list of {method: NAME, h: STEP}" },
    };
    for (size_t i = 0; i < sizeof required / sizeof required[0]; i++)
        if (value_of[required[i].key] == NULL)
            return fail_at(c, root, "missing required key '%s' (expected %s)",
                           top_keys[required[i].key], required[i].expected);

    if (value_of[TOP_NAME] == NULL)
        name_from_source(c->source, suite->name, sizeof suite->name);
    if (value_of[TOP_OUTPUT] == NULL)
        snprintf(suite->output, sizeof suite->output, "results/%s.h5", suite->name);
    suite->energy_limit = b->energy_limit;
    suite->step_budget = (uint64_t)b->step_budget;

    if ((st = expand_runs(b, suite)) != DM_OK)
        return st;
    /* A run's series stay in memory only until the run is written (as it finishes), so
     * the runs in memory at once are one a core: refuse up front a suite whose largest
     * runs, that many of them, would run out of it part way. */
    double largest = 0.0;
    for (size_t i = 0; i < suite->n_runs; i++)
        largest = fmax(largest, dm_run_memory_bytes(&suite->runs[i]));
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    size_t at_once = cores > 0 ? (size_t)cores : 1;
    if (at_once > suite->n_runs)
        at_once = suite->n_runs;
    double gib = largest * (double)at_once / 1073741824.0;
    if (gib > b->memory_limit_gib) {
        const yaml_node_t *at = value_of[TOP_MEMORY_LIMIT] ? value_of[TOP_MEMORY_LIMIT]
                                : value_of[TOP_BUCKETS] ? value_of[TOP_BUCKETS]
                                : value_of[TOP_SAMPLES] ? value_of[TOP_SAMPLES] : root;
        return fail_at(c, at, "the series of %zu runs at once (one a core) would take about "
                       "%.3g GiB of memory, above memory_limit_gib = %g (expected fewer "
                       "buckets, or a larger memory_limit_gib)", at_once, gib,
                       b->memory_limit_gib);
    }
    return resolve_output(b, suite, root);
}

/* One cheap pass over libyaml's events before the document is built: refuses nesting
 * deeper than DM_MAX_DEPTH (100,000 levels took the document loader most of a minute)
 * and notes the scalars tagged explicitly as something other than a number. A syntax
 * error is left for the loader, which reports it. */
static dm_status prescan(parse_ctx *c, const char *text, size_t length)
{
    yaml_parser_t parser;
    if (!yaml_parser_initialize(&parser))
        return dm_error_set(c->err, DM_ENOMEM, "out of memory starting the YAML reader");
    yaml_parser_set_input_string(&parser, (const unsigned char *)text, length);
    dm_status st = DM_OK;
    size_t cap = 0;
    int depth = 0;
    for (bool done = false; !done && st == DM_OK;) {
        yaml_event_t ev;
        if (!yaml_parser_parse(&parser, &ev))
            break;
        switch (ev.type) {
        case YAML_STREAM_END_EVENT: done = true; break;
        case YAML_SEQUENCE_START_EVENT:
        case YAML_MAPPING_START_EVENT:
            if (++depth > DM_MAX_DEPTH)
                st = dm_error_set(c->err, DM_EINPUT, "%s:%zu:%zu: lists and mappings nested "
                                  "more than %d deep (expected a suite of a few levels)",
                                  c->source, ev.start_mark.line + 1, ev.start_mark.column + 1,
                                  DM_MAX_DEPTH);
            break;
        case YAML_SEQUENCE_END_EVENT:
        case YAML_MAPPING_END_EVENT: depth--; break;
        case YAML_SCALAR_EVENT: {
            const char *tag = (const char *)ev.data.scalar.tag;
            if (tag == NULL || strcmp(tag, YAML_INT_TAG) == 0 || strcmp(tag, YAML_FLOAT_TAG) == 0)
                break;
            if (c->n_text_tagged == cap) {
                size_t grown_cap = cap ? 2 * cap : 16;
                size_t *grown = realloc(c->text_tagged, grown_cap * sizeof *grown);
                if (grown == NULL) {
                    st = dm_error_set(c->err, DM_ENOMEM, "out of memory reading %s", c->source);
                    break;
                }
                c->text_tagged = grown;
                cap = grown_cap;
            }
            c->text_tagged[c->n_text_tagged++] = ev.start_mark.index;
            break;
        }
        default: break;
        }
        yaml_event_delete(&ev);
    }
    yaml_parser_delete(&parser);
    return st;
}

dm_status dm_suite_parse(dm_suite *suite, const char *text, size_t length,
                         const char *source, const char *output, dm_error *err)
{
    return dm_suite_parse_in(suite, text, length, source, NULL, output, err);
}

dm_status dm_suite_parse_in(dm_suite *suite, const char *text, size_t length,
                            const char *source, const char *folder, const char *output,
                            dm_error *err)
{
    memset(suite, 0, sizeof *suite);
    dm_error_clear(err);
    dm_error local;
    if (err == NULL)
        err = &local;
    snprintf(suite->source, sizeof suite->source, "%s", source);
    snprintf(suite->folder, sizeof suite->folder, "%s", folder ? folder : "");
    suite->text = malloc(length + 1);
    if (suite->text == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory reading %s", source);
    memcpy(suite->text, text, length);
    suite->text[length] = '\0';

    if (length > (size_t)DM_SUITE_MAX_BYTES) {
        dm_suite_free(suite);
        return dm_error_set(err, DM_EINPUT, "%s: the suite text has %zu bytes (expected at "
                            "most %d, 1 MiB)", source, length, DM_SUITE_MAX_BYTES);
    }
    parse_ctx scan = { .source = suite->source, .err = err };
    if (prescan(&scan, text, length) != DM_OK) {
        free(scan.text_tagged);
        dm_suite_free(suite);
        return err->code;
    }

    yaml_parser_t parser;
    yaml_document_t doc;
    if (!yaml_parser_initialize(&parser)) {
        free(scan.text_tagged);
        dm_suite_free(suite);
        return dm_error_set(err, DM_ENOMEM, "out of memory starting the YAML reader");
    }
    yaml_parser_set_input_string(&parser, (const unsigned char *)text, length);
    if (!yaml_parser_load(&parser, &doc)) {
        const char *problem = parser.problem ? parser.problem : "unreadable YAML";
        if (parser.context != NULL)
            dm_error_set(err, DM_EINPUT, "%s:%zu:%zu: YAML syntax error: %s (%s at line %zu, "
                         "column %zu)", source, parser.problem_mark.line + 1,
                         parser.problem_mark.column + 1, problem, parser.context,
                         parser.context_mark.line + 1, parser.context_mark.column + 1);
        else
            dm_error_set(err, DM_EINPUT, "%s:%zu:%zu: YAML syntax error: %s (expected valid "
                         "YAML)", source, parser.problem_mark.line + 1,
                         parser.problem_mark.column + 1, problem);
        yaml_parser_delete(&parser);
        free(scan.text_tagged);
        dm_suite_free(suite);
        return DM_EINPUT;
    }

    suite_build b;
    memset(&b, 0, sizeof b);
    b.suite = suite;
    b.ctx = (parse_ctx){ .doc = &doc, .source = suite->source, .folder = suite->folder,
                         .err = err,
                         .text_tagged = scan.text_tagged, .n_text_tagged = scan.n_text_tagged };
    b.output_override = output;
    b.samples = DM_DEFAULT_SAMPLES;
    b.energy_limit = 1.0;
    b.step_budget = DM_DEFAULT_STEP_BUDGET;
    b.memory_limit_gib = DM_DEFAULT_MEMORY_LIMIT_GIB;
    b.reference_tolerance = DM_REFERENCE_DEFAULT_TOLERANCE;
    b.reference_force_evals = DM_REFERENCE_DEFAULT_FORCE_EVALS;
    dm_status st = parse_document(&b, suite);
    if (st == DM_OK) { /* the runs' methods live in the tables: the suite keeps them */
        suite->tables = b.tables;
        suite->n_tables = b.n_tables;
        b.tables = NULL;
        b.n_tables = 0;
    }

    /* One suite per file: a second document is almost surely a mistake. */
    if (st == DM_OK) {
        yaml_document_t next;
        if (!yaml_parser_load(&parser, &next)) {
            st = dm_error_set(err, DM_EINPUT, "%s:%zu:%zu: YAML syntax error: %s (expected "
                              "valid YAML)", source, parser.problem_mark.line + 1,
                              parser.problem_mark.column + 1,
                              parser.problem ? parser.problem : "unreadable YAML");
        } else {
            yaml_node_t *extra = yaml_document_get_root_node(&next);
            if (extra != NULL)
                st = dm_error_set(err, DM_EINPUT, "%s:%zu:%zu: a second YAML document "
                                  "(expected one suite per file)", source,
                                  extra->start_mark.line + 1, extra->start_mark.column + 1);
            yaml_document_delete(&next);
        }
    }
    build_free(&b);
    free(scan.text_tagged);
    yaml_document_delete(&doc);
    yaml_parser_delete(&parser);
    if (st != DM_OK)
        dm_suite_free(suite);
    return st;
}

int dm_open_regular(const char *path, const char *what, long long max_bytes, dm_error *err)
{
    /* O_NONBLOCK: opening a FIFO with no writer returns at once instead of waiting */
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) {
        dm_error_set(err, DM_EINPUT, "cannot open %s %s: %s", what, path, strerror(errno));
        return -1;
    }
    struct stat sb;
    const char *bad = NULL;
    if (fstat(fd, &sb) != 0)
        bad = strerror(errno);
    else if (S_ISDIR(sb.st_mode))
        bad = "it is a directory (expected a file)";
    else if (!S_ISREG(sb.st_mode))
        bad = "it is not a regular file (a pipe, a device or a socket; expected a file)";
    if (bad != NULL) {
        dm_error_set(err, DM_EINPUT, "cannot read %s %s: %s", what, path, bad);
        close(fd);
        return -1;
    }
    if (max_bytes > 0 && (long long)sb.st_size > max_bytes) {
        dm_error_set(err, DM_EINPUT, "cannot read %s %s: it has %lld bytes (expected at most "
                     "%lld)", what, path, (long long)sb.st_size, max_bytes);
        close(fd);
        return -1;
    }
    int flags = fcntl(fd, F_GETFL);
    if (flags >= 0)
        fcntl(fd, F_SETFL, flags & ~O_NONBLOCK);
    return fd;
}

/* The folder of the suite file `path`, absolute (realpath), into out; NULL when it
 * cannot be told or does not fit (relative paths are then taken from `path` as written). */
static const char *suite_folder(const char *path, char *out, size_t size)
{
    const char *slash = strrchr(path, '/');
    char dir[1024];
    int n = slash == NULL ? snprintf(dir, sizeof dir, ".")
            : slash == path ? snprintf(dir, sizeof dir, "/")
                            : snprintf(dir, sizeof dir, "%.*s", (int)(slash - path), path);
    char *abs = n >= 0 && (size_t)n < sizeof dir ? realpath(dir, NULL) : NULL;
    bool fits = abs != NULL && strlen(abs) < size;
    if (fits)
        snprintf(out, size, "%s", strcmp(abs, "/") == 0 ? "" : abs);
    free(abs);
    return fits && out[0] != '\0' ? out : NULL;
}

dm_status dm_suite_load(dm_suite *suite, const char *path, const char *output, dm_error *err)
{
    char folder[1024];
    memset(suite, 0, sizeof *suite);
    int fd = dm_open_regular(path, "suite", DM_SUITE_MAX_BYTES, err);
    if (fd < 0)
        return DM_EINPUT;
    /* At most DM_SUITE_MAX_BYTES, whatever the size said: one byte more is refused. */
    char *buf = malloc((size_t)DM_SUITE_MAX_BYTES + 1);
    size_t n = 0;
    int read_errno = 0;
    while (buf != NULL && n <= (size_t)DM_SUITE_MAX_BYTES) {
        ssize_t got = read(fd, buf + n, (size_t)DM_SUITE_MAX_BYTES + 1 - n);
        if (got < 0 && errno == EINTR)
            continue;
        if (got < 0)
            read_errno = errno;
        if (got <= 0)
            break;
        n += (size_t)got;
    }
    close(fd);
    if (buf == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory reading suite %s", path);
    dm_status st;
    if (read_errno != 0)
        st = dm_error_set(err, DM_EINPUT, "cannot read suite %s: %s", path,
                          strerror(read_errno));
    else if (n > (size_t)DM_SUITE_MAX_BYTES)
        st = dm_error_set(err, DM_EINPUT, "cannot read suite %s: it is longer than %d bytes "
                          "(1 MiB, the most a suite may hold)", path, DM_SUITE_MAX_BYTES);
    else
        st = dm_suite_parse_in(suite, buf, n, path, suite_folder(path, folder, sizeof folder),
                               output, err);
    free(buf);
    return st;
}

dm_status dm_suite_default(dm_suite *suite, const char *output, dm_error *err)
{
    return dm_suite_parse(suite, dm_default_suite_text, strlen(dm_default_suite_text),
                          "(built-in default suite)", output, err);
}

void dm_suite_free(dm_suite *suite)
{
    if (suite == NULL)
        return;
    free(suite->text);
    for (size_t i = 0; i < suite->n_sweeps; i++)
        free(suite->sweeps[i].runs);
    free(suite->sweeps);
    free(suite->runs);
    for (size_t i = 0; i < suite->n_problem_data; i++)
        free(suite->problem_data[i]);
    free(suite->problem_data);
    for (size_t i = 0; i < suite->n_tables; i++)
        free(suite->tables[i]);
    free(suite->tables);
    memset(suite, 0, sizeof *suite);
}

/* ---- the data of a problem that needs it: N-body bodies (problems/include/nbody.h) ----
 *
 *   bodies: [{name: Sun, mass: 1, position: [x, y, z], velocity: [u, v, w]}, ...]
 *           (momentum: [..] instead of velocity, converted once to a velocity)
 *   bodies_file: PATH (a plain CSV file, from the suite's folder when relative, one body
 *           a line: name, mass, x, y, z, a, b, c; # starts a comment line; a first line
 *           starting with the word name is a heading) with file_holds: velocities or
 *           momenta (what a, b, c are)
 *   units: TEXT (required: the units the numbers and G are in)
 *   period_of: {body: NAME, around: NAME} (optional: the body whose period is measured)
 * and the parameter G, which must be given. */

static const char *const data_keys[] = { "bodies", "bodies_file", "file_holds", "units",
                                         "period_of" };
enum { D_BODIES, D_FILE, D_HOLDS, D_UNITS, D_PERIOD_OF, D_COUNT };

static bool is_data_key(const char *name)
{
    for (int k = 0; k < D_COUNT; k++)
        if (strcmp(name, data_keys[k]) == 0)
            return true;
    return false;
}

/* [x, y, z]: three finite numbers. */
static dm_status get_vector3(parse_ctx *c, const yaml_node_t *node, const char *what,
                             double out[3])
{
    if (node->type != YAML_SEQUENCE_NODE ||
        node->data.sequence.items.top - node->data.sequence.items.start != 3)
        return fail_at(c, node, "%s must be a list of 3 numbers (expected [x, y, z])", what);
    for (int k = 0; k < 3; k++) {
        dm_status st = get_number(c, node_at(c, node->data.sequence.items.start[k]), what,
                                  &out[k]);
        if (st != DM_OK)
            return st;
    }
    return DM_OK;
}

/* A body's mass, its name's length and characters: the checks a suite body and a file
 * line share. Returns NULL or what is wrong. */
static const char *body_fault(const char *name, double mass)
{
    if (!(mass > 0.0))
        return "mass must be positive (expected a number > 0)";
    if (strlen(name) >= DM_NBODY_NAME_MAX)
        return "name is too long (expected at most 31 characters)";
    if (has_control(name) || strchr(name, ',') != NULL)
        return "name holds a comma or a control character (expected a plain name)";
    return NULL;
}

/* One entry of `bodies:`. */
static dm_status parse_body(parse_ctx *c, const yaml_node_t *node, dm_nbody *d, int i)
{
    static const char *const keys[] = { "name", "mass", "position", "velocity", "momentum" };
    if (node->type != YAML_MAPPING_NODE)
        return fail_at(c, node, "a body must be a mapping, found %s (expected {name: N, "
                       "mass: M, position: [x, y, z], velocity: [u, v, w]})", node_kind(node));
    dm_status st = check_unique_keys(c, node);
    const yaml_node_t *found[5] = { NULL };
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         st == DM_OK && p < node->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        const char *name;
        if ((st = get_key(c, p, &key, &name)) != DM_OK)
            break;
        int k = 0;
        while (k < 5 && strcmp(name, keys[k]) != 0)
            k++;
        if (k == 5)
            return fail_unknown(c, key, "body key", name, keys, 5);
        found[k] = node_at(c, p->value);
    }
    if (st != DM_OK)
        return st;
    if (found[1] == NULL || found[2] == NULL || (found[3] == NULL) == (found[4] == NULL))
        return fail_at(c, node, "a body needs mass, position and one of velocity or momentum "
                       "(expected {mass: M, position: [x, y, z], velocity: [u, v, w]})");
    if (found[0] != NULL &&
        (st = get_string(c, found[0], "body name", d->name[i], DM_NBODY_NAME_MAX)) != DM_OK)
        return st;
    double v[3];
    if ((st = get_number(c, found[1], "body mass", &d->mass[i])) != DM_OK ||
        (st = get_vector3(c, found[2], "body position", d->position[i])) != DM_OK ||
        (st = get_vector3(c, found[3] ? found[3] : found[4], found[3] ? "body velocity"
                                                                      : "body momentum", v)) != DM_OK)
        return st;
    const char *fault = body_fault(d->name[i], d->mass[i]);
    if (fault != NULL)
        return fail_at(c, fault[0] == 'm' ? found[1] : found[0], "body %d: %s", i + 1, fault);
    for (int k = 0; k < 3; k++)
        d->velocity[i][k] = found[3] ? v[k] : v[k] / d->mass[i];
    return DM_OK;
}

/* The fields of one CSV line, split at commas and trimmed of blanks (at most `max`);
 * col[] gets each field's 1-based column. Returns the count. */
static int split_csv(char *line, char **field, size_t *col, int max)
{
    int n = 0;
    char *at = line;
    for (;;) {
        char *end = strchr(at, ',');
        if (end != NULL)
            *end = '\0';
        char *f = at;
        while (*f == ' ' || *f == '\t')
            f++;
        char *tail = f + strlen(f);
        while (tail > f && (tail[-1] == ' ' || tail[-1] == '\t'))
            *--tail = '\0';
        if (n < max) {
            field[n] = f;
            col[n] = (size_t)(f - line) + 1;
        }
        n++;
        if (end == NULL)
            return n;
        at = end + 1;
    }
}

/* One line of a bodies file: name, mass, x, y, z, then velocity or momentum. */
static dm_status read_csv_line(dm_error *err, const char *path, size_t line_no, char *line,
                               bool momenta, dm_nbody *d)
{
    char *field[8];
    size_t col[8];
    int n = split_csv(line, field, col, 8);
    if (n != 8)
        return dm_error_set(err, DM_EINPUT, "%s:%zu:1: %d fields (expected 8: name, mass, x, "
                            "y, z and the three of the %s)", path, line_no, n,
                            momenta ? "momentum" : "velocity");
    if (d->n == DM_NBODY_MAX)
        return dm_error_set(err, DM_EINPUT, "%s:%zu:1: more than %d bodies", path, line_no,
                            DM_NBODY_MAX);
    int i = d->n;
    double x[7];
    for (int k = 1; k < 8; k++)
        if (dm_parse_double(field[k], &x[k - 1]) != 0)
            return dm_error_set(err, DM_EINPUT, "%s:%zu:%zu: '%s' is not a finite number "
                                "(expected a number such as 1.5e-3)", path, line_no, col[k],
                                field[k]);
    snprintf(d->name[i], DM_NBODY_NAME_MAX, "%s", field[0]);
    const char *fault = body_fault(field[0], x[0]);
    if (fault != NULL)
        return dm_error_set(err, DM_EINPUT, "%s:%zu:%zu: %s", path, line_no,
                            col[fault[0] == 'm' ? 1 : 0], fault);
    d->mass[i] = x[0];
    for (int k = 0; k < 3; k++) {
        d->position[i][k] = x[1 + k];
        d->velocity[i][k] = momenta ? x[4 + k] / x[0] : x[4 + k];
    }
    d->n++;
    return DM_OK;
}

/* `bodies_file:` read whole (at most 1 MiB) and line by line. Its errors name the file,
 * line and column. */
static dm_status read_bodies_file(parse_ctx *c, const yaml_node_t *at, const char *path,
                                  bool momenta, dm_nbody *d)
{
    dm_error ferr = { 0 };
    int fd = dm_open_regular(path, "bodies file", DM_SUITE_MAX_BYTES, &ferr);
    if (fd < 0)
        return fail_at(c, at, "%s", ferr.msg);
    char *text = malloc((size_t)DM_SUITE_MAX_BYTES + 1);
    size_t len = 0;
    ssize_t got = 0;
    while (text != NULL && len < (size_t)DM_SUITE_MAX_BYTES &&
           ((got = read(fd, text + len, (size_t)DM_SUITE_MAX_BYTES - len)) > 0 ||
            (got < 0 && errno == EINTR)))
        len += got > 0 ? (size_t)got : 0;
    close(fd);
    if (text == NULL)
        return dm_error_set(c->err, DM_ENOMEM, "out of memory reading %s", path);
    if (got < 0) {
        free(text);
        return fail_at(c, at, "cannot read bodies file %s: %s", path, strerror(errno));
    }
    text[len] = '\0';
    dm_status st = DM_OK;
    const char *nul = memchr(text, '\0', len);
    if (nul != NULL) {
        size_t at_line = 1;
        for (const char *t = text; t < nul; t++)
            at_line += *t == '\n';
        st = dm_error_set(c->err, DM_EINPUT, "%s:%zu:1: a NUL byte (expected a text file)",
                          path, at_line);
    }
    size_t line_no = 0;
    char *next = text;
    while (st == DM_OK && next != NULL && *next != '\0') {
        char *line = next;
        next = strchr(line, '\n');
        if (next != NULL)
            *next++ = '\0';
        line_no++;
        size_t l = strlen(line);
        if (l > 0 && line[l - 1] == '\r')
            line[l - 1] = '\0';
        char *first = line + strspn(line, " \t");
        if (*first == '\0' || *first == '#')
            continue;
        if (d->n == 0 && strncmp(first, "name", 4) == 0 && (first[4] == ',' || first[4] == ' '))
            continue; /* the heading */
        if (strchr(line, '"') != NULL)
            st = dm_error_set(c->err, DM_EINPUT, "%s:%zu:%zu: a quote (expected plain "
                              "fields: quoted fields are not read)", path, line_no,
                              (size_t)(strchr(line, '"') - line) + 1);
        else
            st = read_csv_line(c->err, path, line_no, line, momenta, d);
    }
    free(text);
    return st;
}

/* The index of the body called `name`, or -1. */
static int body_named(const dm_nbody *d, const char *name)
{
    for (int i = 0; i < d->n; i++)
        if (strcmp(d->name[i], name) == 0)
            return i;
    return -1;
}

/* `period_of: {body: NAME, around: NAME}`, two different named bodies. */
static dm_status parse_period_of(parse_ctx *c, const yaml_node_t *node, dm_nbody *d)
{
    static const char *const keys[] = { "body", "around" };
    int *slot[2] = { &d->period_body, &d->period_around };
    if (node->type != YAML_MAPPING_NODE)
        return fail_at(c, node, "period_of must be a mapping (expected {body: NAME, around: "
                       "NAME})");
    dm_status st = check_unique_keys(c, node);
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         st == DM_OK && p < node->data.mapping.pairs.top; p++) {
        yaml_node_t *key;
        const char *name;
        char body[DM_NBODY_NAME_MAX];
        if ((st = get_key(c, p, &key, &name)) != DM_OK)
            break;
        int k = strcmp(name, "body") == 0 ? 0 : strcmp(name, "around") == 0 ? 1 : -1;
        if (k < 0)
            return fail_unknown(c, key, "period_of key", name, keys, 2);
        const yaml_node_t *value = node_at(c, p->value);
        if ((st = get_string(c, value, "period_of body", body, sizeof body)) != DM_OK)
            break;
        *slot[k] = body_named(d, body);
        if (*slot[k] < 0)
            return fail_at(c, value, "period_of names '%s', which no body is called "
                           "(expected the name of a body)", body);
    }
    if (st == DM_OK && (d->period_body < 0 || d->period_around < 0))
        return fail_at(c, node, "period_of needs body and around (expected {body: NAME, "
                       "around: NAME})");
    if (st == DM_OK && d->period_body == d->period_around)
        return fail_at(c, node, "period_of names one body twice (expected two bodies)");
    return st;
}

/* The canonical text of the bodies (every number with %.17g), hashed into e->data_hash. */
static void hash_bodies(const dm_nbody *d, problem_entry *e)
{
    char *text = malloc((size_t)d->n * 256 + 64);
    if (text == NULL)
        return; /* the hash stays empty: the configuration then names no bodies */
    size_t used = 0;
    for (int i = 0; i < d->n; i++)
        used += (size_t)sprintf(text + used, "%s %.17g %.17g %.17g %.17g %.17g %.17g %.17g;",
                                d->name[i], d->mass[i], d->position[i][0], d->position[i][1],
                                d->position[i][2], d->velocity[i][0], d->velocity[i][1],
                                d->velocity[i][2]);
    sprintf(text + used, " period_of=%d,%d", d->period_body, d->period_around);
    snprintf(e->data_hash, sizeof e->data_hash, "%016" PRIx64, dm_hash_text(text));
    free(text);
}

/* The keys of the data, in the entry `node`, into a new dm_nbody owned by the suite. */
static dm_status read_data_keys(suite_build *b, const yaml_node_t *node, problem_entry *e,
                                dm_nbody *d, const yaml_node_t **period_of)
{
    parse_ctx *c = &b->ctx;
    const yaml_node_t *value[D_COUNT] = { NULL };
    bool has_G = false;
    for (const yaml_node_pair_t *p = node->data.mapping.pairs.start;
         p < node->data.mapping.pairs.top; p++) {
        const char *name = scalar_text(node_at(c, p->key));
        has_G = has_G || strcmp(name, "G") == 0;
        for (int k = 0; k < D_COUNT; k++)
            if (strcmp(name, data_keys[k]) == 0)
                value[k] = node_at(c, p->value);
    }
    dm_status st;
    const char *missing = !has_G                      ? "G (the constant of gravitation)"
                          : value[D_UNITS] == NULL     ? "units (a text naming them)"
                          : value[D_BODIES] == NULL && value[D_FILE] == NULL
                              ? "its bodies (bodies: [...] or bodies_file: PATH)"
                              : NULL;
    if (missing != NULL)
        return fail_at(c, node, "%s needs %s (expected {problem: %s, G: VALUE, units: TEXT, "
                       "bodies: [...]})", e->problem->id, missing, e->problem->id);
    if (value[D_BODIES] != NULL && value[D_FILE] != NULL)
        return fail_at(c, value[D_FILE], "%s has both bodies and bodies_file (expected one "
                       "of them)", e->problem->id);
    if ((value[D_FILE] != NULL) != (value[D_HOLDS] != NULL))
        return fail_at(c, value[D_FILE] ? value[D_FILE] : value[D_HOLDS],
                       "file_holds goes with bodies_file (expected both or neither)");
    if ((st = get_string(c, value[D_UNITS], "units", e->units, sizeof e->units)) != DM_OK)
        return st;
    if (value[D_BODIES] != NULL) {
        const yaml_node_t *list = value[D_BODIES];
        if (list->type != YAML_SEQUENCE_NODE)
            return fail_at(c, list, "bodies must be a list (expected - {name: ..., mass: ...})");
        for (const yaml_node_item_t *it = list->data.sequence.items.start;
             it < list->data.sequence.items.top; it++) {
            if (d->n == DM_NBODY_MAX)
                return fail_at(c, node_at(c, *it), "more than %d bodies", DM_NBODY_MAX);
            if ((st = parse_body(c, node_at(c, *it), d, d->n)) != DM_OK)
                return st;
            d->n++;
        }
        snprintf(e->data_source, sizeof e->data_source, "suite");
    } else {
        char holds[16], path[1024];
        if ((st = get_string(c, value[D_HOLDS], "file_holds", holds, sizeof holds)) != DM_OK ||
            (st = get_string(c, value[D_FILE], "bodies_file", path, sizeof path)) != DM_OK)
            return st;
        bool momenta = strcmp(holds, "momenta") == 0;
        if (!momenta && strcmp(holds, "velocities") != 0)
            return fail_at(c, value[D_HOLDS], "file_holds '%s' (expected velocities or "
                           "momenta)", holds);
        if (!suite_relative_path(c, path, e->data_source, sizeof e->data_source))
            return fail_at(c, value[D_FILE], "bodies_file path is too long");
        if ((st = read_bodies_file(c, value[D_FILE], e->data_source, momenta, d)) != DM_OK)
            return st;
    }
    *period_of = value[D_PERIOD_OF];
    if (d->n < 2)
        return fail_at(c, value[D_BODIES] ? value[D_BODIES] : value[D_FILE],
                       "%d bod%s (expected 2 to %d)", d->n, d->n == 1 ? "y" : "ies", DM_NBODY_MAX);
    return DM_OK;
}

static dm_status parse_problem_data(suite_build *b, const yaml_node_t *node, problem_entry *e)
{
    parse_ctx *c = &b->ctx;
    dm_suite *suite = b->suite;
    void **grown = realloc(suite->problem_data, (suite->n_problem_data + 1) * sizeof *grown);
    dm_nbody *d = calloc(1, sizeof *d);
    if (grown != NULL)
        suite->problem_data = grown;
    if (grown == NULL || d == NULL) {
        free(d);
        return dm_error_set(c->err, DM_ENOMEM, "out of memory reading the suite");
    }
    suite->problem_data[suite->n_problem_data++] = d; /* freed with the suite */
    d->period_body = d->period_around = -1;
    const yaml_node_t *period_of = NULL;
    dm_status st = read_data_keys(b, node, e, d, &period_of);
    for (int i = 0; st == DM_OK && i < d->n; i++) {
        d->inverse_mass[i] = 1.0 / d->mass[i];
        for (int j = 0; j < i; j++)
            if (d->name[i][0] != '\0' && strcmp(d->name[i], d->name[j]) == 0)
                st = fail_at(c, node, "two bodies are called '%s' (expected distinct names)",
                             d->name[i]);
    }
    if (st == DM_OK && period_of != NULL)
        st = parse_period_of(c, period_of, d);
    if (st == DM_OK) {
        hash_bodies(d, e);
        e->data = d;
    }
    return st;
}
