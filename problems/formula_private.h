/* formula_private.h — a formula problem as formula.c and formula_compile.c share it. */
#ifndef DM_FORMULA_PRIVATE_H
#define DM_FORMULA_PRIVATE_H

#include <pthread.h>

#include "formula.h"
#include "formula_text.h"

typedef struct formula_problem {
    dm_problem table;                 /* first: an instance's problem points here */
    dm_formula_info info;
    char id[DM_FORMULA_ID_MAX];
    char title[256];
    char param_names[DM_MAX_PARAMS][DM_FORMULA_NAME_MAX];
    int dof;
    int n_user_params;                /* the formulas' parameters: table params 0.. */
    int energy_param;                 /* the start's parameters' indices, or -1: energy, */
    int q0_param, p0_param;           /* q0 and p0 (one coordinate) */
    int side;
    double q0[DM_MAX_DOF], p0[DM_MAX_DOF], masses[DM_MAX_DOF];
    bool has_kinetic;
    bool section_given;
    int section_coordinate;
    double section_level;
    double period_given;
    char *potential_text, *kinetic_text;      /* as written (owned) */
    /* libmatheval: V, dV/dq_i, T, dT/dp_i */
    void *V, *dV[DM_MAX_DOF], *T, *dT[DM_MAX_DOF];
    /* the names the evaluators know: coordinates, momenta, parameters, constants */
    int n_names;
    char *names[2 * DM_MAX_DOF + DM_MAX_PARAMS + DM_FORMULA_MAX_CONSTANTS];
    double values[2 * DM_MAX_DOF + DM_MAX_PARAMS + DM_FORMULA_MAX_CONSTANTS];
    int n_constants;
    double constants[DM_FORMULA_MAX_CONSTANTS];
    pthread_mutex_t lock;             /* the evaluators are not safe to share */
} formula_problem;

/* The slots of names[] and values[]. */
static inline int formula_coordinate_slot(const formula_problem *F, int i) { (void)F; return i; }
static inline int formula_momentum_slot(const formula_problem *F, int i) { return F->dof + i; }
static inline int formula_param_slot(const formula_problem *F, int j) { return 2 * F->dof + j; }
static inline int formula_constant_slot(const formula_problem *F, int k)
{
    return 2 * F->dof + F->n_user_params + k;
}

/* Translates F's formulas to C, compiles them (or takes the cached object) and sets
 * the table's functions to the object's. On failure (no compiler, a compile error, a
 * derivative the translation cannot reproduce) returns an error whose message says
 * why, and leaves the table as it is. */
dm_status dm_formula_compile(formula_problem *F, dm_error *err);

#endif
