/* formula.c — problems written in a suite as formulas (formula.h): reading the
 * formulas through GNU libmatheval, the evaluated functions (the fallback when nothing
 * is compiled), and the setup shared by both: the start, the period, the section. */
#include <float.h>
#include <inttypes.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <matheval.h>

#include "descent.h"
#include "dm_hash.h"
#include "formula_private.h"
#include "orbit_period.h"

/* Every formula problem made, so that dm_formula_info_of can tell one. */
enum { MAX_FORMULAS = 256 };
static formula_problem *made[MAX_FORMULAS];
static int n_made;

static formula_problem *of(const dm_instance *inst)
{
    return (formula_problem *)(void *)inst->problem;
}

const dm_formula_info *dm_formula_info_of(const dm_problem *problem)
{
    for (int i = 0; i < n_made; i++)
        if (&made[i]->table == problem)
            return &made[i]->info;
    return NULL;
}

/* ---- the evaluated functions ---- */

/* Puts q (or p) and the instance's parameters into the evaluators' values; the
 * constants are there from the start. Called with the lock held. */
static void load_values(formula_problem *F, const dm_instance *inst, const double *x, int slot0)
{
    for (int i = 0; i < F->dof; i++)
        F->values[slot0 + i] = x[i];
    for (int j = 0; j < F->n_user_params; j++)
        F->values[formula_param_slot(F, j)] = inst->param[j];
}

/* One evaluator at x (q or p, whose names start at slot0), under the lock. */
static double evaluate_one(const dm_instance *inst, const double *x, int slot0, void *e)
{
    formula_problem *F = of(inst);
    pthread_mutex_lock(&F->lock);
    load_values(F, inst, x, slot0);
    double v = evaluator_evaluate(e, F->n_names, F->names, F->values);
    pthread_mutex_unlock(&F->lock);
    return v;
}

/* One evaluator per coordinate at x, into out. */
static void evaluate_each(const dm_instance *inst, const double *x, int slot0, void *const *e,
                          double *out)
{
    formula_problem *F = of(inst);
    pthread_mutex_lock(&F->lock);
    load_values(F, inst, x, slot0);
    for (int i = 0; i < F->dof; i++)
        out[i] = evaluator_evaluate(e[i], F->n_names, F->names, F->values);
    pthread_mutex_unlock(&F->lock);
}

static double ev_potential(const dm_instance *inst, const double *q)
{
    return evaluate_one(inst, q, 0, of(inst)->V);
}

static void ev_gradient(const dm_instance *inst, const double *q, double *grad)
{
    evaluate_each(inst, q, 0, of(inst)->dV, grad);
}

static double ev_force(const dm_instance *inst, const double *q, double *grad)
{
    ev_gradient(inst, q, grad);
    return ev_potential(inst, q);
}

/* T = sum p_i^2 / (2 m_i) as the generated code writes it too (formula_compile.c):
 * 0.5 * p * p / m summed from the first term, which for m = 1 is the built-in problems'
 * 0.5 * p * p. */
static double mass_kinetic(const dm_instance *inst, const double *p)
{
    const formula_problem *F = of(inst);
    double sum = 0.5 * p[0] * p[0] / F->masses[0];
    for (int i = 1; i < F->dof; i++)
        sum += 0.5 * p[i] * p[i] / F->masses[i];
    return sum;
}

static void mass_velocity(const dm_instance *inst, const double *p, double *v)
{
    const formula_problem *F = of(inst);
    for (int i = 0; i < F->dof; i++)
        v[i] = p[i] / F->masses[i];
}

static double ev_kinetic(const dm_instance *inst, const double *p)
{
    return evaluate_one(inst, p, formula_momentum_slot(of(inst), 0), of(inst)->T);
}

static void ev_velocity(const dm_instance *inst, const double *p, double *v)
{
    evaluate_each(inst, p, formula_momentum_slot(of(inst), 0), of(inst)->dT, v);
}

/* ---- setup: the start, the period, the section ---- */

