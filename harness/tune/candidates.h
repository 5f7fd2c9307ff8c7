/* What the tuner tries for one layer: every selected algorithm that supports
 * it, with its defaults and a bounded list of its own parameter candidates. */
#ifndef CONVPICK_TUNE_CANDIDATES_H
#define CONVPICK_TUNE_CANDIDATES_H

#include <stddef.h>

#include "convpick/convpick.h"

typedef struct cph_planned {
    const cp_algo *algo;
    cp_params params;
} cph_planned;

/* Round-robin over algorithms: every algorithm's defaults first, then each
 * one's next candidate in turn (at most max_candidates per algorithm,
 * defaults included; repeats and out-of-range candidates dropped), so a short
 * budget still compares algorithms.  Writes at most max; returns how many.
 * *unsupported counts the algorithms that do not support (s, flip). */
size_t cph_tune_candidates(int max_candidates, const cp_shape *s, cp_flip flip,
                           const cp_algo *const *algos, size_t nalgos,
                           const cp_cache_sizes *caches, cph_planned *out, size_t max,
                           int *unsupported);

#endif
