/* cmd_compare.c — `driftmark compare OLD.h5 NEW.h5 [--tolerance R] [--time-tolerance R]
 * [--format table|csv|json]`: what changed between two results files, run by run
 * (harness/include/compare.h). Exit 0 when nothing got worse, 4 when something did or a
 * run of the old file is missing from the new (runs that are not comparable judge
 * nothing). */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "compare.h"
#include "dm_json.h"

static const char usage[] =
    "usage: driftmark compare OLD.h5 NEW.h5 [--tolerance R] [--time-tolerance R] "
    "[--format table|csv|json]";

/* Exit status when some figure of some run got worse. */
#define DM_EXIT_WORSE 4

static int parse_tolerance(const char *option, const char *text, double *out)
{
    if (dm_parse_double(text, out) != 0 || !(*out >= 0.0))
        return dm_cli_usage_error("compare", "%s = '%s' is not a number >= 0", option, text);
    return 0;
}

static void value_text(const dm_difference *d, bool is_new, char *buf, size_t size)
{
    const char *text = is_new ? d->new_text : d->old_text;
    double v = is_new ? d->new_value : d->old_value;
    if (d->change == DM_RENAMED) /* the two ids */
        snprintf(buf, size, "%s", is_new ? d->run_id : d->keys);
    else if (text[0] != '\0')
        snprintf(buf, size, "%s", text);
    else if (strcmp(d->figure, "run") == 0 || strcmp(d->figure, "config") == 0)
        snprintf(buf, size, "-");
    else
        snprintf(buf, size, "%.6g", v);
}

static void print_text(const dm_comparison *c)
{
    printf("runs matched %zu: same %zu, within tolerance %zu, better %zu, worse %zu, changed "
           "%zu, not comparable %zu; only in the old file %zu, only in the new %zu\n",
           c->runs_matched, c->runs_same, c->runs_within, c->runs_better, c->runs_worse,
           c->runs_changed, c->runs_not_comparable, c->only_old, c->only_new);
    if (c->runs_by_id + c->runs_not_comparable > 0)
        printf("matched by id only, their configurations differing %zu: judged %zu (only the "
               "method's settings or the buckets differ), not comparable %zu (what they run or "
               "measure differs: not judged)\n",
               c->runs_by_id + c->runs_not_comparable, c->runs_by_id, c->runs_not_comparable);
    if (c->runs_renamed > 0)
        printf("matched by configuration under another id %zu (figure run_id, renamed): "
               "judged as any pair\n", c->runs_renamed);
    if (c->n == 0)
        return;
    printf("\n%-48s %-24s %14s %14s %10s  %s\n", "run", "figure", "old", "new", "change",
           "verdict");
    for (size_t i = 0; i < c->n; i++) {
        const dm_difference *d = &c->list[i];
        if (d->change == DM_WITHIN)
            continue; /* counted above; every field in csv and json */
        char a[DM_RUN_ID_MAX], b[DM_RUN_ID_MAX], rel[24] = "";
        value_text(d, false, a, sizeof a);
        value_text(d, true, b, sizeof b);
        if (isfinite(d->relative))
            snprintf(rel, sizeof rel, "%+.2e", d->relative);
        printf("%-48s %-24s %14s %14s %10s  %s", d->run_id, d->figure, a, b, rel,
               dm_change_name(d->change));
        if (d->keys[0] != '\0' && d->change != DM_RENAMED)
            printf(" (configurations differ in %s)", d->keys);
        putchar('\n');
    }
}

static void print_csv(const dm_comparison *c)
{
    printf("run_id,figure,old,new,relative,change,keys\n");
    for (size_t i = 0; i < c->n; i++) {
        const dm_difference *d = &c->list[i];
        char a[DM_RUN_ID_MAX], b[DM_RUN_ID_MAX];
        if (d->old_text[0] || d->change == DM_RENAMED || strcmp(d->figure, "run") == 0 ||
            strcmp(d->figure, "config") == 0) {
            value_text(d, false, a, sizeof a);
            value_text(d, true, b, sizeof b);
        } else {
            a[0] = b[0] = '\0';
            if (isfinite(d->old_value))
                snprintf(a, sizeof a, "%.17g", d->old_value);
            if (isfinite(d->new_value))
                snprintf(b, sizeof b, "%.17g", d->new_value);
        }
        dm_csv_text(stdout, d->run_id); /* ids carry file stems: quoted where needed */
        printf(",%s,%s,%s,", d->figure, a, b);
        if (isfinite(d->relative))
            printf("%.17g", d->relative);
        printf(",%s,", dm_change_name(d->change));
        dm_csv_text(stdout, d->change == DM_RENAMED ? "" : d->keys); /* comma separated */
        putchar('\n');
    }
}

