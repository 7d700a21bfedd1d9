/* test_results.c — the HDF5 results file: what the writer puts in it (read back by our
 * reader and, independently, by h5py), that a failed write leaves nothing behind, and
 * that `show` refuses files that are not ours in one line.
 *
 * The run results are built by hand (small series with known values): this tests the
 * writer and the file contract, not the runner; the file written run by run, in any
 * order, is the file written at once. */
#include "dm_test_util.h"

#include <dirent.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <hdf5.h>

#include "harness.h"

#define PYTHON "/usr/bin/python3" /* Debian's, with python3-h5py */
#define START_TIME "2031-05-17T08:30:00Z"

static char workdir[64];
static const dm_method *splitting_method, *adaptive_method;
static const dm_problem *invariant_problem; /* a problem with extra invariants */

static int setup(void **state)
{
    for (size_t i = 0; i < dm_method_count; i++) {
        const dm_method *m = dm_methods[i];
        if (!m->adaptive && m->splitting != NULL && splitting_method == NULL)
            splitting_method = m;
        if (m->adaptive && adaptive_method == NULL)
            adaptive_method = m;
    }
    for (size_t i = 0; i < dm_problem_count; i++)
        if (dm_problems[i]->n_invariants > 0 && invariant_problem == NULL)
            invariant_problem = dm_problems[i];
    snprintf(workdir, sizeof workdir, "/tmp/dm_test_results_XXXXXX");
    if (mkdtemp(workdir) == NULL)
        return -1;
    return splitting_method && adaptive_method && invariant_problem ? 0 : -1;
}

static int teardown(void **state)
{
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", workdir);
    return system(cmd) == 0 ? 0 : -1;
}

/* ---- a hand-built suite and results ---- */

typedef struct fixture {
    dm_suite suite;
    dm_run_result *results;
    dm_sweep_fit *fits;
} fixture;

static void build_suite(fixture *fx, const char *output)
{
    char text[1024];
    snprintf(text, sizeof text,
             "name: writer-check\n"
             "output: %s\n"
             "horizon: {periods: 20}\n"
             "samples: 8\n"
             "problems:\n"
             "  - {problem: harmonic, omega: 2}\n"
             "  - {problem: %s}\n"
             "methods:\n"
             "  - {method: %s, h: [0.1, 0.05]}\n"
             "  - {method: %s, rtol: 1.0e-8}\n",
             output, invariant_problem->id, splitting_method->id, adaptive_method->id);
    dm_error err;
    if (dm_suite_parse(&fx->suite, text, strlen(text), "writer-check.yaml", NULL, &err) != DM_OK) {
        print_error("%s\n", err.msg);
        fail();
    }
    assert_int_equal(fx->suite.n_runs, 6);
    assert_int_equal(fx->suite.n_sweeps, 2);
}

static double *series_of(size_t n, double scale, double offset)
{
    double *v = calloc(n ? n : 1, sizeof *v);
    for (size_t i = 0; i < n; i++)
        v[i] = offset + scale * (double)(i + 1);
    return v;
}

/* Run i gets a series of 5 + i buckets (run 3 none at all), 2 + i crossings, values
 * that encode the run and the bucket so the reader can check them. */
static void build_results(fixture *fx, size_t big_n)
{
    size_t n_runs = fx->suite.n_runs;
    fx->results = calloc(n_runs, sizeof *fx->results);
    fx->fits = calloc(fx->suite.n_sweeps, sizeof *fx->fits);
    for (size_t i = 0; i < n_runs; i++) {
        const dm_run_spec *spec = &fx->suite.runs[i];
        dm_run_result *r = &fx->results[i];
        size_t n = i == 3 ? 0 : 5 + i;
        if (big_n > 0 && i == 0)
            n = big_n;
        dm_series *s = &r->series;
        s->n = s->capacity = n;
        s->time = series_of(n, 0.5, 0);
        s->energy_error = series_of(n, 1e-6, (double)i);
        s->energy_error_min = series_of(n, 1e-6, (double)i - 1);
        s->energy_error_max = series_of(n, 1e-6, (double)i + 1);
        if (big_n > 0 && i == 0) {
            /* incompressible: shuffle + deflate must not shrink it under the limit */
            unsigned x = 12345;
            for (size_t k = 0; k < n; k++) {
                x = x * 1103515245u + 12345u;
                s->energy_error[k] = (double)x / 4294967296.0;
            }
        }
        if (spec->inst.problem->exact != NULL)
            s->global_error = series_of(n, 1e-9, 0);
        s->n_invariants = spec->inst.problem->n_invariants;
        for (int k = 0; k < s->n_invariants; k++)
            s->invariant_error[k] = series_of(n, 1e-12, k);
        dm_crossings *c = &r->crossings;
        c->n = c->capacity = 2 + i;
        c->stride = 1;
        c->total = 2 + i;
        c->number = series_of(c->n, 1, 0);
        c->time = series_of(c->n, spec->inst.period, 0);
        c->phase_error = series_of(c->n, 1e-7, 0);
        dm_run_metrics *m = &r->metrics;
        m->energy_scale = spec->inst.energy;
        m->energy_scale_rule = "H0 - V_min";
        m->max_energy_error = 1e-3 / (double)(i + 1);
        m->final_energy_error = -2e-4;
        m->energy_drift_per_period = 1e-9;
        m->drift_exponent = NAN; /* not measured: must come back as NaN */
        m->period_exact = spec->inst.period;
        m->period_measured = spec->inst.period * (1 + 1e-6);
        m->period_rel_error = 1e-6;
        m->phase_error_per_period = 2e-6 * (double)(i + 1);
        m->phase_error_final = 4e-5;
        m->max_global_error = NAN;
        m->steps = 1000 + i;
        m->counts.steps = 1000 + i;
        m->counts.force_evals = 2000 + i;
        m->counts.velocity_evals = 3000 + i;
        m->counts.rhs_evals = 7;
        m->t_reached = spec->t_end;
        m->wall_seconds = 0.25;
        m->ns_per_step = 12.5;
        r->status = i == 5 ? DM_RUN_DIVERGED : DM_RUN_OK;
        if (i == 5)
            snprintf(r->reason, sizeof r->reason, "|dE| = 3.5 above the limit 1, \"quoted\"");
    }
    for (size_t k = 0; k < fx->suite.n_sweeps; k++) {
        fx->fits[k].energy_order = 2.0 + 0.01 * (double)k;
        fx->fits[k].phase_order = 2.0;
        fx->fits[k].n_energy_points = 2;
        fx->fits[k].n_phase_points = 2;
    }
}

