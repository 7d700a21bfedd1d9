/* choose.h — the answer to "which method reaches my accuracy over my horizon for the
 * least work?", from the summary of a results file.
 *
 * The runs of a file are grouped by problem variant (the run id up to its first '.')
 * and, within a variant, by method entry (method id and options such as atol or
 * compensated). For each group the sweep is fitted as the writer fits it
 * (dm_fit_points), the step (or tolerance) that meets the target is found on the
 * fitted line, and its cost is read off a second line through the group's costs. How
 * each number was obtained is part of the answer: measured, interpolated inside the
 * measured range, or extrapolated beyond it (and how far); a horizon longer than the
 * measured one is reached with each run's own measured drift law. Groups that cannot be trusted
 * are not ranked, with the reason. The definitions: README.md, "Choosing a method".
 */
#ifndef DM_CHOOSE_H
#define DM_CHOOSE_H

#include <stdbool.h>
#include <stddef.h>

#include "harness.h"

typedef struct dm_target {
    double max_energy_error;     /* bound on max |dE| over the horizon; NaN: none */
    double phase_per_period;     /* bound on |phase error per period|; NaN: none */
    double periods;              /* horizon in periods; NaN: the runs' own */
} dm_target;

typedef enum dm_choice_basis {
    DM_BASIS_NONE = 0,
    DM_BASIS_MEASURED,           /* a run of the file meets the target as it is */
    DM_BASIS_INTERPOLATED,       /* on the fitted line, inside the measured range */
    DM_BASIS_EXTRAPOLATED        /* on the fitted line, beyond the finest step measured */
} dm_choice_basis;

const char *dm_choice_basis_name(dm_choice_basis basis);

#define DM_CHOICE_TEXT 512

/* One method entry's answer for one problem variant. */
typedef struct dm_choice {
    char variant[DM_RUN_ID_MAX];     /* "pendulum-amplitude3" */
    char method[DM_RUN_ID_MAX];      /* method id and options: "cvode-adams-atol1e-12" */
    bool adaptive;                   /* x is a tolerance (rtol), else a step h */
    bool ranked;                     /* meets the target and can be trusted */
    int rank;                        /* 1 = cheapest in its variant; 0 when not ranked */
    char why_not[DM_CHOICE_TEXT];    /* why not ranked */
    dm_choice_basis basis;
    char run_id[DM_RUN_ID_MAX];      /* the run, when measured */
    double x;                        /* the step h (or rtol) to use */
    double beyond;                   /* extrapolated: finest measured x / x (> 1); else 1 */
    double cost_per_period;          /* force evaluations per period at x */
    double seconds_per_period;       /* wall-clock seconds per period at x */
    double energy_error;             /* predicted max |dE| at x over the horizon */
    double phase_per_period;         /* predicted |phase error per period| at x */
    char not_predicted[DM_CHOICE_TEXT]; /* a figure read off a fit that cannot be read is
                                        not predicted (NaN): which, and why; or "" */
    double margin;                   /* smallest target / predicted over the targets */
    double horizon_factor;           /* growth of max |dE| from the measured horizon */
    char horizon_rule[48];           /* "measured horizon", "bounded", "exponent 0.98",
                                        "exponents 0.50..1.00", "unmeasured" */
    double fit_rms;                  /* rms residual of the energy fit in log10 (NaN: none) */
    size_t n_points;                 /* runs in the energy fit */
    double closeness;                /* largest predicted / target of its best run (> 1
                                        when it misses); for "closest" when none meets */
} dm_choice;

/* The answer for every group of the file's rows, grouped by variant and ranked by cost
 * inside each variant. Allocates *choices (free()). *all_answered tells whether every
 * variant has a ranked method. */
dm_status dm_choose(const dm_summary_row *rows, size_t n, const dm_target *target,
                    dm_choice **choices, size_t *n_choices, bool *all_answered,
                    dm_error *err);

#endif
