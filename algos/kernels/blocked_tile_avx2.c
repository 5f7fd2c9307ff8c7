/* AVX2 + FMA tile kernel of the blocked direct convolution: 6 output channels
 * x 2 segments of 8 output pixels = 12 YMM accumulators (contract in
 * blocked_tile.h; segments 2 and 3 are not read, keep masks are 2^n - 1); a
 * tile with an empty second segment runs a 6 x 8 loop.  Per input channel and tap: two unaligned 8-float input
 * loads, six weight broadcasts, twelve FMAs.  Built with -mavx2 -mfma; only
 * called after cpa_blocked_tile_select() saw both features. */
#include "algos/kernels/blocked_tile.h"

#if defined(__AVX2__) && defined(__FMA__)
#include <immintrin.h>

static inline __m256i lane_mask(int n) {
    return _mm256_cmpgt_epi32(_mm256_set1_epi32(n), _mm256_setr_epi32(0, 1, 2, 3, 4, 5, 6, 7));
}

/* Valid pixels of segment v: keep is 2^n - 1 for this kernel (blocked_tile.h). */
static inline int seg_n(const cpa_blocked_tile *t, int v) {
    return __builtin_popcount(t->keep[v]);
}

static inline __m256 load_start(const cpa_blocked_tile *t, int v, int kk, __m256i m) {
    if (kk >= t->nk || t->keep[v] == 0) return _mm256_setzero_ps();
    if (t->first) return t->bias ? _mm256_set1_ps(t->bias[kk]) : _mm256_setzero_ps();
    const float *p = t->y[v] + kk * t->y_ks;
    return seg_n(t, v) == CPA_BLOCKED_NV ? _mm256_loadu_ps(p) : _mm256_maskload_ps(p, m);
}

static inline void store_acc(const cpa_blocked_tile *t, int v, int kk, __m256i m, __m256 a) {
    if (kk >= t->nk || t->keep[v] == 0) return;
    float *p = t->y[v] + kk * t->y_ks;
    if (seg_n(t, v) == CPA_BLOCKED_NV)
        _mm256_storeu_ps(p, a);
    else
        _mm256_maskstore_ps(p, m, a);
}

/* A tile whose second segment is empty (the last, odd segment of a block):
 * 6 accumulators, half the FMAs of the full tile for the same result. */
static void tile_6x8(const cpa_blocked_tile *t) {
    const __m256i m0 = lane_mask(seg_n(t, 0));
    __m256 a0 = load_start(t, 0, 0, m0), a1 = load_start(t, 0, 1, m0);
    __m256 a2 = load_start(t, 0, 2, m0), a3 = load_start(t, 0, 3, m0);
    __m256 a4 = load_start(t, 0, 4, m0), a5 = load_start(t, 0, 5, m0);
    const float *x0 = t->x[0];
    const int64_t ntap = t->ntap, cs = t->x_cs, step = t->w_step;
    const int64_t *off = t->tap_off;
    for (int64_t c = 0; c < t->nc; c++, x0 += cs) {
        const float *w = t->w + c * ntap * CPA_BLOCKED_MR;
        for (int64_t i = 0; i < ntap; i++, w += step) {
            const __m256 v0 = _mm256_loadu_ps(x0 + off[i]);
            a0 = _mm256_fmadd_ps(v0, _mm256_broadcast_ss(w + 0), a0);
            a1 = _mm256_fmadd_ps(v0, _mm256_broadcast_ss(w + 1), a1);
            a2 = _mm256_fmadd_ps(v0, _mm256_broadcast_ss(w + 2), a2);
            a3 = _mm256_fmadd_ps(v0, _mm256_broadcast_ss(w + 3), a3);
            a4 = _mm256_fmadd_ps(v0, _mm256_broadcast_ss(w + 4), a4);
            a5 = _mm256_fmadd_ps(v0, _mm256_broadcast_ss(w + 5), a5);
        }
    }
    store_acc(t, 0, 0, m0, a0); store_acc(t, 0, 1, m0, a1); store_acc(t, 0, 2, m0, a2);
    store_acc(t, 0, 3, m0, a3); store_acc(t, 0, 4, m0, a4); store_acc(t, 0, 5, m0, a5);
}

