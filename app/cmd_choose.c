/* cmd_choose.c — `driftmark choose FILE.h5 --energy-error X [--phase-per-period Y]
 * [--periods N] [--format table|csv|json]`: for each problem variant of a results file,
 * the methods that meet the target ranked by cost, how each figure was obtained, and
 * why the others are not ranked (harness/include/choose.h). Exit 0 when every variant
 * has an answer, 3 when some variant has none (its closest method is named). */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "choose.h"
#include "cli.h"
#include "dm_json.h"

static const char usage[] =
    "usage: driftmark choose FILE.h5 --energy-error X [--phase-per-period Y] [--periods N] "
    "[--format table|csv|json]";

/* Exit status when some problem variant has no method that meets the target. */
#define DM_EXIT_NO_ANSWER 3

static int parse_positive(const char *option, const char *text, double *out)
{
    if (dm_parse_double(text, out) != 0 || !(*out > 0.0))
        return dm_cli_usage_error("choose", "%s = '%s' is not a positive number", option, text);
    return 0;
}

/* A predicted figure, "-" when it is not predicted (not_predicted says why). */
static void figure_cell(char *buf, size_t size, double v)
{
    if (isnan(v))
        snprintf(buf, size, "-");
    else
        snprintf(buf, size, "%.3g", v);
}

static void print_text(const dm_choice *c, size_t n)
{
    for (size_t i = 0; i < n;) {
        size_t end = i;
        while (end < n && strcmp(c[end].variant, c[i].variant) == 0)
            end++;
        printf("%s%s\n", i ? "\n" : "", c[i].variant);
        printf("  %-4s %-30s %-12s %-14s %12s %12s %10s %10s %8s  %s\n", "rank", "method",
               "step", "basis", "evals/period", "s/period", "max |dE|", "phase/per", "margin",
               "horizon");
        for (size_t k = i; k < end; k++) {
            const dm_choice *x = &c[k];
            if (!x->ranked)
                continue;
            char step[32], basis[48];
            snprintf(step, sizeof step, "%s=%.4g", x->adaptive ? "rtol" : "h", x->x);
            if (x->basis == DM_BASIS_EXTRAPOLATED)
                snprintf(basis, sizeof basis, "extrap. x%.3g", x->beyond);
            else
                snprintf(basis, sizeof basis, "%s", dm_choice_basis_name(x->basis));
            char energy[32], phase[32];
            figure_cell(energy, sizeof energy, x->energy_error);
            figure_cell(phase, sizeof phase, x->phase_per_period);
            printf("  %-4d %-30s %-12s %-14s %12.4g %12.3g %10s %10s %8.3g  %s\n", x->rank,
                   x->method, step, basis, x->cost_per_period, x->seconds_per_period, energy,
                   phase, x->margin, x->horizon_rule);
        }
        for (size_t k = i; k < end; k++)
            if (c[k].ranked && c[k].not_predicted[0])
                printf("  %s: %s\n", c[k].method, c[k].not_predicted);
        for (size_t k = i; k < end; k++)
            if (!c[k].ranked)
                printf("  not ranked: %s: %s\n", c[k].method,
                       c[k].why_not[0] ? c[k].why_not : "it does not meet the target");
        i = end;
    }
    bool carried = false;
    for (size_t k = 0; k < n; k++)
        carried = carried || (c[k].ranked && strncmp(c[k].horizon_rule, "measured horizon",
                                                     strlen("measured horizon")) != 0);
    if (carried)
        printf("\nhorizon: an answer carried past the horizon its runs measured assumes each "
               "run's drift law (or bound)\nholds that long; near a method's stability limit "
               "it may not: confirm the step chosen with one run\nover the whole horizon\n");
}

/* The numbers of a choice, by name (CSV header and JSON key) and field: one list, so
 * the CSV's header and its rows cannot disagree. */
#define CHOICE_NUMBERS(X)                                                                  \
    X(step, x) X(beyond, beyond) X(cost_per_period, cost_per_period)                     \
    X(seconds_per_period, seconds_per_period) X(energy_error, energy_error)               \
    X(phase_per_period, phase_per_period) X(margin, margin)                               \
    X(horizon_factor, horizon_factor) X(fit_rms, fit_rms) X(closeness, closeness)

static void print_csv(const dm_choice *c, size_t n)
{
    printf("variant,method,rank,step_kind,basis");
#define CSV_NAME(name, field) printf("," #name);
    CHOICE_NUMBERS(CSV_NAME)
#undef CSV_NAME
    printf(",horizon_rule,n_points,run_id,why_not,not_predicted\n");
    for (size_t i = 0; i < n; i++) {
        const dm_choice *x = &c[i];
        dm_csv_text(stdout, x->variant);
        putchar(',');
        dm_csv_text(stdout, x->method);
        printf(",%d,%s,%s", x->rank, x->adaptive ? "rtol" : "h",
               dm_choice_basis_name(x->basis));
#define CSV_NUMBER(name, field) putchar(','); dm_csv_number(stdout, x->field);
        CHOICE_NUMBERS(CSV_NUMBER)
#undef CSV_NUMBER
        putchar(',');
        dm_csv_text(stdout, x->horizon_rule);
        printf(",%zu,", x->n_points);
        dm_csv_text(stdout, x->run_id);
        putchar(',');
        dm_csv_text(stdout, x->why_not);
        putchar(',');
        dm_csv_text(stdout, x->not_predicted);
        putchar('\n');
    }
}