static void print_json(const dm_comparison *c)
{
    printf("{\"runs_matched\": %zu, \"same\": %zu, \"within\": %zu, \"better\": %zu, "
           "\"worse\": %zu, \"changed\": %zu, \"not_comparable\": %zu, \"by_id\": %zu, "
           "\"renamed\": %zu, \"only_old\": %zu, \"only_new\": %zu, \"differences\": [",
           c->runs_matched, c->runs_same, c->runs_within, c->runs_better, c->runs_worse,
           c->runs_changed, c->runs_not_comparable, c->runs_by_id, c->runs_renamed,
           c->only_old, c->only_new);
    for (size_t i = 0; i < c->n; i++) {
        const dm_difference *d = &c->list[i];
        printf(i ? ",\n  {\"run_id\": " : "\n  {\"run_id\": ");
        dm_json_string(stdout, d->run_id);
        printf(", \"figure\": ");
        dm_json_string(stdout, d->figure);
        if (d->change == DM_RENAMED) {
            printf(", \"old\": ");
            dm_json_string(stdout, d->keys);
            printf(", \"new\": ");
            dm_json_string(stdout, d->run_id);
        } else if (d->old_text[0]) {
            printf(", \"old\": ");
            dm_json_string(stdout, d->old_text);
            printf(", \"new\": ");
            dm_json_string(stdout, d->new_text);
        } else {
            printf(", \"old\": ");
            dm_json_number(stdout, d->old_value, "%.17g");
            printf(", \"new\": ");
            dm_json_number(stdout, d->new_value, "%.17g");
        }
        printf(", \"relative\": ");
        dm_json_number(stdout, d->relative, "%.17g");
        printf(", \"change\": \"%s\"", dm_change_name(d->change));
        if (d->keys[0] != '\0' && d->change != DM_RENAMED) {
            printf(", \"keys\": ");
            dm_json_string(stdout, d->keys);
        }
        putchar('}');
    }
    printf(c->n ? "\n]}\n" : "]}\n");
}

static int read_rows(const char *path, dm_summary_row **rows, char (**configs)[DM_CONFIG_MAX],
                     size_t *n)
{
    dm_error err = { 0 };
    dm_status st = dm_results_read_summary(path, rows, n, &err);
    if (st == DM_OK) {
        st = dm_results_read_configs(path, *rows, *n, configs, &err);
        if (st != DM_OK) {
            free(*rows);
            *rows = NULL;
        }
    }
    if (st == DM_OK)
        return 0;
    fprintf(stderr, "driftmark: compare: %s\n", err.msg);
    return st == DM_ENOMEM ? 1 : 2;
}

int dm_cmd_compare(int argc, char **argv)
{
    static const struct option options[] = {
        { "tolerance", required_argument, NULL, 't' },
        { "time-tolerance", required_argument, NULL, 'T' },
        { "format", required_argument, NULL, 'f' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    /* Defaults: 1e-9 lets through the last-digit changes of another compiler or flags
     * and catches any change of a method; 0.5 lets through the noise of timings on a
     * shared machine (we measured swings of 40 % between two runs of one build). */
    dm_compare_options o = { .tolerance = 1e-9, .time_tolerance = 0.5 };
    dm_table_format format = DM_TABLE_TEXT;
    optind = 0;
    opterr = 0;
    int c;
    while ((c = getopt_long(argc, argv, "t:T:f:h", options, NULL)) != -1) {
        int bad = 0;
        switch (c) {
        case 't': bad = parse_tolerance("--tolerance", optarg, &o.tolerance); break;
        case 'T':
            bad = parse_tolerance("--time-tolerance", optarg, &o.time_tolerance);
            o.timings_judge = true; /* asked for: timings count in the verdict */
            break;
        case 'f': bad = dm_cli_format_option("compare", optarg, &format); break;
        case 'h': printf("%s\n", usage); return 0;
        default:
            return dm_cli_usage_error("compare", "unknown option or missing value '%s' (%s)",
                                      argv[optind - 1], usage);
        }
        if (bad)
            return bad;
    }
    if (argc - optind != 2)
        return dm_cli_usage_error("compare", "two results files needed, got %d (%s)",
                                  argc - optind, usage);
    dm_summary_row *old_rows = NULL, *new_rows = NULL;
    char (*old_configs)[DM_CONFIG_MAX] = NULL, (*new_configs)[DM_CONFIG_MAX] = NULL;
    size_t n_old = 0, n_new = 0;
    dm_cli_guard_reads("compare", argv[optind], NULL);
    int code = read_rows(argv[optind], &old_rows, &old_configs, &n_old);
    dm_cli_guard_reads("compare", argv[optind + 1], NULL);
    if (code == 0)
        code = read_rows(argv[optind + 1], &new_rows, &new_configs, &n_new);
    dm_cli_unguard_reads();
    if (code != 0) {
        free(old_rows);
        free(old_configs);
        return code;
    }
    dm_comparison cmp;
    dm_error err = { 0 };
    dm_status st = dm_compare(old_rows, (const char(*)[DM_CONFIG_MAX])old_configs, n_old,
                              new_rows, (const char(*)[DM_CONFIG_MAX])new_configs, n_new, &o,
                              &cmp, &err);
    free(old_rows);
    free(new_rows);
    free(old_configs);
    free(new_configs);
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: compare: %s\n", err.msg);
        return 1;
    }
    switch (format) {
    case DM_TABLE_TEXT: print_text(&cmp); break;
    case DM_TABLE_CSV: print_csv(&cmp); break;
    case DM_TABLE_JSON: print_json(&cmp); break;
    }
    /* a run of the old file missing from the new one is lost: worse, for a CI gate; a
     * pair that is not comparable judges nothing, but a gate's log should say so */
    code = cmp.runs_worse > 0 || cmp.only_old > 0 ? DM_EXIT_WORSE : 0;
    if (cmp.runs_not_comparable > 0)
        fprintf(stderr, "driftmark: compare: %zu of %zu matched runs not judged: their "
                "configurations differ in what they run or measure (the config lines)\n",
                cmp.runs_not_comparable, cmp.runs_matched);
    free(cmp.list);
    return code;
}
