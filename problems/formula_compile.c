/* formula_compile.c — a formula problem's functions as C: libmatheval's output
 * rewritten (formula_text.c), one C file with the problem interface's fused loops,
 * compiled by the compiler driftmark was built with into a shared object kept in a
 * cache under a hash of everything that makes it, and loaded as a problem from the
 * user's own code is (library.c). Runs while the suite is read, before any thread. */
#include <errno.h>
#include <fcntl.h>
#include <inttypes.h>
#include <math.h>
#include <spawn.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <matheval.h>

#include "dm_build_info.h"
#include "dm_clock.h"
#include "dm_hash.h"
#include "formula_private.h"

extern char **environ;

/* ---- the C text ---- */

static bool map_c(void *data, const char *name, char *out, size_t size)
{
    const formula_problem *F = data;
    static const char *const constants[][2] = { { "pi", "M_PI" }, { "e", "M_E" },
                                                { "2_sqrtpi", "M_2_SQRTPI" } };
    for (size_t i = 0; i < sizeof constants / sizeof constants[0]; i++)
        if (strcmp(name, constants[i][0]) == 0)
            return snprintf(out, size, "%s", constants[i][1]) > 0;
    for (int slot = 0; slot < F->n_names; slot++) {
        if (strcmp(name, F->names[slot]) != 0)
            continue;
        if (slot < F->dof)
            snprintf(out, size, "q[%d]", slot);
        else if (slot < 2 * F->dof)
            snprintf(out, size, "p[%d]", slot - F->dof);
        else if (slot < formula_constant_slot(F, 0))
            snprintf(out, size, "P[%d]", slot - 2 * F->dof);
        else
            snprintf(out, size, "%a", F->values[slot]);
        return true;
    }
    return false;
}

/* Points to check a rewrite at: the start, moved by fixed irregular amounts. */
static void sample_point(const formula_problem *F, int k, double *values)
{
    memcpy(values, F->values, sizeof F->values);
    for (int i = 0; i < F->dof; i++) {
        double shift = 0.37 * sin(1.3 * k + 0.7 * i) * (k > 0);
        values[i] = F->q0[i] + shift;
        values[F->dof + i] = F->p0[i] + shift + 0.1 * k;
    }
    for (int j = 0; j < F->table.n_params && j < F->n_user_params; j++)
        values[formula_param_slot(F, j)] = F->table.params[j].fallback;
}

/* The C text of evaluator e, after checking that the simplified text, read back by
 * libmatheval, gives what e gives (libmatheval prints numbers to 6 digits: a derived
 * constant it printed short shows here). NULL with *err set otherwise. */
static char *c_text(formula_problem *F, void *e, dm_error *err)
{
    const char *infix = evaluator_get_string(e);
    char *plain = dm_formula_rewrite(infix, false, map_c, F, err);
    if (plain == NULL)
        return NULL;
    void *back = evaluator_create(plain);
    bool same = back != NULL;
    for (int k = 0; same && k < 16; k++) {
        double values[sizeof F->values / sizeof F->values[0]];
        sample_point(F, k, values);
        double a = evaluator_evaluate(e, F->n_names, F->names, values);
        double b = evaluator_evaluate(back, F->n_names, F->names, values);
        same = !isfinite(a) || a == b;
    }
    if (back != NULL)
        evaluator_destroy(back);
    free(plain);
    if (!same) {
        dm_error_set(err, DM_EINPUT, "the derivative '%.80s' holds a constant the formula "
                     "library printed to 6 digits only", infix);
        return NULL;
    }
    return dm_formula_rewrite(infix, true, map_c, F, err);
}

typedef struct text {
    char *buf;
    size_t used, size;
    bool ok;
} text;

