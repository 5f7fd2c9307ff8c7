/* The AVX2 FMA peak loop.  Zen and recent Intel cores issue two 256-bit FMAs
 * per cycle with a latency of 4-5 cycles, so at least 8-10 independent chains
 * are needed to keep both pipes busy (common practice, no source); 12 leaves a
 * margin without spilling (16 ymm registers: 12 accumulators + 2 operands). */
#include <immintrin.h>

#include "harness/machine/roofs.h"

float cph_roof_fma_avx2(int64_t iters) {
    const __m256 a = _mm256_set1_ps(0.999999f), b = _mm256_set1_ps(1e-7f);
    __m256 x0 = _mm256_set1_ps(1.0f), x1 = _mm256_set1_ps(1.1f), x2 = _mm256_set1_ps(1.2f),
           x3 = _mm256_set1_ps(1.3f), x4 = _mm256_set1_ps(1.4f), x5 = _mm256_set1_ps(1.5f),
           x6 = _mm256_set1_ps(1.6f), x7 = _mm256_set1_ps(1.7f), x8 = _mm256_set1_ps(1.8f),
           x9 = _mm256_set1_ps(1.9f), x10 = _mm256_set1_ps(2.0f), x11 = _mm256_set1_ps(2.1f);
    for (int64_t i = 0; i < iters; i++) {
        x0 = _mm256_fmadd_ps(x0, a, b);
        x1 = _mm256_fmadd_ps(x1, a, b);
        x2 = _mm256_fmadd_ps(x2, a, b);
        x3 = _mm256_fmadd_ps(x3, a, b);
        x4 = _mm256_fmadd_ps(x4, a, b);
        x5 = _mm256_fmadd_ps(x5, a, b);
        x6 = _mm256_fmadd_ps(x6, a, b);
        x7 = _mm256_fmadd_ps(x7, a, b);
        x8 = _mm256_fmadd_ps(x8, a, b);
        x9 = _mm256_fmadd_ps(x9, a, b);
        x10 = _mm256_fmadd_ps(x10, a, b);
        x11 = _mm256_fmadd_ps(x11, a, b);
    }
    __m256 s = _mm256_add_ps(_mm256_add_ps(_mm256_add_ps(x0, x1), _mm256_add_ps(x2, x3)),
                             _mm256_add_ps(_mm256_add_ps(x4, x5), _mm256_add_ps(x6, x7)));
    s = _mm256_add_ps(s, _mm256_add_ps(_mm256_add_ps(x8, x9), _mm256_add_ps(x10, x11)));
    float lanes[8];
    _mm256_storeu_ps(lanes, s);
    float t = 0.0f;
    for (int i = 0; i < 8; i++) t += lanes[i];
    return t;
}
