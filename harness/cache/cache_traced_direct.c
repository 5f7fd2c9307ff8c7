/* algos/direct.c compiled with traced loads and stores (see cache_traced.h). */
#include "harness/cache/cache_traced.h"
#include "harness/cache/cache_traced_hooks.h"

_Thread_local cph_cachesim *cph_trace_target;

void cph_trace_to(cph_cachesim *s) { cph_trace_target = s; }

#define cpa_direct cph_traced_direct
#define cpa_direct_flipidx cph_traced_direct_flipidx
#include "algos/direct.c"
