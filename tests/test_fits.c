/* test_fits.c — the drift exponent and the sweep fits on runs and series whose answers
 * are known: bounded, linear and random-walk growth, saturated runs, round-off floors
 * and sign changes. The definitions are in results/README.md. */
#include "dm_test_util.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"

/* A run spec with up to two problem parameters (dm_test_make_spec). */
static void make_spec(dm_run_spec *spec, const char *problem, size_t n_keys,
                      const char *const *keys, const double *values, const char *method,
                      double steps_per_period, double periods, size_t samples, bool compensated)
{
    dm_test_make_spec(spec, problem, n_keys, keys, values, method, steps_per_period, 0.0,
                      periods, samples, compensated);
}

static double run_exponent(const dm_run_spec *spec, dm_run_status want, double *max_de)
{
    dm_run_result r;
    dm_error err = { 0 };
    assert_int_equal(dm_run(spec, &r, NULL, &err), DM_OK);
    if (r.status != want)
        print_error("run %s: status %s (%s)\n", spec->id, dm_run_status_name(r.status),
                    r.reason);
    assert_int_equal(r.status, want);
    const char *why = NULL;
    double p = dm_drift_exponent(&r.series, spec->inst.period, &why);
    assert_true(p == r.metrics.drift_exponent || (isnan(p) && isnan(r.metrics.drift_exponent)));
    print_message("  %-52s samples %6zu: exponent %8.4f %-11s %s\n", spec->id, spec->samples,
                  p, dm_drift_class_name(dm_drift_classify(p)), why);
    if (max_de != NULL)
        *max_de = r.metrics.max_energy_error;
    dm_run_result_free(&r);
    return p;
}

static const char *const amp_key[1] = { "amplitude" };

/* Common practice (backward error analysis, Hairer, Lubich & Wanner, Geometric Numerical
 * Integration, 2006, ch. IX): Störmer–Verlet's energy error stays bounded. Near the
 * separatrix the running max of |dE| is flat after 0.4 periods; the exponent must be
 * about 0 whatever the number of stored buckets. */
static void bounded_verlet_exponent_does_not_depend_on_samples(void **state)
{
    (void)state;
    const size_t samples[4] = { 256, 1024, 4096, 65536 };
    const double amps[2] = { 3.141451232233083, 3.0 };
    for (int a = 0; a < 2; a++) {
        double p[4];
        for (int k = 0; k < 4; k++) {
            dm_run_spec spec;
            make_spec(&spec, "pendulum", 1, amp_key, &amps[a], "verlet", 1024, 20, samples[k],
                      false);
            p[k] = run_exponent(&spec, DM_RUN_OK, NULL);
            assert_true(fabs(p[k]) < 0.1);
            assert_int_equal(dm_drift_classify(p[k]), DM_DRIFT_BOUNDED);
        }
        for (int k = 1; k < 4; k++)
            assert_true(fabs(p[k] - p[0]) <= 0.05);
    }
}

/* RK4 is not symplectic: on the rotating pendulum (E = 1.5 w0^2) it loses energy at a
 * steady rate per period (common practice, Hairer, Lubich & Wanner 2006, ch. I), so the
 * energy error grows linearly: exponent 1, over 20 periods as over 1000, and whatever
 * the samples. */
static void rk4_linear_loss_has_exponent_one_at_any_samples(void **state)
{
    (void)state;
    const char *const key[1] = { "energy" };
    const double e[1] = { 1.5 };
    const size_t samples[4] = { 256, 1024, 4096, 65536 };
    double p[4];
    for (int k = 0; k < 4; k++) {
        dm_run_spec spec;
        make_spec(&spec, "pendulum", 1, key, e, "rk4", 96, 20, samples[k], false);
        p[k] = run_exponent(&spec, DM_RUN_OK, NULL);
        assert_true(fabs(p[k] - 1.0) <= 0.1);
        assert_int_equal(dm_drift_classify(p[k]), DM_DRIFT_LINEAR);
    }
    /* 256 buckets over 20 periods are 0.08 T wide, and this loss comes once per period
     * in a step: the coarsest sampling moves the exponent by up to 0.06 */
    for (int k = 1; k < 4; k++)
        assert_true(fabs(p[k] - p[0]) <= 0.1);
    dm_run_spec spec;
    make_spec(&spec, "pendulum", 1, key, e, "rk4", 96, 1000, 4096, false);
    assert_true(fabs(run_exponent(&spec, DM_RUN_OK, NULL) - 1.0) <= 0.1);
}

/* The same trajectory in other units: w0^2 = g/L scaled by 4 with the energy scaled by
 * 4 is the same orbit on a clock twice as fast (t -> t / 2); the harmonic oscillator at
 * omega 2.7 is omega 1 on a faster clock. The same steps per period make the same
 * numbers up to rounding, so the exponent is the same. */
