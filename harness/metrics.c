/* metrics.c — the fits behind the per-run and per-sweep figures. */
#include <math.h>

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

double dm_drift_exponent(const dm_series *series)
{
    size_t n = series->n;
    if (n < 4)
        return NAN;
    double t_end = series->time[n - 1];
    double t_min = fmax(t_end / 1000.0, series->time[0]);
    if (!(t_min > 0.0) || !(t_end > t_min))
        return NAN;
    /* At most 64 points, evenly spaced in log t, so early and late times weigh alike. */
    enum { POINTS = 64 };
    double xs[POINTS + 1], ys[POINTS + 1];
    size_t m = 0;
    double step = log(t_end / t_min) / POINTS;
    double next = log(t_min);
    double running = 0.0;
    for (size_t i = 0; i < n; i++) {
        double peak = fmax(fabs(series->energy_error_min[i]), fabs(series->energy_error_max[i]));
        if (peak > running)
            running = peak;
        double t = series->time[i];
        if (t < t_min || log(t) < next)
            continue;
        if (m < POINTS + 1) {
            xs[m] = t;
            ys[m] = running;
            m++;
        }
        while (next <= log(t))
            next += step;
    }
    size_t used = 0;
    double slope = dm_fit_loglog_slope(xs, ys, m, &used);
    return used >= 4 ? slope : NAN;
}

void dm_sweep_fit_compute(const dm_suite *suite, const dm_sweep *sweep,
                          const dm_run_result *results, dm_sweep_fit *fit)
{
    double setting[256], energy[256], phase[256];
    size_t n = 0;
    for (size_t i = 0; i < sweep->n_runs && n < 256; i++) {
        size_t r = sweep->runs[i];
        const dm_run_spec *spec = &suite->runs[r];
        const dm_run_result *res = &results[r];
        if (res->status != DM_RUN_OK)
            continue;
        setting[n] = spec->step_setting == DM_SET_BY_RTOL ? spec->method_config.rtol
                                              : fabs(spec->method_config.h);
        energy[n] = res->metrics.max_energy_error;
        phase[n] = fabs(res->metrics.phase_error_per_period);
        n++;
    }
    size_t used_e = 0, used_p = 0;
    fit->energy_order = dm_fit_loglog_slope(setting, energy, n, &used_e);
    fit->phase_order = dm_fit_loglog_slope(setting, phase, n, &used_p);
    fit->n_points = used_e < used_p ? used_e : used_p;
}
