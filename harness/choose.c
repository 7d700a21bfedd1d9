/* choose.c — the cheapest method for a target, from a results file's summary
 * (choose.h; definitions in README.md, "Choosing a method"). */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "choose.h"
#include "dm_line_fit.h"

/* A fit this far off its points (rms residual of log10 max |dE|) is too poor to read a
 * step from: errors 40 % off the line on average. Our own threshold. */
#define CHOOSE_MAX_FIT_RMS 0.15
/* Points a fitted line needs before a step is read off it. */
#define CHOOSE_MIN_POINTS 3
/* How far beyond the finest measured step a fitted line is followed: a factor 10 in the
 * step (our own limit: an order of a method holds over a decade, not over six). */
#define CHOOSE_MAX_BEYOND 10.0

const char *dm_choice_basis_name(dm_choice_basis basis)
{
    switch (basis) {
    case DM_BASIS_NONE: return "none";
    case DM_BASIS_MEASURED: return "measured";
    case DM_BASIS_INTERPOLATED: return "interpolated";
    case DM_BASIS_EXTRAPOLATED: return "extrapolated";
    }
    return "none";
}

/* The variant (run id up to its first '.') and the method entry: the method id and
 * whatever follows the step or tolerance in the id ("-atol1e-12", "-compensated"). */
static void group_names(const dm_summary_row *r, char *variant, char *method)
{
    /* "<variant>.<method>-<h|n|rtol><value>[options]": the variant's own numbers may
     * hold dots, so the method part is found as the last ".<method>-" */
    char key[DM_RUN_ID_MAX + 2];
    snprintf(key, sizeof key, ".%s-", r->method);
    const char *at = NULL;
    for (const char *p = strstr(r->run_id, key); p != NULL; p = strstr(p + 1, key))
        at = p;
    if (at == NULL) { /* not one of our ids: the whole id is its own group */
        snprintf(variant, DM_RUN_ID_MAX, "%s", r->run_id);
        snprintf(method, DM_RUN_ID_MAX, "%s", r->method);
        return;
    }
    snprintf(variant, DM_RUN_ID_MAX, "%.*s", (int)(at - r->run_id), r->run_id);
    const char *p = at + strlen(key);
    while (*p >= 'a' && *p <= 'z')
        p++;              /* h, n or rtol */
    char *end;
    strtod(p, &end);      /* the value, "1e-08" included */
    snprintf(method, DM_RUN_ID_MAX, "%s%s", r->method, end);
}

static bool is_adaptive(const dm_summary_row *r)
{
    return isnan(r->h) && !isnan(r->rtol);
}

static double x_of(const dm_summary_row *r)
{
    return is_adaptive(r) ? r->rtol : fabs(r->h);
}

/* Periods a run covered: its force evaluations over those per period. */
static double periods_of(const dm_summary_row *r)
{
    return (double)r->force_evals / r->force_evals_per_period;
}

static bool ok_row(const dm_summary_row *r)
{
    return dm_run_status_named(r->status) == DM_RUN_OK;
}

/* The horizon the group's ok runs measured, in periods: the shortest of theirs (a run
 * that diverged early covered fewer, and says nothing of this); NaN with no ok run.
 * *step: that run's step in periods (a run ends on the step that reaches its horizon,
 * so it covers up to one step more than asked). */
static double measured_periods(const dm_summary_row *const *rows, size_t n, double *step)
{
    double m = NAN;
    *step = 0.0;
    for (size_t i = 0; i < n; i++)
        if (ok_row(rows[i]) && !(periods_of(rows[i]) >= m)) {
            m = periods_of(rows[i]);
            *step = rows[i]->steps > 0 ? m / (double)rows[i]->steps : 0.0;
        }
    return m;
}

/* The horizon the answer is for, in periods: the one asked, else the one measured. */
static double horizon_periods(const dm_summary_row *const *rows, size_t n,
                              const dm_target *t)
{
    return isnan(t->periods) ? measured_periods(rows, n, &(double){ 0.0 }) : t->periods;
}

