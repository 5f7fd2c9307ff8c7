/* Run-time choice of the F(4x4,3x3) transform loops from the CPU's features. */
#include "algos/kernels/cpu_features.h"
#include "algos/kernels/winograd4_kernels.h"

const cpa_wino4_kernels *cpa_wino4_kernels_select(void) {
    return cpa_cpu_avx2_fma() ? &cpa_wino4_kernels_avx2 : &cpa_wino4_kernels_ref;
}
