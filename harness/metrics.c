/* metrics.c — the fits behind the per-run and per-sweep figures. */
#include <float.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dm_line_fit.h"
#include "harness.h"

double dm_fit_loglog_slope(const double *x, const double *y, size_t n, size_t *used)
{
    dm_line_fit fit = { 0 };
    for (size_t i = 0; i < n; i++) {
        if (!(x[i] > 0.0) || !(y[i] > 0.0) || !isfinite(x[i]) || !isfinite(y[i]))
            continue;
        dm_line_fit_add(&fit, log(x[i]), log(y[i]));
    }
    if (used != NULL)
        *used = (size_t)fit.n;
    return dm_line_fit_slope(&fit);
}

/* ---- the drift exponent (the definition: results/README.md, "The drift exponent") ---- */

enum {
    DRIFT_POINTS = 32        /* fit targets, evenly spaced in log(t - t0) */
};
#define DRIFT_FLOOR (64.0 * DBL_EPSILON)  /* max |dE| at or below: round-off only */
#define DRIFT_GATE 0.25                   /* centre moved < GATE * half-width: bounded */
#define DRIFT_DECADES 3.0                 /* the fit covers at most the last 3 decades */
#define DRIFT_RATIO_SLACK (1.0 - 1e-9)    /* "a factor 10" to within rounding */
#define DRIFT_EARLY_FAST 1.5              /* slowed: the centre grew so fast before ... */
#define DRIFT_STOPPED 0.1                 /* ... and at most this slowly over the last decade */

static const char *note(const char **why, const char *text)
{
    if (why != NULL)
        *why = text;
    return text;
}

/* Index of the bucket whose time is nearest to `target`, among [lo, n). */
static size_t nearest_bucket(const double *time, size_t lo, size_t n, double target)
{
    size_t a = lo, b = n; /* first index with time >= target, by bisection */
    while (a < b) {
        size_t mid = a + (b - a) / 2;
        if (time[mid] < target)
            a = mid + 1;
        else
            b = mid;
    }
    if (a == n)
        return n - 1;
    if (a > lo && target - time[a - 1] <= time[a] - target)
        return a - 1;
    return a;
}

/* The series can carry a growth law: a finite period, finite values, an error above the
 * round-off floor. Returns NULL or the reason it cannot. */
static const char *series_unusable(const dm_series *series, double T)
{
    if (!(T > 0.0) || !isfinite(T))
        return "no finite period";
    if (series->n == 0)
        return "no buckets";
    const double *t = series->time, *lo = series->energy_error_min,
                 *hi = series->energy_error_max;
    double peak = 0.0;
    for (size_t i = 0; i < series->n; i++) {
        if (!isfinite(lo[i]) || !isfinite(hi[i]) || !isfinite(t[i]))
            return "energy error not finite";
        peak = fmax(peak, fmax(fabs(lo[i]), fabs(hi[i])));
    }
    if (peak <= DRIFT_FLOOR)
        return "energy error at the round-off floor (max |dE| <= 64 eps)";
    return NULL;
}

/* D_i for every bucket from i0 on: the running max of |c_i - c0|, c_i the centre of the
 * band over the shortest run of buckets ending at i that spans one period (sliding max
 * and min by monotone queues), c0 and r0 the band's centre and half-width at i0.
 * Returns the malloc'd D (0 before i0), or NULL when out of memory. */