/* An ok run whose numerical orbit stayed in its starting regime: one that left it (a
 * pendulum going over the top) measured another orbit, and is no answer. */
static bool usable_row(const dm_summary_row *r)
{
    return ok_row(r) && r->regime_change[0] == '\0';
}

/* Everything one group of runs needs to be answered. */
typedef struct group {
    const dm_summary_row *const *rows;
    size_t n;
    const dm_target *target;
    dm_sweep_fit fit;            /* the sweep's fit at the measured horizon */
    /* The energy fit at the target's horizon: the runs fit's energy fit uses, each
     * max |dE| grown by its own drift law (run_growth); fit's when not extended. */
    dm_sweep_fit far;
    double *growth;              /* by row: run_growth (NaN: cannot be extended) */
    double *grown;               /* by row: max |dE| at the target's horizon (growth, and
                                    never under the round-off floor there); NaN: unknown */
    bool extended;               /* the target's horizon is longer than a run's */
    dm_line_fit cost_line;       /* log cost per period against log x, ok runs */
    double seconds_per_eval;     /* median wall seconds per force evaluation, ok runs */
} group;

static int by_value(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* A run's growth of max |dE| from its own horizon to the target's, by its own drift
 * law: 1 when the target's is no longer or the run is bounded (its drift class: the
 * bound holds over any horizon), (N'/N)^p for a run whose error grows as t^p, NaN when
 * p is unmeasured. Each run by its own law: a coarse step that drifts says nothing of a
 * finer one that is bounded (a symplectic method near its stability limit), nor a fine
 * step whose round-off walks of a coarse one bounded by its truncation error. */
static double run_growth(const dm_summary_row *r, double want)
{
    double measured = periods_of(r);
    if (isnan(want) || !(want > measured * (1.0 + 1e-9)))
        return 1.0;
    if (strcmp(r->drift_class, "bounded") == 0)
        return 1.0;
    if (!isfinite(r->drift_exponent))
        return NAN;
    return pow(want / measured, r->drift_exponent);
}

/* The horizon rule of the ok runs a fit uses (use not NULL), of run `only` (not
 * SIZE_MAX), or of all: "measured horizon", "bounded", "exponent p" or "exponents p..q". */
static void horizon_rule(const group *g, const unsigned char *use, size_t only, dm_choice *c)
{
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < g->n; i++) {
        const dm_summary_row *r = g->rows[i];
        if (!ok_row(r) || (use != NULL && use[i] != DM_FIT_USED) ||
            (only != SIZE_MAX && i != only) || g->growth[i] == 1.0)
            continue;
        lo = fmin(lo, r->drift_exponent);
        hi = fmax(hi, r->drift_exponent);
    }
    double step, measured = measured_periods(g->rows, g->n, &step);
    if (isnan(measured)) /* no ok run: no horizon was measured */
        snprintf(c->horizon_rule, sizeof c->horizon_rule, "-");
    else if (!g->extended && !isnan(g->target->periods) &&
        g->target->periods < (measured - step) * (1.0 - 1e-9))
        /* max |dE| over a shorter horizon is at most that over the runs' own */
        snprintf(c->horizon_rule, sizeof c->horizon_rule, "measured horizon (longer)");
    else if (!g->extended)
        snprintf(c->horizon_rule, sizeof c->horizon_rule, "measured horizon");
    else if (!(hi >= lo))
        snprintf(c->horizon_rule, sizeof c->horizon_rule, "bounded");
    else {
        char a[16], b[16];
        snprintf(a, sizeof a, "%.2f", lo);
        snprintf(b, sizeof b, "%.2f", hi);
        if (strcmp(a, b) == 0) /* they differ only past the digits shown */
            snprintf(c->horizon_rule, sizeof c->horizon_rule, "exponent %s", a);
        else
            snprintf(c->horizon_rule, sizeof c->horizon_rule, "exponents %s..%s", a, b);
    }
}

