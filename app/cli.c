/* cli.c — dispatch of driftmark's commands, --help and --version. */
#include "cli.h"

#include <getopt.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "dm_build_info.h"
#include "dm_error.h"

typedef struct command {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *usage;
    const char *summary;
} command;

static const command commands[] = {
    { "run", dm_cmd_run, "run [SUITE.yaml] [-o OUT.h5] [-j N] [--force]",
      "run a suite (default: the built-in one) and write its results file" },
    { "run", dm_cmd_run, "run --resume FILE.h5 [-j N]",
      "continue an interrupted suite from its results file" },
    { "list", dm_cmd_list, "list [--json]", "every problem and method with its parameters" },
    { "period", dm_cmd_period, "period PROBLEM [key=value ...] [--json]",
      "regime, energy and closed-form period of one starting state" },
    { "show", dm_cmd_show, "show FILE.h5 [--format table|csv|json]",
      "the summary table of a results file" },
    { "choose", dm_cmd_choose,
      "choose FILE.h5 --energy-error X [...]",
      "the cheapest method and step for a target accuracy, from a results file" },
    { "compare", dm_cmd_compare,
      "compare OLD.h5 NEW.h5 [...]",
      "what got better or worse between two results files (exit 4: something worse)" },
    { "bench", dm_cmd_bench, "bench [--quick] [--json]",
      "cost of the harness against hand-written loops, of HDF5 and of the CVODE adapter" },
};
static const size_t n_commands = sizeof commands / sizeof commands[0];

static void print_help(FILE *out)
{
    fprintf(out,
            "driftmark %s - long-run energy and phase benchmarks of time integrators\n"
            "for conservative (Hamiltonian) systems.\n\n"
            "usage: driftmark COMMAND [ARGS]\n\n",
            DM_VERSION);
    for (size_t i = 0; i < n_commands; i++)
        fprintf(out, "  driftmark %-47s %s\n", commands[i].usage, commands[i].summary);
    fprintf(out, "  driftmark %-47s %s\n", "--help", "this text");
    fprintf(out, "  driftmark %-47s %s\n", "--version", "version and build provenance");
}

int dm_cli_usage_error(const char *command_name, const char *fmt, ...)
{
    /* one line, whatever bytes a path or option held */
    char raw[DM_ERROR_MSG_MAX * 2], clean[DM_ERROR_MSG_MAX * 2];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(raw, sizeof raw, fmt, ap);
    va_end(ap);
    dm_escape_controls(raw, clean, sizeof clean);
    fprintf(stderr, "driftmark: %s: %s\n", command_name, clean);
    return 2;
}

int dm_cli_parse_pair(const char *command_name, const char *arg, char *key, size_t size,
                      double *value)
{
    const char *eq = strchr(arg, '=');
    if (eq == NULL || eq == arg)
        return dm_cli_usage_error(command_name, "'%s' is not of the form key=value", arg);
    size_t len = (size_t)(eq - arg);
    if (len >= size)
        return dm_cli_usage_error(command_name, "key in '%s' is too long", arg);
    memcpy(key, arg, len);
    key[len] = '\0';
    if (dm_parse_double(eq + 1, value) != 0)
        return dm_cli_usage_error(command_name,
                                  "value of '%s' is not a finite number: '%s'", key, eq + 1);
    return 0;
}

