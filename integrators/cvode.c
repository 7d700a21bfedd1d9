/* cvode.c — the CVODE adapter (SUNDIALS 6.4): variable-order, variable-step BDF and
 * Adams methods, driven one internal step per call.
 *
 * The Hamiltonian system is handed to CVODE as the first-order ODE y = (q, p),
 * y' = f(y) = (grad T(p), -grad V(q)). CVODE keeps its own state and history (the
 * Nordsieck array), so `from` is only checked against the time CVODE stands at; the
 * step writes CVODE's output straight into `to->x` (the output vector's data pointer is
 * pointed at it), so nothing copies the state and nothing is allocated per step.
 *
 * The adapter must cost next to nothing over calling CVODE directly (`driftmark bench`
 * measures it), so a step does only what it needs: CVODE's counters are read when the
 * counts are asked for (dm_stepper_counts, a restart, a failure, the step that reaches
 * t_stop), not after every step; per step it reads only the nonlinear iterations, for
 * the most one step needed. The right-hand side calls the problem's two functions
 * through pointers read once at create.
 *
 * Source: A. C. Hindmarsh et al., "SUNDIALS: Suite of nonlinear and
 * differential/algebraic equation solvers", ACM TOMS 31 (2005) 363-396.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cvode/cvode.h>
#include <cvode/cvode_ls.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sunlinsol/sunlinsol_dense.h>
#include <sunmatrix/sunmatrix_dense.h>
#include <sunnonlinsol/sunnonlinsol_fixedpoint.h>
#include <sunnonlinsol/sunnonlinsol_newton.h>

#include "cvode.h"
#include "method.h"

extern const dm_method dm_cvode_bdf;

/* Default absolute tolerance when the configuration gives atol <= 0: a thousandth of
 * rtol. Our problems are nondimensional with states of order one, where the relative
 * part of the weight rtol |y_i| governs; the absolute floor only matters while a
 * component passes through zero (p at every turning point), and a floor well below
 * rtol keeps it from loosening the control there (common practice). */
double dm_default_atol(double rtol)
{
    return 1e-3 * rtol;
}

typedef struct cvode_stepper {
    dm_stepper base; /* must stay first: the harness holds a dm_stepper * */
    bool newton;     /* BDF + Newton + dense linear solver; else Adams + fixed point */
    /* inst->problem's functions, read once for the right-hand side */
    void (*velocity)(const dm_instance *inst, const double *p, double *v);
    double (*force)(const dm_instance *inst, const double *q, double *grad);
    SUNContext ctx;
    void *mem;
    N_Vector y;      /* output vector: its data pointer is aimed at the caller's buffer */
    SUNMatrix jac;   /* NULL for Adams */
    SUNLinearSolver ls;
    SUNNonlinearSolver nls;
    double t;        /* where CVODE stands: the time of the last point handed out */
    bool has_stop;   /* t_stop is finite */
    double tout;     /* CVode's tout: t_stop, or a point one time unit ahead when there
                        is no stop (in CV_ONE_STEP mode it only gives the direction and
                        bounds the first step) */
    long nni_last;   /* nonlinear iterations after the previous step */
    dm_counts carried; /* CVODE's counters before the last CVodeReInit (which zeroes them) */
    /* base.counts holds force_evals, velocity_evals and max_iters_in_step always
     * current; the fields read from CVODE only after sync_counts. */
    char cvode_msg[320]; /* CVODE's own text for the last error or warning */
} cvode_stepper;

/* y' = (grad T(p), -grad V(q)): one velocity and one force evaluation. CVODE's vectors
 * here are its own serial ones, so their data is read without a call. */
static int rhs(sunrealtype t, N_Vector y, N_Vector ydot, void *user_data)
{
    cvode_stepper *c = user_data;
    const dm_instance *inst = c->base.inst;
    const int dof = c->base.dof;
    const double *x = NV_DATA_S(y);
    double *dx = NV_DATA_S(ydot);
    c->velocity(inst, x + dof, dx);
    c->force(inst, x, dx + dof);
    /* 0 * dx[i] is 0 for every finite dx[i] and NaN for an infinite or NaN one: one
     * test for the whole vector, no branch per component. */
    double nonfinite = 0.0;
    for (int i = 0; i < dof; i++) {
        dx[dof + i] = -dx[dof + i];
        nonfinite += 0.0 * dx[i] + 0.0 * dx[dof + i];
    }
    c->base.counts.force_evals++;
    c->base.counts.velocity_evals++;
    return nonfinite == 0.0 ? 0 : 1; /* 1, recoverable: CVODE retries with a smaller step */
}