static void print_json(const dm_choice *c, size_t n, bool all)
{
    printf("{\"all_answered\": %s, \"choices\": [", all ? "true" : "false");
    for (size_t i = 0; i < n; i++) {
        const dm_choice *x = &c[i];
        printf(i ? ",\n  {" : "\n  {");
        printf("\"variant\": ");
        dm_json_string(stdout, x->variant);
        printf(", \"method\": ");
        dm_json_string(stdout, x->method);
        printf(", \"rank\": %d, \"ranked\": %s, \"step_kind\": \"%s\", \"basis\": \"%s\"",
               x->rank, x->ranked ? "true" : "false", x->adaptive ? "rtol" : "h",
               dm_choice_basis_name(x->basis));
#define JSON_NUMBER(name, field)                                                           \
    printf(", \"" #name "\": ");                                                           \
    dm_json_number(stdout, x->field, "%.17g");
        CHOICE_NUMBERS(JSON_NUMBER)
#undef JSON_NUMBER
        printf(", \"n_points\": %zu, \"horizon_rule\": ", x->n_points);
        dm_json_string(stdout, x->horizon_rule);
        printf(", \"run_id\": ");
        dm_json_string(stdout, x->run_id);
        printf(", \"why_not\": ");
        dm_json_string(stdout, x->why_not);
        printf(", \"not_predicted\": ");
        dm_json_string(stdout, x->not_predicted);
        printf("}");
    }
    printf(n ? "\n]}\n" : "]}\n");
}

/* The method that came closest in each variant with no answer (smallest predicted /
 * target of its best run). */
static void print_closest(const dm_choice *c, size_t n)
{
    for (size_t i = 0; i < n;) {
        size_t end = i, best = i;
        bool answered = false;
        while (end < n && strcmp(c[end].variant, c[i].variant) == 0) {
            answered = answered || c[end].ranked;
            if (c[end].closeness < c[best].closeness)
                best = end;
            end++;
        }
        /* a best run within the target that is still not ranked (refused for another
         * reason): its reason, not "0.07 times over it" */
        if (!answered && !(isfinite(c[best].closeness) && c[best].closeness > 1.0))
            fprintf(stderr, "driftmark: choose: %s: no method ranked; %s: %s\n", c[i].variant,
                    c[best].method, c[best].why_not);
        else if (!answered)
            fprintf(stderr, "driftmark: choose: %s: no method meets the target; closest: %s, "
                    "whose best run is %.3g times over it\n", c[i].variant, c[best].method,
                    c[best].closeness);
        i = end;
    }
}

int dm_cmd_choose(int argc, char **argv)
{
    static const struct option options[] = {
        { "energy-error", required_argument, NULL, 'e' },
        { "phase-per-period", required_argument, NULL, 'p' },
        { "periods", required_argument, NULL, 'n' },
        { "format", required_argument, NULL, 'f' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    dm_target target = { .max_energy_error = NAN, .phase_per_period = NAN, .periods = NAN };
    dm_table_format format = DM_TABLE_TEXT;
    optind = 0;
    opterr = 0;
    int c;
    while ((c = getopt_long(argc, argv, "e:p:n:f:h", options, NULL)) != -1) {
        int bad = 0;
        switch (c) {
        case 'e': bad = parse_positive("--energy-error", optarg, &target.max_energy_error); break;
        case 'p': bad = parse_positive("--phase-per-period", optarg, &target.phase_per_period); break;
        case 'n': bad = parse_positive("--periods", optarg, &target.periods); break;
        case 'f': bad = dm_cli_format_option("choose", optarg, &format); break;
        case 'h': printf("%s\n", usage); return 0;
        default:
            return dm_cli_usage_error("choose", "unknown option or missing value '%s' (%s)",
                                      argv[optind - 1], usage);
        }
        if (bad)
            return bad;
    }
    if (target.periods > DM_MAX_PERIODS)
        return dm_cli_usage_error("choose", "--periods = %.10g is beyond %g periods, the longest "
                                  "horizon a suite may ask for", target.periods, DM_MAX_PERIODS);
    if (optind >= argc)
        return dm_cli_usage_error("choose", "no results file given (%s)", usage);
    if (argc - optind > 1)
        return dm_cli_usage_error("choose", "one results file at a time (%s)", usage);
    if (isnan(target.max_energy_error) && isnan(target.phase_per_period))
        return dm_cli_usage_error("choose", "no target given (expected --energy-error X "
                                  "and/or --phase-per-period Y)");

    dm_summary_row *rows = NULL;
    size_t n = 0;
    dm_error err = { 0 };
    dm_cli_guard_reads("choose", argv[optind], NULL);
    dm_status st = dm_results_read_summary(argv[optind], &rows, &n, &err);
    dm_cli_unguard_reads();
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: choose: %s\n", err.msg);
        return st == DM_ENOMEM ? 1 : 2; /* a file we cannot read as ours is bad input */
    }
    dm_choice *choices = NULL;
    size_t nc = 0;
    bool all = false;
    st = dm_choose(rows, n, &target, &choices, &nc, &all, &err);
    free(rows);
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: choose: %s\n", err.msg);
        return 1;
    }
    switch (format) {
    case DM_TABLE_TEXT: print_text(choices, nc); break;
    case DM_TABLE_CSV: print_csv(choices, nc); break;
    case DM_TABLE_JSON: print_json(choices, nc, all); break;
    }
    if (!all)
        print_closest(choices, nc);
    free(choices);
    return all ? 0 : DM_EXIT_NO_ANSWER;
}
