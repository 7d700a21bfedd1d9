/* table.c — summary rows, and the three ways they are printed: an aligned table for
 * reading, CSV and JSON for other programs (every field, numbers in full precision).
 * The fields and columns are those of the lists in run_figures.h. */
#include <inttypes.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dm_json.h"
#include "harness.h"

/* The figure f of result r, of row r (a dm_summary_row) and of type T. */
#define FIGURE_OF(f, r, T) (*(const T *)(const void *)((const char *)(r) + (f)->at))
#define ROW_FIELD(f, row, T) (*(T *)(void *)((char *)(row) + (f)->row_at))
#define ROW_VALUE(f, row, T) (*(const T *)(const void *)((const char *)(row) + (f)->row_at))

void dm_summary_row_fill(dm_summary_row *row, const dm_run_spec *spec,
                         const dm_run_result *result)
{
    memset(row, 0, sizeof *row);
    const dm_instance *inst = &spec->inst;
    const dm_method *m = spec->method;
    /* the run (DM_SUMMARY_RUN_FIELDS) */
    snprintf(row->run_id, sizeof row->run_id, "%s", spec->id);
    snprintf(row->hash, sizeof row->hash, "%s", spec->hash);
    snprintf(row->problem, sizeof row->problem, "%s", inst->problem->id);
    if (inst->regime >= 0 && inst->regime < inst->problem->n_regimes)
        snprintf(row->regime, sizeof row->regime, "%s", inst->problem->regimes[inst->regime].id);
    snprintf(row->method, sizeof row->method, "%s", m->id);
    row->order = m->order;
    row->order_found = m->user != NULL ? m->user->findings.order_found : NAN;
    row->h = m->adaptive ? NAN : spec->method_config.h;
    row->rtol = m->adaptive ? spec->method_config.rtol : NAN;
    /* what it measured (DM_RUN_FIGURES) */
    for (size_t i = 0; i < dm_n_run_figures; i++) {
        const dm_figure *f = &dm_run_figures[i];
        if (!(f->in & DM_FIGURE_IN_SUMMARY))
            continue;
        char *text = (char *)row + f->row_at;
        switch (f->kind) {
        case DM_FIGURE_REAL: ROW_FIELD(f, row, double) = FIGURE_OF(f, result, double); break;
        case DM_FIGURE_COUNT: ROW_FIELD(f, row, uint64_t) = FIGURE_OF(f, result, uint64_t); break;
        case DM_FIGURE_STATUS:
            snprintf(text, f->width, "%s", dm_run_status_name(FIGURE_OF(f, result, dm_run_status)));
            break;
        case DM_FIGURE_TEXT:
            /* /summary keeps the first width - 1 bytes; /runs keeps all of it */
            snprintf(text, f->width, "%.*s", (int)f->width - 1, (const char *)result + f->at);
            break;
        default: break; /* RULE and PER_INVARIANT are never in /summary */
        }
    }
}

/* ---- the aligned table ---- */

static void cell_number(char *buf, size_t size, double v, const char *fmt)
{
    if (isnan(v))
        snprintf(buf, size, "-");
    else
        snprintf(buf, size, fmt, v);
}

/* The text table's columns after the run: its status, then the counts and the reals
 * that have a column heading, each kind in list order. */
static size_t text_columns(const dm_figure **cols)
{
    static const dm_figure_kind order[] = { DM_FIGURE_STATUS, DM_FIGURE_COUNT, DM_FIGURE_REAL };
    size_t n = 0;
    for (size_t k = 0; k < sizeof order / sizeof order[0]; k++)
        for (size_t i = 0; i < dm_n_run_figures; i++) {
            const dm_figure *f = &dm_run_figures[i];
            if (f->kind == order[k] && f->column[0] != '\0' && (f->in & DM_FIGURE_IN_SUMMARY))
                cols[n++] = f;
        }
    return n;
}

