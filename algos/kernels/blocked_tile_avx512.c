/* AVX-512F tile kernel of the blocked direct convolution: 6 output channels x
 * 4 segments of 16 lanes = 24 ZMM accumulators of the 32 (contract and the
 * choice of tile in blocked_tile.h).  Per input channel and tap: four
 * unaligned 16-float input loads, six weight broadcasts (folded into the FMAs
 * as memory operands), 24 FMAs.  Tiles with fewer non-empty segments run a
 * 6 x 16 or 6 x 32 body.  Kept lanes are compressed on store and expanded on
 * load (register forms plus a masked contiguous access: the memory forms of
 * compress/expand are slow on some cores).  Built with -mavx512f; only called
 * after cpa_blocked_tile_select() saw AVX-512F and the OS's ZMM state. */
#include "algos/kernels/blocked_tile.h"

#if defined(__AVX512F__)
#include <immintrin.h>

enum { MR = CPA_BLOCKED_MR };

static inline __mmask16 low_mask(uint32_t keep) {
    return (__mmask16)((1u << __builtin_popcount(keep)) - 1u);
}

static inline __m512 load_start(const cpa_blocked_tile *t, int v, int kk) {
    const uint32_t keep = t->keep[v];
    if (kk >= t->nk || keep == 0) return _mm512_setzero_ps();
    if (t->first) return t->bias ? _mm512_set1_ps(t->bias[kk]) : _mm512_setzero_ps();
    const float *p = t->y[v] + kk * t->y_ks;
    if (keep == 0xffffu) return _mm512_loadu_ps(p);
    return _mm512_maskz_expand_ps((__mmask16)keep, _mm512_maskz_loadu_ps(low_mask(keep), p));
}

static inline void store_acc(const cpa_blocked_tile *t, int v, int kk, __m512 a) {
    const uint32_t keep = t->keep[v];
    if (kk >= t->nk || keep == 0) return;
    float *p = t->y[v] + kk * t->y_ks;
    if (keep == 0xffffu)
        _mm512_storeu_ps(p, a);
    else
        _mm512_mask_storeu_ps(p, low_mask(keep), _mm512_maskz_compress_ps((__mmask16)keep, a));
}

/* The tile body for NS segments (a constant after inlining: the arrays of
 * accumulators then live in registers). */
static inline __attribute__((always_inline)) void tile_ns(const cpa_blocked_tile *t, const int NS) {
    __m512 acc[4][MR];
    for (int v = 0; v < NS; v++)
        for (int kk = 0; kk < MR; kk++) acc[v][kk] = load_start(t, v, kk);
    const float *x[4];
    for (int v = 0; v < NS; v++) x[v] = t->x[v];
    const int64_t ntap = t->ntap, cs = t->x_cs, step = t->w_step;
    const int64_t *off = t->tap_off;
    for (int64_t c = 0; c < t->nc; c++) {
        const float *w = t->w + c * ntap * MR;
        for (int64_t i = 0; i < ntap; i++, w += step) {
            __m512 xv[4];
            for (int v = 0; v < NS; v++) xv[v] = _mm512_loadu_ps(x[v] + off[i]);
            for (int kk = 0; kk < MR; kk++) {
                const __m512 b = _mm512_set1_ps(w[kk]);
                for (int v = 0; v < NS; v++) acc[v][kk] = _mm512_fmadd_ps(xv[v], b, acc[v][kk]);
            }
        }
        for (int v = 0; v < NS; v++) x[v] += cs;
    }
    for (int v = 0; v < NS; v++)
        for (int kk = 0; kk < MR; kk++) store_acc(t, v, kk, acc[v][kk]);
}

static void tile_1(const cpa_blocked_tile *t) { tile_ns(t, 1); }
static void tile_2(const cpa_blocked_tile *t) { tile_ns(t, 2); }
static void tile_4(const cpa_blocked_tile *t) { tile_ns(t, 4); }

void cpa_blocked_tile_avx512_6x64(const cpa_blocked_tile *t) {
    if (t->keep[1] == 0 && t->keep[2] == 0 && t->keep[3] == 0)
        tile_1(t);
    else if (t->keep[2] == 0 && t->keep[3] == 0)
        tile_2(t);
    else
        tile_4(t);
}

#else
/* Not an x86 build with AVX-512: keep the symbol so the selector links; it is
 * never chosen there. */
void cpa_blocked_tile_avx512_6x64(const cpa_blocked_tile *t) { cpa_blocked_tile_ref_6x16(t); }
#endif
