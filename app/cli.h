/* cli.h — the command line. Each command lives in its own app/cmd_*.c file and is
 * one row of the table in cli.c. Commands return the process exit status:
 * 0 success, 2 bad input, 1 any other failure. */
#ifndef DM_CLI_H
#define DM_CLI_H

#include <stdbool.h>
#include <stdio.h>

#include "harness.h"

int dm_cli_main(int argc, char **argv);

int dm_cmd_list(int argc, char **argv);
int dm_cmd_period(int argc, char **argv);
int dm_cmd_show(int argc, char **argv);
int dm_cmd_run(int argc, char **argv);
int dm_cmd_bench(int argc, char **argv);
int dm_cmd_choose(int argc, char **argv);
int dm_cmd_compare(int argc, char **argv);

/* Splits "key=value" into a key (copied into key, size bytes) and a parsed finite
 * double. Writes a one-line message to stderr and returns 2 on bad input. */
int dm_cli_parse_pair(const char *command, const char *arg, char *key, size_t size,
                      double *value);

/* Reads the options of a command whose only options are --json and --help (GNU
 * getopt_long permutes: they may come anywhere among its other arguments, which are
 * argv[optind..] after it). Returns -1 to go on, with *json set; 0 after printing
 * `usage` for --help; 2 after a one-line message for an unknown option. */
int dm_cli_json_option(const char *command_name, int argc, char **argv, const char *usage,
                       bool *json);

/* Reads a --format value (table, csv or json) into *format; 0, or the usage error's
 * exit status (2) with its one line printed. */
int dm_cli_format_option(const char *command, const char *value, dm_table_format *format);

/* Prints "driftmark: <command>: <message>" to stderr and returns 2. */
int dm_cli_usage_error(const char *command, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Writes the time now, UTC, as 2024-01-31T12:00:00Z (the results file's start time). */
void dm_cli_utc_now(char *buf, size_t size);

/* A path "$TMPDIR/NAME" (or /tmp/NAME when TMPDIR is unset or empty). */
void dm_cli_temp_path(char *buf, size_t size, const char *name);

/* While a results file from outside is read (show, compare, choose, run --resume): a
 * fault inside HDF5 (a damaged global heap makes it copy past its memory; nothing tells
 * such a file beforehand) prints "driftmark: COMMAND: cannot read WHAT: the file is
 * damaged ..." and exits 2, after removing `temp` (NULL: nothing). Unguard when done:
 * a fault elsewhere is a bug and must show as one. */
void dm_cli_guard_reads(const char *command, const char *what, const char *temp);
void dm_cli_unguard_reads(void);

/* Frees results[0..n) and the array itself; NULL is fine. */
void dm_cli_free_results(dm_run_result *results, size_t n);

#endif