/* J = df/dy = [[0, d2T/dp2], [-Hess V(q), 0]], column-major.
 * d2T/dp2 comes from central differences of velocity(): exact up to rounding for the
 * quadratic kinetic energies T = p^2/(2m) all our problems have, and a Newton
 * Jacobian needs no more for any smooth T. The step per component is
 * cbrt(eps) * max(1, |p_j|), which balances truncation against rounding for a central
 * difference (common practice). Scratch lives on the stack: nothing is allocated. */
int dm_cvode_jacobian(const dm_instance *inst, const double *x, double *jac)
{
    const int dof = inst->dof, n = 2 * dof;
    const double *p = x + dof;
    double p_shift[DM_MAX_DOF], v_plus[DM_MAX_DOF], v_minus[DM_MAX_DOF];
#define DM_J(i, j) jac[(size_t)(j) * (size_t)n + (size_t)(i)]
    /* Hess V (dof x dof, row-major) is written into the last dof^2 words of jac, which
     * lie in its right half (the last 2 dof^2), before it is moved into the lower left
     * block (the first 2 dof^2 words): no scratch of dof^2 on the stack. */
    const size_t nn = (size_t)n * (size_t)n, dd = (size_t)dof * (size_t)dof;
    double *hess = jac + (nn - dd);
    for (size_t k = 0; k < nn; k++)
        jac[k] = 0.0;
    inst->problem->hessian(inst, x, hess);
    for (int i = 0; i < dof; i++)
        for (int j = 0; j < dof; j++)
            DM_J(dof + i, j) = -hess[i * dof + j];
    for (size_t k = 0; k < dd; k++)
        hess[k] = 0.0;

    const double cbrt_eps = 6.0554544523933395e-06; /* cbrt(2^-52) */
    for (int j = 0; j < dof; j++)
        p_shift[j] = p[j];
    for (int j = 0; j < dof; j++) {
        double delta = cbrt_eps * fmax(1.0, fabs(p[j]));
        delta = (p[j] + delta) - p[j]; /* the spacing really represented */
        p_shift[j] = p[j] + delta;
        inst->problem->velocity(inst, p_shift, v_plus);
        p_shift[j] = p[j] - delta;
        inst->problem->velocity(inst, p_shift, v_minus);
        p_shift[j] = p[j];
        for (int i = 0; i < dof; i++)
            DM_J(i, dof + j) = (v_plus[i] - v_minus[i]) / (2.0 * delta);
    }
#undef DM_J
    return 2 * dof;
}

/* CVODE's Jacobian callback: SUNDenseMatrix data is column-major with leading
 * dimension 2 dof, the layout dm_cvode_jacobian writes. */
static int jacobian(sunrealtype t, N_Vector y, N_Vector fy, SUNMatrix J, void *user_data,
                    N_Vector tmp1, N_Vector tmp2, N_Vector tmp3)
{
    cvode_stepper *c = user_data;
    int evals = dm_cvode_jacobian(c->base.inst, N_VGetArrayPointer(y), SM_DATA_D(J));
    c->base.counts.velocity_evals += (uint64_t)evals;
    return 0;
}

/* Keeps CVODE's message for our error text instead of letting CVODE print it: the
 * harness decides what to show. */
static void keep_message(int error_code, const char *module, const char *function,
                         char *msg, void *user_data)
{
    cvode_stepper *c = user_data;
    snprintf(c->cvode_msg, sizeof c->cvode_msg, "%s: %s", function, msg);
}

/* Brings s->counts up to date from CVODE's counters (plus those carried over a
 * restart). Not called per step: dm_stepper_counts, restart, failure and the step that
 * reaches t_stop call it. */
static void update_counts(cvode_stepper *c)
{
    long nst = 0, nfe = 0, nfe_ls = 0, nje = 0, netf = 0, nni = 0, ncfn = 0;
    CVodeGetNumSteps(c->mem, &nst);
    CVodeGetNumRhsEvals(c->mem, &nfe);
    CVodeGetNumErrTestFails(c->mem, &netf);
    CVodeGetNonlinSolvStats(c->mem, &nni, &ncfn);
    if (c->newton) {
        CVodeGetNumJacEvals(c->mem, &nje);
        CVodeGetNumLinRhsEvals(c->mem, &nfe_ls); /* difference-quotient Jacobian calls */
    }
    dm_counts *n = &c->base.counts;
    const dm_counts *k = &c->carried;
    n->steps = k->steps + (uint64_t)nst;
    n->rhs_evals = k->rhs_evals + (uint64_t)nfe + (uint64_t)nfe_ls;
    n->jac_evals = k->jac_evals + (uint64_t)nje;
    n->error_test_fails = k->error_test_fails + (uint64_t)netf;
    n->conv_fails = k->conv_fails + (uint64_t)ncfn;
    n->nonlin_iters = k->nonlin_iters + (uint64_t)nni;
}

