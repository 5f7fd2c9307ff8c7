/* Run-time choice of the F(4x4,3x3) transform loops from the CPU's features. */
#include "algos/kernels/winograd4_kernels.h"

const cpa_wino4_kernels *cpa_wino4_kernels_select(void) {
#if defined(__x86_64__) || defined(__i386__)
    if (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))
        return &cpa_wino4_kernels_avx2;
#endif
    return &cpa_wino4_kernels_ref;
}
