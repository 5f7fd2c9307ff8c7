/* AVX-512F in-place plane kernels of the depthwise convolution (contract and
 * the two forms in depthwise_plane.h).
 *
 * FLAT: blocks of four output vectors, so four independent FMA chains are in
 * flight; the lane masks come from the plan (one kmov load each), so a 7x7
 * plane costs 4 vectors x 9 taps of masked loads and FMAs plus 4 stores, with
 * no copy and no per-lane arithmetic.  3x3 kernels keep the nine weights in
 * registers.
 *
 * ROWS: one output row at a time; a vector whose taps all read inside the
 * image (the interior of a row) uses full-lane loads, a border vector
 * loads its S column masks from the plan.  Input rows outside the image
 * read the caller's zero row, so the tap loop never branches.  Under stride_w
 * 2 two vectors of virtual columns give 16 outputs through one two-source
 * permute of their even lanes. */
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

/* 3x3, stride 1, row dilation 1, stride_w 1: four output rows at a time.
 * Each of the six input rows they read is loaded once per vector and tap
 * column and feeds every output row it is a tap of, so a vector costs 18
 * loads for 36 FMAs (instead of 36) in four independent chains.  Rows past
 * the last output row are computed from the zero row and not stored. */
static void dwp_rows4(const cpa_dw_plane *a) {
    const cpa_dw_plan *pl = a->plan;
    const int64_t Q = pl->q, dw = pl->dw;
    __m512 w9[9];
    for (int t = 0; t < 9; t++) w9[t] = _mm512_set1_ps(a->w[t]);
    const __m512 b = _mm512_set1_ps(a->bias);
    for (int64_t p0 = 0; p0 < pl->p; p0 += 4) {
        const float *rows[6];
        for (int i = 0; i < 6; i++) {
            const int64_t ih = p0 - pl->pt + i;
            rows[i] = (ih >= 0 && ih < pl->h && p0 + i - 2 < pl->p ? a->x + ih * pl->w : a->zero) -
                      pl->pl;
        }
        for (int64_t u0 = 0; u0 < Q; u0 += 16) {
            const int interior = u0 >= pl->pl && u0 + 16 <= pl->w + pl->pl - 2 * dw;
            const uint16_t *km = pl->cmask[u0 / 16];
            const __mmask16 m0 = interior ? 0xffff : km[0], m1 = interior ? 0xffff : km[1],
                            m2 = interior ? 0xffff : km[2];
            __m512 acc[4] = {b, b, b, b};
            for (int i = 0; i < 6; i++) {
                const float *s = rows[i] + u0;
                const __m512 l0 = _mm512_maskz_loadu_ps(m0, s);
                const __m512 l1 = _mm512_maskz_loadu_ps(m1, s + dw);
                const __m512 l2 = _mm512_maskz_loadu_ps(m2, s + 2 * dw);
                for (int o = 0; o < 4; o++) {
                    const int r = i - o;
                    if (r < 0 || r > 2) continue;
                    acc[o] = _mm512_fmadd_ps(w9[3 * r], l0, acc[o]);
                    acc[o] = _mm512_fmadd_ps(w9[3 * r + 1], l1, acc[o]);
                    acc[o] = _mm512_fmadd_ps(w9[3 * r + 2], l2, acc[o]);
                }
            }
            const __mmask16 st = dwp_first(Q - u0);
            for (int o = 0; o < 4; o++)
                if (p0 + o < pl->p) _mm512_mask_storeu_ps(a->y + (p0 + o) * Q + u0, st, acc[o]);
        }
    }
}

void cpa_dw_plane_avx512(const cpa_dw_plane *a) {
    const cpa_dw_plan *pl = a->plan;
    const int k33 = pl->r == 3 && pl->s == 3;
    if (pl->kind == CPA_DWP_FLAT) {
        if (k33)
            dwp_flat(a, 1);
        else
            dwp_flat(a, 0);
    } else if (pl->sw == 2) {
        if (k33)
            dwp_rows(a, 1, 1);
        else
            dwp_rows(a, 0, 1);
    } else if (k33 && pl->sh == 1 && pl->dh == 1) {
        dwp_rows4(a);
    } else {
        if (k33)
            dwp_rows(a, 1, 0);
        else
            dwp_rows(a, 0, 0);
    }
}