static void cvode_sync_counts(dm_stepper *s)
{
    update_counts((cvode_stepper *)s);
}

/* One error text for every CVODE failure: our method, CVODE's flag name, where it
 * happened, and CVODE's own words. */
static dm_status cvode_failure(cvode_stepper *c, const char *call, int flag)
{
    char *name = CVodeGetReturnFlagName(flag); /* malloc'ed by CVODE */
    double t_now = c->t;
    if (c->mem != NULL)
        CVodeGetCurrentTime(c->mem, &t_now);
    dm_status st = dm_error_set(&c->base.error, DM_ESOLVER,
                                "%s: %s returned %s at t = %.17g after %llu steps%s%s",
                                c->base.method->id, call, name ? name : "an unknown flag",
                                t_now, (unsigned long long)c->base.counts.steps,
                                c->cvode_msg[0] ? ": " : "", c->cvode_msg);
    free(name);
    return st;
}

static dm_status setup_failure(cvode_stepper *c, dm_error *err, const char *call, int flag)
{
    cvode_failure(c, call, flag);
    if (err != NULL)
        *err = c->base.error;
    return DM_ESOLVER;
}

static void cvode_destroy(dm_stepper *s)
{
    cvode_stepper *c = (cvode_stepper *)s;
    if (c == NULL)
        return;
    if (c->mem != NULL)
        CVodeFree(&c->mem);
    if (c->nls != NULL)
        SUNNonlinSolFree(c->nls);
    if (c->ls != NULL)
        SUNLinSolFree(c->ls);
    if (c->jac != NULL)
        SUNMatDestroy(c->jac);
    if (c->y != NULL)
        N_VDestroy(c->y);
    if (c->ctx != NULL)
        SUNContext_Free(&c->ctx);
    free(c);
}

/* The configuration an adaptive run needs: a positive rtol, a finite atol, a stop time
 * that gives the direction. */
static dm_status check_config(const dm_method *m, const dm_point *start,
                              const dm_method_config *config, dm_error *err)
{
    if (!(config->rtol > 0.0) || !isfinite(config->rtol))
        return dm_error_set(err, DM_EINPUT, "%s: rtol = %g must be a positive number",
                            m->id, config->rtol);
    if (!isfinite(config->atol))
        return dm_error_set(err, DM_EINPUT, "%s: atol = %g must be finite", m->id,
                            config->atol);
    if (isnan(config->t_stop) || config->t_stop == start->t)
        return dm_error_set(err, DM_EINPUT,
                            "%s: t_stop = %g must differ from the start time %g (it also "
                            "sets the direction of integration)",
                            m->id, config->t_stop, start->t);
    return DM_OK;
}

enum { NO_MEMORY = -1000 }; /* not a CVODE flag: an allocation failed */

/* BDF: Newton iterations with a dense linear solver and our Jacobian when the problem
 * has a Hessian; Adams: fixed-point iterations. Returns a CVODE flag (naming the call)
 * or NO_MEMORY. */
static int attach_solver(cvode_stepper *c, sunindextype n, const char **call)
{
    int flag = CV_SUCCESS;
    if (c->newton) {
        c->nls = SUNNonlinSol_Newton(c->y, c->ctx);
        c->jac = SUNDenseMatrix(n, n, c->ctx);
        if (c->nls == NULL || c->jac == NULL)
            return NO_MEMORY;
        c->ls = SUNLinSol_Dense(c->y, c->jac, c->ctx);
        if (c->ls == NULL)
            return NO_MEMORY;
        *call = "CVodeSetLinearSolver";
        if ((flag = CVodeSetLinearSolver(c->mem, c->ls, c->jac)) != CV_SUCCESS)
            return flag;
        if (c->base.inst->problem->hessian != NULL) {
            *call = "CVodeSetJacFn";
            if ((flag = CVodeSetJacFn(c->mem, jacobian)) != CV_SUCCESS)
                return flag;
        } /* else CVODE's difference-quotient Jacobian */
    } else {
        c->nls = SUNNonlinSol_FixedPoint(c->y, 0, c->ctx); /* no Anderson acceleration */
        if (c->nls == NULL)
            return NO_MEMORY;
    }
    return CV_SUCCESS;
}