static double *band_centre_drift(const dm_series *series, double T, size_t i0, double *r0)
{
    const size_t n = series->n;
    const double *t = series->time, *lo = series->energy_error_min,
                 *hi = series->energy_error_max;
    size_t *qmax = malloc(n * sizeof *qmax), *qmin = malloc(n * sizeof *qmin);
    double *dmax = malloc(n * sizeof *dmax);
    if (qmax == NULL || qmin == NULL || dmax == NULL) {
        free(qmax);
        free(qmin);
        free(dmax);
        return NULL;
    }
    size_t hmax = 0, tmax = 0, hmin = 0, tmin = 0, j = 0;
    double c0 = 0.0, d = 0.0;
    for (size_t i = 0; i < n; i++) {
        while (tmax > hmax && hi[qmax[tmax - 1]] <= hi[i])
            tmax--;
        qmax[tmax++] = i;
        while (tmin > hmin && lo[qmin[tmin - 1]] >= lo[i])
            tmin--;
        qmin[tmin++] = i;
        if (i < i0) {
            dmax[i] = 0.0;
            continue;
        }
        /* the window [j, i] starts where bucket j starts: at t[j - 1] (0 for j = 0) */
        while (j < i && t[i] - t[j] >= T)
            j++;
        while (qmax[hmax] < j)
            hmax++;
        while (qmin[hmin] < j)
            hmin++;
        double wmax = hi[qmax[hmax]], wmin = lo[qmin[hmin]];
        double c = 0.5 * (wmax + wmin);
        if (i == i0) {
            c0 = c;
            *r0 = 0.5 * (wmax - wmin);
        }
        d = fmax(d, fabs(c - c0));
        dmax[i] = d;
    }
    free(qmax);
    free(qmin);
    return dmax;
}

/* The fit points: targets evenly spaced in log tau over [tau_lo, tau_hi], rounded to
 * whole periods (energy leaves some methods once per period, in a step), each taken at
 * the nearest bucket end after i0, repeats dropped: tau, t, D and the running max of
 * |dE| there. Returns their number. */
static size_t fit_points(const dm_series *series, double T, size_t i0, double tau_lo,
                         double tau_hi, const double *dmax, double *xs, double *ts,
                         double *ds, double *ms)
{
    const double *t = series->time, *lo = series->energy_error_min,
                 *hi = series->energy_error_max;
    const double t0 = t[i0];
    size_t m = 0, last = i0, scanned = 0;
    double running = 0.0;
    for (int k = 0; k < DRIFT_POINTS; k++) {
        double x = tau_lo * pow(tau_hi / tau_lo, (double)k / (DRIFT_POINTS - 1));
        double whole = fmax(1.0, floor(x / T + 0.5)) * T;
        size_t b = nearest_bucket(t, i0 + 1, series->n, t0 + whole);
        if (b <= last)
            continue;
        for (; scanned <= b; scanned++)
            running = fmax(running, fmax(fabs(lo[scanned]), fabs(hi[scanned])));
        xs[m] = t[b] - t0;
        ts[m] = t[b];
        ds[m] = dmax[b];
        ms[m] = running;
        m++;
        last = b;
    }
    return m;
}

/* The drift exponent, in steps (results/README.md, "The drift exponent"):
 *  1. a series that can carry a growth law;
 *  2. t0, the first bucket end with a whole period behind it, and a fit window of at
 *     most the last 3 and at least 1 decade of tau = t - t0;
 *  3. D(t), how far the band's centre has moved since t0;
 *  4. the fit points at whole periods;
 *  5. bounded (D stayed under a quarter of the band's half-width): the slope of the
 *     running max of |dE|; else the slope of D against tau. */