/* The horizon growth and rule of run i alone into *c. */
static void run_horizon(const group *g, size_t i, dm_choice *c)
{
    horizon_rule(g, NULL, i, c);
    c->horizon_factor = g->grown[i] / g->rows[i]->max_energy_error;
}

static double cost_at(const group *g, double x)
{
    return exp(dm_line_fit_at(&g->cost_line, log(x)));
}

/* target / predicted over the targets given (the smallest); +inf with no target; 0 when
 * a figure a target asks about is not a number (fmin would drop the NaN: a run without
 * its max |dE| would "meet" any target). */
static double margin_of(const dm_target *t, double energy, double phase)
{
    double m = INFINITY;
    if (!isnan(t->max_energy_error)) {
        double r = t->max_energy_error / energy;
        m = isnan(r) ? 0.0 : fmin(m, r);
    }
    if (!isnan(t->phase_per_period)) {
        double r = t->phase_per_period / phase;
        m = isnan(r) ? 0.0 : fmin(m, r);
    }
    return m;
}

/* Whether run i's phase error per period holds at the target's horizon: only when its
 * energy error does not grow there. A drifting energy moves the period with it, so the
 * phase error grows faster than the periods (as t^2 for a linear drift). */
static bool phase_carried(const group *g, size_t i)
{
    return g->growth[i] == 1.0;
}

/* Why the phase per period is not carried to the target's horizon (see phase_carried). */
static void phase_not_carried(const group *g, char *why, size_t why_size)
{
    snprintf(why, why_size, "its runs' energy drifts, and the period with it: a phase "
             "error per period measured over %.7g periods does not hold over %.7g",
             measured_periods(g->rows, g->n, &(double){ 0.0 }), g->target->periods);
}

/* The cheapest ok run that meets the target as measured (grown to the horizon), or
 * SIZE_MAX; *closest: the run nearest to meeting it, *closeness its predicted / target;
 * *coarse_met: a run that meets it only with a carried max |dE| of 1/10 or more. */
static size_t best_measured(const group *g, double *closeness, size_t *closest,
                            size_t *coarse_met)
{
    size_t best = SIZE_MAX;
    *closeness = INFINITY;
    *closest = SIZE_MAX;
    *coarse_met = SIZE_MAX;
    for (size_t i = 0; i < g->n; i++) {
        const dm_summary_row *r = g->rows[i];
        if (!usable_row(r))
            continue;
        if (isnan(g->grown[i]))
            continue;
        double m = margin_of(g->target, g->grown[i],
                             phase_carried(g, i) ? fabs(r->phase_error_per_period) : NAN);
        /* at a longer horizon a carried error of 1/10 or more is outside the regime
         * its law was measured in: no answer, though a target that large it meets (and
         * then not judged against it: its closeness would read as met) */
        bool coarse = g->extended && !(g->grown[i] < DM_ENERGY_COARSE);
        double over = m > 0.0 && !(coarse && m >= 1.0) ? 1.0 / m : INFINITY;
        if (*closest == SIZE_MAX || over < *closeness)
            *closeness = over, *closest = i;
        if (m >= 1.0 && coarse &&
            (*coarse_met == SIZE_MAX || g->grown[i] < g->grown[*coarse_met]))
            *coarse_met = i;
        if (m >= 1.0 && !coarse && (best == SIZE_MAX ||
                         r->force_evals_per_period < g->rows[best]->force_evals_per_period))
            best = i;
    }
    return best;
}

/* The names of the two fits (0: max |dE|, 1: phase per period) and of their columns;
 * the fit's name: the energy fit's says when its errors are grown to a longer
 * horizon */
#define FIT_WHAT(g, k) ((k) == 0 && (g)->extended ? "energy fit at the horizon asked" \
                                                  : (k) == 0 ? "energy fit" : "phase fit")
static const char *const fit_column[2] = { "max |dE|", "phase/per" };

static const dm_line_fit *fit_line(const group *g, int k)
{
    return k == 0 ? &g->far.energy_line : &g->fit.phase_line;
}

/* Whether fit k cannot be read (no step is read off it, nothing is predicted from it),
 * with the reason in why; the one test and the one wording of both. */
