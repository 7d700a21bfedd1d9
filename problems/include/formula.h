/* formula.h — problems written in a suite as formulas: a separable H = T(p) + V(q)
 * with named coordinates, V a formula in them and in named parameters, T from masses
 * or a formula in the momenta. GNU libmatheval parses the formulas and derives the
 * gradients symbolically; the formulas are then translated to C and compiled into a
 * shared object with the problem interface's fused loop (formula_compile.c), or, with
 * no compiler, evaluated by libmatheval.
 *
 * Everything here runs while a suite is read, before any run starts: libmatheval's
 * parser keeps global state, so no formula is parsed while a thread runs. The problems
 * made live for the rest of the process.
 */
#ifndef DM_FORMULA_H
#define DM_FORMULA_H

#include <stdbool.h>

#include "problem.h"

#define DM_FORMULA_TEXT_MAX 65536
#define DM_FORMULA_ID_MAX 64

/* What a suite entry gives. Pointers are borrowed for the call. */
typedef struct dm_formula_spec {
    const char *id;                          /* the runs' name part ("formula") */
    const char *potential;                   /* V(q; parameters) */
    const char *kinetic;                     /* T(p; parameters), or NULL: masses */
    int dof;                                 /* 1 .. DM_MAX_DOF */
    const char *coordinates[DM_MAX_DOF];     /* names of q */
    const char *momenta[DM_MAX_DOF];         /* names of p (with a kinetic formula) */
    double masses[DM_MAX_DOF];               /* T = sum p_i^2 / (2 m_i) without one */
    int n_params;                            /* the formulas' parameters ... */
    const char *param_names[DM_MAX_PARAMS];
    double param_defaults[DM_MAX_PARAMS];    /* ... and a value of each (the first given) */
    bool energy_start;    /* one dof: the parameter "energy" gives the start, at rest on
                             `side` of the well around q0[0] */
    int side;             /* +1 the upper turning point, -1 the lower one */
    double q0[DM_MAX_DOF], p0[DM_MAX_DOF];
    bool section_given;
    int section_coordinate;
    double section_level;
    double period;        /* > 0: given; else computed (one dof with masses) or none */
} dm_formula_spec;

/* Where a refused spec went wrong: which formula (0 the potential, 1 the kinetic
 * energy, -1 neither) and the column inside it. */
typedef struct dm_formula_where {
    int formula;
    int column;
} dm_formula_where;

/* How a formula problem's functions run. */
typedef enum dm_formula_code {
    DM_FORMULA_COMPILED,   /* generated C, compiled into a shared object */
    DM_FORMULA_EVALUATED   /* libmatheval's evaluator (no compiler, or it failed) */
} dm_formula_code;

/* What the results file records of a formula problem. */
typedef struct dm_formula_info {
    const char *potential, *kinetic;       /* as written ("" for masses) */
    char coordinates[1024];                /* "x y" */
    char masses[1024];                     /* "1 1", or "" with a kinetic formula */
    char hash[17];                         /* of everything that makes the problem */
    dm_formula_code code;
    char compiler[1024];                   /* path and flags, "" when evaluated */
    char flags[2048];
    char object[2048];                     /* the shared object, "" when evaluated */
    double compile_seconds;                /* 0 when taken from the cache; NaN: none */
} dm_formula_info;

/* Builds the problem of `spec` (parses, differentiates, compiles or falls back, with
 * one line on stderr for the compile time or the fallback). Bad input: DM_EINPUT, a
 * message without location and *where. */
dm_status dm_formula_create(const dm_formula_spec *spec, const dm_problem **problem,
                            dm_formula_where *where, dm_error *err);

/* The record of a formula problem, or NULL for any other problem. */
const dm_formula_info *dm_formula_info_of(const dm_problem *problem);

/* The environment variable naming the compiler (empty: none, so formulas are
 * evaluated); unset: the compiler driftmark was built with. */
#define DM_FORMULA_CC_ENV "DRIFTMARK_FORMULA_CC"

#endif