static void cell_of(char *buf, size_t size, const dm_figure *f, const dm_summary_row *r)
{
    switch (f->kind) {
    case DM_FIGURE_COUNT: snprintf(buf, size, "%" PRIu64, ROW_VALUE(f, r, uint64_t)); break;
    case DM_FIGURE_REAL: cell_number(buf, size, ROW_VALUE(f, r, double), f->format); break;
    default: dm_escape_controls((const char *)r + f->row_at, buf, size); break;
    }
}

static void print_text(FILE *out, const dm_summary_row *rows, size_t n)
{
    const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
    const size_t n_cols = 1 + text_columns(cols + 1); /* cols[0]: the run */
    size_t width[DM_SUMMARY_COLUMNS_MAX];
    width[0] = strlen("run");
    for (size_t j = 1; j < n_cols; j++)
        width[j] = strlen(cols[j]->column);
    char cell[DM_SUMMARY_COLUMNS_MAX][DM_RUN_ID_MAX];
    /* Two passes: measure, then print. */
    for (int pass = 0; pass < 2; pass++) {
        if (pass == 1) {
            for (size_t j = 0; j < n_cols; j++)
                fprintf(out, j == 0 ? "%-*s" : "  %*s", (int)width[j],
                        j == 0 ? "run" : cols[j]->column);
            fputc('\n', out);
        }
        for (size_t i = 0; i < n; i++) {
            const dm_summary_row *r = &rows[i];
            dm_escape_controls(r->run_id, cell[0], sizeof cell[0]);
            for (size_t j = 1; j < n_cols; j++)
                cell_of(cell[j], sizeof cell[j], cols[j], r);
            for (size_t j = 0; j < n_cols; j++) {
                if (pass == 0) {
                    if (strlen(cell[j]) > width[j])
                        width[j] = strlen(cell[j]);
                } else {
                    fprintf(out, j == 0 ? "%-*s" : "  %*s", (int)width[j], cell[j]);
                }
            }
            if (pass == 1)
                fputc('\n', out);
        }
    }
    /* Why a run did not finish belongs beside the numbers, not in a column. */
    /* Texts read from a file are printed with their control bytes escaped. */
    for (size_t i = 0; i < n; i++) {
        char id[4 * sizeof rows[i].run_id], status[4 * sizeof rows[i].status];
        char reason[4 * sizeof rows[i].reason], change[4 * sizeof rows[i].regime_change];
        dm_escape_controls(rows[i].run_id, id, sizeof id);
        dm_escape_controls(rows[i].status, status, sizeof status);
        dm_escape_controls(rows[i].reason, reason, sizeof reason);
        dm_escape_controls(rows[i].regime_change, change, sizeof change);
        if (rows[i].reason[0] != '\0')
            fprintf(out, "  %s: %s: %s\n", id, status, reason);
        if (rows[i].regime_change[0] != '\0')
            fprintf(out, "  %s: its energy crossed a separatrix the exact orbit never "
                    "reaches: %s\n", id, change);
    }
}

/* ---- CSV (RFC 4180 quoting) and JSON ---- */

void dm_csv_text(FILE *out, const char *text)
{
    /* control bytes escaped (a file's texts are not trusted), then RFC 4180 quoting */
    char s[4 * DM_CONFIG_MAX];
    dm_escape_controls(text, s, sizeof s);
    if (strpbrk(s, ",\"") == NULL) {
        fputs(s, out);
        return;
    }
    fputc('"', out);
    for (const char *c = s; *c; c++) {
        if (*c == '"')
            fputc('"', out);
        fputc(*c, out);
    }
    fputc('"', out);
}

void dm_csv_number(FILE *out, double v)
{
    if (isfinite(v))
        fprintf(out, "%.17g", v);
    else if (isinf(v))
        fputs(v > 0 ? "inf" : "-inf", out);
    /* NaN: an empty field, which spreadsheets and pandas read as missing. */
}