static void add(text *t, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

static void add(text *t, const char *fmt, ...)
{
    for (;;) {
        va_list ap;
        va_start(ap, fmt);
        int n = vsnprintf(t->buf + t->used, t->size - t->used, fmt, ap);
        va_end(ap);
        if (n < 0) {
            t->ok = false;
            return;
        }
        if ((size_t)n < t->size - t->used) {
            t->used += (size_t)n;
            return;
        }
        char *grown = realloc(t->buf, 2 * t->size + (size_t)n);
        if (grown == NULL) {
            t->ok = false;
            return;
        }
        t->buf = grown;
        t->size = 2 * t->size + (size_t)n;
    }
}

/* One function of x (q or p) returning a value, or writing one per coordinate. */
static dm_status add_function(text *t, formula_problem *F, const char *head, void *value,
                              void *const *each, const char *out, dm_error *err)
{
    add(t, "%s\n{\n    const double *P = inst->param;\n    (void)P;\n", head);
    char *c;
    if (value != NULL) {
        if ((c = c_text(F, value, err)) == NULL)
            return DM_EINPUT;
        add(t, "    return %s;\n}\n\n", c);
        free(c);
        return DM_OK;
    }
    for (int i = 0; i < F->dof; i++) {
        if ((c = c_text(F, each[i], err)) == NULL)
            return DM_EINPUT;
        add(t, "    %s[%d] = %s;\n", out, i, c);
        free(c);
    }
    add(t, "}\n\n");
    return DM_OK;
}

/* T and grad T from the masses, the same arithmetic as formula.c's mass_kinetic. */
static void add_masses(text *t, const formula_problem *F)
{
    add(t, "static double kinetic(const dm_instance *inst, const double *p)\n{\n"
           "    (void)inst;\n    double sum = 0.5 * p[0] * p[0] / %a;\n", F->masses[0]);
    for (int i = 1; i < F->dof; i++)
        add(t, "    sum += 0.5 * p[%d] * p[%d] / %a;\n", i, i, F->masses[i]);
    add(t, "    return sum;\n}\n\n"
           "static void velocity(const dm_instance *inst, const double *p, double *v)\n{\n"
           "    (void)inst;\n");
    for (int i = 0; i < F->dof; i++)
        add(t, "    v[%d] = p[%d] / %a;\n", i, i, F->masses[i]);
    add(t, "}\n\n");
}

static char *source(formula_problem *F, dm_error *err)
{
    text t = { .buf = malloc(4096), .size = 4096, .ok = true };
    if (t.buf == NULL)
        return NULL;
    add(&t, "/* generated by driftmark from the formula problem %s (V = %.200s): the same\n"
            " * functions as libmatheval evaluates, and the fused loops. */\n"
            "#include <math.h>\n#include <stdio.h>\n\n#include \"dm_fused_loop.h\"\n"
            "#include \"problem.h\"\n\n"
            "static inline double dm_formula_step(double x)\n{\n"
            "    return x < 0.0 ? 0.0 : 1.0; /* libmatheval's step: 1 at 0 */\n}\n\n",
        F->id, F->potential_text);
    dm_status st = add_function(&t, F, "static double potential(const dm_instance *inst, "
                                       "const double *q)", F->V, NULL, NULL, err);
    if (st == DM_OK)
        st = add_function(&t, F, "static void gradient(const dm_instance *inst, const double "
                                 "*q, double *grad)", NULL, F->dV, "grad", err);
    if (st == DM_OK && F->has_kinetic) {
        st = add_function(&t, F, "static double kinetic(const dm_instance *inst, const "
                                 "double *p)", F->T, NULL, NULL, err);
        if (st == DM_OK)
            st = add_function(&t, F, "static void velocity(const dm_instance *inst, const "
                                     "double *p, double *v)", NULL, F->dT, "v", err);
    } else if (st == DM_OK) {
        add_masses(&t, F);
    }
    add(&t, "static double force(const dm_instance *inst, const double *q, double *grad)\n"
            "{\n    gradient(inst, q, grad);\n    return potential(inst, q);\n}\n\n"
            "DM_FUSED_LOOP(fused_loop, %d)\nDM_FUSED_RK_LOOP(fused_rk_loop, %d)\n\n"
            "/* driftmark sets the problem up itself and takes only the functions */\n"
            "static dm_status setup(dm_instance *inst, dm_error *err)\n{\n    (void)inst;\n"
            "    err->code = DM_EINPUT;\n    snprintf(err->msg, sizeof err->msg, \"a formula "
            "object is set up by driftmark\");\n    return DM_EINPUT;\n}\n\n"
            "static const dm_problem table = {\n    .id = \"formula\", .name = \"formula\", "
            ".dof = %d, .n_regimes = 1,\n    .regimes = { { \"orbit\", \"the orbit\" } },\n"
            "    .setup = setup, .potential = potential, .force = force, .gradient = "
            "gradient,\n    .kinetic = kinetic, .velocity = velocity, .fused_loop = "
            "fused_loop,\n    .fused_rk_loop = fused_rk_loop,\n};\n\n"
            "const dm_problem *dm_problem_entry(unsigned *abi);\n"
            "const dm_problem *dm_problem_entry(unsigned *abi)\n{\n"
            "    *abi = DM_PROBLEM_ABI;\n    return &table;\n}\n",
        F->dof, F->dof, F->dof);
    if (st != DM_OK || !t.ok) {
        if (st == DM_OK)
            dm_error_set(err, DM_ENOMEM, "out of memory writing the C text");
        free(t.buf);
        return NULL;
    }
    return t.buf;
}

/* ---- the compiler and the cache ---- */

/* The compiler: DRIFTMARK_FORMULA_CC when set (empty: none), else driftmark's own. */
static const char *compiler(void)
{
    const char *cc = getenv(DM_FORMULA_CC_ENV);
    return cc != NULL ? cc : DM_C_COMPILER_PATH;
}

/* The flags after the compiler: driftmark's own build flags, then what a shared object
 * of the problem interface needs (as the pkg-config file driftmark-problem gives it):
 * never -ffast-math or -ffinite-math-only, the monitors test isnan and isfinite. */
static void flags(char *out, size_t size)
{
    size_t used = (size_t)snprintf(out, size, "%s -std=c11 -fPIC -shared -fno-math-errno "
                                   "-D_XOPEN_SOURCE=700", DM_C_FLAGS);
    char dirs[] = DM_PROBLEM_INCLUDE_DIRS;
    for (char *d = strtok(dirs, ";"); d != NULL && used < size; d = strtok(NULL, ";"))
        used += (size_t)snprintf(out + used, size - used, " -I%s", d);
}

static uint64_t hash_file(uint64_t h, const char *path)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return dm_hash_bytes(h, path, strlen(path));
    char buf[65536];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, f)) > 0)
        h = dm_hash_bytes(h, buf, n);
    fclose(f);
    return h;
}

