/* cmd_show.c — `driftmark show FILE.h5 [--format table|csv|json] [--sweeps|--tables]`:
 * print the summary table of a results file, its sweep table and its typed tables (as
 * `run` prints them), or with --sweeps or --tables that block alone (so that CSV and
 * JSON hold one table each). */
#include <getopt.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "harness.h"

static const char usage[] =
    "usage: driftmark show FILE.h5 [--format table|csv|json] [--sweeps|--tables]";

int dm_cmd_show(int argc, char **argv)
{
    static const struct option options[] = {
        { "format", required_argument, NULL, 'f' },
        { "sweeps", no_argument, NULL, 's' },
        { "tables", no_argument, NULL, 't' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    dm_table_format format = DM_TABLE_TEXT;
    bool sweeps_only = false, tables_only = false;
    optind = 0; /* glibc: full re-initialisation, in case getopt ran before */
    opterr = 0; /* our own one-line messages */
    int c;
    while ((c = getopt_long(argc, argv, "f:sth", options, NULL)) != -1) {
        switch (c) {
        case 'f':
            if (strcmp(optarg, "table") == 0)
                format = DM_TABLE_TEXT;
            else if (strcmp(optarg, "csv") == 0)
                format = DM_TABLE_CSV;
            else if (strcmp(optarg, "json") == 0)
                format = DM_TABLE_JSON;
            else
                return dm_cli_usage_error("show", "unknown format '%s' (expected table, csv "
                                          "or json)", optarg);
            break;
        case 's':
            sweeps_only = true;
            break;
        case 't':
            tables_only = true;
            break;
        case 'h':
            printf("%s\n", usage);
            return 0;
        case ':':
        case '?':
        default:
            if (optopt == 'f')
                return dm_cli_usage_error("show", "--format needs a value (expected table, "
                                          "csv or json)");
            if (optopt != 0)
                return dm_cli_usage_error("show", "unknown option '-%c' (%s)", optopt, usage);
            return dm_cli_usage_error("show", "unknown option '%s' (%s)", argv[optind - 1],
                                      usage);
        }
    }
    if (optind >= argc)
        return dm_cli_usage_error("show", "no results file given (%s)", usage);
    if (argc - optind > 1)
        return dm_cli_usage_error("show", "one results file at a time, got '%s' and '%s' (%s)",
                                  argv[optind], argv[optind + 1], usage);
    if (sweeps_only && tables_only)
        return dm_cli_usage_error("show", "--sweeps and --tables: one block at a time (%s)",
                                  usage);
    const char *path = argv[optind];

    dm_summary_row *rows = NULL;
    size_t n = 0;
    dm_sweep_summary *sweeps = NULL;
    size_t n_sweeps = 0;
    dm_error err;
    dm_error_clear(&err);
    /* all read before anything is printed: a damaged file prints one line, no half */
    dm_cli_guard_reads("show", path, NULL);
    dm_table_summary *tables = NULL;
    size_t n_tables = 0;
    dm_status st = dm_results_read_summary(path, &rows, &n, &err);
    if (st == DM_OK)
        st = dm_results_read_sweeps(path, &sweeps, &n_sweeps, &err);
    if (st == DM_OK)
        st = dm_results_read_tables(path, &tables, &n_tables, &err);
    dm_cli_unguard_reads();
    if (st != DM_OK) {
        free(rows);
        dm_sweep_summaries_free(sweeps, n_sweeps);
        return dm_cli_usage_error("show", "%s", err.msg);
    }
    if (sweeps_only && n_sweeps == 0 && format == DM_TABLE_TEXT) {
        printf("%s has no sweeps to show (a sweep: a method entry whose step or tolerance "
               "takes two or more values)\n", path); /* CSV and JSON: their empty table */
    } else if (sweeps_only) {
        dm_sweep_table_print(stdout, sweeps, n_sweeps, format);
    } else if (tables_only) {
        dm_tables_print(stdout, tables, n_tables, format);
    } else {
        dm_table_print(stdout, rows, n, format);
        /* CSV and JSON stay one table each: their sweeps come with --sweeps, their
         * typed tables with --tables */
        if (format == DM_TABLE_TEXT && dm_sweeps_listed(sweeps, n_sweeps) > 0) {
            fputc('\n', stdout);
            dm_sweep_table_print(stdout, sweeps, n_sweeps, format);
        }
        if (format == DM_TABLE_TEXT && n_tables > 0) {
            fputc('\n', stdout);
            dm_tables_print(stdout, tables, n_tables, format);
        }
    }
    free(tables);
    dm_sweep_summaries_free(sweeps, n_sweeps);
    free(rows);
    return 0;
}
