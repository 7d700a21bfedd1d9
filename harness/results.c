/* results.c — dm_suite + run results -> the HDF5 results file, and /summary back.
 *
 * The layout is our file contract, documented in results/README.md; change both
 * together and raise DM_SCHEMA_VERSION when a reader would be misled.
 *
 * The file is written under a temporary name in the target's own directory, each run's
 * group as the run finishes (the writer below), and renamed into place only after HDF5
 * closed it without error and it was synced, so a crash, a full disk or a file-size
 * limit never leaves a half-written file under the final name.
 */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <pthread.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/utsname.h>
#include <unistd.h>

#include <hdf5.h>
#include <sundials/sundials_config.h>

#include "checkpoint.h"
#include "dm_build_info.h"
#include "dm_clock.h"
#include "dm_hash.h"
#include "formula.h"
#include "harness.h"
#include "nbody.h"
#include "run_index.h"

#define DM_FORMAT_NAME "driftmark-results"
#define DM_SCHEMA_VERSION 2
#define DM_CHUNK_MAX 4096
#define DM_DEFLATE_LEVEL 4
#define DM_COMPRESS_MIN_BYTES 16384 /* smaller datasets: contiguous, unfiltered */

/* HDF5 prints its error stack to stderr by default; we report one line ourselves. It
 * stays off for the rest of the process: with it on again, HDF5's own clean-up at exit
 * prints "HDF5: infinite loop closing library" and a line of codes after a damaged file
 * failed to open. (The setting is per thread in a thread-safe HDF5: every thread that
 * opens a file calls this first.) */
/* A results file whose writing failed (a full disk, a file-size limit) may stay half
 * closed inside HDF5 1.10, and its own clean-up at exit then crashes on it. So HDF5
 * does not clean up by itself (H5dont_atexit, before its first call); we close it at
 * exit unless a file was left so. */
static bool hdf5_left_broken;
static pthread_once_t hdf5_once = PTHREAD_ONCE_INIT;

static void hdf5_end(void)
{
    if (!__atomic_load_n(&hdf5_left_broken, __ATOMIC_RELAXED))
        H5close();
}

static void hdf5_start(void)
{
    H5dont_atexit();
    atexit(hdf5_end);
}

static void hdf5_silence(void)
{
    pthread_once(&hdf5_once, hdf5_start);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
}

/* ---- types ---- */

/* Fixed-length, null-terminated UTF-8 string of `size` bytes (with the NUL). */
static hid_t fixed_string_type(size_t size)
{
    hid_t t = H5Tcopy(H5T_C_S1);
    if (t < 0)
        return t;
    if (H5Tset_size(t, size > 0 ? size : 1) < 0 || H5Tset_strpad(t, H5T_STR_NULLTERM) < 0 ||
        H5Tset_cset(t, H5T_CSET_UTF8) < 0) {
        H5Tclose(t);
        return -1;
    }
    return t;
}

static hid_t vlen_string_type(void)
{
    hid_t t = H5Tcopy(H5T_C_S1);
    if (t < 0)
        return t;
    if (H5Tset_size(t, H5T_VARIABLE) < 0 || H5Tset_cset(t, H5T_CSET_UTF8) < 0) {
        H5Tclose(t);
        return -1;
    }
    return t;
}

/* The scalar dataspace and the text type every attribute uses, made once for the
 * process (a run's group has some 60 attributes; making and closing both for each was
 * 3 % of writing a short run) and closed with the rest of HDF5 at exit. -1 when HDF5
 * could not make them: the helpers below then make their own. */
static hid_t shared_scalar = -1, shared_text = -1;
static pthread_once_t shared_once = PTHREAD_ONCE_INIT;

static void shared_make(void)
{
    shared_scalar = H5Screate(H5S_SCALAR);
    shared_text = vlen_string_type();
}

/* ---- attributes: every helper returns 0 or -1 ---- */

static int attr_write(hid_t loc, const char *name, hid_t file_type, hid_t mem_type,
                      const void *value)
{
    pthread_once(&shared_once, shared_make);
    hid_t space = shared_scalar >= 0 ? shared_scalar : H5Screate(H5S_SCALAR);
    if (space < 0)
        return -1;
    hid_t a = H5Acreate2(loc, name, file_type, space, H5P_DEFAULT, H5P_DEFAULT);
    int rc = -1;
    if (a >= 0) {
        rc = H5Awrite(a, mem_type, value) < 0 ? -1 : 0;
        if (H5Aclose(a) < 0)
            rc = -1;
    }
    if (space != shared_scalar)
        H5Sclose(space);
    return rc;
}

/* Text attributes are variable-length UTF-8: h5py reads them as str. */
static int attr_text(hid_t loc, const char *name, const char *value)
{
    pthread_once(&shared_once, shared_make);
    hid_t t = shared_text >= 0 ? shared_text : vlen_string_type();
    if (t < 0)
        return -1;
    const char *v = value != NULL ? value : "";
    int rc = attr_write(loc, name, t, t, &v);
    if (t != shared_text)
        H5Tclose(t);
    return rc;
}

static int attr_double(hid_t loc, const char *name, double value)
{
    return attr_write(loc, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, &value);
}

static int attr_u64(hid_t loc, const char *name, uint64_t value)
{
    return attr_write(loc, name, H5T_STD_U64LE, H5T_NATIVE_UINT64, &value);
}

static int attr_int(hid_t loc, const char *name, int value)
{
    return attr_write(loc, name, H5T_STD_I32LE, H5T_NATIVE_INT, &value);
}

static int attr_bool(hid_t loc, const char *name, bool value)
{
    int8_t v = value ? 1 : 0;
    return attr_write(loc, name, H5T_STD_I8LE, H5T_NATIVE_INT8, &v);
}

/* ---- datasets ---- */

/* One-dimensional dataset of n elements. Of DM_COMPRESS_MIN_BYTES or more: chunked
 * min(n, 4096), shuffle + deflate 4. Smaller ones (and empty ones: HDF5 refuses chunks
 * of size zero) are contiguous and unfiltered: a chunked dataset pays its chunk index
 * (a B-tree node of about 2 KiB) and a deflate stream of its own, which on a series of
 * 1000 doubles costs more bytes than the compression saves, and time (1000 runs of 1000
 * buckets: 56.7 MB compressed, 49.1 MB plain, and less than half the instructions a
 * run); from 2048 doubles (16 KiB) on, compression saves bytes again (the default
 * suite's 2048 buckets: 4.47 MB compressed, 5.32 MB plain). Readers see no difference:
 * HDF5 reads either layout the same way. */