static double orbit_potential(void *data, double q)
{
    const dm_instance *inst = data;
    double x[DM_MAX_DOF] = { q };
    return inst->problem->potential(inst, x);
}

static double slope_at(const dm_instance *inst, double q)
{
    double x[DM_MAX_DOF] = { q }, g[DM_MAX_DOF];
    dm_problem_gradient(inst->problem)(inst, x, g);
    return g[0];
}

static double orbit_slope(void *data, double q)
{
    return slope_at(data, q);
}

/* The lowest point of V between the turning points: the lowest of 256 samples, then
 * the sign change of dV/dq next to it bisected to the last bit. */
static double lowest_point(const dm_instance *inst, double qm, double qp)
{
    enum { N = 256 };
    int best = 0;
    double best_v = INFINITY;
    for (int i = 0; i <= N; i++) {
        double v = orbit_potential((void *)inst, qm + (qp - qm) * i / N);
        if (v < best_v)
            best_v = v, best = i;
    }
    double a = qm + (qp - qm) * (best > 0 ? best - 1 : 0) / N;
    double b = qm + (qp - qm) * (best < N ? best + 1 : N) / N;
    if (!(slope_at(inst, a) < 0.0 && slope_at(inst, b) > 0.0))
        return qm + (qp - qm) * best / N;
    for (int it = 0; it < 2200; it++) {
        double mid = 0.5 * (a + b);
        if (mid <= a || mid >= b)
            break;
        double s = slope_at(inst, mid);
        if (s == 0.0)
            return mid;
        if (s < 0.0)
            a = mid;
        else
            b = mid;
    }
    return fabs(slope_at(inst, a)) <= fabs(slope_at(inst, b)) ? a : b;
}

/* The time of the start on its orbit, counted from the lower turning point. */
static double start_time(const dm_instance *inst, const dm_orbit *orbit, double E, double m)
{
    double q0 = inst->q0[0], p0 = inst->p0[0];
    double t = dm_orbit_time(orbit_potential, orbit_slope, (void *)inst, m, E, orbit, q0);
    if (p0 > 0.0)
        return t;
    if (p0 < 0.0)
        return orbit->period - t;
    return slope_at(inst, q0) > 0.0 ? 0.5 * orbit->period : 0.0;
}

/* One degree of freedom with masses: the period by quadrature, the section by default
 * through the lowest point of V going up, the first crossing from the start. */
static dm_status setup_orbit(dm_instance *inst, const formula_problem *F, dm_orbit *orbit,
                             dm_error *err)
{
    double m = F->masses[0], E = inst->energy;
    double reach = 1e4 * fmax(1.0, fabs(inst->q0[0]));
    dm_status st = dm_orbit_period(orbit_potential, orbit_slope, inst, m, E, inst->q0[0],
                                   reach, F->id, orbit, err);
    if (st != DM_OK)
        return st;
    inst->period = orbit->period;
    double low = lowest_point(inst, orbit->q_minus, orbit->q_plus);
    inst->has_v_min = true;
    inst->v_min = orbit_potential(inst, low);
    double level = F->section_given ? F->section_level : low;
    if (!(level > orbit->q_minus && level < orbit->q_plus))
        return dm_error_set(err, DM_EINPUT, "%s: the section level %.17g is not crossed by the "
                            "orbit, which stays between %.17g and %.17g", F->id, level,
                            orbit->q_minus, orbit->q_plus);
    inst->section = (dm_section){ .coord = 0, .level = level, .wrap = 0.0 };
    double up = dm_orbit_time(orbit_potential, orbit_slope, inst, m, E, orbit, level);
    double first = fmod(up - start_time(inst, orbit, E, m), orbit->period);
    inst->first_crossing = first > 0.0 ? first : first + orbit->period;
    return DM_OK;
}

/* Beyond one coordinate with masses: V_min is V at the local minimum reached downhill
 * from q0 along grad V, and T_min (a kinetic formula) T at the one reached from p0 along
 * grad T, so that E_scale = H0 - T_min - V_min moves with neither V nor T by an added
 * constant. Where either descent finds no minimum (it leaves 10^4 max(1, |q0|) of its
 * start, or meets a gradient or value that is not finite) there is none: |H0|. */