/* One field of a row: numbers in full precision, texts quoted the CSV or JSON way. */
static void print_field(FILE *out, const dm_figure *f, const dm_summary_row *row, bool json)
{
    switch (f->kind) {
    case DM_FIGURE_REAL:
        if (json)
            dm_json_number(out, ROW_VALUE(f, row, double), "%.17g");
        else
            dm_csv_number(out, ROW_VALUE(f, row, double));
        break;
    case DM_FIGURE_COUNT: fprintf(out, "%" PRIu64, ROW_VALUE(f, row, uint64_t)); break;
    case DM_FIGURE_INT: fprintf(out, "%d", ROW_VALUE(f, row, int)); break;
    default:
        if (json)
            dm_json_string(out, (const char *)row + f->row_at);
        else
            dm_csv_text(out, (const char *)row + f->row_at);
        break;
    }
}

static void print_csv(FILE *out, const dm_summary_row *rows, size_t n)
{
    const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
    const size_t n_cols = dm_summary_columns(cols);
    for (size_t j = 0; j < n_cols; j++)
        fprintf(out, "%s%s", j ? "," : "", cols[j]->name);
    fputc('\n', out);
    for (size_t i = 0; i < n; i++) {
        for (size_t j = 0; j < n_cols; j++) {
            fputs(j ? "," : "", out);
            print_field(out, cols[j], &rows[i], false);
        }
        fputc('\n', out);
    }
}

static void print_json(FILE *out, const dm_summary_row *rows, size_t n)
{
    const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
    const size_t n_cols = dm_summary_columns(cols);
    fputs("[", out);
    for (size_t i = 0; i < n; i++) {
        fputs(i ? ",\n  {" : "\n  {", out);
        for (size_t j = 0; j < n_cols; j++) {
            fprintf(out, "%s\"%s\": ", j ? ", " : "", cols[j]->name);
            print_field(out, cols[j], &rows[i], true);
        }
        fputs("}", out);
    }
    fputs(n ? "\n]\n" : "]\n", out);
}

void dm_table_print(FILE *out, const dm_summary_row *rows, size_t n, dm_table_format format)
{
    switch (format) {
    case DM_TABLE_TEXT: print_text(out, rows, n); break;
    case DM_TABLE_CSV: print_csv(out, rows, n); break;
    case DM_TABLE_JSON: print_json(out, rows, n); break;
    }
}

/* ---- the sweep table ---- */

/* What marks a fit's cell of local orders carries (the notes under the table). */
typedef struct local_marks {
    bool spread, trend, two;
} local_marks;

/* "1.33..1.99" (a * when they differ by more than DM_LOCAL_ORDER_SPREAD, a ~ when they
 * move one way by more than DM_ORDER_TREND of the order), "2 points" for a fit of two
 * (its one local order is its order), "-" without. */
static void cell_local(char *buf, size_t size, double lo, double hi, uint64_t points,
                       bool trend, local_marks *marks)
{
    if (isnan(lo) || isnan(hi)) {
        snprintf(buf, size, "-");
        return;
    }
    if (points == 2) {
        marks->two = true;
        snprintf(buf, size, "2 points");
        return;
    }
    bool spread = hi - lo > DM_LOCAL_ORDER_SPREAD;
    marks->spread |= spread;
    marks->trend |= trend;
    snprintf(buf, size, "%.2f..%.2f%s%s", lo, hi, spread ? "*" : "", trend ? "~" : "");
}

