/* result_pack.c — dm_run_result <-> flat byte buffer (see result_pack.h).
 *
 * Layout, every field in the host's byte order, no padding:
 *   header   "DMRP", u32 version, u32 byte-order marker, u64 run index, 17-byte hash
 *   outcome  i32 status, u32 reason length, reason bytes (no NUL)
 *   metrics  u8 energy-scale rule, every double and counter of dm_run_metrics
 *   series   u64 n, i32 n_invariants, then per array u8 present + n doubles
 *   crossings u64 n, stride, total, then number, time, phase_error (n doubles each)
 * The same walk over the fields writes, measures and reads the buffer, so the three
 * cannot drift apart.
 */
#include "result_pack.h"

#include <stdbool.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define PACK_MAGIC "DMRP"
#define PACK_VERSION 1u
#define PACK_BYTE_ORDER 0x01020304u

/* A new field in dm_run_metrics must be packed here too, or results computed on
 * another rank would lose it without a sound: this stops the build instead. */
_Static_assert(sizeof(dm_counts) == 9 * sizeof(uint64_t),
               "dm_counts changed: pack the new field in harness/result_pack.c");
_Static_assert(sizeof(dm_run_metrics) == 14 * sizeof(double) + sizeof(const char *) +
                                             DM_MAX_INVARIANTS * sizeof(double) +
                                             sizeof(uint64_t) + sizeof(dm_counts),
               "dm_run_metrics changed: pack the new field in harness/result_pack.c");

/* The rule is one of the runner's fixed strings; it travels as a small number. */
static const char *const energy_scale_rules[] = { "H0 - V_min", "|H0|" };
#define N_RULES (sizeof energy_scale_rules / sizeof energy_scale_rules[0])

static const size_t metric_doubles[] = {
    offsetof(dm_run_metrics, energy_scale),
    offsetof(dm_run_metrics, max_energy_error),
    offsetof(dm_run_metrics, final_energy_error),
    offsetof(dm_run_metrics, energy_drift_per_period),
    offsetof(dm_run_metrics, drift_exponent),
    offsetof(dm_run_metrics, period_exact),
    offsetof(dm_run_metrics, period_measured),
    offsetof(dm_run_metrics, period_rel_error),
    offsetof(dm_run_metrics, phase_error_per_period),
    offsetof(dm_run_metrics, phase_error_final),
    offsetof(dm_run_metrics, max_global_error),
    offsetof(dm_run_metrics, t_reached),
    offsetof(dm_run_metrics, wall_seconds),
    offsetof(dm_run_metrics, ns_per_step),
};
_Static_assert(sizeof metric_doubles / sizeof metric_doubles[0] == 14,
               "every double of dm_run_metrics is listed once");

static const size_t count_fields[] = {
    offsetof(dm_counts, steps),            offsetof(dm_counts, force_evals),
    offsetof(dm_counts, velocity_evals),   offsetof(dm_counts, rhs_evals),
    offsetof(dm_counts, jac_evals),        offsetof(dm_counts, error_test_fails),
    offsetof(dm_counts, conv_fails),       offsetof(dm_counts, nonlin_iters),
    offsetof(dm_counts, max_iters_in_step),
};

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