static void lowest_energy(dm_instance *inst, const formula_problem *F)
{
    int n = F->dof;
    double q[DM_MAX_DOF], p[DM_MAX_DOF];
    memcpy(q, inst->q0, sizeof(double) * (size_t)n);
    memcpy(p, inst->p0, sizeof(double) * (size_t)n);
    inst->has_v_min = false;
    inst->v_min = inst->t_min = 0.0;
    double qr = 0.0, pr = 0.0;
    for (int i = 0; i < n; i++)
        qr = fmax(qr, fabs(q[i])), pr = fmax(pr, fabs(p[i]));
    if (dm_descend(inst, dm_problem_gradient(inst->problem), n, q, 1e4 * fmax(1.0, qr)) !=
        DM_DESCENT_FOUND)
        return;
    double v_min = inst->problem->potential(inst, q), t_min = 0.0;
    if (F->has_kinetic) {
        if (dm_descend(inst, inst->problem->velocity, n, p, 1e4 * fmax(1.0, pr)) !=
            DM_DESCENT_FOUND)
            return;
        t_min = inst->problem->kinetic(inst, p);
    }
    if (!isfinite(v_min) || !isfinite(t_min))
        return;
    inst->has_v_min = true;
    inst->v_min = v_min;
    inst->t_min = t_min;
}

/* The start at rest on one side of the well around q0 at energy E. */
static dm_status start_from_energy(dm_instance *inst, const formula_problem *F, dm_error *err)
{
    double E = inst->param[F->energy_param];
    dm_orbit orbit;
    double well = inst->q0[0];
    dm_status st = dm_orbit_period(orbit_potential, orbit_slope, inst, F->masses[0], E, well,
                                   1e4 * fmax(1.0, fabs(well)), F->id, &orbit, err);
    if (st != DM_OK)
        return st;
    inst->q0[0] = F->side > 0 ? orbit.q_plus : orbit.q_minus;
    inst->p0[0] = 0.0;
    return DM_OK;
}

static dm_status setup(dm_instance *inst, dm_error *err)
{
    const formula_problem *F = of(inst);
    for (int i = 0; i < F->dof; i++) {
        inst->q0[i] = F->q0[i];
        inst->p0[i] = F->p0[i];
    }
    if (F->q0_param >= 0)
        inst->q0[0] = inst->param[F->q0_param];
    if (F->p0_param >= 0)
        inst->p0[0] = inst->param[F->p0_param];
    if (F->energy_param >= 0) {
        dm_status st = start_from_energy(inst, F, err);
        if (st != DM_OK)
            return st;
    }
    double V0 = inst->problem->potential(inst, inst->q0);
    if (!isfinite(V0))
        return dm_error_set(err, DM_EINPUT, "%s: V is not finite at the start (V = %g; "
                            "expected a finite potential where the run starts)", F->id,
                            fabs(V0));
    inst->energy = inst->problem->kinetic(inst, inst->p0) + V0;
    inst->regime = 0;
    if (F->period_given > 0.0 || inst->problem->no_period) {
        /* no period known to us: the user's, or none (no_period: the runner measures the
         * time between crossings); the section through the start */
        inst->period = F->period_given > 0.0 ? F->period_given : NAN;
        lowest_energy(inst, F);
        int c = F->section_given ? F->section_coordinate : 0;
        inst->section = (dm_section){ .coord = c,
                                      .level = F->section_given ? F->section_level
                                                                : inst->q0[c] };
        inst->first_crossing = inst->period;
        return DM_OK;
    }
    dm_orbit orbit;
    return setup_orbit(inst, F, &orbit, err);
}

/* ---- reading a spec ---- */

static bool is_identifier(const char *s)
{
    if (s == NULL || !(((*s | 32) >= 'a' && (*s | 32) <= 'z')))
        return false;
    for (const char *c = s; *c; c++)
        if (!(((*c | 32) >= 'a' && (*c | 32) <= 'z') || (*c >= '0' && *c <= '9') || *c == '_'))
            return false;
    return strlen(s) < DM_FORMULA_NAME_MAX;
}