static dm_stepper *cvode_create(const dm_method *m, const dm_instance *inst,
                                const dm_method_config *config, const dm_point *start,
                                dm_error *err)
{
    if (check_config(m, start, config, err) != DM_OK)
        return NULL;

    cvode_stepper *c = calloc(1, sizeof *c);
    if (c == NULL)
        return dm_error_set(err, DM_ENOMEM, "%s: out of memory", m->id), NULL;
    c->base.method = m;
    c->base.inst = inst;
    c->base.dof = inst->dof;
    c->base.config = *config;
    if (!(c->base.config.atol > 0.0))
        c->base.config.atol = dm_default_atol(config->rtol);
    c->newton = (m == &dm_cvode_bdf);
    c->velocity = inst->problem->velocity;
    c->force = inst->problem->force;
    c->t = start->t;
    c->has_stop = isfinite(config->t_stop);
    c->tout = c->has_stop ? config->t_stop : start->t + copysign(1.0, config->t_stop);

    const sunindextype n = 2 * inst->dof;
    const char *call = "SUNContext_Create";
    int flag = SUNContext_Create(NULL, &c->ctx);
    if (flag != 0)
        goto fail;
    c->y = N_VNewEmpty_Serial(n, c->ctx);
    if (c->y == NULL)
        goto nomem;
    N_VSetArrayPointer(start->x, c->y);

    c->mem = CVodeCreate(c->newton ? CV_BDF : CV_ADAMS, c->ctx);
    if (c->mem == NULL)
        goto nomem;
    call = "CVodeSetErrHandlerFn";
    if ((flag = CVodeSetErrHandlerFn(c->mem, keep_message, c)) != CV_SUCCESS)
        goto fail;
    call = "CVodeInit"; /* copies start->x into CVODE's history */
    if ((flag = CVodeInit(c->mem, rhs, start->t, c->y)) != CV_SUCCESS)
        goto fail;
    call = "CVodeSetUserData";
    if ((flag = CVodeSetUserData(c->mem, c)) != CV_SUCCESS)
        goto fail;
    call = "CVodeSStolerances";
    if ((flag = CVodeSStolerances(c->mem, c->base.config.rtol, c->base.config.atol)) !=
        CV_SUCCESS)
        goto fail;
    call = "CVodeSetMaxOrd";
    if ((flag = CVodeSetMaxOrd(c->mem, m->order)) != CV_SUCCESS)
        goto fail;
    if (c->has_stop) {
        call = "CVodeSetStopTime";
        if ((flag = CVodeSetStopTime(c->mem, config->t_stop)) != CV_SUCCESS)
            goto fail;
    }

    if ((flag = attach_solver(c, n, &call)) == NO_MEMORY)
        goto nomem;
    if (flag != CV_SUCCESS)
        goto fail;
    call = "CVodeSetNonlinearSolver";
    if ((flag = CVodeSetNonlinearSolver(c->mem, c->nls)) != CV_SUCCESS)
        goto fail;
    N_VSetArrayPointer(NULL, c->y);
    return &c->base;

fail:
    setup_failure(c, err, call, flag);
    cvode_destroy(&c->base);
    return NULL;
nomem:
    dm_error_set(err, DM_ENOMEM, "%s: out of memory creating CVODE objects", m->id);
    cvode_destroy(&c->base);
    return NULL;
}

static dm_status cvode_step(dm_stepper *s, const dm_point *from, dm_point *to)
{
    cvode_stepper *c = (cvode_stepper *)s;
    if (from->t != c->t)
        return dm_error_set(&s->error, DM_EINPUT,
                            "%s: step from t = %.17g, but CVODE stands at t = %.17g "
                            "(restart it to move)",
                            s->method->id, from->t, c->t);
    if (c->has_stop && c->t == s->config.t_stop)
        return dm_error_set(&s->error, DM_EINPUT, "%s: already at t_stop = %.17g",
                            s->method->id, s->config.t_stop);
    c->cvode_msg[0] = '\0';
    NV_DATA_S(c->y) = to->x; /* N_VSetArrayPointer without the call */
    /* CV_ONE_STEP: one internal step (the stop time, set in create, keeps it from
     * passing t_stop); CVODE writes the step's end straight into to->x. */
    int flag = CVode(c->mem, c->tout, c->y, &c->t, CV_ONE_STEP);
    to->t = c->t;
    to->potential = NAN;
    /* Iterations of the step just taken, its rejected attempts included: the one
     * counter read every step, since a maximum cannot be had afterwards. */
    long nni = 0;
    CVodeGetNumNonlinSolvIters(c->mem, &nni);
    uint64_t in_step = (uint64_t)(nni - c->nni_last);
    if (in_step > s->counts.max_iters_in_step)
        s->counts.max_iters_in_step = in_step;
    c->nni_last = nni;
    if (flag < 0) {
        update_counts(c); /* for the steps in the message, and whole after a failure */
        return cvode_failure(c, "CVode", flag);
    }
    /* A caller that reads s->counts directly at the end of a run still sees them whole. */
    if (c->has_stop && c->t == s->config.t_stop)
        update_counts(c);
    return DM_OK;
}