static bool fit_unreadable(const group *g, int k, char *why, size_t why_size)
{
    if (k == 1)
        for (size_t i = 0; i < g->n; i++)
            if (g->fit.phase_use[i] == DM_FIT_USED && !phase_carried(g, i)) {
                phase_not_carried(g, why, why_size);
                return true;
            }
    const dm_line_fit *l = fit_line(g, k);
    size_t n = k == 0 ? g->far.n_energy_points : g->fit.n_phase_points;
    double p = dm_line_fit_slope(l);
    double rms = dm_line_fit_rms_residual(l) / log(10.0);
    double lo = k == 0 ? g->far.energy_local_min : g->fit.phase_local_min;
    double hi = k == 0 ? g->far.energy_local_max : g->fit.phase_local_max;
    bool trend = k == 0 ? g->far.energy_trend : g->fit.phase_trend;
    if (n < CHOOSE_MIN_POINTS)
        snprintf(why, why_size, "its %s has %zu usable run%s (a step is read off a fit "
                 "of %d or more)", FIT_WHAT(g, k), n, n == 1 ? "" : "s", CHOOSE_MIN_POINTS);
    else if (!(p > 0.0) || !(rms <= CHOOSE_MAX_FIT_RMS))
        snprintf(why, why_size, "its %s cannot be read (order %.3g, rms %.3g decades; "
                 "needs order > 0, rms <= %.2f)", FIT_WHAT(g, k), p, rms, CHOOSE_MAX_FIT_RMS);
    else if (hi - lo > DM_LOCAL_ORDER_SPREAD || trend) /* the sweep table's * and ~ */
        snprintf(why, why_size, "its %s mixes regimes (orders between neighbouring "
                 "steps %.2f..%.2f%s; a step is read off a fit whose orders differ by at most "
                 "%.2f and do not move one way by more than %.0f %% of the order)",
                 FIT_WHAT(g, k), lo, hi, trend ? ", moving one way" : "",
                 DM_LOCAL_ORDER_SPREAD, 100.0 * DM_ORDER_TREND);
    else
        return false;
    return true;
}

/* The predictions at x from the fitted lines; a figure whose fit cannot be read is not
 * predicted (NaN), and c->not_predicted says so in the words of the refusal. */
static void predict(const group *g, double x, dm_choice *c)
{
    double *out[2] = { &c->energy_error, &c->phase_per_period };
    c->not_predicted[0] = '\0';
    for (int k = 0; k < 2; k++) {
        char why[DM_CHOICE_TEXT];
        if (fit_unreadable(g, k, why, sizeof why)) {
            *out[k] = NAN;
            size_t at = strlen(c->not_predicted);
            snprintf(c->not_predicted + at, sizeof c->not_predicted - at, "%s%s not predicted: "
                     "%s", at ? "; " : "", fit_column[k], why);
            continue;
        }
        *out[k] = exp(dm_line_fit_at(fit_line(g, k), log(x)));
    }
}

/* The step (or tolerance) where the fitted lines meet the targets (the smaller of the
 * two when both are given; *binding: which, 0 energy, 1 phase); NaN when a line is
 * missing or poor. */
static double fitted_x(const group *g, int *binding, char *why, size_t why_size)
{
    double x = INFINITY;
    *binding = 0;
    const dm_target *t = g->target;
    /* at a longer horizon the energy line is read no further than just under 1/10 (an
     * error that large is no answer there: the cheapest step that is, for a looser
     * target) */
    const double target[2] = { g->extended && !isnan(t->max_energy_error)
                                   ? fmin(t->max_energy_error, DM_ENERGY_COARSE * (1.0 - 1e-3))
                                   : t->max_energy_error,
                               t->phase_per_period };
    for (int k = 0; k < 2; k++) {
        if (isnan(target[k]))
            continue;
        if (fit_unreadable(g, k, why, why_size))
            return NAN;
        const dm_line_fit *l = fit_line(g, k);
        double xk = exp(l->mean_x + (log(target[k]) - l->mean_y) / dm_line_fit_slope(l));
        if (xk < x)
            x = xk, *binding = k;
    }
    return x;
}

