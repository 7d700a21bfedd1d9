/* table.c — summary rows, and the three ways they are printed: an aligned table for
 * reading, CSV and JSON for other programs (every field, numbers in full precision). */
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "harness.h"

void dm_summary_row_fill(dm_summary_row *row, const dm_run_spec *spec,
                         const dm_run_result *result)
{
    memset(row, 0, sizeof *row);
    const dm_instance *inst = &spec->inst;
    const dm_method *m = spec->method;
    const dm_run_metrics *mt = &result->metrics;
    snprintf(row->run_id, sizeof row->run_id, "%s", spec->id);
    snprintf(row->hash, sizeof row->hash, "%s", spec->hash);
    snprintf(row->problem, sizeof row->problem, "%s", inst->problem->id);
    if (inst->regime >= 0 && inst->regime < inst->problem->n_regimes)
        snprintf(row->regime, sizeof row->regime, "%s", inst->problem->regimes[inst->regime].id);
    snprintf(row->method, sizeof row->method, "%s", m->id);
    row->order = m->order;
    row->h = m->adaptive ? NAN : spec->method_config.h;
    row->rtol = m->adaptive ? spec->method_config.rtol : NAN;
    row->steps = mt->steps;
    row->force_evals = mt->counts.force_evals;
    row->max_energy_error = mt->max_energy_error;
    row->final_energy_error = mt->final_energy_error;
    row->energy_drift_per_period = mt->energy_drift_per_period;
    row->drift_exponent = mt->drift_exponent;
    row->period_exact = mt->period_exact;
    row->period_measured = mt->period_measured;
    row->period_rel_error = mt->period_rel_error;
    row->phase_error_per_period = mt->phase_error_per_period;
    row->phase_error_final = mt->phase_error_final;
    row->wall_seconds = mt->wall_seconds;
    row->ns_per_step = mt->ns_per_step;
    snprintf(row->status, sizeof row->status, "%s", dm_run_status_name(result->status));
    /* The summary keeps the first 255 bytes of the reason; /runs keeps all of it. */
    snprintf(row->reason, sizeof row->reason, "%.*s", (int)sizeof row->reason - 1,
             result->reason);
}

/* ---- the aligned table ---- */

static void cell_number(char *buf, size_t size, double v, const char *fmt)
{
    if (isnan(v))
        snprintf(buf, size, "-");
    else
        snprintf(buf, size, fmt, v);
}

enum { COLS = 12 };