/* The cache key: the C text, the compiler and its flags, the interface number and
 * every header the text includes. */
static void cache_key(const char *src, const char *cc, const char *fl, char key[17])
{
    uint64_t h = dm_hash_text(src);
    char head[2200];
    snprintf(head, sizeof head, "\n%s\n%s\n%s\n%u\n", cc, DM_COMPILER, fl, DM_PROBLEM_ABI);
    h = dm_hash_bytes(h, head, strlen(head));
    static const char *const headers[] = { "dm_fused_loop.h", "problem.h", "dm_monitor.h",
                                           "dm_error.h" };
    char dirs[] = DM_PROBLEM_INCLUDE_DIRS;
    for (char *d = strtok(dirs, ";"); d != NULL; d = strtok(NULL, ";"))
        for (size_t i = 0; i < sizeof headers / sizeof headers[0]; i++) {
            char path[1200];
            snprintf(path, sizeof path, "%s/%s", d, headers[i]);
            if (access(path, R_OK) == 0)
                h = hash_file(h, path);
        }
    snprintf(key, 17, "%016" PRIx64, h);
}

/* ${XDG_CACHE_HOME:-$HOME/.cache}/driftmark, made when missing. */
static dm_status cache_dir(char *out, size_t size, dm_error *err)
{
    const char *xdg = getenv("XDG_CACHE_HOME"), *home = getenv("HOME");
    char base[900];
    if (xdg != NULL && xdg[0] == '/')
        snprintf(base, sizeof base, "%s", xdg);
    else if (home != NULL && home[0] == '/')
        snprintf(base, sizeof base, "%s/.cache", home);
    else
        return dm_error_set(err, DM_EIO, "no cache folder (neither XDG_CACHE_HOME nor HOME "
                            "is an absolute path)");
    snprintf(out, size, "%s/driftmark", base);
    if ((mkdir(base, 0700) != 0 && errno != EEXIST) || (mkdir(out, 0700) != 0 && errno != EEXIST))
        return dm_error_set(err, DM_EIO, "cannot make the cache folder %s: %s", out,
                            strerror(errno));
    return DM_OK;
}

static dm_status write_text(const char *path, const char *src, dm_error *err)
{
    FILE *f = fopen(path, "w");
    if (f == NULL)
        return dm_error_set(err, DM_EIO, "cannot write %s: %s", path, strerror(errno));
    bool ok = fputs(src, f) >= 0;
    ok = fclose(f) == 0 && ok;
    return ok ? DM_OK : dm_error_set(err, DM_EIO, "cannot write %s", path);
}

/* Runs cc with the flags on src into obj, its output into log; waits for it. */
static dm_status run_compiler(const char *cc, const char *fl, const char *src, const char *obj,
                              const char *log, dm_error *err)
{
    char words[2048];
    snprintf(words, sizeof words, "%s", fl);
    char *argv[128];
    int n = 0;
    argv[n++] = (char *)cc;
    for (char *w = strtok(words, " "); w != NULL && n < 120; w = strtok(NULL, " "))
        argv[n++] = w;
    argv[n++] = "-o";
    argv[n++] = (char *)obj;
    argv[n++] = (char *)src;
    argv[n++] = "-lm";
    argv[n] = NULL;
    posix_spawn_file_actions_t fa;
    posix_spawn_file_actions_init(&fa);
    posix_spawn_file_actions_addopen(&fa, 1, log, O_WRONLY | O_CREAT | O_TRUNC, 0600);
    posix_spawn_file_actions_adddup2(&fa, 1, 2);
    pid_t pid;
    int rc = posix_spawnp(&pid, cc, &fa, NULL, argv, environ); /* a bare name: PATH */
    posix_spawn_file_actions_destroy(&fa);
    if (rc != 0)
        return dm_error_set(err, DM_EIO, "no compiler at %s: %s", cc, strerror(rc));
    int status = 0;
    while (waitpid(pid, &status, 0) < 0 && errno == EINTR)
        ;
    if (!WIFEXITED(status) || WEXITSTATUS(status) != 0)
        return dm_error_set(err, DM_EIO, "%s failed on the generated C (its output: %s)", cc,
                            log);
    return DM_OK;
}

