/* cmd_list.c — `driftmark list [--json]`: every problem with its parameters and regimes,
 * and every method of the integrators' registry; `list --table METHOD`: a built-in
 * method's coefficients in the suite's form. */
#include <getopt.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "dm_json.h"
#include "dm_number_text.h"
#include "method.h"
#include "problem.h"
#include "user_table.h"

#define CMD "list"

static const char *yes_no(bool b)
{
    return b ? "yes" : "no";
}

/* The order column: "1-5" for a variable-order method (its orders), else the order. */
static void order_text(const dm_method *m, char *buf, size_t size)
{
    if (m->variable_order)
        snprintf(buf, size, "1-%d", m->order);
    else
        snprintf(buf, size, "%d", m->order);
}

/* The forces-per-step column: a count, or the word for what decides it. */
static void forces_text(const dm_method *m, char *buf, size_t size)
{
    if (m->adaptive)
        snprintf(buf, size, "adaptive");
    else if (m->force_evals_per_step == 0)
        snprintf(buf, size, "iterative");   /* one per iteration of the step's solve */
    else
        snprintf(buf, size, "%d", m->force_evals_per_step);
}

static void print_text(void)
{
    printf("problems\n");
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pr = dm_problems[i];
        if (pr->needs_data) /* its size comes with its data (nbody: 3 per body) */
            printf("\n  %s - %s (up to %d degrees of freedom)\n", pr->id, pr->name, pr->dof);
        else
            printf("\n  %s - %s (%d degree%s of freedom)\n", pr->id, pr->name, pr->dof,
                   pr->dof == 1 ? "" : "s");
        /* columns as wide as their widest cell ("invariants" heads the first) */
        int wname = (int)strlen("invariants"), wdef = (int)strlen("default"),
            wrange = (int)strlen("range");
        for (int k = 0; k < pr->n_params; k++) {
            const dm_param *p = &pr->params[k];
            char def[40], range[96];
            dm_number_text(p->fallback, def, sizeof def);
            dm_param_range_text(p, range, sizeof range);
            int len[3] = { (int)strlen(p->name), (int)strlen(def), (int)strlen(range) };
            wname = len[0] > wname ? len[0] : wname;
            wdef = len[1] > wdef ? len[1] : wdef;
            wrange = len[2] > wrange ? len[2] : wrange;
        }
        printf("    %-*s  %-*s  %-*s  %s\n", wname, "parameter", wdef, "default", wrange,
               "range", "meaning");
        for (int k = 0; k < pr->n_params; k++) {
            const dm_param *p = &pr->params[k];
            char def[40], range[96];
            dm_number_text(p->fallback, def, sizeof def);
            dm_param_range_text(p, range, sizeof range);
            printf("    %-*s  %-*s  %-*s  %s%s\n", wname, p->name, wdef, def, wrange, range,
                   p->meaning,
                   (p->flags & DM_PARAM_START) ? " [starting state: give at most one]" : "");
        }
        for (int k = 0; k < pr->n_regimes; k++)
            printf("    %-*s  %s: %s\n", wname, k == 0 ? "regimes" : "", pr->regimes[k].id,
                   pr->regimes[k].meaning);
        for (int k = 0; k < pr->n_invariants; k++)
            printf("    %-*s  %s\n", wname, k == 0 ? "invariants" : "",
                   pr->invariant_names[k]);
    }
    printf("\n  your own: a problems entry {potential: FORMULA, ...} in a suite, or a problem\n"
           "  from your own C code (README: \"Your own system\")\n");

    printf("\nmethods\n");
    if (dm_method_count == 0) {
        printf("  (none registered yet)\n");
        return;
    }
    int wid = 2, wfam = 6;
    for (size_t i = 0; i < dm_method_count; i++) {
        int len = (int)strlen(dm_methods[i]->id);
        if (len > wid)
            wid = len;
        len = (int)strlen(dm_family_name(dm_methods[i]->family));
        if (len > wfam)
            wfam = len;
    }
    printf("  %-*s  %-*s  %5s  %10s  %9s  %11s  %s\n", wid, "id", wfam, "family", "order",
           "symplectic", "symmetric", "forces/step", "name");
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        char forces[16], order[16];
        forces_text(m, forces, sizeof forces);
        order_text(m, order, sizeof order);
        printf("  %-*s  %-*s  %5s  %10s  %9s  %11s  %s\n", wid, m->id, wfam,
               dm_family_name(m->family), order, yes_no(m->symplectic),
               yes_no(m->symmetric), forces, m->name);
    }
    printf("\n  your own: a methods entry {table: {...}} in a suite (README: \"Your own method\";\n"
           "  `driftmark list --table ID` prints a built-in one in that form)\n");
}