/* A run that did not end ok, or whose orbit left its regime, at a step between x and
 * the coarsest usable step: the method is not to be trusted there. */
static const dm_summary_row *bad_run_in_range(const group *g, double x)
{
    double top = 0.0;
    for (size_t i = 0; i < g->n; i++)
        if (usable_row(g->rows[i]))
            top = fmax(top, x_of(g->rows[i]));
    for (size_t i = 0; i < g->n; i++) {
        const dm_summary_row *r = g->rows[i];
        double xr = x_of(r);
        if (!usable_row(r) && xr >= x * (1.0 - 1e-12) && xr <= top * (1.0 + 1e-12))
            return r;
    }
    return NULL;
}

/* Fills the group's fit, cost line and time per evaluation. */
static dm_status group_fits(group *g, const char *name, dm_error *err)
{
    dm_fit_input *in = calloc(g->n ? g->n : 1, sizeof *in);
    double *fx = calloc(g->n ? g->n : 1, sizeof *fx), *fy = calloc(g->n ? g->n : 1, sizeof *fy);
    double *spe = calloc(g->n ? g->n : 1, sizeof *spe);
    g->growth = calloc(g->n ? g->n : 1, sizeof *g->growth);
    g->grown = calloc(g->n ? g->n : 1, sizeof *g->grown);
    if (in == NULL || fx == NULL || fy == NULL || spe == NULL || g->growth == NULL ||
        g->grown == NULL) {
        free(in);
        free(fx);
        free(fy);
        free(spe);
        return dm_error_set(err, DM_ENOMEM, "out of memory choosing for %s", name);
    }
    size_t ns = 0;
    const double want = g->target->periods;
    for (size_t i = 0; i < g->n; i++) {
        const dm_summary_row *r = g->rows[i];
        in[i] = (dm_fit_input){ .x = x_of(r), .status = dm_run_status_named(r->status),
                                .steps = r->steps, .max_energy_error = r->max_energy_error,
                                .phase_error_per_period = r->phase_error_per_period,
                                .regime_changed = r->regime_change[0] != '\0' };
        /* at the target's horizon: which runs the fit uses is judged at the measured
         * one (an error grown past 1/10 is still from a step in the regime of h^p);
         * the line goes through the grown errors, none under the round-off floor of
         * the steps to that horizon (a bounded error does not stay under the walk of
         * the rounding errors: 4 eps sqrt(steps)) */
        g->growth[i] = run_growth(r, want);
        bool longer = ok_row(r) && !isnan(want) && want > periods_of(r) * (1.0 + 1e-9);
        g->extended = g->extended || longer;
        g->grown[i] = r->max_energy_error * g->growth[i];
        if (longer && !isnan(g->grown[i]))
            g->grown[i] = fmax(g->grown[i], DM_ENERGY_ROUND_OFF_FLOOR * DBL_EPSILON *
                                                sqrt((double)r->steps * want / periods_of(r)));
        fx[i] = x_of(r);
        fy[i] = g->grown[i];
        if (ok_row(r) && r->force_evals_per_period > 0.0 && isfinite(r->force_evals_per_period)) {
            dm_line_fit_add(&g->cost_line, log(x_of(r)), log(r->force_evals_per_period));
            if (r->force_evals > 0 && isfinite(r->wall_seconds))
                spe[ns++] = r->wall_seconds / (double)r->force_evals;
        }
    }
    qsort(spe, ns, sizeof *spe, by_value);
    g->seconds_per_eval = ns ? spe[ns / 2] : NAN;
    dm_status st = dm_fit_points(name, in, g->n, &g->fit, err);
    if (st == DM_OK)
        st = dm_fit_energy_through(&g->fit, fx, fy, &g->far, err);
    free(in);
    free(fx);
    free(fy);
    free(spe);
    return st;
}