double dm_drift_exponent(const dm_series *series, double period, const char **why)
{
    const double T = period;
    const size_t n = series->n;
    const char *unusable = series_unusable(series, T);
    if (unusable != NULL) {
        note(why, unusable);
        return NAN;
    }
    const double *t = series->time;
    size_t i0 = 0;
    while (i0 < n && t[i0] < T)
        i0++;
    if (i0 == n) {
        note(why, "horizon shorter than one period");
        return NAN;
    }
    const double tau_hi = t[n - 1] - t[i0];
    const double tau_lo = fmax(T, tau_hi * pow(10.0, -DRIFT_DECADES));
    if (!(tau_hi >= 10.0 * tau_lo * DRIFT_RATIO_SLACK)) {
        note(why, "horizon too short (needs 10 periods after the first)");
        return NAN;
    }
    double r0 = 0.0;
    double *dmax = band_centre_drift(series, T, i0, &r0);
    if (dmax == NULL) {
        note(why, "out of memory");
        return NAN;
    }
    double xs[DRIFT_POINTS], ds[DRIFT_POINTS], ms[DRIFT_POINTS], ts[DRIFT_POINTS];
    size_t m = fit_points(series, T, i0, tau_lo, tau_hi, dmax, xs, ts, ds, ms);
    double d_end = dmax[n - 1];
    free(dmax);
    if (m < 4) {
        note(why, "too few buckets in the fit window");
        return NAN;
    }
    if (d_end <= DRIFT_GATE * r0) {
        /* No secular part to speak of: the growth of the envelope itself. */
        note(why, "bounded: the band's centre moved less than 1/4 of its half-width");
        return dm_fit_loglog_slope(ts, ms, m, NULL);
    }
    size_t first = 0;
    while (first < m && !(ds[first] > 0.0))
        first++;
    if (m - first < 4 || !(xs[m - 1] >= 10.0 * xs[first] * DRIFT_RATIO_SLACK)) {
        note(why, "the band's centre moved only within the last decade");
        return NAN;
    }
    double p = dm_fit_loglog_slope(xs + first, ds + first, m - first, NULL);
    /* A centre that grew fast (as t^1.5 or faster: a slow swing starts quadratically)
     * and then stood still for the whole last decade (a slow bounded wander that has
     * come round within the window) is no power law: the window's slope mixes the two
     * and would extend the early swing to any horizon. Then the last decade's slope is
     * the exponent: the latest growth is what a longer run continues. A random walk's
     * running max also stands still over a decade about one time in five, but grew
     * like t^(1/2) before: with "at least linearly" as the bar, 1 walk in 128 passed
     * it (tests/test_fits.c), which would call a growing error bounded. */
    size_t late = first;
    while (late < m && !(xs[late] >= 0.1 * xs[m - 1] * DRIFT_RATIO_SLACK))
        late++;
    if (late - first >= 4 && m - late >= 4 &&
        xs[late - 1] >= 10.0 * xs[first] * DRIFT_RATIO_SLACK) {
        double p_early = dm_fit_loglog_slope(xs + first, ds + first, late - first, NULL);
        double p_late = dm_fit_loglog_slope(xs + late, ds + late, m - late, NULL);
        if (p_early >= DRIFT_EARLY_FAST && p_late < DRIFT_STOPPED) {
            note(why, "slowed: the band's centre grew as t^1.5 or faster, then stood still "
                      "over the last decade; the exponent is the last decade's");
            return p_late;
        }
    }
    note(why, "");
    return p;
}

dm_drift_class dm_drift_classify(double exponent)
{
    if (!isfinite(exponent))
        return DM_DRIFT_UNMEASURED;
    if (exponent < 0.25)
        return DM_DRIFT_BOUNDED;
    if (exponent < 0.75)
        return DM_DRIFT_RANDOM_WALK;
    if (exponent < 1.5)
        return DM_DRIFT_LINEAR;
    return DM_DRIFT_FASTER;
}

const char *dm_drift_class_name(dm_drift_class c)
{
    switch (c) {
    case DM_DRIFT_UNMEASURED: return "unmeasured";
    case DM_DRIFT_BOUNDED: return "bounded";
    case DM_DRIFT_RANDOM_WALK: return "random_walk";
    case DM_DRIFT_LINEAR: return "linear";
    case DM_DRIFT_FASTER: return "faster";
    }
    return "unknown";
}

/* ---- across a sweep ---- */