static void free_fixture(fixture *fx)
{
    for (size_t i = 0; i < fx->suite.n_runs; i++) {
        dm_run_result *r = &fx->results[i];
        free(r->series.time);
        free(r->series.energy_error);
        free(r->series.energy_error_min);
        free(r->series.energy_error_max);
        free(r->series.global_error);
        for (int k = 0; k < DM_MAX_INVARIANTS; k++)
            free(r->series.invariant_error[k]);
        free(r->crossings.number);
        free(r->crossings.time);
        free(r->crossings.phase_error);
    }
    free(fx->results);
    free(fx->fits);
    dm_suite_free(&fx->suite);
}

static void write_fixture(const char *path, fixture *fx)
{
    build_suite(fx, path);
    build_results(fx, 0);
    dm_error err;
    if (dm_results_write(path, &fx->suite, fx->results, fx->fits, START_TIME, &err) != DM_OK) {
        print_error("%s\n", err.msg);
        fail();
    }
}

static size_t entries_in(const char *dir)
{
    DIR *d = opendir(dir);
    assert_non_null(d);
    size_t n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0)
            n++;
    closedir(d);
    return n;
}

static void write_text_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

/* The older file under the target name, as write_text_file left it. */
static void assert_previous_results_at(const char *path)
{
    FILE *f = fopen(path, "r");
    assert_non_null(f);
    char line[64] = "";
    assert_non_null(fgets(line, sizeof line, f));
    fclose(f);
    assert_string_equal(line, "previous results\n");
}

/* ---- tests ---- */

static void summary_reads_back_every_field_as_written(void **state)
{
    char path[128];
    snprintf(path, sizeof path, "%s/roundtrip.h5", workdir);
    fixture fx = { 0 };
    write_fixture(path, &fx);

    dm_summary_row *rows = NULL;
    size_t n = 0;
    dm_error err;
    assert_int_equal(dm_results_read_summary(path, &rows, &n, &err), DM_OK);
    assert_int_equal(n, fx.suite.n_runs);
    for (size_t i = 0; i < n; i++) {
        dm_summary_row want;
        dm_summary_row_fill(&want, &fx.suite.runs[i], &fx.results[i]);
        const dm_summary_row *got = &rows[i];
        assert_string_equal(got->run_id, want.run_id);
        assert_string_equal(got->hash, want.hash);
        assert_string_equal(got->problem, want.problem);
        assert_string_equal(got->regime, want.regime);
        assert_string_equal(got->method, want.method);
        assert_int_equal(got->order, want.order);
        assert_int_equal(got->steps, 1000 + i);
        assert_int_equal(got->force_evals, 2000 + i);
        assert_true(isnan(want.h) ? isnan(got->h) : got->h == want.h);
        assert_true(isnan(want.rtol) ? isnan(got->rtol) : got->rtol == want.rtol);
        assert_true(got->max_energy_error == want.max_energy_error);
        assert_true(got->final_energy_error == want.final_energy_error);
        assert_true(got->energy_drift_per_period == want.energy_drift_per_period);
        assert_true(isnan(got->drift_exponent));
        assert_true(got->period_exact == want.period_exact);
        assert_true(got->period_measured == want.period_measured);
        assert_true(got->period_rel_error == want.period_rel_error);
        assert_true(got->phase_error_per_period == want.phase_error_per_period);
        assert_true(got->phase_error_final == want.phase_error_final);
        assert_true(got->wall_seconds == want.wall_seconds);
        assert_true(got->ns_per_step == want.ns_per_step);
        assert_string_equal(got->status, want.status);
        assert_string_equal(got->reason, want.reason);
    }
    /* adaptive runs have no h, fixed-step runs no rtol */
    assert_true(isnan(rows[2].h) && rows[2].rtol == 1e-8);
    assert_true(rows[0].h == 0.1 && isnan(rows[0].rtol));
    assert_string_equal(rows[5].status, "diverged");
    free(rows);
    free_fixture(&fx);
}