/* The refusal of a max |dE| carried to the target's horizon at 1/10 or more. */
static void coarse_refusal(const group *g, double energy, dm_choice *c)
{
    snprintf(c->why_not, sizeof c->why_not, "its max |dE| over %.7g periods would be %.3g: "
             "an error of %g or more is outside the regime its drift law was measured in",
             g->target->periods, energy, DM_ENERGY_COARSE);
}

/* One group's answer into *c. */
static dm_status answer_group(group *g, dm_choice *c, dm_error *err)
{
    c->adaptive = is_adaptive(g->rows[0]);
    c->x = c->cost_per_period = c->seconds_per_period = NAN;
    c->energy_error = c->phase_per_period = c->fit_rms = NAN;
    c->not_predicted[0] = '\0';
    c->beyond = 1.0;
    if (!isfinite(g->rows[0]->period_exact)) { /* nbody: costs per period do not exist */
        c->closeness = NAN;
        snprintf(c->why_not, sizeof c->why_not, "the problem has no closed-form period, and "
                 "choose compares costs and horizons in periods");
        return DM_OK;
    }
    dm_status st = group_fits(g, c->method, err);
    if (st != DM_OK)
        return st;
    c->n_points = g->far.n_energy_points;
    c->fit_rms = dm_line_fit_rms_residual(&g->far.energy_line) / log(10.0);
    c->horizon_factor = 1.0;
    if (g->extended) {
        double measured = measured_periods(g->rows, g->n, &(double){ 0.0 });
        bool any = false;
        for (size_t i = 0; i < g->n; i++)
            if (ok_row(g->rows[i]))
                any = any || !isnan(g->growth[i]);
        if (!any) {
            c->closeness = INFINITY; /* no run can be judged there */
            snprintf(c->horizon_rule, sizeof c->horizon_rule, "unmeasured");
            snprintf(c->why_not, sizeof c->why_not, "cannot extend %.7g measured periods to "
                     "%.3g: no run's drift exponent is measured", measured,
                     g->target->periods);
            return DM_OK;
        }
    }
    horizon_rule(g, NULL, SIZE_MAX, c); /* of every ok run, until the answer names its runs */
    double closeness;
    size_t closest, coarse_met, mi = best_measured(g, &closeness, &closest, &coarse_met);
    const dm_summary_row *m = mi == SIZE_MAX ? NULL : g->rows[mi];
    c->closeness = closeness;
    char why[DM_CHOICE_TEXT] = "";
    int binding;
    double xf = fitted_x(g, &binding, why, sizeof why);
    /* the fitted step is used where it is cheaper than the best measured run */
    bool use_fit = !isnan(xf) && (m == NULL || xf > x_of(m) * (1.0 + 1e-12));
    if (use_fit) {
        /* the range of the fit the step is read off (a target met further out on the
         * other fit does not move the step) */
        const unsigned char *use = binding == 0 ? g->far.energy_use : g->fit.phase_use;
        double lo = INFINITY, hi = 0.0;
        for (size_t i = 0; i < g->n; i++)
            if (use[i] == DM_FIT_USED) {
                lo = fmin(lo, x_of(g->rows[i]));
                hi = fmax(hi, x_of(g->rows[i]));
            }
        if (xf > hi) { /* the coarsest measured step already meets it: go no further */
            use_fit = false;
        } else if (xf < lo / CHOOSE_MAX_BEYOND) {
            use_fit = false;
            snprintf(why, sizeof why, "its fit reaches the target only at %s = %.3g, %.3g "
                     "times finer than measured (followed at most %g times)",
                     c->adaptive ? "rtol" : "h", xf, lo / xf, CHOOSE_MAX_BEYOND);
        } else {
            c->x = xf;
            c->basis = xf >= lo * (1.0 - 1e-12) ? DM_BASIS_INTERPOLATED : DM_BASIS_EXTRAPOLATED;
            c->beyond = xf < lo ? lo / xf : 1.0;
            predict(g, xf, c);
            c->cost_per_period = cost_at(g, xf);
            /* never under the round-off floor of the steps to the horizon, measured or
             * asked (fixed steps: their number is known; a fit is read past the runs it
             * left out as round-off no more than past any other) */
            if (!c->adaptive) {
                double root = sqrt(horizon_periods(g->rows, g->n, g->target) *
                                   g->rows[0]->period_exact / xf);
                /* (a figure not predicted stays NaN: fmax would drop it) */
                if (!isnan(c->energy_error))
                    c->energy_error = fmax(c->energy_error,
                                           DM_ENERGY_ROUND_OFF_FLOOR * DBL_EPSILON * root);
                if (!isnan(c->phase_per_period))
                    c->phase_per_period = fmax(c->phase_per_period,
                                               DM_PHASE_ROUND_OFF_FLOOR * DBL_EPSILON * root);
            }
            /* the growth at xf: the two energy lines' ratio there */
            c->horizon_factor = g->far.n_energy_points >= 2 && g->fit.n_energy_points >= 2
                ? exp(dm_line_fit_at(&g->far.energy_line, log(xf)) -
                      dm_line_fit_at(&g->fit.energy_line, log(xf)))
                : NAN;
            horizon_rule(g, g->far.energy_use, SIZE_MAX, c);
            /* a step the refusals below would refuse (round-off alone over the target,
             * or 1/10 carried), where a run meets the target: that run */
            if (m != NULL && (margin_of(g->target, c->energy_error, c->phase_per_period) <
                                  1.0 - 1e-9 ||
                              (g->extended && !(c->energy_error < DM_ENERGY_COARSE)))) {
                use_fit = false;
                c->beyond = 1.0;
            }
        }
    }
    if (!use_fit && m != NULL) {
        c->x = x_of(m);
        c->basis = DM_BASIS_MEASURED;
        snprintf(c->run_id, sizeof c->run_id, "%s", m->run_id);
        c->energy_error = g->grown[mi];
        run_horizon(g, mi, c);
        c->phase_per_period = fabs(m->phase_error_per_period);
        c->not_predicted[0] = '\0';
        if (!phase_carried(g, mi)) {
            c->phase_per_period = NAN;
            char text[DM_CHOICE_TEXT - 32];
            phase_not_carried(g, text, sizeof text);
            snprintf(c->not_predicted, sizeof c->not_predicted, "%s not predicted: %s",
                     fit_column[1], text);
        }
        c->cost_per_period = m->force_evals_per_period;
    }
    if (c->basis == DM_BASIS_NONE && coarse_met != SIZE_MAX) {
        run_horizon(g, coarse_met, c);
        coarse_refusal(g, g->grown[coarse_met], c);
        return DM_OK;
    }
    if (c->basis == DM_BASIS_NONE) {
        if (closest != SIZE_MAX)
            run_horizon(g, closest, c);
        char best[96] = "no run ended ok";
        if (isfinite(closeness))
            snprintf(best, sizeof best, "its best run is %.3g times over it", closeness);
        else if (closest != SIZE_MAX)
            snprintf(best, sizeof best, "none of its runs can be judged on every target "
                     "over that horizon");
        snprintf(c->why_not, sizeof c->why_not, "no run meets the target (%s)%s%s", best,
                 why[0] ? " and " : "", why);
        return DM_OK;
    }
    c->seconds_per_period = c->cost_per_period * g->seconds_per_eval;
    c->margin = margin_of(g->target, c->energy_error, c->phase_per_period);
    if (c->basis != DM_BASIS_MEASURED && c->margin < 1.0 - 1e-9) {
        /* the line meets the target where round-off alone exceeds it */
        bool energy = !isnan(g->target->max_energy_error) &&
                      c->energy_error > g->target->max_energy_error;
        snprintf(c->why_not, sizeof c->why_not, "at the step its fit gives (%s = %.4g) "
                 "round-off alone reaches %s %.3g (%g eps sqrt(steps) over %.7g periods)",
                 c->adaptive ? "rtol" : "h", c->x, energy ? "max |dE|" : "phase/per",
                 energy ? c->energy_error : c->phase_per_period,
                 energy ? DM_ENERGY_ROUND_OFF_FLOOR : DM_PHASE_ROUND_OFF_FLOOR,
                 horizon_periods(g->rows, g->n, g->target));
        return DM_OK;
    }
    if (g->extended && !(c->energy_error < DM_ENERGY_COARSE)) {
        coarse_refusal(g, c->energy_error, c);
        return DM_OK;
    }
    const dm_summary_row *bad = bad_run_in_range(g, c->x);
    if (bad != NULL) {
        if (ok_row(bad))
            snprintf(c->why_not, sizeof c->why_not, "run %s's orbit left its regime (%s) at "
                     "%s = %.3g, inside the range used", bad->run_id, bad->regime_change,
                     c->adaptive ? "rtol" : "h", x_of(bad));
        else
            snprintf(c->why_not, sizeof c->why_not, "run %s ended %s at %s = %.3g, inside "
                     "the range used", bad->run_id, bad->status, c->adaptive ? "rtol" : "h",
                     x_of(bad));
        return DM_OK;
    }
    c->ranked = true;
    return DM_OK;
}

