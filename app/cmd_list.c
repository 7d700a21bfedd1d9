/* cmd_list.c — `driftmark list [--json]`: every problem with its parameters and regimes,
 * and every method of the integrators' registry. */
#include <getopt.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "method.h"
#include "problem.h"

#define CMD "list"

/* Shortest %g form that reads back as the same double (0.1 prints as 0.1, not
 * 0.10000000000000001). */
static void format_number(double v, char *buf, size_t size)
{
    if (isinf(v)) {
        snprintf(buf, size, "%sinf", v < 0 ? "-" : "");
        return;
    }
    for (int digits = 6; digits <= 17; digits++) {
        snprintf(buf, size, "%.*g", digits, v);
        if (strtod(buf, NULL) == v)
            return;
    }
}

static void format_range(const dm_param *p, char *buf, size_t size)
{
    char lo[40], hi[40];
    format_number(p->min, lo, sizeof lo);
    format_number(p->max, hi, sizeof hi);
    bool lo_open = isinf(p->min) || (p->flags & DM_PARAM_MIN_OPEN);
    bool hi_open = isinf(p->max) || (p->flags & DM_PARAM_MAX_OPEN);
    snprintf(buf, size, "%s%s, %s%s", lo_open ? "(" : "[", lo, hi, hi_open ? ")" : "]");
}

static void json_string(const char *s)
{
    putchar('"');
    for (const unsigned char *c = (const unsigned char *)(s ? s : ""); *c; c++) {
        switch (*c) {
        case '"': fputs("\\\"", stdout); break;
        case '\\': fputs("\\\\", stdout); break;
        case '\n': fputs("\\n", stdout); break;
        case '\t': fputs("\\t", stdout); break;
        case '\r': fputs("\\r", stdout); break;
        default:
            if (*c < 0x20)
                printf("\\u%04x", *c);
            else
                putchar(*c);
        }
    }
    putchar('"');
}

/* JSON has no infinity: an open-ended range bound is null. */
static void json_number(double v)
{
    if (!isfinite(v)) {
        fputs("null", stdout);
        return;
    }
    char buf[40];
    format_number(v, buf, sizeof buf);
    fputs(buf, stdout);
}

static const char *yes_no(bool b)
{
    return b ? "yes" : "no";
}

static void print_text(void)
{
    printf("problems\n");
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pr = dm_problems[i];
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
            format_number(p->fallback, def, sizeof def);
            format_range(p, range, sizeof range);
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
        char forces[16];
        if (m->adaptive)
            snprintf(forces, sizeof forces, "adaptive");
        else
            snprintf(forces, sizeof forces, "%d", m->force_evals_per_step);
        printf("  %-*s  %-*s  %5d  %10s  %9s  %11s  %s\n", wid, m->id, wfam,
               dm_family_name(m->family), m->order, yes_no(m->symplectic),
               yes_no(m->symmetric), forces, m->name);
    }
}

static void print_json(void)
{
    printf("{\"problems\": [");
    for (size_t i = 0; i < dm_problem_count; i++) {
        const dm_problem *pr = dm_problems[i];
        printf("%s{\"id\": ", i ? ", " : "");
        json_string(pr->id);
        printf(", \"name\": ");
        json_string(pr->name);
        printf(", \"dof\": %d, \"parameters\": [", pr->dof);
        for (int k = 0; k < pr->n_params; k++) {
            const dm_param *p = &pr->params[k];
            printf("%s{\"name\": ", k ? ", " : "");
            json_string(p->name);
            printf(", \"default\": ");
            json_number(p->fallback);
            printf(", \"min\": ");
            json_number(p->min);
            printf(", \"min_open\": %s, \"max\": ",
                   (isinf(p->min) || (p->flags & DM_PARAM_MIN_OPEN)) ? "true" : "false");
            json_number(p->max);
            printf(", \"max_open\": %s, \"start\": %s, \"meaning\": ",
                   (isinf(p->max) || (p->flags & DM_PARAM_MAX_OPEN)) ? "true" : "false",
                   (p->flags & DM_PARAM_START) ? "true" : "false");
            json_string(p->meaning);
            printf("}");
        }
        printf("], \"regimes\": [");
        for (int k = 0; k < pr->n_regimes; k++) {
            printf("%s{\"id\": ", k ? ", " : "");
            json_string(pr->regimes[k].id);
            printf(", \"meaning\": ");
            json_string(pr->regimes[k].meaning);
            printf("}");
        }
        printf("], \"invariants\": [");
        for (int k = 0; k < pr->n_invariants; k++) {
            printf("%s", k ? ", " : "");
            json_string(pr->invariant_names[k]);
        }
        printf("]}");
    }
    printf("], \"methods\": [");
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        printf("%s{\"id\": ", i ? ", " : "");
        json_string(m->id);
        printf(", \"name\": ");
        json_string(m->name);
        printf(", \"family\": ");
        json_string(dm_family_name(m->family));
        printf(", \"order\": %d, \"symplectic\": %s, \"symmetric\": %s, \"adaptive\": %s, "
               "\"force_evals_per_step\": %d, \"reference\": ",
               m->order, m->symplectic ? "true" : "false", m->symmetric ? "true" : "false",
               m->adaptive ? "true" : "false", m->force_evals_per_step);
        json_string(m->reference);
        printf("}");
    }
    printf("]}\n");
}

int dm_cmd_list(int argc, char **argv)
{
    static const struct option options[] = {
        { "json", no_argument, NULL, 'j' },
        { "help", no_argument, NULL, 'h' },
        { NULL, 0, NULL, 0 },
    };
    bool json = false;
    opterr = 0;
    optind = 1;
    int c;
    while ((c = getopt_long(argc, argv, "h", options, NULL)) != -1) {
        switch (c) {
        case 'j':
            json = true;
            break;
        case 'h':
            printf("usage: driftmark list [--json]\n"
                   "  every problem with its parameters and regimes, and every method\n");
            return 0;
        default:
            if (optopt != 0 && optopt != '?')
                return dm_cli_usage_error(CMD, "unknown option '-%c' (try --help)", optopt);
            return dm_cli_usage_error(CMD, "unknown option '%s' (try --help)",
                                      argv[optind - 1]);
        }
    }
    if (optind < argc)
        return dm_cli_usage_error(CMD, "unexpected argument '%s' (list takes only --json)",
                                  argv[optind]);
    if (json)
        print_json();
    else
        print_text();
    return 0;
}
