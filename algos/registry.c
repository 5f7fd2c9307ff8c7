/* The registry: one static table of every algorithm.  Adding an algorithm is a
 * new file in algos/ that defines a cp_algo, one extern line in cpa.h and one
 * line here.  Order is the order of reports. */
#include <string.h>

#include "algos/core/cpa.h"

static const cp_algo *const registry[] = {
    &cpa_direct,
    &cpa_direct_flipidx,
    &cpa_im2col_gemm,
    &cpa_winograd_2x2_3x3,
    &cpa_blocked,
    &cpa_blocked_flipidx,
};

size_t cp_algo_count(void) { return sizeof registry / sizeof registry[0]; }

const cp_algo *cp_algo_at(size_t i) { return i < cp_algo_count() ? registry[i] : NULL; }

const cp_algo *cp_algo_find(const char *name) {
    if (!name) return NULL;
    for (size_t i = 0; i < cp_algo_count(); i++)
        if (strcmp(registry[i]->name, name) == 0) return registry[i];
    return NULL;
}
