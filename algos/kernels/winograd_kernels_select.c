/* Run-time choice of the Winograd transform loops from the CPU's features. */
#include "algos/kernels/winograd_kernels.h"

const cpa_wino_kernels *cpa_wino_kernels_select(void) {
#if defined(__x86_64__) || defined(__i386__)
    if (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))
        return &cpa_wino_kernels_avx2;
#endif
    return &cpa_wino_kernels_ref;
}
