/* AVX2 + FMA in-place plane kernel of the depthwise convolution (contract
 * and the ROWS form in depthwise_plane.h), for the shapes
 * cpa_dw_plane_avx2_ok accepts: 3x3 kernels with row dilation 1 and stride
 * 1 or 2 in each direction, read as rows.  Every other shape runs in phase
 * planes at this level (algos/depthwise.c asks cpa_dw_plane_avx2_ok).
 *
 * A block of output rows is computed at a time from the input rows it
 * reads, each input row loaded once per vector of 8 virtual columns and tap
 * column and fed to every output row it is a tap of: four output rows under
 * stride 1 (6 input rows), two otherwise (4 or 5 input rows, and two vectors
 * under stride_w 2), so that the 9 broadcast weights, the accumulators and
 * three loads fit the 16 ymm registers.  Under stride_w 2 the kernel
 * computes the stride-1 result at 16 virtual columns (two vectors) and keeps
 * the even lanes with two shuffles; AVX2 has no two-source permute, so
 * deinterleaving each input row in registers would cost six shuffles per
 * row and vector, more than the FMAs it saves.  Interior vectors load
 * plainly; a vector at the left or right border loads through lane masks
 * taken from the plan's 16-lane column masks.  Input rows outside the image
 * read the caller's zero row. */
#include <immintrin.h>

#include "algos/kernels/depthwise_plane.h"

int cpa_dw_plane_avx2_ok(const cp_shape *s, int kind) {
    return kind == CPA_DWP_ROWS && cpa_dw_plan_rows_ok(s) && s->r == 3 && s->s == 3 &&
           s->dil_h == 1 && (s->stride_h == 1 || s->stride_h == 2) &&
           (s->stride_w == 1 || s->stride_w == 2);
}

/* The lanes of an 8-bit mask as a vector mask (lane i all ones when bit i). */
static inline __m256i dwa_lanes(unsigned bits) {
    const __m256i bit = _mm256_setr_epi32(1, 2, 4, 8, 16, 32, 64, 128);
    return _mm256_cmpeq_epi32(_mm256_and_si256(_mm256_set1_epi32((int)bits), bit), bit);
}

/* Lanes [0, n) as a vector mask, n clamped to [0, 8]. */
static inline __m256i dwa_first(int64_t n) {
    const int64_t k = n < 0 ? 0 : n > 8 ? 8 : n;
    return dwa_lanes((1u << k) - 1u);
}

static inline __attribute__((always_inline)) __m256 dwa_ld(int plain, __m256i m, const float *p) {
    return plain ? _mm256_loadu_ps(p) : _mm256_maskload_ps(p, m);
}

/* The accumulators of one step: nv vectors of 8 virtual columns from u0,
 * of the block's no output rows (from its nin = (no - 1) sh + 3 input rows). */
static inline __attribute__((always_inline)) void
dwa_step(const float *const *rows, int64_t u0, const __m256i (*m)[3], const __m256 *w9, __m256 b,
         int64_t dw, int sh, int no, int nv, int plain, __m256 (*acc)[4]) {
    const int nin = (no - 1) * sh + 3;
    for (int v = 0; v < nv; v++)
        for (int o = 0; o < no; o++) acc[v][o] = b;
#pragma GCC unroll 9
    for (int i = 0; i < nin; i++) {
        const float *s = rows[i] + u0;
#pragma GCC unroll 2
        for (int v = 0; v < nv; v++) {
            const __m256 l0 = dwa_ld(plain, m[v][0], s + 8 * v);
            const __m256 l1 = dwa_ld(plain, m[v][1], s + 8 * v + dw);
            const __m256 l2 = dwa_ld(plain, m[v][2], s + 8 * v + 2 * dw);
#pragma GCC unroll 4
            for (int o = 0; o < no; o++) {
                const int r = i - o * sh;
                if (r < 0 || r > 2) continue;
                acc[v][o] = _mm256_fmadd_ps(w9[3 * r], l0, acc[v][o]);
                acc[v][o] = _mm256_fmadd_ps(w9[3 * r + 1], l1, acc[v][o]);
                acc[v][o] = _mm256_fmadd_ps(w9[3 * r + 2], l2, acc[v][o]);
            }
        }
    }
}

static inline __attribute__((always_inline)) void dwa_block(const cpa_dw_plane *a, int sh,
                                                            int sw2) {
    const cpa_dw_plan *pl = a->plan;
    const int no = sh == 1 && !sw2 ? 4 : 2, nin = (no - 1) * sh + 3, nv = sw2 ? 2 : 1;
    const int64_t Q = pl->q, dw = pl->dw, U = sw2 ? 2 * Q : Q; /* virtual columns */
    __m256 w9[9];
    for (int t = 0; t < 9; t++) w9[t] = _mm256_set1_ps(a->w[t]);
    const __m256 b = _mm256_set1_ps(a->bias);
    for (int64_t p0 = 0; p0 < pl->p; p0 += no) {
        const float *rows[9];
        cpa_dw_block_rows(a, p0, sh, nin, rows);
        for (int64_t u0 = 0; u0 < U; u0 += 8 * nv) {
            __m256i m[2][3];
            int plain = 1;
            for (int v = 0; v < nv; v++) {
                const int64_t u = u0 + 8 * v;
                const int live = u < U, interior = u >= pl->pl && u + 8 <= pl->w + pl->pl - 2 * dw;
                plain &= live && interior;
                for (int c = 0; c < 3; c++)
                    m[v][c] = dwa_lanes(!live ? 0u : (pl->cmask[u / 16][c] >> (u % 16)) & 0xffu);
            }
            __m256 acc[2][4];
            if (plain)
                dwa_step(rows, u0, (const __m256i(*)[3])m, w9, b, dw, sh, no, nv, 1, acc);
            else
                dwa_step(rows, u0, (const __m256i(*)[3])m, w9, b, dw, sh, no, nv, 0, acc);
            const int64_t q0 = sw2 ? u0 / 2 : u0;
            const __m256i st = dwa_first(Q - q0);
            for (int o = 0; o < no; o++) {
                if (p0 + o >= pl->p) break;
                __m256 out = acc[0][o];
                if (sw2) { /* the even lanes of the two vectors, in order */
                    const __m256 e =
                        _mm256_shuffle_ps(acc[0][o], acc[1][o], _MM_SHUFFLE(2, 0, 2, 0));
                    out = _mm256_castpd_ps(
                        _mm256_permute4x64_pd(_mm256_castps_pd(e), _MM_SHUFFLE(3, 1, 2, 0)));
                }
                if (Q - q0 >= 8)
                    _mm256_storeu_ps(a->y + (p0 + o) * Q + q0, out);
                else
                    _mm256_maskstore_ps(a->y + (p0 + o) * Q + q0, st, out);
            }
        }
    }
}

static void dwa_s11(const cpa_dw_plane *a) { dwa_block(a, 1, 0); }
static void dwa_s12(const cpa_dw_plane *a) { dwa_block(a, 1, 1); }
static void dwa_s21(const cpa_dw_plane *a) { dwa_block(a, 2, 0); }
static void dwa_s22(const cpa_dw_plane *a) { dwa_block(a, 2, 1); }

void cpa_dw_plane_avx2(const cpa_dw_plane *a) {
    const cpa_dw_plan *pl = a->plan;
    if (pl->sh == 1)
        (pl->sw == 2 ? dwa_s12 : dwa_s11)(a);
    else
        (pl->sw == 2 ? dwa_s22 : dwa_s21)(a);
}
