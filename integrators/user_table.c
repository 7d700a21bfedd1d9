/* user_table.c — a table typed in the suite made into a method, and checked
 * (user_table.h). */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "order_conditions.h"
#include "user_table.h"

const char *const dm_table_check_problems[2] = { "harmonic", "pendulum" };

const char *dm_table_form_name(dm_table_form form)
{
    switch (form) {
    case DM_TABLE_SPLITTING: return "splitting";
    case DM_TABLE_COMPOSITION: return "composition";
    case DM_TABLE_RUNGE_KUTTA: return "runge-kutta";
    case DM_TABLE_NYSTROM: return "nystrom";
    }
    return "unknown";
}

/* ---- building ---- */

/* |sum c - 1| within DM_TABLE_SUM_TOLERANCE of sum |c|. */
static bool sums_to_one(const double *c, int n, double *sum_out)
{
    double sum = 0.0, size = 0.0;
    for (int i = 0; i < n; i++) {
        sum += c[i];
        size += fabs(c[i]);
    }
    *sum_out = sum;
    return fabs(sum - 1.0) <= DM_TABLE_SUM_TOLERANCE * fmax(1.0, size);
}

/* One operation of a splitting's sequence. */
typedef struct op {
    bool kick;
    double c;
} op;

/* The operations of t's splitting in order into ops (at most DM_TABLE_MAX_OPS). */
static int table_ops(const dm_splitting *s, op *ops)
{
    int n = s->n_kick + s->n_drift, ik = 0, id = 0;
    bool kick = s->kick_first;
    for (int i = 0; i < n; i++, kick = !kick)
        ops[i] = (op){ kick, kick ? s->kick[ik++] : s->drift[id++] };
    return n;
}

/* The sequence into t->splitting (its kick and drift lists). */
static void set_ops(dm_user_table *t, const op *ops, int n)
{
    dm_splitting *s = &t->splitting;
    s->kick_first = ops[0].kick;
    s->n_kick = s->n_drift = 0;
    for (int i = 0; i < n; i++) {
        if (ops[i].kick)
            t->kick[s->n_kick++] = ops[i].c;
        else
            t->drift[s->n_drift++] = ops[i].c;
    }
    s->kick = t->kick;
    s->drift = t->drift;
}

static dm_status shape_error(dm_table_list *which, dm_table_list list, dm_error *err,
                             const char *fmt, ...) __attribute__((format(printf, 4, 5)));

static dm_status shape_error(dm_table_list *which, dm_table_list list, dm_error *err,
                             const char *fmt, ...)
{
    char msg[DM_ERROR_MSG_MAX];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    *which = list;
    return dm_error_set(err, DM_EINPUT, "%s", msg);
}

/* Kick and drift lists, whole or a first half: which comes first follows from the
 * lengths (one more kick: a kick; one more drift: a drift), or from `first` when they
 * are equal. */
static dm_status build_splitting(dm_user_table *t, const dm_table_input *in,
                                 dm_table_list *which, dm_error *err)
{
    int nk = in->n_kick, nd = in->n_drift;
    if (nk < 1 || nd < 1 || nk - nd > 1 || nd - nk > 1)
        return shape_error(which, nk < nd ? DM_LIST_KICK : DM_LIST_DRIFT, err,
                           "%d kick and %d drift coefficients (expected lists of equal "
                           "lengths or one longer by one, none empty)", nk, nd);
    int first = nk > nd ? 1 : nd > nk ? 0 : in->first;
    if (first < 0)
        return shape_error(which, DM_LIST_KICK, err, "kick and drift lists of equal length "
                           "%d: say which comes first (expected first: kick or first: drift)",
                           nk);
    if (in->first >= 0 && in->first != first)
        return shape_error(which, DM_LIST_KICK, err, "first: %s does not fit %d kick and %d "
                           "drift coefficients (the longer list comes first)",
                           in->first ? "kick" : "drift", nk, nd);
    op ops[DM_TABLE_MAX_OPS];
    int n = 0, ik = 0, id = 0;
    _Static_assert(2 * (2 * DM_TABLE_MAX_COEFFICIENTS) - 1 <= DM_TABLE_MAX_OPS,
                   "a mirrored splitting fits");
    for (bool kick = first; ik < nk || id < nd; kick = !kick)
        ops[n++] = (op){ kick, kick ? in->kick[ik++] : in->drift[id++] };
    if (in->mirror) {
        /* the last coefficient given is the middle one: the rest mirrors the others */
        for (int i = n - 2; i >= 0; i--)
            ops[n + (n - 2 - i)] = ops[i];
        n = 2 * n - 1;
    }
    set_ops(t, ops, n);
    return DM_OK;
}

