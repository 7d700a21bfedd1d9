#include <string.h>

#include "dm_hash.h"

uint64_t dm_hash_bytes(uint64_t h, const void *bytes, size_t n)
{
    const unsigned char *s = bytes;
    for (size_t i = 0; i < n; i++) {
        h ^= s[i];
        h *= UINT64_C(1099511628211);
    }
    return h;
}

uint64_t dm_hash_text(const char *text)
{
    return dm_hash_bytes(DM_HASH_START, text, strlen(text));
}
