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
    }
    return "changed";
}

/* How a figure is judged. Figures not named here are plain values. */
typedef enum judged_as { PLAIN, ERROR, COST, TIMING } judged_as;

static judged_as judged(const char *name)
{
    static const struct { const char *name; judged_as how; } table[] = {
        { "max_energy_error", ERROR },        { "final_energy_error", ERROR },
        { "energy_drift_per_period", ERROR }, { "drift_exponent", ERROR },
        { "period_rel_error", ERROR },        { "phase_error_per_period", ERROR },
        { "phase_error_final", ERROR },       { "max_global_error", ERROR },
        { "steps", COST },                    { "force_evals", COST },
        { "force_evals_per_period", COST },   { "ns_per_step", TIMING },
    };
    for (size_t i = 0; i < sizeof table / sizeof table[0]; i++)
        if (strcmp(table[i].name, name) == 0)
            return table[i].how;
    return PLAIN;
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

/* Every /summary figure of one matched pair; returns the worst change, or -1 when out
 * of memory. */
static int compare_pair(sink *s, const dm_summary_row *a, const dm_summary_row *b,
                        const dm_compare_options *o)
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
        dm_change ch;
        if (f->kind == DM_FIGURE_STATUS) {
            ch = compare_status(pa, pb);
        } else if (f->kind == DM_FIGURE_COUNT) {
            va = (double)*(const uint64_t *)(const void *)pa;
            vb = (double)*(const uint64_t *)(const void *)pb;
            ch = compare_numbers(va, vb, judged(f->name), o, &rel);
        } else {
            memcpy(&va, pa, sizeof va);
            memcpy(&vb, pb, sizeof vb);
            ch = compare_numbers(va, vb, judged(f->name), o, &rel);
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
        if (judged(f->name) == TIMING && !o->timings_judge) {
            within = true; /* listed, judging nothing */
            continue;
        }
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

dm_status dm_compare(const dm_summary_row *old_rows, size_t n_old,
                     const dm_summary_row *new_rows, size_t n_new,
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
        rc = compare_pair(&s, &old_rows[i], b, options);
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