static void print_text(FILE *out, const dm_summary_row *rows, size_t n)
{
    static const char *const head[COLS] = { "run", "status", "steps", "force evals",
                                            "max |dE|", "final dE", "drift/period",
                                            "drift exp", "period err", "phase/period",
                                            "phase end", "ns/step" };
    size_t width[COLS];
    for (int j = 0; j < COLS; j++)
        width[j] = strlen(head[j]);
    char cell[COLS][DM_RUN_ID_MAX];
    /* Two passes: measure, then print. */
    for (int pass = 0; pass < 2; pass++) {
        if (pass == 1) {
            for (int j = 0; j < COLS; j++)
                fprintf(out, j == 0 ? "%-*s" : "  %*s", (int)width[j], head[j]);
            fputc('\n', out);
        }
        for (size_t i = 0; i < n; i++) {
            const dm_summary_row *r = &rows[i];
            snprintf(cell[0], sizeof cell[0], "%s", r->run_id);
            snprintf(cell[1], sizeof cell[1], "%s", r->status);
            snprintf(cell[2], sizeof cell[2], "%" PRIu64, r->steps);
            snprintf(cell[3], sizeof cell[3], "%" PRIu64, r->force_evals);
            cell_number(cell[4], sizeof cell[4], r->max_energy_error, "%.3e");
            cell_number(cell[5], sizeof cell[5], r->final_energy_error, "%.3e");
            cell_number(cell[6], sizeof cell[6], r->energy_drift_per_period, "%.3e");
            cell_number(cell[7], sizeof cell[7], r->drift_exponent, "%.2f");
            cell_number(cell[8], sizeof cell[8], r->period_rel_error, "%.3e");
            cell_number(cell[9], sizeof cell[9], r->phase_error_per_period, "%.3e");
            cell_number(cell[10], sizeof cell[10], r->phase_error_final, "%.3e");
            cell_number(cell[11], sizeof cell[11], r->ns_per_step, "%.1f");
            for (int j = 0; j < COLS; j++) {
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
    for (size_t i = 0; i < n; i++)
        if (rows[i].reason[0] != '\0')
            fprintf(out, "  %s: %s: %s\n", rows[i].run_id, rows[i].status, rows[i].reason);
}

/* ---- CSV (RFC 4180 quoting) and JSON ---- */

static void csv_text(FILE *out, const char *s)
{
    if (strpbrk(s, ",\"\n\r") == NULL) {
        fputs(s, out);
        return;
    }
    fputc('"', out);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', out);
        fputc(*s, out);
    }
    fputc('"', out);
}

static void csv_number(FILE *out, double v)
{
    if (isfinite(v))
        fprintf(out, "%.17g", v);
    else if (isinf(v))
        fputs(v > 0 ? "inf" : "-inf", out);
    /* NaN: an empty field, which spreadsheets and pandas read as missing. */
}

static void json_text(FILE *out, const char *s)
{
    fputc('"', out);
    for (const unsigned char *c = (const unsigned char *)s; *c; c++) {
        switch (*c) {
        case '"': fputs("\\\"", out); break;
        case '\\': fputs("\\\\", out); break;
        case '\n': fputs("\\n", out); break;
        case '\r': fputs("\\r", out); break;
        case '\t': fputs("\\t", out); break;
        default:
            if (*c < 0x20)
                fprintf(out, "\\u%04x", *c);
            else
                fputc(*c, out);
        }
    }
    fputc('"', out);
}

static void json_number(FILE *out, double v)
{
    if (isfinite(v))
        fprintf(out, "%.17g", v);
    else
        fputs("null", out); /* JSON has no NaN or infinity */
}

#define ROW_STRINGS(X) X(run_id) X(hash) X(problem) X(regime) X(method)

static void print_csv(FILE *out, const dm_summary_row *rows, size_t n)
{
    fputs("run_id,hash,problem,regime,method,order,h,rtol,steps,force_evals,"
          "max_energy_error,final_energy_error,energy_drift_per_period,drift_exponent,"
          "period_exact,period_measured,period_rel_error,phase_error_per_period,"
          "phase_error_final,wall_seconds,ns_per_step,status,reason\n",
          out);
    for (size_t i = 0; i < n; i++) {
        const dm_summary_row *r = &rows[i];
#define CSV_S(f) csv_text(out, r->f); fputc(',', out);
        ROW_STRINGS(CSV_S)
#undef CSV_S
        fprintf(out, "%d,", r->order);
        csv_number(out, r->h);
        fputc(',', out);
        csv_number(out, r->rtol);
        fprintf(out, ",%" PRIu64 ",%" PRIu64 ",", r->steps, r->force_evals);
        const double nums[] = { r->max_energy_error, r->final_energy_error,
                                r->energy_drift_per_period, r->drift_exponent,
                                r->period_exact, r->period_measured, r->period_rel_error,
                                r->phase_error_per_period, r->phase_error_final,
                                r->wall_seconds, r->ns_per_step };
        for (size_t k = 0; k < sizeof nums / sizeof nums[0]; k++) {
            csv_number(out, nums[k]);
            fputc(',', out);
        }
        csv_text(out, r->status);
        fputc(',', out);
        csv_text(out, r->reason);
        fputc('\n', out);
    }
}

static void print_json(FILE *out, const dm_summary_row *rows, size_t n)
{
    fputs("[", out);
    for (size_t i = 0; i < n; i++) {
        const dm_summary_row *r = &rows[i];
        fputs(i ? ",\n  {" : "\n  {", out);
#define JSON_S(f) fputs("\"" #f "\": ", out); json_text(out, r->f); fputs(", ", out);
        ROW_STRINGS(JSON_S)
#undef JSON_S
        fprintf(out, "\"order\": %d, ", r->order);
#define JSON_D(f) fputs("\"" #f "\": ", out); json_number(out, r->f); fputs(", ", out);
        JSON_D(h) JSON_D(rtol)
        fprintf(out, "\"steps\": %" PRIu64 ", \"force_evals\": %" PRIu64 ", ", r->steps,
                r->force_evals);
        JSON_D(max_energy_error) JSON_D(final_energy_error) JSON_D(energy_drift_per_period)
        JSON_D(drift_exponent) JSON_D(period_exact) JSON_D(period_measured)
        JSON_D(period_rel_error) JSON_D(phase_error_per_period) JSON_D(phase_error_final)
        JSON_D(wall_seconds) JSON_D(ns_per_step)
#undef JSON_D
        fputs("\"status\": ", out);
        json_text(out, r->status);
        fputs(", \"reason\": ", out);
        json_text(out, r->reason);
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
