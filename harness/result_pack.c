/* result_pack.c — dm_run_result <-> flat byte buffer (see result_pack.h).
 *
 * Layout, every field in the host's byte order, no padding:
 *   header   "DMRP", u32 version, u32 byte-order marker, u64 run index, 17-byte hash
 *   figures  every row of DM_RUN_FIGURES (run_figures.h) in list order, by kind:
 *            REAL and COUNT 8 bytes, STATUS i32, TEXT u32 length + bytes (no NUL),
 *            RULE u8 (0: none, k: dm_energy_scale_rules[k - 1]),
 *            PER_INVARIANT DM_MAX_INVARIANTS doubles
 *   series   u64 n, i32 n_invariants, then per array u8 present + n doubles
 *   crossings u64 n, then number, time, phase_error (n doubles each), u32 1 when the
 *             surface of section follows (section_q, section_p: n doubles each), else 0
 * The same walk over the fields writes, measures and reads the buffer, so the three
 * cannot drift apart.
 */
#include "checkpoint.h"
#include "result_pack.h"

#include <stdbool.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define PACK_MAGIC "DMRP"
#define PACK_VERSION 3u
#define PACK_BYTE_ORDER 0x01020304u

/* Every field of dm_run_metrics is a figure of the list or one of dm_counts (each of
 * which has its row, figures.c checks), so a new field cannot be left behind here. */
#define FIGURE_BYTES_metrics(size) +(size)
#define FIGURE_BYTES_counts(size)
#define FIGURE_BYTES_result(size)
#define FIGURE_BYTES_crossings(size)
#define PLUS_METRICS_BYTES(name, kind, home, in, width, column, format, meaning)           \
    FIGURE_BYTES_##home(sizeof(((dm_run_result *)0)->DM_FIGURE_PATH_##home(name)))
_Static_assert(sizeof(dm_run_metrics) ==
                   0 DM_RUN_FIGURES(PLUS_METRICS_BYTES) + sizeof(dm_counts),
               "dm_run_metrics has a field outside DM_RUN_FIGURES: pack it here");

/* ---- the cursor: writes (buf != NULL), measures (buf == NULL) or reads ---- */

typedef struct cursor {
    unsigned char *out;        /* writing: the buffer; measuring: NULL */
    const unsigned char *in;   /* reading */
    size_t at, size;
    bool short_read;           /* a read ran past the end */
} cursor;

static void put(cursor *c, const void *v, size_t n)
{
    if (c->out != NULL && n > 0)
        memcpy(c->out + c->at, v, n);
    c->at += n;
}

static bool get(cursor *c, void *v, size_t n)
{
    if (c->short_read || n > c->size - c->at) {
        c->short_read = true;
        return false;
    }
    if (n > 0)
        memcpy(v, c->in + c->at, n);
    c->at += n;
    return true;
}

static void put_u64(cursor *c, uint64_t v) { put(c, &v, sizeof v); }
static void put_u32(cursor *c, uint32_t v) { put(c, &v, sizeof v); }

static void put_array(cursor *c, const double *a, size_t n)
{
    uint8_t present = a != NULL;
    put(c, &present, 1);
    if (a != NULL)
        put(c, a, n * sizeof(double));
}

/* The rule's number: 0 for none, k for dm_energy_scale_rules[k - 1]. */
static uint8_t rule_number(const char *rule)
{
    for (size_t k = 0; rule != NULL && dm_energy_scale_rules[k] != NULL; k++)
        if (strcmp(rule, dm_energy_scale_rules[k]) == 0)
            return (uint8_t)(k + 1);
    return 0;
}

static void put_figures(cursor *c, const dm_run_result *r)
{
    for (size_t i = 0; i < dm_n_run_figures; i++) {
        const dm_figure *f = &dm_run_figures[i];
        const char *at = (const char *)r + f->at;
        switch (f->kind) {
        case DM_FIGURE_STATUS: {
            int32_t status = (int32_t)*(const dm_run_status *)(const void *)at;
            put(c, &status, sizeof status);
            break;
        }
        case DM_FIGURE_TEXT: {
            size_t len = strnlen(at, f->size - 1);
            put_u32(c, (uint32_t)len);
            put(c, at, len);
            break;
        }
        case DM_FIGURE_RULE: {
            uint8_t rule = rule_number(*(const char *const *)(const void *)at);
            put(c, &rule, 1);
            break;
        }
        default: put(c, at, f->size); break; /* REAL, COUNT, PER_INVARIANT: as in memory */
        }
    }
}

