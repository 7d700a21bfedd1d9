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
 *   0 -> worker   RESUME   bytes: an interrupted run handed out next, packed with its
 *                          series so far and its checkpoint (result_pack.h), to continue
 *   0 -> worker   ASSIGN   uint64[]: run indices; none means "nothing more to run"
 *   worker -> 0   RESULT   bytes: one packed dm_run_result
 *   worker -> 0   FAILED   text: a run could not be run (out of memory, ...)
 *   worker -> 0   STOPPED  int: the worker was sent this signal
 *   0 -> worker   STOP     (empty) end the running runs at their next bucket
 *   worker -> 0   FINISHED (empty) every result of the worker was sent
 *   0 -> worker   BYE      (empty) the last message to the worker
 *   0 -> worker   SAVE     (empty) a save point: the running runs hand over snapshots
 *   worker -> 0   SNAPSHOT bytes: a running run's snapshot, packed as a RESULT is
 * A worker has at most one REQUEST unanswered and waits for its ASSIGN before saying
 * FINISHED, and keeps receiving until BYE, so no message is ever left unmatched. Rank 0
 * only ever blocks on a message that is already on its way, and sends with MPI_Isend,
 * so no pair of ranks can wait on each other. Waiting ranks poll with short sleeps
 * instead of a blocking call, which in OpenMPI would spin a core the runs need.
 *
 * The threads of every rank take their runs from a work queue (pool.h), the one the
 * --jobs threads of a single process use: at rank 0 the queue of the whole job, from
 * which rank 0's main thread also hands runs to the other ranks; at another rank the
 * runs rank 0 handed to it.
 */
#define _GNU_SOURCE /* sched_getaffinity */
#include "mpi_run.h"

#include <fcntl.h>
#include <limits.h>
#include <sched.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "pool.h"
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
    TAG_STOP, TAG_BYE, TAG_RESUME, TAG_SAVE, TAG_SNAPSHOT
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

/* Takes a message nobody wants off the line. */
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

/* ---- rank 0 ---- */

typedef struct coordinator {
    dm_mpi_job *job;
    dm_work_queue queue;           /* the runs, longest first, for every rank (pool.h) */
    int size;                      /* ranks in the job */
    int *owner;                    /* the rank > 0 each run was given to, else -1 */
    MPI_Request *assign_req, *stop_req, *bye_req, *save_req;
    unsigned save_forwarded;       /* the queue's save request last sent on as SAVE */
    uint64_t (*assign_buf)[MAX_ASK];
    bool *finished;                /* the rank said FINISHED */
    int n_finished;
    bool stop_sent;
    /* the interrupted runs sent with their checkpoints (RESUME), each buffer kept until
     * its send completed; room for every run of the order that has a checkpoint */
    MPI_Request *resume_req;
    unsigned char **resume_buf;
    size_t n_resume, resume_capacity;
} coordinator;

/* A failure of the job; one at another rank is named after it. */
static void fail(coordinator *c, dm_error *e, int rank)
{
    if (rank > 0)
        dm_error_prefix(e, "rank %d: ", rank);
    dm_queue_fail(&c->queue, e);
}

/* RESUME: run i, interrupted and read back with its checkpoint, goes to rank src with
 * its series so far and its checkpoint, to be continued there. Rank 0 keeps its copy
 * until the run comes back (it is written as it was if it never does: the job
 * stopped first). */
static void send_checkpoint(coordinator *c, int src, size_t i)
{
    dm_mpi_job *job = c->job;
    unsigned char *buf = NULL;
    size_t size = 0;
    dm_error e = { 0 };
    if (c->n_resume >= c->resume_capacity) {
        dm_error_set(&e, DM_EIO, "no room to send run %s with its checkpoint",
                     job->suite->runs[i].id);
        fail(c, &e, 0);
        return;
    }
    if (dm_result_pack(job->suite, i, &job->results[i], &buf, &size, &e) != DM_OK ||
        size > (size_t)INT_MAX) {
        if (e.code == DM_OK)
            dm_error_set(&e, DM_EIO, "run %s with its checkpoint is too large to send "
                         "(%zu bytes)", job->suite->runs[i].id, size);
        free(buf);
        fail(c, &e, 0);
        return;
    }
    c->resume_buf[c->n_resume] = buf;
    MPI_Isend(buf, (int)size, MPI_BYTE, src, TAG_RESUME, MPI_COMM_WORLD,
              &c->resume_req[c->n_resume]);
    c->n_resume++;
    job->checkpoints_sent++;
}

