/* Run-time choice of the blocked convolution's tile kernel from the CPU's
 * features (cpuid and xgetbv through loader/cpuid.c: the OS must save the ZMM
 * state too), so that a binary built for any x86-64 never executes an AVX2 or
 * AVX-512 instruction on a CPU without it. */
#include "algos/kernels/blocked_tile.h"

#include "loader/cpuid.h"

int cpa_isa_best(void) {
    cpl_cpu_id id;
    cpl_cpuid_read(&id);
    if (id.avx512f) return CPA_ISA_AVX512;
    if (id.avx2 && id.fma) return CPA_ISA_AVX2;
    return CPA_ISA_PORTABLE;
}

int cpa_isa_resolve(int64_t request) {
    const int best = cpa_isa_best(); /* a few cpuid leaves: once per run */
    if (request == CPA_ISA_BEST) return best;
    if (request <= CPA_ISA_PORTABLE) return CPA_ISA_PORTABLE;
    return request < best ? (int)request : best;
}

const char *cpa_isa_name(int level) {
    return level == CPA_ISA_AVX512 ? "avx512" : level == CPA_ISA_AVX2 ? "avx2" : "portable";
}

cpa_blocked_kernel cpa_blocked_tile_select(int64_t tile_isa) {
    const int isa = cpa_isa_resolve(tile_isa);
    if (isa == CPA_ISA_AVX512)
        return (cpa_blocked_kernel){cpa_blocked_tile_avx512_6x64, 16, 4, 0, 1, isa};
    if (isa == CPA_ISA_AVX2)
        return (cpa_blocked_kernel){cpa_blocked_tile_avx2_6x16, CPA_BLOCKED_NV, 2, 1, 0, isa};
    return (cpa_blocked_kernel){cpa_blocked_tile_ref_6x16, CPA_BLOCKED_NV, 2, 0, 1, isa};
}