/* The names a spec declares must be plain names, none twice, none a function or
 * libmatheval constant, none "energy" but the start's. */
static dm_status check_names(const dm_formula_spec *s, dm_error *err)
{
    const char *all[3 * DM_MAX_DOF + DM_MAX_PARAMS];
    const char *kind[3 * DM_MAX_DOF + DM_MAX_PARAMS];
    int n = 0;
    for (int i = 0; i < s->dof; i++) {
        all[n] = s->coordinates[i], kind[n++] = "coordinate";
        if (s->kinetic != NULL)
            all[n] = s->momenta[i], kind[n++] = "momentum";
    }
    for (int j = 0; j < s->n_params; j++)
        all[n] = s->param_names[j], kind[n++] = "parameter";
    for (int i = 0; i < n; i++) {
        if (!is_identifier(all[i]))
            return dm_error_set(err, DM_EINPUT, "%s name '%s' is not a plain name (expected "
                                "a letter, then letters, digits or '_')", kind[i], all[i]);
        if (dm_formula_is_function(all[i]) || dm_formula_is_constant(all[i]) ||
            (strcmp(all[i], "energy") == 0 && strcmp(kind[i], "parameter") != 0))
            return dm_error_set(err, DM_EINPUT, "%s name '%s' is taken (a function, a "
                                "constant or the start's energy)", kind[i], all[i]);
        for (int k = 0; k < i; k++)
            if (strcmp(all[i], all[k]) == 0)
                return dm_error_set(err, DM_EINPUT, "the name '%s' is given twice (as %s and "
                                    "%s)", all[i], kind[k], kind[i]);
    }
    return DM_OK;
}

static dm_status check_spec(const dm_formula_spec *s, dm_error *err)
{
    if (s->dof < 1 || s->dof > DM_MAX_DOF)
        return dm_error_set(err, DM_EINPUT, "%d coordinates (expected 1 to %d)", s->dof,
                            DM_MAX_DOF);
    for (int i = 0; i < s->dof; i++)
        if (s->kinetic == NULL && !(s->masses[i] > 0.0 && isfinite(s->masses[i])))
            return dm_error_set(err, DM_EINPUT, "mass %.17g of %s is not a positive number",
                                s->masses[i], s->coordinates[i]);
    bool computed = s->dof == 1 && s->kinetic == NULL;
    if (computed && s->period > 0.0)
        return dm_error_set(err, DM_EINPUT, "period is computed for one coordinate with "
                            "masses (expected no period key)");
    if (s->energy_start && !computed)
        return dm_error_set(err, DM_EINPUT, "a start from an energy needs one coordinate and "
                            "masses (expected q0 and p0)");
    if (s->section_given && (s->section_coordinate < 0 || s->section_coordinate >= s->dof))
        return dm_error_set(err, DM_EINPUT, "section coordinate %d out of range",
                            s->section_coordinate);
    return check_names(s, err);
}

/* Index of `name` among n names, or -1. */
static int find_name(const char *name, const char *const *names, int n)
{
    for (int i = 0; i < n; i++)
        if (strcmp(name, names[i]) == 0)
            return i;
    return -1;
}

/* Checks every name of one scanned formula: a function we know, a constant, one of
 * `vars` (coordinates or momenta) or a parameter; marks the parameters used. */
