/* Run-time choice of the depthwise kernels from the CPU's features (through
 * cpa_isa_resolve, kernels/blocked_tile.h: cpuid and xgetbv), so that a binary
 * built for any x86-64 never executes AVX2 or AVX-512 on a CPU without it. */
#include <stddef.h>

#include "algos/kernels/blocked_tile.h"
#include "algos/kernels/depthwise_plane.h"
#include "algos/kernels/depthwise_row.h"

cpa_dw_kernels cpa_dw_kernels_select(int64_t isa) {
    const int level = cpa_isa_resolve(isa);
    if (level == CPA_ISA_AVX512)
        return (cpa_dw_kernels){cpa_dw_row_avx512, cpa_dw_fill_avx512, cpa_dw_plane_avx512, NULL,
                                level};
    if (level == CPA_ISA_AVX2)
        return (cpa_dw_kernels){cpa_dw_row_avx2, cpa_dw_fill_ref, cpa_dw_plane_avx2,
                                cpa_dw_plane_avx2_ok, level};
    return (cpa_dw_kernels){cpa_dw_row_ref, cpa_dw_fill_ref, NULL, NULL, CPA_ISA_PORTABLE};
}