static void sweep_text(FILE *out, const dm_sweep_summary *sweeps, size_t n)
{
    fprintf(out, "%-56s %12s %6s %12s %6s %12s %12s\n", "sweep", "energy order", "points",
            "phase order", "points", "energy local", "phase local");
    local_marks marks = { false, false, false };
    for (size_t w = 0; w < n; w++) {
        const dm_sweep_summary *s = &sweeps[w];
        char name[4 * DM_RUN_ID_MAX], energy[32], phase[32], el[40], pl[40];
        dm_escape_controls(s->name, name, sizeof name);
        cell_number(energy, sizeof energy, s->energy_order, "%.3f");
        cell_number(phase, sizeof phase, s->phase_order, "%.3f");
        cell_local(el, sizeof el, s->energy_local_min, s->energy_local_max, s->n_points_energy,
                   s->energy_trend, &marks);
        cell_local(pl, sizeof pl, s->phase_local_min, s->phase_local_max, s->n_points_phase,
                   s->phase_trend, &marks);
        fprintf(out, "%-56s %12s %6" PRIu64 " %12s %6" PRIu64 " %12s %12s\n", name, energy,
                s->n_points_energy, phase, s->n_points_phase, el, pl);
        /* the runs a fit left out, and why; a figure none of the sweep's runs has (the
         * phase of a problem without a period) is not a reason to list them */
        bool phase_nowhere = true;
        for (size_t i = 0; i < s->n_runs; i++)
            phase_nowhere = phase_nowhere && strcmp(s->runs[i].phase_fit, "no_value") == 0;
        for (size_t i = 0; i < s->n_runs; i++) {
            const dm_sweep_run_use *u = &s->runs[i];
            bool used = strcmp(u->energy_fit, "used") == 0 &&
                        (strcmp(u->phase_fit, "used") == 0 || phase_nowhere);
            if (used || u->energy_fit[0] == '\0' || strcmp(u->energy_fit, "not_run") == 0)
                continue;
            char id[4 * DM_RUN_ID_MAX], e[4 * DM_FIT_USE_NAME_MAX], p[4 * DM_FIT_USE_NAME_MAX];
            dm_escape_controls(u->run_id, id, sizeof id);
            dm_escape_controls(u->energy_fit, e, sizeof e);
            dm_escape_controls(u->phase_fit, p, sizeof p);
            fprintf(out, "  left out: %s: energy %s, phase %s\n", id, e, p);
        }
    }
    if (marks.spread || marks.trend)
        fprintf(out, "  local: the smallest and largest order between neighbouring steps\n");
    if (marks.spread)
        fprintf(out, "  *: they differ by more than %.2f, so not every point is in the regime "
                     "where the error goes as h^p:\n     the fitted order mixes regimes (add "
                     "finer steps)\n", DM_LOCAL_ORDER_SPREAD);
    if (marks.trend)
        fprintf(out, "  ~: they move one way along the whole sweep by more than %.0f %% of the "
                     "fitted order:\n     it is still settling, the points are not yet "
                     "asymptotic (add finer steps)\n", 100.0 * DM_ORDER_TREND);
    if (marks.two)
        fprintf(out, "  2 points: a fit of two points has one order between them and cannot "
                     "show a spread\n");
}

/* One row per written run of each sweep (a sweep with none, which
 * dm_sweep_table_print does not list: one row, its run fields empty), the sweep's
 * figures repeated on each. */
static void sweep_csv(FILE *out, const dm_sweep_summary *sweeps, size_t n)
{
    fputs("sweep,energy_order,n_points_energy,phase_order,n_points_phase,run_id,energy_fit,"
          "phase_fit,energy_order_local_min,energy_order_local_max,phase_order_local_min,"
          "phase_order_local_max,energy_order_trend,phase_order_trend\n", out);
    for (size_t w = 0; w < n; w++) {
        const dm_sweep_summary *s = &sweeps[w];
        for (size_t i = 0; i < (s->n_runs ? s->n_runs : 1); i++) {
            dm_csv_text(out, s->name);
            fputc(',', out);
            dm_csv_number(out, s->energy_order);
            fprintf(out, ",%" PRIu64 ",", s->n_points_energy);
            dm_csv_number(out, s->phase_order);
            fprintf(out, ",%" PRIu64 ",", s->n_points_phase);
            if (s->n_runs > 0) {
                dm_csv_text(out, s->runs[i].run_id);
                fputc(',', out);
                dm_csv_text(out, s->runs[i].energy_fit);
                fputc(',', out);
                dm_csv_text(out, s->runs[i].phase_fit);
            } else {
                fputs(",,", out);
            }
            const double local[4] = { s->energy_local_min, s->energy_local_max,
                                      s->phase_local_min, s->phase_local_max };
            for (int k = 0; k < 4; k++) {
                fputc(',', out);
                dm_csv_number(out, local[k]);
            }
            fprintf(out, ",%d,%d\n", s->energy_trend ? 1 : 0, s->phase_trend ? 1 : 0);
        }
    }
}