/* A composition of the base's steps with the weights: the base's operations scaled by
 * each weight in turn, neighbours of one kind merged (the closing kick of one step and
 * the opening kick of the next become one: c_last w_i + c_first w_(i+1)). */
static dm_status build_composition(dm_user_table *t, const dm_table_input *in,
                                   dm_table_list *which, dm_error *err)
{
    double w[2 * DM_TABLE_MAX_COEFFICIENTS];
    int nw = in->n_weights;
    memcpy(w, in->weights, (size_t)nw * sizeof *w);
    if (in->mirror) {
        for (int i = nw - 2; i >= 0; i--)
            w[nw + (nw - 2 - i)] = in->weights[i];
        nw = 2 * nw - 1;
    }
    double sum;
    if (!sums_to_one(w, nw, &sum))
        return shape_error(which, DM_LIST_WEIGHTS, err, "the weights sum to %.17g (expected "
                           "1: a consistent composition)", sum);
    op base[DM_TABLE_MAX_OPS], ops[DM_TABLE_MAX_OPS];
    int nb = table_ops(in->base->splitting, base), n = 0;
    if (nb + (nw - 1) * (nb - 1) > DM_TABLE_MAX_OPS)
        return shape_error(which, DM_LIST_WEIGHTS, err, "%d weights of %s make more than %d "
                           "kicks and drifts (expected fewer weights)", nw, in->base->id,
                           DM_TABLE_MAX_OPS);
    for (int i = 0; i < nw; i++)
        for (int j = 0; j < nb; j++) {
            double c = base[j].c * w[i];
            if (n > 0 && ops[n - 1].kick == base[j].kick)
                ops[n - 1].c += c;
            else
                ops[n++] = (op){ base[j].kick, c };
        }
    set_ops(t, ops, n);
    return DM_OK;
}

static dm_status build_runge_kutta(dm_user_table *t, const dm_table_input *in,
                                   dm_table_list *which, dm_error *err)
{
    int s = in->stages;
    double sum;
    if (!sums_to_one(in->b, s, &sum))
        return shape_error(which, DM_LIST_B, err, "the weights b sum to %.17g (expected 1: "
                           "a consistent table)", sum);
    memset(&t->tableau, 0, sizeof t->tableau);
    t->tableau.stages = s;
    for (int i = 0; i < s; i++) {
        double row = 0.0, size = 0.0;
        for (int j = 0; j < i; j++) {
            t->tableau.a[i][j] = in->a[i][j];
            row += in->a[i][j];
            size += fabs(in->a[i][j]);
        }
        t->tableau.b[i] = in->b[i];
        if (in->c_given && fabs(in->c[i] - row) > DM_TABLE_SUM_TOLERANCE * fmax(1.0, size))
            return shape_error(which, DM_LIST_C, err, "c%d = %.17g is not the sum %.17g of "
                               "row %d of a (expected c_i = sum_j a_ij)", i + 1, in->c[i],
                               row, i + 1);
    }
    return DM_OK;
}

/* A Nystrom table: b sums to 1 and bbar to 1/2 (q1 = q0 + h v0 + h^2/2 f + ...), c
 * given. */
