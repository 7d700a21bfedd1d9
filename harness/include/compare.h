/* compare.h — what changed between two results files, run by run and figure by figure,
 * for a developer's CI to gate on. Runs are matched by their configuration hash, then by
 * id (and then their config texts say what differs, and whether the pair is judged);
 * every figure of /summary (the list in run_figures.h) is compared, each as the
 * kind of figure it is: an error (smaller |x| is better), a cost (smaller is better), a
 * timing (the same, with a looser tolerance: timings are noisy), or a plain value
 * (changed or not). The definitions: README.md, "Comparing two results files". */
#ifndef DM_COMPARE_H
#define DM_COMPARE_H

#include <stdbool.h>
#include <stddef.h>

#include "harness.h"

typedef enum dm_change {
    DM_SAME = 0,         /* bit for bit (NaN and NaN alike) */
    DM_WITHIN,           /* within the tolerance */
    DM_NOISE,            /* differs, but the figure is noise here (README.md, "Comparing
                            two results files"): listed, judging nothing */
    DM_BETTER,
    DM_WORSE,
    DM_CHANGED,          /* a plain value (or a text) that differs */
    DM_ONLY_OLD,         /* the run is only in the old file */
    DM_ONLY_NEW,         /* ... only in the new one */
    DM_BY_ID,            /* figure "config": the pair was matched by id only, its
                            configurations differ in `keys`, all of them the method's
                            settings or the buckets: its figures are judged */
    DM_NOT_COMPARABLE,   /* figure "config": matched by id only, the configurations differ
                            in what is run or measured (`keys`: t_end, the problem, ...):
                            its figures are not compared, and judge nothing */
    DM_RENAMED           /* figure "run_id": matched by its configuration, under another id
                            (keys: the old one): judged as any pair; judges nothing itself */
} dm_change;

const char *dm_change_name(dm_change change);

typedef struct dm_compare_options {
    double tolerance;        /* relative, for errors, costs and plain values */
    double time_tolerance;   /* relative, for timings */
    bool timings_judge;      /* a timing beyond time_tolerance makes its run better or
                                worse; false: timings are listed but judge nothing (they
                                are noise on a shared machine) */
} dm_compare_options;

/* One figure of one run that is not the same (or a run in one file only). */
typedef struct dm_difference {
    char run_id[DM_RUN_ID_MAX];
    const char *figure;      /* the figure's name; "run" for a run in one file only */
    double old_value, new_value;
    char old_text[32], new_text[32];   /* for status figures */
    char keys[DM_RUN_ID_MAX]; /* figure "config": the keys whose values differ, comma
                                separated (cut with "..." when they do not fit); figure
                                "run_id": the old id (the new one is run_id) */
    double relative;         /* (new - old) / |old| (NaN when it means nothing) */
    dm_change change;
} dm_difference;

typedef struct dm_comparison {
    size_t runs_matched, runs_same, runs_within, runs_better, runs_worse, runs_changed;
    size_t runs_not_comparable; /* matched by id only, not judged (DM_NOT_COMPARABLE):
                                   matched, but in none of the counts above */
    size_t runs_by_id;         /* matched by id only and judged (DM_BY_ID): also in one of
                                  same ... changed */
    size_t runs_renamed;       /* matched by configuration under another id (DM_RENAMED):
                                  also in one of same ... changed */
    size_t only_old, only_new;
    size_t n;                /* differences listed */
    dm_difference *list;     /* owned: free() */
} dm_comparison;

/* Compares the summaries of two files, with each run's config text
 * (dm_results_read_configs). Fails only when out of memory. */
dm_status dm_compare(const dm_summary_row *old_rows, const char (*old_configs)[DM_CONFIG_MAX],
                     size_t n_old, const dm_summary_row *new_rows,
                     const char (*new_configs)[DM_CONFIG_MAX], size_t n_new,
                     const dm_compare_options *options, dm_comparison *out, dm_error *err);

#endif