static void runs_that_never_started_are_left_out_of_the_file(void **state)
{
    char path[128];
    snprintf(path, sizeof path, "%s/partial.h5", workdir);
    fixture fx = { 0 };
    build_suite(&fx, path);
    build_results(&fx, 0);
    fx.results[1].status = DM_RUN_NOT_RUN; /* the second run of the first sweep */
    dm_error err;
    assert_int_equal(dm_results_write(path, &fx.suite, fx.results, fx.fits, START_TIME, &err),
                     DM_OK);
    dm_summary_row *rows = NULL;
    size_t n = 0;
    assert_int_equal(dm_results_read_summary(path, &rows, &n, &err), DM_OK);
    assert_int_equal(n, fx.suite.n_runs - 1);
    for (size_t i = 0; i < n; i++)
        assert_string_not_equal(rows[i].run_id, fx.suite.runs[1].id);
    assert_string_equal(rows[1].run_id, fx.suite.runs[2].id);
    free(rows);

    hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    assert_true(f >= 0);
    char link[256];
    snprintf(link, sizeof link, "runs/%s", fx.suite.runs[1].id);
    assert_int_equal(H5Lexists(f, link, H5P_DEFAULT), 0);
    snprintf(link, sizeof link, "runs/%s", fx.suite.runs[0].id);
    assert_true(H5Lexists(f, link, H5P_DEFAULT) > 0);
    snprintf(link, sizeof link, "sweeps/%s/run_id", fx.suite.sweeps[0].name);
    hid_t d = H5Dopen2(f, link, H5P_DEFAULT);
    assert_true(d >= 0);
    hid_t sp = H5Dget_space(d);
    assert_int_equal(H5Sget_simple_extent_npoints(sp), 1);
    H5Sclose(sp);
    H5Dclose(d);
    H5Fclose(f);
    free_fixture(&fx);
}

static const char h5py_check[] =
    "import re, sys, h5py, numpy as np\n"
    "path, suite_text_path, inv, readme, inv_problem = sys.argv[1:6]\n"
    "f = h5py.File(path, 'r')\n"
    "a = f.attrs\n"
    "assert a['format'] == 'driftmark-results', a['format']\n"
    "assert isinstance(a['format'], str)\n"
    "assert int(a['schema_version']) == 2\n"
    "for k in ['driftmark_version', 'git_commit', 'compiler', 'c_flags', 'sundials_version',\n"
    "          'hdf5_version', 'host', 'start_time_utc', 'suite_name', 'suite_source',\n"
    "          'suite_text']:\n"
    "    assert isinstance(a[k], str), k\n"
    "assert a['start_time_utc'] == '" START_TIME "'\n"
    "assert a['suite_name'] == 'writer-check'\n"
    "assert a['suite_source'] == 'writer-check.yaml'\n"
    "assert a['suite_text'] == open(suite_text_path).read()\n"
    "assert a['hdf5_version'] == '%d.%d.%d' % h5py.version.hdf5_version_tuple[:3]\n"
    "s = f['summary']\n"
    "def doc_table(marker):\n"
    "    # the rows (name, type) of the README's first table after a line starting marker\n"
    "    lines = open(readme).read().split('\\n')\n"
    "    i = next(k for k, l in enumerate(lines) if l.startswith(marker))\n"
    "    while not lines[i].startswith('|'):\n"
    "        i += 1\n"
    "    rows, i = [], i + 2\n"
    "    while i < len(lines) and lines[i].startswith('|'):\n"
    "        cells = re.split(r'(?<!\\\\)\\|', lines[i])[1:-1]\n"
    "        rows.append((cells[0].strip().strip('`'), cells[1].strip()))\n"
    "        i += 1\n"
    "    return rows\n"
    "sizes = {'double': ('f', 8), 'uint64': ('u', 8), 'int32': ('i', 4)}\n"
    "doc = doc_table('## `/summary`')\n"
    "assert list(s.dtype.names) == [n for n, t in doc], (s.dtype.names, doc)\n"
    "for n, t in doc:\n"
    "    dt = s.dtype.fields[n][0]\n"
    "    want = ('S', int(t[6:-1])) if t.startswith('text (') else sizes[t]\n"
    "    assert (dt.kind, dt.itemsize) == want, (n, t, dt)\n"
    "measured = doc_table('Attributes of what the run measured')\n"
    "assert ('max_energy_error', 'double') in measured and ('status', 'text') in measured\n"
    "for k in ['run_id', 'hash', 'problem', 'regime', 'method', 'status', 'reason']:\n"
    "    info = h5py.check_string_dtype(s.dtype.fields[k][0])\n"
    "    assert info is not None and info.encoding == 'utf-8', (k, info)\n"
    "rows = s[()]\n"
    "assert len(rows) == 6\n"
    "ids = [x.decode('utf-8') for x in rows['run_id']]\n"
    "assert ids[0] == 'harmonic-omega2.' + f['runs'][ids[0]].attrs['method'] + '-h0.1', ids\n"
    "assert rows['status'][5].decode() == 'diverged'\n"
    "assert rows['reason'][5].decode() == '|dE| = 3.5 above the limit 1, \"quoted\"'\n"
    "assert np.isnan(rows['drift_exponent']).all()\n"
    "assert rows['steps'].dtype == np.uint64 and rows['steps'][2] == 1002\n"
    "for i, rid in enumerate(ids):\n"
    "    g = f['runs'][rid]\n"
    "    n = 0 if i == 3 else 5 + i\n"
    "    for d in ['time', 'energy_error', 'energy_error_min', 'energy_error_max']:\n"
    "        assert g[d].shape == (n,), (rid, d, g[d].shape)\n"
    "    for d in ['crossing_number', 'crossing_time', 'phase_error']:\n"
    "        assert g[d].shape == (2 + i,), (rid, d)\n"
    "    assert g.attrs['run_id'] == rid and g.attrs['hash'] == rows['hash'][i].decode()\n"
    "    assert g.attrs['steps'] == 1000 + i and g.attrs['force_evals'] == 2000 + i\n"
    "    for name, kind in measured:\n"
    "        per_inv = '<invariant>' in name\n"
    "        if per_inv and g.attrs['problem'] != inv_problem:\n"
    "            continue\n"
    "        each = [name.replace('<invariant>', x) for x in inv.split(',')]\n"
    "        for a in each if per_inv else [name]:\n"
    "            v = g.attrs[a]\n"
    "            ok = isinstance(v, str) if kind == 'text' else \\\n"
    "                (v.dtype.kind, v.dtype.itemsize) == sizes[kind]\n"
    "            assert ok, (rid, a, kind, type(v))\n"
    "    for k in ['velocity_evals', 'rhs_evals', 'jac_evals', 'error_test_fails',\n"
    "              'conv_fails', 'nonlin_iters', 'max_iters_in_step', 'method_name',\n"
    "              'method_family', 'method_order', 'method_symplectic', 'method_symmetric',\n"
    "              'h', 'rtol', 'atol', 'compensated', 'config', 'regime', 'energy', 'period',\n"
    "              'energy_scale', 'energy_scale_rule', 'status', 'reason']:\n"
    "        assert k in g.attrs, (rid, k)\n"
    "    if n > 0:\n"
    "        np.testing.assert_array_equal(g['energy_error'][()], i + 1e-6 * np.arange(1, n + 1))\n"
    "        assert g['time'].compression is None and g['time'].chunks is None\n"
    "h0 = f['runs'][ids[0]]\n"
    "assert h0.attrs['param_omega'] == 2.0 and h0.attrs['param_amplitude'] == 1.0\n"
    "assert h0.attrs['given_parameters'] == 'omega'\n"
    "assert 'global_error' in h0 and h0['global_error'].shape == (5,)\n"
    "assert h0.attrs['h'] == 0.1 and np.isnan(h0.attrs['rtol'])\n"
    "g3 = f['runs'][ids[3]]\n"
    "for name in inv.split(','):\n"
    "    assert g3[name + '_error'].shape == (0,), name\n"
    "g5 = f['runs'][ids[5]]\n"
    "for name in inv.split(','):\n"
    "    assert g5[name + '_error'].shape == (10,), name\n"
    "sw = f['sweeps']\n"
    "assert len(sw) == 2, list(sw)\n"
    "first = sw[sorted(sw)[0]]\n"
    "assert first.attrs['step_given_as'] == 'h' and first.attrs['n_points_energy'] == 2 and first.attrs['n_points_phase'] == 2\n"
    "for d in ['run_id', 'h', 'force_evals', 'max_energy_error', 'phase_error_per_period']:\n"
    "    assert first[d].shape == (2,), d\n"
    "assert [x.decode() for x in first['run_id'][()]] == ids[0:2]\n"
    "np.testing.assert_array_equal(first['h'][()], [0.1, 0.05])\n"
    "print('h5py-ok')\n";

