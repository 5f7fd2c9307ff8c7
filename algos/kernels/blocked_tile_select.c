/* Run-time choice of the blocked convolution's tile kernel from the CPU's
 * features (cpuid and xgetbv through loader/cpuid.c: the OS must save the ZMM
 * state too), so that a binary built for any x86-64 never executes an AVX2 or
 * AVX-512 instruction on a CPU without it. */
#include "algos/kernels/blocked_tile.h"

#include <stdatomic.h>

#include "loader/cpuid.h"

static int isa_detect(void) {
    cpl_cpu_id id;
    cpl_cpuid_read(&id);
    if (id.avx512f) return CPA_ISA_AVX512;
    if (id.avx2 && id.fma) return CPA_ISA_AVX2;
    return CPA_ISA_PORTABLE;
}

/* Read once: cpl_cpuid_read runs about ten cpuid leaves, and in a virtual
 * machine each one traps to the hypervisor (microseconds apiece), which a run
 * of a small layer would pay every time.  Every thread computes the same
 * value, so a relaxed atomic suffices. */
int cpa_isa_best(void) {
    static atomic_int cached = -1;
    int v = atomic_load_explicit(&cached, memory_order_relaxed);
    if (v < 0) {
        v = isa_detect();
        atomic_store_explicit(&cached, v, memory_order_relaxed);
    }
    return v;
}

int cpa_isa_resolve(int64_t request) {
    const int best = cpa_isa_best();
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
        return (cpa_blocked_kernel){cpa_blocked_tile_avx512_6x64, 16, 4, 0, 1, isa,
                                    cpa_cv_tile_avx512_64x7};
    if (isa == CPA_ISA_AVX2)
        return (cpa_blocked_kernel){cpa_blocked_tile_avx2_6x16, CPA_BLOCKED_NV, 2, 1, 0, isa, NULL};
    return (cpa_blocked_kernel){cpa_blocked_tile_ref_6x16, CPA_BLOCKED_NV, 2, 0, 1, isa, NULL};
}
