/* pool.c — runs a list of a suite's runs on a pool of threads (`run --jobs`, and the
 * 1-vs-N-jobs measurement of `bench`).
 *
 * Workers take the runs in the order given (longest first, so one long run does not
 * finish alone at the end) and store each result at its own index, so the results do
 * not depend on the number of jobs. The calling thread is one of the jobs. */
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "harness.h"

typedef struct pool {
    const dm_suite *suite;
    dm_run_result *results;
    const size_t *order;
    size_t n_order;
    volatile int *stop;
    dm_pool_progress progress;
    atomic_size_t next;
    atomic_size_t done;
    atomic_int failed;
    pthread_mutex_t lock;          /* guards the progress line and the first error */
    dm_error error;
    double cost_total, cost_done;  /* estimated work, for the time left (under lock) */
    struct timespec t0;
    const char *current;
} pool;

static double seconds_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

/* Work estimate of a run: force evaluations for fixed steps; adaptive methods are
 * guessed from the horizon and the tolerance (their steps grow as rtol shrinks). */
double dm_run_estimated_cost(const dm_run_spec *spec)
{
    const dm_method *m = spec->method;
    if (!m->adaptive) {
        double per = m->force_evals_per_step > 0 ? m->force_evals_per_step : 4;
        return per * spec->t_end / fabs(spec->method_config.h);
    }
    double digits = -log10(spec->method_config.rtol);
    return spec->periods * 20.0 * digits * digits;
}

/* The suite being ordered, for the qsort comparator (one a thread). */
static _Thread_local const dm_suite *cost_suite;

static int by_cost_descending(const void *a, const void *b)
{
    size_t i = *(const size_t *)a, j = *(const size_t *)b;
    double ci = dm_run_estimated_cost(&cost_suite->runs[i]);
    double cj = dm_run_estimated_cost(&cost_suite->runs[j]);
    if (ci != cj)
        return ci > cj ? -1 : 1;
    return i < j ? -1 : (i > j);
}

void dm_run_order_longest_first(const dm_suite *suite, size_t *order, size_t n)
{
    cost_suite = suite;
    qsort(order, n, sizeof *order, by_cost_descending);
    cost_suite = NULL;
}

static void *worker(void *arg)
{
    pool *p = arg;
    for (;;) {
        if ((p->stop != NULL && *p->stop) || atomic_load(&p->failed))
            break;
        size_t slot = atomic_fetch_add(&p->next, 1);
        if (slot >= p->n_order)
            break;
        size_t i = p->order[slot];
        const dm_run_spec *spec = &p->suite->runs[i];
        if (p->progress != NULL) {
            pthread_mutex_lock(&p->lock);
            p->current = spec->id;
            p->progress(atomic_load(&p->done), p->n_order, p->cost_done / p->cost_total,
                        spec->id, seconds_since(&p->t0));
            pthread_mutex_unlock(&p->lock);
        }
        dm_error err = { 0 };
        if (dm_run(spec, &p->results[i], p->stop, &err) != DM_OK) {
            pthread_mutex_lock(&p->lock);
            if (!atomic_load(&p->failed)) {
                p->error = err;
                dm_error_prefix(&p->error, "%s: ", spec->id);
            }
            atomic_store(&p->failed, 1);
            pthread_mutex_unlock(&p->lock);
            break;
        }
        size_t d = atomic_fetch_add(&p->done, 1) + 1;
        pthread_mutex_lock(&p->lock);
        p->cost_done += dm_run_estimated_cost(spec);
        if (p->progress != NULL)
            p->progress(d, p->n_order, p->cost_done / p->cost_total,
                        p->current ? p->current : "", seconds_since(&p->t0));
        pthread_mutex_unlock(&p->lock);
    }
    return NULL;
}

dm_status dm_run_pool(const dm_suite *suite, dm_run_result *results, const size_t *order,
                      size_t n_order, int jobs, volatile int *stop, dm_pool_progress progress,
                      size_t *done, dm_error *err)
{
    pool p = { .suite = suite, .results = results, .order = order, .n_order = n_order,
               .stop = stop, .progress = progress };
    p.cost_total = 0.0;
    for (size_t i = 0; i < n_order; i++)
        p.cost_total += dm_run_estimated_cost(&suite->runs[order[i]]);
    if (!(p.cost_total > 0.0))
        p.cost_total = 1.0;
    atomic_init(&p.next, 0);
    atomic_init(&p.done, 0);
    atomic_init(&p.failed, 0);
    pthread_mutex_init(&p.lock, NULL);
    clock_gettime(CLOCK_MONOTONIC, &p.t0);
    if ((size_t)jobs > n_order)
        jobs = n_order > 0 ? (int)n_order : 1;
    if (jobs > DM_POOL_MAX_JOBS)
        jobs = DM_POOL_MAX_JOBS;
    pthread_t threads[DM_POOL_MAX_JOBS];
    int started_threads = 0;
    for (int j = 1; j < jobs; j++)
        if (pthread_create(&threads[started_threads], NULL, worker, &p) == 0)
            started_threads++;
    worker(&p); /* the calling thread is one of the jobs */
    for (int j = 0; j < started_threads; j++)
        pthread_join(threads[j], NULL);
    pthread_mutex_destroy(&p.lock);
    if (progress != NULL)
        progress(atomic_load(&p.done), n_order, p.cost_done / p.cost_total, "",
                 seconds_since(&p.t0));
    if (done != NULL)
        *done = atomic_load(&p.done);
    if (atomic_load(&p.failed)) {
        if (err != NULL)
            *err = p.error;
        return p.error.code != DM_OK ? p.error.code : DM_ESOLVER;
    }
    return DM_OK;
}