static dm_status build_nystrom(dm_user_table *t, const dm_table_input *in,
                               dm_table_list *which, dm_error *err)
{
    int s = in->stages;
    double sum, twice[DM_RK_MAX_STAGES];
    if (!sums_to_one(in->b, s, &sum))
        return shape_error(which, DM_LIST_B, err, "the weights b sum to %.17g (expected 1: "
                           "a consistent table)", sum);
    for (int i = 0; i < s; i++)
        twice[i] = 2.0 * in->bbar[i];
    if (!sums_to_one(twice, s, &sum))
        return shape_error(which, DM_LIST_BBAR, err, "the weights bbar sum to %.17g "
                           "(expected 1/2: a consistent table)", sum / 2);
    dm_rkn_tableau *n = &t->nystrom;
    memset(n, 0, sizeof *n);
    n->stages = s;
    for (int i = 0; i < s; i++) {
        for (int j = 0; j < i; j++)
            n->abar[i][j] = in->a[i][j];
        n->b[i] = in->b[i];
        n->bbar[i] = in->bbar[i];
        n->c[i] = in->c[i];
    }
    return DM_OK;
}

bool dm_velocity_is_linear(const dm_instance *inst)
{
    int d = inst->dof;
    double p1[DM_MAX_DOF] = { 0 }, p2[DM_MAX_DOF] = { 0 }, p3[DM_MAX_DOF] = { 0 };
    double v1[DM_MAX_DOF], v2[DM_MAX_DOF], v3[DM_MAX_DOF];
    for (int i = 0; i < d; i++) {
        p1[i] = 0.75 + 0.5 * i;
        p2[i] = -1.25 + 0.375 * i;
        p3[i] = p1[i] + p2[i];
    }
    inst->problem->velocity(inst, p1, v1);
    inst->problem->velocity(inst, p2, v2);
    inst->problem->velocity(inst, p3, v3);
    for (int i = 0; i < d; i++) {
        double size = fabs(v1[i]) + fabs(v2[i]) + fabs(v3[i]);
        if (!(fabs(v3[i] - v1[i] - v2[i]) <= 1e-12 * size))
            return false;
    }
    return true;
}

/* The method the table becomes: a splitting in the engine, a Butcher tableau in rk.c
 * (the functions of the built-in rk4, which read the tableau from the method). */
static void make_method(dm_user_table *t)
{
    const dm_table_input *in = &t->input;
    dm_method *m = &t->method;
    if (in->form == DM_TABLE_RUNGE_KUTTA || in->form == DM_TABLE_NYSTROM) {
        *m = *dm_method_find("rk4");
        bool nystrom = in->form == DM_TABLE_NYSTROM;
        m->tableau = nystrom ? NULL : &t->tableau;
        m->nystrom = nystrom ? &t->nystrom : NULL;
        m->splitting = NULL;
        m->force_evals_per_step = in->stages;
        m->symplectic = false; /* not established for a table typed in */
    } else {
        memset(m, 0, sizeof *m);
        m->family = DM_FAMILY_SPLITTING;
        m->splitting = &t->splitting;
        m->symplectic = true; /* every kick and every drift is a symplectic map */
        const dm_splitting *s = &t->splitting;
        bool fsal = s->kick_first && s->n_kick > s->n_drift;
        m->force_evals_per_step = s->n_kick - (fsal ? 1 : 0);
    }
    m->id = in->name;
    m->name = in->form == DM_TABLE_SPLITTING    ? "splitting table from the suite"
              : in->form == DM_TABLE_COMPOSITION ? "composition from the suite"
              : in->form == DM_TABLE_NYSTROM     ? "Runge-Kutta-Nystrom table from the suite"
                                                 : "Runge-Kutta tableau from the suite";
    m->reference = in->reference;
    m->order = in->claimed_order;
    m->user = t;
}

