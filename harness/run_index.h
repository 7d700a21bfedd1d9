/* run_index.h — a suite's runs found by their id in constant time: an open-addressing
 * table (linear probing) of the 64-bit hashes of the ids (dm_hash.h), for the suite
 * reader's check for twins and --resume's lookup of a file's runs among a suite of up to
 * DM_SUITE_MAX_RUNS runs. Two ids may share a hash: the caller compares the ids of the
 * runs it is given. */
#ifndef DM_RUN_INDEX_H
#define DM_RUN_INDEX_H

#include <stddef.h>
#include <stdint.h>

typedef struct dm_run_index {
    size_t mask;                 /* slots - 1 (slots a power of two, at least 2 n) */
    uint64_t *key;
    size_t *run;                 /* SIZE_MAX: an empty slot */
} dm_run_index;

/* Room for n runs. Returns 0, or -1 when out of memory (nothing allocated). */
int dm_run_index_init(dm_run_index *x, size_t n);
/* Adds run `run` under the hash `key` of its id (at most n runs in all). */
void dm_run_index_add(dm_run_index *x, uint64_t key, size_t run);
/* The runs added under `key`, one a call: *probe is 0 on the first call; SIZE_MAX when
 * no more are left. */
size_t dm_run_index_next(const dm_run_index *x, uint64_t key, size_t *probe);
void dm_run_index_free(dm_run_index *x);

#endif
