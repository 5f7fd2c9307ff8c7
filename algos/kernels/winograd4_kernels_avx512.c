/* The AVX-512 build of the F(4x4,3x3) transform loops (contract in
 * winograd4_kernels.h; compiled with AVX-512F by the *_avx512.c rule, used
 * only after cpa_wino4_kernels_select saw the CPU and OS have it).
 *
 * The template's loops (winograd4_kernels_body.h) do not vectorise well --
 * in_rows stays scalar, a tile's six input columns are stride-4 reads and
 * its 4x4 outputs stride-4 writes -- and took most of the algorithm's time
 * beside the GEMMs.  Here in_rows runs 16 columns a step, and in_cols and
 * out_tiles run over 16 tiles at a time:
 * in_cols loads the 64 floats of 16 tiles as four vectors and deinterleaves
 * them with eight permutes into the vectors of columns 0..3 of the 16 tiles
 * (columns 4 and 5 are columns 0 and 1 shifted by one tile, one align each),
 * applies B^T lane-wise and stores each of the six rows of V contiguously;
 * out_tiles loads the 36 M vectors of 16 tiles (contiguous per point),
 * applies A^T on both sides lane-wise and interleaves each output row's four
 * columns back with eight permutes.  A block of fewer than 16 tiles (a tile
 * row is usually one: 7 or 14 tiles) runs the same code with masked loads
 * and stores. */
#include <immintrin.h>

#include "algos/kernels/winograd4_kernels.h"


/* t0..t5 = B^T (d0..d5), lane-wise (the rows of B^T in the file header). */
#define WINO4_BT_ZMM(d0, d1, d2, d3, d4, d5, t)                                      \
    do {                                                                           \
        const __m512 four_ = _mm512_set1_ps(4.0f), five_ = _mm512_set1_ps(5.0f);   \
        const __m512 a_ = _mm512_fnmadd_ps(four_, d2, d4);                         \
        const __m512 b_ = _mm512_fnmadd_ps(four_, d1, d3);                         \
        const __m512 c_ = _mm512_sub_ps(d4, d2);                                   \
        const __m512 e_ = _mm512_add_ps(_mm512_sub_ps(d3, d1), _mm512_sub_ps(d3, d1)); \
        t[0] = _mm512_add_ps(_mm512_fnmadd_ps(five_, d2, _mm512_mul_ps(four_, d0)), d4); \
        t[1] = _mm512_add_ps(a_, b_);                                              \
        t[2] = _mm512_sub_ps(a_, b_);                                              \
        t[3] = _mm512_add_ps(c_, e_);                                              \
        t[4] = _mm512_sub_ps(c_, e_);                                              \
        t[5] = _mm512_add_ps(_mm512_fnmadd_ps(five_, d3, _mm512_mul_ps(four_, d1)), d5); \
    } while (0)

/* y0..y3 = A^T (m0..m5), lane-wise. */
static inline void wino4_at_zmm(const __m512 m[6], __m512 y[4]) {
    const __m512 p = _mm512_add_ps(m[1], m[2]), q = _mm512_sub_ps(m[1], m[2]);
    const __m512 r = _mm512_add_ps(m[3], m[4]), s = _mm512_sub_ps(m[3], m[4]);
    y[0] = _mm512_add_ps(_mm512_add_ps(m[0], p), r);
    y[1] = _mm512_fmadd_ps(_mm512_set1_ps(2.0f), s, q);
    y[2] = _mm512_fmadd_ps(_mm512_set1_ps(4.0f), r, p);
    y[3] = _mm512_add_ps(_mm512_fmadd_ps(_mm512_set1_ps(8.0f), s, q), m[5]);
}

/* Lanes [0, n), n clamped to [0, 16], branch free. */
static inline __mmask16 wino4_first(int64_t n) {
    const int64_t lo = n < 0 ? 0 : n;
    return (__mmask16)((1u << (unsigned)(lo > 16 ? 16 : lo)) - 1u);
}

/* V for tiles [0, n) of r (n <= 16): the row holds 4 n + 2 readable floats. */
static inline void wino4_in16(const float *restrict e, float *restrict v, int64_t vs, int64_t n) {
    const __m512i ev = _mm512_setr_epi32(0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24, 26, 28, 30);
    const __m512i od = _mm512_setr_epi32(1, 3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29, 31);
    const int64_t len = 4 * n + 2;
    const __m512 a = _mm512_maskz_loadu_ps(wino4_first(len), e);
    const __m512 b = _mm512_maskz_loadu_ps(wino4_first(len - 16), e + 16);
    const __m512 c = _mm512_maskz_loadu_ps(wino4_first(len - 32), e + 32);
    const __m512 d = _mm512_maskz_loadu_ps(wino4_first(len - 48), e + 48);
    const __m512 abe = _mm512_permutex2var_ps(a, ev, b), abo = _mm512_permutex2var_ps(a, od, b);
    const __m512 cde = _mm512_permutex2var_ps(c, ev, d), cdo = _mm512_permutex2var_ps(c, od, d);
    const __m512 d0 = _mm512_permutex2var_ps(abe, ev, cde); /* column 0 of the tiles */
    const __m512 d2 = _mm512_permutex2var_ps(abe, od, cde);
    const __m512 d1 = _mm512_permutex2var_ps(abo, ev, cdo);
    const __m512 d3 = _mm512_permutex2var_ps(abo, od, cdo);
    /* column 4 of tile t is column 0 of tile t+1; lane 15 needs e[64] (only
     * when n == 16: otherwise lane n of d0 already holds e[4n]); 5 likewise */
    const __m512 e64 = _mm512_maskz_loadu_ps(wino4_first(len - 64), e + 64);
    const __m512 d4 = _mm512_castsi512_ps(_mm512_alignr_epi32(
        _mm512_castps_si512(e64), _mm512_castps_si512(d0), 1));
    const __m512 d5 = _mm512_castsi512_ps(_mm512_alignr_epi32(
        _mm512_castps_si512(_mm512_permutexvar_ps(_mm512_set1_epi32(1), e64)),
        _mm512_castps_si512(d1), 1));
    __m512 o[6];
    WINO4_BT_ZMM(d0, d1, d2, d3, d4, d5, o);
    const __mmask16 keep = wino4_first(n);
    for (int j = 0; j < 6; j++) _mm512_mask_storeu_ps(v + j * vs, keep, o[j]);
}