/* REQUEST: up to the runs asked for (at most MAX_ASK), none once the job stops or
 * failed, in one ASSIGN, after the RESUME of each interrupted one. */
static void on_request(coordinator *c, int src)
{
    int k = 0;
    MPI_Recv(&k, 1, MPI_INT, src, TAG_REQUEST, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    wait_gently(&c->assign_req[src]); /* the last ASSIGN, which src has received */
    size_t runs[MAX_ASK];
    size_t n = dm_queue_take(&c->queue, k < 1 ? 1 : k > MAX_ASK ? MAX_ASK : (size_t)k, runs);
    for (size_t j = 0; j < n; j++) {
        c->owner[runs[j]] = src;
        c->assign_buf[src][j] = runs[j];
        if (c->job->results[runs[j]].checkpoint != NULL)
            send_checkpoint(c, src, runs[j]);
    }
    MPI_Isend(c->assign_buf[src], (int)n, MPI_UINT64_T, src, TAG_ASSIGN, MPI_COMM_WORLD,
              &c->assign_req[src]);
}

/* RESULT: stored at its index, if it is one of a run given to that rank. */
static void on_result(coordinator *c, const MPI_Status *s)
{
    dm_mpi_job *job = c->job;
    int count = 0;
    MPI_Get_count(s, MPI_BYTE, &count);
    unsigned char *buf = malloc(count > 0 ? (size_t)count : 1);
    dm_error e = { 0 };
    if (buf == NULL) {
        receive_and_drop(s);
        dm_error_set(&e, DM_ENOMEM, "out of memory receiving a result of %d bytes", count);
        fail(c, &e, 0);
        return;
    }
    MPI_Recv(buf, count, MPI_BYTE, s->MPI_SOURCE, TAG_RESULT, MPI_COMM_WORLD,
             MPI_STATUS_IGNORE);
    size_t i = 0;
    dm_run_result r;
    if (dm_result_unpack(job->suite, buf, (size_t)count, &i, &r, &e) != DM_OK) {
        fail(c, &e, s->MPI_SOURCE);
    } else if (c->owner[i] != s->MPI_SOURCE ||
               (job->results[i].status != DM_RUN_NOT_RUN && job->results[i].checkpoint == NULL)) {
        dm_run_result_free(&r);
        dm_error_set(&e, DM_EIO, "sent a result of run %s it was not given",
                     job->suite->runs[i].id);
        fail(c, &e, s->MPI_SOURCE);
    } else {
        dm_run_result_free(&job->results[i]); /* the copy of a run continued there */
        job->results[i] = r;
        /* written at once, as a run of this rank's own threads is (pool.c) */
        if (job->writer != NULL) {
            if (dm_results_writer_add(job->writer, i, &job->results[i], &e) != DM_OK) {
                dm_error_prefix(&e, "%s: ", job->suite->runs[i].id);
                fail(c, &e, 0);
            } else {
                dm_queue_drop_series(&c->queue, i);
            }
        }
        dm_queue_mark_done(&c->queue, i);
        job->runs_received++;
        job->bytes_received += (uint64_t)count;
    }
    free(buf);
}

/* SNAPSHOT: a run of that rank, as it was at a save point, kept for the saver. */
static void on_snapshot(coordinator *c, const MPI_Status *s)
{
    int count = 0;
    MPI_Get_count(s, MPI_BYTE, &count);
    unsigned char *buf = count > 0 ? malloc((size_t)count) : NULL;
    dm_run_result *r = malloc(sizeof *r);
    if (buf == NULL || r == NULL) { /* a save point without it */
        free(buf);
        free(r);
        receive_and_drop(s);
        return;
    }
    MPI_Recv(buf, count, MPI_BYTE, s->MPI_SOURCE, TAG_SNAPSHOT, MPI_COMM_WORLD,
             MPI_STATUS_IGNORE);
    size_t i = 0;
    dm_error e = { 0 };
    if (dm_result_unpack(c->job->suite, buf, (size_t)count, &i, r, &e) != DM_OK) {
        fail(c, &e, s->MPI_SOURCE);
        free(r);
    } else if (c->owner[i] != s->MPI_SOURCE || r->status != DM_RUN_INTERRUPTED) {
        dm_run_result_free(r);
        free(r);
        dm_error_set(&e, DM_EIO, "sent a snapshot of run %s it was not running",
                     c->job->suite->runs[i].id);
        fail(c, &e, s->MPI_SOURCE);
    } else if (r->checkpoint == NULL) { /* taken without memory for one: of no use */
        dm_run_result_free(r);
        free(r);
    } else {
        dm_queue_put_snapshot(&c->queue, i, r); /* dropped if its result came first */
    }
    free(buf);
}

/* FAILED: the reason a run of that rank could not be run. */
static void on_failed(coordinator *c, const MPI_Status *s)
{
    dm_error e = { .code = DM_EIO };
    int count = 0;
    MPI_Get_count(s, MPI_CHAR, &count);
    if (count > 0 && count <= (int)sizeof e.msg) {
        MPI_Recv(e.msg, count, MPI_CHAR, s->MPI_SOURCE, TAG_FAILED, MPI_COMM_WORLD,
                 MPI_STATUS_IGNORE);
        e.msg[sizeof e.msg - 1] = '\0';
    } else {
        receive_and_drop(s);
        snprintf(e.msg, sizeof e.msg, "a run failed (no reason received)");
    }
    fail(c, &e, s->MPI_SOURCE);
}

/* STOPPED: that rank was sent a signal; the whole job stops. */
static void on_stopped(coordinator *c, int src)
{
    int sig = 0;
    MPI_Recv(&sig, 1, MPI_INT, src, TAG_STOPPED, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    if (*c->job->stop_signal == 0)
        *c->job->stop_signal = sig;
    *c->job->stop = 1;
}

/* FINISHED: that rank sent every result; BYE is its last message. */
static void on_finished(coordinator *c, int src)
{
    MPI_Recv(NULL, 0, MPI_BYTE, src, TAG_FINISHED, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    if (!c->finished[src]) {
        c->finished[src] = true;
        c->n_finished++;
        MPI_Isend(NULL, 0, MPI_BYTE, src, TAG_BYE, MPI_COMM_WORLD, &c->bye_req[src]);
    }
}

/* Answers every message already here; true when there was one. */
static bool serve(coordinator *c)
{
    bool busy = false;
    int flag = 0;
    MPI_Status s;
    while (MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &s) == MPI_SUCCESS &&
           flag) {
        busy = true;
        int src = s.MPI_SOURCE;
        if (src <= 0 || src >= c->size) {
            receive_and_drop(&s);
            continue;
        }
        switch (s.MPI_TAG) {
        case TAG_REQUEST: on_request(c, src); break;
        case TAG_RESULT: on_result(c, &s); break;
        case TAG_FAILED: on_failed(c, &s); break;
        case TAG_STOPPED: on_stopped(c, src); break;
        case TAG_FINISHED: on_finished(c, src); break;
        case TAG_SNAPSHOT: on_snapshot(c, &s); break;
        default: receive_and_drop(&s); break;
        }
    }
    return busy;
}

/* Once the job stops (a signal here or at another rank), tells every rank still working. */
static void forward_stop(coordinator *c)
{
    if (!*c->job->stop || c->stop_sent)
        return;
    for (int r = 1; r < c->size; r++)
        if (!c->finished[r])
            MPI_Isend(NULL, 0, MPI_BYTE, r, TAG_STOP, MPI_COMM_WORLD, &c->stop_req[r]);
    c->stop_sent = true;
}

/* A save point raised by the saver (pool.c) goes on to every rank still running. */
static void forward_save(coordinator *c)
{
    unsigned want = dm_queue_save_request(&c->queue);
    if (want == c->save_forwarded)
        return;
    c->save_forwarded = want;
    for (int r = 1; r < c->size; r++)
        if (!c->finished[r]) {
            wait_gently(&c->save_req[r]); /* the last SAVE went long ago */
            MPI_Isend(NULL, 0, MPI_BYTE, r, TAG_SAVE, MPI_COMM_WORLD, &c->save_req[r]);
        }
}

static void coordinator_free(coordinator *c)
{
    for (size_t j = 0; j < c->n_resume; j++) {
        wait_gently(&c->resume_req[j]);
        free(c->resume_buf[j]);
    }
    free(c->resume_req);
    free(c->resume_buf);
    free(c->owner);
    free(c->assign_req);
    free(c->stop_req);
    free(c->bye_req);
    free(c->save_req);
    free(c->assign_buf);
    free(c->finished);
}

/* The state of every rank, and the queue of job->order with rank 0's threads on it. A
 * failure to start a thread fails the job but still answers the other ranks; out of
 * memory for the state, which the answers need, ends the MPI job. */
static void coordinator_start(coordinator *c, const dm_mpi_world *w, dm_mpi_job *job)
{
    size_t n = job->suite->n_runs ? job->suite->n_runs : 1, size = (size_t)w->size;
    *c = (coordinator){ .job = job, .size = w->size };
    c->owner = malloc(n * sizeof *c->owner);
    c->assign_req = malloc(size * sizeof *c->assign_req);
    c->stop_req = malloc(size * sizeof *c->stop_req);
    c->bye_req = malloc(size * sizeof *c->bye_req);
    c->save_req = malloc(size * sizeof *c->save_req);
    c->assign_buf = malloc(size * sizeof *c->assign_buf);
    c->finished = calloc(size, sizeof *c->finished);
    for (size_t j = 0; j < job->n_order; j++)
        c->resume_capacity += job->results[job->order[j]].checkpoint != NULL;
    c->resume_req = malloc((c->resume_capacity + 1) * sizeof *c->resume_req);
    c->resume_buf = malloc((c->resume_capacity + 1) * sizeof *c->resume_buf);
    dm_error e = { 0 };
    if (c->owner == NULL || c->assign_req == NULL || c->stop_req == NULL ||
        c->bye_req == NULL || c->save_req == NULL || c->assign_buf == NULL || c->finished == NULL ||
        c->resume_req == NULL || c->resume_buf == NULL) {
        dm_error_set(&e, DM_ENOMEM, "out of memory for the state of %d ranks", w->size);
    } else if (dm_queue_init(&c->queue, job->suite, job->results, job->writer, job->stop,
                             job->progress,
                             &e) == DM_OK) {
        for (size_t i = 0; i < n; i++)
            c->owner[i] = -1;
        for (int r = 0; r < w->size; r++)
            c->assign_req[r] = c->stop_req[r] = c->bye_req[r] = c->save_req[r] =
                MPI_REQUEST_NULL;
        dm_queue_add(&c->queue, job->order, job->n_order);
        dm_queue_close(&c->queue);
        if (dm_queue_start(&c->queue, job->jobs) == 0) {
            dm_error_set(&e, DM_ENOMEM, "cannot start a thread to run the suite");
            fail(c, &e, 0);
        }
        return;
    }
    fprintf(stderr, "driftmark: run: %s\n", e.msg);
    MPI_Abort(MPI_COMM_WORLD, 1);
}

void dm_mpi_coordinate(const dm_mpi_world *w, dm_mpi_job *job)
{
    /* 1. the queue of runs, longest first, with rank 0's own threads taking from it */
    coordinator c;
    coordinator_start(&c, w, job);
    /* 2. hand out runs and gather results until every thread here has ended and every
     *    other rank has said FINISHED (the progress line is the queue's) */
    for (;;) {
        bool busy = serve(&c);
        forward_stop(&c);
        forward_save(&c);
        dm_queue_state state;
        dm_queue_look(&c.queue, &state, NULL);
        if (state.alive == 0 && c.n_finished == c.size - 1)
            break;
        if (!busy)
            nap();
    }
    /* 3. the outcome, once the last messages to the other ranks are delivered */
    job->failed = dm_queue_finish(&c.queue, &job->done, &job->error) != DM_OK;
    for (int r = 1; r < c.size; r++) {
        wait_gently(&c.assign_req[r]);
        wait_gently(&c.stop_req[r]);
        wait_gently(&c.bye_req[r]);
        wait_gently(&c.save_req[r]);
    }
    coordinator_free(&c);
}

/* ---- ranks > 0 ---- */

typedef struct worker {
    dm_mpi_job *job;
    dm_work_queue queue;           /* the runs rank 0 gave this rank (pool.h) */
    bool have_queue;
    dm_run_result *results;        /* one slot per run of the suite, freed once sent */
    size_t *ready;                 /* runs finished and not yet sent */
    dm_run_result **snaps;         /* snapshots taken for a save point, not yet sent ... */
    size_t *snap_idx;              /* ... and their runs */
    bool outstanding;              /* a REQUEST waits for its ASSIGN */
    bool no_more;                  /* rank 0 has nothing more to give */
    bool failed, failed_sent, stopped_sent;
} worker;

/* The first failure of this rank: no thread of it starts another run. */
static void worker_fail(worker *k, const dm_error *e)
{
    if (k->failed)
        return;
    k->failed = true;
    k->job->error = *e;
    k->job->failed = true;
    if (k->have_queue)
        dm_queue_fail(&k->queue, e);
}

static void worker_start(worker *k, dm_mpi_job *job)
{
    *k = (worker){ .job = job };
    size_t n = job->suite->n_runs ? job->suite->n_runs : 1;
    k->results = calloc(n, sizeof *k->results);
    k->ready = malloc(n * sizeof *k->ready);
    k->snaps = malloc(n * sizeof *k->snaps);
    k->snap_idx = malloc(n * sizeof *k->snap_idx);
    dm_error e = { 0 };
    if (k->results == NULL || k->ready == NULL || k->snaps == NULL || k->snap_idx == NULL) {
        dm_error_set(&e, DM_ENOMEM, "out of memory for the results of %zu runs", n);
        worker_fail(k, &e);
        return;
    }
    if (dm_queue_init(&k->queue, job->suite, k->results, NULL, job->stop, NULL, &e) != DM_OK) {
        worker_fail(k, &e);
        return;
    }
    k->have_queue = true;
    if (dm_queue_enable_snapshots(&k->queue, &e) != DM_OK) { /* before any thread runs */
        worker_fail(k, &e);
        return;
    }
    if (dm_queue_start(&k->queue, job->jobs) == 0) {
        dm_error_set(&e, DM_ENOMEM, "cannot start a thread to run the suite");
        worker_fail(k, &e);
    }
}

/* Packs and sends each finished run, then frees it; true when there was one. */
static bool send_results(worker *k, size_t n_ready)
{
    for (size_t j = 0; j < n_ready; j++) {
        size_t i = k->ready[j];
        unsigned char *buf = NULL;
        size_t size = 0;
        dm_error e = { 0 };
        if (dm_result_pack(k->job->suite, i, &k->results[i], &buf, &size, &e) == DM_OK) {
            MPI_Send(buf, (int)size, MPI_BYTE, 0, TAG_RESULT, MPI_COMM_WORLD);
            k->job->done++;
        } else {
            worker_fail(k, &e);
        }
        free(buf);
        dm_run_result_free(&k->results[i]);
    }
    return n_ready > 0;
}

/* Packs and sends each snapshot taken for a save point (before the results of the same
 * look, so rank 0 never gets a run's snapshot after its result but drops it if so). */
static bool send_snapshots(worker *k, size_t n)
{
    for (size_t j = 0; j < n; j++) {
        unsigned char *buf = NULL;
        size_t size = 0;
        dm_error e = { 0 };
        if (dm_result_pack(k->job->suite, k->snap_idx[j], k->snaps[j], &buf, &size, &e) ==
            DM_OK)
            MPI_Send(buf, (int)size, MPI_BYTE, 0, TAG_SNAPSHOT, MPI_COMM_WORLD);
        free(buf); /* a snapshot that cannot be packed is only missing from a save point */
        dm_run_result_free(k->snaps[j]);
        free(k->snaps[j]);
    }
    return n > 0;
}

/* Tells rank 0, once each, that this rank failed or was sent a signal. */
static void report(worker *k)
{
    dm_mpi_job *job = k->job;
    if (k->failed && !k->failed_sent) {
        MPI_Send(job->error.msg, (int)strlen(job->error.msg) + 1, MPI_CHAR, 0, TAG_FAILED,
                 MPI_COMM_WORLD);
        k->failed_sent = true;
    }
    if (*job->stop && *job->stop_signal != 0 && !k->stopped_sent) {
        int sig = (int)*job->stop_signal;
        MPI_Send(&sig, 1, MPI_INT, 0, TAG_STOPPED, MPI_COMM_WORLD);
        k->stopped_sent = true;
    }
}

/* Asks for runs for the threads that wait, one REQUEST at a time. */
static void ask(worker *k, int hungry)
{
    if (hungry <= 0 || k->outstanding || k->no_more || *k->job->stop || k->failed)
        return;
    int n = hungry > MAX_ASK ? MAX_ASK : hungry;
    MPI_Send(&n, 1, MPI_INT, 0, TAG_REQUEST, MPI_COMM_WORLD);
    k->outstanding = true;
}

/* ASSIGN: the runs go to the queue; none means nothing more will come. */
static void on_assign(worker *k, const MPI_Status *s)
{
    uint64_t got[MAX_ASK];
    int count = 0;
    MPI_Get_count(s, MPI_UINT64_T, &count);
    if (count < 0 || count > MAX_ASK) {
        receive_and_drop(s);
        count = 0;
    } else {
        MPI_Recv(got, count, MPI_UINT64_T, 0, TAG_ASSIGN, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    }
    k->outstanding = false;
    k->no_more = count == 0;
    if (!k->have_queue)
        return;
    size_t runs[MAX_ASK], n = 0;
    for (int j = 0; j < count; j++)
        if (got[j] < k->job->suite->n_runs)
            runs[n++] = (size_t)got[j];
    dm_queue_add(&k->queue, runs, n);
    if (k->no_more)
        dm_queue_close(&k->queue);
}

/* RESUME: an interrupted run with its series and checkpoint, continued by this rank's
 * threads (pool.c) when its ASSIGN, which follows, adds it to the queue. */
static void on_resume(worker *k, const MPI_Status *s)
{
    int count = 0;
    MPI_Get_count(s, MPI_BYTE, &count);
    unsigned char *buf = count > 0 ? malloc((size_t)count) : NULL;
    dm_error e = { 0 };
    if (buf == NULL) {
        receive_and_drop(s);
        dm_error_set(&e, DM_ENOMEM, "out of memory receiving a checkpoint of %d bytes", count);
        worker_fail(k, &e);
        return;
    }
    MPI_Recv(buf, count, MPI_BYTE, 0, TAG_RESUME, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    size_t i = 0;
    dm_run_result r;
    if (dm_result_unpack(k->job->suite, buf, (size_t)count, &i, &r, &e) != DM_OK) {
        worker_fail(k, &e);
    } else if (k->results == NULL || k->results[i].status != DM_RUN_NOT_RUN ||
               r.checkpoint == NULL) {
        dm_run_result_free(&r);
        dm_error_set(&e, DM_EIO, "was sent run %s to continue, without a checkpoint or twice",
                     k->job->suite->runs[i].id);
        worker_fail(k, &e);
    } else {
        k->results[i] = r;
    }
    free(buf);
}

/* Takes every message of rank 0 already here; true when there was one. */
static bool receive(worker *k)
{
    bool busy = false;
    int flag = 0;
    MPI_Status s;
    while (MPI_Iprobe(0, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &s) == MPI_SUCCESS && flag) {
        busy = true;
        if (s.MPI_TAG == TAG_ASSIGN) {
            on_assign(k, &s);
        } else if (s.MPI_TAG == TAG_RESUME) {
            on_resume(k, &s);
        } else if (s.MPI_TAG == TAG_STOP) {
            MPI_Recv(NULL, 0, MPI_BYTE, 0, TAG_STOP, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
            *k->job->stop = 1;
        } else if (s.MPI_TAG == TAG_SAVE) {
            MPI_Recv(NULL, 0, MPI_BYTE, 0, TAG_SAVE, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
            if (k->have_queue)
                dm_queue_ask_snapshots(&k->queue);
        } else {
            receive_and_drop(&s);
        }
    }
    return busy;
}

/* The last word is rank 0's: a STOP may still be on its way before BYE. */
static void wait_for_bye(void)
{
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
            return;
    }
}

void dm_mpi_work(const dm_mpi_world *w, dm_mpi_job *job)
{
    (void)w;
    /* 1. a slot for each result and the queue rank 0 fills, with this rank's threads */
    worker k;
    worker_start(&k, job);
    /* 2. until every thread has ended and every result is sent: send what finished,
     *    report a failure or a signal, ask for runs for the threads that wait, take in
     *    what rank 0 sent */
    for (;;) {
        dm_queue_state state = { 0 };
        size_t n_snaps = k.have_queue ? dm_queue_take_snapshots(&k.queue, k.snaps, k.snap_idx)
                                      : 0;
        size_t n_ready = k.have_queue ? dm_queue_look(&k.queue, &state, k.ready) : 0;
        if (state.failed)
            worker_fail(&k, &state.error);
        bool busy = send_snapshots(&k, n_snaps);
        busy |= send_results(&k, n_ready);
        report(&k);
        ask(&k, state.hungry);
        busy |= receive(&k);
        if (k.have_queue && *job->stop)
            dm_queue_wake(&k.queue); /* the waiting threads see the stop */
        if (state.alive == 0 && n_ready == 0 && !k.outstanding) {
            MPI_Send(NULL, 0, MPI_BYTE, 0, TAG_FINISHED, MPI_COMM_WORLD);
            break;
        }
        if (!busy)
            nap();
    }
    /* 3. wait for BYE, then free */
    wait_for_bye();
    if (k.have_queue)
        dm_queue_finish(&k.queue, NULL, NULL);
    if (k.results != NULL)
        for (size_t i = 0; i < job->suite->n_runs; i++)
            dm_run_result_free(&k.results[i]);
    free(k.results);
    free(k.ready);
    free(k.snaps);
    free(k.snap_idx);
}

#endif
