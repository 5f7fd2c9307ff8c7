/* CPU feature tests for the run-time kernel choices (cpu_features.h). */
#include "algos/kernels/cpu_features.h"

int cpa_cpu_avx2_fma(void) {
#if defined(__x86_64__) || defined(__i386__)
    return __builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma");
#else
    return 0;
#endif
}
