/* run_index.c — runs by the hash of their id (run_index.h). */
#include "run_index.h"

#include <stdlib.h>

int dm_run_index_init(dm_run_index *x, size_t n)
{
    size_t slots = 16;
    while (slots < 2 * n)
        slots *= 2;
    x->mask = slots - 1;
    x->key = malloc(slots * sizeof *x->key);
    x->run = malloc(slots * sizeof *x->run);
    if (x->key == NULL || x->run == NULL) {
        dm_run_index_free(x);
        return -1;
    }
    for (size_t i = 0; i < slots; i++)
        x->run[i] = SIZE_MAX;
    return 0;
}

void dm_run_index_add(dm_run_index *x, uint64_t key, size_t run)
{
    size_t i = (size_t)key & x->mask;
    while (x->run[i] != SIZE_MAX)
        i = (i + 1) & x->mask;
    x->key[i] = key;
    x->run[i] = run;
}

size_t dm_run_index_next(const dm_run_index *x, uint64_t key, size_t *probe)
{
    for (;;) {
        size_t i = ((size_t)key + (*probe)++) & x->mask;
        if (x->run[i] == SIZE_MAX)
            return SIZE_MAX;
        if (x->key[i] == key)
            return x->run[i];
    }
}

void dm_run_index_free(dm_run_index *x)
{
    free(x->key);
    free(x->run);
    x->key = NULL;
    x->run = NULL;
}