static int dataset_write(hid_t loc, const char *name, hid_t file_type, hid_t mem_type,
                         const void *data, size_t n)
{
    hsize_t dims[1] = { (hsize_t)n };
    hid_t space = H5Screate_simple(1, dims, NULL);
    if (space < 0)
        return -1;
    hid_t dcpl = H5Pcreate(H5P_DATASET_CREATE);
    int rc = -1;
    if (dcpl < 0)
        goto out_space;
    if (n > 0 && n * H5Tget_size(file_type) >= DM_COMPRESS_MIN_BYTES) {
        hsize_t chunk[1] = { (hsize_t)(n < DM_CHUNK_MAX ? n : DM_CHUNK_MAX) };
        if (H5Pset_chunk(dcpl, 1, chunk) < 0)
            goto out_dcpl;
        if (H5Zfilter_avail(H5Z_FILTER_DEFLATE) > 0) {
            if (H5Pset_shuffle(dcpl) < 0 || H5Pset_deflate(dcpl, DM_DEFLATE_LEVEL) < 0)
                goto out_dcpl;
        }
    }
    hid_t d = H5Dcreate2(loc, name, file_type, space, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    if (d < 0)
        goto out_dcpl;
    rc = 0;
    if (n > 0 && H5Dwrite(d, mem_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, data) < 0)
        rc = -1;
    if (H5Dclose(d) < 0)
        rc = -1;
out_dcpl:
    H5Pclose(dcpl);
out_space:
    H5Sclose(space);
    return rc;
}

static int dataset_double(hid_t loc, const char *name, const double *data, size_t n)
{
    return dataset_write(loc, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, data, n);
}

static int dataset_u64(hid_t loc, const char *name, const uint64_t *data, size_t n)
{
    return dataset_write(loc, name, H5T_STD_U64LE, H5T_NATIVE_UINT64, data, n);
}

/* Fixed-length UTF-8 strings, as wide as the longest plus its NUL. */
static int dataset_strings(hid_t loc, const char *name, const char *const *items, size_t n)
{
    size_t width = 1;
    for (size_t i = 0; i < n; i++)
        if (strlen(items[i]) + 1 > width)
            width = strlen(items[i]) + 1;
    char *buf = calloc(n > 0 ? n : 1, width);
    if (buf == NULL)
        return -1;
    for (size_t i = 0; i < n; i++)
        memcpy(buf + i * width, items[i], strlen(items[i]));
    hid_t t = fixed_string_type(width);
    int rc = t < 0 ? -1 : dataset_write(loc, name, t, t, buf, n);
    if (t >= 0)
        H5Tclose(t);
    free(buf);
    return rc;
}

/* ---- /summary ---- */

/* Bytes of a /summary field in the file: texts as wide as the list says, int32, and
 * 8-byte counts and reals. */
static size_t summary_bytes(const dm_figure *f)
{
    switch (f->kind) {
    case DM_FIGURE_STATUS:
    case DM_FIGURE_TEXT: return f->width;
    case DM_FIGURE_INT: return 4;
    default: return 8;
    }
}

/* The compound type of one summary row, its columns those of dm_summary_columns: in
 * memory (the C struct's layout, native numbers) or in the file (packed, little-endian). */
static hid_t summary_type(bool in_file)
{
    const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
    const size_t n_cols = dm_summary_columns(cols);
    size_t total = 0;
    for (size_t i = 0; i < n_cols; i++)
        total += summary_bytes(cols[i]);
    hid_t t = H5Tcreate(H5T_COMPOUND, in_file ? total : sizeof(dm_summary_row));
    if (t < 0)
        return -1;
    size_t offset = 0;
    for (size_t i = 0; i < n_cols; i++) {
        const dm_figure *f = cols[i];
        hid_t member;
        bool owned = false;
        switch (f->kind) {
        case DM_FIGURE_STATUS:
        case DM_FIGURE_TEXT: member = fixed_string_type(f->width); owned = true; break;
        case DM_FIGURE_INT: member = in_file ? H5T_STD_I32LE : H5T_NATIVE_INT; break;
        case DM_FIGURE_COUNT: member = in_file ? H5T_STD_U64LE : H5T_NATIVE_UINT64; break;
        default: member = in_file ? H5T_IEEE_F64LE : H5T_NATIVE_DOUBLE; break;
        }
        herr_t rc = member < 0 ? -1
                               : H5Tinsert(t, f->name, in_file ? offset : f->row_at, member);
        if (owned && member >= 0)
            H5Tclose(member);
        if (rc < 0) {
            H5Tclose(t);
            return -1;
        }
        offset += summary_bytes(f);
    }
    return t;
}

static int write_summary(hid_t file, const dm_summary_row *rows, size_t n)
{
    hid_t ft = summary_type(true), mt = summary_type(false);
    int rc = -1;
    if (ft >= 0 && mt >= 0)
        rc = dataset_write(file, "summary", ft, mt, rows, n);
    if (ft >= 0)
        H5Tclose(ft);
    if (mt >= 0)
        H5Tclose(mt);
    return rc;
}

/* ---- the parts of the file ---- */

static int write_root(hid_t file, const dm_suite *suite, const char *start_time_utc)
{
    char hdf5_version[64];
    unsigned maj = 0, min = 0, rel = 0;
    H5get_libversion(&maj, &min, &rel);
    snprintf(hdf5_version, sizeof hdf5_version, "%u.%u.%u", maj, min, rel);
    char host[256] = "unknown", system[400] = "unknown";
    struct utsname u;
    if (uname(&u) == 0) {
        snprintf(host, sizeof host, "%s", u.nodename);
        snprintf(system, sizeof system, "%s %s %s", u.sysname, u.release, u.machine);
    } else if (gethostname(host, sizeof host) != 0) {
        snprintf(host, sizeof host, "unknown");
    }
    host[sizeof host - 1] = '\0';
    int rc = 0;
    rc |= attr_text(file, "format", DM_FORMAT_NAME);
    rc |= attr_int(file, "schema_version", DM_SCHEMA_VERSION);
    rc |= attr_text(file, "driftmark_version", DM_VERSION);
    rc |= attr_text(file, "git_commit", DM_GIT_COMMIT);
    rc |= attr_text(file, "compiler", DM_COMPILER);
    rc |= attr_text(file, "c_flags", DM_C_FLAGS);
    rc |= attr_text(file, "build_type", DM_BUILD_TYPE);
    rc |= attr_text(file, "sundials_version", SUNDIALS_VERSION);
    rc |= attr_text(file, "hdf5_version", hdf5_version);
    rc |= attr_text(file, "host", host);
    rc |= attr_text(file, "system", system);
    rc |= attr_text(file, "start_time_utc", start_time_utc ? start_time_utc : "");
    rc |= attr_text(file, "suite_name", suite->name);
    rc |= attr_text(file, "suite_source", suite->source);
    rc |= attr_text(file, "suite_folder", suite->folder);
    rc |= attr_text(file, "suite_text", suite->text ? suite->text : "");
    rc |= attr_u64(file, "n_runs_planned", suite->n_runs);
    rc |= attr_u64(file, "n_sweeps", suite->n_sweeps);
    return rc;
}

static const char *step_setting_name(dm_step_setting setting)
{
    switch (setting) {
    case DM_SET_BY_H: return "h";
    case DM_SET_BY_STEPS_PER_PERIOD: return "steps_per_period";
    case DM_SET_BY_RTOL: return "rtol";
    }
    return "unknown";
}

/* An HDF5 link name may not contain '/' (nor be "."): keep names we did not make safe. */
static void safe_name(const char *in, char *out, size_t size)
{
    snprintf(out, size, "%s", in);
    for (char *s = out; *s; s++)
        if (*s == '/')
            *s = '_';
    if (strcmp(out, ".") == 0)
        snprintf(out, size, "_");
}

/* The extra invariants' names, as the datasets and attributes are named. */
static const char *invariant_name(const dm_problem *pr, int i)
{
    return i < pr->n_invariants && pr->invariant_names[i] ? pr->invariant_names[i]
                                                          : "invariant";
}

/* What the run was: its problem, its method, its horizon. */
static int write_run_description(hid_t g, const dm_suite *suite, const dm_run_spec *spec)
{
    const dm_instance *inst = &spec->inst;
    const dm_problem *pr = inst->problem;
    const dm_method *m = spec->method;
    bool adaptive = m->adaptive;
    int rc = 0;

    /* the problem */
    rc |= attr_text(g, "problem", pr->id);
    if (spec->data_hash[0] != '\0') {
        /* the problem's data from the suite: its units, source and hash, and for
         * N-body the bodies and the one whose period is measured */
        rc |= attr_text(g, "units", spec->units);
        rc |= attr_text(g, "bodies_source", spec->data_source);
        rc |= attr_text(g, "bodies_hash", spec->data_hash);
        const dm_nbody *bodies = dm_nbody_of(&spec->inst, NULL);
        if (bodies != NULL) {
            rc |= attr_u64(g, "bodies", (uint64_t)bodies->n);
            char period_of[2 * DM_NBODY_NAME_MAX + 16] = "";
            if (bodies->period_body >= 0)
                snprintf(period_of, sizeof period_of, "%s around %s",
                         bodies->name[bodies->period_body], bodies->name[bodies->period_around]);
            rc |= attr_text(g, "period_of", period_of);
        }
    }
    if (spec->problem_library[0] != '\0') {
        rc |= attr_text(g, "problem_library", spec->problem_library);
        rc |= attr_text(g, "problem_library_hash", spec->problem_library_hash);
    }
    const dm_formula_info *formula = dm_formula_info_of(pr);
    if (formula != NULL) {
        rc |= attr_text(g, "formula_potential", formula->potential);
        rc |= attr_text(g, "formula_kinetic", formula->kinetic);
        rc |= attr_text(g, "formula_coordinates", formula->coordinates);
        rc |= attr_text(g, "formula_masses", formula->masses);
        rc |= attr_text(g, "formula_hash", formula->hash);
        rc |= attr_text(g, "formula_code", formula->code == DM_FORMULA_COMPILED ? "compiled"
                                                                                : "evaluated");
        rc |= attr_text(g, "formula_compiler", formula->compiler);
        rc |= attr_text(g, "formula_flags", formula->flags);
        rc |= attr_text(g, "formula_object", formula->object);
        rc |= attr_double(g, "formula_compile_seconds", formula->compile_seconds);
    }
    char given[512] = "";
    size_t used = 0;
    for (int i = 0; i < pr->n_params; i++) {
        char aname[96];
        snprintf(aname, sizeof aname, "param_%s", pr->params[i].name);
        rc |= attr_double(g, aname, inst->param[i]);
        if ((inst->given & (1u << i)) && used < sizeof given) {
            int w = snprintf(given + used, sizeof given - used, "%s%s", used ? "," : "",
                             pr->params[i].name);
            used += w > 0 ? (size_t)w : 0;
        }
    }
    rc |= attr_text(g, "given_parameters", given);
    rc |= attr_text(g, "regime", pr->regimes[inst->regime].id);
    rc |= attr_double(g, "energy", inst->energy);
    rc |= attr_double(g, "period", inst->period);
    rc |= attr_double(g, "first_crossing", inst->first_crossing);

    /* the method */
    rc |= attr_text(g, "method", m->id);
    rc |= attr_text(g, "method_name", m->name);
    rc |= attr_text(g, "method_family", dm_family_name(m->family));
    rc |= attr_int(g, "method_order", m->order);
    rc |= attr_bool(g, "method_symplectic", m->symplectic);
    rc |= attr_bool(g, "method_symmetric", m->symmetric);
    rc |= attr_bool(g, "method_adaptive", m->adaptive);
    if (m->user != NULL) { /* a table typed in the suite: the run alone reproduces it */
        rc |= attr_text(g, "method_table", m->user->text);
        rc |= attr_int(g, "method_order_found", m->user->findings.order_found);
    }
    rc |= attr_double(g, "h", adaptive ? NAN : spec->method_config.h);
    rc |= attr_double(g, "rtol", adaptive ? spec->method_config.rtol : NAN);
    rc |= attr_double(g, "atol", adaptive ? spec->method_config.atol : NAN);
    rc |= attr_bool(g, "compensated", spec->method_config.compensated);
    rc |= attr_text(g, "step_given_as", step_setting_name(spec->step_setting));
    rc |= attr_double(g, "step_given", spec->step_value);

    /* the run */
    rc |= attr_text(g, "run_id", spec->id);
    rc |= attr_text(g, "hash", spec->hash);
    rc |= attr_text(g, "config", spec->config);
    rc |= attr_double(g, "t_end", spec->t_end);
    rc |= attr_double(g, "periods", spec->periods);
    rc |= attr_u64(g, "samples", spec->samples);
    rc |= attr_text(g, "sweep", spec->sweep >= 0 && (size_t)spec->sweep < suite->n_sweeps
                                    ? suite->sweeps[spec->sweep].name
                                    : "");
    return rc;
}

/* The figure f of result r as type T. */
#define FIGURE_OF(f, r, T) (*(const T *)(const void *)((const char *)(r) + (f)->at))
#define FIGURE_AT(f, r, T) (*(T *)(void *)((char *)(r) + (f)->at))

/* What the run measured: an attribute for every figure of DM_RUN_FIGURES kept in
 * /runs/<id>, in list order. */
static int write_run_figures(hid_t g, const dm_run_spec *spec, const dm_run_result *res)
{
    const dm_problem *pr = spec->inst.problem;
    int rc = 0;
    for (size_t i = 0; i < dm_n_run_figures; i++) {
        const dm_figure *f = &dm_run_figures[i];
        if (!(f->in & DM_FIGURE_IN_RUN))
            continue;
        switch (f->kind) {
        case DM_FIGURE_REAL: rc |= attr_double(g, f->name, FIGURE_OF(f, res, double)); break;
        case DM_FIGURE_COUNT: rc |= attr_u64(g, f->name, FIGURE_OF(f, res, uint64_t)); break;
        case DM_FIGURE_STATUS:
            rc |= attr_text(g, f->name, dm_run_status_name(FIGURE_OF(f, res, dm_run_status)));
            break;
        case DM_FIGURE_TEXT: rc |= attr_text(g, f->name, (const char *)res + f->at); break;
        case DM_FIGURE_RULE: rc |= attr_text(g, f->name, FIGURE_OF(f, res, const char *)); break;
        case DM_FIGURE_PER_INVARIANT:
            for (int k = 0; k < res->series.n_invariants && k < DM_MAX_INVARIANTS; k++) {
                if (res->series.invariant_error[k] == NULL)
                    continue;
                char raw[96], aname[96];
                dm_figure_invariant_name(raw, sizeof raw, invariant_name(pr, k));
                safe_name(raw, aname, sizeof aname);
                rc |= attr_double(g, aname, (&FIGURE_OF(f, res, double))[k]);
            }
            break;
        case DM_FIGURE_INT: rc = -1; break; /* only in DM_SUMMARY_RUN_FIELDS */
        }
    }
    return rc;
}

/* The stored series and the kept crossings. */
static int write_run_series(hid_t g, const dm_problem *pr, const dm_run_result *res)
{
    int rc = 0;
    const dm_series *s = &res->series;
#define WRITE_SERIES(name, always)                                                        \
    if ((always) || s->name != NULL)                                                      \
        rc |= dataset_double(g, #name, s->name, s->n);
    DM_SERIES_LIST(WRITE_SERIES)
#undef WRITE_SERIES
    for (int i = 0; i < s->n_invariants && i < DM_MAX_INVARIANTS; i++) {
        if (s->invariant_error[i] == NULL)
            continue;
        char raw[96], dname[96];
        snprintf(raw, sizeof raw, "%s_error", invariant_name(pr, i));
        safe_name(raw, dname, sizeof dname);
        rc |= dataset_double(g, dname, s->invariant_error[i], s->n);
    }
    const dm_crossings *c = &res->crossings;
    rc |= dataset_double(g, "crossing_number", c->number, c->n);
    rc |= dataset_double(g, "crossing_time", c->time, c->n);
    rc |= dataset_double(g, "phase_error", c->phase_error, c->n);
    if (c->section_q != NULL) {
        rc |= dataset_double(g, "section_q", c->section_q, c->n);
        rc |= dataset_double(g, "section_p", c->section_p, c->n);
    }
    return rc;
}

static int write_run(hid_t runs, const dm_suite *suite, const dm_run_spec *spec,
                     const dm_run_result *res)
{
    char gname[DM_RUN_ID_MAX];
    safe_name(spec->id, gname, sizeof gname);
    hid_t g = H5Gcreate2(runs, gname, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    if (g < 0)
        return -1;
    int rc = write_run_description(g, suite, spec);
    rc |= write_run_figures(g, spec, res);
    rc |= write_run_series(g, spec->inst.problem, res);
    if (res->status == DM_RUN_INTERRUPTED && res->checkpoint != NULL)
        rc |= dm_checkpoint_write(g, res->checkpoint);
    if (H5Gclose(g) < 0)
        rc = -1;
    return rc;
}

static int write_sweep(hid_t sweeps, const dm_suite *suite, const dm_sweep *sw,
                       const dm_run_result *results, const dm_sweep_fit *fit)
{
    char gname[DM_RUN_ID_MAX];
    safe_name(sw->name, gname, sizeof gname);
    /* the runs that started, their ids and codes: as the sweep table shows them */
    dm_sweep_summary sum;
    dm_error err = { 0 };
    if (dm_sweep_summary_fill(&sum, suite, sw, results, fit, &err) != DM_OK)
        return -1;
    if (sum.n_runs == 0) { /* none of its runs started: left out, as its runs are */
        free(sum.runs);
        return 0;
    }
    hid_t g = H5Gcreate2(sweeps, gname, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    if (g < 0) {
        free(sum.runs);
        return -1;
    }
    size_t n = sum.n_runs, alloc = n ? n : 1;
    const char **ids = calloc(alloc, sizeof *ids);
    double *setting = calloc(alloc, sizeof *setting);
    double *h = calloc(alloc, sizeof *h);
    double *energy = calloc(alloc, sizeof *energy);
    double *phase = calloc(alloc, sizeof *phase);
    uint64_t *evals = calloc(alloc, sizeof *evals);
    const char **energy_use = calloc(alloc, sizeof *energy_use);
    const char **phase_use = calloc(alloc, sizeof *phase_use);
    int rc = -1;
    if (ids && setting && h && energy && phase && evals && energy_use && phase_use) {
        size_t kept = 0;
        for (size_t i = 0; i < sw->n_runs; i++) {
            const dm_run_spec *spec = &suite->runs[sw->runs[i]];
            const dm_run_result *res = &results[sw->runs[i]];
            if (res->status == DM_RUN_NOT_RUN)
                continue;   /* as dm_sweep_summary_fill */
            ids[kept] = sum.runs[kept].run_id;
            setting[kept] = spec->step_value;
            h[kept] = sw->step_setting == DM_SET_BY_RTOL ? spec->method_config.rtol
                                               : spec->method_config.h;
            energy[kept] = res->metrics.max_energy_error;
            phase[kept] = res->metrics.phase_error_per_period;
            evals[kept] = res->metrics.counts.force_evals;
            energy_use[kept] = sum.runs[kept].energy_fit;
            phase_use[kept] = sum.runs[kept].phase_fit;
            kept++;
        }
        rc = 0;
        rc |= attr_text(g, "step_given_as", step_setting_name(sw->step_setting));
        rc |= attr_double(g, "energy_order", sum.energy_order);
        rc |= attr_double(g, "phase_order", sum.phase_order);
        rc |= attr_u64(g, "n_points_energy", sum.n_points_energy);
        rc |= attr_u64(g, "n_points_phase", sum.n_points_phase);
        rc |= attr_double(g, "energy_order_local_min", sum.energy_local_min);
        rc |= attr_double(g, "energy_order_local_max", sum.energy_local_max);
        rc |= attr_double(g, "phase_order_local_min", sum.phase_local_min);
        rc |= attr_double(g, "phase_order_local_max", sum.phase_local_max);
        rc |= attr_bool(g, "energy_order_trend", sum.energy_trend);
        rc |= attr_bool(g, "phase_order_trend", sum.phase_trend);
        rc |= attr_u64(g, "n_runs", n); /* runs written (those that started) */
        rc |= dataset_strings(g, "run_id", ids, n);
        rc |= dataset_double(g, sw->step_setting == DM_SET_BY_RTOL ? "rtol" : "h", h, n);
        if (sw->step_setting == DM_SET_BY_STEPS_PER_PERIOD)
            rc |= dataset_double(g, "steps_per_period", setting, n);
        rc |= dataset_u64(g, "force_evals", evals, n);
        rc |= dataset_double(g, "max_energy_error", energy, n);
        rc |= dataset_double(g, "phase_error_per_period", phase, n);
        rc |= dataset_strings(g, "energy_fit", energy_use, n);
        rc |= dataset_strings(g, "phase_fit", phase_use, n);
    }
    free(ids);
    free(setting);
    free(h);
    free(energy);
    free(phase);
    free(evals);
    free(energy_use);
    free(phase_use);
    free(sum.runs);
    if (H5Gclose(g) < 0)
        rc = -1;
    return rc;
}

/* An s x s block of a table's matrix as a row-major dataset. */
static int dataset_matrix(hid_t g, const char *name,
                          const double m[DM_RK_MAX_STAGES][DM_RK_MAX_STAGES], int s)
{
    double flat[DM_RK_MAX_STAGES * DM_RK_MAX_STAGES];
    for (int i = 0; i < s; i++)
        for (int j = 0; j < s; j++)
            flat[i * s + j] = m[i][j];
    return dataset_double(g, name, flat, (size_t)(s * s));
}

/* /tables/<name>: a table typed in the suite, in full (results/README.md). */
static int write_table(hid_t tables, const dm_user_table *t)
{
    const dm_table_input *in = &t->input;
    const dm_table_findings *f = &t->findings;
    hid_t g = H5Gcreate2(tables, in->name, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    if (g < 0)
        return -1;
    int rc = attr_text(g, "form", dm_table_form_name(in->form));
    rc |= attr_text(g, "text", t->text);
    rc |= attr_text(g, "reference", in->reference);
    rc |= attr_int(g, "claimed_order", in->claimed_order);
    rc |= attr_int(g, "order_found", f->order_found);
    rc |= attr_text(g, "order_basis", f->order_basis);
    rc |= attr_bool(g, "experimental", in->experimental);
    rc |= attr_bool(g, "symmetric", f->symmetric);
    if (in->form == DM_TABLE_RUNGE_KUTTA) {
        const dm_rk_tableau *tab = &t->tableau;
        rc |= attr_int(g, "stages", tab->stages);
        rc |= dataset_matrix(g, "a", tab->a, tab->stages);
        rc |= dataset_double(g, "b", tab->b, (size_t)tab->stages);
        rc |= dataset_double(g, "condition_residual", f->condition_residual + 1,
                             (size_t)f->conditions_checked_to);
    } else {
        if (in->form == DM_TABLE_NYSTROM) {
            const dm_rkn_tableau *n = &t->nystrom;
            rc |= attr_int(g, "stages", n->stages);
            rc |= dataset_matrix(g, "abar", n->abar, n->stages);
            rc |= dataset_double(g, "bbar", n->bbar, (size_t)n->stages);
            rc |= dataset_double(g, "b", n->b, (size_t)n->stages);
            rc |= dataset_double(g, "c", n->c, (size_t)n->stages);
            rc |= dataset_double(g, "condition_residual", f->condition_residual + 1,
                                 (size_t)f->conditions_checked_to);
        } else {
            rc |= attr_bool(g, "kick_first", t->splitting.kick_first);
            rc |= dataset_double(g, "kick", t->kick, (size_t)t->splitting.n_kick);
            rc |= dataset_double(g, "drift", t->drift, (size_t)t->splitting.n_drift);
        }
        for (int k = 0; k < 2; k++) {
            const dm_measured_order *o = &f->measured[k];
            const char *pr = dm_table_check_problems[k];
            char name[96];
            snprintf(name, sizeof name, "measured_order_%s", pr);
            rc |= attr_double(g, name, o->order);
            snprintf(name, sizeof name, "error_constant_%s", pr);
            rc |= attr_double(g, name, o->error_constant);
            snprintf(name, sizeof name, "steps_per_period_%s", pr);
            rc |= dataset_double(g, name, o->steps_per_period, (size_t)o->levels);
            snprintf(name, sizeof name, "errors_%s", pr);
            rc |= dataset_double(g, name, o->errors, (size_t)o->levels);
        }
    }
    if (H5Gclose(g) < 0)
        rc = -1;
    return rc;
}

/* ---- the writer: the file written run by run ---- */

/* The file under its temporary name, open while the runs run. Each run's group is
 * written as the run finishes (dm_results_writer_add), from whichever thread finished
 * it: the lock keeps every HDF5 call of the writer on one thread at a time. /summary,
 * the root's n_runs_written and /sweeps need every run, so they are written last, by
 * dm_results_writer_finish, which closes the file, syncs it and renames it into place. */
struct dm_results_writer {
    pthread_mutex_t lock;
    const dm_suite *suite;
    char path[1024];
    char tmp[1200];
    hid_t file, runs;
    unsigned char *written;        /* written[i]: run i's group is in the file */
    bool broken;                   /* a write failed: the file can only be abandoned */
    dm_error error;                /* why */
    /* save points (dm_results_writer_save) */
    double save_every;             /* seconds; 0: none */
    bool may_replace;              /* NAME may be replaced though we did not put it there */
    char save_tmp[1200];           /* ".NAME.save-PID", the copy being completed */
    dev_t saved_dev;               /* the file a save point put at NAME ... */
    ino_t saved_ino;
    bool saved;                    /* ... once one did */
    dm_save_stats stats;
};

/* Records the first failure of the writer (under its lock) and returns its code. */
static dm_status writer_fail(dm_results_writer *w, dm_error *err, dm_status code,
                             const char *what)
{
    int e = errno; /* set to 0 before the HDF5 calls that failed */
    if (!w->broken) {
        w->broken = true;
        if (code == DM_ENOMEM)
            dm_error_set(&w->error, DM_ENOMEM, "out of memory writing results to '%s'",
                         w->path);
        else
            dm_error_set(&w->error, code, "cannot write results to '%s': writing %s failed%s%s",
                         w->path, what, e != 0 ? ": " : "", e != 0 ? strerror(e) : "");
    }
    if (err != NULL)
        *err = w->error;
    return w->error.code;
}

/* Closes what is open of the file (a failure to close is a failure to write). */
static int writer_close(dm_results_writer *w)
{
    if (w->broken)
        __atomic_store_n(&hdf5_left_broken, true, __ATOMIC_RELAXED);
    int rc = 0;
    if (w->runs >= 0 && H5Gclose(w->runs) < 0)
        rc = -1;
    if (w->file >= 0 && H5Fclose(w->file) < 0)
        rc = -1;
    w->runs = w->file = -1;
    return rc;
}

static void writer_free(dm_results_writer *w)
{
    free(w->written);
    pthread_mutex_destroy(&w->lock);
    free(w);
}

dm_status dm_results_writer_open(const char *path, const dm_suite *suite,
                                 const char *start_time_utc, dm_results_writer **out,
                                 dm_error *err)
{
    *out = NULL;
    dm_results_writer *w = calloc(1, sizeof *w);
    if (w == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory writing results to '%s'", path);
    w->suite = suite;
    w->file = w->runs = -1;
    w->written = calloc(suite->n_runs ? suite->n_runs : 1, 1);
    if (w->written == NULL) {
        free(w);
        return dm_error_set(err, DM_ENOMEM, "out of memory writing results to '%s'", path);
    }
    snprintf(w->path, sizeof w->path, "%s", path);
    if (strlen(path) >= sizeof w->path ||
        dm_results_temp_path(path, (long)getpid(), w->tmp, sizeof w->tmp) != 0) {
        free(w->written);
        free(w);
        return dm_error_set(err, DM_EIO, "cannot write results to '%s': not a file name or "
                            "too long", path);
    }
    pthread_mutex_init(&w->lock, NULL);
    hdf5_silence();
    hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
    errno = 0; /* what the system said, if HDF5 fails */
    if (fapl >= 0 && H5Pset_fclose_degree(fapl, H5F_CLOSE_STRONG) >= 0 &&
        H5Pset_evict_on_close(fapl, 1) >= 0)
        w->file = H5Fcreate(w->tmp, H5F_ACC_TRUNC, H5P_DEFAULT, fapl);
    if (fapl >= 0)
        H5Pclose(fapl);
    if (w->file < 0) {
        int e = errno;
        dm_error_set(err, DM_EIO, "cannot create results file '%s': %s", w->tmp,
                     e != 0 ? strerror(e) : "HDF5 refused it");
        unlink(w->tmp);
        writer_free(w);
        return DM_EIO;
    }
    if (write_root(w->file, suite, start_time_utc) != 0 ||
        (w->runs = H5Gcreate2(w->file, "runs", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT)) < 0) {
        dm_status st = writer_fail(w, err, DM_EIO, "the root attributes");
        dm_results_writer_abort(w);
        return st;
    }
    *out = w;
    return DM_OK;
}

dm_status dm_results_writer_add(dm_results_writer *w, size_t index, const dm_run_result *r,
                                dm_error *err)
{
    pthread_mutex_lock(&w->lock);
    hdf5_silence(); /* per thread in a thread-safe HDF5 */
    dm_status st = DM_OK;
    if (w->broken) {
        st = writer_fail(w, err, DM_EIO, "");
    } else if (index < w->suite->n_runs && r->status != DM_RUN_NOT_RUN) {
        errno = 0;
        if (w->written[index])
            st = dm_error_set(err, DM_EIO, "cannot write results to '%s': run %s written "
                              "twice", w->path, w->suite->runs[index].id);
        else if (write_run(w->runs, w->suite, &w->suite->runs[index], r) != 0)
            st = writer_fail(w, err, DM_EIO, "its group");
        else
            w->written[index] = 1;
    }
    pthread_mutex_unlock(&w->lock);
    return st;
}

/* /summary, n_runs_written and /sweeps, from every run's figures. */
static dm_status write_last(hid_t file, const dm_suite *suite, const dm_run_result *results,
                            const dm_sweep_fit *fits, const char **what)
{
    /* Runs that never started (DM_RUN_NOT_RUN) are left out everywhere. */
    *what = "/summary";
    dm_summary_row *rows = calloc(suite->n_runs ? suite->n_runs : 1, sizeof *rows);
    if (rows == NULL)
        return DM_ENOMEM;
    size_t n_rows = 0;
    for (size_t i = 0; i < suite->n_runs; i++)
        if (results[i].status != DM_RUN_NOT_RUN)
            dm_summary_row_fill(&rows[n_rows++], &suite->runs[i], &results[i]);
    int rc = write_summary(file, rows, n_rows);
    free(rows);
    rc |= attr_u64(file, "n_runs_written", n_rows);
    if (rc != 0)
        return DM_EIO;

    *what = "/sweeps";
    hid_t sweeps = H5Gcreate2(file, "sweeps", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    if (sweeps < 0)
        return DM_EIO;
    for (size_t i = 0; i < suite->n_sweeps && rc == 0; i++)
        rc = write_sweep(sweeps, suite, &suite->sweeps[i], results, fits ? &fits[i] : NULL);
    if (H5Gclose(sweeps) < 0 || rc != 0)
        return DM_EIO;

    if (suite->n_tables == 0)
        return DM_OK;
    *what = "/tables";
    hid_t tables = H5Gcreate2(file, "tables", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    if (tables < 0)
        return DM_EIO;
    for (size_t i = 0; i < suite->n_tables && rc == 0; i++)
        rc = write_table(tables, suite->tables[i]);
    if (H5Gclose(tables) < 0 || rc != 0)
        return DM_EIO;
    return DM_OK;
}

/* The closed file synced to the disk, so that the rename below never publishes a file
 * whose bytes are not there yet. */
static int sync_file(const char *path)
{
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0)
        return -1;
    int rc = fsync(fd);
    if (close(fd) != 0)
        rc = -1;
    return rc;
}

/* Completes a file holding the groups w->written says: the runs of results[] not
 * written yet, as they are (interrupted runs read back that never ran again; at a save
 * point, the running runs' snapshots), then /summary, /sweeps and /tables. */
static dm_status complete_file(const dm_results_writer *w, hid_t file, hid_t runs,
                               const dm_run_result *results, const dm_sweep_fit *fits,
                               const char **what)
{
    for (size_t i = 0; i < w->suite->n_runs; i++) {
        if (results[i].status == DM_RUN_NOT_RUN || w->written[i])
            continue;
        *what = "a run's group";
        if (write_run(runs, w->suite, &w->suite->runs[i], &results[i]) != 0)
            return DM_EIO;
    }
    return write_last(file, w->suite, results, fits, what);
}

/* The directory holding `path` synced, so that a rename into it lasts. */
static int sync_dir(const char *path)
{
    char dir[1024];
    const char *slash = strrchr(path, '/');
    if (slash == NULL)
        snprintf(dir, sizeof dir, ".");
    else if (slash == path)
        snprintf(dir, sizeof dir, "/");
    else
        snprintf(dir, sizeof dir, "%.*s", (int)(slash - path), path);
    int fd = open(dir, O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    if (fd < 0)
        return -1;
    int rc = fsync(fd);
    close(fd);
    return rc;
}

dm_status dm_results_writer_finish(dm_results_writer *w, const dm_run_result *results,
                                   const dm_sweep_fit *fits, dm_error *err)
{
    pthread_mutex_lock(&w->lock);
    hdf5_silence();
    const char *what = "";
    dm_status st = w->broken ? DM_EIO : DM_OK;
    errno = 0;
    if (st == DM_OK)
        st = complete_file(w, w->file, w->runs, results, fits, &what);
    if (writer_close(w) != 0 && st == DM_OK) {
        __atomic_store_n(&hdf5_left_broken, true, __ATOMIC_RELAXED);
        st = DM_EIO;
        what = "the file's last blocks";
    }
    if (st == DM_OK && sync_file(w->tmp) != 0) {
        st = DM_EIO;
        what = "the file to the disk";
    }
    if (st != DM_OK) {
        writer_fail(w, err, st, what);
    } else if (rename(w->tmp, w->path) != 0) {
        int e = errno;
        st = dm_error_set(err, DM_EIO, "cannot write results to '%s': rename from '%s' "
                          "failed: %s", w->path, w->tmp, strerror(e));
    } else {
        (void)sync_dir(w->path); /* the file is whole either way; this makes it last */
    }
    if (st != DM_OK)
        unlink(w->tmp);
    pthread_mutex_unlock(&w->lock);
    writer_free(w);
    return st;
}

void dm_results_writer_set_saves(dm_results_writer *w, double seconds, bool may_replace)
{
    pthread_mutex_lock(&w->lock);
    w->save_every = seconds > 0.0 && isfinite(seconds) ? seconds : 0.0;
    w->may_replace = may_replace;
    pthread_mutex_unlock(&w->lock);
}

double dm_results_writer_save_every(dm_results_writer *w)
{
    pthread_mutex_lock(&w->lock);
    double s = w->save_every;
    pthread_mutex_unlock(&w->lock);
    return s;
}

dm_save_stats dm_results_writer_save_stats(dm_results_writer *w)
{
    pthread_mutex_lock(&w->lock);
    dm_save_stats s = w->stats;
    pthread_mutex_unlock(&w->lock);
    return s;
}

/* The bytes of file `from` into a new file `to` (replacing one left by this process). */
static int copy_bytes(const char *from, const char *to)
{
    int in = open(from, O_RDONLY | O_CLOEXEC);
    if (in < 0)
        return -1;
    int out = open(to, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
    if (out < 0) {
        close(in);
        return -1;
    }
    size_t size = (size_t)1 << 20;
    char *buf = malloc(size);
    int rc = buf != NULL ? 0 : -1;
    while (rc == 0) {
        ssize_t n = read(in, buf, size);
        if (n == 0)
            break;
        if (n < 0) {
            if (errno == EINTR)
                continue;
            rc = -1;
            break;
        }
        for (ssize_t done = 0; done < n;) {
            ssize_t m = write(out, buf + done, (size_t)(n - done));
            if (m < 0 && errno == EINTR)
                continue;
            if (m <= 0) {
                rc = -1;
                break;
            }
            done += m;
        }
    }
    free(buf);
    close(in);
    if (close(out) != 0)
        rc = -1;
    return rc;
}

/* The view of the suite a save point writes: the written runs' figures from results[]
 * (their series are in the file already), the others from pending[] (NULL: left out). */
static dm_run_result *save_view(const dm_results_writer *w, const dm_run_result *results,
                                dm_run_result *const *pending)
{
    size_t n = w->suite->n_runs;
    dm_run_result *view = calloc(n ? n : 1, sizeof *view);
    for (size_t i = 0; view != NULL && i < n; i++) {
        if (w->written[i]) {
            view[i] = results[i];
            /* only its figures are read: no pointer of it is followed */
            uint64_t total = view[i].crossings.total, stride = view[i].crossings.stride;
            memset(&view[i].series, 0, sizeof view[i].series);
            memset(&view[i].crossings, 0, sizeof view[i].crossings);
            view[i].crossings.total = total;
            view[i].crossings.stride = stride;
            view[i].checkpoint = NULL;
        } else if (pending[i] != NULL) {
            view[i] = *pending[i];
        }
    }
    return view;
}

/* Puts the completed copy at NAME, unless NAME is a file that neither this run's save
 * points put there nor may be replaced (--force, --resume): then the copy is dropped
 * (DM_EINPUT). Under the lock. */
static dm_status publish_save(dm_results_writer *w, dm_error *err)
{
    struct stat at;
    if (!w->may_replace && lstat(w->path, &at) == 0 &&
        !(w->saved && at.st_dev == w->saved_dev && at.st_ino == w->saved_ino)) {
        unlink(w->save_tmp);
        return dm_error_set(err, DM_EINPUT, "save point not written: '%s' appeared during "
                            "the run and is not this run's (it is left as it is; --force "
                            "replaces it)", w->path);
    }
    if (rename(w->save_tmp, w->path) != 0) {
        int e = errno;
        unlink(w->save_tmp);
        return dm_error_set(err, DM_EIO, "save point not written: rename from '%s' to '%s' "
                            "failed: %s", w->save_tmp, w->path, strerror(e));
    }
    (void)sync_dir(w->path);
    if (lstat(w->path, &at) == 0) {
        w->saved = true;
        w->saved_dev = at.st_dev;
        w->saved_ino = at.st_ino;
    }
    return DM_OK;
}

dm_status dm_results_writer_save(dm_results_writer *w, const dm_run_result *results,
                                 dm_run_result *const *pending, dm_error *err)
{
    pthread_mutex_lock(&w->lock);
    double t0 = dm_clock_seconds();
    hdf5_silence();
    const dm_suite *suite = w->suite;
    dm_status st = DM_OK;
    const char *what = "the view of the runs";
    dm_run_result *view = NULL;
    dm_sweep_fit *fits = NULL;
    hid_t file = -1, runs = -1;
    if (w->broken) {
        st = dm_error_set(err, DM_EIO, "save point not written: %s", w->error.msg);
        goto out;
    }
    if (dm_results_temp_path(w->path, (long)getpid(), w->save_tmp, sizeof w->save_tmp) != 0 ||
        strlen(w->save_tmp) + 5 >= sizeof w->save_tmp) {
        st = dm_error_set(err, DM_EIO, "save point not written: '%s' is too long", w->path);
        goto out;
    }
    /* ".NAME.tmp-PID" becomes ".NAME.save-PID" */
    char *dot = strrchr(w->save_tmp, '.');
    snprintf(dot, sizeof w->save_tmp - (size_t)(dot - w->save_tmp), ".save-%ld",
             (long)getpid());
    view = save_view(w, results, pending);
    fits = calloc(suite->n_sweeps ? suite->n_sweeps : 1, sizeof *fits);
    if (view == NULL || fits == NULL) {
        st = dm_error_set(err, DM_ENOMEM, "save point not written: out of memory");
        goto out;
    }
    for (size_t k = 0; k < suite->n_sweeps && st == DM_OK; k++)
        st = dm_sweep_fit_compute(suite, &suite->sweeps[k], view, &fits[k], err);
    if (st != DM_OK)
        goto out;
    /* the file as it is, made whole on the disk (HDF5 writes its metadata in place, so
     * only a flushed file is one), copied, and the copy completed */
    errno = 0;
    what = "a flush of the file";
    if (H5Fflush(w->file, H5F_SCOPE_GLOBAL) < 0) {
        st = DM_EIO;
        goto fail;
    }
    what = "a copy of the file";
    if (copy_bytes(w->tmp, w->save_tmp) != 0) {
        st = DM_EIO;
        goto fail;
    }
    what = "the copy's groups";
    hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
    if (fapl >= 0 && H5Pset_fclose_degree(fapl, H5F_CLOSE_STRONG) >= 0)
        file = H5Fopen(w->save_tmp, H5F_ACC_RDWR, fapl);
    if (fapl >= 0)
        H5Pclose(fapl);
    runs = file >= 0 ? H5Gopen2(file, "runs", H5P_DEFAULT) : -1;
    if (runs < 0) {
        st = DM_EIO;
        goto fail;
    }
    st = complete_file(w, file, runs, view, fits, &what);
    if (H5Gclose(runs) < 0 && st == DM_OK)
        st = DM_EIO;
    runs = -1;
    if (H5Fclose(file) < 0 && st == DM_OK) {
        st = DM_EIO;
        what = "the copy's last blocks";
    }
    file = -1;
    if (st == DM_OK && sync_file(w->save_tmp) != 0) {
        st = DM_EIO;
        what = "the copy to the disk";
    }
    if (st != DM_OK)
        goto fail;
    st = publish_save(w, err);
    goto out;
fail:;
    int e = errno;
    if (runs >= 0)
        H5Gclose(runs);
    if (file >= 0)
        H5Fclose(file);
    unlink(w->save_tmp);
    st = dm_error_set(err, st == DM_ENOMEM ? DM_ENOMEM : DM_EIO, "save point not written: "
                      "writing %s failed%s%s", what, e != 0 ? ": " : "",
                      e != 0 ? strerror(e) : "");
out:
    if (fits != NULL)
        for (size_t k = 0; k < suite->n_sweeps; k++)
            dm_sweep_fit_free(&fits[k]);
    free(fits);
    free(view);
    double cost = dm_clock_seconds() - t0;
    if (st == DM_OK) {
        w->stats.saves++;
        w->stats.last_seconds = cost;
        w->stats.total_seconds += cost;
        if (cost > w->stats.max_seconds)
            w->stats.max_seconds = cost;
        w->stats.last_bytes = 0;
        struct stat at;
        if (stat(w->path, &at) == 0)
            w->stats.last_bytes = (uint64_t)at.st_size;
    } else {
        w->stats.failures++;
        w->stats.last_error = *err;
    }
    pthread_mutex_unlock(&w->lock);
    return st;
}

bool dm_results_writer_failed(dm_results_writer *w)
{
    pthread_mutex_lock(&w->lock);
    bool broken = w->broken;
    pthread_mutex_unlock(&w->lock);
    return broken;
}

void dm_results_writer_abort(dm_results_writer *w)
{
    if (w == NULL)
        return;
    pthread_mutex_lock(&w->lock);
    hdf5_silence();
    writer_close(w);
    unlink(w->tmp);
    pthread_mutex_unlock(&w->lock);
    writer_free(w);
}

int dm_results_temp_path(const char *path, long pid, char *buf, size_t size)
{
    /* ".NAME.tmp-PID" in the target's directory: rename() is atomic only within one
     * file system, and the dot keeps it out of plain listings. */
    const char *slash = strrchr(path, '/');
    const char *base = slash ? slash + 1 : path;
    int dir_len = slash ? (int)(slash - path + 1) : 0;
    if (*base == '\0')
        return -1;
    int w = snprintf(buf, size, "%.*s.%s.tmp-%ld", dir_len, path, base, pid);
    return w < 0 || (size_t)w >= size ? -1 : 0;
}

dm_status dm_results_write(const char *path, const dm_suite *suite,
                           const dm_run_result *results, const dm_sweep_fit *fits,
                           const char *start_time_utc, dm_error *err)
{
    dm_results_writer *w = NULL;
    dm_status st = dm_results_writer_open(path, suite, start_time_utc, &w, err);
    for (size_t i = 0; st == DM_OK && i < suite->n_runs; i++)
        st = dm_results_writer_add(w, i, &results[i], err);
    if (st != DM_OK) {
        dm_results_writer_abort(w);
        return st;
    }
    return dm_results_writer_finish(w, results, fits, err);
}

/* ---- reading /summary back ---- */

/* The longest text attribute we read (the suite text is the longest we write: a suite
 * is at most DM_SUITE_MAX_BYTES). A file claiming more is not ours. */
#define DM_TEXT_ATTR_MAX ((size_t)DM_SUITE_MAX_BYTES + 1)

/* Opens attribute `name` of loc only when it holds exactly one value of the expected
 * class: a text (H5T_STRING) when text is true, else a number (H5T_INTEGER or H5T_FLOAT,
 * or H5T_INTEGER only when whole is true). Anything else - missing, an array, a
 * compound, a text where a number belongs - is -1: a hostile file must never make
 * H5Aread write more than the one value we have room for. */
static hid_t open_one_value_attr(hid_t loc, const char *name, bool text, bool whole)
{
    if (H5Aexists(loc, name) <= 0)
        return -1;
    hid_t a = H5Aopen(loc, name, H5P_DEFAULT);
    if (a < 0)
        return -1;
    hid_t ft = H5Aget_type(a);
    hid_t space = H5Aget_space(a);
    H5T_class_t cls = ft >= 0 ? H5Tget_class(ft) : H5T_NO_CLASS;
    bool ok = space >= 0 && H5Sget_simple_extent_npoints(space) == 1 &&
              H5Sget_simple_extent_ndims(space) <= 1;
    if (text)
        ok = ok && cls == H5T_STRING;
    else
        ok = ok && (cls == H5T_INTEGER || (!whole && cls == H5T_FLOAT));
    if (space >= 0)
        H5Sclose(space);
    if (ft >= 0)
        H5Tclose(ft);
    if (!ok) {
        H5Aclose(a);
        return -1;
    }
    return a;
}

/* Reads a one-value text attribute, fixed-length or variable-length, into a new
 * NUL-terminated string (cut at its first NUL). Returns 0 or -1. */
static int read_text_attr_alloc(hid_t loc, const char *name, char **out)
{
    *out = NULL;
    hid_t a = open_one_value_attr(loc, name, true, false);
    if (a < 0)
        return -1;
    hid_t ft = H5Aget_type(a);
    /* The memory type copies the file's character set: HDF5 does not convert between
     * ASCII and UTF-8. */
    hid_t mt = ft >= 0 ? H5Tcopy(ft) : -1;
    int rc = -1;
    if (mt >= 0 && H5Tis_variable_str(ft) > 0) {
        char *value = NULL;
        if (H5Aread(a, mt, &value) >= 0 && value != NULL &&
            strnlen(value, DM_TEXT_ATTR_MAX) < DM_TEXT_ATTR_MAX) {
            *out = strdup(value);
            rc = *out != NULL ? 0 : -1;
        }
        if (value != NULL)
            H5free_memory(value);
    } else if (mt >= 0) {
        size_t n = H5Tget_size(ft);
        char *value = n > 0 && n < DM_TEXT_ATTR_MAX ? calloc(n + 1, 1) : NULL;
        if (value != NULL && H5Tset_size(mt, n + 1) >= 0 &&
            H5Tset_strpad(mt, H5T_STR_NULLTERM) >= 0 && H5Aread(a, mt, value) >= 0) {
            *out = value;
            value = NULL;
            rc = 0;
        }
        free(value);
    }
    if (mt >= 0)
        H5Tclose(mt);
    if (ft >= 0)
        H5Tclose(ft);
    H5Aclose(a);
    return rc;
}

/* Reads a one-value text attribute into buf (cut to fit). Returns 0 or -1. */
static int read_text_attr(hid_t loc, const char *name, char *buf, size_t size)
{
    char *value = NULL;
    if (read_text_attr_alloc(loc, name, &value) != 0)
        return -1;
    snprintf(buf, size, "%s", value);
    free(value);
    return 0;
}

/* Reads a one-value numeric attribute, converted by HDF5 to the memory type (whole:
 * integers only). Returns 0 or -1. */
static int read_number_attr(hid_t loc, const char *name, hid_t mem_type, bool whole,
                            void *out)
{
    hid_t a = open_one_value_attr(loc, name, false, whole);
    if (a < 0)
        return -1;
    int rc = H5Aread(a, mem_type, out) >= 0 ? 0 : -1;
    H5Aclose(a);
    return rc;
}

static int read_int_attr(hid_t loc, const char *name, long long *out)
{
    return read_number_attr(loc, name, H5T_NATIVE_LLONG, true, out);
}

static int read_double_attr(hid_t loc, const char *name, double *out)
{
    return read_number_attr(loc, name, H5T_NATIVE_DOUBLE, false, out);
}

static int read_u64_attr(hid_t loc, const char *name, uint64_t *out)
{
    return read_number_attr(loc, name, H5T_NATIVE_UINT64, true, out);
}

/* A real figure that a file from before it existed lacks reads as not measured (NaN):
 * HDF5 leaves the fields the file does not have as they were. */
static void mark_unmeasured(hid_t file_type, dm_summary_row *rows, size_t n)
{
    const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
    const size_t n_cols = dm_summary_columns(cols);
    for (size_t j = 0; j < n_cols; j++) {
        if (cols[j]->kind != DM_FIGURE_REAL || H5Tget_member_index(file_type, cols[j]->name) >= 0)
            continue;
        for (size_t i = 0; i < n; i++)
            *(double *)(void *)((char *)&rows[i] + cols[j]->row_at) = NAN;
    }
}

/* Whether a compound type read from a file lies within itself: every member a number or
 * a fixed-length text whose bytes end inside the row. HDF5 converts a row by the
 * members' offsets as the file states them, unchecked: a flipped bit in one offset made
 * it read 64 MiB past the row (a crash). */
static bool compound_within_itself(hid_t ft)
{
    size_t size = H5Tget_size(ft);
    int members = H5Tget_nmembers(ft);
    if (size == 0 || size > ((size_t)1 << 20) || members < 0)
        return false;
    for (int i = 0; i < members; i++) {
        hid_t t = H5Tget_member_type(ft, (unsigned)i);
        if (t < 0)
            return false;
        H5T_class_t cls = H5Tget_class(t);
        size_t at = H5Tget_member_offset(ft, (unsigned)i), width = H5Tget_size(t);
        bool fits = (cls == H5T_INTEGER || cls == H5T_FLOAT ||
                     (cls == H5T_STRING && H5Tis_variable_str(t) == 0)) &&
                    width > 0 && at <= size && width <= size - at;
        H5Tclose(t);
        if (!fits)
            return false;
    }
    return true;
}

/* Every file of this schema has /sweeps, an empty group when its suite has none: one
 * without it is damaged, for every reader alike. */
static dm_status check_has_sweeps(hid_t file, const char *path, dm_error *err)
{
    if (H5Lexists(file, "sweeps", H5P_DEFAULT) > 0)
        return DM_OK;
    return dm_error_set(err, DM_EINPUT, "cannot read %s: it has no /sweeps group (every "
                        "results file has one, empty when its suite has no sweeps): the "
                        "file is damaged", path);
}

/* A run id two rows of a summary share (a file as we write it has none: readers find
 * a run by its id), or NULL; *st DM_ENOMEM when the index could not be made. */
static const char *twin_id(const dm_summary_row *rows, size_t n, dm_status *st)
{
    dm_run_index ids;
    *st = DM_OK;
    if (dm_run_index_init(&ids, n) != 0) {
        *st = DM_ENOMEM;
        return NULL;
    }
    const char *twin = NULL;
    for (size_t i = 0; i < n && twin == NULL; i++) {
        uint64_t key = dm_hash_text(rows[i].run_id);
        size_t probe = 0;
        for (size_t r; twin == NULL && (r = dm_run_index_next(&ids, key, &probe)) != SIZE_MAX;)
            if (strcmp(rows[r].run_id, rows[i].run_id) == 0)
                twin = rows[i].run_id;
        dm_run_index_add(&ids, key, i);
    }
    dm_run_index_free(&ids);
    return twin;
}

static dm_status read_summary_open(hid_t file, const char *path, dm_summary_row **rows,
                                   size_t *n, dm_error *err)
{
    char format[64] = "";
    if (read_text_attr(file, "format", format, sizeof format) != 0 ||
        strcmp(format, DM_FORMAT_NAME) != 0)
        return dm_error_set(err, DM_EINPUT, "%s is not a driftmark results file (its root has "
                            "no format attribute \"%s\")", path, DM_FORMAT_NAME);
    long long schema = 0;
    if (read_int_attr(file, "schema_version", &schema) != 0)
        return dm_error_set(err, DM_EINPUT, "%s is not a driftmark results file (no "
                            "schema_version attribute)", path);
    if (schema > DM_SCHEMA_VERSION)
        return dm_error_set(err, DM_EINPUT, "%s was written by a newer driftmark (schema %lld; "
                            "this one reads schema %d and older)", path, schema,
                            DM_SCHEMA_VERSION);
    if (schema < 1) /* no driftmark wrote it: a damaged or forged root */
        return dm_error_set(err, DM_EINPUT, "cannot read %s: its schema_version is %lld "
                            "(expected 1 to %d): the file is damaged", path, schema,
                            DM_SCHEMA_VERSION);
    if (H5Lexists(file, "summary", H5P_DEFAULT) <= 0)
        return dm_error_set(err, DM_EINPUT, "cannot read %s: it has no /summary dataset", path);
    if (schema >= DM_SCHEMA_VERSION && check_has_sweeps(file, path, err) != DM_OK)
        return DM_EINPUT;
    uint64_t written = 0;
    bool claims = H5Aexists(file, "n_runs_written") > 0;
    if (claims && read_u64_attr(file, "n_runs_written", &written) != 0)
        return dm_error_set(err, DM_EINPUT, "cannot read %s: its n_runs_written attribute is "
                            "not one whole number", path);
    hid_t d = H5Dopen2(file, "summary", H5P_DEFAULT);
    if (d < 0)
        return dm_error_set(err, DM_EINPUT, "cannot read %s: /summary is damaged", path);
    dm_status st = DM_OK;
    hid_t space = H5Dget_space(d);
    hid_t ft = H5Dget_type(d);
    hid_t mt = summary_type(false);
    hssize_t count = space >= 0 ? H5Sget_simple_extent_npoints(space) : -1;
    if (count < 0 || ft < 0 || mt < 0 || H5Tget_class(ft) != H5T_COMPOUND ||
        H5Sget_simple_extent_ndims(space) != 1 || !compound_within_itself(ft)) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: /summary is not a table of runs",
                          path);
    } else if (count > DM_SUITE_MAX_RUNS || (claims && (uint64_t)count > written)) {
        /* Bounded before anything is allocated: a small compressed file can claim
         * millions of rows, and no suite has more than DM_SUITE_MAX_RUNS runs. */
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: /summary has %lld rows (expected "
                          "at most the file's n_runs_written, %llu, and at most %d, the most "
                          "a suite has)", path, (long long)count, (unsigned long long)written,
                          DM_SUITE_MAX_RUNS);
    } else {
        dm_summary_row *buf = calloc(count > 0 ? (size_t)count : 1, sizeof *buf);
        if (buf != NULL)
            mark_unmeasured(ft, buf, (size_t)count);
        if (buf == NULL) {
            st = dm_error_set(err, DM_ENOMEM, "out of memory reading %s", path);
        } else if (count > 0 && H5Dread(d, mt, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf) < 0) {
            free(buf);
            st = dm_error_set(err, DM_EINPUT, "cannot read %s: /summary is damaged or "
                              "truncated", path);
        } else {
            /* Never trust a file's strings to be terminated. */
            const dm_figure *cols[DM_SUMMARY_COLUMNS_MAX];
            const size_t n_cols = dm_summary_columns(cols);
            const char *unknown = NULL;
            for (hssize_t i = 0; i < count; i++)
                for (size_t j = 0; j < n_cols; j++) {
                    char *text = (char *)&buf[i] + cols[j]->row_at;
                    if (cols[j]->kind == DM_FIGURE_TEXT || cols[j]->kind == DM_FIGURE_STATUS)
                        text[cols[j]->width - 1] = '\0';
                    /* a status not one of ours: the file is not as we wrote it */
                    if (cols[j]->kind == DM_FIGURE_STATUS && unknown == NULL &&
                        dm_run_status_named(text) == DM_RUN_NOT_RUN)
                        unknown = text;
                }
            const char *twin = unknown == NULL ? twin_id(buf, (size_t)count, &st) : NULL;
            if (st != DM_OK) {
                st = dm_error_set(err, DM_ENOMEM, "out of memory reading %s", path);
                free(buf);
            } else if (twin != NULL) {
                char shown[4 * DM_RUN_ID_MAX];
                dm_escape_controls(twin, shown, sizeof shown);
                st = dm_error_set(err, DM_EINPUT, "cannot read %s: /summary holds run %s "
                                  "twice (a run has one row): the file is damaged", path,
                                  shown);
                free(buf);
            } else if (unknown != NULL) {
                char shown[4 * DM_RUN_ID_MAX];
                dm_escape_controls(unknown, shown, sizeof shown);
                st = dm_error_set(err, DM_EINPUT, "cannot read %s: /summary holds a status "
                                  "'%s' (expected ok, diverged, failed, interrupted or "
                                  "swamped)", path, shown);
                free(buf);
            } else {
                *rows = buf;
                *n = (size_t)count;
            }
        }
    }
    if (mt >= 0)
        H5Tclose(mt);
    if (ft >= 0)
        H5Tclose(ft);
    if (space >= 0)
        H5Sclose(space);
    H5Dclose(d);
    return st;
}

dm_status dm_results_read_summary(const char *path, dm_summary_row **rows, size_t *n,
                                  dm_error *err)
{
    *rows = NULL;
    *n = 0;
    int fd = dm_open_regular(path, "results file", 0, err);
    if (fd < 0)
        return DM_EINPUT;
    close(fd);
    hdf5_silence();
    dm_status st;
    hid_t file = H5Fis_hdf5(path) > 0 ? H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT) : -1;
    if (file < 0) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: not an HDF5 file or truncated",
                          path);
    } else {
        st = read_summary_open(file, path, rows, n, err);
        H5Fclose(file);
    }
    return st;
}

/* ---- reading whole runs back (for --resume) ---- */

/* Reads a one-dimensional numeric dataset of exactly `n` elements into a new array of
 * doubles, or n = (size_t)-1 to take whatever length it has (returned in *n), at most
 * `capacity` elements either way. Returns 0, or -1 with nothing allocated. */
static int read_doubles(hid_t g, const char *name, size_t *n, size_t capacity, double **out)
{
    if (H5Lexists(g, name, H5P_DEFAULT) <= 0)
        return -1;
    hid_t d = H5Dopen2(g, name, H5P_DEFAULT);
    if (d < 0)
        return -1;
    hid_t space = H5Dget_space(d);
    hid_t ft = H5Dget_type(d);
    H5T_class_t cls = ft >= 0 ? H5Tget_class(ft) : H5T_NO_CLASS;
    hssize_t count = space >= 0 && H5Sget_simple_extent_ndims(space) == 1
                         ? H5Sget_simple_extent_npoints(space)
                         : -1;
    int rc = -1;
    if ((cls == H5T_FLOAT || cls == H5T_INTEGER) && count >= 0 &&
        (*n == (size_t)-1 || (size_t)count == *n) && (size_t)count <= capacity) {
        double *buf = calloc(capacity > 0 ? capacity : 1, sizeof(double));
        if (buf != NULL &&
            (count == 0 || H5Dread(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf) >= 0)) {
            *out = buf;
            *n = (size_t)count;
            rc = 0;
        } else {
            free(buf);
        }
    }
    if (ft >= 0)
        H5Tclose(ft);
    if (space >= 0)
        H5Sclose(space);
    H5Dclose(d);
    return rc;
}


/* A figure kept only in /summary back from the run's row. */
static int figure_from_row(const dm_figure *f, const dm_summary_row *row, dm_run_result *r)
{
    const char *at = (const char *)row + f->row_at;
    switch (f->kind) {
    case DM_FIGURE_REAL:
    case DM_FIGURE_COUNT: memcpy((char *)r + f->at, at, f->size); return 0;
    case DM_FIGURE_STATUS: FIGURE_AT(f, r, dm_run_status) = dm_run_status_named(at); return 0;
    case DM_FIGURE_TEXT: snprintf((char *)r + f->at, f->size, "%s", at); return 0;
    default: return -1; /* never in /summary */
    }
}

/* The figures of one run's group back into a result: those kept in the group from its
 * attributes, those kept only in /summary (the harness's step count) from its row. */
static int read_run_figures(hid_t g, const dm_run_spec *spec, const dm_summary_row *row,
                            dm_run_result *r)
{
    const dm_problem *pr = spec->inst.problem;
    int rc = 0;
    for (size_t i = 0; i < dm_n_run_figures; i++) {
        const dm_figure *f = &dm_run_figures[i];
        if (!(f->in & DM_FIGURE_IN_RUN)) {
            rc |= figure_from_row(f, row, r);
            continue;
        }
        char text[DM_ERROR_MSG_MAX] = "";
        switch (f->kind) {
        case DM_FIGURE_REAL:
            /* one a file from before it existed lacks was not measured */
            FIGURE_AT(f, r, double) = NAN;
            if (H5Aexists(g, f->name) != 0)
                rc |= read_double_attr(g, f->name, &FIGURE_AT(f, r, double));
            break;
        case DM_FIGURE_COUNT:
            /* a count added after files were written (times_continued, the reference's
             * force evaluations): one a file from before it lacks counts nothing */
            FIGURE_AT(f, r, uint64_t) = 0;
            if (H5Aexists(g, f->name) != 0)
                rc |= read_u64_attr(g, f->name, &FIGURE_AT(f, r, uint64_t));
            break;
        case DM_FIGURE_STATUS:
            rc |= read_text_attr(g, f->name, text, sizeof text);
            FIGURE_AT(f, r, dm_run_status) = dm_run_status_named(text);
            /* a status we do not know would be run again while counted as kept */
            if (FIGURE_AT(f, r, dm_run_status) == DM_RUN_NOT_RUN)
                rc = -1;
            break;
        case DM_FIGURE_TEXT:
            /* one a file from before it existed lacks reads as empty */
            *((char *)r + f->at) = '\0';
            if (H5Aexists(g, f->name) != 0)
                rc |= read_text_attr(g, f->name, (char *)r + f->at, f->size);
            break;
        case DM_FIGURE_RULE:
            /* the rule is one of the runner's fixed strings (none when empty) */
            rc |= read_text_attr(g, f->name, text, sizeof text);
            FIGURE_AT(f, r, const char *) = dm_energy_scale_rule_named(text);
            break;
        case DM_FIGURE_PER_INVARIANT: {
            double *v = &FIGURE_AT(f, r, double);
            for (int k = 0; k < DM_MAX_INVARIANTS; k++)
                v[k] = NAN;
            for (int k = 0; pr->invariants != NULL && k < pr->n_invariants; k++) {
                char raw[96], aname[96];
                dm_figure_invariant_name(raw, sizeof raw, invariant_name(pr, k));
                safe_name(raw, aname, sizeof aname);
                rc |= read_double_attr(g, aname, &v[k]);
            }
            break;
        }
        case DM_FIGURE_INT: rc = -1; break; /* only in DM_SUMMARY_RUN_FIELDS */
        }
    }
    return rc;
}

/* One run's group back into a result, exactly as it was written: every double is
 * stored in full, so rewriting it reproduces the datasets bit for bit. */
static int read_run(hid_t g, const dm_run_spec *spec, const dm_summary_row *row,
                    dm_run_result *r)
{
    memset(r, 0, sizeof *r);
    const dm_problem *pr = spec->inst.problem;
    int rc = read_run_figures(g, spec, row, r);

    dm_series *s = &r->series;
    size_t cap = spec->samples, n = (size_t)-1;
    s->capacity = cap;
    rc |= read_doubles(g, "time", &n, cap, &s->time);
    s->n = n;
    rc |= read_doubles(g, "energy_error", &n, cap, &s->energy_error);
    rc |= read_doubles(g, "energy_error_min", &n, cap, &s->energy_error_min);
    rc |= read_doubles(g, "energy_error_max", &n, cap, &s->energy_error_max);
    if (pr->exact != NULL || spec->reference)
        rc |= read_doubles(g, "global_error", &n, cap, &s->global_error);
    if (spec->reference)
        rc |= read_doubles(g, "reference_error", &n, cap, &s->reference_error);
    s->n_invariants = pr->invariants != NULL ? pr->n_invariants : 0;
    for (int i = 0; i < s->n_invariants; i++) {
        char raw[96], name[96];
        snprintf(raw, sizeof raw, "%s_error", invariant_name(pr, i));
        safe_name(raw, name, sizeof name);
        rc |= read_doubles(g, name, &n, cap, &s->invariant_error[i]);
    }
    dm_crossings *c = &r->crossings;
    size_t cc = (size_t)-1, ccap = cap < 64 ? 64 : cap;
    c->capacity = ccap;
    rc |= read_doubles(g, "crossing_number", &cc, ccap, &c->number);
    c->n = cc;
    rc |= read_doubles(g, "crossing_time", &cc, ccap, &c->time);
    rc |= read_doubles(g, "phase_error", &cc, ccap, &c->phase_error);
    /* the surface of section: in files written since it exists, for the runs that keep
     * it (two degrees of freedom); a run read without it keeps none from then on */
    if (spec->inst.dof == 2 && !spec->inst.section.relative &&
        H5Lexists(g, "section_q", H5P_DEFAULT) > 0) {
        rc |= read_doubles(g, "section_q", &cc, ccap, &c->section_q);
        rc |= read_doubles(g, "section_p", &cc, ccap, &c->section_p);
    }
    if (rc != 0) {
        dm_run_result_free(r);
        return -1;
    }
    /* the figures derived from the series, by this version's definitions */
    dm_run_derive_from_series(r, spec->inst.period);
    return 0;
}

dm_status dm_results_read_runs(const char *path, const dm_suite *suite,
                               dm_run_result *results, dm_results_writer *writer,
                               size_t *kept, dm_error *err)
{
    *kept = 0;
    dm_summary_row *rows = NULL;
    size_t n = 0;
    dm_status st = dm_results_read_summary(path, &rows, &n, err);
    if (st != DM_OK)
        return st;
    hdf5_silence();
    hid_t file = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    hid_t runs = -1;
    dm_run_index ids = { 0 };
    long long schema = 0;
    if (file >= 0 && read_int_attr(file, "schema_version", &schema) == 0 &&
        schema < DM_SCHEMA_VERSION) {
        /* Its runs were measured by other definitions (results/README.md, Changes): a
         * file that mixed them would mislead. */
        st = dm_error_set(err, DM_EINPUT,
                          "%s was written with schema %lld of the results file and this "
                          "driftmark writes schema %d, whose figures are defined otherwise: "
                          "run its suite again instead of resuming it", path, schema,
                          DM_SCHEMA_VERSION);
        goto done;
    }
    runs = file >= 0 ? H5Gopen2(file, "runs", H5P_DEFAULT) : -1;
    if (runs < 0) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: it has no /runs group", path);
        goto done;
    }
    /* the suite's runs by id: a file's rows are looked up, not searched for */
    if (dm_run_index_init(&ids, suite->n_runs) != 0) {
        st = dm_error_set(err, DM_ENOMEM, "out of memory reading %s", path);
        goto done;
    }
    for (size_t i = 0; i < suite->n_runs; i++)
        dm_run_index_add(&ids, dm_hash_text(suite->runs[i].id), i);
    for (size_t k = 0; k < n; k++) {
        dm_run_status was = dm_run_status_named(rows[k].status);
        if (was == DM_RUN_NOT_RUN)
            continue;
        size_t probe = 0;
        uint64_t key = dm_hash_text(rows[k].run_id);
        bool found = false;
        for (size_t i; (i = dm_run_index_next(&ids, key, &probe)) != SIZE_MAX;) {
            const dm_run_spec *spec = &suite->runs[i];
            if (strcmp(spec->id, rows[k].run_id) != 0)
                continue;
            found = true;
            /* The suite is the file's own text, so a run of another configuration was
             * made from inputs outside it that changed since (a bodies file, a problem
             * library): continuing, or dropping its work without a word, would mislead. */
            if (strcmp(spec->hash, rows[k].hash) != 0) {
                char id[4 * DM_RUN_ID_MAX];
                dm_escape_controls(spec->id, id, sizeof id);
                st = dm_error_set(err, DM_EINPUT, "cannot resume %s: run %s was made from "
                                  "other inputs than its suite reads now (a bodies file or "
                                  "problem library changed since?): restore them, or run the "
                                  "suite again", path, id);
                goto done;
            }
            if (results[i].status != DM_RUN_NOT_RUN)
                break; /* a second row of one run: the first is kept */
            char gname[DM_RUN_ID_MAX];
            safe_name(spec->id, gname, sizeof gname);
            hid_t g = H5Gopen2(runs, gname, H5P_DEFAULT);
            int got = g >= 0 ? read_run(g, spec, &rows[k], &results[i]) : -1;
            /* An interrupted run continues from its checkpoint, or without one (a file
             * from before checkpoints) runs again from the start. */
            if (got == 0 && was == DM_RUN_INTERRUPTED) {
                got = dm_checkpoint_read(g, spec, &results[i], &results[i].checkpoint);
                if (got == 1)
                    dm_run_result_free(&results[i]);
                got = got == 1 ? 0 : got;
            }
            if (g >= 0)
                H5Gclose(g);

            if (got != 0) {
                dm_run_result_free(&results[i]);
                st = dm_error_set(err, DM_EINPUT, "cannot read %s: run %s is damaged", path,
                                  spec->id);
                goto done;
            }
            if (was != DM_RUN_INTERRUPTED) {
                (*kept)++;
                if (writer != NULL) {
                    st = dm_results_writer_add(writer, i, &results[i], err);
                    if (st != DM_OK)
                        goto done;
                    dm_run_result_drop_series(&results[i]);
                }
            }
            break;
        }
        if (!found) {
            char id[4 * DM_RUN_ID_MAX];
            dm_escape_controls(rows[k].run_id, id, sizeof id);
            st = dm_error_set(err, DM_EINPUT, "cannot resume %s: its run %s is not one of its "
                              "suite's runs now (a bodies file or problem library changed "
                              "since?): restore them, or run the suite again", path, id);
            goto done;
        }
    }
done:
    dm_run_index_free(&ids);
    if (runs >= 0)
        H5Gclose(runs);
    if (file >= 0)
        H5Fclose(file);
    free(rows);
    return st;
}

dm_status dm_results_read_suite_text(const char *path, char **text, char *source,
                                     char *folder, size_t size, dm_error *err)
{
    folder[0] = '\0';
    *text = NULL;
    dm_summary_row *rows = NULL;
    size_t n = 0;
    /* the same checks as `show`: ours, not newer, readable */
    dm_status st = dm_results_read_summary(path, &rows, &n, err);
    free(rows);
    if (st != DM_OK)
        return st;
    hdf5_silence();
    hid_t file = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    st = dm_error_set(err, DM_EINPUT, "cannot read %s: it holds no suite text", path);
    if (file >= 0 && read_text_attr_alloc(file, "suite_text", text) == 0) {
        st = DM_OK;
        if (read_text_attr(file, "suite_source", source, size) != 0)
            snprintf(source, size, "%s", path);
        char *value = NULL; /* absent before 2026-12-02: relative paths as before */
        if (read_text_attr_alloc(file, "suite_folder", &value) == 0 && strlen(value) < size)
            snprintf(folder, size, "%s", value);
        free(value);
    }
    if (file >= 0)
        H5Fclose(file);
    if (st == DM_OK)
        dm_error_clear(err);
    return st;
}

dm_status dm_results_read_configs(const char *path, const dm_summary_row *rows, size_t n,
                                  char (**configs)[DM_CONFIG_MAX], dm_error *err)
{
    *configs = NULL;
    char (*out)[DM_CONFIG_MAX] = calloc(n ? n : 1, sizeof *out);
    if (out == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory reading %s", path);
    hdf5_silence();
    hid_t file = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    hid_t runs = file >= 0 ? H5Gopen2(file, "runs", H5P_DEFAULT) : -1;
    dm_status st = runs >= 0 ? DM_OK
                             : dm_error_set(err, DM_EINPUT, "cannot read %s: it has no /runs "
                                            "group", path);
    for (size_t i = 0; i < n && st == DM_OK; i++) {
        hid_t g = H5Lexists(runs, rows[i].run_id, H5P_DEFAULT) > 0
                      ? H5Gopen2(runs, rows[i].run_id, H5P_DEFAULT)
                      : -1;
        if (g < 0 || read_text_attr(g, "config", out[i], sizeof out[i]) != 0) {
            char shown[4 * DM_RUN_ID_MAX];
            dm_escape_controls(rows[i].run_id, shown, sizeof shown);
            st = dm_error_set(err, DM_EINPUT, "cannot read %s: run %s has no group under "
                              "/runs with a config text", path, shown);
        }
        if (g >= 0)
            H5Gclose(g);
    }
    if (runs >= 0)
        H5Gclose(runs);
    if (file >= 0)
        H5Fclose(file);
    if (st != DM_OK) {
        free(out);
        return st;
    }
    *configs = out;
    return DM_OK;
}

/* ---- the sweeps (for `show`) ---- */

/* Reads a one-dimensional text dataset of exactly n elements, fixed- or variable-length,
 * into out[i * width] (each cut to width - 1 bytes and terminated). A text longer than
 * max_len, or anything but n texts, is -1. */
static int read_texts(hid_t g, const char *name, size_t n, size_t max_len, char *out,
                      size_t width)
{
    if (H5Lexists(g, name, H5P_DEFAULT) <= 0)
        return -1;
    hid_t d = H5Dopen2(g, name, H5P_DEFAULT);
    if (d < 0)
        return -1;
    hid_t space = H5Dget_space(d);
    hid_t ft = H5Dget_type(d);
    hid_t mt = ft >= 0 ? H5Tcopy(ft) : -1;
    hssize_t count = space >= 0 && H5Sget_simple_extent_ndims(space) == 1
                         ? H5Sget_simple_extent_npoints(space)
                         : -1;
    int rc = -1;
    bool ok = mt >= 0 && H5Tget_class(ft) == H5T_STRING && count >= 0 && (size_t)count == n;
    if (ok && n == 0) {
        rc = 0;
    } else if (ok && H5Tis_variable_str(ft) > 0) {
        char **values = calloc(n, sizeof *values);
        if (values != NULL && H5Dread(d, mt, H5S_ALL, H5S_ALL, H5P_DEFAULT, values) >= 0) {
            rc = 0;
            for (size_t i = 0; i < n; i++) {
                if (values[i] == NULL || strnlen(values[i], max_len + 1) > max_len)
                    rc = -1;
                else
                    snprintf(out + i * width, width, "%s", values[i]);
            }
            H5Dvlen_reclaim(mt, space, H5P_DEFAULT, values);
        }
        free(values);
    } else if (ok) {
        size_t len = H5Tget_size(ft);
        char *buf = len > 0 && len <= max_len ? calloc(n, len + 1) : NULL;
        if (buf != NULL && H5Tset_size(mt, len + 1) >= 0 &&
            H5Tset_strpad(mt, H5T_STR_NULLTERM) >= 0 &&
            H5Dread(d, mt, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf) >= 0) {
            for (size_t i = 0; i < n; i++)
                snprintf(out + i * width, width, "%s", buf + i * (len + 1));
            rc = 0;
        }
        free(buf);
    }
    if (mt >= 0)
        H5Tclose(mt);
    if (ft >= 0)
        H5Tclose(ft);
    if (space >= 0)
        H5Sclose(space);
    H5Dclose(d);
    return rc;
}

/* One /sweeps/<name> group into s. Returns NULL, or what is wrong with it. */
static const char *read_sweep(hid_t g, dm_sweep_summary *s)
{
    uint64_t n_runs = 0;
    if (read_double_attr(g, "energy_order", &s->energy_order) != 0)
        return "its energy_order attribute is not one number";
    if (read_double_attr(g, "phase_order", &s->phase_order) != 0)
        return "its phase_order attribute is not one number";
    if (read_u64_attr(g, "n_points_energy", &s->n_points_energy) != 0)
        return "its n_points_energy attribute is not one whole number";
    if (read_u64_attr(g, "n_points_phase", &s->n_points_phase) != 0)
        return "its n_points_phase attribute is not one whole number";
    /* the local orders: absent (NaN) in files written before they were kept */
    static const char *const local[4] = { "energy_order_local_min", "energy_order_local_max",
                                          "phase_order_local_min", "phase_order_local_max" };
    double *local_at[4] = { &s->energy_local_min, &s->energy_local_max, &s->phase_local_min,
                            &s->phase_local_max };
    for (int k = 0; k < 4; k++) {
        *local_at[k] = NAN;
        if (H5Aexists(g, local[k]) > 0 && read_double_attr(g, local[k], local_at[k]) != 0)
            return "a local order attribute is not one number";
    }
    /* the trends: absent (false) in files written before they were kept */
    static const char *const trend[2] = { "energy_order_trend", "phase_order_trend" };
    bool *trend_at[2] = { &s->energy_trend, &s->phase_trend };
    for (int k = 0; k < 2; k++) {
        long long v = 0;
        if (H5Aexists(g, trend[k]) > 0 && (read_int_attr(g, trend[k], &v) != 0 ||
                                           (v != 0 && v != 1)))
            return "a trend attribute is not 0 or 1";
        *trend_at[k] = v == 1;
    }
    if (read_u64_attr(g, "n_runs", &n_runs) != 0 || n_runs > DM_SUITE_MAX_RUNS)
        return "its n_runs attribute is not one whole number of at most the runs a suite has";
    if (s->n_points_energy > n_runs || s->n_points_phase > n_runs)
        return "it counts more points in a fit than it has runs";
    s->runs = calloc(n_runs ? (size_t)n_runs : 1, sizeof *s->runs);
    if (s->runs == NULL)
        return "out of memory";
    s->n_runs = (size_t)n_runs;
    char *ids = calloc(s->n_runs ? s->n_runs : 1, DM_RUN_ID_MAX);
    char *energy = calloc(s->n_runs ? s->n_runs : 1, DM_FIT_USE_NAME_MAX);
    char *phase = calloc(s->n_runs ? s->n_runs : 1, DM_FIT_USE_NAME_MAX);
    const char *why = NULL;
    if (ids == NULL || energy == NULL || phase == NULL)
        why = "out of memory";
    else if (read_texts(g, "run_id", s->n_runs, DM_RUN_ID_MAX - 1, ids, DM_RUN_ID_MAX) != 0)
        why = "its run_id dataset is not n_runs run ids";
    else if (read_texts(g, "energy_fit", s->n_runs, DM_FIT_USE_NAME_MAX - 1, energy,
                        DM_FIT_USE_NAME_MAX) != 0)
        why = "its energy_fit dataset is not n_runs codes";
    else if (read_texts(g, "phase_fit", s->n_runs, DM_FIT_USE_NAME_MAX - 1, phase,
                        DM_FIT_USE_NAME_MAX) != 0)
        why = "its phase_fit dataset is not n_runs codes";
    for (size_t i = 0; why == NULL && i < s->n_runs; i++) {
        dm_sweep_run_use *u = &s->runs[i];
        memcpy(u->run_id, ids + i * DM_RUN_ID_MAX, DM_RUN_ID_MAX);
        memcpy(u->energy_fit, energy + i * DM_FIT_USE_NAME_MAX, DM_FIT_USE_NAME_MAX);
        memcpy(u->phase_fit, phase + i * DM_FIT_USE_NAME_MAX, DM_FIT_USE_NAME_MAX);
        if (!dm_fit_use_name_known(u->energy_fit) || !dm_fit_use_name_known(u->phase_fit))
            why = "a run's energy_fit or phase_fit is not a code results/README.md lists";
    }
    free(ids);
    free(energy);
    free(phase);
    return why;
}

/* The names of a group's members (sweeps, tables), each shorter than `width`. */
typedef struct sweep_names {
    char (*name)[DM_RUN_ID_MAX];
    size_t n, capacity;
    size_t width;                    /* 0: DM_RUN_ID_MAX */
} sweep_names;

static herr_t collect_sweep_name(hid_t g, const char *name, const H5L_info_t *info, void *data)
{
    (void)g;
    (void)info;
    sweep_names *s = data;
    if (s->n >= s->capacity || strlen(name) >= (s->width ? s->width : DM_RUN_ID_MAX))
        return -1;
    memcpy(s->name[s->n++], name, strlen(name) + 1);
    return 0;
}

/* Where a sweep's first run is in /summary (SIZE_MAX when it is not): the run order. */
static size_t first_row(const dm_summary_row *rows, size_t n_rows, const dm_sweep_summary *s)
{
    for (size_t i = 0; s->n_runs > 0 && i < n_rows; i++)
        if (strcmp(rows[i].run_id, s->runs[0].run_id) == 0)
            return i;
    return SIZE_MAX;
}

dm_status dm_results_read_sweeps(const char *path, dm_sweep_summary **sweeps, size_t *n,
                                 dm_error *err)
{
    *sweeps = NULL;
    *n = 0;
    dm_summary_row *rows = NULL;
    size_t n_rows = 0;
    /* the same checks as `show`: ours, not newer, readable */
    dm_status st = dm_results_read_summary(path, &rows, &n_rows, err);
    if (st != DM_OK)
        return st;
    hdf5_silence();
    hid_t file = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    hid_t group = -1;
    dm_sweep_summary *out = NULL;
    sweep_names names = { 0 };
    size_t count = 0;
    if (file < 0) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: not an HDF5 file or truncated", path);
        goto done;
    }
    long long schema = 0;
    if (read_int_attr(file, "schema_version", &schema) != 0 || schema < DM_SCHEMA_VERSION)
        goto done;   /* schema 1 kept other sweep figures (n_points): not shown */
    if ((st = check_has_sweeps(file, path, err)) != DM_OK)
        goto done;
    H5G_info_t info;
    group = H5Gopen2(file, "sweeps", H5P_DEFAULT);
    if (group < 0 || H5Gget_info(group, &info) < 0 || info.nlinks > DM_SUITE_MAX_RUNS) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: /sweeps is not a group of at most "
                          "%d sweeps", path, DM_SUITE_MAX_RUNS);
        goto done;
    }
    names.capacity = (size_t)info.nlinks;
    names.name = calloc(names.capacity ? names.capacity : 1, sizeof *names.name);
    out = calloc(names.capacity ? names.capacity : 1, sizeof *out);
    if (names.name == NULL || out == NULL) {
        st = dm_error_set(err, DM_ENOMEM, "out of memory reading %s", path);
        goto done;
    }
    hsize_t at = 0;
    if (H5Literate(group, H5_INDEX_NAME, H5_ITER_INC, &at, collect_sweep_name, &names) < 0) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: /sweeps holds a name longer than "
                          "a sweep's", path);
        goto done;
    }
    for (size_t i = 0; i < names.n; i++) {
        char shown[4 * DM_RUN_ID_MAX];
        dm_escape_controls(names.name[i], shown, sizeof shown);
        H5O_info_t oi;
        hid_t g = -1;
        if (H5Oget_info_by_name(group, names.name[i], &oi, H5P_DEFAULT) >= 0 &&
            oi.type == H5O_TYPE_GROUP)
            g = H5Gopen2(group, names.name[i], H5P_DEFAULT);
        dm_sweep_summary *s = &out[count++];
        snprintf(s->name, sizeof s->name, "%s", names.name[i]);
        const char *why = g >= 0 ? read_sweep(g, s) : "it is not a group";
        if (g >= 0)
            H5Gclose(g);
        if (why != NULL) {
            st = dm_error_set(err, DM_EINPUT, "cannot read %s: sweep %s: %s", path, shown, why);
            goto done;
        }
    }
    /* in the order of their runs in /summary (a stable insertion sort) */
    size_t *key = calloc(count ? count : 1, sizeof *key);
    if (key == NULL) {
        st = dm_error_set(err, DM_ENOMEM, "out of memory reading %s", path);
        goto done;
    }
    for (size_t i = 0; i < count; i++)
        key[i] = first_row(rows, n_rows, &out[i]);
    for (size_t i = 1; i < count; i++) {
        dm_sweep_summary s = out[i];
        size_t k = key[i], j = i;
        for (; j > 0 && key[j - 1] > k; j--) {
            out[j] = out[j - 1];
            key[j] = key[j - 1];
        }
        out[j] = s;
        key[j] = k;
    }
    free(key);