/* B^T on six rows of len floats, in place, 16 columns a step (the template's
 * loop stays scalar: the compiler does not vectorise it). */
static void wino4_avx512_in_rows(float *restrict r, int64_t len) {
    for (int64_t u = 0; u < len; u += 16) {
        const __mmask16 k = wino4_first(len - u);
        float *c = r + u;
        const __m512 d0 = _mm512_maskz_loadu_ps(k, c), d1 = _mm512_maskz_loadu_ps(k, c + len);
        const __m512 d2 = _mm512_maskz_loadu_ps(k, c + 2 * len);
        const __m512 d3 = _mm512_maskz_loadu_ps(k, c + 3 * len);
        const __m512 d4 = _mm512_maskz_loadu_ps(k, c + 4 * len);
        const __m512 d5 = _mm512_maskz_loadu_ps(k, c + 5 * len);
        __m512 t[6];
        WINO4_BT_ZMM(d0, d1, d2, d3, d4, d5, t);
        for (int i = 0; i < 6; i++) _mm512_mask_storeu_ps(c + i * len, k, t[i]);
    }
}

/* Segments are one tile row (7 or 14 tiles on ResNet-50's 28x28 and 56x56
 * layers), so the partial block is the common case: masked, not a tail loop. */
static void wino4_avx512_in_cols(const float *restrict r, float *restrict v, int64_t vs,
                                 int64_t nt) {
    for (int64_t t = 0; t < nt; t += 16)
        wino4_in16(r + 4 * t, v + t, vs, nt - t < 16 ? nt - t : 16);
}

/* Y for tiles [0, n) (n <= 16). */
static inline void wino4_out16(const float *restrict m, int64_t ms, __m512 b, float *restrict o,
                               int64_t ldo, int64_t n) {
    const __m512i lo = _mm512_setr_epi32(0, 16, 1, 17, 2, 18, 3, 19, 4, 20, 5, 21, 6, 22, 7, 23);
    const __m512i hi =
        _mm512_setr_epi32(8, 24, 9, 25, 10, 26, 11, 27, 12, 28, 13, 29, 14, 30, 15, 31);
    const __mmask16 keep = wino4_first(n);
    __m512 u[6][4]; /* (M A) row by row: u[i][c], lanes = tiles */
    for (int i = 0; i < 6; i++) {
        __m512 row[6];
        for (int j = 0; j < 6; j++) row[j] = _mm512_maskz_loadu_ps(keep, m + (6 * i + j) * ms);
        wino4_at_zmm(row, u[i]);
    }
    __m512 y[4][4]; /* y[rr][c] = (A^T M A)[rr][c] + bias */
    for (int c = 0; c < 4; c++) {
        const __m512 col[6] = {u[0][c], u[1][c], u[2][c], u[3][c], u[4][c], u[5][c]};
        __m512 a[4];
        wino4_at_zmm(col, a);
        for (int rr = 0; rr < 4; rr++) y[rr][c] = _mm512_add_ps(a[rr], b);
    }
    for (int rr = 0; rr < 4; rr++) { /* interleave columns 0..3 back, 4 floats a tile */
        const __m512 x02l = _mm512_permutex2var_ps(y[rr][0], lo, y[rr][2]);
        const __m512 x02h = _mm512_permutex2var_ps(y[rr][0], hi, y[rr][2]);
        const __m512 x13l = _mm512_permutex2var_ps(y[rr][1], lo, y[rr][3]);
        const __m512 x13h = _mm512_permutex2var_ps(y[rr][1], hi, y[rr][3]);
        float *orow = o + rr * ldo;
        const int64_t len = 4 * n;
        _mm512_mask_storeu_ps(orow, wino4_first(len), _mm512_permutex2var_ps(x02l, lo, x13l));
        _mm512_mask_storeu_ps(orow + 16, wino4_first(len - 16),
                              _mm512_permutex2var_ps(x02l, hi, x13l));
        _mm512_mask_storeu_ps(orow + 32, wino4_first(len - 32),
                              _mm512_permutex2var_ps(x02h, lo, x13h));
        _mm512_mask_storeu_ps(orow + 48, wino4_first(len - 48),
                              _mm512_permutex2var_ps(x02h, hi, x13h));
    }
}

static void wino4_avx512_out_tiles(const float *restrict m, int64_t ms, float bias,
                                   float *restrict o, int64_t ldo, int64_t nt) {
    const __m512 b = _mm512_set1_ps(bias);
    for (int64_t t = 0; t < nt; t += 16)
        wino4_out16(m + t, ms, b, o + 4 * t, ldo, nt - t < 16 ? nt - t : 16);
}

const cpa_wino4_kernels cpa_wino4_kernels_avx512 = {
    wino4_avx512_in_rows,
    wino4_avx512_in_cols,
    wino4_avx512_out_tiles,
};