static void walk_pack(cursor *c, const dm_suite *suite, size_t index, const dm_run_result *r)
{
    put(c, PACK_MAGIC, 4);
    put_u32(c, PACK_VERSION);
    put_u32(c, PACK_BYTE_ORDER);
    put_u64(c, (uint64_t)index);
    put(c, suite->runs[index].hash, DM_HASH_HEX);

    put_figures(c, r);

    const dm_series *s = &r->series;
    put_u64(c, (uint64_t)s->n);
    int32_t n_inv = s->n_invariants;
    put(c, &n_inv, sizeof n_inv);
#define PUT_SERIES(name, always) put_array(c, s->name, s->n);
    DM_SERIES_LIST(PUT_SERIES)
#undef PUT_SERIES
    for (int i = 0; i < s->n_invariants && i < DM_MAX_INVARIANTS; i++)
        put_array(c, s->invariant_error[i], s->n);

    const dm_crossings *x = &r->crossings;
    put_u64(c, (uint64_t)x->n);
    put_array(c, x->number, x->n);
    put_array(c, x->time, x->n);
    put_array(c, x->phase_error, x->n);
    put_u32(c, x->section_q != NULL);
    if (x->section_q != NULL) {
        put_array(c, x->section_q, x->n);
        put_array(c, x->section_p, x->n);
    }

    /* an interrupted run's checkpoint, as the struct's bytes: the ranks of one job run
     * one build on one kind of machine (README, "Running on a cluster"), and the record
     * is checked against its run when --resume reads it from the file */
    put_u32(c, r->checkpoint != NULL);
    if (r->checkpoint != NULL)
        put(c, r->checkpoint, sizeof *r->checkpoint);
}

dm_status dm_result_pack(const dm_suite *suite, size_t index, const dm_run_result *r,
                         unsigned char **buf, size_t *size, dm_error *err)
{
    *buf = NULL;
    *size = 0;
    if (index >= suite->n_runs)
        return dm_error_set(err, DM_EINPUT, "cannot pack run %zu: the suite has %zu runs",
                            index, suite->n_runs);
    const dm_series *s = &r->series;
    if (s->n_invariants < 0 || s->n_invariants > DM_MAX_INVARIANTS)
        return dm_error_set(err, DM_EINPUT, "cannot pack run %s: %d invariants (at most %d)",
                            suite->runs[index].id, s->n_invariants, DM_MAX_INVARIANTS);
    cursor measure = { 0 };
    walk_pack(&measure, suite, index, r);
    unsigned char *out = malloc(measure.at);
    if (out == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory packing run %s (%zu bytes)",
                            suite->runs[index].id, measure.at);
    cursor write = { .out = out };
    walk_pack(&write, suite, index, r);
    *buf = out;
    *size = write.at;
    return DM_OK;
}

/* ---- reading ---- */

/* Reads one array of n doubles into a new block of `capacity` (>= n), or leaves
 * *out NULL when it was absent. Returns false on a short or failed read. */
static bool get_array(cursor *c, size_t n, size_t capacity, double **out, bool *nomem)
{
    uint8_t present;
    if (!get(c, &present, 1) || present > 1)
        return false;
    if (!present)
        return true;
    if (n > (c->size - c->at) / sizeof(double)) {
        c->short_read = true;
        return false;
    }
    double *a = calloc(capacity > 0 ? capacity : 1, sizeof(double));
    if (a == NULL) {
        *nomem = true;
        return false;
    }
    *out = a;
    return get(c, a, n * sizeof(double));
}

/* The header: ours, this byte order and layout, a run of `suite` under the same
 * configuration. Sets *spec. */
static dm_status get_header(cursor *c, const dm_suite *suite, const dm_run_spec **spec,
                            dm_error *err)
{
    char magic[4];
    uint32_t version = 0, order = 0;
    uint64_t idx = 0;
    char hash[DM_HASH_HEX];
    if (!get(c, magic, 4) || memcmp(magic, PACK_MAGIC, 4) != 0 || !get(c, &version, 4) ||
        !get(c, &order, 4))
        return dm_error_set(err, DM_EIO, "a packed result of %zu bytes is not one (no header)",
                            c->size);
    if (order != PACK_BYTE_ORDER)
        return dm_error_set(err, DM_EIO, "a packed result comes from a machine of another "
                            "byte order (ranks must run on one kind of machine)");
    if (version != PACK_VERSION)
        return dm_error_set(err, DM_EIO, "a packed result has layout version %u, this "
                            "driftmark reads %u (ranks must run one driftmark)",
                            (unsigned)version, PACK_VERSION);
    if (!get(c, &idx, sizeof idx) || !get(c, hash, sizeof hash))
        return dm_error_set(err, DM_EIO, "a packed result is truncated in its header");
    if (idx >= suite->n_runs)
        return dm_error_set(err, DM_EIO, "a packed result names run %llu of a suite of %zu",
                            (unsigned long long)idx, suite->n_runs);
    *spec = &suite->runs[idx];
    if (hash[DM_HASH_HEX - 1] != '\0' || strcmp(hash, (*spec)->hash) != 0)
        return dm_error_set(err, DM_EIO, "a packed result of run %s has another configuration "
                            "hash than this suite's (ranks must run one suite)", (*spec)->id);
    return DM_OK;
}

/* The figures, each checked where it can be wrong; returns false at the first one that
 * is short or out of range, named in *what. */
