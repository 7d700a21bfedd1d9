/* compare.c — two results files, run by run, figure by figure (compare.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "compare.h"
#include "run_figures.h"

const char *dm_change_name(dm_change change)
{
    switch (change) {
    case DM_SAME: return "same";
    case DM_WITHIN: return "within";
    case DM_BETTER: return "better";
    case DM_WORSE: return "worse";
    case DM_CHANGED: return "changed";
    case DM_ONLY_OLD: return "only_old";
    case DM_ONLY_NEW: return "only_new";
    case DM_NOISE: return "noise";
    case DM_BY_ID: return "by_id";
    case DM_NOT_COMPARABLE: return "not_comparable";
    case DM_RENAMED: return "renamed";
    }
    return "changed";
}

/* How a figure is judged. Figures not named here are plain values. `sampled`: measured
 * at bucket ends or at the kept crossings (whose stride the buckets set), so another
 * number of buckets measures it elsewhere. */
typedef enum judged_as { PLAIN, ERROR, COST, TIMING } judged_as;
typedef struct judging {
    const char *name;
    judged_as how;
    bool sampled;
} judging;

static judging judged(const char *name)
{
    static const judging table[] = {
        { "max_energy_error", ERROR, false },       { "final_energy_error", ERROR, false },
        { "energy_drift_per_period", ERROR, true }, { "drift_exponent", ERROR, true },
        { "period_measured", PLAIN, true },         { "period_rel_error", ERROR, true },
        { "phase_error_per_period", ERROR, true },  { "phase_error_final", ERROR, true },
        { "max_global_error", ERROR, true },        { "max_reference_error", PLAIN, true },
        { "reference_valid_until", PLAIN, true },   { "steps", COST, false },
        { "force_evals", COST, false },             { "force_evals_per_period", COST, false },
        { "ns_per_step", TIMING, false },
    };
    for (size_t i = 0; i < sizeof table / sizeof table[0]; i++)
        if (strcmp(table[i].name, name) == 0)
            return table[i];
    return (judging){ name, PLAIN, false };
}

/* A drift per period whose whole over the run is at most this part of the run's max |dE|
 * is noise: the slope of a fit to the error's oscillation, too small to move max |dE|
 * (which is judged on its own). Our own threshold: bounded runs measured 0.1 to 1.6 %,
 * random-walk runs 9 %, linear drifts about 100 %. */
#define DM_DRIFT_NOISE 0.01

static bool drift_is_noise(const dm_summary_row *r)
{
    double periods = (double)r->force_evals / r->force_evals_per_period;
    return isfinite(periods) && periods > 0 &&
           fabs(r->energy_drift_per_period) * periods <= DM_DRIFT_NOISE * r->max_energy_error;
}

/* Whether a difference of figure `f` between a and b is noise (README.md, "Comparing two
 * results files"): measured at bucket ends and the buckets differ; the drift figures of
 * two runs classified bounded; a drift per period below its floor in both runs. */
static bool is_noise(judging f, const dm_summary_row *a, const dm_summary_row *b,
                     bool buckets_differ)
{
    if (buckets_differ && f.sampled)
        return true;
    bool exponent = strcmp(f.name, "drift_exponent") == 0;
    bool drift = strcmp(f.name, "energy_drift_per_period") == 0;
    if ((exponent || drift) && strcmp(a->drift_class, "bounded") == 0 &&
        strcmp(b->drift_class, "bounded") == 0)
        return true;
    return drift && drift_is_noise(a) && drift_is_noise(b);
}

static dm_change compare_numbers(double a, double b, judged_as how,
                                 const dm_compare_options *o, double *relative)
{
    *relative = NAN;
    if ((isnan(a) && isnan(b)) || memcmp(&a, &b, sizeof a) == 0)
        return DM_SAME;
    if (isnan(a) != isnan(b)) /* measured in one file only: the status says why */
        return DM_CHANGED;
    double size_a = how == ERROR ? fabs(a) : a, size_b = how == ERROR ? fabs(b) : b;
    *relative = (b - a) / fabs(a);
    double tol = how == TIMING ? o->time_tolerance : o->tolerance;
    if (fabs(size_b - size_a) <= tol * fabs(size_a))
        return DM_WITHIN;
    if (how == PLAIN)
        return DM_CHANGED;
    return size_b < size_a ? DM_BETTER : DM_WORSE;
}

static dm_change compare_status(const char *a, const char *b)
{
    if (strcmp(a, b) == 0)
        return DM_SAME;
    bool ok_a = strcmp(a, "ok") == 0, ok_b = strcmp(b, "ok") == 0;
    if (ok_a != ok_b)
        return ok_b ? DM_BETTER : DM_WORSE;
    return DM_CHANGED;
}

/* The new run matching an old one: the same configuration hash (and id, when several
 * share it), else the same id. */