const char *dm_fit_use_name(dm_fit_use use)
{
    switch (use) {
    case DM_FIT_USED: return "used";
    case DM_FIT_NOT_RUN: return "not_run";
    case DM_FIT_DIVERGED: return "diverged";
    case DM_FIT_FAILED: return "failed";
    case DM_FIT_INTERRUPTED: return "interrupted";
    case DM_FIT_SWAMPED: return "swamped";
    case DM_FIT_NO_VALUE: return "no_value";
    case DM_FIT_LARGE: return "large";
    case DM_FIT_ROUND_OFF: return "round_off";
    case DM_FIT_SIGN_CHANGE: return "sign_change";
    case DM_FIT_COARSE: return "coarse";
    case DM_FIT_REGIME_CHANGE: return "regime_change";
    }
    return "unknown";
}

int dm_fit_use_name_known(const char *name)
{
    if (name[0] == '\0')
        return 1;
    for (int u = DM_FIT_USED; u <= DM_FIT_REGIME_CHANGE; u++)
        if (strcmp(name, dm_fit_use_name((dm_fit_use)u)) == 0)
            return 1;
    return 0;
}

dm_status dm_sweep_summary_fill(dm_sweep_summary *s, const dm_suite *suite,
                                const dm_sweep *sweep, const dm_run_result *results,
                                const dm_sweep_fit *fit, dm_error *err)
{
    memset(s, 0, sizeof *s);
    snprintf(s->name, sizeof s->name, "%s", sweep->name);
    s->energy_order = fit ? fit->energy_order : NAN;
    s->phase_order = fit ? fit->phase_order : NAN;
    s->n_points_energy = fit ? fit->n_energy_points : 0;
    s->n_points_phase = fit ? fit->n_phase_points : 0;
    s->energy_local_min = fit ? fit->energy_local_min : NAN;
    s->energy_local_max = fit ? fit->energy_local_max : NAN;
    s->phase_local_min = fit ? fit->phase_local_min : NAN;
    s->phase_local_max = fit ? fit->phase_local_max : NAN;
    s->energy_trend = fit ? fit->energy_trend : false;
    s->phase_trend = fit ? fit->phase_trend : false;
    s->runs = calloc(sweep->n_runs ? sweep->n_runs : 1, sizeof *s->runs);
    if (s->runs == NULL)
        return dm_error_set(err, DM_ENOMEM, "%s: out of memory for its table", sweep->name);
    for (size_t i = 0; i < sweep->n_runs; i++) {
        size_t k = sweep->runs[i];
        if (results[k].status == DM_RUN_NOT_RUN)
            continue;   /* as in the file: only the runs that started */
        dm_sweep_run_use *u = &s->runs[s->n_runs++];
        snprintf(u->run_id, sizeof u->run_id, "%s", suite->runs[k].id);
        bool coded = fit != NULL && fit->energy_use != NULL && i < fit->n_runs;
        snprintf(u->energy_fit, sizeof u->energy_fit, "%s",
                 coded ? dm_fit_use_name((dm_fit_use)fit->energy_use[i]) : "");
        snprintf(u->phase_fit, sizeof u->phase_fit, "%s",
                 coded ? dm_fit_use_name((dm_fit_use)fit->phase_use[i]) : "");
    }
    return DM_OK;
}

void dm_sweep_summaries_free(dm_sweep_summary *s, size_t n)
{
    if (s == NULL)
        return;
    for (size_t i = 0; i < n; i++)
        free(s[i].runs);
    free(s);
}

void dm_sweep_fit_free(dm_sweep_fit *fit)
{
    if (fit == NULL)
        return;
    free(fit->energy_use);
    free(fit->phase_use);
    fit->energy_use = fit->phase_use = NULL;
    fit->n_runs = 0;
}

static dm_fit_use status_use(dm_run_status status)
{
    switch (status) {
    case DM_RUN_OK: return DM_FIT_USED;
    case DM_RUN_NOT_RUN: return DM_FIT_NOT_RUN;
    case DM_RUN_DIVERGED: return DM_FIT_DIVERGED;
    case DM_RUN_FAILED: return DM_FIT_FAILED;
    case DM_RUN_INTERRUPTED: return DM_FIT_INTERRUPTED;
    case DM_RUN_SWAMPED: return DM_FIT_SWAMPED;
    }
    return DM_FIT_NO_VALUE;
}