static void h5py_reads_root_attributes_summary_text_and_dataset_lengths(void **state)
{
    char path[128], script[128], text_path[128];
    snprintf(path, sizeof path, "%s/for-h5py.h5", workdir);
    snprintf(script, sizeof script, "%s/check.py", workdir);
    snprintf(text_path, sizeof text_path, "%s/suite.txt", workdir);
    fixture fx = { 0 };
    write_fixture(path, &fx);
    write_text_file(script, h5py_check);
    write_text_file(text_path, fx.suite.text);
    char inv[256] = "";
    for (int k = 0; k < invariant_problem->n_invariants; k++) {
        strcat(inv, k ? "," : "");
        strcat(inv, invariant_problem->invariant_names[k]);
    }
    char cmd[1024], out[4096], err[8192];
    snprintf(cmd, sizeof cmd, PYTHON " '%s' '%s' '%s' '%s' '%s' '%s'", script, path, text_path,
             inv, DM_SOURCE_DIR "/results/README.md", invariant_problem->id);
    int rc = dm_run_capture(cmd, out, sizeof out, err, sizeof err);
    if (rc != 0 || strstr(out, "h5py-ok") == NULL) {
        print_error("h5py check failed (%d):\n%s\n%s\n", rc, out, err);
        fail();
    }
    free_fixture(&fx);
}

/* Where the layout of a dataset is read: its chunk length (0: not chunked) and whether
 * shuffle and deflate at level `level` are its filters, in that order. */
