/* pool.h — the one work queue of a suite's runs (pool.c), shared by the --jobs threads
 * of `run` and `bench` (dm_run_pool) and by the MPI ranks (mpi_run.c).
 *
 * The queue holds the runs to hand out in the order given (longest first), the next one
 * to hand out, the count of runs done, the first failure and the progress line. Threads
 * started on it (or a caller of dm_queue_serve) take the next run, run it, and store its
 * result at its own index of `results`, so the results do not depend on who ran what.
 * MPI rank 0 also takes runs from it for the other ranks (dm_queue_take) and marks them
 * done when their results arrive; a rank > 0 adds the runs rank 0 hands it
 * (dm_queue_add) and collects the finished ones to send back (dm_queue_look).
 *
 * Every field is guarded by `lock`; use the functions below. */
#ifndef DM_POOL_H
#define DM_POOL_H

#include <pthread.h>
#include <stdbool.h>
#include <stddef.h>

#include "harness.h"

typedef struct dm_work_queue {
    const dm_suite *suite;
    dm_run_result *results;        /* results[i] of suite->runs[i] */
    /* where each run finished here goes as soon as it finishes (its series then freed);
     * NULL: the results keep their series */
    dm_results_writer *writer;
    volatile int *stop;            /* set from outside: no run starts after it; may be NULL */
    dm_pool_progress progress;     /* NULL: none */
    pthread_mutex_t lock;
    pthread_cond_t wake;           /* a run was added, the queue closed, a stop or a failure */
    size_t *order;                 /* the runs to hand out, in order (capacity suite->n_runs) */
    size_t n_order;                /* runs added so far */
    size_t next;                   /* into order: the next run to hand out */
    bool open;                     /* more runs may still be added */
    size_t done;                   /* runs finished, here or elsewhere */
    size_t *finished;              /* runs finished here and not yet collected */
    size_t n_finished;
    int waiting;                   /* threads waiting for a run to be added */
    int alive;                     /* threads started by dm_queue_start and not yet ended */
    bool failed;                   /* a run could not be run: no more are handed out */
    dm_error error;                /* the first failure */
    double cost_total, cost_done;  /* estimated work, for the time left */
    double t0;                     /* dm_clock_seconds() at dm_queue_init */
    const char *current;           /* the run handed out last */
    size_t running[DM_POOL_MAX_JOBS]; /* the runs running on a thread here ... */
    size_t n_running;              /* ... (a list, not a flag a run: 10^5 runs are scanned
                                      at every start and end otherwise) */
    pthread_t ticker;              /* redraws the progress every second (with progress) */
    bool ticking;
    pthread_t threads[DM_POOL_MAX_JOBS];
    int n_threads;
    /* Save points (a writer with a save interval): a thread of its own raises
     * save_request, waits (a bounded time) for every run running here to answer with a
     * snapshot (dm_run_watch), and has the writer save the file with them. */
    unsigned char *where;          /* where[i]: DM_RUN_QUEUED, _HERE, _ELSEWHERE, _DONE */
    size_t n_elsewhere;            /* runs handed to other ranks and not back yet */
    unsigned save_request;         /* raised at each save point; runs read it (atomic) */
    dm_run_result **snaps;         /* the latest snapshot of each run running here, owned */
    unsigned *snap_request;        /* the request it answered */
    pthread_cond_t save_wake;      /* a snapshot came, a run ended, or the pool ends */
    pthread_t saver;
    bool saving;                   /* the saver thread runs */
} dm_work_queue;

/* Where a run of the queue is. */
enum { DM_RUN_QUEUED = 0, DM_RUN_HERE, DM_RUN_ELSEWHERE, DM_RUN_DONE };

/* How long a save point waits for the running runs' snapshots: a run polls every 2^16
 * fixed or 4096 adaptive steps, so milliseconds, but a run inside its Lyapunov pass or
 * a very slow step does not answer; it is saved as its last snapshot, or left out. */
#define DM_SAVE_WAIT_SECONDS 10.0

/* The least time between two save points, as a multiple of the last one's cost. */
#define DM_SAVE_SPACING 100.0

/* What the queue's owner needs to know between two looks. */
typedef struct dm_queue_state {
    int hungry;                    /* threads waiting for a run, less the runs queued */
    int alive;                     /* threads not yet ended */
    bool failed;
    dm_error error;                /* the first failure, when failed */
} dm_queue_state;

/* An empty, open queue for the runs of `suite`, their results going to `results` and,
 * when `writer` is not NULL, written to it as they finish (then their series freed). */
dm_status dm_queue_init(dm_work_queue *q, const dm_suite *suite, dm_run_result *results,
                        dm_results_writer *writer, volatile int *stop,
                        dm_pool_progress progress, dm_error *err);

/* Appends runs to hand out (indices into suite->runs; any out of range, or beyond one
 * of each run, are dropped), and wakes the waiting threads. */
void dm_queue_add(dm_work_queue *q, const size_t *runs, size_t n);

/* Nothing more will be added: threads end once the queue is empty. */
void dm_queue_close(dm_work_queue *q);

/* Starts `threads` threads serving the queue; returns how many started. */
int dm_queue_start(dm_work_queue *q, int threads);

/* Serves the queue on the calling thread until it is empty and closed, stopped or
 * failed. */
void dm_queue_serve(dm_work_queue *q);

/* Hands out up to k runs to run elsewhere (another rank); none once stopped or failed. */
size_t dm_queue_take(dm_work_queue *q, size_t k, size_t *out);

/* Run i, handed out by dm_queue_take, finished elsewhere and its result is stored. */
void dm_queue_mark_done(dm_work_queue *q, size_t i);

/* Frees the series of result i, written to the queue's writer (under the lock: a save
 * point may be reading the result). */
void dm_queue_drop_series(dm_work_queue *q, size_t i);

/* Save points across MPI ranks. At a rank > 0: enable keeps the snapshots of the runs
 * running here (before threads start), ask raises the request its runs answer, take
 * moves the snapshots kept since the last take into out[] and idx[] (room for
 * suite->n_runs; the caller owns them) and returns how many. At rank 0: put stores the
 * snapshot of run i, which runs elsewhere, as its latest (taking it), or frees it when
 * the run is no longer there. */
dm_status dm_queue_enable_snapshots(dm_work_queue *q, dm_error *err);
void dm_queue_ask_snapshots(dm_work_queue *q);
size_t dm_queue_take_snapshots(dm_work_queue *q, dm_run_result **out, size_t *idx);
void dm_queue_put_snapshot(dm_work_queue *q, size_t i, dm_run_result *copy);
/* The save request raised last (rank 0 forwards each to the other ranks). */
unsigned dm_queue_save_request(dm_work_queue *q);

/* Records a failure (the first one is kept) and hands out no more runs. */
void dm_queue_fail(dm_work_queue *q, const dm_error *err);

/* Wakes the waiting threads, after *stop was set. */
void dm_queue_wake(dm_work_queue *q);

/* Reads the state and, when `finished` is not NULL, moves the runs finished here since
 * the last look into it (room for suite->n_runs); returns how many. */
size_t dm_queue_look(dm_work_queue *q, dm_queue_state *state, size_t *finished);

/* Closes the queue, waits for its threads, reports the progress one last time (current
 * "") and frees it. Returns DM_OK, or the first failure's code with *err set to it. */
dm_status dm_queue_finish(dm_work_queue *q, size_t *done, dm_error *err);

#endif
