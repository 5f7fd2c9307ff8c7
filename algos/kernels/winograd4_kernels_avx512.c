/* The AVX-512 build of the F(4x4,3x3) transform loops (contract in
 * winograd4_kernels.h; compiled with AVX-512F by the *_avx512.c rule, used
 * only after cpa_wino4_kernels_select saw the CPU and OS have it).
 *
 * in_rows is the template (winograd4_kernels_body.h) compiled for 512-bit
 * vectors: contiguous, the compiler vectorises it.  The template's in_cols
 * and out_tiles do not vectorise well -- a tile's six input columns are
 * stride-4 reads and its 4x4 outputs stride-4 writes -- and took most of the
 * algorithm's time beside the GEMMs.  Here they run over 16 tiles at a time:
 * in_cols loads the 64 floats of 16 tiles as four vectors and deinterleaves
 * them with eight permutes into the vectors of columns 0..3 of the 16 tiles
 * (columns 4 and 5 are columns 0 and 1 shifted by one tile, one align each),
 * applies B^T lane-wise and stores each of the six rows of V contiguously;
 * out_tiles loads the 36 M vectors of 16 tiles (contiguous per point),
 * applies A^T on both sides lane-wise and interleaves each output row's four
 * columns back with eight permutes.  Remainders (< 16 tiles) go through the
 * template. */
#include <immintrin.h>

#include "algos/kernels/winograd4_kernels.h"

#define CPA_WINO4_K(name) wino4_zmm_##name
#define CPA_WINO4_SET wino4_zmm_template
#define CPA_WINO4_STORAGE static
#include "algos/kernels/winograd4_kernels_body.h"

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

static void wino4_avx512_in_cols(const float *restrict r, float *restrict v, int64_t vs,
                                 int64_t nt) {
    const __m512i ev = _mm512_setr_epi32(0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24, 26, 28, 30);
    const __m512i od = _mm512_setr_epi32(1, 3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29, 31);
    int64_t t = 0;
    for (; t + 16 <= nt; t += 16) {
        const float *e = r + 4 * t; /* reads e[0 .. 65]: within the 4 nt + 2 of the row */
        const __m512 a = _mm512_loadu_ps(e), b = _mm512_loadu_ps(e + 16);
        const __m512 c = _mm512_loadu_ps(e + 32), d = _mm512_loadu_ps(e + 48);
        const __m512 abe = _mm512_permutex2var_ps(a, ev, b), abo = _mm512_permutex2var_ps(a, od, b);
        const __m512 cde = _mm512_permutex2var_ps(c, ev, d), cdo = _mm512_permutex2var_ps(c, od, d);
        const __m512 d0 = _mm512_permutex2var_ps(abe, ev, cde); /* column 0 of tiles t..t+15 */
        const __m512 d2 = _mm512_permutex2var_ps(abe, od, cde);
        const __m512 d1 = _mm512_permutex2var_ps(abo, ev, cdo);
        const __m512 d3 = _mm512_permutex2var_ps(abo, od, cdo);
        /* column 4 of tile t is column 0 of tile t+1 (lane 15: e[64]); 5 likewise */
        const __m512 d4 = _mm512_castsi512_ps(_mm512_alignr_epi32(
            _mm512_castps_si512(_mm512_set1_ps(e[64])), _mm512_castps_si512(d0), 1));
        const __m512 d5 = _mm512_castsi512_ps(_mm512_alignr_epi32(
            _mm512_castps_si512(_mm512_set1_ps(e[65])), _mm512_castps_si512(d1), 1));
        __m512 o[6];
        WINO4_BT_ZMM(d0, d1, d2, d3, d4, d5, o);
        for (int j = 0; j < 6; j++) _mm512_storeu_ps(v + j * vs + t, o[j]);
    }
    if (t < nt) wino4_zmm_template.in_cols(r + 4 * t, v + t, vs, nt - t);
}

static void wino4_avx512_out_tiles(const float *restrict m, int64_t ms, float bias,
                                   float *restrict o, int64_t ldo, int64_t nt) {
    const __m512i lo = _mm512_setr_epi32(0, 16, 1, 17, 2, 18, 3, 19, 4, 20, 5, 21, 6, 22, 7, 23);
    const __m512i hi =
        _mm512_setr_epi32(8, 24, 9, 25, 10, 26, 11, 27, 12, 28, 13, 29, 14, 30, 15, 31);
    const __m512 b = _mm512_set1_ps(bias);
    int64_t t = 0;
    for (; t + 16 <= nt; t += 16) {
        __m512 u[6][4]; /* (M A) row by row: u[i][c], lanes = tiles */
        for (int i = 0; i < 6; i++) {
            __m512 row[6];
            for (int j = 0; j < 6; j++) row[j] = _mm512_loadu_ps(m + (6 * i + j) * ms + t);
            wino4_at_zmm(row, u[i]);
        }
        __m512 y[4][4]; /* y[rr][c] = (A^T M A)[rr][c] + bias */
        for (int c = 0; c < 4; c++) {
            const __m512 col[6] = {u[0][c], u[1][c], u[2][c], u[3][c], u[4][c], u[5][c]};
            __m512 a[4];
            wino4_at_zmm(col, a);
            for (int rr = 0; rr < 4; rr++) y[rr][c] = _mm512_add_ps(a[rr], b);
        }
        for (int rr = 0; rr < 4; rr++) { /* output row rr of the 16 tiles */
            /* interleave columns 0..3 back into 4 floats per tile */
            const __m512 x02l = _mm512_permutex2var_ps(y[rr][0], lo, y[rr][2]);
            const __m512 x02h = _mm512_permutex2var_ps(y[rr][0], hi, y[rr][2]);
            const __m512 x13l = _mm512_permutex2var_ps(y[rr][1], lo, y[rr][3]);
            const __m512 x13h = _mm512_permutex2var_ps(y[rr][1], hi, y[rr][3]);
            float *orow = o + rr * ldo + 4 * t;
            _mm512_storeu_ps(orow, _mm512_permutex2var_ps(x02l, lo, x13l));
            _mm512_storeu_ps(orow + 16, _mm512_permutex2var_ps(x02l, hi, x13l));
            _mm512_storeu_ps(orow + 32, _mm512_permutex2var_ps(x02h, lo, x13h));
            _mm512_storeu_ps(orow + 48, _mm512_permutex2var_ps(x02h, hi, x13h));
        }
    }
    if (t < nt) wino4_zmm_template.out_tiles(m + t, ms, bias, o + 4 * t, ldo, nt - t);
}

const cpa_wino4_kernels cpa_wino4_kernels_avx512 = {
    wino4_zmm_in_rows, /* the template's, vectorised by the compiler */
    wino4_avx512_in_cols,
    wino4_avx512_out_tiles,
};