static void dataset_layout(hid_t file, const char *path, hsize_t *chunk, bool *shuffle_deflate,
                           unsigned *level)
{
    hid_t d = H5Dopen2(file, path, H5P_DEFAULT);
    assert_true(d >= 0);
    hid_t dcpl = H5Dget_create_plist(d);
    *chunk = 0;
    if (H5Pget_layout(dcpl) == H5D_CHUNKED)
        assert_int_equal(H5Pget_chunk(dcpl, 1, chunk), 1);
    int nf = H5Pget_nfilters(dcpl);
    *shuffle_deflate = false;
    *level = 0;
    if (nf == 2) {
        unsigned flags, cd[4];
        size_t n_cd = 4;
        char name[64];
        H5Z_filter_t first = H5Pget_filter2(dcpl, 0, &flags, &n_cd, cd, sizeof name, name, NULL);
        n_cd = 4;
        H5Z_filter_t second = H5Pget_filter2(dcpl, 1, &flags, &n_cd, cd, sizeof name, name, NULL);
        *shuffle_deflate = first == H5Z_FILTER_SHUFFLE && second == H5Z_FILTER_DEFLATE;
        *level = n_cd >= 1 ? cd[0] : 0;
    } else {
        assert_int_equal(nf, 0);
    }
    H5Pclose(dcpl);
    H5Dclose(d);
}

/* results/README.md: a dataset of 16 KiB or more is chunked min(n, 4096) with shuffle +
 * deflate 4; a smaller one contiguous with no filter. Run 0 gets 10000 doubles (80000
 * bytes), run 1 six (48 bytes); both read back as written. */
static void large_datasets_are_compressed_and_small_ones_stored_plain(void **state)
{
    char path[128];
    snprintf(path, sizeof path, "%s/layout.h5", workdir);
    fixture fx = { 0 };
    build_suite(&fx, path);
    build_results(&fx, 10000);
    dm_error err;
    assert_int_equal(dm_results_write(path, &fx.suite, fx.results, fx.fits, START_TIME, &err),
                     DM_OK);
    hid_t file = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    assert_true(file >= 0);
    char name[512];
    hsize_t chunk;
    bool filtered;
    unsigned level;
    snprintf(name, sizeof name, "/runs/%s/energy_error", fx.suite.runs[0].id);
    dataset_layout(file, name, &chunk, &filtered, &level);
    assert_int_equal(chunk, 4096);
    assert_true(filtered);
    assert_int_equal(level, 4);
    double *back = malloc(10000 * sizeof *back);
    hid_t d = H5Dopen2(file, name, H5P_DEFAULT);
    assert_true(H5Dread(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, back) >= 0);
    H5Dclose(d);
    assert_memory_equal(back, fx.results[0].series.energy_error, 10000 * sizeof *back);
    free(back);
    snprintf(name, sizeof name, "/runs/%s/energy_error", fx.suite.runs[1].id);
    dataset_layout(file, name, &chunk, &filtered, &level);
    assert_int_equal(chunk, 0);
    assert_false(filtered);
    double small[6];
    d = H5Dopen2(file, name, H5P_DEFAULT);
    assert_true(H5Dread(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, small) >= 0);
    H5Dclose(d);
    assert_memory_equal(small, fx.results[1].series.energy_error, sizeof small);
    H5Fclose(file);
    free_fixture(&fx);
}

static void failed_write_into_missing_directory_leaves_nothing(void **state)
{
    char path[128];
    snprintf(path, sizeof path, "%s/no-such-dir/x.h5", workdir);
    fixture fx = { 0 };
    char ok_path[128];
    snprintf(ok_path, sizeof ok_path, "%s/unused.h5", workdir);
    build_suite(&fx, ok_path);
    build_results(&fx, 0);
    size_t before = entries_in(workdir);
    dm_error err;
    assert_int_equal(dm_results_write(path, &fx.suite, fx.results, fx.fits, START_TIME, &err),
                     DM_EIO);
    assert_non_null(strstr(err.msg, "no-such-dir"));
    assert_null(strchr(err.msg, '\n'));
    assert_int_equal(entries_in(workdir), before);
    free_fixture(&fx);
}

/* A file-size limit hit halfway: the write fails, the temporary file is removed, and a
 * file already under the target name is left untouched. */
static void failed_write_at_file_size_limit_leaves_old_file_and_no_temp(void **state)
{
    char dir[128], path[160];
    snprintf(dir, sizeof dir, "%s/limited", workdir);
    assert_int_equal(mkdir(dir, 0755), 0);
    snprintf(path, sizeof path, "%s/study.h5", dir);
    write_text_file(path, "previous results\n");

    pid_t pid = fork();
    assert_true(pid >= 0);
    if (pid == 0) {
        signal(SIGXFSZ, SIG_IGN); /* get EFBIG from write() instead of being killed */
        struct rlimit lim = { 256 * 1024, 256 * 1024 };
        setrlimit(RLIMIT_FSIZE, &lim);
        fixture fx = { 0 };
        dm_error err;
        build_suite(&fx, path);
        build_results(&fx, 400000); /* 3.2 MB of incompressible doubles in run 0 */
        dm_status st = dm_results_write(path, &fx.suite, fx.results, fx.fits, START_TIME, &err);
        if (st != DM_EIO)
            _exit(11);
        if (strchr(err.msg, '\n') != NULL || strstr(err.msg, path) == NULL)
            _exit(12);
        _exit(0);
    }
    int status = 0;
    assert_int_equal(waitpid(pid, &status, 0), pid);
    assert_true(WIFEXITED(status));
    assert_int_equal(WEXITSTATUS(status), 0);
    assert_int_equal(entries_in(dir), 1); /* only the old file: no temporary left */
    assert_previous_results_at(path);
}

