/* AVX2 + FMA row kernel of the depthwise convolution (contract in
 * depthwise_row.h).  Output row vectorised 8 floats wide, 32 outputs per step
 * in four independent accumulators.  For a 3x3 kernel (every depthwise layer
 * of MobileNet v1/v2) the nine taps are broadcast once per row and stay in
 * registers: 9 weights + 4 accumulators + 1 load = 14 of the 16 registers.
 * Other kernel sizes broadcast each tap per step (one L1 load per 4 FMAs).
 * The last partial vector is stored with a mask; reads follow the contract
 * (whole vectors, up to round_up(q, 8) floats). */
#include <immintrin.h>

#include "algos/kernels/depthwise_row.h"

/* Lanes j < n set, for the masked store of the last partial vector. */
static __m256i dw_mask(int64_t n) {
    const __m256i lane = _mm256_setr_epi32(0, 1, 2, 3, 4, 5, 6, 7);
    return _mm256_cmpgt_epi32(_mm256_set1_epi32((int)n), lane);
}

/* Stores the vector of outputs j .. j+7, masked to those below q. */
static void dw_store(float *y, int64_t j, int64_t q, __m256 a) {
    if (j + 8 <= q)
        _mm256_storeu_ps(y + j, a);
    else
        _mm256_maskstore_ps(y + j, dw_mask(q - j), a);
}

/* Stores 32 outputs from four vectors. */
static void dw_store32(float *y, __m256 a0, __m256 a1, __m256 a2, __m256 a3) {
    _mm256_storeu_ps(y, a0);
    _mm256_storeu_ps(y + 8, a1);
    _mm256_storeu_ps(y + 16, a2);
    _mm256_storeu_ps(y + 24, a3);
}

static void dw_row9(const cpa_dw_row *r) {
    const float *const *s = r->src;
    const __m256 w0 = _mm256_broadcast_ss(&r->w[0]), w1 = _mm256_broadcast_ss(&r->w[1]);
    const __m256 w2 = _mm256_broadcast_ss(&r->w[2]), w3 = _mm256_broadcast_ss(&r->w[3]);
    const __m256 w4 = _mm256_broadcast_ss(&r->w[4]), w5 = _mm256_broadcast_ss(&r->w[5]);
    const __m256 w6 = _mm256_broadcast_ss(&r->w[6]), w7 = _mm256_broadcast_ss(&r->w[7]);
    const __m256 w8 = _mm256_broadcast_ss(&r->w[8]);
    const __m256 b = _mm256_set1_ps(r->bias);
#define DW_TAPS9(acc, j)                                              \
    do {                                                              \
        acc = _mm256_fmadd_ps(w0, _mm256_loadu_ps(s[0] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w1, _mm256_loadu_ps(s[1] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w2, _mm256_loadu_ps(s[2] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w3, _mm256_loadu_ps(s[3] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w4, _mm256_loadu_ps(s[4] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w5, _mm256_loadu_ps(s[5] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w6, _mm256_loadu_ps(s[6] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w7, _mm256_loadu_ps(s[7] + (j)), acc);  \
        acc = _mm256_fmadd_ps(w8, _mm256_loadu_ps(s[8] + (j)), acc);  \
    } while (0)
    int64_t j = 0;
    for (; j + 32 <= r->q; j += 32) {
        __m256 a0 = b, a1 = b, a2 = b, a3 = b;
        DW_TAPS9(a0, j);
        DW_TAPS9(a1, j + 8);
        DW_TAPS9(a2, j + 16);
        DW_TAPS9(a3, j + 24);
        dw_store32(r->y + j, a0, a1, a2, a3);
    }
    for (; j < r->q; j += 8) {
        __m256 a = b;
        DW_TAPS9(a, j);
        dw_store(r->y, j, r->q, a);
    }
#undef DW_TAPS9
}

static void dw_row_any(const cpa_dw_row *r) {
    const __m256 b = _mm256_set1_ps(r->bias);
    int64_t j = 0;
    for (; j + 32 <= r->q; j += 32) {
        __m256 a0 = b, a1 = b, a2 = b, a3 = b;
        for (int t = 0; t < r->ntap; t++) {
            const __m256 wt = _mm256_broadcast_ss(&r->w[t]);
            const float *st = r->src[t] + j;
            a0 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st), a0);
            a1 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st + 8), a1);
            a2 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st + 16), a2);
            a3 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st + 24), a3);
        }
        dw_store32(r->y + j, a0, a1, a2, a3);
    }
    for (; j < r->q; j += 8) {
        __m256 a = b;
        for (int t = 0; t < r->ntap; t++)
            a = _mm256_fmadd_ps(_mm256_broadcast_ss(&r->w[t]), _mm256_loadu_ps(r->src[t] + j), a);
        dw_store(r->y, j, r->q, a);
    }
}

void cpa_dw_row_avx2(const cpa_dw_row *r) {
    if (r->ntap == 9)
        dw_row9(r);
    else
        dw_row_any(r);
}