/* Round-off floors of a sweep point (our own choices, measured on plain and compensated runs; results/README.md, sweeps). */
#define FIT_ENERGY_FLOOR DM_ENERGY_ROUND_OFF_FLOOR
#define FIT_PHASE_FLOOR DM_PHASE_ROUND_OFF_FLOOR /* |phase per period| */
#define FIT_LARGE_ENERGY 0.5   /* max |dE| >= 1/2: the error is the size of the energy */
/* max |dE| >= 1/10: not small. An error that compounds, e^x - 1 instead of its leading
 * term x (Euler on the oscillator: (1 + h^2)^N - 1), is off that term by x/2, 5 % at
 * 1/10, which moves the order between two steps a factor 2 apart by up to 0.07. */
#define FIT_COARSE_ENERGY DM_ENERGY_COARSE
/* Round-off added to a point's error, measured on Kepler (e = 0.3) sweeps of 1000
 * periods: up to 32 eps sqrt(steps) in the phase per period and 12 in max |dE| (the
 * excess over the truncation error the coarser points' order predicts). A point within
 * 100 eps sqrt(steps) may carry that much. */
#define FIT_ROUND_OFF_NEAR 100.0

typedef struct fit_point {
    size_t slot;   /* position in the sweep */
    double x;      /* |h| or rtol */
} fit_point;

static int by_x(const void *a, const void *b)
{
    const fit_point *p = a, *q = b;
    if (p->x < q->x)
        return -1;
    if (p->x > q->x)
        return 1;
    return (p->slot > q->slot) - (p->slot < q->slot);
}

/* The order between two points of a fit (x ascending in `pts`, |error| in `y` by slot). */
static double pair_order(const fit_point *p, const fit_point *q, const double *y)
{
    return (log(y[q->slot]) - log(y[p->slot])) / (log(q->x) - log(p->x));
}

static void line_orders(const fit_point *pts, size_t n, const double *y,
                        const unsigned char *use, dm_line_fit *line, double *local_min,
                        double *local_max, bool *trend);

/* One fit over the points `use` still marks used, `pts` sorted by x, errors |y| by slot:
 *  1. the round-off tail: while two coarser points remain, the finest point is left out
 *     (round_off) when its error is within FIT_ROUND_OFF_NEAR eps sqrt(steps) and the
 *     order between it and its coarser neighbour is more than DM_LOCAL_ORDER_SPREAD
 *     below the next order up the sweep: the error stopped falling as it did, where
 *     round-off can account for it;
 *  2. line_orders. */
static void fit_one(const fit_point *pts, size_t n, const double *y, const double *root_steps,
                    unsigned char *use, dm_line_fit *line, double *local_min,
                    double *local_max, bool *trend)
{
    size_t k[3], m;
    for (;;) {
        m = 0;
        for (size_t j = 0; j < n && m < 3; j++)
            if (use[pts[j].slot] == DM_FIT_USED)
                k[m++] = j;
        if (m < 3)
            break;
        const fit_point *f = &pts[k[0]], *a = &pts[k[1]], *b = &pts[k[2]];
        double near = FIT_ROUND_OFF_NEAR * DBL_EPSILON * root_steps[f->slot];
        if (!(f->x < a->x && a->x < b->x) || !(y[f->slot] <= near) ||
            !(pair_order(f, a, y) < pair_order(a, b, y) - DM_LOCAL_ORDER_SPREAD))
            break;
        use[f->slot] = DM_FIT_ROUND_OFF;
    }
    line_orders(pts, n, y, use, line, local_min, local_max, trend);
}

/* The least-squares line through the points `use` marks used (`pts` sorted by x, |y| by
 * slot), the range of the orders between neighbours and whether those move one way
 * along the whole sweep by more than DM_ORDER_TREND of the order. */