static const dm_summary_row *match(const dm_summary_row *old, const dm_summary_row *rows,
                                   size_t n, const bool *taken, size_t *at)
{
    for (int pass = 0; pass < 3; pass++)
        for (size_t i = 0; i < n; i++) {
            if (taken[i])
                continue;
            bool hash = strcmp(rows[i].hash, old->hash) == 0;
            bool id = strcmp(rows[i].run_id, old->run_id) == 0;
            if ((pass == 0 && hash && id) || (pass == 1 && hash) || (pass == 2 && id)) {
                *at = i;
                return &rows[i];
            }
        }
    return NULL;
}

typedef struct sink {
    dm_comparison *out;
    size_t cap;
} sink;

static dm_difference *add(sink *s)
{
    if (s->out->n == s->cap) {
        size_t cap = s->cap ? 2 * s->cap : 64;
        dm_difference *grown = realloc(s->out->list, cap * sizeof *grown);
        if (grown == NULL)
            return NULL;
        s->out->list = grown;
        s->cap = cap;
    }
    dm_difference *d = &s->out->list[s->out->n++];
    memset(d, 0, sizeof *d);
    d->old_value = d->new_value = d->relative = NAN;
    return d;
}

/* The token `key=value` of a config text (space separated) whose key is key[0..len),
 * or NULL. */
static const char *config_token(const char *config, const char *key, size_t len)
{
    for (const char *t = config; *t != '\0';) {
        size_t n = strcspn(t, " ");
        if (n > len && strncmp(t, key, len) == 0 && t[len] == '=')
            return t;
        if (n == len && strncmp(t, key, len) == 0)
            return t;
        t += n;
        t += strspn(t, " ");
    }
    return NULL;
}

/* How two configs differ: the keys whose values differ (or that one of them lacks) into
 * `keys`, whether all of them are the method's settings or the buckets (*judged), and
 * whether the buckets differ. Returns the number of keys. */
static size_t config_differences(const char *a, const char *b, char *keys, size_t size,
                                 bool *judged, bool *buckets_differ)
{
    /* the settings of the method under test (under one id: the step given in other
     * units, a typed table's coefficients, the tolerances) and the buckets, which change
     * only where the sampled figures are measured */
    static const char *const judged_keys[] = { "method", "table", "h", "rtol", "atol",
                                               "compensated", "samples" };
    size_t count = 0, used = 0;
    *judged = true;
    *buckets_differ = false;
    keys[0] = '\0';
    const char *texts[2] = { a, b };
    for (int side = 0; side < 2; side++)
        for (const char *t = texts[side]; *t != '\0';) {
            size_t n = strcspn(t, " "), len = strcspn(t, "= ");
            const char *other = config_token(texts[1 - side], t, len);
            size_t other_n = other ? strcspn(other, " ") : 0;
            /* a key both have is listed once, from the old side */
            bool differs = other == NULL ? true
                                         : side == 0 && (other_n != n || strncmp(other, t, n) != 0);
            if (differs) {
                count++;
                bool known = false;
                for (size_t k = 0; k < sizeof judged_keys / sizeof judged_keys[0]; k++)
                    known = known || (strlen(judged_keys[k]) == len &&
                                      strncmp(judged_keys[k], t, len) == 0);
                *judged = *judged && known;
                *buckets_differ = *buckets_differ || (len == 7 && strncmp(t, "samples", 7) == 0);
                int w = snprintf(keys + used, size - used, "%s%.*s", used ? "," : "", (int)len, t);
                if (w < 0 || (size_t)w >= size - used) {
                    if (size >= 4)
                        snprintf(keys + size - 4, 4, "...");
                    used = size - 1;
                } else {
                    used += (size_t)w;
                }
            }
            t += n;
            t += strspn(t, " ");
        }
    return count;
}

/* Every /summary figure of one matched pair; returns the worst change, or -1 when out
 * of memory. */
