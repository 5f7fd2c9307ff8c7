/* Run-time choice of the blocked convolution's tile kernel from the CPU's
 * features, so that a binary built on any x86-64 never executes an AVX2
 * instruction on a CPU without it. */
#include "algos/kernels/blocked_tile.h"

cpa_blocked_tile_fn cpa_blocked_tile_select(int64_t tile_isa, int *full_reads) {
#if defined(__x86_64__) || defined(__i386__)
    if (tile_isa == 0 && __builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma")) {
        *full_reads = 1;
        return cpa_blocked_tile_avx2_6x16;
    }
#else
    (void)tile_isa;
#endif
    *full_reads = 0;
    return cpa_blocked_tile_ref_6x16;
}