static void exponent_is_the_same_in_scaled_units(void **state)
{
    (void)state;
    const char *const keys[2] = { "g_over_l", "energy" };
    const double slow[2] = { 1.0, 1.5 }, fast[2] = { 4.0, 6.0 };
    dm_run_spec a, b;
    make_spec(&a, "pendulum", 2, keys, slow, "rk4", 96, 20, 1024, false);
    make_spec(&b, "pendulum", 2, keys, fast, "rk4", 96, 20, 1024, false);
    assert_close(b.inst.period, a.inst.period / 2.0, 1e-14);
    double pa = run_exponent(&a, DM_RUN_OK, NULL), pb = run_exponent(&b, DM_RUN_OK, NULL);
    assert_true(fabs(pa - pb) <= 0.01);

    const char *const w_key[1] = { "omega" };
    const double w1[1] = { 1.0 }, w2[1] = { 2.7 };
    make_spec(&a, "harmonic", 1, w_key, w1, "rk4", 16, 200, 1024, false);
    make_spec(&b, "harmonic", 1, w_key, w2, "rk4", 16, 200, 1024, false);
    pa = run_exponent(&a, DM_RUN_OK, NULL);
    pb = run_exponent(&b, DM_RUN_OK, NULL);
    assert_true(fabs(pa - pb) <= 0.01);
    make_spec(&a, "pendulum", 2, keys, slow, "verlet", 64, 200, 1024, false);
    make_spec(&b, "pendulum", 2, keys, fast, "verlet", 64, 200, 1024, false);
    pa = run_exponent(&a, DM_RUN_OK, NULL);
    pb = run_exponent(&b, DM_RUN_OK, NULL);
    assert_true(fabs(pa) < 0.1 && fabs(pb) < 0.1 && fabs(pa - pb) <= 0.05);
}

/* ---- series made by hand ---- */