static void successful_write_replaces_the_old_file_and_leaves_no_temp(void **state)
{
    char dir[128], path[160];
    snprintf(dir, sizeof dir, "%s/replace", workdir);
    assert_int_equal(mkdir(dir, 0755), 0);
    snprintf(path, sizeof path, "%s/study.h5", dir);
    write_text_file(path, "previous results\n");
    fixture fx = { 0 };
    write_fixture(path, &fx);
    assert_int_equal(entries_in(dir), 1);
    assert_true(H5Fis_hdf5(path) > 0);
    free_fixture(&fx);
}

/* Every group, dataset (its type, shape and bytes) and attribute of two files, by h5py. */
static const char h5py_same_files[] =
    "import sys, h5py, numpy as np\n"
    "def same(a, b):\n"
    "    if isinstance(a, str) or isinstance(b, str): return a == b\n"
    "    a, b = np.asarray(a), np.asarray(b)\n"
    "    return a.dtype == b.dtype and a.tobytes() == b.tobytes()\n"
    "fa, fb = h5py.File(sys.argv[1], 'r'), h5py.File(sys.argv[2], 'r')\n"
    "na, nb = [], []\n"
    "fa.visit(na.append); fb.visit(nb.append)\n"
    "assert na == nb, (na, nb)\n"
    "for name in [''] + na:\n"
    "    oa, ob = (fa[name], fb[name]) if name else (fa, fb)\n"
    "    assert sorted(oa.attrs) == sorted(ob.attrs), name\n"
    "    for k in oa.attrs: assert same(oa.attrs[k], ob.attrs[k]), (name, k)\n"
    "    if isinstance(oa, h5py.Dataset):\n"
    "        assert oa.dtype == ob.dtype and oa.shape == ob.shape, name\n"
    "        assert oa[()].tobytes() == ob[()].tobytes(), name\n"
    "assert len(na) > 10\n"
    "print('same-ok')\n";

/* The file written run by run as runs finish, in another order, each run's series freed
 * once written (as `run` does), holds what the file written at once holds; a run never
 * handed to the writer (an interrupted run read back that did not run again before a
 * stop) is written by finish as it is. */
static void runs_written_as_they_finish_in_any_order_give_the_same_file(void **state)
{
    char once[128], streamed[128], script[128];
    snprintf(once, sizeof once, "%s/at-once.h5", workdir);
    snprintf(streamed, sizeof streamed, "%s/streamed.h5", workdir);
    snprintf(script, sizeof script, "%s/same.py", workdir);
    fixture a = { 0 }, b = { 0 };
    write_fixture(once, &a);
    build_suite(&b, once); /* the same suite text, written elsewhere */
    build_results(&b, 0);
    dm_error err = { 0 };
    dm_results_writer *w = NULL;
    assert_int_equal(dm_results_writer_open(streamed, &b.suite, START_TIME, &w, &err), DM_OK);
    for (size_t k = b.suite.n_runs; k-- > 0;) {
        if (k == 2)
            continue; /* left to finish */
        assert_int_equal(dm_results_writer_add(w, k, &b.results[k], &err), DM_OK);
        dm_run_result_drop_series(&b.results[k]);
        assert_null(b.results[k].series.time);
    }
    assert_false(dm_results_writer_failed(w));
    /* a run is written once: the second time is an error, and not a broken file */
    assert_int_equal(dm_results_writer_add(w, 0, &b.results[0], &err), DM_EIO);
    assert_non_null(strstr(err.msg, "written twice"));
    assert_false(dm_results_writer_failed(w));
    assert_int_equal(dm_results_writer_finish(w, b.results, b.fits, &err), DM_OK);
    write_text_file(script, h5py_same_files);
    char cmd[512], out[1024], errs[8192];
    snprintf(cmd, sizeof cmd, PYTHON " '%s' '%s' '%s'", script, once, streamed);
    int rc = dm_run_capture(cmd, out, sizeof out, errs, sizeof errs);
    if (rc != 0 || strstr(out, "same-ok") == NULL) {
        print_error("the streamed file differs (%d):\n%s\n%s\n", rc, out, errs);
        fail();
    }
    free_fixture(&a);
    free_fixture(&b);
}

/* A writer abandoned part way (the command failed) removes its temporary file: nothing
 * new appears and an older file under the name stays as it was. */
static void an_abandoned_writer_leaves_nothing_behind(void **state)
{
    char dir[128], path[160];
    snprintf(dir, sizeof dir, "%s/abandoned", workdir);
    assert_int_equal(mkdir(dir, 0755), 0);
    snprintf(path, sizeof path, "%s/study.h5", dir);
    write_text_file(path, "previous results\n");
    fixture fx = { 0 };
    build_suite(&fx, path);
    build_results(&fx, 0);
    dm_error err = { 0 };
    dm_results_writer *w = NULL;
    assert_int_equal(dm_results_writer_open(path, &fx.suite, START_TIME, &w, &err), DM_OK);
    assert_int_equal(entries_in(dir), 2); /* the old file and the temporary one */
    assert_int_equal(dm_results_writer_add(w, 0, &fx.results[0], &err), DM_OK);
    assert_int_equal(dm_results_writer_add(w, 1, &fx.results[1], &err), DM_OK);
    dm_results_writer_abort(w);
    assert_int_equal(entries_in(dir), 1);
    assert_previous_results_at(path);
    free_fixture(&fx);
}

static int show(const char *args, char *out, size_t out_size, char *err, size_t err_size)
{
    char cmd[1024];
    snprintf(cmd, sizeof cmd, "%s show %s", DM_EXE, args);
    return dm_run_capture(cmd, out, out_size, err, err_size);
}

