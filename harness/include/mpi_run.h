/* mpi_run.h — `driftmark run` spread over the processes (ranks) of an MPI job.
 *
 * Rank 0 reads and validates the suite (or the file being resumed), sends the suite
 * text to every rank, which validates it again, and then hands out run indices on
 * request, longest first, exactly in the order one process would take them, from the
 * same work queue as the --jobs threads (pool.h); an interrupted run read back by
 * --resume travels with its series and checkpoint and is continued where it lands. Each rank runs its runs on its own
 * --jobs threads; only its main thread talks MPI (MPI_THREAD_FUNNELED). A finished run travels back to rank 0 as a packed
 * dm_run_result (result_pack.h), is stored at its index and written at once to the one
 * results file by rank 0's writer (dm_results_writer_add, serialised with rank 0's own
 * threads' writes): the file is the one a single process writes. At a save point
 * (pool.c's saver) rank 0 asks every rank for snapshots of its running runs, which come
 * back packed the same way.
 *
 * Built without MPI (DM_HAVE_MPI undefined) every function here is a stand-in for a
 * job of one process, so the command line has one code path.
 */
#ifndef DM_MPI_RUN_H
#define DM_MPI_RUN_H

#include <signal.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "harness.h"

typedef struct dm_mpi_world {
    bool active;        /* MPI was started: the program runs under mpirun or srun */
    int rank, size;     /* 0 and 1 when not active */
    int local_size;     /* ranks on this machine (1 when not active) */
    int saved_stderr;   /* ranks > 0: stderr while it is silenced, or -1 */
} dm_mpi_world;

/* True when this build has MPI in it. */
bool dm_mpi_built(void);

/* Starts MPI when the environment says a launcher started us (OpenMPI's mpirun, a
 * PMI or PMIx launcher such as srun); otherwise leaves MPI alone and *w describes one
 * process. Ranks > 0 print nothing until dm_mpi_share_suite: every rank parses the
 * same command line, and rank 0 alone reports what is wrong with it. */
dm_status dm_mpi_begin(dm_mpi_world *w, dm_error *err);

/* Threads per rank when --jobs is not given: the cores this rank may use (its
 * affinity mask), and no more than the machine's cores shared by its local ranks. */
int dm_mpi_default_jobs(const dm_mpi_world *w, int single_process_jobs);

/* Every rank calls this once, after the command line was read. `code` is rank 0's
 * verdict on its setup (0: suite loaded and checked; else the exit status it already
 * reported). On 0, rank 0's suite text goes to every rank, which parses and validates
 * it into *suite; the returned status is the one every rank exits with (0: go on). A
 * rank > 0 that fails reports its own error line, and only the first such rank. */
int dm_mpi_share_suite(dm_mpi_world *w, int code, dm_suite *suite);

/* One rank's share of the suite and, on rank 0, the outcome of the whole job. */
typedef struct dm_mpi_job {
    const dm_suite *suite;
    dm_run_result *results;        /* rank 0: one slot per run of the suite */
    dm_results_writer *writer;     /* rank 0: where each result goes as it arrives (then
                                      its series freed); NULL: kept in results */
    const size_t *order;           /* rank 0: the runs to do, longest first */
    size_t n_order;
    int jobs;                      /* threads running runs in this rank */
    volatile int *stop;            /* set by a signal, or by rank 0's word to stop */
    volatile sig_atomic_t *stop_signal; /* the signal that stopped the job, 0: none */
    /* rank 0 on a terminal: redraws the progress line, as in dm_run_pool (called once
     * more at the end with current ""); NULL for none */
    dm_pool_progress progress;
    /* the outcome, on rank 0 for the whole job */
    bool failed;                   /* a run could not be run (error holds why) */
    dm_error error;
    size_t done;                   /* runs finished, every rank */
    size_t runs_received;          /* rank 0: results that came from other ranks */
    size_t checkpoints_sent;       /* rank 0: interrupted runs sent to other ranks with
                                      their checkpoints, to continue there */
    uint64_t bytes_received;       /* rank 0: their packed size */
} dm_mpi_job;

/* Rank 0: hands out job->order to every rank (itself included, on its own threads),
 * gathers every result into job->results, forwards a stop to every rank, and returns
 * when every rank has reported its last run. */
void dm_mpi_coordinate(const dm_mpi_world *w, dm_mpi_job *job);

/* Ranks > 0: runs what rank 0 hands out and sends each result back. */
void dm_mpi_work(const dm_mpi_world *w, dm_mpi_job *job);

/* Every rank calls this last with its exit status: all ranks agree on one status
 * (rank 0's when it is not 0, else the largest), MPI is finalized, and that status is
 * returned. Without MPI it returns `code`. */
int dm_mpi_end(dm_mpi_world *w, int code);

#endif
