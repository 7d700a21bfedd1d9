/* cmd_period.c — `driftmark period PROBLEM [key=value ...] [--json]`: the regime,
 * energy, closed-form period, starting state and first section crossing of one
 * starting state, all from the problem's setup (no integration). */
#include <getopt.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "dm_json.h"
#include "dm_number_text.h"
#include "orbit_period.h"
#include "problem.h"

#define CMD "period"

static const char usage[] =
    "usage: driftmark period PROBLEM [key=value ...] [--json]\n"
    "  prints the regime, energy, closed-form period, starting state and first\n"
    "  section crossing time of PROBLEM (see `driftmark list` for the keys)\n";

static void print_vector_text(const char *label, const double *v, int n)
{
    printf("%-16s", label);
    for (int i = 0; i < n; i++)
        printf("%s%.17g", i ? " " : "", v[i]);
    printf("\n");
}

static void print_vector_json(const double *v, int n)
{
    printf("[");
    for (int i = 0; i < n; i++) {
        printf("%s", i ? ", " : "");
        dm_json_number(stdout, v[i], "%.17g");
    }
    printf("]");
}

static double potential_of(void *data, double q)
{
    const dm_instance *inst = data;
    return inst->problem->potential(inst, &q);
}

static double slope_of(void *data, double q)
{
    const dm_instance *inst = data;
    double g;
    dm_problem_gradient(inst->problem)(inst, &q, &g);
    return g;
}

/* An independent check of the closed-form period, for one degree of freedom and
 * T = p^2 / (2 m): the period integral between the turning points
 * (problems/include/orbit_period.h). NaN, with the reason, where it does not apply. */
static double period_by_quadrature(const dm_instance *inst, char *why, size_t size)
{
    const dm_problem *pr = inst->problem;
    if (inst->dof != 1) {
        snprintf(why, size, "applies to one degree of freedom with T = p^2 / (2 m)");
        return NAN;
    }
    double p1 = 1.0, p2 = 2.0, t1 = pr->kinetic(inst, &p1), t2 = pr->kinetic(inst, &p2);
    if (!(t1 > 0.0) || t2 != 4.0 * t1) {
        snprintf(why, size, "applies to one degree of freedom with T = p^2 / (2 m)");
        return NAN;
    }
    if (strcmp(pr->regimes[inst->regime].id, "rotation") == 0) {
        snprintf(why, size, "a rotation has no turning points: the check between them does "
                 "not apply");
        return NAN;
    }
    dm_orbit o;
    dm_error err = { 0 };
    double reach = 1e3 * fmax(1.0, fabs(inst->q0[0]));
    if (dm_orbit_period(potential_of, slope_of, (void *)inst, 0.5 / t1, inst->energy,
                        inst->q0[0], reach, pr->id, &o, &err) != DM_OK) {
        double v0 = pr->potential(inst, inst->q0);
        if (inst->energy < v0 + pr->kinetic(inst, inst->p0))
            /* a start built from an energy next to a separatrix: its energy is evaluated
             * without cancellation (results/README.md), V in double arithmetic is not */
            snprintf(why, size, "V(q0) = %.17g in double arithmetic lies above the start's "
                     "energy, which is evaluated without cancellation: a quadrature in double "
                     "arithmetic cannot resolve this orbit's turning point", v0);
        else
            snprintf(why, size, "%s", err.msg);
        return NAN;
    }
    return o.period;
}

static void print_text(const dm_instance *inst)
{
    const dm_problem *pr = inst->problem;
    printf("%-16s%s\n", "problem", pr->id);
    const char *label = "parameters";
    for (int i = 0; i < pr->n_params; i++) {
        bool start = pr->params[i].flags & DM_PARAM_START;
        bool given = inst->given & (1u << i);
        /* Of the ways of starting only the one given: which fallback a setup used when
         * none was given is its own business, and q0, p0, energy below show the state. */
        if (start && !given)
            continue;
        char value[40]; /* the shortest text that reads back as the same double */
        dm_number_text(inst->param[i], value, sizeof value);
        printf("%-16s%s = %s%s\n", label, pr->params[i].name, value,
               given ? "" : " (default)");
        label = "";
    }
    printf("%-16s%s\n", "regime", pr->regimes[inst->regime].id);
    printf("%-16s%.17g\n", "energy", inst->energy);
    if (inst->problem->no_period)
        printf("%-16s- (the problem has no closed-form period: a run measures it from the "
               "section crossings)\n", "period");
    else
        printf("%-16s%.17g\n", "period", inst->period);
    char why[DM_ERROR_MSG_MAX];
    double tq = period_by_quadrature(inst, why, sizeof why);
    if (isnan(tq))
        printf("%-16s- (%s)\n", "period_check", why);
    else
        printf("%-16s%.17g (quadrature between the turning points: relative difference "
               "%.1e)\n", "period_check", tq, fabs(tq - inst->period) / inst->period);
    print_vector_text("q0", inst->q0, inst->dof);
    print_vector_text("p0", inst->p0, inst->dof);
    printf("%-16sq[%d] = %.17g upward\n", "section", inst->section.coord, inst->section.level);
    printf("%-16s%.17g\n", "first_crossing", inst->first_crossing);
}