static void line_orders(const fit_point *pts, size_t n, const double *y,
                        const unsigned char *use, dm_line_fit *line, double *local_min,
                        double *local_max, bool *trend)
{
    *line = (dm_line_fit){ 0 };
    *local_min = *local_max = NAN;
    double first = NAN, last = NAN, dir = 0.0;
    bool one_way = true;
    const fit_point *prev = NULL;
    size_t n_local = 0;
    for (size_t j = 0; j < n; j++) {
        const fit_point *p = &pts[j];
        if (use[p->slot] != DM_FIT_USED)
            continue;
        dm_line_fit_add(line, log(p->x), log(y[p->slot]));
        if (prev != NULL && p->x != prev->x) {
            double s = pair_order(prev, p, y);
            *local_min = isnan(*local_min) || s < *local_min ? s : *local_min;
            *local_max = isnan(*local_max) || s > *local_max ? s : *local_max;
            if (n_local++ == 0)
                first = s;
            else {
                double d = s > last ? 1.0 : s < last ? -1.0 : 0.0;
                one_way = one_way && d != 0.0 && (dir == 0.0 || d == dir);
                dir = d;
            }
            last = s;
        }
        prev = p;
    }
    double order = dm_line_fit_slope(line);
    *trend = n_local >= 2 && one_way && fabs(last - first) > DM_ORDER_TREND * fabs(order);
}

/* The phase fit keeps the longest run of points of one sign in step order (of two
 * equally long, the coarser): the others are past a zero crossing of the phase error or
 * are round-off of either sign (sign_change), so the fit never spans a sign change. */
static void keep_one_sign(const fit_point *pts, size_t n, const dm_fit_input *in,
                          unsigned char *use)
{
    size_t best_lo = 0, best_len = 0, lo = 0, len = 0;
    double sign = 0.0;
    for (size_t j = 0; j < n; j++) {
        size_t i = pts[j].slot;
        if (use[i] != DM_FIT_USED)
            continue;
        double s = in[i].phase_error_per_period > 0.0 ? 1.0 : -1.0;
        if (s != sign) {
            sign = s;
            lo = j;
            len = 0;
        }
        if (++len >= best_len) { /* >=: of two as long, the coarser */
            best_len = len;
            best_lo = lo;
        }
    }
    size_t kept = 0;
    for (size_t j = 0; j < n; j++) {
        size_t i = pts[j].slot;
        if (use[i] != DM_FIT_USED)
            continue;
        if (j >= best_lo && kept < best_len)
            kept++;
        else
            use[i] = DM_FIT_SIGN_CHANGE;
    }
}

