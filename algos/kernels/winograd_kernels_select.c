/* Run-time choice of the Winograd transform loops from the CPU's features. */
#include "algos/kernels/winograd_kernels.h"

#include "algos/kernels/blocked_tile.h"

const cpa_wino_kernels *cpa_wino_kernels_select(int64_t request) {
    switch (cpa_isa_resolve(request)) {
    case CPA_ISA_AVX512: return &cpa_wino_kernels_avx512;
    case CPA_ISA_AVX2: return &cpa_wino_kernels_avx2;
    default: return &cpa_wino_kernels_ref;
    }
}