done:
    if (st != DM_OK) {
        dm_sweep_summaries_free(out, count);
        out = NULL;
        count = 0;
    }
    *sweeps = out;
    *n = count;
    free(names.name);
    if (group >= 0)
        H5Gclose(group);
    if (file >= 0)
        H5Fclose(file);
    free(rows);
    return st;
}

/* ---- the tables (for `show`) ---- */

/* A text attribute, control characters escaped, cut to fit. */
static int read_shown_text(hid_t g, const char *name, char *out, size_t size)
{
    char raw[256];
    if (read_text_attr(g, name, raw, sizeof raw) != 0)
        return -1;
    dm_escape_controls(raw, out, size);
    return 0;
}

/* One /tables/<name> group into t. Returns NULL, or what is wrong with it. */
static const char *read_table(hid_t g, dm_table_summary *t)
{
    long long claimed, found, experimental, symmetric;
    if (read_shown_text(g, "form", t->form, sizeof t->form) != 0)
        return "its form attribute is not a text";
    if (read_shown_text(g, "order_basis", t->basis, sizeof t->basis) != 0)
        return "its order_basis attribute is not a text";
    if (read_int_attr(g, "claimed_order", &claimed) != 0 ||
        read_int_attr(g, "order_found", &found) != 0 || claimed < 1 ||
        claimed > DM_ORDER_MAX || found < 0 || found > DM_ORDER_MAX)
        return "its claimed_order and order_found are not whole numbers up to 8";
    if (read_int_attr(g, "experimental", &experimental) != 0 ||
        read_int_attr(g, "symmetric", &symmetric) != 0)
        return "its experimental and symmetric attributes are not 0 or 1";
    t->claimed_order = (int)claimed;
    t->order_found = (int)found;
    t->experimental = experimental != 0;
    t->symmetric = symmetric != 0;
    for (int k = 0; k < 2; k++) {
        char name[96];
        t->measured[k] = t->constant[k] = NAN;
        snprintf(name, sizeof name, "measured_order_%s", dm_table_check_problems[k]);
        if (H5Aexists(g, name) > 0 && read_double_attr(g, name, &t->measured[k]) != 0)
            return "a measured order is not one number";
        snprintf(name, sizeof name, "error_constant_%s", dm_table_check_problems[k]);
        if (H5Aexists(g, name) > 0 && read_double_attr(g, name, &t->constant[k]) != 0)
            return "an error constant is not one number";
    }
    return NULL;
}

