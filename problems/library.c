/* library.c — problems from the user's own compiled code (problem.h: dm_problem_load). */
#include <dlfcn.h>
#include <errno.h>
#include <inttypes.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "dm_hash.h"
#include "problem.h"

dm_status dm_problem_check(const dm_problem *pb, dm_error *err)
{
    const char *id = pb->id ? pb->id : "(no id)";
    const char *missing = !pb->id ? "id" : !pb->name ? "name" : !pb->setup ? "setup"
                        : !pb->potential ? "potential" : !pb->force ? "force"
                        : !pb->kinetic ? "kinetic" : !pb->velocity ? "velocity" : NULL;
    if (missing != NULL)
        return dm_error_set(err, DM_EINPUT, "problem %s: its table lacks %s (required)", id,
                            missing);
    if (pb->dof < 1 || pb->dof > DM_MAX_DOF)
        return dm_error_set(err, DM_EINPUT, "problem %s: dof = %d (expected 1 to %d)", id,
                            pb->dof, DM_MAX_DOF);
    if (pb->n_params < 0 || pb->n_params > DM_MAX_PARAMS)
        return dm_error_set(err, DM_EINPUT, "problem %s: n_params = %d (expected 0 to %d)", id,
                            pb->n_params, DM_MAX_PARAMS);
    if (pb->n_regimes < 1 || pb->n_regimes > DM_MAX_REGIMES)
        return dm_error_set(err, DM_EINPUT, "problem %s: n_regimes = %d (expected 1 to %d)",
                            id, pb->n_regimes, DM_MAX_REGIMES);
    for (int i = 0; i < pb->n_params; i++)
        if (pb->params[i].name == NULL || pb->params[i].meaning == NULL)
            return dm_error_set(err, DM_EINPUT, "problem %s: parameter %d lacks its name or "
                                "meaning", id, i);
    for (int i = 0; i < pb->n_regimes; i++)
        if (pb->regimes[i].id == NULL || pb->regimes[i].meaning == NULL)
            return dm_error_set(err, DM_EINPUT, "problem %s: regime %d lacks its id or meaning",
                                id, i);
    if ((pb->gradient_quad != NULL) != (pb->velocity_quad != NULL))
        return dm_error_set(err, DM_EINPUT, "problem %s: gradient_quad %s and velocity_quad %s "
                            "(expected both or neither)", id,
                            pb->gradient_quad != NULL ? "set" : "NULL",
                            pb->velocity_quad != NULL ? "set" : "NULL");
    if (pb->n_invariants < 0 || pb->n_invariants > DM_MAX_INVARIANTS ||
        (pb->n_invariants > 0) != (pb->invariants != NULL))
        return dm_error_set(err, DM_EINPUT, "problem %s: n_invariants = %d with invariants %s "
                            "(expected both or neither, at most %d)", id, pb->n_invariants,
                            pb->invariants ? "set" : "NULL", DM_MAX_INVARIANTS);
    for (int i = 0; i < pb->n_invariants; i++)
        if (pb->invariant_names[i] == NULL)
            return dm_error_set(err, DM_EINPUT, "problem %s: invariant %d has no name", id, i);
    return DM_OK;
}

/* Objects loaded so far: loading is rare (the suite check, before any run) but may be
 * asked for twice; the same path gives the same table. */
enum { MAX_LOADED = 64 };
static struct { char path[1024]; const dm_problem *problem; char hash[17]; } loaded[MAX_LOADED];
static int n_loaded;
static pthread_mutex_t loaded_lock = PTHREAD_MUTEX_INITIALIZER;

static dm_status hash_file(const char *path, char hash[17], dm_error *err)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return dm_error_set(err, DM_EINPUT, "cannot open problem library %s: %s", path,
                            strerror(errno));
    uint64_t h = DM_HASH_START;
    unsigned char buf[65536];
    size_t got;
    while ((got = fread(buf, 1, sizeof buf, f)) > 0)
        h = dm_hash_bytes(h, buf, got);
    bool bad = ferror(f);
    fclose(f);
    if (bad)
        return dm_error_set(err, DM_EINPUT, "cannot read problem library %s", path);
    snprintf(hash, 17, "%016" PRIx64, h);
    return DM_OK;
}

static dm_status load(const char *path, const dm_problem **problem, char hash[17],
                      dm_error *err)
{
    struct stat st;
    if (stat(path, &st) != 0)
        return dm_error_set(err, DM_EINPUT, "problem library %s: %s", path, strerror(errno));
    if (!S_ISREG(st.st_mode))
        return dm_error_set(err, DM_EINPUT, "problem library %s is not a regular file", path);
    dm_status rc = hash_file(path, hash, err);
    if (rc != DM_OK)
        return rc;
    /* a path without a slash would be searched for in the library path: make it ours */
    char local[1040];
    snprintf(local, sizeof local, "%s%s", strchr(path, '/') ? "" : "./", path);
    void *handle = dlopen(local, RTLD_NOW | RTLD_LOCAL);
    if (handle == NULL) {
        const char *why = dlerror();
        return dm_error_set(err, DM_EINPUT, "problem library %s cannot be loaded: %s", path,
                            why ? why : "unknown reason");
    }
    dm_problem_entry_fn entry;
    *(void **)&entry = dlsym(handle, "dm_problem_entry");
    if (entry == NULL) {
        dlclose(handle);
        return dm_error_set(err, DM_EINPUT, "problem library %s has no dm_problem_entry "
                            "function (see examples/glider)", path);
    }
    unsigned abi = 0;
    const dm_problem *pb = entry(&abi);
    if (abi != DM_PROBLEM_ABI) {
        dlclose(handle);
        return dm_error_set(err, DM_EINPUT, "problem library %s was built for problem "
                            "interface %u, this driftmark has %u: rebuild it against this "
                            "driftmark's headers", path, abi, DM_PROBLEM_ABI);
    }
    if (pb == NULL) {
        dlclose(handle);
        return dm_error_set(err, DM_EINPUT, "problem library %s returned no table", path);
    }
    rc = dm_problem_check(pb, err);
    if (rc != DM_OK) {
        dm_error_prefix(err, "problem library %s: ", path);
        dlclose(handle);
        return rc;
    }
    *problem = pb; /* the handle stays open: the table lives in it */
    return DM_OK;
}

dm_status dm_problem_load(const char *path, const dm_problem **problem, char hash[17],
                          dm_error *err)
{
    pthread_mutex_lock(&loaded_lock);
    dm_status rc = DM_OK;
    int i = 0;
    while (i < n_loaded && strcmp(loaded[i].path, path) != 0)
        i++;
    if (i < n_loaded) {
        *problem = loaded[i].problem;
        memcpy(hash, loaded[i].hash, 17);
    } else if (n_loaded == MAX_LOADED || strlen(path) >= sizeof loaded[0].path) {
        rc = dm_error_set(err, DM_EINPUT, "problem library %s: too many libraries or too long "
                          "a path (at most %d of %zu bytes)", path, MAX_LOADED,
                          sizeof loaded[0].path - 1);
    } else if ((rc = load(path, problem, hash, err)) == DM_OK) {
        snprintf(loaded[n_loaded].path, sizeof loaded[n_loaded].path, "%s", path);
        loaded[n_loaded].problem = *problem;
        memcpy(loaded[n_loaded].hash, hash, 17);
        n_loaded++;
    }
    pthread_mutex_unlock(&loaded_lock);
    return rc;
}
