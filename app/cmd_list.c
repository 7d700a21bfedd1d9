/* cmd_list.c — `driftmark list [--json]`: every problem with its parameters and regimes,
 * and every method of the integrators' registry. */
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
        int wname = 4;
        for (int k = 0; k < pr->n_params; k++) {
            int len = (int)strlen(pr->params[k].name);
            if (len > wname)
                wname = len;
        }
        printf("    %-*s  %-10s  %-24s  %s\n", wname, "parameter", "default", "range",
               "meaning");
        for (int k = 0; k < pr->n_params; k++) {
            const dm_param *p = &pr->params[k];
            char def[40], range[96];
            dm_number_text(p->fallback, def, sizeof def);
            dm_param_range_text(p, range, sizeof range);
            printf("    %-*s  %-10s  %-24s  %s%s\n", wname, p->name, def, range, p->meaning,
                   (p->flags & DM_PARAM_START) ? " [starting state: give at most one]" : "");
        }
        for (int k = 0; k < pr->n_regimes; k++)
            printf("    %-*s  %s: %s\n", wname, k == 0 ? "regimes" : "", pr->regimes[k].id,
                   pr->regimes[k].meaning);
        for (int k = 0; k < pr->n_invariants; k++)
            printf("    %-*s  %s\n", wname, k == 0 ? "invariants" : "",
                   pr->invariant_names[k]);
    }

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

int dm_cmd_list(int argc, char **argv)
{
    bool json;
    int code = dm_cli_json_option(CMD, argc, argv,
                                  "usage: driftmark list [--json]\n"
                                  "  every problem with its parameters and regimes, and every "
                                  "method\n", &json);
    if (code >= 0)
        return code;
    if (optind < argc)
        return dm_cli_usage_error(CMD, "unexpected argument '%s' (list takes only --json)",
                                  argv[optind]);
    if (json)
        print_json();
    else
        print_text();
    return 0;
}