static void walk_pack(cursor *c, const dm_suite *suite, size_t index, const dm_run_result *r)
{
    put(c, PACK_MAGIC, 4);
    put_u32(c, PACK_VERSION);
    put_u32(c, PACK_BYTE_ORDER);
    put_u64(c, (uint64_t)index);
    put(c, suite->runs[index].hash, DM_HASH_HEX);

    int32_t status = (int32_t)r->status;
    put(c, &status, sizeof status);
    size_t reason_len = strnlen(r->reason, sizeof r->reason - 1);
    put_u32(c, (uint32_t)reason_len);
    put(c, r->reason, reason_len);

    const dm_run_metrics *m = &r->metrics;
    uint8_t rule = 0; /* 0: none, k: energy_scale_rules[k - 1] */
    for (size_t k = 0; k < N_RULES; k++)
        if (m->energy_scale_rule != NULL && strcmp(m->energy_scale_rule, energy_scale_rules[k]) == 0)
            rule = (uint8_t)(k + 1);
    put(c, &rule, 1);
    for (size_t k = 0; k < sizeof metric_doubles / sizeof metric_doubles[0]; k++)
        put(c, (const char *)m + metric_doubles[k], sizeof(double));
    put(c, m->max_invariant_error, sizeof m->max_invariant_error);
    put_u64(c, m->steps);
    for (size_t k = 0; k < sizeof count_fields / sizeof count_fields[0]; k++)
        put(c, (const char *)&m->counts + count_fields[k], sizeof(uint64_t));

    const dm_series *s = &r->series;
    put_u64(c, (uint64_t)s->n);
    int32_t n_inv = s->n_invariants;
    put(c, &n_inv, sizeof n_inv);
    put_array(c, s->time, s->n);
    put_array(c, s->energy_error, s->n);
    put_array(c, s->energy_error_min, s->n);
    put_array(c, s->energy_error_max, s->n);
    put_array(c, s->global_error, s->n);
    for (int i = 0; i < s->n_invariants && i < DM_MAX_INVARIANTS; i++)
        put_array(c, s->invariant_error[i], s->n);

    const dm_crossings *x = &r->crossings;
    put_u64(c, (uint64_t)x->n);
    put_u64(c, x->stride);
    put_u64(c, x->total);
    put_array(c, x->number, x->n);
    put_array(c, x->time, x->n);
    put_array(c, x->phase_error, x->n);
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

dm_status dm_result_unpack(const dm_suite *suite, const unsigned char *buf, size_t size,
                           size_t *index, dm_run_result *r, dm_error *err)
{
    memset(r, 0, sizeof *r);
    cursor c = { .in = buf, .size = size };
    char magic[4];
    uint32_t version = 0, order = 0;
    uint64_t idx = 0;
    char hash[DM_HASH_HEX];
    if (!get(&c, magic, 4) || memcmp(magic, PACK_MAGIC, 4) != 0 || !get(&c, &version, 4) ||
        !get(&c, &order, 4))
        return dm_error_set(err, DM_EIO, "a packed result of %zu bytes is not one (no header)",
                            size);
    if (order != PACK_BYTE_ORDER)
        return dm_error_set(err, DM_EIO, "a packed result comes from a machine of another "
                            "byte order (ranks must run on one kind of machine)");
    if (version != PACK_VERSION)
        return dm_error_set(err, DM_EIO, "a packed result has layout version %u, this "
                            "driftmark reads %u (ranks must run one driftmark)",
                            (unsigned)version, PACK_VERSION);
    if (!get(&c, &idx, sizeof idx) || !get(&c, hash, sizeof hash))
        return dm_error_set(err, DM_EIO, "a packed result is truncated in its header");
    if (idx >= suite->n_runs)
        return dm_error_set(err, DM_EIO, "a packed result names run %llu of a suite of %zu",
                            (unsigned long long)idx, suite->n_runs);
    const dm_run_spec *spec = &suite->runs[idx];
    if (hash[DM_HASH_HEX - 1] != '\0' || strcmp(hash, spec->hash) != 0)
        return dm_error_set(err, DM_EIO, "a packed result of run %s has another configuration "
                            "hash than this suite's (ranks must run one suite)", spec->id);

    dm_status st = DM_EIO;
    const char *what = "its outcome";
    bool nomem = false;
    int32_t status;
    uint32_t reason_len;
    if (!get(&c, &status, sizeof status) || !get(&c, &reason_len, sizeof reason_len))
        goto bad;
    if (status < DM_RUN_NOT_RUN || status > DM_RUN_INTERRUPTED ||
        reason_len >= sizeof r->reason) {
        c.short_read = false;
        goto bad;
    }
    r->status = (dm_run_status)status;
    if (!get(&c, r->reason, reason_len))
        goto bad;
    r->reason[reason_len] = '\0';

    what = "its metrics";
    dm_run_metrics *m = &r->metrics;
    uint8_t rule;
    if (!get(&c, &rule, 1) || rule > N_RULES)
        goto bad;
    m->energy_scale_rule = rule == 0 ? NULL : energy_scale_rules[rule - 1];
    for (size_t k = 0; k < sizeof metric_doubles / sizeof metric_doubles[0]; k++)
        get(&c, (char *)m + metric_doubles[k], sizeof(double));
    get(&c, m->max_invariant_error, sizeof m->max_invariant_error);
    get(&c, &m->steps, sizeof m->steps);
    for (size_t k = 0; k < sizeof count_fields / sizeof count_fields[0]; k++)
        get(&c, (char *)&m->counts + count_fields[k], sizeof(uint64_t));
    if (c.short_read)
        goto bad;

    /* capacities as the runner allocates them, so the result is indistinguishable */
    what = "its series";
    dm_series *s = &r->series;
    uint64_t n;
    int32_t n_inv;
    if (!get(&c, &n, sizeof n) || !get(&c, &n_inv, sizeof n_inv))
        goto bad;
    if (n > spec->samples || n_inv < 0 || n_inv > DM_MAX_INVARIANTS)
        goto bad;
    s->n = (size_t)n;
    s->capacity = spec->samples;
    s->n_invariants = n_inv;
    if (!get_array(&c, s->n, s->capacity, &s->time, &nomem) ||
        !get_array(&c, s->n, s->capacity, &s->energy_error, &nomem) ||
        !get_array(&c, s->n, s->capacity, &s->energy_error_min, &nomem) ||
        !get_array(&c, s->n, s->capacity, &s->energy_error_max, &nomem) ||
        !get_array(&c, s->n, s->capacity, &s->global_error, &nomem))
        goto bad;
    for (int i = 0; i < n_inv; i++)
        if (!get_array(&c, s->n, s->capacity, &s->invariant_error[i], &nomem))
            goto bad;

    what = "its crossings";
    dm_crossings *x = &r->crossings;
    x->capacity = spec->samples < 64 ? 64 : spec->samples;
    if (!get(&c, &n, sizeof n) || !get(&c, &x->stride, sizeof x->stride) ||
        !get(&c, &x->total, sizeof x->total))
        goto bad;
    if (n > x->capacity)
        goto bad;
    x->n = (size_t)n;
    if (!get_array(&c, x->n, x->capacity, &x->number, &nomem) ||
        !get_array(&c, x->n, x->capacity, &x->time, &nomem) ||
        !get_array(&c, x->n, x->capacity, &x->phase_error, &nomem))
        goto bad;
    if (c.at != size) {
        what = "its end (bytes left over)";
        goto bad;
    }
    *index = (size_t)idx;
    return DM_OK;

bad:
    dm_run_result_free(r);
    if (nomem)
        return dm_error_set(err, DM_ENOMEM, "out of memory unpacking the result of run %s",
                            spec->id);
    return dm_error_set(err, st, "the packed result of run %s is damaged in %s%s", spec->id,
                        what, c.short_read ? " (truncated)" : "");
}