static int by_variant_then_cost(const void *a, const void *b)
{
    const dm_choice *p = a, *q = b;
    int v = strcmp(p->variant, q->variant);
    if (v != 0)
        return v;
    if (p->ranked != q->ranked)
        return p->ranked ? -1 : 1;
    if (p->ranked && p->cost_per_period != q->cost_per_period)
        return p->cost_per_period < q->cost_per_period ? -1 : 1;
    return strcmp(p->method, q->method);
}

dm_status dm_choose(const dm_summary_row *rows, size_t n, const dm_target *target,
                    dm_choice **choices, size_t *n_choices, bool *all_answered, dm_error *err)
{
    *choices = NULL;
    *n_choices = 0;
    *all_answered = false;
    /* every row's group: variant and method entry */
    dm_choice *out = calloc(n ? n : 1, sizeof *out);
    const dm_summary_row **members = calloc(n ? n : 1, sizeof *members);
    size_t *group_of = calloc(n ? n : 1, sizeof *group_of);
    if (out == NULL || members == NULL || group_of == NULL) {
        free(out), free(members), free(group_of);
        return dm_error_set(err, DM_ENOMEM, "out of memory choosing among %zu runs", n);
    }
    size_t ng = 0;
    for (size_t i = 0; i < n; i++) {
        char variant[DM_RUN_ID_MAX], method[DM_RUN_ID_MAX];
        group_names(&rows[i], variant, method);
        size_t k = 0;
        while (k < ng && !(strcmp(out[k].variant, variant) == 0 &&
                           strcmp(out[k].method, method) == 0))
            k++;
        if (k == ng) {
            snprintf(out[k].variant, sizeof out[k].variant, "%s", variant);
            snprintf(out[k].method, sizeof out[k].method, "%s", method);
            ng++;
        }
        group_of[i] = k;
    }
    dm_status st = DM_OK;
    for (size_t k = 0; k < ng && st == DM_OK; k++) {
        size_t m = 0;
        for (size_t i = 0; i < n; i++)
            if (group_of[i] == k)
                members[m++] = &rows[i];
        group g = { .rows = members, .n = m, .target = target };
        st = answer_group(&g, &out[k], err);
        dm_sweep_fit_free(&g.fit);
        dm_sweep_fit_free(&g.far);
        free(g.growth);
        free(g.grown);
    }
    free(members);
    free(group_of);
    if (st != DM_OK) {
        free(out);
        return st;
    }
    qsort(out, ng, sizeof *out, by_variant_then_cost);
    bool all = ng > 0;
    for (size_t k = 0; k < ng;) {
        size_t end = k, rank = 0;
        while (end < ng && strcmp(out[end].variant, out[k].variant) == 0) {
            if (out[end].ranked)
                out[end].rank = (int)++rank;
            end++;
        }
        all = all && rank > 0;
        k = end;
    }
    *choices = out;
    *n_choices = ng;
    *all_answered = all;
    return DM_OK;
}