void cpa_blocked_tile_avx2_6x16(const cpa_blocked_tile *t) {
    if (t->keep[1] == 0) {
        tile_6x8(t);
        return;
    }
    const __m256i m0 = lane_mask(seg_n(t, 0)), m1 = lane_mask(seg_n(t, 1));
    __m256 a00 = load_start(t, 0, 0, m0), a10 = load_start(t, 1, 0, m1);
    __m256 a01 = load_start(t, 0, 1, m0), a11 = load_start(t, 1, 1, m1);
    __m256 a02 = load_start(t, 0, 2, m0), a12 = load_start(t, 1, 2, m1);
    __m256 a03 = load_start(t, 0, 3, m0), a13 = load_start(t, 1, 3, m1);
    __m256 a04 = load_start(t, 0, 4, m0), a14 = load_start(t, 1, 4, m1);
    __m256 a05 = load_start(t, 0, 5, m0), a15 = load_start(t, 1, 5, m1);
    const float *x0 = t->x[0], *x1 = t->x[1];
    const int64_t ntap = t->ntap, cs = t->x_cs, step = t->w_step;
    const int64_t *off = t->tap_off;
    for (int64_t c = 0; c < t->nc; c++, x0 += cs, x1 += cs) {
        const float *w = t->w + c * ntap * CPA_BLOCKED_MR;
        for (int64_t i = 0; i < ntap; i++, w += step) {
            const __m256 v0 = _mm256_loadu_ps(x0 + off[i]);
            const __m256 v1 = _mm256_loadu_ps(x1 + off[i]);
            __m256 b;
            b = _mm256_broadcast_ss(w + 0);
            a00 = _mm256_fmadd_ps(v0, b, a00);
            a10 = _mm256_fmadd_ps(v1, b, a10);
            b = _mm256_broadcast_ss(w + 1);
            a01 = _mm256_fmadd_ps(v0, b, a01);
            a11 = _mm256_fmadd_ps(v1, b, a11);
            b = _mm256_broadcast_ss(w + 2);
            a02 = _mm256_fmadd_ps(v0, b, a02);
            a12 = _mm256_fmadd_ps(v1, b, a12);
            b = _mm256_broadcast_ss(w + 3);
            a03 = _mm256_fmadd_ps(v0, b, a03);
            a13 = _mm256_fmadd_ps(v1, b, a13);
            b = _mm256_broadcast_ss(w + 4);
            a04 = _mm256_fmadd_ps(v0, b, a04);
            a14 = _mm256_fmadd_ps(v1, b, a14);
            b = _mm256_broadcast_ss(w + 5);
            a05 = _mm256_fmadd_ps(v0, b, a05);
            a15 = _mm256_fmadd_ps(v1, b, a15);
        }
    }
    store_acc(t, 0, 0, m0, a00); store_acc(t, 1, 0, m1, a10);
    store_acc(t, 0, 1, m0, a01); store_acc(t, 1, 1, m1, a11);
    store_acc(t, 0, 2, m0, a02); store_acc(t, 1, 2, m1, a12);
    store_acc(t, 0, 3, m0, a03); store_acc(t, 1, 3, m1, a13);
    store_acc(t, 0, 4, m0, a04); store_acc(t, 1, 4, m1, a14);
    store_acc(t, 0, 5, m0, a05); store_acc(t, 1, 5, m1, a15);
}

#else
/* Not an x86 build with AVX2: keep the symbol so the selector links; it is
 * never chosen there. */
void cpa_blocked_tile_avx2_6x16(const cpa_blocked_tile *t) { cpa_blocked_tile_ref_6x16(t); }
#endif
