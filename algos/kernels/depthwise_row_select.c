/* Run-time choice of the depthwise row kernel from the CPU's features, so that
 * a binary built for any x86-64 never executes AVX2 on a CPU without it. */
#include "algos/kernels/depthwise_row.h"

cpa_dw_row_fn cpa_dw_row_select(int64_t kernels) {
#if defined(__x86_64__) || defined(__i386__)
    if (kernels == 0 && __builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))
        return cpa_dw_row_avx2;
#else
    (void)kernels;
#endif
    return cpa_dw_row_ref;
}
