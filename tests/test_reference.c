/* test_reference.c — the reference trajectory (integrators' reference.h, the harness's
 * reference_run.h) against independent truths:
 *  - its weights: the order conditions of a symmetric composition of a symmetric
 *    second-order method (sum w = 1, sum w^3 = sum w^5 = sum w^7 = 0: H. Yoshida, Phys.
 *    Lett. A 150 (1990) 262, a fact of the trade), and its order measured (error ratio
 *    2^8 when the step halves);
 *  - the harmonic oscillator's and Kepler's closed forms, evaluated here in quad
 *    precision (cos and sin; Kepler's equation by Newton's iteration, the orbit's
 *    elements from the double start: the closed forms of problems/harmonic.c and
 *    problems/kepler.c, carried to 34 digits): agreement to 1e-25 relative over periods;
 *  - a run's global error against the reference equals the one against the exact
 *    solution (Kepler), and Verlet's on the outer solar system (Hairer, Lubich, Wanner,
 *    GNI 2006, section I.2.4: tests/outer_solar_system.csv) goes as h^2;
 *  - the figures do not depend on the buckets, the number of jobs or the units.
 */
#include <math.h>
#include <string.h>
#include <sys/stat.h>

#define OUT "/tmp/dm-test-reference/out.h5"
#include "dm_outer_solar.h"
#include "dm_test_util.h"
#include "harness.h"
#include "quad.h"
#include "reference.h"
#include "reference_run.h"

#define SRC "test_reference.yaml"

static double qabs(dm_quad x)
{
    return fabs((double)x);
}

static void weights_meet_the_order_conditions(void **state)
{
    (void)state;
    dm_quad w[DM_REFERENCE_STAGES];
    dm_reference_weights(w);
    dm_quad s1 = 0, s3 = 0, s5 = 0, s7 = 0, s9 = 0;
    for (int i = 0; i < DM_REFERENCE_STAGES; i++) {
        dm_quad w2 = w[i] * w[i];
        s1 += w[i];
        s3 += w[i] * w2;
        s5 += w[i] * w2 * w2;
        s7 += w[i] * w2 * w2 * w2;
        s9 += w[i] * w2 * w2 * w2 * w2;
        assert_true(qabs(w[i] - w[DM_REFERENCE_STAGES - 1 - i]) == 0.0); /* symmetric */
    }
    /* the type's epsilon: 2^-112 for binary128, 2^-63 for x87 long double */
    const double eps = DM_QUAD_IS_FLOAT128 ? 1.93e-34 : 1.08e-19;
    assert_true(qabs(s1 - 1) < 1e2 * eps);
    assert_true(qabs(s3) < 1e3 * eps);
    assert_true(qabs(s5) < 1e4 * eps);
    assert_true(qabs(s7) < 1e5 * eps);
    assert_true(qabs(s9) > 1e-3); /* order 8, not 10: the next condition fails */
}

static void make(dm_instance *inst, const char *problem, size_t n, const char *const *keys,
                 const double *values)
{
    dm_error err = { 0 };
    if (dm_instance_init(inst, dm_problem_find(problem), n, keys, values, &err) != DM_OK)
        fail_msg("%s", err.msg);
}

/* The harmonic oscillator's closed form from the start (q0, p0), in quad. */
static void harmonic_exact(const dm_instance *inst, dm_quad t, dm_quad *x)
{
    dm_quad w = inst->param[0], q0 = inst->q0[0], p0 = inst->p0[0];
    dm_quad c = dm_quad_cos(w * t), s = dm_quad_sin(w * t);
    x[0] = q0 * c + p0 / w * s;
    x[1] = p0 * c - q0 * w * s;
}

static double rel_distance(const dm_quad *a, const dm_quad *b, int n)
{
    double d = 0.0, s = 0.0;
    for (int i = 0; i < n; i++) {
        double e = (double)(a[i] - b[i]), v = (double)b[i];
        d += e * e;
        s += v * v;
    }
    return sqrt(d / s);
}

