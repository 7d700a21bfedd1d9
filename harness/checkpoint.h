/* checkpoint.h — the state of a stopped run, kept in the results file so that
 * `run --resume` continues the run where it stopped (checkpoint.c; the record's
 * layout is in results/README.md, "The checkpoint of an interrupted run").
 *
 * The runner (runner.c) fills it from its run context when a stop request ends a run
 * before its horizon, and takes it back to continue; the series and crossings so far
 * are the run's own datasets and are not repeated here. */
#ifndef DM_CHECKPOINT_H
#define DM_CHECKPOINT_H

#include <stdbool.h>
#include <stdint.h>

#include <hdf5.h>

#include "dm_line_fit.h"
#include "dm_monitor.h"
#include "harness.h"

/* 3: word 12 holds the times the run was continued; 2: the state takes 2 dof words
 * (1: 2 * 6). Layout 2 is still read (never continued). */
#define DM_CHECKPOINT_VERSION 3

typedef struct dm_checkpoint {
    uint64_t dof;
    uint64_t bucket;            /* the bucket to run next, or the one stopped inside */
    bool in_bucket;             /* stopped inside it: the monitor holds its extremes so far */
    uint64_t k;                 /* steps taken */
    double t, potential;        /* the state reached: time, V when known (else NaN) ... */
    double x[2 * DM_MAX_DOF];   /* ... and q then p */
    dm_step_monitor monitor;    /* the per-step monitor (fixed fields recomputed) */
    dm_line_fit phase_fit;      /* the crossings' phase errors against their numbers */
    uint64_t crossing_count;
    double last_phase;
    uint64_t crossing_stride;   /* the kept crossings' stride */
    dm_line_fit drift_fit;      /* dE at bucket ends against t / T */
    double max_abs;             /* largest |dE| over the recorded buckets */
    double max_invariant_error[DM_MAX_INVARIANTS];
    uint64_t series_n, crossings_n;  /* lengths of the run's datasets it goes with */
    double wall_seconds;        /* spent so far */
    double closest;             /* closest approach of two bodies so far (N-body; else
                                   unused), in the header's word 11 */
    uint64_t times_continued;   /* continued from a checkpoint so far (word 12) */
    uint64_t version;           /* the layout it was read in (written: the current) */
    uint64_t n_stepper;         /* words of the stepper's own record (method.h) */
    uint64_t stepper[DM_STEPPER_RECORD_MAX];
} dm_checkpoint;

/* The record as one dataset "checkpoint" (64-bit words, doubles by their bits) in a
 * run's group. Returns 0, or -1 when HDF5 failed. */
int dm_checkpoint_write(hid_t group, const dm_checkpoint *ck);

/* Reads the record of a run's group that holds one (1 when it has none, 0 when read),
 * checking it against the run and its datasets read back into *r; a record that does
 * not fit them, or any damage, is -1. *ck is malloc'd. */
int dm_checkpoint_read(hid_t group, const dm_run_spec *spec, const dm_run_result *r,
                       dm_checkpoint **ck);

#endif
