/* algos/blocked.c with its portable tile kernel algos/kernels/blocked_tile_ref.c,
 * compiled with traced loads and stores (see cache_traced.h).  The kernel
 * selector is replaced by one that always returns the traced portable
 * kernel, so run() traces every tile. */
#include "harness/cache/cache_traced.h"
#include "harness/cache/cache_traced_hooks.h"

#define cpa_blocked cph_traced_blocked
#define cpa_blocked_flipidx cph_traced_blocked_flipidx
#define cpa_blocked_tile_select cph_traced_blocked_tile_select
#define cpa_blocked_tile_ref_6x16 cph_traced_blocked_tile_ref_6x16
#define cpa_cv_tile_ref_64x7 cph_traced_cv_tile_ref_64x7
/* The tile kernel first: its function-local enum would otherwise shadow
 * blocked.c's file-scope one. */
#include "algos/kernels/blocked_tile_ref.c"
#include "algos/blocked.c"

cpa_blocked_kernel cph_traced_blocked_tile_select(int64_t tile_isa) {
    (void)tile_isa;
    return (cpa_blocked_kernel){cph_traced_blocked_tile_ref_6x16, CPA_BLOCKED_NV, 2, 0, 1,
                                CPA_ISA_PORTABLE, NULL};
}
