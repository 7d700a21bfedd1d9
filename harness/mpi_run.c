/* mpi_run.c — `driftmark run` over the ranks of an MPI job (see mpi_run.h).
 *
 * Why rank 0 hands out runs one request at a time instead of a fixed split: the cost
 * of a run is only estimated (adaptive methods are a guess), and one mis-estimated long
 * run in a fixed share leaves every other rank idle at the end. Handing out the next
 * run, longest first, to whichever thread is free keeps the imbalance below one run.
 * The price is one small message each way per run, noise next to a run's seconds.
 *
 * Messages (MPI_COMM_WORLD, only the main thread of a rank sends or receives):
 *   worker -> 0   REQUEST  int: threads of the worker that wait for a run
 *   0 -> worker   ASSIGN   uint64[]: run indices; none means "nothing more to run"
 *   worker -> 0   RESULT   bytes: one packed dm_run_result
 *   worker -> 0   FAILED   text: a run could not be run (out of memory, ...)
 *   worker -> 0   STOPPED  int: the worker was sent this signal
 *   0 -> worker   STOP     (empty) end the running runs at their next bucket
 *   worker -> 0   FINISHED (empty) every result of the worker was sent
 *   0 -> worker   BYE      (empty) the last message to the worker
 * A worker has at most one REQUEST unanswered and waits for its ASSIGN before saying
 * FINISHED, and keeps receiving until BYE, so no message is ever left unmatched. Rank 0
 * only ever blocks on a message that is already on its way, and sends with MPI_Isend,
 * so no pair of ranks can wait on each other. Waiting ranks poll with short sleeps
 * instead of a blocking call, which in OpenMPI would spin a core the runs need.
 */
#define _GNU_SOURCE /* sched_getaffinity */
#include "mpi_run.h"

#include <fcntl.h>
#include <pthread.h>
#include <sched.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "result_pack.h"

#ifdef DM_HAVE_MPI
#include <mpi.h>
#endif

static int online_cores(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n > 0 ? (int)n : 1;
}

int dm_mpi_default_jobs(const dm_mpi_world *w, int single_process_jobs)
{
    if (!w->active)
        return single_process_jobs;
    int share = online_cores() / (w->local_size > 0 ? w->local_size : 1);
    cpu_set_t set;
    if (sched_getaffinity(0, sizeof set, &set) == 0) {
        int mine = CPU_COUNT(&set);
        if (mine > 0 && mine < share)
            share = mine;
    }
    return share > 0 ? share : 1;
}

#ifndef DM_HAVE_MPI

/* ---- built without MPI: one process ---- */

bool dm_mpi_built(void) { return false; }

dm_status dm_mpi_begin(dm_mpi_world *w, dm_error *err)
{
    *w = (dm_mpi_world){ .rank = 0, .size = 1, .local_size = 1, .saved_stderr = -1 };
    /* Under mpirun each copy of this build would run the whole suite into one file. */
    static const char *const sizes[] = { "OMPI_COMM_WORLD_SIZE", "PMI_SIZE" };
    for (size_t i = 0; i < sizeof sizes / sizeof sizes[0]; i++) {
        const char *v = getenv(sizes[i]);
        if (v != NULL && atoi(v) > 1)
            return dm_error_set(err, DM_EINPUT, "this driftmark was built without MPI but "
                                "runs as one of %d processes of an MPI job (%s): run it "
                                "without mpirun, or rebuild it with MPI (Debian packages "
                                "libopenmpi-dev and openmpi-bin)", atoi(v), sizes[i]);
    }
    return DM_OK;
}

int dm_mpi_share_suite(dm_mpi_world *w, int code, dm_suite *suite) { return code; }

void dm_mpi_coordinate(const dm_mpi_world *w, dm_mpi_job *job)
{
    job->failed = true;
    dm_error_set(&job->error, DM_EINPUT, "this driftmark was built without MPI");
}

void dm_mpi_work(const dm_mpi_world *w, dm_mpi_job *job)
{
    dm_mpi_coordinate(w, job);
}

int dm_mpi_end(dm_mpi_world *w, int code) { return code; }

#else

/* ---- built with MPI ---- */

enum {
    TAG_REQUEST = 101, TAG_ASSIGN, TAG_RESULT, TAG_FAILED, TAG_STOPPED, TAG_FINISHED,
    TAG_STOP, TAG_BYE
};