static dm_status cvode_restart(dm_stepper *s, const dm_point *at)
{
    cvode_stepper *c = (cvode_stepper *)s;
    update_counts(c);
    /* CVodeReInit zeroes CVODE's counters: carry what they held so far. */
    c->carried = s->counts;
    c->carried.force_evals = c->carried.velocity_evals = 0; /* ours, never reset */
    c->nni_last = 0;
    c->cvode_msg[0] = '\0';
    N_VSetArrayPointer(at->x, c->y);
    int flag = CVodeReInit(c->mem, at->t, c->y);
    N_VSetArrayPointer(NULL, c->y);
    if (flag != CV_SUCCESS)
        return cvode_failure(c, "CVodeReInit", flag);
    c->t = at->t;
    if (!c->has_stop)
        c->tout = at->t + copysign(1.0, s->config.t_stop);
    if (c->has_stop) {
        if (at->t == s->config.t_stop)
            return dm_error_set(&s->error, DM_EINPUT, "%s: restart at t_stop = %.17g",
                                s->method->id, at->t);
        /* The stop time is cleared once reached: set it again for the new run. */
        flag = CVodeSetStopTime(c->mem, s->config.t_stop);
        if (flag != CV_SUCCESS)
            return cvode_failure(c, "CVodeSetStopTime", flag);
    }
    return DM_OK;
}

/* Checkpoints (method.h): nothing of CVODE's own (its history and step size are not
 * saved); a load restarts it at the point, carrying the work counted so far. */
static size_t cvode_save(const dm_stepper *s, uint64_t *words, size_t capacity)
{
    (void)s;
    (void)words;
    (void)capacity;
    return 0;
}

static dm_status cvode_load(dm_stepper *s, const uint64_t *words, size_t n,
                            const dm_point *at, const dm_counts *counts)
{
    (void)words;
    if (n != 0)
        return dm_error_set(&s->error, DM_EINPUT, "%s: a checkpoint of %zu words, not 0",
                            s->method->id, n);
    dm_status st = cvode_restart(s, at);
    if (st != DM_OK)
        return st;
    cvode_stepper *c = (cvode_stepper *)s;
    s->counts = *counts;
    c->carried = *counts;
    c->carried.force_evals = c->carried.velocity_evals = 0; /* ours, never reset */
    c->carried.max_iters_in_step = 0;
    return DM_OK;
}

/* `order` holds the maximum order: CVODE varies the order from 1 up to it. */
const dm_method dm_cvode_bdf = {
    .id = "cvode-bdf",
    .name = "CVODE variable-order BDF (orders 1-5), Newton iteration, dense linear solver",
    .reference = "A. C. Hindmarsh et al., ACM TOMS 31 (2005) 363-396 (SUNDIALS CVODE)",
    .family = DM_FAMILY_ADAPTIVE,
    .order = 5,
    .variable_order = true,
    .symplectic = false,
    .symmetric = false,
    .adaptive = true,
    .force_evals_per_step = 0,
    .create = cvode_create,
    .step = cvode_step,
    .restart = cvode_restart,
    .save = cvode_save,
    .load = cvode_load,
    .destroy = cvode_destroy,
    .sync_counts = cvode_sync_counts,
};

const dm_method dm_cvode_adams = {
    .id = "cvode-adams",
    .name = "CVODE variable-order Adams-Moulton (orders 1-12), fixed-point iteration",
    .reference = "A. C. Hindmarsh et al., ACM TOMS 31 (2005) 363-396 (SUNDIALS CVODE)",
    .family = DM_FAMILY_ADAPTIVE,
    .order = 12,
    .variable_order = true,
    .symplectic = false,
    .symmetric = false,
    .adaptive = true,
    .force_evals_per_step = 0,
    .create = cvode_create,
    .step = cvode_step,
    .restart = cvode_restart,
    .save = cvode_save,
    .load = cvode_load,
    .destroy = cvode_destroy,
    .sync_counts = cvode_sync_counts,
};