static void sweep_json(FILE *out, const dm_sweep_summary *sweeps, size_t n)
{
    fputs("[", out);
    for (size_t w = 0; w < n; w++) {
        const dm_sweep_summary *s = &sweeps[w];
        fputs(w ? ",\n  {\"sweep\": " : "\n  {\"sweep\": ", out);
        dm_json_string(out, s->name);
        fputs(", \"energy_order\": ", out);
        dm_json_number(out, s->energy_order, "%.17g");
        fprintf(out, ", \"n_points_energy\": %" PRIu64 ", \"phase_order\": ", s->n_points_energy);
        dm_json_number(out, s->phase_order, "%.17g");
        fprintf(out, ", \"n_points_phase\": %" PRIu64, s->n_points_phase);
        const char *const local_names[4] = { "energy_order_local_min", "energy_order_local_max",
                                             "phase_order_local_min", "phase_order_local_max" };
        const double local[4] = { s->energy_local_min, s->energy_local_max, s->phase_local_min,
                                  s->phase_local_max };
        for (int k = 0; k < 4; k++) {
            fprintf(out, ", \"%s\": ", local_names[k]);
            dm_json_number(out, local[k], "%.17g");
        }
        fprintf(out, ", \"energy_order_trend\": %s, \"phase_order_trend\": %s",
                s->energy_trend ? "true" : "false", s->phase_trend ? "true" : "false");
        fputs(", \"runs\": [", out);
        for (size_t i = 0; i < s->n_runs; i++) {
            fputs(i ? ", {\"run_id\": " : "{\"run_id\": ", out);
            dm_json_string(out, s->runs[i].run_id);
            fputs(", \"energy_fit\": ", out);
            dm_json_string(out, s->runs[i].energy_fit);
            fputs(", \"phase_fit\": ", out);
            dm_json_string(out, s->runs[i].phase_fit);
            fputs("}", out);
        }
        fputs("]}", out);
    }
    fputs(n ? "\n]\n" : "]\n", out);
}

/* A sweep none of whose runs started (all not_run: an early stop) is not listed, as its
 * runs are not (files written before 2026-12-02 hold such sweeps, with no runs). */
size_t dm_sweeps_listed(const dm_sweep_summary *sweeps, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        k += sweeps[i].n_runs > 0;
    return k;
}

void dm_sweep_table_print(FILE *out, const dm_sweep_summary *sweeps, size_t n,
                          dm_table_format format)
{
    const dm_sweep_summary *use = sweeps;
    dm_sweep_summary *kept = malloc((n ? n : 1) * sizeof *kept);
    size_t k = n;
    if (kept != NULL) { /* else every sweep, as the file holds them */
        k = 0;
        for (size_t i = 0; i < n; i++)
            if (sweeps[i].n_runs > 0)
                kept[k++] = sweeps[i];
        use = kept;
    }
    switch (format) {
    case DM_TABLE_TEXT: sweep_text(out, use, k); break;
    case DM_TABLE_CSV: sweep_csv(out, use, k); break;
    case DM_TABLE_JSON: sweep_json(out, use, k); break;
    }
    free(kept);
}

/* ---- the tables typed in a suite ---- */

void dm_table_summary_fill(dm_table_summary *s, const dm_user_table *t)
{
    memset(s, 0, sizeof *s);
    snprintf(s->name, sizeof s->name, "%s", t->input.name);
    snprintf(s->form, sizeof s->form, "%s", dm_table_form_name(t->input.form));
    s->claimed_order = t->input.claimed_order;
    s->order_found = t->findings.order_found;
    snprintf(s->basis, sizeof s->basis, "%s", t->findings.order_basis);
    s->experimental = t->input.experimental;
    s->symmetric = t->findings.symmetric;
    bool measured = t->input.form != DM_TABLE_RUNGE_KUTTA;
    for (int k = 0; k < 2; k++) {
        s->measured[k] = measured ? t->findings.measured[k].order : NAN;
        s->constant[k] = measured ? t->findings.measured[k].error_constant : NAN;
    }
}

