/* Run-time choice of the F(4x4,3x3) transform loops from the CPU's features
 * (cpa_isa_resolve: cpuid and xgetbv, so AVX-512 only where the OS saves the
 * ZMM state). */
#include "algos/kernels/blocked_tile.h"
#include "algos/kernels/winograd4_kernels.h"

const cpa_wino4_kernels *cpa_wino4_kernels_select(int64_t isa) {
    const int level = cpa_isa_resolve(isa);
    return level == CPA_ISA_AVX512 ? &cpa_wino4_kernels_avx512
           : level == CPA_ISA_AVX2 ? &cpa_wino4_kernels_avx2
                                   : &cpa_wino4_kernels_ref;
}