/* Compiles src into dir/formula-KEY.so unless it is there: under temporary names
 * renamed into place, so that runs at the same time never see half a file. */
static dm_status build_object(const char *dir, const char *key, const char *src,
                              const char *cc, const char *fl, char *obj, size_t size,
                              double *seconds, dm_error *err)
{
    snprintf(obj, size, "%s/formula-%s.so", dir, key);
    *seconds = 0.0;
    if (access(obj, R_OK) == 0)
        return DM_OK;
    long pid = (long)getpid();
    char c_tmp[1200], so_tmp[1200], log[1200], c_final[1200];
    snprintf(c_tmp, sizeof c_tmp, "%s/.formula-%s-%ld.c", dir, key, pid);
    snprintf(so_tmp, sizeof so_tmp, "%s/.formula-%s.so.tmp-%ld", dir, key, pid);
    snprintf(log, sizeof log, "%s/formula-%s.log", dir, key);
    snprintf(c_final, sizeof c_final, "%s/formula-%s.c", dir, key);
    dm_status st = write_text(c_tmp, src, err);
    double t0 = dm_clock_seconds();
    if (st == DM_OK)
        st = run_compiler(cc, fl, c_tmp, so_tmp, log, err);
    *seconds = dm_clock_seconds() - t0;
    if (st == DM_OK && rename(so_tmp, obj) != 0)
        st = dm_error_set(err, DM_EIO, "cannot rename %s: %s", so_tmp, strerror(errno));
    if (rename(c_tmp, c_final) != 0)
        unlink(c_tmp);
    unlink(so_tmp);
    if (st == DM_OK)
        unlink(log);
    return st;
}

dm_status dm_formula_compile(formula_problem *F, dm_error *err)
{
    const char *cc = compiler();
    if (cc[0] == '\0')
        return dm_error_set(err, DM_EINPUT, "no compiler: %s is empty", DM_FORMULA_CC_ENV);
    char *src = source(F, err);
    if (src == NULL)
        return DM_EINPUT;
    char fl[2048], key[17], dir[1024], obj[1100];
    flags(fl, sizeof fl);
    cache_key(src, cc, fl, key);
    double seconds = 0.0;
    dm_status st = cache_dir(dir, sizeof dir, err);
    if (st == DM_OK)
        st = build_object(dir, key, src, cc, fl, obj, sizeof obj, &seconds, err);
    const dm_problem *pb = NULL;
    char hash[17];
    if (st == DM_OK)
        st = dm_problem_load(obj, &pb, hash, err);
    if (st != DM_OK && seconds == 0.0 && access(obj, F_OK) == 0) {
        /* a cached object that does not load (damaged, cut short): built again, once */
        fprintf(stderr, "driftmark: formula problem %s: the cached %s does not load (%s); "
                "compiling it again\n", F->id, obj, err->msg);
        dm_error_clear(err);
        unlink(obj);
        st = build_object(dir, key, src, cc, fl, obj, sizeof obj, &seconds, err);
        if (st == DM_OK)
            st = dm_problem_load(obj, &pb, hash, err);
    }
    free(src);
    if (st == DM_OK && pb->dof != F->dof)
        st = dm_error_set(err, DM_EIO, "%s has %d coordinates, not %d", obj, pb->dof, F->dof);
    if (st != DM_OK)
        return st;
    F->table.potential = pb->potential;
    F->table.force = pb->force;
    F->table.gradient = pb->gradient;
    F->table.kinetic = pb->kinetic;
    F->table.velocity = pb->velocity;
    F->table.fused_loop = pb->fused_loop;
    F->table.fused_rk_loop = pb->fused_rk_loop;
    dm_formula_info *info = &F->info;
    info->code = DM_FORMULA_COMPILED;
    snprintf(info->compiler, sizeof info->compiler, "%s (%s)", cc, DM_COMPILER);
    snprintf(info->flags, sizeof info->flags, "%s", fl);
    snprintf(info->object, sizeof info->object, "%s", obj);
    info->compile_seconds = seconds;
    if (seconds > 0.0)
        fprintf(stderr, "driftmark: formula problem %s compiled in %.2f s (%s)\n", F->id,
                seconds, obj);
    else
        fprintf(stderr, "driftmark: formula problem %s: compiled object from the cache (%s)\n",
                F->id, obj);
    return DM_OK;
}