static void print_json(void)
{
    printf("{\"problems\": [");
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pr = dm_problems[i];
        printf("%s{\"id\": ", i ? ", " : "");
        dm_json_string(stdout, pr->id);
        printf(", \"name\": ");
        dm_json_string(stdout, pr->name);
        printf(", \"dof\": %d, \"parameters\": [", pr->dof);
        for (int k = 0; k < pr->n_params; k++) {
            const dm_param *p = &pr->params[k];
            printf("%s{\"name\": ", k ? ", " : "");
            dm_json_string(stdout, p->name);
            printf(", \"default\": ");
            dm_json_number(stdout, p->fallback, NULL);
            printf(", \"min\": ");
            dm_json_number(stdout, p->min, NULL);
            printf(", \"min_open\": %s, \"max\": ",
                   dm_param_min_open(p) ? "true" : "false");
            dm_json_number(stdout, p->max, NULL);
            printf(", \"max_open\": %s, \"start\": %s, \"meaning\": ",
                   dm_param_max_open(p) ? "true" : "false",
                   (p->flags & DM_PARAM_START) ? "true" : "false");
            dm_json_string(stdout, p->meaning);
            printf("}");
        }
        printf("], \"regimes\": [");
        for (int k = 0; k < pr->n_regimes; k++) {
            printf("%s{\"id\": ", k ? ", " : "");
            dm_json_string(stdout, pr->regimes[k].id);
            printf(", \"meaning\": ");
            dm_json_string(stdout, pr->regimes[k].meaning);
            printf("}");
        }
        printf("], \"invariants\": [");
        for (int k = 0; k < pr->n_invariants; k++) {
            printf("%s", k ? ", " : "");
            dm_json_string(stdout, pr->invariant_names[k]);
        }
        printf("]}");
    }
    printf("], \"methods\": [");
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        printf("%s{\"id\": ", i ? ", " : "");
        dm_json_string(stdout, m->id);
        printf(", \"name\": ");
        dm_json_string(stdout, m->name);
        printf(", \"family\": ");
        dm_json_string(stdout, dm_family_name(m->family));
        char forces[16], order[16];
        forces_text(m, forces, sizeof forces);
        order_text(m, order, sizeof order);
        /* order and force_evals_per_step are numbers only when they are one number */
        if (m->variable_order)
            printf(", \"order\": null");
        else
            printf(", \"order\": %d", m->order);
        printf(", \"max_order\": %d, \"order_text\": \"%s\", \"symplectic\": %s, "
               "\"symmetric\": %s, \"adaptive\": %s, \"force_evals_per_step\": ",
               m->order, order, m->symplectic ? "true" : "false",
               m->symmetric ? "true" : "false", m->adaptive ? "true" : "false");
        if (m->force_evals_per_step > 0)
            printf("%d", m->force_evals_per_step);
        else
            printf("null");
        printf(", \"force_evals_text\": \"%s\", \"reference\": ", forces);
        dm_json_string(stdout, m->reference);
        printf("}");
    }
    printf("]}\n");
}

/* `list --table METHOD`: a built-in table in the suite's form, a methods entry to copy
 * and change (under the name my-METHOD, which is no built-in's). */
static int print_table(const char *id)
{
    const dm_method *m = dm_method_find(id);
    if (m == NULL)
        return dm_cli_usage_error(CMD, "unknown method '%s' (expected a method of "
                                  "driftmark list)", id);
    char name[DM_TABLE_NAME_MAX], text[DM_TABLE_TEXT_MAX];
    snprintf(name, sizeof name, "my-%.*s", DM_TABLE_NAME_MAX - 4, m->id);
    if (dm_method_table_text(m, name, text, sizeof text) < 0)
        return dm_cli_usage_error(CMD, "%s has no coefficient table (expected a splitting "
                                  "or an explicit Runge-Kutta method)", id);
    printf("- table: %s\n  steps_per_period: 64\n", text);
    return 0;
}

static const char usage[] =
    "usage: driftmark list [--json] [--table METHOD]\n"
    "  every problem with its parameters and regimes, and every method;\n"
    "  --table METHOD prints a built-in method's coefficients as a suite's methods entry\n";

int dm_cmd_list(int argc, char **argv)
{
    static const struct option options[] = {
        { "json", no_argument, NULL, 'j' },
        { "table", required_argument, NULL, 't' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bool json = false;
    const char *table = NULL;
    opterr = 0; /* our own one-line messages */
    optind = 1;
    int c;
    while ((c = getopt_long(argc, argv, "h", options, NULL)) != -1) {
        switch (c) {
        case 'j': json = true; break;
        case 't': table = optarg; break;
        case 'h': fputs(usage, stdout); return 0;
        default:
            if (optopt == 't')
                return dm_cli_usage_error(CMD, "--table needs a method (try --help)");
            return dm_cli_usage_error(CMD, "unknown option '%s' (try --help)",
                                      argv[optind - 1]);
        }
    }
    if (optind < argc)
        return dm_cli_usage_error(CMD, "unexpected argument '%s' (list takes only --json "
                                  "and --table METHOD)", argv[optind]);
    if (table != NULL)
        return print_table(table);
    if (json)
        print_json();
    else
        print_text();
    return 0;
}
