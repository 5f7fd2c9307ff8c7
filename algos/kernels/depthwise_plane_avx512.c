/* AVX-512F in-place plane kernels of the depthwise convolution (contract and
 * the two forms in depthwise_plane.h).
 *
 * FLAT: blocks of four output vectors, so four independent FMA chains are in
 * flight; the lane masks come from the plan (one kmov load each), so a 7x7
 * plane costs 4 vectors x 9 taps of masked loads and FMAs plus 4 stores, with
 * no copy and no per-lane arithmetic.  3x3 kernels keep the nine weights in
 * registers.
 *
 * ROWS: a vector whose taps all read inside the image (the interior of a
 * row) uses full-lane loads, a border vector loads its S column masks from
 * the plan.  Input rows outside the image read the caller's zero row, so the
 * tap loop never branches.  Three kernels:
 *  - 3x3 stride 2x2 without dilation (dwp_s2): four output rows at a time,
 *    the stride-2 columns deinterleaved in registers;
 *  - other 3x3 shapes with row dilation 1 and stride_h 1 or 2 but not both
 *    strides 2 (dwp_block4): four output rows at a time sharing their input
 *    rows' loads;
 *  - everything else (dwp_rows): one output row at a time.
 * The last two compute under stride_w 2 the stride-1 result at the virtual
 * columns and keep the even lanes: two vectors give 16 outputs through one
 * two-source permute. */
#include <immintrin.h>

#include "algos/kernels/depthwise_plane.h"

/* Lanes [0, n), n clamped to [0, 16], branch free. */
static inline __mmask16 dwp_first(int64_t n) {
    const int64_t lo = n < 0 ? 0 : n;
    const unsigned k = (unsigned)(lo > 16 ? 16 : lo);
    return (__mmask16)((1u << k) - 1u);
}

static inline __attribute__((always_inline)) void dwp_flat(const cpa_dw_plane *a, int k9) {
    const cpa_dw_plan *pl = a->plan;
    const int ntap = k9 ? 9 : (int)(pl->r * pl->s);
    __m512 wr[CPA_DWP_FLAT_TAPS];
    for (int t = 0; t < ntap; t++) wr[t] = _mm512_set1_ps(a->w[t]);
    const __m512 b = _mm512_set1_ps(a->bias);
    const float *x = a->x;
    float *y = a->y;
    int v = 0;
    for (; v + 4 <= pl->nv; v += 4) {
        __m512 a0 = b, a1 = b, a2 = b, a3 = b;
        for (int t = 0; t < ntap; t++) {
            const float *s = x + pl->off[t] + 16 * v;
            const uint16_t *m = &pl->mask[t][v];
            a0 = _mm512_fmadd_ps(wr[t], _mm512_maskz_loadu_ps(m[0], s), a0);
            a1 = _mm512_fmadd_ps(wr[t], _mm512_maskz_loadu_ps(m[1], s + 16), a1);
            a2 = _mm512_fmadd_ps(wr[t], _mm512_maskz_loadu_ps(m[2], s + 32), a2);
            a3 = _mm512_fmadd_ps(wr[t], _mm512_maskz_loadu_ps(m[3], s + 48), a3);
        }
        _mm512_mask_storeu_ps(y + 16 * v, pl->smask[v], a0);
        _mm512_mask_storeu_ps(y + 16 * v + 16, pl->smask[v + 1], a1);
        _mm512_mask_storeu_ps(y + 16 * v + 32, pl->smask[v + 2], a2);
        _mm512_mask_storeu_ps(y + 16 * v + 48, pl->smask[v + 3], a3);
    }
    for (; v < pl->nv; v++) {
        __m512 a0 = b;
        for (int t = 0; t < ntap; t++)
            a0 = _mm512_fmadd_ps(wr[t], _mm512_maskz_loadu_ps(pl->mask[t][v],
                                                              x + pl->off[t] + 16 * v), a0);
        _mm512_mask_storeu_ps(y + 16 * v, pl->smask[v], a0);
    }
}