/* One "key": number pair, after a ", " unless it is the first. */
static void print_json_number(const char *key, double v)
{
    printf(", ");
    dm_json_string(stdout, key);
    printf(": ");
    dm_json_number(stdout, v, "%.17g");
}

static void print_json(const dm_instance *inst)
{
    const dm_problem *pr = inst->problem;
    printf("{\"problem\": ");
    dm_json_string(stdout, pr->id);
    printf(", \"parameters\": {");
    bool first = true;
    for (int i = 0; i < pr->n_params; i++) {
        if ((pr->params[i].flags & DM_PARAM_START) && !(inst->given & (1u << i)))
            continue;
        printf("%s", first ? "" : ", ");
        dm_json_string(stdout, pr->params[i].name);
        printf(": ");
        dm_json_number(stdout, inst->param[i], "%.17g");
        first = false;
    }
    printf("}, \"regime\": ");
    dm_json_string(stdout, pr->regimes[inst->regime].id);
    print_json_number("energy", inst->energy);
    print_json_number("period", inst->period);
    char why[DM_ERROR_MSG_MAX];
    print_json_number("period_quadrature", period_by_quadrature(inst, why, sizeof why));
    printf(", \"q0\": ");
    print_vector_json(inst->q0, inst->dof);
    printf(", \"p0\": ");
    print_vector_json(inst->p0, inst->dof);
    printf(", \"section\": {\"coord\": %d", inst->section.coord);
    print_json_number("level", inst->section.level);
    printf("}");
    print_json_number("first_crossing", inst->first_crossing);
    printf("}\n");
}

int dm_cmd_period(int argc, char **argv)
{
    bool json;
    int code = dm_cli_json_option(CMD, argc, argv, usage, &json);
    if (code >= 0)
        return code;
    if (optind >= argc)
        return dm_cli_usage_error(CMD, "missing PROBLEM (see `driftmark list`)");

    const char *id = argv[optind++];
    const dm_problem *problem = dm_problem_find(id);
    if (problem == NULL && strchr(id, '/') != NULL) {
        /* a path: a problem from the user's own compiled code */
        char hash[17];
        dm_error lerr = { 0 };
        if (dm_problem_load(id, &problem, hash, &lerr) != DM_OK)
            return dm_cli_usage_error(CMD, "%s", lerr.msg);
    }
    if (problem == NULL) {
        const char *names[64];
        size_t n_names = dm_problem_count < 64 ? dm_problem_count : 64;
        for (size_t i = 0; i < n_names; i++)
            names[i] = dm_problems[i]->id;
        const char *hint = dm_suggest(id, names, n_names);
        if (hint)
            return dm_cli_usage_error(CMD, "unknown problem '%s' (did you mean '%s'?)", id,
                                      hint);
        return dm_cli_usage_error(CMD, "unknown problem '%s' (see `driftmark list`)", id);
    }

    enum { MAX_PAIRS = 2 * DM_MAX_PARAMS, KEY_SIZE = 64 };
    size_t n = (size_t)(argc - optind);
    if (n > MAX_PAIRS)
        return dm_cli_usage_error(CMD, "%s: too many key=value pairs (%zu; it has %d parameters)",
                                  problem->id, n, problem->n_params);
    char key_store[MAX_PAIRS][KEY_SIZE];
    const char *keys[MAX_PAIRS];
    double values[MAX_PAIRS];
    for (size_t k = 0; k < n; k++) {
        int rc = dm_cli_parse_pair(CMD, argv[optind + (int)k], key_store[k], KEY_SIZE,
                                   &values[k]);
        if (rc != 0)
            return rc;
        keys[k] = key_store[k];
    }

    dm_instance inst;
    dm_error err;
    dm_error_clear(&err);
    dm_status st = dm_instance_init(&inst, problem, n, keys, values, &err);
    if (st != DM_OK) {
        fprintf(stderr, "driftmark: %s: %s\n", CMD, err.msg);
        return st == DM_EINPUT ? 2 : 1;
    }
    if (json)
        print_json(&inst);
    else
        print_text(&inst);
    return 0;
}
