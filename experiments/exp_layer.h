/* What both measurement experiments set up the same way: one layer, one
 * algorithm, the machine, a pinned pool (at one thread too, as tune and bench
 * make it: it also holds OpenBLAS at one thread), and the layer's test
 * tensors.  Not part of the product. */
#ifndef CONVPICK_EXP_LAYER_H
#define CONVPICK_EXP_LAYER_H

#include "convpick/convpick.h"
#include "harness/machine/machine.h"
#include "harness/machine/pool.h"

typedef struct exp_layer {
    cp_shape s;
    const cp_algo *algo;
    int threads;
    cph_machine m;
    cp_cache_sizes caches;
    cph_pool *pool;
    cp_exec exec;          /* the pool's */
    float *x, *w, *bias;   /* the layer's tensors, uniform random */
} exp_layer;

/* Parses shape and algorithm names, detects the machine, makes the pool and
 * the tensors.  Returns 0, or the exit code (2 bad input, 1 failure) after
 * one line on stderr. */
int exp_layer_open(exp_layer *e, const char *shape, const char *algo, int threads);
void exp_layer_close(exp_layer *e);

#endif