static void assert_one_line(const char *text, const char *needle)
{
    size_t len = strlen(text);
    bool ok = len > 0 && text[len - 1] == '\n' && strchr(text, '\n') == text + len - 1 &&
              strstr(text, needle) != NULL;
    if (!ok) {
        print_error("expected one line with '%s', got:\n%s\n", needle, text);
        fail();
    }
}

static void show_refuses_non_hdf5_foreign_newer_and_truncated_files_in_one_line(void **state)
{
    char path[160], args[320], out[4096], err[4096];

    snprintf(path, sizeof path, "%s/notes.h5", workdir);
    write_text_file(path, "these are plain notes, not HDF5\n");
    snprintf(args, sizeof args, "'%s'", path);
    assert_int_equal(show(args, out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "not an HDF5 file or truncated");

    /* an HDF5 file of someone else's */
    snprintf(path, sizeof path, "%s/foreign.h5", workdir);
    hid_t f = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    assert_true(f >= 0);
    hsize_t dims[1] = { 3 };
    hid_t sp = H5Screate_simple(1, dims, NULL);
    hid_t d = H5Dcreate2(f, "summary", H5T_NATIVE_DOUBLE, sp, H5P_DEFAULT, H5P_DEFAULT,
                         H5P_DEFAULT);
    H5Dclose(d);
    H5Sclose(sp);
    H5Fclose(f);
    snprintf(args, sizeof args, "'%s'", path);
    assert_int_equal(show(args, out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "is not a driftmark results file");

    /* ours, from a future schema */
    snprintf(path, sizeof path, "%s/future.h5", workdir);
    f = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    assert_true(f >= 0);
    hid_t st = H5Tcopy(H5T_C_S1);
    H5Tset_size(st, 18);
    hid_t scalar = H5Screate(H5S_SCALAR);
    hid_t a = H5Acreate2(f, "format", st, scalar, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(a, st, "driftmark-results");
    H5Aclose(a);
    int version = 3;
    a = H5Acreate2(f, "schema_version", H5T_STD_I32LE, scalar, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(a, H5T_NATIVE_INT, &version);
    H5Aclose(a);
    H5Sclose(scalar);
    H5Tclose(st);
    H5Fclose(f);
    snprintf(args, sizeof args, "'%s'", path);
    assert_int_equal(show(args, out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "written by a newer driftmark (schema 3");

    /* one of ours, cut in half */
    snprintf(path, sizeof path, "%s/cut.h5", workdir);
    fixture fx = { 0 };
    write_fixture(path, &fx);
    free_fixture(&fx);
    struct stat sb;
    assert_int_equal(stat(path, &sb), 0);
    assert_int_equal(truncate(path, sb.st_size / 2), 0);
    snprintf(args, sizeof args, "'%s'", path);
    assert_int_equal(show(args, out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "not an HDF5 file or truncated");

    snprintf(args, sizeof args, "'%s/missing.h5'", workdir);
    assert_int_equal(show(args, out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "missing.h5");
}

static void show_rejects_bad_options_in_one_line(void **state)
{
    char out[4096], err[4096];
    assert_int_equal(show("", out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "no results file given");
    assert_int_equal(show("x.h5 --format xml", out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "unknown format 'xml' (expected table, csv or json)");
    assert_int_equal(show("--colour x.h5", out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "unknown option '--colour'");
    assert_int_equal(show("x.h5 --format", out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "--format needs a value");
    assert_int_equal(show("a.h5 b.h5", out, sizeof out, err, sizeof err), 2);
    assert_one_line(err, "one results file at a time");
}

static void show_prints_table_csv_and_json_of_a_results_file(void **state)
{
    char path[160], args[320], cmd[800];
    static char out[65536], err[4096];
    snprintf(path, sizeof path, "%s/shown.h5", workdir);
    fixture fx = { 0 };
    write_fixture(path, &fx);

    snprintf(args, sizeof args, "'%s'", path);
    assert_int_equal(show(args, out, sizeof out, err, sizeof err), 0);
    for (size_t i = 0; i < fx.suite.n_runs; i++)
        assert_non_null(strstr(out, fx.suite.runs[i].id));
    assert_non_null(strstr(out, "max |dE|"));
    assert_non_null(strstr(out, "1.000e-03")); /* run 0's max |dE| */
    assert_non_null(strstr(out, "diverged"));

    snprintf(args, sizeof args, "'%s' --format csv", path);
    assert_int_equal(show(args, out, sizeof out, err, sizeof err), 0);
    const char *head = "run_id,hash,problem,regime,method,order,order_found,h,rtol,steps,";
    assert_true(strncmp(out, head, strlen(head)) == 0);
    /* header + one line a run */
    size_t lines = 0;
    for (const char *s = out; *s; s++)
        lines += *s == '\n';
    assert_int_equal(lines, 1 + fx.suite.n_runs);
    assert_non_null(strstr(out, "\"|dE| = 3.5 above the limit 1, \"\"quoted\"\"\""));

    /* JSON: parsed by Python's json module, NaN as null */
    snprintf(cmd, sizeof cmd,
             "%s show '%s' --format json | " PYTHON " -c 'import json, sys; d = json.load("
             "sys.stdin); assert len(d) == 6; assert d[0][\"drift_exponent\"] is None; "
             "assert d[2][\"h\"] is None and d[2][\"rtol\"] == 1e-8; "
             "assert d[1][\"steps\"] == 1001; print(\"json-ok\")'",
             DM_EXE, path);
    assert_int_equal(dm_run_capture(cmd, out, sizeof out, err, sizeof err), 0);
    assert_non_null(strstr(out, "json-ok"));
    free_fixture(&fx);
}

/* A file written before a real figure existed: h5py takes the figure out of /summary
 * and out of every run's group. */
static const char drop_figure[] =
    "import sys, h5py, numpy as np\n"
    "path, name = sys.argv[1], sys.argv[2]\n"
    "with h5py.File(path, 'r+') as f:\n"
    "    rows = f['summary'][()]\n"
    "    keep = [n for n in rows.dtype.names if n != name]\n"
    "    assert len(keep) == len(rows.dtype.names) - 1\n"
    "    old = np.empty(len(rows), dtype=[(n, rows.dtype.fields[n][0]) for n in keep])\n"
    "    for n in keep:\n"
    "        old[n] = rows[n]\n"
    "    del f['summary']\n"
    "    f['summary'] = old\n"
    "    for g in f['runs'].values():\n"
    "        del g.attrs[name]\n"
    "print('dropped')\n";

static void a_real_figure_an_older_file_lacks_reads_as_nan(void **state)
{
    const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
    size_t n_cols = dm_summary_columns(cols);
    const dm_figure *added = NULL; /* the last real figure in /summary and the groups */
    for (size_t j = 0; j < n_cols; j++)
        if (cols[j]->kind == DM_FIGURE_REAL && cols[j]->at != DM_FIGURE_NOWHERE &&
            (cols[j]->in & DM_FIGURE_IN_RUN))
            added = cols[j];
    assert_non_null(added);
    char path[128], script[128], cmd[1024], out[256], err[4096];
    snprintf(path, sizeof path, "%s/older.h5", workdir);
    snprintf(script, sizeof script, "%s/drop.py", workdir);
    fixture fx = { 0 };
    write_fixture(path, &fx);
    for (size_t i = 0; i < fx.suite.n_runs; i++) {
        *(double *)(void *)((char *)&fx.results[i] + added->at) = 1.5; /* not NaN */
        dm_series *sr = &fx.results[i].series; /* no more buckets than a run can have */
        if (sr->n > fx.suite.runs[i].samples)
            sr->n = fx.suite.runs[i].samples;
    }
    dm_error e;
    assert_int_equal(dm_results_write(path, &fx.suite, fx.results, fx.fits, START_TIME, &e),
                     DM_OK);
    write_text_file(script, drop_figure);
    snprintf(cmd, sizeof cmd, PYTHON " '%s' '%s' '%s'", script, path, added->name);
    if (dm_run_capture(cmd, out, sizeof out, err, sizeof err) != 0 || !strstr(out, "dropped")) {
        print_error("%s\n%s\n", out, err);
        fail();
    }

    dm_summary_row *rows = NULL;
    size_t n = 0;
    assert_int_equal(dm_results_read_summary(path, &rows, &n, &e), DM_OK);
    assert_int_equal(n, fx.suite.n_runs);
    for (size_t i = 0; i < n; i++) {
        assert_true(isnan(*(const double *)(const void *)((const char *)&rows[i] + added->row_at)));
        assert_int_equal(rows[i].force_evals, 2000 + i); /* the rest as written */
        assert_string_equal(rows[i].run_id, fx.suite.runs[i].id);
    }
    free(rows);

    dm_run_result *back = calloc(fx.suite.n_runs, sizeof *back);
    assert_non_null(back);
    size_t kept = 0;
    if (dm_results_read_runs(path, &fx.suite, back, NULL, &kept, &e) != DM_OK)
        fail_msg("%s", e.msg);
    assert_int_equal(kept, fx.suite.n_runs);
    for (size_t i = 0; i < fx.suite.n_runs; i++) {
        assert_true(isnan(*(const double *)(const void *)((const char *)&back[i] + added->at)));
        assert_true(back[i].metrics.max_energy_error == fx.results[i].metrics.max_energy_error);
        dm_run_result_free(&back[i]);
    }
    free(back);
    free_fixture(&fx);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(summary_reads_back_every_field_as_written),
        cmocka_unit_test(runs_that_never_started_are_left_out_of_the_file),
        cmocka_unit_test(h5py_reads_root_attributes_summary_text_and_dataset_lengths),
        cmocka_unit_test(large_datasets_are_compressed_and_small_ones_stored_plain),
        cmocka_unit_test(failed_write_into_missing_directory_leaves_nothing),
        cmocka_unit_test(failed_write_at_file_size_limit_leaves_old_file_and_no_temp),
        cmocka_unit_test(successful_write_replaces_the_old_file_and_leaves_no_temp),
        cmocka_unit_test(runs_written_as_they_finish_in_any_order_give_the_same_file),
        cmocka_unit_test(an_abandoned_writer_leaves_nothing_behind),
        cmocka_unit_test(show_refuses_non_hdf5_foreign_newer_and_truncated_files_in_one_line),
        cmocka_unit_test(show_rejects_bad_options_in_one_line),
        cmocka_unit_test(show_prints_table_csv_and_json_of_a_results_file),
        cmocka_unit_test(a_real_figure_an_older_file_lacks_reads_as_nan),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