static dm_status check_used_names(const dm_formula_spec *s, const dm_formula_scan *scan,
                                  const char *const *vars, const char *var_kind,
                                  bool *used, int *column, dm_error *err)
{
    for (int k = 0; k < scan->n_names; k++) {
        const dm_formula_name *nm = &scan->names[k];
        *column = nm->column;
        if (nm->function) {
            if (!dm_formula_is_function(nm->name))
                return dm_error_set(err, DM_EINPUT, "unknown function '%s' (expected exp, "
                                    "log, sqrt, sin, cos, tan, asin, acos, atan, sinh, cosh, "
                                    "tanh, abs or erf; a power is x^y)", nm->name);
            continue;
        }
        int j = find_name(nm->name, s->param_names, s->n_params);
        if (j >= 0) {
            used[j] = true;
            continue;
        }
        if (find_name(nm->name, vars, s->dof) >= 0 || dm_formula_is_constant(nm->name))
            continue;
        /* the names it may use, as named (a default momentum is p with one coordinate,
         * p_x for each coordinate x of more: found by a tester), the first two and the
         * last of many */
        char known[160];
        if (s->dof == 1)
            snprintf(known, sizeof known, "the %s %.100s", var_kind, vars[0]);
        else
            snprintf(known, sizeof known, "a %s (%.40s, %.40s%s%.40s)", var_kind, vars[0],
                     vars[1], s->dof == 2 ? "" : s->dof == 3 ? ", " : ", ..., ",
                     s->dof == 2 ? "" : vars[s->dof - 1]);
        return dm_error_set(err, DM_EINPUT, "unknown name '%s' (expected %s, a parameter "
                            "given in this entry, pi or e)", nm->name, known);
    }
    *column = 0;
    return DM_OK;
}

/* Reads one formula: scanned, its names checked, parsed by libmatheval, differentiated
 * by each of `vars`. */
static dm_status read_formula(formula_problem *F, const dm_formula_spec *s, const char *text,
                              const char *const *vars, const char *var_kind, bool *used,
                              void **e, void **d, int *column, dm_error *err)
{
    dm_formula_scan scan;
    dm_status st = dm_formula_scan_text(text, F->constants, &F->n_constants, &scan, column,
                                        err);
    if (st != DM_OK)
        return st;
    st = check_used_names(s, &scan, vars, var_kind, used, column, err);
    if (st == DM_OK && (*e = evaluator_create(scan.text)) == NULL) {
        *column = dm_formula_error_column(text);
        st = dm_error_set(err, DM_EINPUT, "the formula does not parse here");
    }
    for (int i = 0; st == DM_OK && i < s->dof; i++)
        if ((d[i] = evaluator_derivative(*e, (char *)vars[i])) == NULL)
            st = dm_error_set(err, DM_ENOMEM, "out of memory differentiating a formula");
    dm_formula_scan_free(&scan);
    return st;
}

/* The evaluators' names and the constants' values. */
static dm_status name_slots(formula_problem *F, const dm_formula_spec *s, dm_error *err)
{
    F->n_names = formula_constant_slot(F, F->n_constants);
    for (int i = 0; i < F->dof; i++) {
        F->names[formula_coordinate_slot(F, i)] = strdup(s->coordinates[i]);
        F->names[formula_momentum_slot(F, i)] = strdup(s->kinetic ? s->momenta[i] : "_p");
    }
    for (int j = 0; j < F->n_user_params; j++)
        F->names[formula_param_slot(F, j)] = strdup(s->param_names[j]);
    for (int k = 0; k < F->n_constants; k++) {
        char name[32];
        snprintf(name, sizeof name, "_k%d", k);
        F->names[formula_constant_slot(F, k)] = strdup(name);
        F->values[formula_constant_slot(F, k)] = F->constants[k];
    }
    for (int i = 0; i < F->n_names; i++)
        if (F->names[i] == NULL)
            return dm_error_set(err, DM_ENOMEM, "out of memory reading a formula");
    return DM_OK;
}