dm_status dm_user_table_build(dm_user_table *t, const dm_table_input *in,
                              dm_table_list *which, dm_error *err)
{
    memset(t, 0, sizeof *t);
    t->input = *in;
    *which = DM_LIST_NONE;
    dm_status st = DM_OK;
    switch (in->form) {
    case DM_TABLE_SPLITTING: st = build_splitting(t, in, which, err); break;
    case DM_TABLE_COMPOSITION: st = build_composition(t, in, which, err); break;
    case DM_TABLE_RUNGE_KUTTA: st = build_runge_kutta(t, in, which, err); break;
    case DM_TABLE_NYSTROM: st = build_nystrom(t, in, which, err); break;
    }
    if (st != DM_OK)
        return st;
    if (in->form == DM_TABLE_SPLITTING || in->form == DM_TABLE_COMPOSITION) {
        double sum;
        if (!sums_to_one(t->kick, t->splitting.n_kick, &sum))
            return shape_error(which, in->form == DM_TABLE_COMPOSITION ? DM_LIST_WEIGHTS
                                                                       : DM_LIST_KICK,
                               err, "the kick coefficients sum to %.17g (expected 1: a "
                               "consistent table)", sum);
        if (!sums_to_one(t->drift, t->splitting.n_drift, &sum))
            return shape_error(which, in->form == DM_TABLE_COMPOSITION ? DM_LIST_WEIGHTS
                                                                       : DM_LIST_DRIFT,
                               err, "the drift coefficients sum to %.17g (expected 1: a "
                               "consistent table)", sum);
    }
    make_method(t);
    if (dm_table_input_text(in, t->text, sizeof t->text) < 0)
        return shape_error(which, DM_LIST_NONE, err, "table %s is too long to record "
                           "(expected fewer coefficients)", in->name);
    return DM_OK;
}

/* ---- checking ---- */

/* A Runge-Kutta table is symmetric when b_(s+1-j) = b_j and
 * a_ij + a_(s+1-i, s+1-j) = b_j for all i, j (Hairer, Lubich, Wanner, Geometric
 * Numerical Integration, 2006, Theorem V.2.3; from memory of the book). No explicit
 * table is (a_11 + a_ss = 0 would have to be b_1). */
static bool runge_kutta_is_symmetric(const dm_rk_tableau *t)
{
    int s = t->stages;
    for (int i = 0; i < s; i++) {
        if (fabs(t->b[s - 1 - i] - t->b[i]) > 1e-14)
            return false;
        for (int j = 0; j < s; j++)
            if (fabs(t->a[i][j] + t->a[s - 1 - i][s - 1 - j] - t->b[j]) > 1e-14)
                return false;
    }
    return true;
}

/* An s x s block of a table's matrix, row-major (as the order conditions read it). */
static void flatten(const double m[DM_RK_MAX_STAGES][DM_RK_MAX_STAGES], int s, double *out)
{
    for (int i = 0; i < s; i++)
        for (int j = 0; j < s; j++)
            out[i * s + j] = m[i][j];
}

/* The conditions are checked to the claimed order + 1. */
static int conditions_upto(const dm_user_table *t)
{
    int upto = t->input.claimed_order + 1;
    return upto > DM_ORDER_MAX ? DM_ORDER_MAX : upto;
}

/* The conditions' report as the table's findings. */
static void set_conditions(dm_table_findings *f, const dm_order_report *r)
{
    f->order_found = r->order;
    f->order_basis = "order conditions";
    f->conditions_checked_to = r->checked_to;
    memcpy(f->condition_residual, r->worst, sizeof f->condition_residual);
}

static dm_status check_by_conditions(dm_user_table *t)
{
    const dm_rk_tableau *tab = &t->tableau;
    double a[DM_RK_MAX_STAGES * DM_RK_MAX_STAGES];
    flatten(tab->a, tab->stages, a);
    dm_order_report r;
    dm_rk_order(a, tab->b, tab->stages, conditions_upto(t), DM_TABLE_CONDITION_TOLERANCE, &r);
    dm_table_findings *f = &t->findings;
    set_conditions(f, &r);
    f->symmetric = runge_kutta_is_symmetric(tab);
    for (int k = 0; k < 2; k++)
        f->measured[k] = (dm_measured_order){ .order = NAN, .error_constant = NAN,
                                              .used = -1 };
    return DM_OK;
}

/* The convergence test on the harmonic oscillator (its defaults) and on the pendulum
 * at amplitude 1 (a nonlinear force): the order found is the smaller of the two,
 * rounded; 0 when either is not measured. */
/* Symmetric when a step back undoes a step forward, Phi(-h) Phi(h) y = y, to 1e-13 of y:
 * the definition (Hairer, Lubich, Wanner, ch. V), tried on the pendulum at amplitude 1
 * and h = T/16; for tables whose symmetry has no simple test on the coefficients. */