static void tables_text(FILE *out, const dm_table_summary *tables, size_t n)
{
    if (n == 0) {
        fprintf(out, "(no tables: the suite typed no method as a table)\n");
        return;
    }
    fprintf(out, "%-31s %-12s %7s %5s  %-16s %-9s  %-22s %-22s\n", "table", "form",
            "claimed", "found", "basis", "symmetric", "harmonic: order (C)",
            "pendulum: order (C)");
    for (size_t i = 0; i < n; i++) {
        const dm_table_summary *t = &tables[i];
        char name[4 * DM_TABLE_NAME_MAX], cell[2][64];
        dm_escape_controls(t->name, name, sizeof name);
        for (int k = 0; k < 2; k++)
            if (isnan(t->measured[k]))
                snprintf(cell[k], sizeof cell[k], "-");
            else
                snprintf(cell[k], sizeof cell[k], "%.2f (%.3g)", t->measured[k],
                         t->constant[k]);
        fprintf(out, "%-31s %-12s %7d %5d  %-16s %-9s  %-22s %-22s%s\n", name, t->form,
                t->claimed_order, t->order_found, t->basis, t->symmetric ? "yes" : "no",
                cell[0], cell[1],
                t->order_found < t->claimed_order ? "  experimental: below its claim" : "");
    }
    fprintf(out, "(C: the leading error constant, e / (h/T)^p: results/README.md, /tables)\n");
}

/* CSV and JSON: one record a table, named as /tables/<name>'s attributes, the measured
 * orders and constants as numbers (empty / null for a Butcher tableau). */
static void tables_csv(FILE *out, const dm_table_summary *tables, size_t n)
{
    fputs("table,form,claimed_order,order_found,order_basis,symmetric,experimental,"
          "measured_order_harmonic,error_constant_harmonic,measured_order_pendulum,"
          "error_constant_pendulum\n", out);
    for (size_t i = 0; i < n; i++) {
        const dm_table_summary *t = &tables[i];
        dm_csv_text(out, t->name);
        fprintf(out, ",%s,%d,%d,", t->form, t->claimed_order, t->order_found);
        dm_csv_text(out, t->basis);
        fprintf(out, ",%s,%s", t->symmetric ? "yes" : "no", t->experimental ? "yes" : "no");
        for (int k = 0; k < 2; k++) {
            fputc(',', out);
            dm_csv_number(out, t->measured[k]);
            fputc(',', out);
            dm_csv_number(out, t->constant[k]);
        }
        fputc('\n', out);
    }
}

static void tables_json(FILE *out, const dm_table_summary *tables, size_t n)
{
    static const char *const on[2] = { "harmonic", "pendulum" };
    fputs("[", out);
    for (size_t i = 0; i < n; i++) {
        const dm_table_summary *t = &tables[i];
        fputs(i ? ",\n  {\"table\": " : "\n  {\"table\": ", out);
        dm_json_string(out, t->name);
        fputs(", \"form\": ", out);
        dm_json_string(out, t->form);
        fprintf(out, ", \"claimed_order\": %d, \"order_found\": %d, \"order_basis\": ",
                t->claimed_order, t->order_found);
        dm_json_string(out, t->basis);
        fprintf(out, ", \"symmetric\": %s, \"experimental\": %s",
                t->symmetric ? "true" : "false", t->experimental ? "true" : "false");
        for (int k = 0; k < 2; k++) {
            fprintf(out, ", \"measured_order_%s\": ", on[k]);
            dm_json_number(out, t->measured[k], "%.17g");
            fprintf(out, ", \"error_constant_%s\": ", on[k]);
            dm_json_number(out, t->constant[k], "%.17g");
        }
        fputs("}", out);
    }
    fputs(n ? "\n]\n" : "]\n", out);
}

void dm_tables_print(FILE *out, const dm_table_summary *tables, size_t n,
                     dm_table_format format)
{
    switch (format) {
    case DM_TABLE_TEXT: tables_text(out, tables, n); break;
    case DM_TABLE_CSV: tables_csv(out, tables, n); break;
    case DM_TABLE_JSON: tables_json(out, tables, n); break;
    }
}