/* Runs one ASSIGN carries at most: a rank with more waiting threads asks again. */
#define MAX_ASK 64

bool dm_mpi_built(void) { return true; }

/* Silences stdout and stderr of a rank > 0 (stderr is kept, to give it back). */
static void silence(dm_mpi_world *w)
{
    int null = open("/dev/null", O_WRONLY);
    if (null < 0)
        return;
    fflush(stdout);
    fflush(stderr);
    w->saved_stderr = dup(STDERR_FILENO);
    dup2(null, STDOUT_FILENO);
    dup2(null, STDERR_FILENO);
    close(null);
}

/* Gives back stderr (a worker reports its own failures and crashes); stdout stays
 * silent: the table and the file are rank 0's. */
static void unsilence_stderr(dm_mpi_world *w)
{
    if (w->saved_stderr >= 0) {
        fflush(stderr);
        dup2(w->saved_stderr, STDERR_FILENO);
        close(w->saved_stderr);
        w->saved_stderr = -1;
    }
}

/* Set by OpenMPI's mpirun, by PMI launchers (MPICH's hydra, srun --mpi=pmi2) and by
 * PMIx launchers (srun --mpi=pmix, prterun). Without one, MPI_Init would make a job of
 * one process anyway: leaving MPI alone keeps a plain run exactly what it was. */
static bool launched_by_mpi(void)
{
    static const char *const vars[] = { "OMPI_COMM_WORLD_SIZE", "PMIX_RANK", "PMI_RANK",
                                        "PMI_SIZE" };
    for (size_t i = 0; i < sizeof vars / sizeof vars[0]; i++)
        if (getenv(vars[i]) != NULL)
            return true;
    return false;
}

dm_status dm_mpi_begin(dm_mpi_world *w, dm_error *err)
{
    *w = (dm_mpi_world){ .rank = 0, .size = 1, .local_size = 1, .saved_stderr = -1 };
    if (!launched_by_mpi())
        return DM_OK;
    int provided = 0;
    if (MPI_Init_thread(NULL, NULL, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS)
        return dm_error_set(err, DM_EIO, "MPI_Init_thread failed");
    w->active = true;
    MPI_Comm_rank(MPI_COMM_WORLD, &w->rank);
    MPI_Comm_size(MPI_COMM_WORLD, &w->size);
    MPI_Comm local;
    if (MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, 0, MPI_INFO_NULL,
                            &local) == MPI_SUCCESS) {
        MPI_Comm_size(local, &w->local_size);
        MPI_Comm_free(&local);
    }
    if (provided < MPI_THREAD_FUNNELED) {
        /* the run threads never call MPI, but the library must allow them to exist */
        MPI_Finalize();
        w->active = false;
        return dm_error_set(err, DM_EIO, "this MPI offers no thread support "
                            "(MPI_THREAD_FUNNELED needed, got level %d)", provided);
    }
    if (w->rank > 0)
        silence(w);
    return DM_OK;
}

/* Sleeps a short while: the polling step of every waiting loop. */
static void nap(void)
{
    struct timespec t = { 0, 200000 }; /* 0.2 ms */
    nanosleep(&t, NULL);
}

/* Waits for a request while sleeping between tests instead of spinning. */
static void wait_gently(MPI_Request *req)
{
    int done = 0;
    while (*req != MPI_REQUEST_NULL && !done) {
        MPI_Test(req, &done, MPI_STATUS_IGNORE);
        if (!done)
            nap();
    }
}

