/* Run-time choice of the blocked convolution's tile kernel from the CPU's
 * features, so that a binary built on any x86-64 never executes an AVX2
 * instruction on a CPU without it. */
#include "blocked_ukr.h"

cpa_blocked_ukr_fn cpa_blocked_ukr_select(int64_t ukernel, int *full_reads) {
#if defined(__x86_64__) || defined(__i386__)
    if (ukernel == 0 && __builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma")) {
        *full_reads = 1;
        return cpa_blocked_ukr_avx2_6x16;
    }
#else
    (void)ukernel;
#endif
    *full_reads = 0;
    return cpa_blocked_ukr_ref_6x16;
}