/* One vector of virtual columns u0 .. u0+15 of the current output row;
 * rows[r] points at input column 0 - pl of tap row r (or of the zero row). */
static inline __attribute__((always_inline)) __m512
dwp_vec(const cpa_dw_plane *a, const float *const *rows, const __m512 *w9, int k33, int64_t R,
        int64_t S, int64_t u0, __m512 b) {
    const cpa_dw_plan *pl = a->plan;
    const int64_t dw = pl->dw;
    __m512 acc = b;
    if (u0 >= pl->pl && u0 + 16 <= pl->w + pl->pl - (S - 1) * dw) { /* interior */
        for (int64_t r = 0; r < R; r++)
            for (int64_t c = 0; c < S; c++) {
                const __m512 wt = k33 ? w9[r * 3 + c] : _mm512_set1_ps(a->w[r * S + c]);
                acc = _mm512_fmadd_ps(wt, _mm512_loadu_ps(rows[r] + u0 + c * dw), acc);
            }
        return acc;
    }
    const uint16_t *km = pl->cmask[u0 / 16];
    for (int64_t r = 0; r < R; r++)
        for (int64_t c = 0; c < S; c++) {
            const __m512 wt = k33 ? w9[r * 3 + c] : _mm512_set1_ps(a->w[r * S + c]);
            acc = _mm512_fmadd_ps(wt, _mm512_maskz_loadu_ps(km[c], rows[r] + u0 + c * dw), acc);
        }
    return acc;
}

static inline __attribute__((always_inline)) void dwp_rows(const cpa_dw_plane *a, int k33,
                                                           int sw2) {
    const cpa_dw_plan *pl = a->plan;
    const int64_t R = k33 ? 3 : pl->r, S = k33 ? 3 : pl->s, Q = pl->q;
    __m512 w9[9];
    if (k33)
        for (int t = 0; t < 9; t++) w9[t] = _mm512_set1_ps(a->w[t]);
    const __m512 b = _mm512_set1_ps(a->bias);
    const __m512i even = _mm512_setr_epi32(0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24, 26,
                                           28, 30);
    const float *rows[256]; /* R <= R*S <= 256 (supports()) */
    for (int64_t p = 0; p < pl->p; p++) {
        const int64_t ih0 = p * pl->sh - pl->pt;
        for (int64_t r = 0; r < R; r++) {
            const int64_t ih = ih0 + r * pl->dh;
            rows[r] = (ih >= 0 && ih < pl->h ? a->x + ih * pl->w : a->zero) - pl->pl;
        }
        float *yr = a->y + p * Q;
        if (!sw2) {
            for (int64_t u0 = 0; u0 < Q; u0 += 16)
                _mm512_mask_storeu_ps(yr + u0, dwp_first(Q - u0),
                                      dwp_vec(a, rows, w9, k33, R, S, u0, b));
        } else {
            for (int64_t u0 = 0; u0 < 2 * Q; u0 += 32) {
                const __m512 lo = dwp_vec(a, rows, w9, k33, R, S, u0, b);
                const __m512 hi = u0 + 16 < 2 * Q ? dwp_vec(a, rows, w9, k33, R, S, u0 + 16, b) : b;
                _mm512_mask_storeu_ps(yr + u0 / 2, dwp_first(Q - u0 / 2),
                                      _mm512_permutex2var_ps(lo, even, hi));
            }
        }
    }
}

/* 3x3 with row dilation 1, stride_h 1 or 2, stride_w 1 or 2: four output
 * rows at a time.  The 3 sh + 3 input rows they read (6 under stride 1, 9
 * under stride 2) are each loaded once per vector of virtual columns and tap
 * column and feed every output row they are a tap of: under stride 1 a
 * vector costs 18 loads for 36 FMAs, under stride 2 27 loads for 36.  The
 * four rows are four independent FMA chains (eight under stride_w 2, whose
 * two vectors of virtual columns give 16 outputs through one permute), so
 * the nine-FMA chain's latency no longer sets the pace of a short row.
 * Input rows no stored output row reads, or outside the image, are the zero
 * row; rows past the last output row are computed and not stored. */
