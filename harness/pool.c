/* pool.c — the work queue of a suite's runs (pool.h) and the pool of threads on it
 * (`run --jobs`, and the 1-vs-N-jobs measurement of `bench`).
 *
 * Threads take the runs in the order given (longest first, so one long run does not
 * finish alone at the end) and store each result at its own index, so the results do
 * not depend on the number of jobs, nor on the number of MPI ranks (mpi_run.c hands
 * out runs from the same queue). In dm_run_pool the calling thread is one of the jobs. */
#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "dm_clock.h"
#include "harness.h"
#include "pool.h"

/* Work estimate of a run: force evaluations for fixed steps; adaptive methods are
 * guessed from the horizon and the tolerance (their steps grow as rtol shrinks). */
double dm_run_estimated_cost(const dm_run_spec *spec)
{
    const dm_method *m = spec->method;
    if (!m->adaptive) {
        double per = m->force_evals_per_step > 0 ? m->force_evals_per_step : 4;
        return per * (double)dm_run_fixed_steps(spec);
    }
    /* without a period (nbody, henon_heiles, ...) one time unit stands for one: a guess
     * for ordering and progress only (`run --plan` probes adaptive runs instead) */
    double digits = -log10(spec->method_config.rtol);
    double periods = isfinite(spec->periods) ? spec->periods : spec->t_end;
    return periods * 20.0 * digits * digits;
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

/* ---- the work queue ---- */

static bool stopped(const dm_work_queue *q)
{
    return q->stop != NULL && *q->stop;
}

/* Redraws the progress line (under the lock); `current` NULL: the run handed out last.
 * The work done counts the finished runs and the part of each run running here that
 * its runner has published (runs on other ranks count when they finish). */
static void show_progress(dm_work_queue *q, const char *current)
{
    if (q->progress == NULL)
        return;
    double total = q->cost_total > 0.0 ? q->cost_total : 1.0, done = q->cost_done;
    char line[DM_RUN_ID_MAX + 64] = "";
    size_t first = SIZE_MAX; /* the line names the running run of the smallest index */
    for (size_t j = 0; j < q->n_running; j++) {
        size_t i = q->running[j];
        const dm_run_result *r = &q->results[i];
        double f = (double)__atomic_load_n(&r->live_fraction, __ATOMIC_RELAXED) / 4294967296.0;
        done += f * dm_run_estimated_cost(&q->suite->runs[i]);
        if (current == NULL && i < first) {
            first = i;
            snprintf(line, sizeof line, "%s %.0f%% (%llu steps)", q->suite->runs[i].id,
                     100.0 * f,
                     (unsigned long long)__atomic_load_n(&r->live_steps, __ATOMIC_RELAXED));
        }
    }
    if (current == NULL)
        current = line[0] ? line : q->current ? q->current : "";
    q->progress(q->done, q->n_order, done / total, current, dm_clock_seconds() - q->t0);
}

/* Redraws the progress every second while runs run. */
static void *ticker_thread(void *arg)
{
    dm_work_queue *q = arg;
    pthread_mutex_lock(&q->lock);
    while (q->ticking) {
        struct timespec until;
        clock_gettime(CLOCK_REALTIME, &until);
        until.tv_sec += 1;
        pthread_cond_timedwait(&q->wake, &q->lock, &until);
        if (q->ticking)
            show_progress(q, NULL);
    }
    pthread_mutex_unlock(&q->lock);
    return NULL;
}

/* Run i no longer runs here (under the lock; a run of another rank never did). */
static void running_remove(dm_work_queue *q, size_t i)
{
    for (size_t j = 0; j < q->n_running; j++)
        if (q->running[j] == i) {
            q->running[j] = q->running[--q->n_running];
            return;
        }
}

static void snap_free(dm_run_result *r)
{
    if (r != NULL) {
        dm_run_result_free(r);
        free(r);
    }
}

/* Counts run i done (under the lock); the progress names it, and how it ended when not
 * ok. */
static void count_done(dm_work_queue *q, size_t i)
{
    q->done++;
    running_remove(q, i);
    if (q->where[i] == DM_RUN_ELSEWHERE)
        q->n_elsewhere--;
    q->where[i] = DM_RUN_DONE;
    if (q->snaps != NULL) { /* its file group replaces its snapshot */
        snap_free(q->snaps[i]);
        q->snaps[i] = NULL;
        pthread_cond_broadcast(&q->save_wake);
    }
    q->cost_done += dm_run_estimated_cost(&q->suite->runs[i]);
    /* a run that did not end ok says how it ended ("RUN: interrupted") */
    char line[DM_RUN_ID_MAX + 32];
    const char *id = q->suite->runs[i].id;
    if (q->results[i].status != DM_RUN_OK)
        snprintf(line, sizeof line, "%s: %s", id, dm_run_status_name(q->results[i].status));
    show_progress(q, q->results[i].status != DM_RUN_OK ? line : id);
}

/* Keeps the first failure and wakes every waiting thread (under the lock). */
static void record_failure(dm_work_queue *q, const dm_error *err)
{
    if (!q->failed)
        q->error = *err;
    q->failed = true;
    pthread_cond_broadcast(&q->wake);
}

/* ---- save points ---- */

/* A run's snapshot (dm_run_watch): kept as its latest while it runs here. */
static void take_snapshot(void *ctx, size_t i, dm_run_result *copy, unsigned request)
{
    dm_work_queue *q = ctx;
    pthread_mutex_lock(&q->lock);
    if (q->where[i] == DM_RUN_HERE) {
        snap_free(q->snaps[i]);
        q->snaps[i] = copy;
        q->snap_request[i] = request;
        copy = NULL;
        pthread_cond_broadcast(&q->save_wake);
    }
    pthread_mutex_unlock(&q->lock);
    snap_free(copy);
}

/* Every run running here, or on another MPI rank, answered `request` (under the lock). */
static bool all_answered(const dm_work_queue *q, unsigned request)
{
    for (size_t j = 0; j < q->n_running; j++) {
        size_t i = q->running[j];
        if (q->snaps[i] == NULL || q->snap_request[i] != request)
            return false;
    }
    for (size_t i = 0; q->n_elsewhere > 0 && i < q->suite->n_runs; i++)
        if (q->where[i] == DM_RUN_ELSEWHERE &&
            (q->snaps[i] == NULL || q->snap_request[i] != request))
            return false;
    return true;
}

static void wait_until(dm_work_queue *q, double t)
{
    double now = dm_clock_seconds();
    if (t <= now)
        return;
    struct timespec until;
    clock_gettime(CLOCK_REALTIME, &until);
    double wait = t - now;
    until.tv_sec += (time_t)wait;
    until.tv_nsec += (long)((wait - floor(wait)) * 1e9);
    if (until.tv_nsec >= 1000000000L) {
        until.tv_sec++;
        until.tv_nsec -= 1000000000L;
    }
    pthread_cond_timedwait(&q->save_wake, &q->lock, &until);
}

/* One save point (under the lock): ask, wait for the answers (bounded), then have the
 * writer save the finished runs, the running runs' snapshots and the runs not started
 * as they are. Returns the save's own time in seconds (the wait aside), or -1 when the
 * pool ended meanwhile. */
static double save_point(dm_work_queue *q)
{
    unsigned request = __atomic_add_fetch(&q->save_request, 1u, __ATOMIC_RELAXED);
    double deadline = dm_clock_seconds() + DM_SAVE_WAIT_SECONDS;
    while (q->saving && !all_answered(q, request) && dm_clock_seconds() < deadline &&
           !stopped(q) && !q->failed)
        wait_until(q, deadline);
    if (!q->saving || stopped(q) || q->failed)
        return -1.0; /* the end's own file (complete or interrupted) comes anyway */
    size_t n = q->suite->n_runs;
    dm_run_result **pending = calloc(n ? n : 1, sizeof *pending);
    if (pending == NULL)
        return 0.0;
    for (size_t i = 0; i < n; i++) {
        if (q->where[i] == DM_RUN_HERE || q->where[i] == DM_RUN_ELSEWHERE)
            pending[i] = q->snaps[i];
        else if (q->where[i] == DM_RUN_QUEUED && q->results[i].status != DM_RUN_NOT_RUN)
            pending[i] = &q->results[i]; /* read back by --resume, not started yet */
    }
    double t0 = dm_clock_seconds();
    dm_error err = { 0 };
    (void)dm_results_writer_save(q->writer, q->results, pending, &err); /* counted there */
    free(pending);
    return dm_clock_seconds() - t0;
}

/* The saver: a save point every save_every seconds, and never sooner than
 * DM_SAVE_SPACING times the last one's cost after it. */
static void *saver_thread(void *arg)
{
    dm_work_queue *q = arg;
    double every = dm_results_writer_save_every(q->writer);
    pthread_mutex_lock(&q->lock);
    double next = q->t0 + every;
    while (q->saving) {
        if (dm_clock_seconds() < next) {
            wait_until(q, next);
            continue;
        }
        if (stopped(q) || q->failed)
            break;
        double cost = save_point(q);
        if (cost < 0.0)
            break;
        double gap = DM_SAVE_SPACING * cost;
        next = dm_clock_seconds() + (gap > every ? gap : every);
    }
    pthread_mutex_unlock(&q->lock);
    return NULL;
}

dm_status dm_queue_enable_snapshots(dm_work_queue *q, dm_error *err)
{
    size_t n = q->suite->n_runs ? q->suite->n_runs : 1;
    if (q->snaps != NULL)
        return DM_OK;
    q->snaps = calloc(n, sizeof *q->snaps);
    q->snap_request = calloc(n, sizeof *q->snap_request);
    if (q->snaps == NULL || q->snap_request == NULL) {
        free(q->snaps);
        free(q->snap_request);
        q->snaps = NULL;
        q->snap_request = NULL;
        return dm_error_set(err, DM_ENOMEM, "out of memory for the snapshots of %zu runs", n);
    }
    return DM_OK;
}

void dm_queue_ask_snapshots(dm_work_queue *q)
{
    if (q->snaps != NULL)
        __atomic_add_fetch(&q->save_request, 1u, __ATOMIC_RELAXED);
}

unsigned dm_queue_save_request(dm_work_queue *q)
{
    return __atomic_load_n(&q->save_request, __ATOMIC_RELAXED);
}

size_t dm_queue_take_snapshots(dm_work_queue *q, dm_run_result **out, size_t *idx)
{
    size_t n = 0;
    pthread_mutex_lock(&q->lock);
    for (size_t i = 0; q->snaps != NULL && i < q->suite->n_runs; i++)
        if (q->snaps[i] != NULL) {
            out[n] = q->snaps[i];
            idx[n++] = i;
            q->snaps[i] = NULL;
        }
    pthread_mutex_unlock(&q->lock);
    return n;
}

void dm_queue_put_snapshot(dm_work_queue *q, size_t i, dm_run_result *copy)
{
    pthread_mutex_lock(&q->lock);
    if (q->snaps != NULL && i < q->suite->n_runs && q->where[i] == DM_RUN_ELSEWHERE) {
        snap_free(q->snaps[i]);
        q->snaps[i] = copy;
        q->snap_request[i] = __atomic_load_n(&q->save_request, __ATOMIC_RELAXED);
        copy = NULL;
        pthread_cond_broadcast(&q->save_wake);
    }
    pthread_mutex_unlock(&q->lock);
    snap_free(copy);
}

void dm_queue_drop_series(dm_work_queue *q, size_t i)
{
    pthread_mutex_lock(&q->lock);
    dm_run_result_drop_series(&q->results[i]);
    pthread_mutex_unlock(&q->lock);
}

dm_status dm_queue_init(dm_work_queue *q, const dm_suite *suite, dm_run_result *results,
                        dm_results_writer *writer, volatile int *stop,
                        dm_pool_progress progress, dm_error *err)
{
    memset(q, 0, sizeof *q);
    size_t n = suite->n_runs ? suite->n_runs : 1;
    q->order = malloc(n * sizeof *q->order);
    q->finished = malloc(n * sizeof *q->finished);
    q->where = calloc(n, sizeof *q->where);
    bool saves = writer != NULL && dm_results_writer_save_every(writer) > 0.0;
    if (saves) {
        q->snaps = calloc(n, sizeof *q->snaps);
        q->snap_request = calloc(n, sizeof *q->snap_request);
    }
    if (q->order == NULL || q->finished == NULL || q->where == NULL ||
        (saves && (q->snaps == NULL || q->snap_request == NULL))) {
        free(q->order);
        free(q->finished);
        free(q->where);
        free(q->snaps);
        free(q->snap_request);
        return dm_error_set(err, DM_ENOMEM, "out of memory for the run queue of %zu runs", n);
    }
    q->suite = suite;
    q->results = results;
    q->writer = writer;
    q->stop = stop;
    q->progress = progress;
    q->open = true;
    q->t0 = dm_clock_seconds();
    pthread_mutex_init(&q->lock, NULL);
    pthread_cond_init(&q->wake, NULL);
    pthread_cond_init(&q->save_wake, NULL);
    q->ticking = progress != NULL;
    if (q->ticking && pthread_create(&q->ticker, NULL, ticker_thread, q) != 0)
        q->ticking = false;
    q->saving = saves;
    if (q->saving && pthread_create(&q->saver, NULL, saver_thread, q) != 0)
        q->saving = false; /* no save points: the run goes on as without them */
    return DM_OK;
}

void dm_queue_add(dm_work_queue *q, const size_t *runs, size_t n)
{
    pthread_mutex_lock(&q->lock);
    for (size_t k = 0; k < n; k++)
        if (runs[k] < q->suite->n_runs && q->n_order < q->suite->n_runs) {
            q->order[q->n_order++] = runs[k];
            q->cost_total += dm_run_estimated_cost(&q->suite->runs[runs[k]]);
        }
    pthread_cond_broadcast(&q->wake);
    pthread_mutex_unlock(&q->lock);
}

void dm_queue_close(dm_work_queue *q)
{
    pthread_mutex_lock(&q->lock);
    q->open = false;
    pthread_cond_broadcast(&q->wake);
    pthread_mutex_unlock(&q->lock);
}

void dm_queue_serve(dm_work_queue *q)
{
    pthread_mutex_lock(&q->lock);
    for (;;) {
        while (q->next == q->n_order && q->open && !stopped(q) && !q->failed) {
            q->waiting++;
            pthread_cond_wait(&q->wake, &q->lock);
            q->waiting--;
        }
        if (stopped(q) || q->failed || q->next == q->n_order)
            break;
        size_t i = q->order[q->next++];
        const dm_run_spec *spec = &q->suite->runs[i];
        q->current = spec->id;
        q->running[q->n_running++] = i; /* at most one a thread */
        q->where[i] = DM_RUN_HERE;
        show_progress(q, spec->id);
        pthread_mutex_unlock(&q->lock);

        dm_error err = { 0 };
        /* an interrupted run read back with its checkpoint continues from it */
        dm_run_watch watch = { .stop = q->stop, .index = i, .ctx = q };
        if (q->snaps != NULL) { /* it answers the save points asked for from now on */
            watch.save_request = &q->save_request;
            watch.answered = __atomic_load_n(&q->save_request, __ATOMIC_RELAXED);
            watch.snapshot = take_snapshot;
        }
        dm_status st = dm_run_watched(spec, &q->results[i], &watch, &err);
        /* written at once and its series freed (under the lock: a save point may read
         * the result): memory does not grow with the runs */
        bool written = false;
        if (st == DM_OK && q->writer != NULL)
            written = (st = dm_results_writer_add(q->writer, i, &q->results[i], &err)) == DM_OK;

        pthread_mutex_lock(&q->lock);
        if (written)
            dm_run_result_drop_series(&q->results[i]);
        if (st != DM_OK) {
            running_remove(q, i);
            dm_error_prefix(&err, "%s: ", spec->id);
            record_failure(q, &err);
            break;
        }
        q->finished[q->n_finished++] = i;
        count_done(q, i);
    }
    pthread_mutex_unlock(&q->lock);
}

static void *queue_thread(void *arg)
{
    dm_work_queue *q = arg;
    dm_queue_serve(q);
    pthread_mutex_lock(&q->lock);
    q->alive--;
    pthread_mutex_unlock(&q->lock);
    return NULL;
}

int dm_queue_start(dm_work_queue *q, int threads)
{
    pthread_mutex_lock(&q->lock); /* counted alive before any of them can end */
    for (int j = 0; j < threads && q->n_threads < DM_POOL_MAX_JOBS; j++)
        if (pthread_create(&q->threads[q->n_threads], NULL, queue_thread, q) == 0) {
            q->n_threads++;
            q->alive++;
        }
    int started = q->n_threads;
    pthread_mutex_unlock(&q->lock);
    return started;
}

size_t dm_queue_take(dm_work_queue *q, size_t k, size_t *out)
{
    size_t n = 0;
    pthread_mutex_lock(&q->lock);
    if (!stopped(q) && !q->failed) {
        while (n < k && q->next < q->n_order) {
            q->where[q->order[q->next]] = DM_RUN_ELSEWHERE;
            q->n_elsewhere++;
            out[n++] = q->order[q->next++];
        }
        if (n > 0) {
            q->current = q->suite->runs[out[n - 1]].id;
            show_progress(q, NULL);
        }
    }
    pthread_mutex_unlock(&q->lock);
    return n;
}

void dm_queue_mark_done(dm_work_queue *q, size_t i)
{
    pthread_mutex_lock(&q->lock);
    count_done(q, i);
    pthread_mutex_unlock(&q->lock);
}

void dm_queue_fail(dm_work_queue *q, const dm_error *err)
{
    pthread_mutex_lock(&q->lock);
    record_failure(q, err);
    pthread_mutex_unlock(&q->lock);
}

void dm_queue_wake(dm_work_queue *q)
{
    pthread_mutex_lock(&q->lock);
    pthread_cond_broadcast(&q->wake);
    pthread_mutex_unlock(&q->lock);
}

size_t dm_queue_look(dm_work_queue *q, dm_queue_state *state, size_t *finished)
{
    size_t n = 0;
    pthread_mutex_lock(&q->lock);
    state->hungry = q->waiting - (int)(q->n_order - q->next);
    state->alive = q->alive;
    state->failed = q->failed;
    if (q->failed)
        state->error = q->error;
    if (finished != NULL) {
        n = q->n_finished;
        memcpy(finished, q->finished, n * sizeof *finished);
        q->n_finished = 0;
    }
    pthread_mutex_unlock(&q->lock);
    return n;
}

dm_status dm_queue_finish(dm_work_queue *q, size_t *done, dm_error *err)
{
    dm_queue_close(q);
    for (int j = 0; j < q->n_threads; j++)
        pthread_join(q->threads[j], NULL);
    pthread_mutex_lock(&q->lock);
    bool ticking = q->ticking;
    q->ticking = false;
    pthread_cond_broadcast(&q->wake);
    pthread_mutex_unlock(&q->lock);
    if (ticking)
        pthread_join(q->ticker, NULL);
    pthread_mutex_lock(&q->lock);
    bool saving = q->saving;
    q->saving = false;
    pthread_cond_broadcast(&q->save_wake);
    pthread_mutex_unlock(&q->lock);
    if (saving)
        pthread_join(q->saver, NULL);
    for (size_t i = 0; q->snaps != NULL && i < q->suite->n_runs; i++)
        snap_free(q->snaps[i]);
    show_progress(q, "");
    if (done != NULL)
        *done = q->done;
    pthread_mutex_destroy(&q->lock);
    pthread_cond_destroy(&q->wake);
    pthread_cond_destroy(&q->save_wake);
    free(q->order);
    free(q->finished);
    free(q->where);
    free(q->snaps);
    free(q->snap_request);
    q->order = q->finished = NULL;
    q->where = NULL;
    q->snaps = NULL;
    q->snap_request = NULL;
    if (!q->failed)
        return DM_OK;
    if (err != NULL)
        *err = q->error;
    return q->error.code != DM_OK ? q->error.code : DM_ESOLVER;
}

/* ---- the pool of `run --jobs` ---- */

dm_status dm_run_pool(const dm_suite *suite, dm_run_result *results, dm_results_writer *writer,
                      const size_t *order, size_t n_order, int jobs, volatile int *stop,
                      dm_pool_progress progress, size_t *done, dm_error *err)
{
    dm_work_queue q;
    dm_status st = dm_queue_init(&q, suite, results, writer, stop, progress, err);
    if (st != DM_OK)
        return st;
    dm_queue_add(&q, order, n_order);
    dm_queue_close(&q);
    if ((size_t)jobs > n_order)
        jobs = n_order > 0 ? (int)n_order : 1;
    if (jobs > DM_POOL_MAX_JOBS)
        jobs = DM_POOL_MAX_JOBS;
    dm_queue_start(&q, jobs - 1);
    dm_queue_serve(&q); /* the calling thread is one of the jobs */
    return dm_queue_finish(&q, done, err);
}