static void harmonic_agrees_with_its_closed_form(void **state)
{
    (void)state;
    if (!DM_QUAD_IS_FLOAT128) /* long double holds 19 digits: 1e-25 is beyond it */
        skip();
    const char *keys[] = { "omega", "amplitude" };
    const double values[] = { 1.7, 0.8 };
    dm_instance inst;
    make(&inst, "harmonic", 2, keys, values);
    const double T = inst.period;
    dm_reference r;
    dm_error err = { 0 };
    double worst = 0.0;
    /* 10 periods at T / 16000 (at T / 8000 the worst is 3e-25: the triple jump's error
     * constant is large); times off the grid too (a shorter last step) */
    assert_int_equal(dm_reference_start(&r, &inst, T / 16000.0, &err), DM_OK);
    for (int k = 1; k <= 40; k++) {
        dm_quad t = (dm_quad)T * k / 4 + (k % 3 == 0 ? (dm_quad)0.001 : 0);
        dm_quad x[2], e[2];
        dm_reference_state_at(&r, t, x);
        harmonic_exact(&inst, t, e);
        worst = fmax(worst, rel_distance(x, e, 2));
    }
    assert_true(worst < 1e-25);
    assert_true(worst > 0.0);
    /* order 8: halving the step divides the error by about 2^8 (100 and 200 steps a period) */
    double err_h[2];
    for (int k = 0; k < 2; k++) {
        assert_int_equal(dm_reference_start(&r, &inst, T / (100.0 * (1 << k)), &err), DM_OK);
        dm_quad x[2], e[2];
        dm_reference_state_at(&r, (dm_quad)T * 3, x);
        harmonic_exact(&inst, (dm_quad)T * 3, e);
        err_h[k] = rel_distance(x, e, 2);
    }
    double order = log2(err_h[0] / err_h[1]);
    assert_true(order > 7.7 && order < 8.3);
}

/* Kepler's orbit from the double start (periapsis on the x axis, p along y), in quad:
 * a from the energy, e from the periapsis distance, E by Newton's iteration. */
static void kepler_exact(const dm_instance *inst, dm_quad t, dm_quad *x)
{
    dm_quad mu = inst->param[0], r0 = inst->q0[0], v0 = inst->p0[1];
    dm_quad a = 1 / (2 / r0 - v0 * v0 / mu);
    dm_quad e = 1 - r0 / a, b = a * dm_quad_sqrt(1 - e * e);
    dm_quad n = dm_quad_sqrt(mu / (a * a * a));
    dm_quad M = n * t, E = M;
    for (int it = 0; it < 60; it++)
        E -= (E - e * dm_quad_sin(E) - M) / (1 - e * dm_quad_cos(E));
    dm_quad c = dm_quad_cos(E), s = dm_quad_sin(E), den = 1 - e * c;
    x[0] = a * (c - e);
    x[1] = b * s;
    x[2] = -a * n * s / den;
    x[3] = b * n * c / den;
}

static void kepler_agrees_with_its_closed_form(void **state)
{
    (void)state;
    if (!DM_QUAD_IS_FLOAT128) /* long double holds 19 digits: 1e-25 is beyond it */
        skip();
    const char *keys[] = { "eccentricity" };
    const double values[] = { 0.3 };
    dm_instance inst;
    make(&inst, "kepler", 1, keys, values);
    assert_true(inst.q0[1] == 0.0 && inst.p0[0] == 0.0); /* starts at periapsis */
    const double T = inst.period;
    dm_reference r;
    dm_error err = { 0 };
    assert_int_equal(dm_reference_start(&r, &inst, T / 30000.0, &err), DM_OK);
    double worst = 0.0;
    for (int k = 1; k <= 12; k++) { /* 3 periods */
        dm_quad t = (dm_quad)T * k / 4 + (dm_quad)0.01 * k, x[4], e[4];
        dm_reference_state_at(&r, t, x);
        kepler_exact(&inst, t, e);
        worst = fmax(worst, rel_distance(x, e, 4));
    }
    assert_true(worst < 1e-25);
    /* a formula problem has no quad gradient: refused in one line */
    dm_instance other = inst;
    dm_problem no_quad = *inst.problem;
    no_quad.gradient_quad = NULL;
    no_quad.velocity_quad = NULL;
    other.problem = &no_quad;
    assert_int_equal(dm_reference_start(&r, &other, 0.1, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, "gradient_quad"));
}