dm_status dm_fit_points(const char *name, const dm_fit_input *in, size_t n, dm_sweep_fit *fit,
                        dm_error *err)
{
    *fit = (dm_sweep_fit){ .energy_order = NAN, .phase_order = NAN, .n_runs = n,
                           .energy_local_min = NAN, .energy_local_max = NAN,
                           .phase_local_min = NAN, .phase_local_max = NAN };
    fit->energy_use = calloc(n ? n : 1, sizeof *fit->energy_use);
    fit->phase_use = calloc(n ? n : 1, sizeof *fit->phase_use);
    fit_point *pts = calloc(n ? n : 1, sizeof *pts);
    double *ey = calloc(n ? n : 1, sizeof *ey), *py = calloc(n ? n : 1, sizeof *py);
    double *root = calloc(n ? n : 1, sizeof *root);
    if (fit->energy_use == NULL || fit->phase_use == NULL || pts == NULL || ey == NULL ||
        py == NULL || root == NULL) {
        free(pts);
        free(ey);
        free(py);
        free(root);
        dm_sweep_fit_free(fit);
        return dm_error_set(err, DM_ENOMEM, "%s: out of memory for the fit of %zu runs", name,
                            n);
    }
    for (size_t i = 0; i < n; i++) {
        double x = in[i].x;
        pts[i] = (fit_point){ .slot = i, .x = x };
        root[i] = sqrt((double)(in[i].steps > 0 ? in[i].steps : 1));
        dm_fit_use e = status_use(in[i].status), p = e;
        if (e == DM_FIT_USED && in[i].regime_changed)
            e = p = DM_FIT_REGIME_CHANGE; /* its error is of another orbit */
        double de = in[i].max_energy_error, ph = fabs(in[i].phase_error_per_period);
        ey[i] = de;
        py[i] = ph;
        if (e == DM_FIT_USED) {
            bool large = !(de < FIT_LARGE_ENERGY), coarse = !(de < FIT_COARSE_ENERGY);
            if (!(x > 0.0) || !isfinite(x) || !(de > 0.0) || !isfinite(de))
                e = DM_FIT_NO_VALUE;
            else if (large)
                e = DM_FIT_LARGE;
            else if (coarse)
                e = DM_FIT_COARSE;
            else if (de <= FIT_ENERGY_FLOOR * DBL_EPSILON * root[i])
                e = DM_FIT_ROUND_OFF;
            if (!(x > 0.0) || !isfinite(x) || !(ph > 0.0) || !isfinite(ph))
                p = DM_FIT_NO_VALUE;
            else if (large)
                p = DM_FIT_LARGE;
            else if (coarse)
                p = DM_FIT_COARSE;
            else if (ph <= FIT_PHASE_FLOOR * DBL_EPSILON * root[i])
                p = DM_FIT_ROUND_OFF;
        }
        fit->energy_use[i] = (unsigned char)e;
        fit->phase_use[i] = (unsigned char)p;
    }
    qsort(pts, n, sizeof *pts, by_x);
    keep_one_sign(pts, n, in, fit->phase_use);
    fit_one(pts, n, ey, root, fit->energy_use, &fit->energy_line, &fit->energy_local_min,
            &fit->energy_local_max, &fit->energy_trend);
    fit_one(pts, n, py, root, fit->phase_use, &fit->phase_line, &fit->phase_local_min,
            &fit->phase_local_max, &fit->phase_trend);
    fit->energy_order = dm_line_fit_slope(&fit->energy_line);
    fit->phase_order = dm_line_fit_slope(&fit->phase_line);
    fit->n_energy_points = (size_t)fit->energy_line.n;
    fit->n_phase_points = (size_t)fit->phase_line.n;
    free(pts);
    free(ey);
    free(py);
    free(root);
    return DM_OK;
}

dm_status dm_sweep_fit_compute(const dm_suite *suite, const dm_sweep *sweep,
                               const dm_run_result *results, dm_sweep_fit *fit,
                               dm_error *err)
{
    size_t n = sweep->n_runs;
    dm_fit_input *in = calloc(n ? n : 1, sizeof *in);
    if (in == NULL) {
        *fit = (dm_sweep_fit){ .energy_order = NAN, .phase_order = NAN };
        return dm_error_set(err, DM_ENOMEM, "%s: out of memory for the fit of %zu runs",
                            sweep->name, n);
    }
    for (size_t i = 0; i < n; i++) {
        const dm_run_spec *spec = &suite->runs[sweep->runs[i]];
        const dm_run_result *res = &results[sweep->runs[i]];
        in[i] = (dm_fit_input){
            .x = spec->step_setting == DM_SET_BY_RTOL ? spec->method_config.rtol
                                                       : fabs(spec->method_config.h),
            .status = res->status,
            .steps = res->metrics.steps,
            .max_energy_error = res->metrics.max_energy_error,
            .phase_error_per_period = res->metrics.phase_error_per_period,
            .regime_changed = res->regime_change[0] != '\0',
        };
    }
    dm_status st = dm_fit_points(sweep->name, in, n, fit, err);
    free(in);
    return st;
}

static void mark_swamped(dm_run_result *r);