/* The record and the hash of everything that makes the problem. */
static void describe(formula_problem *F, const dm_formula_spec *s)
{
    dm_formula_info *info = &F->info;
    info->potential = F->potential_text;
    info->kinetic = F->kinetic_text != NULL ? F->kinetic_text : "";
    size_t cu = 0, mu = 0;
    uint64_t h = dm_hash_text(F->potential_text);
    h = dm_hash_bytes(h, "\n", 1);
    if (F->kinetic_text != NULL)
        h = dm_hash_bytes(h, F->kinetic_text, strlen(F->kinetic_text));
    char buf[160];
    for (int i = 0; i < F->dof; i++) {
        /* cut to fit (the hash below takes every name and mass) */
        if (cu < sizeof info->coordinates)
            cu += (size_t)snprintf(info->coordinates + cu, sizeof info->coordinates - cu,
                                   "%s%s", i ? " " : "", s->coordinates[i]);
        if (F->kinetic_text == NULL && mu < sizeof info->masses)
            mu += (size_t)snprintf(info->masses + mu, sizeof info->masses - mu, "%s%.17g",
                                   i ? " " : "", F->masses[i]);
        snprintf(buf, sizeof buf, " %s %s %a %a %a", s->coordinates[i],
                 s->kinetic ? s->momenta[i] : "", F->masses[i], F->q0[i], F->p0[i]);
        h = dm_hash_bytes(h, buf, strlen(buf));
    }
    for (int j = 0; j < F->n_user_params; j++)
        h = dm_hash_bytes(h, F->param_names[j], strlen(F->param_names[j]) + 1);
    snprintf(buf, sizeof buf, " %d %d %d %d %a %a", F->energy_param, F->side,
             F->section_given, F->section_coordinate, F->section_level, F->period_given);
    h = dm_hash_bytes(h, buf, strlen(buf));
    snprintf(info->hash, sizeof info->hash, "%016" PRIx64, h);
}

/* The table: the formulas' parameters (and the start's energy), one regime, the
 * evaluated functions (formula_compile.c may replace them). */
static void fill_table(formula_problem *F, const dm_formula_spec *s)
{
    dm_problem *t = &F->table;
    snprintf(F->id, sizeof F->id, "%s", s->id);
    snprintf(F->title, sizeof F->title, "written in the suite: V = %.200s", s->potential);
    t->id = F->id;
    t->name = F->title;
    t->dof = s->dof;
    for (int j = 0; j < s->n_params; j++) {
        snprintf(F->param_names[j], sizeof F->param_names[j], "%s", s->param_names[j]);
        t->params[j] = (dm_param){ F->param_names[j], s->param_defaults[j], -INFINITY,
                                   INFINITY, 0, "a parameter of the formulas" };
    }
    t->n_params = s->n_params;
    for (int j = F->n_user_params; j < s->n_params; j++)
        t->params[j].meaning = j == F->energy_param ? "total energy: the start at rest on the "
                                                      "side given of the well around q0"
                               : j == F->q0_param ? "starting position"
                                                  : "starting momentum";
    t->n_regimes = 1;
    t->regimes[0] = (dm_regime){ "orbit", "the orbit started (one regime: no separatrix is "
                                          "known to driftmark)" };
    /* Beyond one coordinate with masses no period is computed: the user's, or none
     * (horizon in time, step h, no phase figures: as for N-body) */
    t->no_period = !(s->dof == 1 && s->kinetic == NULL) && !(s->period > 0.0);
    t->setup = setup;
    t->potential = ev_potential;
    t->force = ev_force;
    t->gradient = ev_gradient;
    t->kinetic = F->has_kinetic ? ev_kinetic : mass_kinetic;
    t->velocity = F->has_kinetic ? ev_velocity : mass_velocity;
}

static dm_status read_spec(formula_problem *F, const dm_formula_spec *s, dm_formula_where *where,
                           dm_error *err)
{
    bool used[DM_MAX_PARAMS] = { false };
    where->formula = 0;
    dm_status st = read_formula(F, s, s->potential, s->coordinates, "coordinate", used, &F->V,
                                F->dV, &where->column, err);
    if (st == DM_OK && s->kinetic != NULL) {
        where->formula = 1;
        st = read_formula(F, s, s->kinetic, s->momenta, "momentum", used, &F->T, F->dT,
                          &where->column, err);
    }
    if (st != DM_OK)
        return st;
    where->formula = -1;
    for (int j = 0; j < F->n_user_params; j++)
        if (!used[j])
            return dm_error_set(err, DM_EINPUT, "parameter '%s' appears in no formula",
                                s->param_names[j]);
    return name_slots(F, s, err);
}

