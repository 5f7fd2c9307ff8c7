/* AVX2 + FMA row kernel of the depthwise convolution (contract in
 * depthwise_row.h).  The output rows are cut into 8-float vectors (the last
 * of a row masked), and four vectors are computed at a time in independent
 * accumulators, so that short rows (Q = 7, 14, 28) still keep four FMA
 * chains in flight: the four may come from different rows.  For a 3x3 kernel
 * (every depthwise layer of MobileNet v1/v2) the nine taps are broadcast once
 * per call and stay in registers (9 weights + 4 accumulators + 1 load = 14 of
 * the 16 registers); other kernel sizes broadcast each tap per step (one L1
 * load per 4 FMAs).  Reads follow the contract: whole vectors. */
#include <immintrin.h>

#include "algos/kernels/depthwise_row.h"

/* One vector of output: source and output offsets, valid lanes (0: padding). */
typedef struct {
    int64_t s, y;
    int n;
} dw_vec;

/* Fills v[0..3] with the next four vectors from (row, col) on, advancing them;
 * positions past the last vector repeat it with n = 0. */
static void dw_next4(const cpa_dw_row *r, int64_t *row, int64_t *col, dw_vec v[4]) {
    int g = 0;
    for (; g < 4 && *row < r->nrows; g++) {
        v[g].s = *row * r->src_step + *col;
        v[g].y = *row * r->q + *col;
        v[g].n = r->q - *col < 8 ? (int)(r->q - *col) : 8;
        *col += 8;
        if (*col >= r->q) {
            *col = 0;
            ++*row;
        }
    }
    for (int k = g; k < 4; k++) {
        v[k] = v[g - 1];
        v[k].n = 0;
    }
}

static void dw_store(float *y, const dw_vec *v, __m256 a) {
    const __m256i lane = _mm256_setr_epi32(0, 1, 2, 3, 4, 5, 6, 7);
    if (v->n == 8)
        _mm256_storeu_ps(y + v->y, a);
    else if (v->n > 0)
        _mm256_maskstore_ps(y + v->y, _mm256_cmpgt_epi32(_mm256_set1_epi32(v->n), lane), a);
}

static void dw_store4(const cpa_dw_row *r, const dw_vec v[4], __m256 a0, __m256 a1, __m256 a2,
                      __m256 a3) {
    dw_store(r->y, &v[0], a0);
    dw_store(r->y, &v[1], a1);
    dw_store(r->y, &v[2], a2);
    dw_store(r->y, &v[3], a3);
}

static void dw_rows9(const cpa_dw_row *r) {
    const float *const *s = r->src;
    const __m256 w0 = _mm256_broadcast_ss(&r->w[0]), w1 = _mm256_broadcast_ss(&r->w[1]);
    const __m256 w2 = _mm256_broadcast_ss(&r->w[2]), w3 = _mm256_broadcast_ss(&r->w[3]);
    const __m256 w4 = _mm256_broadcast_ss(&r->w[4]), w5 = _mm256_broadcast_ss(&r->w[5]);
    const __m256 w6 = _mm256_broadcast_ss(&r->w[6]), w7 = _mm256_broadcast_ss(&r->w[7]);
    const __m256 w8 = _mm256_broadcast_ss(&r->w[8]);
    const __m256 b = _mm256_set1_ps(r->bias);
#define DW_TAP(wt, t)                                              \
    do {                                                           \
        const float *st = s[t];                                    \
        a0 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st + v[0].s), a0); \
        a1 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st + v[1].s), a1); \
        a2 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st + v[2].s), a2); \
        a3 = _mm256_fmadd_ps(wt, _mm256_loadu_ps(st + v[3].s), a3); \
    } while (0)
    int64_t row = 0, col = 0;
    while (row < r->nrows) {
        dw_vec v[4];
        dw_next4(r, &row, &col, v);
        __m256 a0 = b, a1 = b, a2 = b, a3 = b;
        DW_TAP(w0, 0); DW_TAP(w1, 1); DW_TAP(w2, 2);
        DW_TAP(w3, 3); DW_TAP(w4, 4); DW_TAP(w5, 5);
        DW_TAP(w6, 6); DW_TAP(w7, 7); DW_TAP(w8, 8);
        dw_store4(r, v, a0, a1, a2, a3);
    }
}

static void dw_rows_any(const cpa_dw_row *r) {
    const float *const *s = r->src;
    const __m256 b = _mm256_set1_ps(r->bias);
    int64_t row = 0, col = 0;
    while (row < r->nrows) {
        dw_vec v[4];
        dw_next4(r, &row, &col, v);
        __m256 a0 = b, a1 = b, a2 = b, a3 = b;
        for (int t = 0; t < r->ntap; t++) {
            const __m256 wt = _mm256_broadcast_ss(&r->w[t]);
            DW_TAP(wt, t);
        }
        dw_store4(r, v, a0, a1, a2, a3);
    }
#undef DW_TAP
}

void cpa_dw_row_avx2(const cpa_dw_row *r) {
    if (r->ntap == 9)
        dw_rows9(r);
    else
        dw_rows_any(r);
}
