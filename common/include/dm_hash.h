/* dm_hash.h — the one 64-bit hash: FNV-1a (offset basis and prime of Fowler, Noll and
 * Vo; IETF draft-eastlake-fnv, common practice). For configuration texts and the bytes
 * of a loaded object; not for security. */
#ifndef DM_HASH_H
#define DM_HASH_H

#include <stddef.h>
#include <stdint.h>

/* Continues hash h over n bytes; start from DM_HASH_START. */
#define DM_HASH_START UINT64_C(14695981039346656037)
uint64_t dm_hash_bytes(uint64_t h, const void *bytes, size_t n);

/* The hash of a NUL-terminated text. */
uint64_t dm_hash_text(const char *text);

#endif