static void parse(dm_suite *suite, const char *text)
{
    dm_error err = { 0 };
    if (dm_suite_parse(suite, text, strlen(text), SRC, NULL, &err) != DM_OK)
        fail_msg("%s", err.msg);
}

static void run_all(dm_suite *suite, dm_run_result *r)
{
    dm_error err = { 0 };
    for (size_t i = 0; i < suite->n_runs; i++) {
        assert_int_equal(dm_run(&suite->runs[i], &r[i], NULL, &err), DM_OK);
        assert_int_equal(r[i].status, DM_RUN_OK);
    }
}

/* Kepler, where both exist: the global error against the reference is the one against
 * the exact solution, to far more than 3 digits; the reference's own estimate is far
 * below it and its figures are written. */
static void kepler_global_error_matches_the_exact_one(void **state)
{
    (void)state;
    static const char base[] =
        "output: /tmp/dm-test-reference/out.h5\nhorizon: {periods: 4}\nbuckets: 16\n%s"
        "problems:\n  - {problem: kepler, eccentricity: 0.2}\n"
        "methods:\n  - {method: verlet, steps_per_period: 64}\n";
    char text[1024];
    dm_suite exact, ref;
    snprintf(text, sizeof text, base, "");
    parse(&exact, text);
    snprintf(text, sizeof text, base, "reference: true\nreference_tolerance: 1e-16\n");
    parse(&ref, text);
    assert_string_not_equal(exact.runs[0].hash, ref.runs[0].hash);
    dm_run_result a, b;
    run_all(&exact, &a);
    run_all(&ref, &b);
    assert_true(isnan(a.metrics.max_reference_error));
    assert_null(a.series.reference_error);
    assert_close(b.metrics.max_global_error, a.metrics.max_global_error, 1e-10);
    for (size_t i = 0; i < a.series.n; i++)
        assert_close(b.series.global_error[i], a.series.global_error[i], 1e-10);
    assert_true(b.metrics.max_reference_error < 1e-12 * b.metrics.max_global_error);
    assert_true(b.metrics.reference_valid_until == b.metrics.t_reached);
    assert_true(b.metrics.reference_force_evals > 0 && b.metrics.reference_step > 0.0);
    assert_string_equal(b.reference_arithmetic, DM_QUAD_NAME);
    assert_string_equal(b.reference_note, "");
    dm_run_result_free(&a);
    dm_run_result_free(&b);
    dm_suite_free(&exact);
    dm_suite_free(&ref);
}

/* Verlet on the outer solar system: the global error (max and final) goes as h^2. */
static void outer_solar_verlet_is_of_order_two(void **state)
{
    (void)state;
    char *text = outer_suite(2000.0, 8, "  - {method: verlet, h: [20, 10, 5]}\n");
    char *with = malloc(8300);
    snprintf(with, 8300, "reference: true\nreference_tolerance: 1e-14\n%s", text);
    dm_suite suite;
    parse(&suite, with);
    dm_run_result r[3];
    run_all(&suite, r);
    for (int i = 0; i < 2; i++) {
        double o_max = log2(r[i].metrics.max_global_error / r[i + 1].metrics.max_global_error);
        size_t n = r[i].series.n;
        double o_end = log2(r[i].series.global_error[n - 1] / r[i + 1].series.global_error[n - 1]);
        assert_true(fabs(o_max - 2.0) < 0.05);
        assert_true(fabs(o_end - 2.0) < 0.05);
        assert_true(r[i].metrics.max_reference_error < 1e-6 * r[i + 1].metrics.max_global_error);
    }
    /* the reference depends on the problem and the horizon, not the method's step */
    assert_true(r[0].metrics.reference_step == r[2].metrics.reference_step);
    for (int i = 0; i < 3; i++)
        dm_run_result_free(&r[i]);
    dm_suite_free(&suite);
    free(with);
    free(text);
}