static bool get_figures(cursor *c, dm_run_result *r, const char **what)
{
    for (size_t i = 0; i < dm_n_run_figures; i++) {
        const dm_figure *f = &dm_run_figures[i];
        char *at = (char *)r + f->at;
        *what = f->name;
        switch (f->kind) {
        case DM_FIGURE_STATUS: {
            int32_t status;
            if (!get(c, &status, sizeof status))
                return false;
            if (status < DM_RUN_NOT_RUN || status > DM_RUN_SWAMPED)
                return false;
            *(dm_run_status *)(void *)at = (dm_run_status)status;
            break;
        }
        case DM_FIGURE_TEXT: {
            uint32_t len;
            if (!get(c, &len, sizeof len))
                return false;
            if (len >= f->size || !get(c, at, len))
                return false;
            at[len] = '\0';
            break;
        }
        case DM_FIGURE_RULE: {
            uint8_t rule;
            if (!get(c, &rule, 1))
                return false;
            size_t n_rules = 0;
            while (dm_energy_scale_rules[n_rules] != NULL)
                n_rules++;
            if (rule > n_rules)
                return false;
            *(const char **)(void *)at = rule == 0 ? NULL : dm_energy_scale_rules[rule - 1];
            break;
        }
        default:
            if (!get(c, at, f->size))
                return false;
            break;
        }
    }
    return true;
}

/* The series, in blocks of the capacity the runner allocates, so the result is
 * indistinguishable from one computed here. */
static bool get_series(cursor *c, const dm_run_spec *spec, dm_series *s, bool *nomem)
{
    uint64_t n;
    int32_t n_inv;
    if (!get(c, &n, sizeof n) || !get(c, &n_inv, sizeof n_inv))
        return false;
    if (n > spec->samples || n_inv < 0 || n_inv > DM_MAX_INVARIANTS)
        return false;
    s->n = (size_t)n;
    s->capacity = spec->samples;
    s->n_invariants = n_inv;
#define GET_SERIES(name, always)                                                          \
    if (!get_array(c, s->n, s->capacity, &s->name, nomem))                                \
        return false;
    DM_SERIES_LIST(GET_SERIES)
#undef GET_SERIES
    for (int i = 0; i < n_inv; i++)
        if (!get_array(c, s->n, s->capacity, &s->invariant_error[i], nomem))
            return false;
    return true;
}

static bool get_crossings(cursor *c, const dm_run_spec *spec, dm_crossings *x, bool *nomem)
{
    uint64_t n;
    x->capacity = spec->samples < 64 ? 64 : spec->samples;
    if (!get(c, &n, sizeof n) || n > x->capacity)
        return false;
    x->n = (size_t)n;
    uint32_t points = 0;
    bool ok = get_array(c, x->n, x->capacity, &x->number, nomem) &&
              get_array(c, x->n, x->capacity, &x->time, nomem) &&
              get_array(c, x->n, x->capacity, &x->phase_error, nomem) &&
              get(c, &points, sizeof points) && points <= 1;
    if (ok && points == 1)
        ok = get_array(c, x->n, x->capacity, &x->section_q, nomem) &&
             get_array(c, x->n, x->capacity, &x->section_p, nomem);
    return ok;
}

dm_status dm_result_unpack(const dm_suite *suite, const unsigned char *buf, size_t size,
                           size_t *index, dm_run_result *r, dm_error *err)
{
    memset(r, 0, sizeof *r);
    cursor c = { .in = buf, .size = size };
    const dm_run_spec *spec = NULL;
    dm_status st = get_header(&c, suite, &spec, err);
    if (st != DM_OK)
        return st;
    const char *what = "";
    char figure[DM_NAME_MAX];
    bool nomem = false;
    bool ok = get_figures(&c, r, &what);
    if (!ok) {
        snprintf(figure, sizeof figure, "its figure %s", what);
        what = figure;
    }
    if (ok) {
        what = "its series";
        ok = get_series(&c, spec, &r->series, &nomem);
    }
    if (ok) {
        what = "its crossings";
        ok = get_crossings(&c, spec, &r->crossings, &nomem);
    }
    if (ok) {
        what = "its checkpoint";
        uint32_t has = 0;
        ok = get(&c, &has, sizeof has) && has <= 1;
        if (ok && has) {
            r->checkpoint = malloc(sizeof *r->checkpoint);
            nomem = r->checkpoint == NULL;
            ok = !nomem && get(&c, r->checkpoint, sizeof *r->checkpoint);
        }
    }
    if (ok && c.at != size) {
        what = "its end (bytes left over)";
        ok = false;
    }
    if (ok) {
        *index = (size_t)(spec - suite->runs);
        return DM_OK;
    }
    dm_run_result_free(r);
    if (nomem)
        return dm_error_set(err, DM_ENOMEM, "out of memory unpacking the result of run %s",
                            spec->id);
    return dm_error_set(err, DM_EIO, "the packed result of run %s is damaged in %s%s", spec->id,
                        what, c.short_read ? " (truncated)" : "");
}
