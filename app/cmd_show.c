/* cmd_show.c — `driftmark show FILE.h5 [--format table|csv|json]`: print the summary
 * table of a results file. */
#include <getopt.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "harness.h"

static const char usage[] = "usage: driftmark show FILE.h5 [--format table|csv|json]";

int dm_cmd_show(int argc, char **argv)
{
    static const struct option options[] = {
        { "format", required_argument, NULL, 'f' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    dm_table_format format = DM_TABLE_TEXT;
    optind = 0; /* glibc: full re-initialisation, in case getopt ran before */
    opterr = 0; /* our own one-line messages */
    int c;
    while ((c = getopt_long(argc, argv, "f:h", options, NULL)) != -1) {
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
    const char *path = argv[optind];

    dm_summary_row *rows = NULL;
    size_t n = 0;
    dm_error err;
    dm_error_clear(&err);
    if (dm_results_read_summary(path, &rows, &n, &err) != DM_OK)
        return dm_cli_usage_error("show", "%s", err.msg);
    dm_table_print(stdout, rows, n, format);
    free(rows);
    return 0;
}