int dm_cli_json_option(const char *command_name, int argc, char **argv, const char *usage,
                       bool *json)
{
    static const struct option options[] = {
        { "json", no_argument, NULL, 'j' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    *json = false;
    opterr = 0; /* our own one-line messages */
    optind = 1;
    int c;
    while ((c = getopt_long(argc, argv, "h", options, NULL)) != -1) {
        switch (c) {
        case 'j':
            *json = true;
            break;
        case 'h':
            fputs(usage, stdout);
            return 0;
        default:
            if (optopt != 0 && optopt != '?')
                return dm_cli_usage_error(command_name, "unknown option '-%c' (try --help)", optopt);
            return dm_cli_usage_error(command_name, "unknown option '%s' (try --help)",
                                      argv[optind - 1]);
        }
    }
    return -1;
}

void dm_cli_utc_now(char *buf, size_t size)
{
    time_t now = time(NULL);
    struct tm tm;
    gmtime_r(&now, &tm);
    strftime(buf, size, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

void dm_cli_temp_path(char *buf, size_t size, const char *name)
{
    const char *dir = getenv("TMPDIR");
    if (dir == NULL || *dir == '\0')
        dir = "/tmp";
    snprintf(buf, size, "%s/%s", dir, name);
}

void dm_cli_free_results(dm_run_result *results, size_t n)
{
    if (results == NULL)
        return;
    for (size_t i = 0; i < n; i++)
        dm_run_result_free(&results[i]);
    free(results);
}

int dm_cli_main(int argc, char **argv)
{
    if (argc < 2) {
        print_help(stderr);
        return 2;
    }
    const char *name = argv[1];
    if (strcmp(name, "--help") == 0 || strcmp(name, "-h") == 0 || strcmp(name, "help") == 0) {
        print_help(stdout);
        return 0;
    }
    if (strcmp(name, "--version") == 0) {
        printf("driftmark %s (commit %s; %s; %s)\n", DM_VERSION, DM_GIT_COMMIT, DM_COMPILER,
               DM_C_FLAGS);
        return 0;
    }
    for (size_t i = 0; i < n_commands; i++)
        if (strcmp(commands[i].name, name) == 0)
            return commands[i].run(argc - 1, argv + 1);

    const char *names[sizeof commands / sizeof commands[0]];
    for (size_t i = 0; i < n_commands; i++)
        names[i] = commands[i].name;
    const char *hint = dm_suggest(name, names, n_commands);
    char clean[256];
    dm_escape_controls(name, clean, sizeof clean);
    if (hint)
        fprintf(stderr, "driftmark: unknown command '%s' (did you mean '%s'?)\n", clean, hint);
    else
        fprintf(stderr, "driftmark: unknown command '%s' (try --help)\n", clean);
    return 2;
}

int dm_cli_format_option(const char *command_name, const char *value,
                         dm_table_format *format)
{
    static const struct { const char *name; dm_table_format format; } formats[] = {
        { "table", DM_TABLE_TEXT }, { "csv", DM_TABLE_CSV }, { "json", DM_TABLE_JSON },
    };
    for (size_t i = 0; i < sizeof formats / sizeof formats[0]; i++)
        if (strcmp(value, formats[i].name) == 0) {
            *format = formats[i].format;
            return 0;
        }
    return dm_cli_usage_error(command_name, "unknown format '%s' (expected table, csv or "
                              "json)", value);
}

/* ---- reading a file from outside ----
 * HDF5 1.10 reads a variable-length value (a text attribute) through the file's global
 * heap without checking the sizes stored there: one flipped bit (an object's size of
 * 8 GiB) makes it copy past its memory. No HDF5 call tells such a heap beforehand, so
 * while a file from outside is read, a fault inside the library ends the process with
 * the one line any damaged file gets (and the temporary file of a --resume removed). */
static char guard_line[2 * DM_ERROR_MSG_MAX];
static size_t guard_len;
static char guard_temp[4096];

static void on_fault(int sig)
{
    (void)sig;
    if (guard_temp[0] != '\0')
        unlink(guard_temp);
    ssize_t written = write(STDERR_FILENO, guard_line, guard_len);
    (void)written;
    _exit(2);
}

void dm_cli_guard_reads(const char *command_name, const char *what, const char *temp)
{
    char shown[DM_ERROR_MSG_MAX];
    dm_escape_controls(what, shown, sizeof shown);
    snprintf(guard_line, sizeof guard_line, "driftmark: %s: cannot read %s: the file is "
             "damaged (HDF5 failed inside it)\n", command_name, shown);
    guard_len = strlen(guard_line);
    snprintf(guard_temp, sizeof guard_temp, "%s", temp != NULL ? temp : "");
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_fault;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGSEGV, &sa, NULL);
    sigaction(SIGBUS, &sa, NULL);
}

void dm_cli_unguard_reads(void)
{
    signal(SIGSEGV, SIG_DFL);
    signal(SIGBUS, SIG_DFL);
    guard_temp[0] = '\0';
}