/* Buckets and jobs: the global error at the horizon is the same bit for bit with 8 and
 * 24 buckets (and at the bucket ends the two share), and with one job or two. */
static void figures_do_not_depend_on_buckets_or_jobs(void **state)
{
    (void)state;
    static const char base[] =
        "output: /tmp/dm-test-reference/out.h5\nhorizon: {time: 300}\nbuckets: %d\n"
        "reference: true\nreference_tolerance: 1e-12\nproblems:\n"
        "  - {problem: henon_heiles, energy: 0.08333333333333333, start_y: 0.1}\n"
        "methods:\n  - {method: verlet, h: [0.1, 0.05]}\n  - {method: yoshida4, h: 0.1}\n";
    char text[1024];
    dm_suite s8, s24;
    snprintf(text, sizeof text, base, 8);
    parse(&s8, text);
    snprintf(text, sizeof text, base, 24);
    parse(&s24, text);
    dm_run_result a[3], b[3], c[3];
    memset(c, 0, sizeof c); /* the pool continues what a result holds */
    run_all(&s8, a);
    run_all(&s24, b);
    for (int i = 0; i < 3; i++) {
        assert_true(a[i].series.global_error[7] == b[i].series.global_error[23]);
        assert_true(a[i].series.reference_error[7] == b[i].series.reference_error[23]);
        for (int k = 0; k < 8; k++)
            assert_true(a[i].series.global_error[k] == b[i].series.global_error[3 * k + 2]);
        assert_true(a[i].metrics.max_global_error == b[i].metrics.max_global_error ||
                    a[i].metrics.max_global_error < b[i].metrics.max_global_error);
    }
    size_t order[3] = { 0, 1, 2 };
    dm_error err = { 0 };
    assert_int_equal(dm_run_pool(&s8, c, NULL, order, 3, 2, NULL, NULL, NULL, &err), DM_OK);
    for (int i = 0; i < 3; i++) {
        assert_true(c[i].metrics.max_global_error == a[i].metrics.max_global_error);
        assert_true(c[i].metrics.max_reference_error == a[i].metrics.max_reference_error);
        assert_true(c[i].metrics.reference_valid_until == a[i].metrics.reference_valid_until);
        dm_run_result_free(&a[i]);
        dm_run_result_free(&b[i]);
        dm_run_result_free(&c[i]);
    }
    dm_suite_free(&s8);
    dm_suite_free(&s24);
}

/* Units: the outer solar system in AU, days and solar masses, and in AU, years and
 * Earth masses (G and the masses rescaled, velocities in AU/year): the reference's step
 * is the same time in either (the same power of two of the horizon), and its state at
 * the horizon the same, positions in AU and momenta scaled back, to 1e-13 relative:
 * the bodies converted in double differ by their rounding, 1e-16, which the orbit
 * carries; with factors that are powers of two the conversion is exact and so is the
 * agreement. */