dm_status dm_results_read_tables(const char *path, dm_table_summary **tables, size_t *n,
                                 dm_error *err)
{
    *tables = NULL;
    *n = 0;
    hdf5_silence();
    hid_t file = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    if (file < 0)
        return dm_error_set(err, DM_EINPUT, "cannot read %s: not an HDF5 file or truncated",
                            path);
    dm_status st = DM_OK;
    hid_t group = -1;
    sweep_names names = { .width = DM_TABLE_NAME_MAX };
    dm_table_summary *out = NULL;
    H5G_info_t info;
    if (H5Lexists(file, "tables", H5P_DEFAULT) <= 0)
        goto done; /* no tables */
    group = H5Gopen2(file, "tables", H5P_DEFAULT);
    if (group < 0 || H5Gget_info(group, &info) < 0 || info.nlinks > DM_SUITE_MAX_RUNS) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: /tables is not a group of at most "
                          "%d tables", path, DM_SUITE_MAX_RUNS);
        goto done;
    }
    names.capacity = (size_t)info.nlinks;
    names.name = calloc(names.capacity ? names.capacity : 1, sizeof *names.name);
    out = calloc(names.capacity ? names.capacity : 1, sizeof *out);
    hsize_t at = 0;
    if (names.name == NULL || out == NULL) {
        st = dm_error_set(err, DM_ENOMEM, "out of memory reading %s", path);
        goto done;
    }
    if (H5Literate(group, H5_INDEX_NAME, H5_ITER_INC, &at, collect_sweep_name, &names) < 0) {
        st = dm_error_set(err, DM_EINPUT, "cannot read %s: /tables holds a name longer than "
                          "a table's", path);
        goto done;
    }
    for (size_t i = 0; i < names.n && st == DM_OK; i++) {
        dm_table_summary *t = &out[i];
        dm_escape_controls(names.name[i], t->name, sizeof t->name);
        H5O_info_t oi;
        hid_t g = -1;
        if (H5Oget_info_by_name(group, names.name[i], &oi, H5P_DEFAULT) >= 0 &&
            oi.type == H5O_TYPE_GROUP)
            g = H5Gopen2(group, names.name[i], H5P_DEFAULT);
        const char *why = g >= 0 ? read_table(g, t) : "it is not a group";
        if (g >= 0)
            H5Gclose(g);
        if (why != NULL)
            st = dm_error_set(err, DM_EINPUT, "cannot read %s: table %s: %s", path, t->name,
                              why);
    }
done:
    free(names.name);
    if (group >= 0)
        H5Gclose(group);
    H5Fclose(file);
    if (st == DM_OK) {
        *tables = out;
        *n = names.n;
    } else {
        free(out);
    }
    return st;
}