int dm_mpi_share_suite(dm_mpi_world *w, int code, dm_suite *suite)
{
    if (!w->active)
        return code;
    unsilence_stderr(w);
    MPI_Bcast(&code, 1, MPI_INT, 0, MPI_COMM_WORLD);
    if (code != 0)
        return code;
    uint64_t length = w->rank == 0 ? strlen(suite->text) : 0;
    char source[sizeof suite->source];
    if (w->rank == 0)
        memcpy(source, suite->source, sizeof source);
    MPI_Bcast(&length, 1, MPI_UINT64_T, 0, MPI_COMM_WORLD);
    MPI_Bcast(source, (int)sizeof source, MPI_CHAR, 0, MPI_COMM_WORLD);
    char *text = w->rank == 0 ? suite->text : malloc(length + 1);
    if (text == NULL) {
        fprintf(stderr, "driftmark: run: rank %d: out of memory for a suite text of %llu "
                "bytes\n", w->rank, (unsigned long long)length);
        MPI_Abort(MPI_COMM_WORLD, 1);
    }
    /* in pieces: an MPI count is an int */
    for (uint64_t at = 0; at < length; at += 1u << 30) {
        uint64_t piece = length - at < (1u << 30) ? length - at : (1u << 30);
        MPI_Bcast(text + at, (int)piece, MPI_CHAR, 0, MPI_COMM_WORLD);
    }
    int mine = 0;
    dm_error err = { 0 };
    if (w->rank > 0) {
        text[length] = '\0';
        source[sizeof source - 1] = '\0';
        /* The output is rank 0's to write: a worker checks the suite, not a directory
         * it may not even see, so it names one every machine has. */
        const char *tmp = getenv("TMPDIR");
        char output[1100];
        snprintf(output, sizeof output, "%s/driftmark-rank%d.h5",
                 tmp != NULL && *tmp == '/' ? tmp : "/tmp", w->rank);
        dm_status st = dm_suite_parse(suite, text, (size_t)length, source, output, &err);
        free(text);
        if (st != DM_OK)
            mine = st == DM_EINPUT ? 2 : 1;
    }
    /* the verdict of every rank, and the first rank that failed */
    int vote[2] = { mine, mine != 0 ? w->size - w->rank : 0 }, all[2];
    MPI_Allreduce(vote, all, 2, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    if (all[0] != 0) {
        if (mine != 0 && w->size - w->rank == all[1])
            fprintf(stderr, "driftmark: run: rank %d: %s\n", w->rank, err.msg);
        if (w->rank > 0 && mine == 0)
            dm_suite_free(suite);
        return all[0];
    }
    return 0;
}

int dm_mpi_end(dm_mpi_world *w, int code)
{
    if (!w->active)
        return code;
    unsilence_stderr(w);
    /* rank 0's status, and the largest of the others */
    int vote[2] = { w->rank == 0 ? code : 0, w->rank == 0 ? 0 : code }, all[2] = { 0, 0 };
    MPI_Request req;
    MPI_Iallreduce(vote, all, 2, MPI_INT, MPI_MAX, MPI_COMM_WORLD, &req);
    wait_gently(&req);
    fflush(stdout);
    fflush(stderr);
    MPI_Finalize();
    w->active = false;
    return all[0] != 0 ? all[0] : all[1];
}

/* ---- the threads of one rank ---- */

typedef struct rank_pool {
    const dm_suite *suite;
    dm_run_result *results;
    volatile int *stop;
    pthread_mutex_t lock;
    pthread_cond_t wake;
    size_t *queue;                 /* runs given to this rank, not started yet */
    size_t q_head, q_tail;         /* a run is given once: n_runs slots suffice */
    size_t *done;                  /* runs finished and not yet reported */
    size_t n_done;
    int waiting;                   /* threads waiting for a run */
    int alive;                     /* threads not yet ended */
    bool no_more;                  /* nothing more will be given */
    bool failed;                   /* a run could not be run: no thread starts another */
    dm_error error;
    const char *current;           /* the run started last */
    pthread_t threads[1024];
    int n_threads;
} rank_pool;

static void *pool_thread(void *arg)
{
    rank_pool *p = arg;
    pthread_mutex_lock(&p->lock);
    for (;;) {
        while (p->q_head == p->q_tail && !p->no_more && !*p->stop && !p->failed) {
            p->waiting++;
            pthread_cond_wait(&p->wake, &p->lock);
            p->waiting--;
        }
        if (*p->stop || p->failed || p->q_head == p->q_tail)
            break;
        size_t i = p->queue[p->q_head++];
        const dm_run_spec *spec = &p->suite->runs[i];
        p->current = spec->id;
        pthread_mutex_unlock(&p->lock);
        dm_error err = { 0 };
        dm_status st = dm_run(spec, &p->results[i], p->stop, &err);
        pthread_mutex_lock(&p->lock);
        if (st != DM_OK) {
            if (!p->failed) {
                p->error = err;
                dm_error_prefix(&p->error, "%s: ", spec->id);
            }
            p->failed = true;
            break;
        }
        p->done[p->n_done++] = i;
    }
    p->alive--;
    pthread_mutex_unlock(&p->lock);
    return NULL;
}

static bool pool_start(rank_pool *p, const dm_suite *suite, dm_run_result *results,
                       volatile int *stop, int jobs, dm_error *err)
{
    memset(p, 0, sizeof *p);
    p->suite = suite;
    p->results = results;
    p->stop = stop;
    size_t n = suite->n_runs ? suite->n_runs : 1;
    p->queue = malloc(n * sizeof *p->queue);
    p->done = malloc(n * sizeof *p->done);
    if (p->queue == NULL || p->done == NULL) {
        free(p->queue);
        free(p->done);
        dm_error_set(err, DM_ENOMEM, "out of memory for the run queue of %zu runs", n);
        return false;
    }
    pthread_mutex_init(&p->lock, NULL);
    pthread_cond_init(&p->wake, NULL);
    if (jobs > 1024)
        jobs = 1024;
    pthread_mutex_lock(&p->lock);
    for (int j = 0; j < jobs; j++)
        if (pthread_create(&p->threads[p->n_threads], NULL, pool_thread, p) == 0) {
            p->n_threads++;
            p->alive++;
        }
    pthread_mutex_unlock(&p->lock);
    if (p->n_threads == 0) {
        dm_error_set(err, DM_ENOMEM, "cannot start a thread to run the suite");
        pthread_mutex_destroy(&p->lock);
        pthread_cond_destroy(&p->wake);
        free(p->queue);
        free(p->done);
        return false;
    }
    return true;
}

static void pool_finish(rank_pool *p)
{
    pthread_mutex_lock(&p->lock);
    p->no_more = true;
    pthread_cond_broadcast(&p->wake);
    pthread_mutex_unlock(&p->lock);
    for (int j = 0; j < p->n_threads; j++)
        pthread_join(p->threads[j], NULL);
    pthread_mutex_destroy(&p->lock);
    pthread_cond_destroy(&p->wake);
    free(p->queue);
    free(p->done);
}

static double seconds_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

static void receive_and_drop(const MPI_Status *s)
{
    int count = 0;
    MPI_Get_count(s, MPI_BYTE, &count);
    char *buf = malloc(count > 0 ? (size_t)count : 1);
    if (buf != NULL) {
        MPI_Recv(buf, count, MPI_BYTE, s->MPI_SOURCE, s->MPI_TAG, MPI_COMM_WORLD,
                 MPI_STATUS_IGNORE);
    } else {
        /* even out of memory, the message must be taken off the line */
        char byte;
        MPI_Recv(&byte, 0, MPI_BYTE, s->MPI_SOURCE, s->MPI_TAG, MPI_COMM_WORLD,
                 MPI_STATUS_IGNORE);
    }
    free(buf);
}

static void job_fail(dm_mpi_job *job, const dm_error *err, int rank)
{
    if (!job->failed) {
        job->error = *err;
        if (rank > 0)
            dm_error_prefix(&job->error, "rank %d: ", rank);
    }
    job->failed = true;
}

/* ---- rank 0 ---- */

typedef struct coordinator {
    dm_mpi_job *job;
    size_t next;                   /* into job->order: the next run to hand out */
    int *owner;                    /* the rank each run was given to */
    MPI_Request *assign_req, *stop_req, *bye_req;
    uint64_t (*assign_buf)[MAX_ASK];
    bool *finished;
    int n_finished;
    const char *current;
} coordinator;

/* Up to k runs to hand out, none once the job stops or failed. */
static size_t give(coordinator *c, size_t k, uint64_t *out, int rank)
{
    dm_mpi_job *job = c->job;
    size_t n = 0;
    if (*job->stop || job->failed)
        return 0;
    while (n < k && c->next < job->n_order) {
        size_t i = job->order[c->next++];
        c->owner[i] = rank;
        c->current = job->suite->runs[i].id;
        out[n++] = i;
    }
    return n;
}

static void take_result(coordinator *c, const MPI_Status *s)
{
    dm_mpi_job *job = c->job;
    int count = 0;
    MPI_Get_count(s, MPI_BYTE, &count);
    unsigned char *buf = malloc(count > 0 ? (size_t)count : 1);
    if (buf == NULL) {
        receive_and_drop(s);
        dm_error e;
        dm_error_set(&e, DM_ENOMEM, "out of memory receiving a result of %d bytes", count);
        job_fail(job, &e, 0);
        return;
    }
    MPI_Recv(buf, count, MPI_BYTE, s->MPI_SOURCE, TAG_RESULT, MPI_COMM_WORLD,
             MPI_STATUS_IGNORE);
    dm_error e = { 0 };
    size_t i = 0;
    dm_run_result r;
    if (dm_result_unpack(job->suite, buf, (size_t)count, &i, &r, &e) != DM_OK) {
        job_fail(job, &e, s->MPI_SOURCE);
    } else if (c->owner[i] != s->MPI_SOURCE || job->results[i].status != DM_RUN_NOT_RUN) {
        dm_run_result_free(&r);
        dm_error_set(&e, DM_EIO, "sent a result of run %s it was not given",
                     job->suite->runs[i].id);
        job_fail(job, &e, s->MPI_SOURCE);
    } else {
        job->results[i] = r;
        job->done++;
        job->runs_received++;
        job->bytes_received += (uint64_t)count;
    }
    free(buf);
}

static bool serve(coordinator *c, int size)
{
    dm_mpi_job *job = c->job;
    bool busy = false;
    int flag = 0;
    MPI_Status s;
    while (MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &s) == MPI_SUCCESS &&
           flag) {
        busy = true;
        int src = s.MPI_SOURCE;
        if (src <= 0 || src >= size) {
            receive_and_drop(&s);
            continue;
        }
        switch (s.MPI_TAG) {
        case TAG_REQUEST: {
            int k = 0;
            MPI_Recv(&k, 1, MPI_INT, src, TAG_REQUEST, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
            wait_gently(&c->assign_req[src]); /* the last ASSIGN, which src has received */
            size_t n = give(c, k < 1 ? 1 : k > MAX_ASK ? MAX_ASK : (size_t)k,
                            c->assign_buf[src], src);
            MPI_Isend(c->assign_buf[src], (int)n, MPI_UINT64_T, src, TAG_ASSIGN,
                      MPI_COMM_WORLD, &c->assign_req[src]);
            break;
        }
        case TAG_RESULT:
            take_result(c, &s);
            break;
        case TAG_FAILED: {
            dm_error e = { .code = DM_EIO };
            int count = 0;
            MPI_Get_count(&s, MPI_CHAR, &count);
            if (count > 0 && count <= (int)sizeof e.msg) {
                MPI_Recv(e.msg, count, MPI_CHAR, src, TAG_FAILED, MPI_COMM_WORLD,
                         MPI_STATUS_IGNORE);
                e.msg[sizeof e.msg - 1] = '\0';
            } else {
                receive_and_drop(&s);
                snprintf(e.msg, sizeof e.msg, "a run failed (no reason received)");
            }
            job_fail(job, &e, src);
            break;
        }
        case TAG_STOPPED: {
            int sig = 0;
            MPI_Recv(&sig, 1, MPI_INT, src, TAG_STOPPED, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
            if (*job->stop_signal == 0)
                *job->stop_signal = sig;
            *job->stop = 1;
            break;
        }
        case TAG_FINISHED:
            MPI_Recv(NULL, 0, MPI_BYTE, src, TAG_FINISHED, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
            if (!c->finished[src]) {
                c->finished[src] = true;
                c->n_finished++;
                MPI_Isend(NULL, 0, MPI_BYTE, src, TAG_BYE, MPI_COMM_WORLD, &c->bye_req[src]);
            }
            break;
        default:
            receive_and_drop(&s);
            break;
        }
    }
    return busy;
}

void dm_mpi_coordinate(const dm_mpi_world *w, dm_mpi_job *job)
{
    int size = w->size;
    coordinator c = { .job = job };
    c.owner = malloc(sizeof *c.owner * (job->suite->n_runs ? job->suite->n_runs : 1));
    c.assign_req = malloc(sizeof *c.assign_req * (size_t)size);
    c.stop_req = malloc(sizeof *c.stop_req * (size_t)size);
    c.bye_req = malloc(sizeof *c.bye_req * (size_t)size);
    c.assign_buf = malloc(sizeof *c.assign_buf * (size_t)size);
    c.finished = calloc((size_t)size, sizeof *c.finished);
    rank_pool p;
    dm_error e = { 0 };
    bool pool_ok = false;
    if (c.owner && c.assign_req && c.stop_req && c.bye_req && c.assign_buf && c.finished)
        pool_ok = pool_start(&p, job->suite, job->results, job->stop, job->jobs, &e);
    else
        dm_error_set(&e, DM_ENOMEM, "out of memory for the state of %d ranks", size);
    if (!pool_ok) {
        /* the other ranks still wait for their first answer: tell them to stop */
        job_fail(job, &e, 0);
        if (c.owner == NULL || c.assign_req == NULL || c.stop_req == NULL ||
            c.bye_req == NULL || c.assign_buf == NULL || c.finished == NULL)
            MPI_Abort(MPI_COMM_WORLD, 1);
    }
    for (size_t i = 0; i < job->suite->n_runs; i++)
        c.owner[i] = -1;
    for (int r = 0; r < size; r++)
        c.assign_req[r] = c.stop_req[r] = c.bye_req[r] = MPI_REQUEST_NULL;

    bool stop_sent = false;
    size_t shown = (size_t)-1;
    for (;;) {
        bool busy = serve(&c, size);
        int alive = 0;
        if (pool_ok) {
            pthread_mutex_lock(&p.lock);
            size_t queued = p.q_tail - p.q_head;
            if (p.waiting > (int)queued) {
                uint64_t got[MAX_ASK];
                size_t n = give(&c, (size_t)p.waiting - queued > MAX_ASK
                                        ? MAX_ASK : (size_t)p.waiting - queued, got, 0);
                for (size_t k = 0; k < n; k++)
                    p.queue[p.q_tail++] = (size_t)got[k];
                if (n > 0)
                    busy = true;
            }
            if (*job->stop || job->failed || c.next == job->n_order)
                p.no_more = true;
            pthread_cond_broadcast(&p.wake);
            job->done += p.n_done;
            p.n_done = 0;
            if (p.failed && !job->failed)
                job_fail(job, &p.error, 0);
            alive = p.alive;
            pthread_mutex_unlock(&p.lock);
        }
        if (*job->stop && !stop_sent) {
            for (int r = 1; r < size; r++)
                if (!c.finished[r])
                    MPI_Isend(NULL, 0, MPI_BYTE, r, TAG_STOP, MPI_COMM_WORLD, &c.stop_req[r]);
            stop_sent = true;
        }
        if (job->progress != NULL && job->done != shown) {
            shown = job->done;
            job->progress(job->done, job->n_order, c.current ? c.current : "",
                          seconds_since(&job->t0));
        }
        if (alive == 0 && c.n_finished == size - 1)
            break;
        if (!busy)
            nap();
    }
    if (pool_ok)
        pool_finish(&p);
    for (int r = 1; r < size; r++) {
        wait_gently(&c.assign_req[r]);
        wait_gently(&c.stop_req[r]);
        wait_gently(&c.bye_req[r]);
    }
    free(c.owner);
    free(c.assign_req);
    free(c.stop_req);
    free(c.bye_req);
    free(c.assign_buf);
    free(c.finished);
}

/* ---- ranks > 0 ---- */

void dm_mpi_work(const dm_mpi_world *w, dm_mpi_job *job)
{
    const dm_suite *suite = job->suite;
    size_t n = suite->n_runs ? suite->n_runs : 1;
    dm_run_result *results = calloc(n, sizeof *results);
    size_t *ready = malloc(n * sizeof *ready);
    rank_pool p;
    dm_error e = { 0 };
    bool pool_ok = false;
    if (results != NULL && ready != NULL)
        pool_ok = pool_start(&p, suite, results, job->stop, job->jobs, &e);
    else
        dm_error_set(&e, DM_ENOMEM, "out of memory for the results of %zu runs", n);
    bool outstanding = false, no_more = false, failed_sent = false, stopped_sent = false;
    bool failed = !pool_ok;
    if (failed) {
        job->error = e;
        job->failed = true;
    }
    for (;;) {
        bool busy = false;
        size_t n_ready = 0;
        int want = 0, alive = 0;
        if (pool_ok) {
            pthread_mutex_lock(&p.lock);
            n_ready = p.n_done;
            memcpy(ready, p.done, n_ready * sizeof *ready);
            p.n_done = 0;
            want = p.waiting - (int)(p.q_tail - p.q_head);
            alive = p.alive;
            if (p.failed && !failed) {
                failed = true;
                job->error = p.error;
                job->failed = true;
            }
            pthread_mutex_unlock(&p.lock);
        }
        for (size_t k = 0; k < n_ready; k++) {
            size_t i = ready[k];
            unsigned char *buf = NULL;
            size_t size = 0;
            if (dm_result_pack(suite, i, &results[i], &buf, &size, &e) == DM_OK) {
                MPI_Send(buf, (int)size, MPI_BYTE, 0, TAG_RESULT, MPI_COMM_WORLD);
                job->done++;
            } else if (!failed) {
                failed = true;
                job->error = e;
                job->failed = true;
            }
            free(buf);
            dm_run_result_free(&results[i]);
            busy = true;
        }
        if (failed && !failed_sent) {
            MPI_Send(job->error.msg, (int)strlen(job->error.msg) + 1, MPI_CHAR, 0, TAG_FAILED,
                     MPI_COMM_WORLD);
            failed_sent = true;
            if (pool_ok) {
                pthread_mutex_lock(&p.lock);
                p.failed = true; /* no thread of this rank starts another run */
                pthread_mutex_unlock(&p.lock);
            }
        }
        if (*job->stop && *job->stop_signal != 0 && !stopped_sent) {
            int sig = (int)*job->stop_signal;
            MPI_Send(&sig, 1, MPI_INT, 0, TAG_STOPPED, MPI_COMM_WORLD);
            stopped_sent = true;
        }
        if (want > 0 && !outstanding && !no_more && !*job->stop && !failed) {
            int k = want > MAX_ASK ? MAX_ASK : want;
            MPI_Send(&k, 1, MPI_INT, 0, TAG_REQUEST, MPI_COMM_WORLD);
            outstanding = true;
        }
        int flag = 0;
        MPI_Status s;
        while (MPI_Iprobe(0, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &s) == MPI_SUCCESS && flag) {
            busy = true;
            if (s.MPI_TAG == TAG_ASSIGN) {
                uint64_t got[MAX_ASK];
                int count = 0;
                MPI_Get_count(&s, MPI_UINT64_T, &count);
                if (count < 0 || count > MAX_ASK) {
                    receive_and_drop(&s);
                    count = 0;
                } else {
                    MPI_Recv(got, count, MPI_UINT64_T, 0, TAG_ASSIGN, MPI_COMM_WORLD,
                             MPI_STATUS_IGNORE);
                }
                outstanding = false;
                if (count == 0)
                    no_more = true;
                if (pool_ok) {
                    pthread_mutex_lock(&p.lock);
                    for (int k = 0; k < count; k++)
                        if (got[k] < suite->n_runs && p.q_tail < n)
                            p.queue[p.q_tail++] = (size_t)got[k];
                    if (no_more)
                        p.no_more = true;
                    pthread_cond_broadcast(&p.wake);
                    pthread_mutex_unlock(&p.lock);
                }
            } else if (s.MPI_TAG == TAG_STOP) {
                MPI_Recv(NULL, 0, MPI_BYTE, 0, TAG_STOP, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
                *job->stop = 1;
            } else {
                receive_and_drop(&s);
            }
        }
        if (pool_ok && (*job->stop || failed)) {
            pthread_mutex_lock(&p.lock);
            pthread_cond_broadcast(&p.wake);
            pthread_mutex_unlock(&p.lock);
        }
        if (!pool_ok && !outstanding)
            alive = 0;
        /* every thread ended and its last results were sent above */
        if (alive == 0 && n_ready == 0 && !outstanding) {
            MPI_Send(NULL, 0, MPI_BYTE, 0, TAG_FINISHED, MPI_COMM_WORLD);
            break;
        }
        if (!busy)
            nap();
    }
    /* the last word is rank 0's: a STOP may still be on its way before BYE */
    for (;;) {
        int flag = 0;
        MPI_Status s;
        MPI_Iprobe(0, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &s);
        if (!flag) {
            nap();
            continue;
        }
        receive_and_drop(&s);
        if (s.MPI_TAG == TAG_BYE)
            break;
    }
    if (pool_ok)
        pool_finish(&p);
    if (results != NULL)
        for (size_t i = 0; i < n; i++)
            dm_run_result_free(&results[i]);
    free(results);
    free(ready);
}

#endif