static double units_worst(double year, double earth)
{
    dm_suite days;
    char *text = outer_suite(1000.0, 4, "  - {method: verlet, h: 10}\n");
    char *with = malloc(8300);
    snprintf(with, 8300, "reference: true\nreference_tolerance: 1e-14\n%s", text);
    parse(&days, with);
    const dm_nbody *d = dm_nbody_of(&days.runs[0].inst, NULL);
    assert_non_null(d);
    static dm_nbody scaled;
    scaled = *d;
    for (int i = 0; i < d->n; i++) {
        scaled.mass[i] = d->mass[i] * earth;
        scaled.inverse_mass[i] = 1.0 / scaled.mass[i];
        for (int k = 0; k < 3; k++)
            scaled.velocity[i][k] = d->velocity[i][k] * year;
    }
    const char *gk[] = { "G" };
    const double G = 2.95912208286e-4 * year * year / earth;
    dm_run_spec spec = days.runs[0];
    dm_error err = { 0 };
    assert_int_equal(dm_instance_init_data(&spec.inst, dm_problem_find("nbody"), &scaled, 1,
                                           gk, &G, &err), DM_OK);
    spec.t_end = days.runs[0].t_end / year;
    static dm_reference_pair pd, py;
    assert_int_equal(dm_reference_pair_start(&pd, &days.runs[0], &err), DM_OK);
    assert_int_equal(dm_reference_pair_start(&py, &spec, &err), DM_OK);
    assert_close((double)py.fine.h * year, (double)pd.fine.h, 1e-15);
    static dm_quad xd[2 * DM_MAX_DOF], xy[2 * DM_MAX_DOF];
    dm_reference_state_at(&pd.fine, (dm_quad)days.runs[0].t_end, xd);
    dm_reference_state_at(&py.fine, (dm_quad)spec.t_end, xy);
    const int n = spec.inst.dof;
    double worst = 0.0, qs = 0.0, ps = 0.0;
    for (int i = 0; i < n; i++) {
        qs = fmax(qs, qabs(xd[i]));
        ps = fmax(ps, qabs(xd[n + i]));
    }
    for (int i = 0; i < n; i++) {
        /* p in days: m v; in years: (m earth)(v year) */
        dm_quad back = xy[n + i] / ((dm_quad)earth * (dm_quad)year);
        worst = fmax(worst, qabs(xy[i] - xd[i]) / qs);
        worst = fmax(worst, qabs(back - xd[n + i]) / ps);
    }
    dm_suite_free(&days);
    free(with);
    free(text);
    return worst;
}

static void reference_is_the_same_in_other_units(void **state)
{
    (void)state;
    /* a year of 365.25 days and the Sun 332946.0487 Earth masses: the constants of our
     * conversion (from memory; any factors would do) */
    double worst = units_worst(365.25, 332946.0487);
    assert_true(worst < 1e-13);
    assert_true(units_worst(256.0, 262144.0) == 0.0);
}

/* A run stopped at every bucket end and continued (--resume) ends with the same global
 * error and reference figures, bit for bit, as one never stopped: the reference is
 * started again and stepped on its own grid to the time asked for, so the checkpoint
 * needs nothing of it. */
static void a_continued_run_has_the_same_reference(void **state)
{
    (void)state;
    static const char text[] =
        "output: /tmp/dm-test-reference/out.h5\nhorizon: {time: 100}\nbuckets: 6\n"
        "reference: true\nreference_tolerance: 1.0e-12\nproblems:\n"
        "  - {problem: henon_heiles, energy: 0.08333333333333333, start_y: 0.1}\n"
        "methods:\n  - {method: yoshida4, h: 0.05}\n  - {method: cvode-adams, rtol: 1.0e-9}\n";
    dm_suite suite;
    parse(&suite, text);
    dm_error err = { 0 };
    for (size_t i = 0; i < suite.n_runs; i++) {
        dm_run_result whole, part;
        assert_int_equal(dm_run(&suite.runs[i], &whole, NULL, &err), DM_OK);
        assert_true(dm_test_run_stopping_everywhere(&suite.runs[i], &part) >= 4);
        assert_int_equal(part.status, DM_RUN_OK);
        assert_int_equal(part.series.n, whole.series.n);
        if (i == 0) { /* fixed steps continue exactly; CVODE is restarted (results/README.md) */
            assert_memory_equal(whole.series.global_error, part.series.global_error,
                                whole.series.n * sizeof(double));
            assert_memory_equal(&whole.metrics.max_global_error, &part.metrics.max_global_error,
                                sizeof(double));
        }
        /* the reference at each time asked for does not depend on the stops */
        assert_memory_equal(whole.series.reference_error + whole.series.n - 1,
                            part.series.reference_error + part.series.n - 1, sizeof(double));
        assert_true(part.metrics.reference_step == whole.metrics.reference_step);
        dm_run_result_free(&whole);
        dm_run_result_free(&part);
    }
    dm_suite_free(&suite);
}

/* A chaotic orbit (Henon-Heiles at E = 0.1666 from start_y -0.1, exponent about 0.13:
 * test_henon_heiles.c) with a reference made coarse on purpose (tolerance 1e-6): its error
 * estimate grows as exp(lambda t) and passes 1e-3 of the orbit's size before the
 * horizon; the run says where, and its max global error is taken up to there. */
