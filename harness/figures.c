/* figures.c — the lists of run_figures.h as tables for the writers and readers to walk. */
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "harness.h"

#define KIND(kind) DM_FIGURE_##kind
#define IN_S DM_FIGURE_IN_SUMMARY
#define IN_A DM_FIGURE_IN_RUN
#define IN_SA (DM_FIGURE_IN_SUMMARY | DM_FIGURE_IN_RUN)
#define ROW_AT_S(name) offsetof(dm_summary_row, name)
#define ROW_AT_SA(name) offsetof(dm_summary_row, name)
#define ROW_AT_A(name) DM_FIGURE_NOWHERE
#define FIELD(home, name) DM_FIGURE_PATH_##home(name)

#define FIGURE_ROW(name, kind, home, in, width, column, format, meaning)                   \
    { #name, KIND(kind), IN_##in, offsetof(dm_run_result, FIELD(home, name)),             \
      sizeof(((dm_run_result *)0)->FIELD(home, name)), ROW_AT_##in(name), width, column,  \
      format, meaning },

const dm_figure dm_run_figures[] = { DM_RUN_FIGURES(FIGURE_ROW) };
const size_t dm_n_run_figures = sizeof dm_run_figures / sizeof dm_run_figures[0];

#define RUN_FIELD_ROW(name, kind, width, meaning)                                         \
    { #name, KIND(kind), IN_S, DM_FIGURE_NOWHERE, 0, offsetof(dm_summary_row, name), width, \
      "", "", meaning },

const dm_figure dm_summary_run_fields[] = { DM_SUMMARY_RUN_FIELDS(RUN_FIELD_ROW) };
const size_t dm_n_summary_run_fields =
    sizeof dm_summary_run_fields / sizeof dm_summary_run_fields[0];

/* ---- what the compiler checks ---- */

/* Each row's kind fits the field it names (a counter listed as REAL, say, would be
 * written as garbage). */
#define FITS_REAL(size) ((size) == sizeof(double))
#define FITS_COUNT(size) ((size) == sizeof(uint64_t))
#define FITS_STATUS(size) ((size) == sizeof(dm_run_status))
#define FITS_TEXT(size) ((size) > 1)
#define FITS_RULE(size) ((size) == sizeof(const char *))
#define FITS_PER_INVARIANT(size) ((size) == DM_MAX_INVARIANTS * sizeof(double))
#define CHECK_ROW(name, kind, home, in, width, column, format, meaning)                    \
    _Static_assert(FITS_##kind(sizeof(((dm_run_result *)0)->FIELD(home, name))),           \
                   "DM_RUN_FIGURES: the kind of " #name " does not fit its field");
DM_RUN_FIGURES(CHECK_ROW)

/* Every field of dm_counts has its row: a counter the method adds is written, read back
 * and sent between ranks, or the build stops here. */
#define IS_COUNTS_metrics 0
#define IS_COUNTS_counts 1
#define IS_COUNTS_result 0
#define IS_COUNTS_crossings 0
#define PLUS_IF_COUNTS(name, kind, home, in, width, column, format, meaning) +IS_COUNTS_##home
_Static_assert(0 DM_RUN_FIGURES(PLUS_IF_COUNTS) == sizeof(dm_counts) / sizeof(uint64_t),
               "dm_counts changed: give its new field a row in DM_RUN_FIGURES");

#define PLUS_ONE(...) +1
_Static_assert(0 DM_RUN_FIGURES(PLUS_ONE) DM_SUMMARY_RUN_FIELDS(PLUS_ONE) <=
                   DM_SUMMARY_COLUMNS_MAX,
               "raise DM_SUMMARY_COLUMNS_MAX");

/* ---- the /summary columns ---- */

static size_t add_kind(const dm_figure **columns, size_t n, dm_figure_kind a,
                       dm_figure_kind b)
{
    for (size_t i = 0; i < dm_n_run_figures; i++) {
        const dm_figure *f = &dm_run_figures[i];
        if ((f->in & DM_FIGURE_IN_SUMMARY) && (f->kind == a || f->kind == b))
            columns[n++] = f;
    }
    return n;
}

size_t dm_summary_columns(const dm_figure *columns[DM_SUMMARY_COLUMNS_MAX])
{
    size_t n = 0;
    for (size_t i = 0; i < dm_n_summary_run_fields; i++)
        columns[n++] = &dm_summary_run_fields[i];
    n = add_kind(columns, n, DM_FIGURE_COUNT, DM_FIGURE_COUNT);
    n = add_kind(columns, n, DM_FIGURE_REAL, DM_FIGURE_REAL);
    n = add_kind(columns, n, DM_FIGURE_STATUS, DM_FIGURE_TEXT);
    return n;
}

/* ---- texts ---- */

const char *const dm_energy_scale_rules[] = { "H0 - V_min", "|H0|", "H0 - T_min - V_min", NULL };

const char *dm_energy_scale_rule_named(const char *text)
{
    for (size_t i = 0; text != NULL && dm_energy_scale_rules[i] != NULL; i++)
        if (strcmp(text, dm_energy_scale_rules[i]) == 0)
            return dm_energy_scale_rules[i];
    return NULL;
}

void dm_figure_invariant_name(char *buf, size_t size, const char *invariant)
{
    snprintf(buf, size, "max_%s_error", invariant);
}