/* splitmix64 (Steele, Lea & Flood 2014) and Box-Muller: a fixed, portable sequence. */
static uint64_t mix_state;
static double uniform01(void)
{
    uint64_t z = (mix_state += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    z ^= z >> 31;
    return ((double)(z >> 11) + 0.5) / 9007199254740992.0;
}
static double normal01(void)
{
    return sqrt(-2.0 * log(uniform01())) * cos(2.0 * M_PI * uniform01());
}

/* dE(k) = walk + drift k + osc sin(2 pi k / per), per steps per period, thinned into
 * `samples` buckets of min / max / end exactly as the runner stores them. */
typedef struct fake_run {
    dm_series s;
    double t[4096], e[4096], lo[4096], hi[4096];
} fake_run;

static void fake_series(fake_run *f, size_t samples, uint64_t per, uint64_t periods,
                        double walk, double drift, double osc)
{
    memset(f, 0, sizeof *f);
    uint64_t steps = per * periods;
    double w = 0.0;
    uint64_t k = 0;
    for (size_t b = 0; b < samples; b++) {
        uint64_t k_end = steps * (b + 1) / samples;
        double lo = INFINITY, hi = -INFINITY, de = 0.0;
        for (; k < k_end; k++) {
            w += walk * normal01();
            double kk = (double)(k + 1);
            de = w + drift * kk + osc * sin(2.0 * M_PI * kk / (double)per);
            lo = fmin(lo, de);
            hi = fmax(hi, de);
        }
        f->t[b] = (double)k / (double)per; /* period 1 */
        f->e[b] = de;
        f->lo[b] = lo;
        f->hi[b] = hi;
    }
    f->s.n = f->s.capacity = samples;
    f->s.time = f->t;
    f->s.energy_error = f->e;
    f->s.energy_error_min = f->lo;
    f->s.energy_error_max = f->hi;
}

/* Brouwer's law (D. Brouwer, Astron. J. 46 (1937) 149): independent round-off errors
 * make the energy error a random walk, growing like sqrt(t) in rms. On random walks
 * made here with a known law (beside an oscillation like a method's bounded error) the
 * exponent averages 0.5; one path alone scatters (its running max is one draw). */
static void random_walk_series_average_one_half(void **state)
{
    (void)state;
    static fake_run f;
    mix_state = 20240601u;
    double sum = 0.0;
    const int paths = 16;
    for (int i = 0; i < paths; i++) {
        fake_series(&f, 1024, 256, 2000, 1e-15, 0.0, 1e-14);
        const char *why = NULL;
        double p = dm_drift_exponent(&f.s, 1.0, &why);
        assert_true(isfinite(p));
        sum += p;
    }
    double mean = sum / paths;
    print_message("random walks: mean exponent %.3f over %d paths\n", mean, paths);
    assert_true(fabs(mean - 0.5) <= 0.1);
    /* ... and a walk is not taken for a wander that stopped: over 256 more paths none
     * is called "slowed" (a walk's running max stands still over the last decade about
     * one time in five, but it did not grow linearly before) */
    int slowed = 0, still = 0;
    for (int i = 0; i < 256; i++) {
        fake_series(&f, 1024, 64, 2000, 1e-15, 0.0, 1e-14);
        const char *why = NULL;
        double q = dm_drift_exponent(&f.s, 1.0, &why);
        slowed += strncmp(why, "slowed", 6) == 0;
        still += q < 0.1;
    }
    print_message("random walks: %d of 256 with an exponent below 0.1, %d called slowed\n",
                  still, slowed);
    assert_int_equal(slowed, 0);

    /* a pure drift beside a large oscillation: exactly linear growth of the centre */
    fake_series(&f, 1024, 256, 100, 0.0, 1e-12, 1e-8);
    double p = dm_drift_exponent(&f.s, 1.0, NULL);
    print_message("drift 1e-12 per step beside an oscillation of 1e-8: exponent %.4f\n", p);
    assert_true(fabs(p - 1.0) <= 0.02);
    /* the oscillation alone: bounded */
    fake_series(&f, 1024, 256, 100, 0.0, 0.0, 1e-8);
    p = dm_drift_exponent(&f.s, 1.0, NULL);
    assert_true(fabs(p) < 0.01);
    /* too short a horizon: NaN with a reason */
    fake_series(&f, 1024, 256, 10, 0.0, 1e-12, 1e-8);
    const char *why = NULL;
    assert_true(isnan(dm_drift_exponent(&f.s, 1.0, &why)));
    assert_non_null(strstr(why, "too short"));
    /* nothing above the round-off floor: NaN with a reason */
    fake_series(&f, 1024, 256, 100, 0.0, 0.0, 8.0 * DBL_EPSILON);
    assert_true(isnan(dm_drift_exponent(&f.s, 1.0, &why)));
    assert_non_null(strstr(why, "round-off"));
}

/* A slow bounded wander of the band's centre (here a swing up as t^2 over the first
 * 100 periods that then stays, beside a fast oscillation) over 1000 periods: the centre
 * stood still over the last decade, so the exponent is about 0 (bounded), not the
 * window's mixed slope of the early swing and the standstill; the same at other
 * samples. A centre that keeps growing as t^2 keeps its exponent 2. */
static void a_wander_that_stopped_is_bounded(void **state)
{
    (void)state;
    static fake_run f;
    const size_t sizes[2] = { 1024, 4096 };
    for (int keep_growing = 0; keep_growing < 2; keep_growing++)
        for (int z = 0; z < 2; z++) {
            size_t samples = sizes[z];
            const uint64_t per = 64, periods = 1000;
            uint64_t k = 0, steps = per * periods;
            for (size_t b = 0; b < samples; b++) {
                uint64_t k_end = steps * (b + 1) / samples;
                double lo = INFINITY, hi = -INFINITY, de = 0.0;
                for (; k < k_end; k++) {
                    double t = (double)(k + 1) / (double)per;
                    double swing = keep_growing ? t / 100.0 : fmin(t, 100.0) / 100.0;
                    de = 1e-3 * swing * swing + 1e-3 * sin(2.0 * M_PI * t);
                    lo = fmin(lo, de);
                    hi = fmax(hi, de);
                }
                f.t[b] = (double)k / (double)per;
                f.e[b] = de;
                f.lo[b] = lo;
                f.hi[b] = hi;
            }
            f.s.n = f.s.capacity = samples;
            f.s.time = f.t;
            f.s.energy_error = f.e;
            f.s.energy_error_min = f.lo;
            f.s.energy_error_max = f.hi;
            const char *why = NULL;
            double p = dm_drift_exponent(&f.s, 1.0, &why);
            print_message("centre %s, samples %zu: exponent %.3f (%s)\n",
                          keep_growing ? "growing as t^2" : "stopped at 100 periods", samples,
                          p, why);
            if (keep_growing)
                assert_true(p >= 1.5 && why[0] == '\0'); /* faster; (t0 + tau)^2 - t0^2 */
            else
                assert_true(fabs(p) < 0.05 && strncmp(why, "slowed", 6) == 0);
        }
}

/* Plain against compensated summation (Kahan 1965) where round-off is all there is:
 * Yoshida's 8th-order method at 1024 steps per period has a truncation error near
 * 1e-18 (its energy error falls 256-fold per halving of h down to 128 steps, see
 * test_order.c), so the plain run's energy error is its round-off, which grows; the
 * compensated one stays at the round-off floor of evaluating H. */
static void round_off_grows_in_plain_sums_not_in_compensated(void **state)
{
    (void)state;
    const double amp[1] = { 1.0 };
    dm_run_spec plain, comp;
    make_spec(&plain, "pendulum", 1, amp_key, amp, "yoshida8", 1024, 1000, 1024, false);
    make_spec(&comp, "pendulum", 1, amp_key, amp, "yoshida8", 1024, 1000, 1024, true);
    double de_plain = 0.0, de_comp = 0.0;
    double pp = run_exponent(&plain, DM_RUN_OK, &de_plain);
    double pc = run_exponent(&comp, DM_RUN_OK, &de_comp);
    print_message("max |dE|: plain %.3e, compensated %.3e\n", de_plain, de_comp);
    assert_true(de_plain >= 10.0 * de_comp);
    assert_true(pp >= 0.25 && pp <= 1.25);
    assert_true(isnan(pc));
}

/* ---- the sweep fits ---- */

static void parse(dm_suite *suite, const char *text)
{
    dm_error err = { 0 };
    dm_status st = dm_suite_parse(suite, text, strlen(text), "fits.yaml", "/tmp/dm-fits.h5", &err);
    if (st != DM_OK)
        print_error("%s\n", err.msg);
    assert_int_equal(st, DM_OK);
}

static size_t count_use(const unsigned char *use, size_t n, dm_fit_use what)
{
    size_t c = 0;
    for (size_t i = 0; i < n; i++)
        c += use[i] == what;
    return c;
}

/* RK4 on the harmonic oscillator multiplies |omega q + i p|^2 by |R(i y)|^2 =
 * 1 - y^6/72 + y^8/576 per step, y = omega h (R(z) = 1 + z + z^2/2 + z^3/6 + z^4/24,
 * Hairer & Wanner, Solving ODEs II, 1996, sect. IV.2), so after N steps
 * dE = |R(i y)|^(2N) - 1 exactly. Coarse steps lose all the energy (dE -> -1): those
 * runs are marked and left out, and the fit of the rest matches the closed form. */
static void saturated_runs_leave_the_energy_fit(void **state)
{
    (void)state;
    dm_suite suite;
    parse(&suite, "name: lost\n"
                  "horizon: {periods: 200}\n"
                  "samples: 256\n"
                  "problems:\n"
                  "  - {problem: harmonic, omega: 2.7}\n"
                  "methods:\n"
                  "  - {method: rk4, steps_per_period: [3, 4, 5, 16, 24, 32, 48]}\n");
    assert_int_equal(suite.n_sweeps, 1);
    dm_run_result *res = calloc(suite.n_runs, sizeof *res);
    assert_non_null(res);
    dm_error err = { 0 };
    size_t swamped = 0;
    for (size_t i = 0; i < suite.n_runs; i++) {
        assert_int_equal(dm_run(&suite.runs[i], &res[i], NULL, &err), DM_OK);
        print_message("  %-40s %-8s max |dE| %.3e %s\n", suite.runs[i].id,
                      dm_run_status_name(res[i].status), res[i].metrics.max_energy_error,
                      res[i].reason);
        swamped += res[i].status == DM_RUN_SWAMPED;
    }
    assert_true(swamped >= 2);
    dm_sweep_fit fit;
    assert_int_equal(dm_sweep_fit_compute(&suite, &suite.sweeps[0], res, &fit, &err), DM_OK);
    const dm_sweep *sw = &suite.sweeps[0];
    double xs[16], ys[16];
    size_t m = 0;
    for (size_t i = 0; i < sw->n_runs; i++) {
        const dm_run_spec *spec = &suite.runs[sw->runs[i]];
        const dm_run_result *r = &res[sw->runs[i]];
        print_message("  %s: energy %s, phase %s\n", spec->id,
                      dm_fit_use_name((dm_fit_use)fit.energy_use[i]),
                      dm_fit_use_name((dm_fit_use)fit.phase_use[i]));
        if (r->status == DM_RUN_SWAMPED)
            assert_int_equal(fit.energy_use[i], DM_FIT_SWAMPED);
        if (fit.energy_use[i] != DM_FIT_USED)
            continue;
        double y = 2.7 * spec->method_config.h;
        double g = 1.0 - pow(y, 6) / 72.0 + pow(y, 8) / 576.0;
        double n_steps = (double)r->metrics.steps;
        xs[m] = spec->method_config.h;
        ys[m] = -expm1(n_steps * log(g));
        assert_close(r->metrics.max_energy_error, ys[m], 1e-6);
        m++;
    }
    assert_int_equal(fit.n_energy_points, m);
    assert_int_equal(fit.n_energy_points, count_use(fit.energy_use, fit.n_runs, DM_FIT_USED));
    assert_int_equal(fit.n_phase_points, count_use(fit.phase_use, fit.n_runs, DM_FIT_USED));
    assert_true(m >= 3);
    double want = dm_fit_loglog_slope(xs, ys, m, NULL);
    print_message("energy order %.4f (closed form %.4f) from %zu runs\n", fit.energy_order,
                  want, fit.n_energy_points);
    assert_close(fit.energy_order, want, 1e-6);
    dm_sweep_fit_free(&fit);
    for (size_t i = 0; i < suite.n_runs; i++)
        dm_run_result_free(&res[i]);
    free(res);
    dm_suite_free(&suite);
}

/* Results filled by hand: a power law in h with the coarse end past a sign change of
 * the phase error, the fine end at the round-off floor, one run diverged. */
static void fit_codes_sign_change_floor_and_counts(void **state)
{
    (void)state;
    dm_suite suite;
    parse(&suite, "name: codes\n"
                  "horizon: {periods: 10}\n"
                  "samples: 64\n"
                  "problems:\n"
                  "  - {problem: harmonic}\n"
                  "methods:\n"
                  "  - {method: verlet, h: [0.4, 0.2, 0.1, 0.05, 0.025, 0.0125, 1e-6]}\n");
    const dm_sweep *sw = &suite.sweeps[0];
    assert_int_equal(sw->n_runs, 7);
    dm_run_result *res = calloc(suite.n_runs, sizeof *res);
    assert_non_null(res);
    for (size_t i = 0; i < sw->n_runs; i++) {
        const dm_run_spec *spec = &suite.runs[sw->runs[i]];
        dm_run_result *r = &res[sw->runs[i]];
        double h = spec->method_config.h;
        r->status = DM_RUN_OK;
        r->metrics.steps = (uint64_t)(spec->t_end / h);
        r->metrics.max_energy_error = 0.1 * h * h;
        /* -h^2 + 10 h^4: changes sign at h^2 = 0.1 */
        r->metrics.phase_error_per_period = -h * h + 10.0 * h * h * h * h;
        if (h == 0.4)
            r->status = DM_RUN_DIVERGED;
        if (h < 1e-5) { /* 1e-13: below 4 eps sqrt(6.3e7 steps) = 7e-12 */
            r->metrics.max_energy_error = 1e-13;
            r->metrics.phase_error_per_period = 1e-20;
        }
    }
    dm_sweep_fit fit;
    dm_error err = { 0 };
    assert_int_equal(dm_sweep_fit_compute(&suite, sw, res, &fit, &err), DM_OK);
    for (size_t i = 0; i < sw->n_runs; i++) {
        double h = suite.runs[sw->runs[i]].method_config.h;
        dm_fit_use e = (dm_fit_use)fit.energy_use[i], p = (dm_fit_use)fit.phase_use[i];
        print_message("  h %-8g energy %-12s phase %s\n", h, dm_fit_use_name(e),
                      dm_fit_use_name(p));
        if (h == 0.4) {
            assert_int_equal(e, DM_FIT_DIVERGED);
            assert_int_equal(p, DM_FIT_DIVERGED);
        } else if (h < 1e-5) {
            assert_int_equal(e, DM_FIT_ROUND_OFF);
            assert_int_equal(p, DM_FIT_ROUND_OFF);
        } else {
            assert_int_equal(e, DM_FIT_USED);
            /* 0.4 is out already; h = 0.2 ... 0.0125 all have h^2 < 0.1 except none */
            assert_int_equal(p, h * h < 0.1 ? DM_FIT_USED : DM_FIT_SIGN_CHANGE);
        }
    }
    assert_int_equal(fit.n_energy_points, 5);
    assert_close(fit.energy_order, 2.0, 1e-12);
    assert_int_equal(fit.n_phase_points, 5);
    dm_sweep_fit_free(&fit);

    /* now the sign change is inside the sweep: h = 0.4 ok, phase +0.96 */
    res[sw->runs[0]].status = DM_RUN_OK;
    res[sw->runs[0]].metrics.steps = 157;
    assert_int_equal(dm_sweep_fit_compute(&suite, sw, res, &fit, &err), DM_OK);
    assert_int_equal(fit.energy_use[0], DM_FIT_USED);
    assert_int_equal(fit.phase_use[0], DM_FIT_SIGN_CHANGE);
    assert_int_equal(fit.n_energy_points, 6);
    assert_int_equal(fit.n_phase_points, 5);
    dm_sweep_fit_free(&fit);
    free(res);
    dm_suite_free(&suite);
}

/* 300 values in one sweep: every one enters the fit (no cap). The suite reader allows
 * at most 100 values per range, so the sweep is made by hand. */
/* The orders between neighbouring points, on errors whose law is known: a pure power
 * gives its exponent at every pair; a law with a second term that matters at the coarse
 * steps, e = (2.5 h^2 - 0.28 h^4) 1e-6 (close to what Verlet shows on a made-up
 * three-planet system at h = 2, 1, 0.5), gives log2(e(2h) / e(h)) pair by pair, the
 * numbers worked out by hand below; and both are the same with h in other units (h
 * times 1/365.25: the same points, their errors unchanged). */
static void local_orders_of(const double *h, const double *e, size_t n, double scale,
                            dm_sweep_fit *fit)
{
    dm_fit_input in[8];
    for (size_t i = 0; i < n; i++)
        in[i] = (dm_fit_input){ .x = h[i] * scale, .status = DM_RUN_OK, .steps = 1000,
                                .max_energy_error = e[i], .phase_error_per_period = e[i] };
    dm_error err = { 0 };
    assert_int_equal(dm_fit_points("local", in, n, fit, &err), DM_OK);
}

static void local_orders_show_a_pre_asymptotic_sweep(void **state)
{
    (void)state;
    const double h[4] = { 2.0, 1.0, 0.5, 0.25 };
    double pure[4], mixed[4];
    for (int i = 0; i < 4; i++) {
        pure[i] = 3e-6 * h[i] * h[i];
        mixed[i] = (2.5 * h[i] * h[i] - 0.28 * pow(h[i], 4)) * 1e-6;
    }
    for (int u = 0; u < 2; u++) {
        double scale = u == 0 ? 1.0 : 1.0 / 365.25;
        dm_sweep_fit fit;
        local_orders_of(h, pure, 4, scale, &fit);
        assert_close(fit.energy_local_min, 2.0, 1e-12);
        assert_close(fit.energy_local_max, 2.0, 1e-12);
        assert_close(fit.phase_local_max, 2.0, 1e-12);
        assert_true(!fit.energy_trend && !fit.phase_trend);
        dm_sweep_fit_free(&fit);
        local_orders_of(h, mixed, 4, scale, &fit);
        /* e(2) = 5.52, e(1) = 2.22, e(0.5) = 0.6075, e(0.25) = 0.15515625 (times 1e-6):
         * log2(5.52 / 2.22) = 1.3141, log2(2.22 / 0.6075) = 1.8697,
         * log2(0.6075 / 0.15515625) = 1.9692 */
        assert_close(fit.energy_local_min, log2(5.52 / 2.22), 1e-9);
        assert_close(fit.energy_local_max, log2(0.6075 / 0.15515625), 1e-9);
        assert_true(fit.energy_local_min < 1.32 && fit.energy_local_max > 1.96);
        assert_true(fit.energy_trend); /* 1.31, 1.87, 1.97: rising toward 2 */
        dm_sweep_fit_free(&fit);
    }
    /* one point: no neighbour, no local order */
    dm_sweep_fit fit;
    local_orders_of(h, pure, 1, 1.0, &fit);
    assert_true(isnan(fit.energy_local_min) && isnan(fit.energy_local_max));
    dm_sweep_fit_free(&fit);
}

/* Points filled by hand: x[i] (times `scale`: the same sweep in other units), the
 * error e[i] as both max |dE| and phase (phase of sign sgn[i]), steps[i]. */
static void fit_by_hand(const double *x, const double *e, const double *sgn,
                        const uint64_t *steps, size_t n, double scale, dm_sweep_fit *fit)
{
    dm_fit_input in[16];
    assert_true(n <= 16);
    for (size_t i = 0; i < n; i++)
        in[i] = (dm_fit_input){ .x = x[i] * scale, .status = DM_RUN_OK, .steps = steps[i],
                                .max_energy_error = e[i],
                                .phase_error_per_period = sgn[i] * e[i] };
    dm_error err = { 0 };
    assert_int_equal(dm_fit_points("by-hand", in, n, fit, &err), DM_OK);
}

/* An 8th-order law (Yoshida 8, order 8: common practice) measured down to round-off:
 * the finest point has the other sign, as the tester's Kepler sweep at 1024 steps per
 * period (-4.2e-13 after +1.8e-13). The sign comes from the longest run of one sign,
 * the coarse side: the fit is the law's, 8, in any units, and the finest point says
 * why it is out. A sign change in the middle of a sweep (1e-3 (-h^2 + 10 h^4), zero at
 * h^2 = 0.1) with more points on the coarse side: the fit keeps those and never spans
 * the change. */
static void phase_sign_comes_from_the_longest_run_of_one_sign(void **state)
{
    (void)state;
    const double spp[5] = { 64, 128, 256, 512, 1024 };
    double x[5], e[5], sgn[5] = { 1, 1, 1, 1, -1 };
    uint64_t steps[5];
    for (int i = 0; i < 5; i++) {
        x[i] = 2.0 * M_PI / spp[i];
        steps[i] = (uint64_t)(1000 * spp[i]);
        e[i] = 4e-4 * pow(64.0 / spp[i], 8); /* 2.4e-11 at 512: above round-off */
    }
    e[4] = 4.2e-13; /* round-off: 1.9 eps sqrt(steps), above the floor */
    for (int u = 0; u < 2; u++) {
        dm_sweep_fit fit;
        fit_by_hand(x, e, sgn, steps, 5, u == 0 ? 1.0 : 1.0 / 365.25, &fit);
        print_message("  phase order %.6f from %zu points, finest %s\n", fit.phase_order,
                      fit.n_phase_points, dm_fit_use_name((dm_fit_use)fit.phase_use[4]));
        assert_int_equal(fit.n_phase_points, 4);
        assert_close(fit.phase_order, 8.0, 1e-9);
        assert_int_equal(fit.phase_use[4], DM_FIT_SIGN_CHANGE);
        dm_sweep_fit_free(&fit);
    }
    const double hs[6] = { 0.8, 0.6, 0.5, 0.4, 0.2, 0.1 };
    double ph[6], ones[6];
    uint64_t st[6];
    for (int i = 0; i < 6; i++) {
        double g = 1e-3 * (-hs[i] * hs[i] + 10.0 * pow(hs[i], 4)); /* max |dE| small */
        ph[i] = fabs(g);
        ones[i] = g > 0.0 ? 1.0 : -1.0;
        st[i] = 1000;
    }
    dm_sweep_fit fit;
    fit_by_hand(hs, ph, ones, st, 6, 1.0, &fit);
    for (int i = 0; i < 6; i++) {
        print_message("  h %.2f phase %+.4f %s\n", hs[i], ones[i] * ph[i],
                      dm_fit_use_name((dm_fit_use)fit.phase_use[i]));
        /* the four coarse points are positive (h^2 > 0.1): kept; the two fine ones not */
        assert_int_equal(fit.phase_use[i], ones[i] > 0.0 ? DM_FIT_USED : DM_FIT_SIGN_CHANGE);
    }
    assert_int_equal(fit.n_phase_points, 4);
    dm_sweep_fit_free(&fit);
}

/* A 4th-order law (Yoshida 4, order 4: common practice) whose finest point carries
 * round-off of 20 eps sqrt(steps) on top (the tester's Kepler sweep at 8192 steps per
 * period: local order 3.03 after 4.07): it leaves both fits as round_off and the order
 * is the law's, in any units. The same dip far above round-off (10^3 eps sqrt(steps))
 * is no round-off: that point stays. */
static void a_round_off_tail_leaves_the_fit(void **state)
{
    (void)state;
    const double spp[6] = { 256, 512, 1024, 2048, 4096, 8192 };
    double x[6], e[6], plus[6] = { 1, 1, 1, 1, 1, 1 };
    uint64_t steps[6];
    for (int i = 0; i < 6; i++) {
        x[i] = 2.0 * M_PI / spp[i];
        steps[i] = (uint64_t)(1000 * spp[i]);
        e[i] = 7e-6 * pow(256.0 / spp[i], 4);
    }
    const double root = DBL_EPSILON * sqrt((double)steps[5]);
    const double law = e[5];
    e[5] = law + 20.0 * root;
    for (int u = 0; u < 2; u++) {
        dm_sweep_fit fit;
        fit_by_hand(x, e, plus, steps, 6, u == 0 ? 1.0 : 1.0 / 365.25, &fit);
        print_message("  orders %.6f %.6f from %zu %zu points\n", fit.energy_order,
                      fit.phase_order, fit.n_energy_points, fit.n_phase_points);
        assert_int_equal(fit.energy_use[5], DM_FIT_ROUND_OFF);
        assert_int_equal(fit.phase_use[5], DM_FIT_ROUND_OFF);
        assert_close(fit.energy_order, 4.0, 1e-9);
        assert_close(fit.phase_order, 4.0, 1e-9);
        dm_sweep_fit_free(&fit);
    }
    for (int i = 0; i < 6; i++)
        e[i] *= 1e3 * root / law; /* the whole sweep far above round-off */
    dm_sweep_fit fit;
    fit_by_hand(x, e, plus, steps, 6, 1.0, &fit);
    assert_int_equal(fit.energy_use[5], DM_FIT_USED);
    assert_int_equal(fit.n_energy_points, 6);
    dm_sweep_fit_free(&fit);
}

/* Euler on the harmonic oscillator multiplies |omega q + i p|^2 by 1 + h^2 per step
 * (omega = 1; the amplification factor 1 + i h, Hairer, Norsett & Wanner, Solving ODEs
 * I, 1993, sect. I.13 and II.7), so over N = t / h steps dE = (1 + h^2)^N - 1 exactly:
 * order 1 as h -> 0, but at t = 628.3 and h = 0.0005, 0.00025 it is 0.37 and 0.17,
 * where e^x - 1 is far from x (the tester's sweep, fitted 1.118 from those two). Points
 * with max |dE| >= 1/10 are `coarse` and out; the rest give 1 within 0.03 (the
 * first-order term of e^x - 1 moves the order by less than x/2 over the points kept,
 * x < 0.082); all six would give 1.042. */
static void coarse_points_leave_both_fits(void **state)
{
    (void)state;
    double h[6], e[6], plus[6] = { 1, 1, 1, 1, 1, 1 };
    uint64_t steps[6];
    for (int i = 0; i < 6; i++) {
        h[i] = 0.0005 / pow(2.0, i);
        steps[i] = (uint64_t)(628.3 / h[i] + 0.5);
        e[i] = expm1((double)steps[i] * log1p(h[i] * h[i]));
    }
    dm_sweep_fit fit;
    fit_by_hand(h, e, plus, steps, 6, 1.0, &fit);
    for (int i = 0; i < 6; i++) {
        print_message("  h %.3e max |dE| %.4f: %s\n", h[i], e[i],
                      dm_fit_use_name((dm_fit_use)fit.energy_use[i]));
        dm_fit_use want = e[i] >= 0.1 ? DM_FIT_COARSE : DM_FIT_USED;
        assert_int_equal(fit.energy_use[i], want);
        assert_int_equal(fit.phase_use[i], want);
    }
    print_message("  energy order %.4f from %zu points\n", fit.energy_order,
                  fit.n_energy_points);
    assert_int_equal(fit.n_energy_points, 4);
    assert_true(fabs(fit.energy_order - 1.0) < 0.03);
    assert_true(!fit.energy_trend);
    dm_sweep_fit_free(&fit);
}

/* Euler (order 1: common practice) on a Kepler orbit, e = 0.2, over 2 periods at 1000
 * to 16000 steps per period (the tester's sweep, fitted 0.885 unflagged): its local
 * orders rise toward 1 along the sweep (0.86, 0.92, 0.95 once n1000, max |dE| 0.125, is
 * out as coarse), so the fit is marked as still settling. */
static void a_settling_order_is_marked(void **state)
{
    (void)state;
    dm_suite suite;
    parse(&suite, "name: settling\n"
                  "horizon: {periods: 2}\n"
                  "problems:\n"
                  "  - {problem: kepler, eccentricity: 0.2}\n"
                  "methods:\n"
                  "  - {method: euler, steps_per_period: [1000, 2000, 4000, 8000, 16000]}\n");
    dm_run_result *res = calloc(suite.n_runs, sizeof *res);
    assert_non_null(res);
    dm_error err = { 0 };
    for (size_t i = 0; i < suite.n_runs; i++)
        assert_int_equal(dm_run(&suite.runs[i], &res[i], NULL, &err), DM_OK);
    dm_sweep_fit fit;
    assert_int_equal(dm_sweep_fit_compute(&suite, &suite.sweeps[0], res, &fit, &err), DM_OK);
    print_message("  energy order %.4f from %zu points, local %.3f..%.3f, settling %d\n",
                  fit.energy_order, fit.n_energy_points, fit.energy_local_min,
                  fit.energy_local_max, fit.energy_trend);
    assert_true(fit.n_energy_points >= 3);
    assert_true(fit.energy_trend);
    dm_sweep_fit_free(&fit);
    for (size_t i = 0; i < suite.n_runs; i++)
        dm_run_result_free(&res[i]);
    free(res);
    dm_suite_free(&suite);
}

static void a_300_point_sweep_uses_every_point(void **state)
{
    (void)state;
    enum { N = 300 };
    dm_suite suite;
    memset(&suite, 0, sizeof suite);
    suite.runs = calloc(N, sizeof *suite.runs);
    size_t *idx = calloc(N, sizeof *idx);
    dm_run_result *res = calloc(N, sizeof *res);
    assert_true(suite.runs && idx && res);
    suite.n_runs = N;
    for (size_t i = 0; i < N; i++) {
        dm_run_spec *spec = &suite.runs[i];
        double h = 0.1 * pow(0.99, (double)i);
        spec->step_setting = DM_SET_BY_H;
        spec->method_config.h = h;
        idx[i] = i;
        res[i].status = DM_RUN_OK;
        res[i].metrics.steps = (uint64_t)(100.0 / h);
        res[i].metrics.max_energy_error = 3.0 * h * h * h;
        res[i].metrics.phase_error_per_period = 0.5 * h * h;
    }
    dm_sweep sw = { .name = "by-hand", .step_setting = DM_SET_BY_H, .n_runs = N, .runs = idx };
    dm_sweep_fit fit;
    dm_error err = { 0 };
    assert_int_equal(dm_sweep_fit_compute(&suite, &sw, res, &fit, &err), DM_OK);
    assert_int_equal(fit.n_energy_points, N);
    assert_int_equal(fit.n_phase_points, N);
    assert_close(fit.energy_order, 3.0, 1e-10);
    assert_close(fit.phase_order, 2.0, 1e-10);
    dm_sweep_fit_free(&fit);
    free(res);
    free(idx);
    free(suite.runs);
}

/* A run whose numerical orbit left its starting regime measured another orbit: out of
 * both fits (regime_change), decided after its status and before everything else, so
 * an exact h^2 law through the other points is fitted exactly. */
static void a_run_that_left_its_regime_leaves_both_fits(void **state)
{
    (void)state;
    dm_fit_input in[5];
    for (int i = 0; i < 5; i++) {
        double h = 0.1 / pow(2.0, i);
        in[i] = (dm_fit_input){ .x = h, .status = DM_RUN_OK, .steps = 1000u << i,
                                .max_energy_error = 1e-2 * (h / 0.1) * (h / 0.1),
                                .phase_error_per_period = 1e-3 * (h / 0.1) * (h / 0.1),
                                .regime_changed = i == 0 };
    }
    in[0].max_energy_error = 0.3; /* coarse too: the regime decides */
    dm_sweep_fit fit;
    dm_error err = { 0 };
    assert_int_equal(dm_fit_points("regime", in, 5, &fit, &err), DM_OK);
    assert_int_equal(fit.energy_use[0], DM_FIT_REGIME_CHANGE);
    assert_int_equal(fit.phase_use[0], DM_FIT_REGIME_CHANGE);
    assert_string_equal(dm_fit_use_name(DM_FIT_REGIME_CHANGE), "regime_change");
    assert_true(dm_fit_use_name_known("regime_change"));
    assert_int_equal(fit.n_energy_points, 4);
    assert_true(fabs(fit.energy_order - 2.0) < 1e-12);
    assert_true(fabs(fit.phase_order - 2.0) < 1e-12);
    dm_sweep_fit_free(&fit);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(bounded_verlet_exponent_does_not_depend_on_samples),
        cmocka_unit_test(rk4_linear_loss_has_exponent_one_at_any_samples),
        cmocka_unit_test(exponent_is_the_same_in_scaled_units),
        cmocka_unit_test(random_walk_series_average_one_half),
        cmocka_unit_test(a_wander_that_stopped_is_bounded),
        cmocka_unit_test(round_off_grows_in_plain_sums_not_in_compensated),
        cmocka_unit_test(saturated_runs_leave_the_energy_fit),
        cmocka_unit_test(fit_codes_sign_change_floor_and_counts),
        cmocka_unit_test(a_300_point_sweep_uses_every_point),
        cmocka_unit_test(local_orders_show_a_pre_asymptotic_sweep),
        cmocka_unit_test(phase_sign_comes_from_the_longest_run_of_one_sign),
        cmocka_unit_test(a_round_off_tail_leaves_the_fit),
        cmocka_unit_test(coarse_points_leave_both_fits),
        cmocka_unit_test(a_settling_order_is_marked),
        cmocka_unit_test(a_run_that_left_its_regime_leaves_both_fits),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