static int compare_pair(sink *s, const dm_summary_row *a, const dm_summary_row *b,
                        bool buckets_differ, const dm_compare_options *o)
{
    const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
    size_t n_cols = dm_summary_columns(cols);
    bool better = false, worse = false, within = false, changed = false;
    for (size_t j = 0; j < n_cols; j++) {
        const dm_figure *f = cols[j];
        if ((f->kind != DM_FIGURE_REAL && f->kind != DM_FIGURE_COUNT &&
             f->kind != DM_FIGURE_STATUS) ||
            strcmp(f->name, "wall_seconds") == 0 || /* ns_per_step says it per step */
            strcmp(f->name, "times_continued") == 0) /* how it ran, not what it measured */
            continue;
        const char *pa = (const char *)a + f->row_at, *pb = (const char *)b + f->row_at;
        double va = NAN, vb = NAN, rel = NAN;
        judging how = judged(f->name);
        dm_change ch;
        if (f->kind == DM_FIGURE_STATUS) {
            ch = compare_status(pa, pb);
        } else {
            if (f->kind == DM_FIGURE_COUNT) {
                va = (double)*(const uint64_t *)(const void *)pa;
                vb = (double)*(const uint64_t *)(const void *)pb;
            } else {
                memcpy(&va, pa, sizeof va);
                memcpy(&vb, pb, sizeof vb);
            }
            ch = compare_numbers(va, vb, how.how, o, &rel);
            if (ch != DM_SAME && isfinite(va) && isfinite(vb) &&
                is_noise(how, a, b, buckets_differ))
                ch = DM_NOISE;
        }
        if (ch == DM_SAME)
            continue;
        dm_difference *d = add(s);
        if (d == NULL)
            return -1;
        snprintf(d->run_id, sizeof d->run_id, "%s", b->run_id);
        d->figure = f->name;
        d->old_value = va;
        d->new_value = vb;
        d->relative = rel;
        d->change = ch;
        if (f->kind == DM_FIGURE_STATUS) {
            snprintf(d->old_text, sizeof d->old_text, "%s", pa);
            snprintf(d->new_text, sizeof d->new_text, "%s", pb);
        }
        if (how.how == TIMING && !o->timings_judge)
            continue; /* listed, judging nothing: the run can still be the same */
        within = within || ch == DM_NOISE; /* not the same, and not judged */
        better = better || ch == DM_BETTER;
        worse = worse || ch == DM_WORSE;
        within = within || ch == DM_WITHIN;
        changed = changed || ch == DM_CHANGED;
    }
    return worse ? DM_WORSE : better ? DM_BETTER : changed ? DM_CHANGED : within ? DM_WITHIN
                                                                             : DM_SAME;
}

static int only_in_one(sink *s, const dm_summary_row *r, dm_change which)
{
    dm_difference *d = add(s);
    if (d == NULL)
        return -1;
    snprintf(d->run_id, sizeof d->run_id, "%s", r->run_id);
    d->figure = "run";
    d->change = which;
    return 0;
}

dm_status dm_compare(const dm_summary_row *old_rows, const char (*old_configs)[DM_CONFIG_MAX],
                     size_t n_old, const dm_summary_row *new_rows,
                     const char (*new_configs)[DM_CONFIG_MAX], size_t n_new,
                     const dm_compare_options *options, dm_comparison *out, dm_error *err)
{
    memset(out, 0, sizeof *out);
    sink s = { .out = out };
    bool *taken = calloc(n_new ? n_new : 1, sizeof *taken);
    if (taken == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory comparing %zu runs", n_new);
    int rc = 0;
    for (size_t i = 0; i < n_old && rc >= 0; i++) {
        size_t at = 0;
        const dm_summary_row *b = match(&old_rows[i], new_rows, n_new, taken, &at);
        if (b == NULL) {
            out->only_old++;
            rc = only_in_one(&s, &old_rows[i], DM_ONLY_OLD);
            continue;
        }
        taken[at] = true;
        out->runs_matched++;
        if (strcmp(old_rows[i].hash, b->hash) == 0 &&
            strcmp(old_rows[i].run_id, b->run_id) != 0) {
            /* the same configuration under another id (a suite whose names changed):
             * judged as any pair, and said, so that no pair is matched unseen */
            dm_difference *d = add(&s);
            if (d == NULL) {
                rc = -1;
                break;
            }
            snprintf(d->run_id, sizeof d->run_id, "%s", b->run_id);
            d->figure = "run_id";
            snprintf(d->keys, sizeof d->keys, "%s", old_rows[i].run_id);
            d->old_value = d->new_value = d->relative = NAN;
            d->change = DM_RENAMED;
            out->runs_renamed++;
        }
        bool judged_pair = true, buckets_differ = false;
        if (strcmp(old_rows[i].hash, b->hash) != 0) {
            /* matched by id only: say so, and what differs */
            dm_difference *d = add(&s);
            if (d == NULL) {
                rc = -1;
                break;
            }
            snprintf(d->run_id, sizeof d->run_id, "%s", b->run_id);
            d->figure = "config";
            config_differences(old_configs[i], new_configs[at], d->keys, sizeof d->keys,
                               &judged_pair, &buckets_differ);
            d->change = judged_pair ? DM_BY_ID : DM_NOT_COMPARABLE;
            if (!judged_pair) {
                out->runs_not_comparable++;
                continue;
            }
            out->runs_by_id++;
        }
        rc = compare_pair(&s, &old_rows[i], b, buckets_differ, options);
        switch (rc) {
        case DM_SAME: out->runs_same++; break;
        case DM_WITHIN: out->runs_within++; break;
        case DM_BETTER: out->runs_better++; break;
        case DM_WORSE: out->runs_worse++; break;
        case DM_CHANGED: out->runs_changed++; break;
        default: break;
        }
    }
    for (size_t i = 0; i < n_new && rc >= 0; i++)
        if (!taken[i]) {
            out->only_new++;
            rc = only_in_one(&s, &new_rows[i], DM_ONLY_NEW);
        }
    free(taken);
    if (rc < 0) {
        free(out->list);
        memset(out, 0, sizeof *out);
        return dm_error_set(err, DM_ENOMEM, "out of memory listing the differences");
    }
    return DM_OK;
}
