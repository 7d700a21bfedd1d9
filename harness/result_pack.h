/* result_pack.h — one run's result as a flat byte buffer and back.
 *
 * Lets a result computed in one process (an MPI rank) be written by another exactly as
 * if it had been computed there: every double travels as its 8 bytes, so the datasets
 * and summary rows written from an unpacked result are bit-identical to those written
 * from the original.
 *
 * The buffer is in the host's byte order (ranks of one job run one binary on one kind
 * of machine); a marker in the header makes a buffer from another byte order, another
 * layout version or a truncated transfer an error instead of garbage.
 */
#ifndef DM_RESULT_PACK_H
#define DM_RESULT_PACK_H

#include <stddef.h>

#include "harness.h"

/* Packs results `r` of run `index` of `suite` into a new buffer (*buf, malloc'd,
 * *size bytes). The run's configuration hash travels along and is checked on unpack. */
dm_status dm_result_pack(const dm_suite *suite, size_t index, const dm_run_result *r,
                         unsigned char **buf, size_t *size, dm_error *err);

/* Reads a buffer made by dm_result_pack back into *r (zeroed first; allocates its
 * series as the runner does; free with dm_run_result_free) and the run's index into
 * *index. Refuses a buffer that is truncated, has bytes left over, names a run outside
 * `suite` or with another configuration hash, or holds more samples or crossings than
 * that run's spec allows. */
dm_status dm_result_unpack(const dm_suite *suite, const unsigned char *buf, size_t size,
                           size_t *index, dm_run_result *r, dm_error *err);

#endif
