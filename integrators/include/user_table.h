/* user_table.h — a method the user types as a coefficient table in the suite instead of
 * naming a built-in one: a splitting (kick and drift coefficients, whole or as the first
 * half of a symmetric table), a composition of a built-in symmetric method with weights,
 * or an explicit Butcher tableau. The table becomes an ordinary dm_method: a splitting
 * or composition runs in the splitting engine and the problems' fused loops like a
 * built-in table, a Butcher tableau in rk.c and the fused Runge-Kutta loop like rk4.
 *
 * The suite reader (harness/) fills dm_table_input from the text and checks what it
 * can point at (finite numbers, lengths); dm_user_table_build expands the input into
 * the table that runs and says which list fails consistency; dm_user_table_check then
 * establishes what the table is: symmetry read off the coefficients, the order from
 * the order conditions (Butcher tableaux, rooted trees in quad precision) or measured
 * by a short convergence test (splittings and compositions), with the leading error
 * constant. Setup only: nothing here runs inside a run.
 */
#ifndef DM_USER_TABLE_H
#define DM_USER_TABLE_H

#include <stdbool.h>

#include "method.h"
#include "order_conditions.h"
#include "table_check.h"

#define DM_TABLE_NAME_MAX 32        /* a table's name, with its NUL (/summary's method) */
#define DM_TABLE_REFERENCE_MAX 256
#define DM_TABLE_MAX_COEFFICIENTS 64 /* kicks, drifts or weights one list may give */
#define DM_TABLE_MAX_OPS 256        /* kicks and drifts of the expanded splitting */
#define DM_TABLE_TEXT_MAX 8192      /* the table in suite form */
/* Relative tolerance of a consistency sum: |sum - 1| <= it * sum |c| (coefficients
 * typed to 15 significant digits miss 1 by a few 1e-16 each; a wrong digit by more). */
#define DM_TABLE_SUM_TOLERANCE 1e-13
/* Tolerance of a Runge-Kutta order condition (dm_rk_order). */
#define DM_TABLE_CONDITION_TOLERANCE 1e-12

typedef enum dm_table_form {
    DM_TABLE_SPLITTING,       /* kick and drift coefficients */
    DM_TABLE_COMPOSITION,     /* weights of a base method */
    DM_TABLE_RUNGE_KUTTA,     /* an explicit Butcher tableau */
    DM_TABLE_NYSTROM          /* an explicit Runge-Kutta-Nystrom table */
} dm_table_form;

const char *dm_table_form_name(dm_table_form form);

/* Which list of the input a consistency or shape error is about. */
typedef enum dm_table_list {
    DM_LIST_NONE, DM_LIST_KICK, DM_LIST_DRIFT, DM_LIST_WEIGHTS, DM_LIST_A, DM_LIST_B,
    DM_LIST_C, DM_LIST_BBAR
} dm_table_list;

/* What the user typed. */
typedef struct dm_table_input {
    dm_table_form form;
    char name[DM_TABLE_NAME_MAX];
    char reference[DM_TABLE_REFERENCE_MAX];  /* "" when none was given */
    int claimed_order;
    bool experimental;        /* runs go on when the claimed order is not reached */
    bool mirror;              /* kick/drift or weights are the first half, up to and
                                 including the middle coefficient, of a symmetric table */
    int first;                /* splitting: 1 kick first, 0 drift first, -1 not given */
    int n_kick, n_drift;
    double kick[DM_TABLE_MAX_COEFFICIENTS], drift[DM_TABLE_MAX_COEFFICIENTS];
    const dm_method *base;    /* composition: a built-in symmetric splitting */
    int n_weights;
    double weights[DM_TABLE_MAX_COEFFICIENTS];
    int stages;               /* Runge-Kutta: a is stages x stages, strictly lower */
    double a[DM_RK_MAX_STAGES][DM_RK_MAX_STAGES];  /* (Nystrom: abar) */
    double b[DM_RK_MAX_STAGES];
    bool c_given;             /* (always, for a Nystrom table) */
    double c[DM_RK_MAX_STAGES];
    double bbar[DM_RK_MAX_STAGES];                 /* Nystrom: the position weights */
} dm_table_input;

/* What dm_user_table_check established. */
typedef struct dm_table_findings {
    bool symmetric;           /* read off the coefficients */
    int order_found;          /* the order the table reaches (0: not even consistent) */
    const char *order_basis;  /* "order conditions" or "measured" */
    /* Butcher tableaux: the largest residual among the conditions of each order,
     * checked up to the claimed order + 1 */
    int conditions_checked_to;
    double condition_residual[DM_ORDER_MAX + 1];
    /* splittings: the convergence test on the harmonic oscillator and the pendulum */
    dm_measured_order measured[2];
} dm_table_findings;

/* The names of the problems the measured order comes from, in findings.measured order. */
extern const char *const dm_table_check_problems[2];

/* A user table: its input, the method it became (with the arrays that method points
 * to) and what the checks found. Owned by the suite that read it. */
typedef struct dm_user_table {
    dm_table_input input;
    dm_method method;
    dm_splitting splitting;
    double kick[DM_TABLE_MAX_OPS], drift[DM_TABLE_MAX_OPS];
    dm_rk_tableau tableau;
    dm_rkn_tableau nystrom;
    dm_table_findings findings;
    char text[DM_TABLE_TEXT_MAX];   /* the table in suite form, coefficients %.17g */
} dm_user_table;

/* Expands `in` into t->method (a splitting: the mirror image added, a composition
 * unrolled with neighbouring kicks or drifts merged; a Butcher tableau as it is) and
 * writes t->text. Fails (DM_EINPUT, *which naming the list) when a list's length does
 * not fit the form or a consistency sum is not 1. */
dm_status dm_user_table_build(dm_user_table *t, const dm_table_input *in,
                              dm_table_list *which, dm_error *err);

/* Symmetry, the order found and its basis, the error constants (t->findings). Fails
 * only when a check cannot run (out of memory, a problem that does not set up). */
dm_status dm_user_table_check(dm_user_table *t, dm_error *err);

/* Whether grad T of the problem is linear in p, as a Nystrom table needs: checked at two
 * momenta and their sum (to a relative 1e-12). */
bool dm_velocity_is_linear(const dm_instance *inst);

/* Whether the claimed order is reached. */
bool dm_user_table_reaches_claim(const dm_user_table *t);

/* The input in suite form (the text of a methods entry's `table:`, one line, every
 * coefficient to 17 significant digits, which read back give the same doubles); returns
 * the length, or -1 when it does not fit. */
int dm_table_input_text(const dm_table_input *in, char *buf, size_t size);

/* A built-in splitting or Butcher table written in suite form (the text of a methods
 * entry's `table:`), under the name `name`; returns the length, or -1 when the method
 * has no table. */
int dm_method_table_text(const dm_method *m, const char *name, char *buf, size_t size);

#endif
