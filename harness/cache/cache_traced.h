/* The algorithms of the cache study compiled a second time with every load
 * and store of their kernels reported to a cache simulator.
 *
 * cache_traced_direct.c includes algos/direct.c (the loop template
 * algos/direct_loops.h, both loop orders, flipped and not) and
 * cache_traced_blocked.c includes algos/blocked.c with its portable tile
 * kernel algos/kernels/blocked_tile_ref.c, each with CPA_LD / CPA_ST defined to call
 * cph_sim_access() and the algorithm symbols renamed, so the trace is the
 * one those sources produce, not a model of them.  The blocked copy always
 * runs the portable tile kernel (whatever its tile_isa parameter says): the
 * AVX2 kernel has no hooks.  Not traced: blocked's zero-padding copy of the
 * input (memset/memcpy in its loops) and the tap table it writes, both
 * identical in every variant.
 *
 * Traces are source-level: each access the C source names counts, whether
 * or not the optimiser would keep the value in a register. */
#ifndef CONVPICK_CACHE_TRACED_H
#define CONVPICK_CACHE_TRACED_H

#include "harness/cache/cachesim.h"
#include "convpick/convpick.h"

extern const cp_algo cph_traced_direct;
extern const cp_algo cph_traced_direct_flipidx;
extern const cp_algo cph_traced_blocked;
extern const cp_algo cph_traced_blocked_flipidx;

/* Directs the accesses of traced kernels run on this thread to s (NULL:
 * stop tracing; traced kernels then run untraced).  Traced algorithms must
 * run serially (exec NULL) so that every access lands on this thread. */
void cph_trace_to(cph_cachesim *s);

#endif