/* A problem refused before it was made: everything it holds. */
static void formula_free(formula_problem *F)
{
    void *e[2 + 2 * DM_MAX_DOF] = { F->V, F->T };
    for (int i = 0; i < F->dof; i++)
        e[2 + i] = F->dV[i], e[2 + DM_MAX_DOF + i] = F->dT[i];
    for (size_t i = 0; i < sizeof e / sizeof e[0]; i++)
        if (e[i] != NULL)
            evaluator_destroy(e[i]);
    for (int i = 0; i < F->n_names; i++)
        free(F->names[i]);
    free(F->potential_text);
    free(F->kinetic_text);
    pthread_mutex_destroy(&F->lock);
    free(F);
}

static dm_status make_problem(formula_problem *F, const dm_formula_spec *s,
                              dm_formula_where *where, dm_error *err);

dm_status dm_formula_create(const dm_formula_spec *s, const dm_problem **problem,
                            dm_formula_where *where, dm_error *err)
{
    *where = (dm_formula_where){ -1, 0 };
    dm_status st = check_spec(s, err);
    if (st != DM_OK)
        return st;
    if (n_made == MAX_FORMULAS)
        return dm_error_set(err, DM_EINPUT, "more than %d formula problems", MAX_FORMULAS);
    formula_problem *F = calloc(1, sizeof *F);
    if (F == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory reading a formula");
    pthread_mutex_init(&F->lock, NULL);
    if ((st = make_problem(F, s, where, err)) != DM_OK) {
        formula_free(F);
        return st;
    }
    made[n_made++] = F;
    *problem = &F->table;
    return DM_OK;
}

static dm_status make_problem(formula_problem *F, const dm_formula_spec *s,
                              dm_formula_where *where, dm_error *err)
{
    F->dof = s->dof;
    /* the start's parameters, after the formulas' (formula.h) */
    F->energy_param = find_name("energy", s->param_names, s->n_params);
    F->q0_param = s->dof == 1 ? find_name("q0", s->param_names, s->n_params) : -1;
    F->p0_param = s->dof == 1 ? find_name("p0", s->param_names, s->n_params) : -1;
    F->n_user_params = s->n_params - (F->energy_param >= 0) - (F->q0_param >= 0) -
                       (F->p0_param >= 0);
    if ((F->energy_param >= 0 && F->energy_param < F->n_user_params) ||
        (F->q0_param >= 0 && F->q0_param < F->n_user_params) ||
        (F->p0_param >= 0 && F->p0_param < F->n_user_params))
        return dm_error_set(err, DM_EINPUT, "the start's parameters (q0, p0, energy) must come "
                            "after the formulas'");
    if (F->energy_param >= 0 && F->p0_param >= 0)
        return dm_error_set(err, DM_EINPUT, "give either p0 or energy, not both (with energy "
                            "the start is at rest)");
    F->side = s->side;
    F->has_kinetic = s->kinetic != NULL;
    F->section_given = s->section_given;
    F->section_coordinate = s->section_coordinate;
    F->section_level = s->section_level;
    F->period_given = s->period;
    for (int i = 0; i < s->dof; i++) {
        F->q0[i] = s->q0[i];
        F->p0[i] = s->p0[i];
        F->masses[i] = s->kinetic ? 1.0 : s->masses[i];
    }
    F->potential_text = strdup(s->potential);
    F->kinetic_text = s->kinetic ? strdup(s->kinetic) : NULL;
    if (F->potential_text == NULL || (s->kinetic && F->kinetic_text == NULL))
        return dm_error_set(err, DM_ENOMEM, "out of memory reading a formula");
    dm_status st = read_spec(F, s, where, err);
    if (st != DM_OK)
        return st;
    fill_table(F, s);
    describe(F, s);
    F->info.code = DM_FORMULA_EVALUATED;
    F->info.compile_seconds = NAN;
    dm_error why = { 0 };
    if (dm_formula_compile(F, &why) != DM_OK)
        fprintf(stderr, "driftmark: warning: formula problem %s is evaluated by libmatheval, "
                        "not compiled (%s): runs will be slower\n", F->id, why.msg);
    return DM_OK;
}
