/* The AVX-512 FMA peak loop (compiled with -mavx512f by the *_avx512.c rule,
 * called only where cpuid and xgetbv say the CPU and the OS have AVX-512F).
 * A full-width core (Zen 5, Intel server cores with two 512-bit FMA ports)
 * issues two 512-bit FMAs per cycle with a latency of 4 cycles, so 8 chains
 * fill the pipes; 16 leave a margin and use half of the 32 ZMM registers
 * (common practice, no source).  On a core that splits 512-bit operations in
 * two (Zen 4) the loop runs at about the 256-bit rate: the ratio probe prints. */
#include "harness/machine/roofs.h"

#if defined(__AVX512F__)
#include <immintrin.h>

float cph_roof_fma_avx512(int64_t iters) {
    const __m512 a = _mm512_set1_ps(0.999999f), b = _mm512_set1_ps(1e-7f);
    __m512 x[16];
    for (int j = 0; j < 16; j++) x[j] = _mm512_set1_ps(1.0f + 0.1f * (float)j);
    for (int64_t i = 0; i < iters; i++) {
        x[0] = _mm512_fmadd_ps(x[0], a, b);
        x[1] = _mm512_fmadd_ps(x[1], a, b);
        x[2] = _mm512_fmadd_ps(x[2], a, b);
        x[3] = _mm512_fmadd_ps(x[3], a, b);
        x[4] = _mm512_fmadd_ps(x[4], a, b);
        x[5] = _mm512_fmadd_ps(x[5], a, b);
        x[6] = _mm512_fmadd_ps(x[6], a, b);
        x[7] = _mm512_fmadd_ps(x[7], a, b);
        x[8] = _mm512_fmadd_ps(x[8], a, b);
        x[9] = _mm512_fmadd_ps(x[9], a, b);
        x[10] = _mm512_fmadd_ps(x[10], a, b);
        x[11] = _mm512_fmadd_ps(x[11], a, b);
        x[12] = _mm512_fmadd_ps(x[12], a, b);
        x[13] = _mm512_fmadd_ps(x[13], a, b);
        x[14] = _mm512_fmadd_ps(x[14], a, b);
        x[15] = _mm512_fmadd_ps(x[15], a, b);
    }
    __m512 s = _mm512_setzero_ps();
    for (int j = 0; j < 16; j++) s = _mm512_add_ps(s, x[j]);
    return _mm512_reduce_add_ps(s);
}
#else
float cph_roof_fma_avx512(int64_t iters) { return cph_roof_fma_portable(iters); }
#endif
