/* Run-time choice of the depthwise row kernel from the CPU's features, so that
 * a binary built for any x86-64 never executes AVX2 on a CPU without it. */
#include "algos/kernels/cpu_features.h"
#include "algos/kernels/depthwise_row.h"

cpa_dw_row_fn cpa_dw_row_select(int64_t kernels) {
    return kernels == 0 && cpa_cpu_avx2_fma() ? cpa_dw_row_avx2 : cpa_dw_row_ref;
}