static inline __attribute__((always_inline)) void dwp_block4(const cpa_dw_plane *a, int sh,
                                                             int sw2) {
    const cpa_dw_plan *pl = a->plan;
    const int64_t Q = pl->q, dw = pl->dw, U = sw2 ? 2 * Q : Q; /* virtual columns */
    const int nin = 3 * sh + 3, nv = sw2 ? 2 : 1;
    __m512 w9[9];
    for (int t = 0; t < 9; t++) w9[t] = _mm512_set1_ps(a->w[t]);
    const __m512 b = _mm512_set1_ps(a->bias);
    const __m512i even = _mm512_setr_epi32(0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24, 26,
                                           28, 30);
    for (int64_t p0 = 0; p0 < pl->p; p0 += 4) {
        const float *rows[9];
        cpa_dw_block_rows(a, p0, sh, nin, rows);
        for (int64_t u0 = 0; u0 < U; u0 += 16 * nv) {
            __mmask16 m[2][3];
            for (int v = 0; v < nv; v++) {
                const int64_t u = u0 + 16 * v;
                const int live = u < U, interior = u >= pl->pl && u + 16 <= pl->w + pl->pl - 2 * dw;
                for (int c = 0; c < 3; c++)
                    m[v][c] = !live ? 0 : interior ? 0xffff : pl->cmask[u / 16][c];
            }
            __m512 acc[2][4];
            for (int v = 0; v < nv; v++)
                for (int o = 0; o < 4; o++) acc[v][o] = b;
#pragma GCC unroll 9
            for (int i = 0; i < nin; i++) {
                const float *s = rows[i] + u0;
#pragma GCC unroll 2
                for (int v = 0; v < nv; v++) {
                    const __m512 l0 = _mm512_maskz_loadu_ps(m[v][0], s + 16 * v);
                    const __m512 l1 = _mm512_maskz_loadu_ps(m[v][1], s + 16 * v + dw);
                    const __m512 l2 = _mm512_maskz_loadu_ps(m[v][2], s + 16 * v + 2 * dw);
#pragma GCC unroll 4
                    for (int o = 0; o < 4; o++) {
                        const int r = i - o * sh;
                        if (r < 0 || r > 2) continue;
                        acc[v][o] = _mm512_fmadd_ps(w9[3 * r], l0, acc[v][o]);
                        acc[v][o] = _mm512_fmadd_ps(w9[3 * r + 1], l1, acc[v][o]);
                        acc[v][o] = _mm512_fmadd_ps(w9[3 * r + 2], l2, acc[v][o]);
                    }
                }
            }
            const int64_t q0 = sw2 ? u0 / 2 : u0;
            const __mmask16 st = dwp_first(Q - q0);
            for (int o = 0; o < 4; o++) {
                if (p0 + o >= pl->p) break;
                const __m512 out =
                    sw2 ? _mm512_permutex2var_ps(acc[0][o], even, acc[1][o]) : acc[0][o];
                _mm512_mask_storeu_ps(a->y + (p0 + o) * Q + q0, st, out);
            }
        }
    }
}

/* 3x3, stride 2x2, dilation 1: four output rows at a time from the nine
 * input rows they read, 16 outputs (a chunk) at a time, the stride-2
 * columns deinterleaved in registers.  Chunk k of an input row reads
 * columns b .. b + 32 (b = 32 k - pl) as two 16-float loads and one masked
 * lane; two permutes split them into the even columns b + 2 j (tap column
 * 0) and the odd ones b + 2 j + 1 (tap column 1), and a one-lane shift of
 * the even ones brings in column b + 32 for tap column 2.  So no odd column
 * is computed and dropped (the virtual-column form's twice the FMAs), and
 * an input row costs three loads per 16 outputs instead of six.  Measured
 * on one plane in L1 (results/algos/README.md) it ran 1.5x to 2x faster
 * than the virtual-column form on the 14x14 to 112x112 planes; two chunks
 * at a time (eight chains instead of four) were no faster. */