static dm_status steps_back_and_forth(const dm_method *m, bool *symmetric, dm_error *err)
{
    const char *keys[] = { "amplitude" };
    const double values[] = { 1.0 };
    dm_instance inst;
    dm_status st = dm_instance_init(&inst, dm_problem_find("pendulum"), 1, keys, values, err);
    if (st != DM_OK)
        return st;
    double x[3][2] = { { inst.q0[0], inst.p0[0] } };
    dm_point a = { .x = x[0], .potential = NAN }, b = { .x = x[1], .potential = NAN };
    dm_point c = { .x = x[2], .potential = NAN };
    double h = inst.period / 16;
    dm_method_config config = { .h = h, .t_stop = h, .plain_steps = true };
    dm_stepper *s = dm_stepper_create(m, &inst, &config, &a, err);
    if (s == NULL)
        return err->code;
    st = dm_stepper_step(s, &a, &b);
    if (st == DM_OK)
        st = dm_stepper_set_step(s, -h, &b);
    if (st == DM_OK)
        st = dm_stepper_step(s, &b, &c);
    dm_stepper_destroy(s);
    double back = hypot(x[2][0] - x[0][0], x[2][1] - x[0][1]);
    *symmetric = st == DM_OK && back <= 1e-13 * hypot(x[0][0], x[0][1]);
    return DM_OK;
}

static dm_status check_by_measuring(dm_user_table *t, dm_error *err)
{
    dm_table_findings *f = &t->findings;
    if (t->input.form == DM_TABLE_NYSTROM) {
        dm_status st = steps_back_and_forth(&t->method, &f->symmetric, err);
        if (st != DM_OK)
            return st;
    } else {
        f->symmetric = dm_splitting_is_symmetric(&t->splitting);
    }
    f->order_basis = "measured";
    double lowest = INFINITY;
    for (int k = 0; k < 2; k++) {
        const char *keys[] = { "amplitude" };
        const double values[] = { 1.0 };
        dm_instance inst;
        dm_status st = dm_instance_init(&inst, dm_problem_find(dm_table_check_problems[k]),
                                        1, keys, values, err);
        if (st == DM_OK)
            st = dm_measure_order(&t->method, &inst, &f->measured[k], err);
        if (st != DM_OK)
            return st;
        /* a NaN (no usable pair of steps) makes lowest NaN: order 0 */
        lowest = f->measured[k].order < lowest || isnan(f->measured[k].order)
                     ? f->measured[k].order : lowest;
    }
    f->order_found = lowest >= 0.5 ? (int)round(lowest) : 0;
    return DM_OK;
}

/* A Nystrom table: measured as a splitting is (its symmetry and error constants), and
 * its order from the Nystrom order conditions, up to the claimed order + 1. */
static dm_status check_nystrom(dm_user_table *t, dm_error *err)
{
    dm_status st = check_by_measuring(t, err);
    if (st != DM_OK)
        return st;
    const dm_rkn_tableau *n = &t->nystrom;
    double abar[DM_RK_MAX_STAGES * DM_RK_MAX_STAGES];
    flatten(n->abar, n->stages, abar);
    dm_order_report r;
    dm_rkn_order(abar, n->bbar, n->b, n->c, n->stages, conditions_upto(t),
                 DM_TABLE_CONDITION_TOLERANCE, &r);
    set_conditions(&t->findings, &r);
    return DM_OK;
}

dm_status dm_user_table_check(dm_user_table *t, dm_error *err)
{
    dm_status st = t->input.form == DM_TABLE_RUNGE_KUTTA ? check_by_conditions(t)
                   : t->input.form == DM_TABLE_NYSTROM    ? check_nystrom(t, err)
                                                          : check_by_measuring(t, err);
    t->method.symmetric = t->findings.symmetric;
    return st;
}

bool dm_user_table_reaches_claim(const dm_user_table *t)
{
    return t->findings.order_found >= t->input.claimed_order;
}

/* ---- the suite form ---- */

typedef struct text_buf {
    char *buf;
    size_t size, used;
    bool ok;
} text_buf;