void dm_run_derive_from_series(dm_run_result *r, double period)
{
    const dm_series *ser = &r->series;
    const char *why = "";
    r->metrics.drift_exponent = dm_drift_exponent(ser, period, &why);
    snprintf(r->drift_class, sizeof r->drift_class, "%s",
             dm_drift_class_name(dm_drift_classify(r->metrics.drift_exponent)));
    snprintf(r->drift_note, sizeof r->drift_note, "%s", why ? why : "");
    if (r->status == DM_RUN_OK && ser->n > 0)
        mark_swamped(r);
    if (r->status != DM_RUN_OK) {
        /* A growth law of a run that did not end well would read as a property of the
         * method: its exponent is not given. */
        r->metrics.drift_exponent = NAN;
        snprintf(r->drift_class, sizeof r->drift_class, "%s",
                 dm_drift_class_name(DM_DRIFT_UNMEASURED));
        snprintf(r->drift_note, sizeof r->drift_note, "the run is %s, not ok",
                 dm_run_status_name(r->status));
    }
}

static void mark_swamped(dm_run_result *r)
{
    const dm_series *ser = &r->series;
    /* |dE| >= 1/2 over the whole last bucket: energy of the size of the energy itself
     * lost (or gained); its numbers are not an error of a method any more. */
    size_t last = ser->n - 1;
    double lo = ser->energy_error_min[last], hi = ser->energy_error_max[last];
    double from = last > 0 ? ser->time[last - 1] : 0.0;
    if (hi <= -0.5 || lo >= 0.5) {
        r->status = DM_RUN_SWAMPED;
        snprintf(r->reason, sizeof r->reason,
                 "energy %s: dE stayed in [%.3g, %.3g] over the last bucket (t = %.17g to "
                 "%.17g), at least half the energy scale", hi <= -0.5 ? "lost" : "gained", lo,
                 hi, from, ser->time[last]);
    }
}

dm_run_status dm_run_status_named(const char *name)
{
    static const dm_run_status all[] = { DM_RUN_OK, DM_RUN_DIVERGED, DM_RUN_FAILED,
                                         DM_RUN_INTERRUPTED, DM_RUN_SWAMPED };
    for (size_t i = 0; i < sizeof all / sizeof all[0]; i++)
        if (strcmp(name, dm_run_status_name(all[i])) == 0)
            return all[i];
    return DM_RUN_NOT_RUN;
}

dm_status dm_fit_energy_through(const dm_sweep_fit *fit, const double *x, const double *y,
                                dm_sweep_fit *out, dm_error *err)
{
    size_t n = fit->n_runs;
    *out = (dm_sweep_fit){ .energy_order = NAN, .phase_order = NAN, .n_runs = n,
                           .energy_local_min = NAN, .energy_local_max = NAN,
                           .phase_local_min = NAN, .phase_local_max = NAN };
    out->energy_use = malloc(n ? n : 1);
    fit_point *pts = calloc(n ? n : 1, sizeof *pts);
    if (out->energy_use == NULL || pts == NULL) {
        free(pts);
        dm_sweep_fit_free(out);
        return dm_error_set(err, DM_ENOMEM, "out of memory refitting %zu runs", n);
    }
    for (size_t i = 0; i < n; i++) {
        pts[i] = (fit_point){ .slot = i, .x = x[i] };
        bool usable = fit->energy_use[i] == DM_FIT_USED && y[i] > 0.0 && isfinite(y[i]);
        out->energy_use[i] = usable ? DM_FIT_USED
                             : fit->energy_use[i] == DM_FIT_USED ? DM_FIT_NO_VALUE
                                                                 : fit->energy_use[i];
    }
    qsort(pts, n, sizeof *pts, by_x);
    line_orders(pts, n, y, out->energy_use, &out->energy_line, &out->energy_local_min,
                &out->energy_local_max, &out->energy_trend);
    out->energy_order = dm_line_fit_slope(&out->energy_line);
    out->n_energy_points = (size_t)out->energy_line.n;
    free(pts);
    return DM_OK;
}