static inline __attribute__((always_inline)) void
dwp_s2_chunk(const cpa_dw_plane *a, const float *const *rows, int64_t p0, int64_t k,
             const __m512 *w9, __m512 b) {
    const cpa_dw_plan *pl = a->plan;
    const __m512i ev = _mm512_setr_epi32(0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 20, 22, 24, 26, 28,
                                         30),
                  od = _mm512_setr_epi32(1, 3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29,
                                         31);
    const uint16_t *m = pl->dmask[k];
    __m512 acc[4] = {b, b, b, b};
#pragma GCC unroll 9
    for (int i = 0; i < 9; i++) {
        const float *s = rows[i] + 32 * k;
        const __m512 lo = _mm512_maskz_loadu_ps(m[0], s), hi = _mm512_maskz_loadu_ps(m[1], s + 16),
                     nx = _mm512_maskz_loadu_ps(m[2], s + 32);
        const __m512 d0 = _mm512_permutex2var_ps(lo, ev, hi),
                     d1 = _mm512_permutex2var_ps(lo, od, hi),
                     d2 = _mm512_castsi512_ps(_mm512_alignr_epi32(_mm512_castps_si512(nx),
                                                                  _mm512_castps_si512(d0), 1));
#pragma GCC unroll 4
        for (int o = 0; o < 4; o++) {
            const int r = i - 2 * o;
            if (r < 0 || r > 2) continue;
            acc[o] = _mm512_fmadd_ps(w9[3 * r], d0, acc[o]);
            acc[o] = _mm512_fmadd_ps(w9[3 * r + 1], d1, acc[o]);
            acc[o] = _mm512_fmadd_ps(w9[3 * r + 2], d2, acc[o]);
        }
    }
    const int64_t q0 = 16 * k;
    const __mmask16 st = dwp_first(pl->q - q0);
    for (int o = 0; o < 4; o++)
        if (p0 + o < pl->p) _mm512_mask_storeu_ps(a->y + (p0 + o) * pl->q + q0, st, acc[o]);
}

static void dwp_s2(const cpa_dw_plane *a) {
    const cpa_dw_plan *pl = a->plan;
    const int64_t nk = (pl->q + 15) / 16;
    __m512 w9[9];
    for (int t = 0; t < 9; t++) w9[t] = _mm512_set1_ps(a->w[t]);
    const __m512 b = _mm512_set1_ps(a->bias);
    for (int64_t p0 = 0; p0 < pl->p; p0 += 4) {
        const float *rows[9];
        cpa_dw_block_rows(a, p0, 2, 9, rows);
        for (int64_t k = 0; k < nk; k++) dwp_s2_chunk(a, rows, p0, k, w9, b);
    }
}

static void dwp_block4_s11(const cpa_dw_plane *a) { dwp_block4(a, 1, 0); }
static void dwp_block4_s12(const cpa_dw_plane *a) { dwp_block4(a, 1, 1); }
static void dwp_block4_s21(const cpa_dw_plane *a) { dwp_block4(a, 2, 0); }

void cpa_dw_plane_avx512(const cpa_dw_plane *a) {
    const cpa_dw_plan *pl = a->plan;
    const int k33 = pl->r == 3 && pl->s == 3;
    if (pl->kind == CPA_DWP_FLAT) {
        if (k33)
            dwp_flat(a, 1);
        else
            dwp_flat(a, 0);
    } else if (k33 && pl->sh == 2 && pl->sw == 2 && pl->dh == 1 && pl->dw == 1) {
        dwp_s2(a);
    } else if (k33 && pl->dh == 1 && pl->sh == 1) {
        (pl->sw == 2 ? dwp_block4_s12 : dwp_block4_s11)(a);
    } else if (k33 && pl->dh == 1 && pl->sh == 2 && pl->sw == 1) {
        dwp_block4_s21(a);
    } else if (pl->sw == 2) {
        if (k33)
            dwp_rows(a, 1, 1);
        else
            dwp_rows(a, 0, 1);
    } else {
        if (k33)
            dwp_rows(a, 1, 0);
        else
            dwp_rows(a, 0, 0);
    }
}