static void a_lost_reference_cuts_the_global_error(void **state)
{
    (void)state;
    static const char text[] =
        "output: /tmp/dm-test-reference/out.h5\nhorizon: {time: 400}\nbuckets: 100\n"
        "reference: true\nreference_tolerance: 1.0e-6\nproblems:\n"
        "  - {problem: henon_heiles, energy: 0.1666, start_y: -0.1}\n"
        "methods:\n  - {method: yoshida4, h: 0.05}\n";
    dm_suite suite;
    parse(&suite, text);
    dm_run_result r;
    run_all(&suite, &r);
    const dm_run_metrics *m = &r.metrics;
    assert_true(m->reference_valid_until > 0.0 && m->reference_valid_until < m->t_reached);
    assert_non_null(strstr(r.reference_note, "after t = "));
    double size = 0.0, max = 0.0;
    for (int j = 0; j < 2; j++)
        size += suite.runs[0].inst.q0[j] * suite.runs[0].inst.q0[j] +
                suite.runs[0].inst.p0[j] * suite.runs[0].inst.p0[j];
    size = sqrt(size);
    size_t i = 0;
    for (; i < r.series.n && r.series.time[i] <= m->reference_valid_until; i++) {
        assert_true(r.series.reference_error[i] <= 1e-3 * r.series.global_error[i]);
        assert_true(r.series.reference_error[i] <= 1e-3 * size);
        max = fmax(max, r.series.global_error[i]);
    }
    assert_true(i < r.series.n);
    assert_true(r.series.reference_error[i] > 1e-3 * fmin(size, r.series.global_error[i]));
    assert_true(m->max_global_error == max);
    dm_run_result_free(&r);
    dm_suite_free(&suite);
}

/* A problem with no quad gradient is refused where it stands in the suite, and so is a
 * tolerance out of range. */
static void formula_problem_is_refused(void **state)
{
    (void)state;
    static const char text[] =
        "output: /tmp/dm-test-reference/out.h5\nhorizon: {periods: 10}\nreference: true\n"
        "problems:\n  - {potential: \"q^2/2 + q^4\", energy: 1.0}\n"
        "methods:\n  - {method: verlet, steps_per_period: 32}\n";
    dm_suite suite;
    dm_error err = { 0 };
    setenv("DRIFTMARK_FORMULA_CC", "", 1);
    assert_int_equal(dm_suite_parse(&suite, text, strlen(text), SRC, NULL, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, SRC ":5:5: "));
    assert_non_null(strstr(err.msg, "gradient_quad"));
    assert_null(strchr(err.msg, '\n'));
    static const char bad[] =
        "output: /tmp/dm-test-reference/out.h5\nhorizon: {periods: 10}\nreference: true\n"
        "reference_tolerance: 1.0e-40\n"
        "problems:\n  - {problem: harmonic}\nmethods:\n  - {method: verlet, steps_per_period: 32}\n";
    assert_int_equal(dm_suite_parse(&suite, bad, strlen(bad), SRC, NULL, &err), DM_EINPUT);
    assert_non_null(strstr(err.msg, SRC ":4:22: reference_tolerance = 1e-40 is out of range"));
}

int main(void)
{
    mkdir("/tmp/dm-test-reference", 0755);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(weights_meet_the_order_conditions),
        cmocka_unit_test(harmonic_agrees_with_its_closed_form),
        cmocka_unit_test(kepler_agrees_with_its_closed_form),
        cmocka_unit_test(kepler_global_error_matches_the_exact_one),
        cmocka_unit_test(outer_solar_verlet_is_of_order_two),
        cmocka_unit_test(figures_do_not_depend_on_buckets_or_jobs),
        cmocka_unit_test(reference_is_the_same_in_other_units),
        cmocka_unit_test(a_continued_run_has_the_same_reference),
        cmocka_unit_test(a_lost_reference_cuts_the_global_error),
        cmocka_unit_test(formula_problem_is_refused),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