static void put(text_buf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

static void put(text_buf *b, const char *fmt, ...)
{
    if (!b->ok)
        return;
    va_list ap;
    va_start(ap, fmt);
    int w = vsnprintf(b->buf + b->used, b->size - b->used, fmt, ap);
    va_end(ap);
    if (w < 0 || (size_t)w >= b->size - b->used)
        b->ok = false;
    else
        b->used += (size_t)w;
}

/* [c0, c1, ...] with every coefficient to 17 significant digits (read back, the same
 * doubles). */
static void put_list(text_buf *b, const char *key, const double *c, int n)
{
    put(b, ", %s: [", key);
    for (int i = 0; i < n; i++)
        put(b, "%s%.17g", i ? ", " : "", c[i]);
    put(b, "]");
}

/* A YAML double-quoted text: backslash and quote escaped (control characters are
 * refused by the suite reader). */
static void put_quoted(text_buf *b, const char *key, const char *s)
{
    put(b, ", %s: \"", key);
    for (; *s; s++)
        put(b, *s == '"' || *s == '\\' ? "\\%c" : "%c", *s);
    put(b, "\"");
}

static void put_head(text_buf *b, const char *name, int order)
{
    put(b, "{name: %s, order: %d", name, order);
}

static void put_runge_kutta(text_buf *b, const dm_rk_tableau *t, const char *key)
{
    put(b, ", %s: [", key);
    for (int i = 0; i < t->stages; i++) {
        put(b, "%s[", i ? ", " : "");
        for (int j = 0; j < i; j++)
            put(b, "%s%.17g", j ? ", " : "", t->a[i][j]);
        put(b, "]");
    }
    put(b, "]");
    put_list(b, "b", t->b, t->stages);
}

int dm_table_input_text(const dm_table_input *in, char *buf, size_t size)
{
    text_buf b = { buf, size, 0, size > 0 };
    put_head(&b, in->name, in->claimed_order);
    if (in->reference[0] != '\0')
        put_quoted(&b, "reference", in->reference);
    if (in->experimental)
        put(&b, ", experimental: true");
    if (in->mirror)
        put(&b, ", mirror: true");
    switch (in->form) {
    case DM_TABLE_SPLITTING:
        if (in->first >= 0)
            put(&b, ", first: %s", in->first ? "kick" : "drift");
        put_list(&b, "kick", in->kick, in->n_kick);
        put_list(&b, "drift", in->drift, in->n_drift);
        break;
    case DM_TABLE_COMPOSITION:
        put(&b, ", compose: %s", in->base->id);
        put_list(&b, "weights", in->weights, in->n_weights);
        break;
    case DM_TABLE_RUNGE_KUTTA:
    case DM_TABLE_NYSTROM: {
        dm_rk_tableau t = { .stages = in->stages };
        memcpy(t.a, in->a, sizeof t.a);
        memcpy(t.b, in->b, sizeof t.b);
        put_runge_kutta(&b, &t, in->form == DM_TABLE_NYSTROM ? "abar" : "a");
        if (in->form == DM_TABLE_NYSTROM)
            put_list(&b, "bbar", in->bbar, in->stages);
        if (in->c_given)
            put_list(&b, "c", in->c, in->stages);
        break;
    }
    }
    put(&b, "}");
    return b.ok ? (int)b.used : -1;
}

int dm_method_table_text(const dm_method *m, const char *name, char *buf, size_t size)
{
    text_buf b = { buf, size, 0, size > 0 };
    if (m->splitting != NULL) {
        const dm_splitting *s = m->splitting;
        put_head(&b, name, m->order);
        if (s->n_kick == s->n_drift)
            put(&b, ", first: %s", s->kick_first ? "kick" : "drift");
        put_list(&b, "kick", s->kick, s->n_kick);
        put_list(&b, "drift", s->drift, s->n_drift);
    } else if (m->tableau != NULL) {
        put_head(&b, name, m->order);
        put_runge_kutta(&b, m->tableau, "a");
    } else {
        return -1;
    }
    put(&b, "}");
    return b.ok ? (int)b.used : -1;
}
